#!/usr/bin/env python3
"""Reference fixture for the generalised Lomb-Scargle periodogram and its Baluev FAP.

What it makes (all in the folder of this script):

  gls_data.csv     an invented, unevenly sampled RV data set (N = 60, heteroscedastic
                   errors, times in full BJD_TDB between 2 459 000 and 2 460 500) in the
                   project's input format, header ``time,rv,rv_err`` (days, m/s, m/s).
  gls_astropy.csv  ``frequency,power``: astropy's LombScargle power of that data set on an
                   explicit linear grid of 2000 frequencies from 1/1500 to 1.5 c/d (both ends
                   included, ``numpy.linspace``), exact evaluation (method='slow').
  gls_astropy.json library versions, the exact call, the grid, peak, Baluev/Davies false-alarm
                   probabilities for several power levels at the grid's exact f_max, the
                   check cases A and B of references.md section 1 and the FAP table of
                   section 2, all recomputed here with astropy.

The periodogram is the generalised Lomb-Scargle periodogram of Zechmeister & Kuerster
(2009, A&A 496, 577), which is astropy's ``LombScargle(t, y, dy, fit_mean=True,
center_data=True, normalization='standard')``. The false-alarm probability is the
alias-free approximation of Baluev (2008, MNRAS 385, 1279, eq. 6), computed by astropy.

Times: the data set is passed to astropy as ``astropy.time.Time(..., format='jd',
scale='tdb')`` so that astropy itself works with times relative to the first epoch and
no precision is lost to phases at full Julian dates. The power is invariant under a time
shift; the JSON records the largest difference to a second evaluation with the plain
full-BJD floats, as a measure of the rounding at full dates.

f_max and astropy: ``LombScargle.false_alarm_probability`` snaps f_max onto its own
automatic grid (references.md section 2). This script therefore calls astropy's
underlying formula ``astropy.timeseries.periodograms.lombscargle._statistics
.false_alarm_probability(..., method='baluev')`` with the exact f_max of the grid and
also records what the snapping method call returns.

Every value written here is computed by astropy (numpy/scipy underneath) when the
script runs; nothing is typed in by hand except the invented input data recipe and
the check-case definitions. The data are generated with a fixed seed, written with a
fixed number of decimals and parsed back, so the computation uses exactly the numbers
in gls_data.csv.

Rerun (needs Python 3 with numpy, scipy and astropy from PyPI):

    pip install numpy scipy astropy
    python3 tests/reference/make_gls_fixture.py

CI does not run this script; its outputs are committed.
"""

import json
import os
import platform
import sys

import astropy
import astropy.units as u
import numpy as np
import scipy
from astropy.time import Time
from astropy.timeseries import LombScargle
from astropy.timeseries.periodograms.lombscargle import _statistics

HERE = os.path.dirname(os.path.abspath(__file__))
SEED = 20240611

N_POINTS = 60
F_MIN = 1.0 / 1500.0
F_MAX = 1.5
N_FREQ = 2000
FAP_LEVELS = [0.05, 0.1, 0.15, 0.2, 0.25, 0.3, 0.4, 0.5]


def versions():
    return {
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "astropy": astropy.__version__,
    }


def make_data():
    """Invented data: two sinusoids, a constant, noise with per-point errors.

    Times: uneven, clustered in observing seasons between BJD 2 459 000 and 2 460 500,
    with a nightly pattern (fractional day near a fixed hour).
    """
    rng = np.random.default_rng(SEED)
    # Candidate nights: the star is observable from day 0 to 230 of every 365.25-day year.
    nights = []
    start = 2459000.0
    for year in range(5):
        first = start + year * 365.25
        nights.extend(first + np.arange(0, 230))
    nights = np.array([n for n in nights if n <= 2460490.0])
    chosen = np.sort(rng.choice(nights, size=N_POINTS, replace=False))
    # Observations near 03:00 UT +- 1.5 h, i.e. fractional day 0.625 +- 0.0625.
    t = chosen + 0.625 + rng.uniform(-0.0625, 0.0625, size=N_POINTS)
    t[0] = max(t[0], 2459000.0)
    sigma = rng.uniform(1.0, 4.5, size=N_POINTS)
    y = (
        -12.3
        + 7.5 * np.cos(2 * np.pi * (t - 2459123.4) / 17.31)
        + 3.0 * np.sin(2 * np.pi * (t - 2459000.0) / 3.127)
        + sigma * rng.standard_normal(N_POINTS)
    )
    # Write with fixed decimals, parse back: the computation uses the file's numbers.
    rows = [(f"{ti:.6f}", f"{yi:.4f}", f"{si:.4f}") for ti, yi, si in zip(t, y, sigma)]
    path = os.path.join(HERE, "gls_data.csv")
    with open(path, "w", newline="\n") as fh:
        fh.write("time,rv,rv_err\n")
        for r in rows:
            fh.write(",".join(r) + "\n")
    t = np.array([float(r[0]) for r in rows])
    y = np.array([float(r[1]) for r in rows])
    dy = np.array([float(r[2]) for r in rows])
    return t, y, dy


def check_case_a():
    """references.md section 1, case A."""
    t = np.arange(100, dtype=float)
    y = 30.0 * np.cos(2 * np.pi * (t - 30.0) / 27.0) + 10.0
    dy = np.ones_like(t)
    return "A", t, y, dy, [1.0 / 27.0]


def check_case_b():
    """references.md section 1, case B."""
    i = np.arange(30, dtype=float)
    t = 1.7 * i + 0.4 * np.sin(i)
    y = 5.0 * np.cos(2 * np.pi * t / 6.3) + 2.0 + 1.5 * np.sin(1.3 * i)
    dy = 1.0 + 0.1 * (np.arange(30) % 3)
    return "B", t, y, dy, [1.0 / 6.3, 0.1, 0.25]


def sinusoid_parameters(ls, f):
    """a (cos), b (sin) and the constant of the best-fit sinusoid at f from astropy.

    astropy's design matrix is [1, sin, cos] (divided by dy) fitted to the data minus
    its weighted mean (center_data=True), so the constant is offset() + theta[0].
    """
    theta = ls.model_parameters(f)
    return {
        "a_cos": float(theta[2]),
        "b_sin": float(theta[1]),
        "offset": float(ls.offset() + theta[0]),
    }


def direct_wls(t, y, dy, f):
    """Independent 3-parameter weighted least-squares fit (numpy lstsq)."""
    w = 1.0 / dy
    X = np.column_stack([np.cos(2 * np.pi * f * t), np.sin(2 * np.pi * f * t), np.ones_like(t)])
    coef, *_ = np.linalg.lstsq(X * w[:, None], y * w, rcond=None)
    resid = y - X @ coef
    ybar = np.sum(y / dy**2) / np.sum(1 / dy**2)
    chi0 = np.sum(((y - ybar) / dy) ** 2)
    chi = np.sum((resid / dy) ** 2)
    return {"a_cos": float(coef[0]), "b_sin": float(coef[1]), "offset": float(coef[2]),
            "power": float((chi0 - chi) / chi0)}


def check_cases():
    out = []
    for name, t, y, dy, freqs in (check_case_a(), check_case_b()):
        ls = LombScargle(t, y, dy, fit_mean=True, center_data=True, normalization="standard")
        entries = []
        for f in freqs:
            p_slow = float(ls.power(np.array([f]), method="slow")[0])
            p_cython = float(ls.power(np.array([f]), method="cython")[0])
            entry = {"frequency": f, "power": p_slow, "power_cython": p_cython}
            entry.update(sinusoid_parameters(ls, f))
            entry["direct_least_squares"] = direct_wls(t, y, dy, f)
            entries.append(entry)
        out.append({
            "case": name,
            "t": t.tolist(),
            "y": y.tolist(),
            "dy": dy.tolist(),
            "values": entries,
        })
    return out


def baluev_table_check():
    """references.md section 2 table: t = 0..99, sigma = 1, f_max = 0.5 c/d.

    The standard-normalisation FAP does not depend on y; y is given because astropy's
    signature takes it.
    """
    t = np.arange(100, dtype=float)
    dy = np.ones_like(t)
    y = np.zeros_like(t)
    rows = []
    for z in (0.10, 0.19, 0.30):
        kw = dict(fmax=0.5, t=t, y=y, dy=dy, normalization="standard")
        rows.append({
            "power": z,
            "fap_single": float(_statistics.fap_single(z, len(t), "standard")),
            "tau": float(_statistics.tau_davies(z, **kw)),
            "fap_davies": float(_statistics.false_alarm_probability(z, method="davies", **kw)),
            "fap_baluev": float(_statistics.false_alarm_probability(z, method="baluev", **kw)),
        })
    dt = float(_statistics._weighted_var(t, dy))
    teff = float(np.sqrt(4 * np.pi * dt))
    # f_max snapping example: t = 1..100, f_max = 2, Z = 0.19.
    t2 = np.arange(1, 101, dtype=float)
    y2 = np.sin(t2)
    ls2 = LombScargle(t2, y2, np.ones_like(t2))
    exact = float(_statistics.false_alarm_probability(
        0.19, fmax=2.0, t=t2, y=y2, dy=np.ones_like(t2), normalization="standard", method="baluev"))
    snapped = float(ls2.false_alarm_probability(0.19, method="baluev", maximum_frequency=2.0))
    _, fmax_used = ls2.autofrequency(maximum_frequency=2.0, return_freq_limits=True)
    return {
        "t": "0, 1, ..., 99", "dy": "1", "fmax": 0.5,
        "t_eff": teff, "w": 0.5 * teff, "gamma_99": float(_statistics._gamma(99)),
        "rows": rows,
        "snapping_example": {
            "t": "1, 2, ..., 100", "dy": "1", "y": "sin(t) (irrelevant for the standard FAP)",
            "power": 0.19, "fmax_requested": 2.0,
            "fap_baluev_exact_fmax": exact,
            "fap_baluev_method_call": snapped,
            "fmax_used_by_method_call": float(fmax_used),
        },
    }


def main():
    t, y, dy = make_data()
    freq = np.linspace(F_MIN, F_MAX, N_FREQ)

    # Main evaluation: full BJD handed to astropy as Time; astropy works relative to t[0].
    times = Time(t, format="jd", scale="tdb")
    ls = LombScargle(times, y, dy, fit_mean=True, center_data=True, normalization="standard")
    freq_q = freq / u.day
    power = np.asarray(ls.power(freq_q, method="slow"), dtype=float)
    # Cross-checks: plain full-BJD floats, and astropy's compiled implementation.
    ls_float = LombScargle(t, y, dy, fit_mean=True, center_data=True, normalization="standard")
    power_float = np.asarray(ls_float.power(freq, method="slow"))
    power_cython = np.asarray(ls.power(freq_q, method="cython"), dtype=float)

    with open(os.path.join(HERE, "gls_astropy.csv"), "w", newline="\n") as fh:
        fh.write("frequency,power\n")
        for f, p in zip(freq, power):
            fh.write(f"{float(f)!r},{float(p)!r}\n")

    k = int(np.argmax(power))
    trel = np.asarray(ls._trel.to_value(u.day), dtype=float)
    kw = dict(fmax=F_MAX, t=trel, y=y, dy=dy, normalization="standard")
    levels = list(FAP_LEVELS) + [float(power[k])]
    fap_rows = []
    for z in levels:
        fap_rows.append({
            "power": z,
            "fap_single": float(_statistics.fap_single(z, len(t), "standard")),
            "tau": float(_statistics.tau_davies(z, **kw)),
            "fap_davies": float(_statistics.false_alarm_probability(z, method="davies", **kw)),
            "fap_baluev": float(_statistics.false_alarm_probability(z, method="baluev", **kw)),
            "fap_baluev_method_call_snapped": float(ls.false_alarm_probability(
                z, method="baluev", minimum_frequency=F_MIN / u.day,
                maximum_frequency=F_MAX / u.day)),
        })
    _, fmax_snapped = ls.autofrequency(minimum_frequency=F_MIN / u.day,
                                       maximum_frequency=F_MAX / u.day, return_freq_limits=True)
    fmax_snapped = fmax_snapped.to_value(1 / u.day)
    dt = float(_statistics._weighted_var(trel, dy))

    meta = {
        "description": "Generalised Lomb-Scargle power (Zechmeister & Kuerster 2009) and Baluev (2008) "
                       "false-alarm probabilities computed by astropy for the invented data set "
                       "gls_data.csv; check cases A and B and the FAP table of references.md.",
        "made_by": "tests/reference/make_gls_fixture.py",
        "versions": versions(),
        "seed": SEED,
        "data_file": "gls_data.csv",
        "data_columns": {"time": "full BJD_TDB, days", "rv": "m/s", "rv_err": "m/s (1 sigma)"},
        "n_points": int(len(t)),
        "power_file": "gls_astropy.csv",
        "call": "LombScargle(Time(time, format='jd', scale='tdb'), rv, rv_err, fit_mean=True, "
                "center_data=True, normalization='standard').power(frequency, method='slow')",
        "time_handling": "astropy converts Time input to days relative to the first epoch",
        "reference_time_bjd": float(t[0]),
        "grid": {"fmin": F_MIN, "fmax": float(freq[-1]), "n": N_FREQ,
                 "construction": "numpy.linspace(fmin, fmax, n): f_k = fmin + k (fmax - fmin)/(n - 1), "
                                 "last point set to fmax exactly",
                 "unit": "cycles per day"},
        "cross_checks": {
            "max_abs_diff_slow_full_bjd_floats": float(np.max(np.abs(power_float - power))),
            "max_abs_diff_cython": float(np.max(np.abs(power_cython - power))),
        },
        "peak": {"index": k, "frequency": float(freq[k]), "period_d": float(1 / freq[k]),
                 "power": float(power[k])},
        "fap": {
            "method": "alias-free approximation, Baluev 2008 eq. 6 (astropy method='baluev'); "
                      "Davies bound eq. 5; single-frequency tail (1 - Z)^((N-3)/2)",
            "how_called": "astropy.timeseries.periodograms.lombscargle._statistics."
                          "false_alarm_probability(Z, fmax=1.5, t=t - t[0], y, dy, "
                          "normalization='standard', method=...) with the exact f_max of the grid. "
                          "fap_baluev_method_call_snapped is LombScargle.false_alarm_probability("
                          "Z, method='baluev', minimum_frequency=fmin, maximum_frequency=fmax), which "
                          "uses fmax_snapped instead.",
            "fmax": F_MAX,
            "fmax_snapped_by_method_call": float(fmax_snapped),
            "weighted_time_variance_d2": dt,
            "t_eff_d": float(np.sqrt(4 * np.pi * dt)),
            "gamma_n_minus_1": float(_statistics._gamma(len(t) - 1)),
            "levels": fap_rows,
            "note": "the last level is the peak power of the grid",
        },
        "check_cases_section1": check_cases(),
        "fap_table_section2": baluev_table_check(),
    }
    with open(os.path.join(HERE, "gls_astropy.json"), "w", newline="\n") as fh:
        json.dump(meta, fh, indent=1)
        fh.write("\n")
    print(json.dumps({k: meta[k] for k in ("versions", "peak", "cross_checks")}, indent=1))


if __name__ == "__main__":
    sys.exit(main())
