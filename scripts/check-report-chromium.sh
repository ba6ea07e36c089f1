#!/usr/bin/env bash
# Renders a run's report.html in headless Chromium (Debian package `chromium`) to a PNG and
# fails if a figure is missing or blank (scripts/check_report_png.py).
#
#   scripts/check-report-chromium.sh [RUN_FOLDER]
#
# Without RUN_FOLDER, runs the demo target (with posterior sampling, so that every kind of
# figure appears) into a temporary folder first, with the binary in $HEFT if set, else
# through `cargo run`. Needs chromium and python3.
set -euo pipefail
cd "$(dirname "$0")/.."
browser=$(command -v chromium || command -v chromium-browser || true)
if [ -z "$browser" ]; then
    echo "chromium not found: install Debian's package (apt-get install chromium)" >&2
    exit 2
fi
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
run=${1:-}
if [ -z "$run" ]; then
    # The demo target samples its posterior; fewer derived draws keep this quick.
    sed -e 's/^draws = .*/draws = 4000/' \
        -e "s|^file = \"|file = \"$PWD/data-demo/|" data-demo/ostrel-12.toml > "$work/demo.toml"
    if [ -n "${HEFT:-}" ]; then heft=("$HEFT"); else heft=(cargo run --quiet --); fi
    # Exit 3 (sampler not converged) and 4 (audit verdict not robust) still write the run.
    "${heft[@]}" run "$work/demo.toml" --out "$work/run" > /dev/null || {
        rc=$?
        [ "$rc" -eq 3 ] || [ "$rc" -eq 4 ]
    }
    run=$work/run
fi
page=$(realpath "$run/report.html")
figures=$(grep -c '<figure' "$page")
height=$((1600 + 1100 * figures))
png=$work/report.png
"$browser" --headless --no-sandbox --disable-gpu --hide-scrollbars --no-first-run \
    --disable-background-networking --disable-extensions --force-device-scale-factor=1 \
    --window-size="1280,$height" --screenshot="$png" "file://$page" 2> "$work/chromium.log" \
    || { cat "$work/chromium.log" >&2; exit 1; }
[ -s "$png" ] || { echo "chromium wrote no screenshot" >&2; cat "$work/chromium.log" >&2; exit 1; }
python3 scripts/check_report_png.py "$png" "$figures"
if [ -n "${KEEP_PNG:-}" ]; then cp "$png" "$KEEP_PNG"; fi
