#!/usr/bin/env python3
"""The invented demo scenario "Ostrel-12": a young, active star with two planets.

Everything here is made up: the star, its planets, the three spectrographs ("Quill",
"Tarn", "Fennick") and their sites. No real object or instrument is meant.

What it makes (in the folder of this script):

  quill.csv        Quill RVs: CSV, header ``time,rv,rv_err,line_width``, full BJD_TDB.
  tarn.txt         Tarn RVs: whitespace-separated text with aligned columns, header
                   ``time rv rv_err line_width``, time in BJD_TDB - 2 450 000.
  fennick.tsv      Fennick RVs: tab-separated, header ``time rv rv_err line_width``,
                   full BJD_TDB.
  ostrel-12.toml   the target file (schema of src/target.rs).
  truth.json       every injected value, the seed and the library versions.
  README.md        the scenario and the true values, for users.

Units: rv, rv_err and line_width in m/s. ``rv_err`` is the quoted 1-sigma error; the
noise added has variance rv_err^2 + jitter^2 (jitter per instrument, not quoted).
``line_width`` is an activity indicator (width of the mean spectral line, m/s), whose
zero point and sensitivity differ between instruments.

The signal:
  rv = sum of Keplerians (v = K [cos(nu + omega) + e cos omega], omega of the star's
       orbit, Tc at nu = pi/2 - omega; design.md) + offset(instrument)
       + trend (t - trend_ref) + activity + white noise.
  activity = a_rv * G(t), line_width = base(instrument) + s(instrument) * G(t) + noise,
  with G a zero-mean, unit-variance Gaussian process with the quasi-periodic covariance
  k(dt) = exp(-dt^2 / (2 l^2)) [cos(2 pi dt / P_rot) + r^2 cos(4 pi dt / P_rot)] / (1 + r^2)
  (rotation signal plus first harmonic, amplitude ratio r, with amplitudes and phases
  evolving on the time l), drawn once at all epochs of all instruments.

Planet masses follow from K with the exact relation
  K = (2 pi / P)^(1/3) G m sin i / (G (M_star + m))^(2/3) / sqrt(1 - e^2),
solved by bisection with the IAU 2015 Resolution B3 nominal GM values. The transit
values in the target file are the true ones plus one draw of their stated errors, as a
measurement would be.

Sampling: each site sees the star near its meridian passage, which comes 3.94 min
earlier every night (sidereal day), so the hour of observation drifts slowly through a
season and the seasons (about 7 months) follow from the star being up at night. Tarn
observes in runs around new moon, the others on scattered nights; Fennick starts one
season later. Observations fall within 3 h of the meridian and 4.8 h of local midnight.

Random numbers: numpy.random.default_rng(SEED) (PCG64); rerunning gives identical files.

Rerun (Python 3 with numpy from PyPI):

    pip install numpy
    python3 data-demo/make_demo.py
"""

import json
import math
import os
import platform
import sys

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
SEED = 4172

# IAU 2015 Resolution B3 nominal values (m^3 s^-2, m), as in design.md.
GM_SUN = 1.3271244e20
GM_EARTH = 3.986004e14
GM_JUP = 1.2668653e17
R_SUN = 6.957e8
R_EARTH_EQ = 6.3781e6
AU = 149597870700.0
G_CODATA2018 = 6.67430e-11
DAY = 86400.0
YEAR_D = 365.25
SIDEREAL_PER_SOLAR = 1.00273790934

NAME = "Ostrel-12"
STAR = {"mass_msun": 0.90, "mass_err_msun": 0.04, "radius_rsun": 0.85, "radius_err_rsun": 0.03,
        "teff_k": 5390.0, "teff_err_k": 90.0, "age_gyr": 0.4}

PLANETS = [
    # Transiting, low density.
    {"label": "b", "period_d": 11.81634, "k_mps": 4.2, "ecc": 0.04, "omega_deg": 75.0,
     "tc_bjd": 2460412.67310, "radius_rearth": 6.9, "impact": 0.38},
    # Not transiting.
    {"label": "c", "period_d": 47.32, "k_mps": 8.1, "ecc": 0.31, "omega_deg": 218.0,
     "tc_bjd": 2460398.950},
]
# Errors quoted for the transit values (the quoted values get one draw of these).
TRANSIT_ERRORS = {"period_err_d": 0.000035, "tc_err_d": 0.00055, "rp_rs_err": 0.0011,
                  "impact_err": 0.07, "a_rs_err": 0.8}

TREND_MPS_PER_YR = 0.9
TREND_REF_BJD = 2460400.0

# What the survey light curve gives the analyst: the rotation period and its 1-sigma, days.
PHOTOMETRIC_ROTATION_D = (6.4, 0.3)
ACTIVITY = {"amplitude_rv_mps": 2.6, "rotation_d": 6.45, "evolution_d": 30.0, "harmonic_ratio": 0.5}

# Invented sites and instruments. midnight_frac: fractional JD of local mean midnight.
INSTRUMENTS = [
    {"name": "Quill", "file": "quill.csv", "format": "csv", "n": 76, "midnight_frac": 0.694,
     "start_bjd": 2459900.0, "end_bjd": 2460880.0, "runs": False,
     "err_lo": 1.0, "err_hi": 1.8, "offset_mps": 3.8, "jitter_mps": 2.1,
     "lw_base_mps": 7240.0, "lw_slope_mps": 12.0, "lw_noise_per_rv_err": 1.5},
    {"name": "Tarn", "file": "tarn.txt", "format": "whitespace", "n": 68, "midnight_frac": 0.444,
     "start_bjd": 2459900.0, "end_bjd": 2460880.0, "runs": True,
     "err_lo": 1.8, "err_hi": 3.0, "offset_mps": -14237.5, "jitter_mps": 2.9,
     "lw_base_mps": 8915.0, "lw_slope_mps": 15.0, "lw_noise_per_rv_err": 1.5},
    {"name": "Fennick", "file": "fennick.tsv", "format": "tsv", "n": 62, "midnight_frac": 0.930,
     "start_bjd": 2460250.0, "end_bjd": 2460880.0, "runs": False,
     "err_lo": 2.6, "err_hi": 4.0, "offset_mps": 52.3, "jitter_mps": 4.6,
     "lw_base_mps": 6630.0, "lw_slope_mps": 10.0, "lw_noise_per_rv_err": 1.5},
]
OPPOSITION_BJD = 2460020.0  # the star crosses the meridian at local midnight (repeats yearly)
NEW_MOON_BJD = 2460004.3    # an invented new-moon epoch for the observing runs
SYNODIC_D = 29.530589


# ---------------------------------------------------------------------------------

def kepler_e(mean_anom, ecc):
    m = np.mod(mean_anom, 2 * np.pi)
    e_anom = np.where(ecc < 0.8, m, np.pi)
    for _ in range(60):
        de = (e_anom - ecc * np.sin(e_anom) - m) / (1 - ecc * np.cos(e_anom))
        e_anom = e_anom - de
        if np.max(np.abs(de)) < 1e-15:
            break
    return e_anom


def tp_from_tc(tc, period, ecc, omega):
    nu_c = math.pi / 2 - omega
    e_c = 2.0 * math.atan(math.sqrt((1 - ecc) / (1 + ecc)) * math.tan(nu_c / 2))
    return tc - period / (2 * math.pi) * (e_c - ecc * math.sin(e_c))


def keplerian(t, pl):
    omega = math.radians(pl["omega_deg"])
    tp = tp_from_tc(pl["tc_bjd"], pl["period_d"], pl["ecc"], omega)
    e_anom = kepler_e(2 * np.pi * (t - tp) / pl["period_d"], pl["ecc"])
    e = pl["ecc"]
    nu = 2 * np.arctan2(np.sqrt(1 + e) * np.sin(e_anom / 2), np.sqrt(1 - e) * np.cos(e_anom / 2))
    return pl["k_mps"] * (np.cos(nu + omega) + e * math.cos(omega)), tp


def gm_planet_from_k(k, period_d, ecc, sin_i, gm_star):
    """Bisection on the exact K relation (K grows monotonically with the planet mass)."""
    p_s = period_d * DAY

    def k_of(gm):
        return (2 * math.pi / p_s) ** (1 / 3) * gm * sin_i / (gm_star + gm) ** (2 / 3) / math.sqrt(1 - ecc**2)

    lo, hi = 0.0, 0.05 * gm_star
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if k_of(mid) < k:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


def observing_nights(rng, ins):
    """Epochs (BJD) available to one instrument, and the chosen ones."""
    times = []
    for day in range(int(ins["start_bjd"]), int(ins["end_bjd"])):
        midnight = day + ins["midnight_frac"]
        # Days since the nearest opposition; the meridian passage precedes local
        # midnight by that many days times (1 - 1/1.0027379) (sidereal drift).
        k = round((midnight - OPPOSITION_BJD) / YEAR_D)
        d = midnight - (OPPOSITION_BJD + k * YEAR_D)
        transit_offset = -d * (1 - 1 / SIDEREAL_PER_SOLAR)
        transit_offset = (transit_offset + 0.5) % 1.0 - 0.5
        # Hour angle window +-3 h, dark window +-4.8 h around midnight.
        lo = max(-0.125, -0.20 - transit_offset)
        hi = min(0.125, 0.20 - transit_offset)
        if lo >= hi:
            continue
        if ins["runs"]:
            phase = ((midnight - NEW_MOON_BJD) / SYNODIC_D) % 1.0
            if min(phase, 1 - phase) * SYNODIC_D > 6.0:
                continue
        times.append((midnight, transit_offset, lo, hi))
    idx = np.sort(rng.choice(len(times), size=ins["n"], replace=False))
    out = []
    for i in idx:
        midnight, off, lo, hi = times[i]
        # Hour angle: normal around the meridian (sigma 1.5 h), restricted to the part of
        # the +-3 h window that is dark (rejection; uniform there if that fails).
        h = None
        for _ in range(200):
            x = rng.normal(0.0, 1.5 / 24)
            if lo <= x <= hi:
                h = x
                break
        if h is None:
            h = rng.uniform(lo, hi)
        out.append(midnight + off + h)
    return np.array(out)


def qp_covariance(t):
    """k(dt) = exp(-dt^2/(2 l^2)) [cos(2 pi dt/P) + r^2 cos(4 pi dt/P)] / (1 + r^2).

    A rotation signal and its first harmonic whose amplitudes and phases wander on the
    spot-evolution time l; unit variance; no power at low frequency.
    """
    dt = t[:, None] - t[None, :]
    a = ACTIVITY
    w = 2 * np.pi * dt / a["rotation_d"]
    r2 = a["harmonic_ratio"] ** 2
    return np.exp(-0.5 * (dt / a["evolution_d"]) ** 2) * (np.cos(w) + r2 * np.cos(2 * w)) / (1 + r2)


def fmt_cols(cols, widths):
    """First column left-aligned, the others right-aligned, separated by spaces."""
    first = f"{cols[0]:<{widths[0]}}"
    return (first + "".join(f"{c:>{w}}" for c, w in zip(cols[1:], widths[1:]))).rstrip()


def main():
    rng = np.random.default_rng(SEED)
    gm_star = STAR["mass_msun"] * GM_SUN
    r_star = STAR["radius_rsun"] * R_SUN

    # --- epochs and per-point errors
    per_ins = []
    for ins in INSTRUMENTS:
        t = observing_nights(rng, ins)
        digits = 6
        t = np.round(t, digits)
        err = np.round(rng.uniform(ins["err_lo"], ins["err_hi"], size=len(t)), 2)
        per_ins.append({"ins": ins, "t": t, "err": err})
    all_t = np.concatenate([p["t"] for p in per_ins])

    # --- activity: one draw of the quasi-periodic process at all epochs
    cov = qp_covariance(all_t) + 1e-10 * np.eye(len(all_t))
    g = np.linalg.cholesky(cov) @ rng.standard_normal(len(all_t))

    # --- planets
    planets_truth = []
    v_planets = np.zeros_like(all_t)
    for pl in PLANETS:
        v, tp = keplerian(all_t, pl)
        v_planets += v
        omega = math.radians(pl["omega_deg"])
        e = pl["ecc"]
        entry = {"label": pl["label"], "period_d": pl["period_d"], "k_mps": pl["k_mps"], "ecc": e,
                 "omega_deg": pl["omega_deg"], "tc_bjd": pl["tc_bjd"],
                 "tp_bjd": tp + round((pl["tc_bjd"] - tp) / pl["period_d"]) * pl["period_d"]}
        if "radius_rearth" in pl:
            # Inclination from the impact parameter, b = a cos i / R* (1 - e^2)/(1 + e sin omega)
            # (Winn 2010, in Exoplanets, ed. Seager); a from Kepler III with G (M* + m), so
            # iterate mass and inclination together.
            sin_i = 1.0
            for _ in range(50):
                gm_p = gm_planet_from_k(pl["k_mps"], pl["period_d"], e, sin_i, gm_star)
                a = ((gm_star + gm_p) * (pl["period_d"] * DAY) ** 2 / (4 * math.pi**2)) ** (1 / 3)
                cos_i = pl["impact"] * r_star / a * (1 + e * math.sin(omega)) / (1 - e**2)
                sin_i = math.sqrt(1 - cos_i**2)
            radius_m = pl["radius_rearth"] * R_EARTH_EQ
            mass_kg = gm_p / G_CODATA2018
            density = mass_kg / (4 / 3 * math.pi * radius_m**3) / 1000.0
            entry.update({
                "incl_deg": math.degrees(math.acos(cos_i)),
                "impact": pl["impact"],
                "a_rs": a / r_star,
                "rp_rs": radius_m / r_star,
                "radius_rearth": pl["radius_rearth"],
                "mass_mearth": gm_p / GM_EARTH,
                "msini_mearth": gm_p * sin_i / GM_EARTH,
                "density_gcc": density,
                "gravity_mps2": gm_p / radius_m**2,
            })
        else:
            gm_p = gm_planet_from_k(pl["k_mps"], pl["period_d"], e, 1.0, gm_star)
            a = ((gm_star + gm_p) * (pl["period_d"] * DAY) ** 2 / (4 * math.pi**2)) ** (1 / 3)
            entry.update({"msini_mearth": gm_p / GM_EARTH,
                          "note": "not transiting; msini from (M* + m sin i), sin i = 1"})
        if "radius_rearth" in pl:
            entry["mass_mjup"] = gm_p / GM_JUP
        else:
            entry["msini_mjup"] = gm_p / GM_JUP
        entry["a_au"] = a / AU
        # Full redistribution, zero albedo: Teq = Teff sqrt(R*/(2a)).
        entry["teq_k"] = STAR["teff_k"] * math.sqrt(r_star / (2 * a))
        planets_truth.append(entry)

    # Quoted transit values: truth plus one draw of the stated errors.
    b = PLANETS[0]
    bt = planets_truth[0]
    quoted = {
        "label": "b",
        "period_d": round(b["period_d"] + TRANSIT_ERRORS["period_err_d"] * rng.standard_normal(), 6),
        "period_err_d": TRANSIT_ERRORS["period_err_d"],
        "tc": round(b["tc_bjd"] + TRANSIT_ERRORS["tc_err_d"] * rng.standard_normal(), 5),
        "tc_err_d": TRANSIT_ERRORS["tc_err_d"],
        "rp_rs": round(bt["rp_rs"] + TRANSIT_ERRORS["rp_rs_err"] * rng.standard_normal(), 5),
        "rp_rs_err": TRANSIT_ERRORS["rp_rs_err"],
        "impact": round(abs(b["impact"] + TRANSIT_ERRORS["impact_err"] * rng.standard_normal()), 3),
        "impact_err": TRANSIT_ERRORS["impact_err"],
        "a_rs": round(bt["a_rs"] + TRANSIT_ERRORS["a_rs_err"] * rng.standard_normal(), 2),
        "a_rs_err": TRANSIT_ERRORS["a_rs_err"],
    }

    # --- assemble each instrument's file
    pos = 0
    ins_truth = []
    for p in per_ins:
        ins, t, err = p["ins"], p["t"], p["err"]
        n = len(t)
        gi = g[pos:pos + n]
        vp = v_planets[pos:pos + n]
        pos += n
        trend = TREND_MPS_PER_YR * (t - TREND_REF_BJD) / YEAR_D
        noise = np.sqrt(err**2 + ins["jitter_mps"] ** 2) * rng.standard_normal(n)
        rv = vp + ins["offset_mps"] + trend + ACTIVITY["amplitude_rv_mps"] * gi + noise
        lw_err = ins["lw_noise_per_rv_err"] * err
        lw = ins["lw_base_mps"] + ins["lw_slope_mps"] * gi + lw_err * rng.standard_normal(n)
        order = np.argsort(t)
        path = os.path.join(HERE, ins["file"])
        with open(path, "w", newline="\n") as fh:
            if ins["format"] == "csv":
                fh.write("time,rv,rv_err,line_width\n")
                for k in order:
                    fh.write(f"{t[k]:.6f},{rv[k]:.2f},{err[k]:.2f},{lw[k]:.1f}\n")
            elif ins["format"] == "tsv":
                fh.write("time\trv\trv_err\tline_width\n")
                for k in order:
                    fh.write(f"{t[k]:.6f}\t{rv[k]:.2f}\t{err[k]:.2f}\t{lw[k]:.1f}\n")
            else:  # whitespace, aligned, BJD - 2450000
                widths = (12, 11, 8, 12)
                fh.write(fmt_cols(("time", "rv", "rv_err", "line_width"), widths) + "\n")
                for k in order:
                    row = (f"{t[k] - 2450000.0:.6f}", f"{rv[k]:.2f}", f"{err[k]:.2f}", f"{lw[k]:.1f}")
                    fh.write(fmt_cols(row, widths) + "\n")
        ins_truth.append({
            "instrument": ins["name"], "file": ins["file"], "format": ins["format"],
            "time_standard": "BJD-2450000" if ins["format"] == "whitespace" else "BJD_TDB",
            "n_points": n, "first_bjd": float(t.min()), "last_bjd": float(t.max()),
            "offset_mps": ins["offset_mps"], "jitter_mps": ins["jitter_mps"],
            "rv_err_range_mps": [ins["err_lo"], ins["err_hi"]],
            "line_width_base_mps": ins["lw_base_mps"],
            "line_width_per_unit_activity_mps": ins["lw_slope_mps"],
            "line_width_noise_mps": f"{ins['lw_noise_per_rv_err']} x rv_err",
            "activity_rv_rms_mps_at_epochs": float(np.std(ACTIVITY["amplitude_rv_mps"] * gi)),
        })

    truth = {
        "scenario": "invented; no real star, planet, instrument or site",
        "made_by": "data-demo/make_demo.py",
        "versions": {"python": platform.python_version(), "numpy": np.__version__},
        "seed": SEED,
        "name": NAME,
        "star": STAR,
        "planets": planets_truth,
        "transit_quoted_in_target": quoted,
        "instruments": ins_truth,
        "trend_mps_per_yr": TREND_MPS_PER_YR,
        "trend_ref_bjd": TREND_REF_BJD,
        "activity": dict(ACTIVITY, kernel="exp(-dt^2/(2 l^2)) [cos(2 pi dt/P_rot) + r^2 "
                         "cos(4 pi dt/P_rot)]/(1 + r^2), l = evolution_d, P_rot = rotation_d, "
                         "r = harmonic_ratio; rv term = amplitude_rv_mps x G(t)"),
        "noise_model": "rv = planets + offset + trend + activity + N(0, rv_err^2 + jitter^2)",
        "constants": {"gm_sun": GM_SUN, "gm_earth": GM_EARTH, "gm_jup": GM_JUP, "r_sun_m": R_SUN,
                      "r_earth_eq_m": R_EARTH_EQ, "au_m": AU, "G": G_CODATA2018,
                      "source": "IAU 2015 Resolution B3 nominal values, CODATA 2018 G"},
    }
    with open(os.path.join(HERE, "truth.json"), "w", newline="\n") as fh:
        json.dump(truth, fh, indent=1)
        fh.write("\n")
    write_target(quoted)
    write_readme(truth)
    print(json.dumps(planets_truth, indent=1))
    print(json.dumps(quoted, indent=1))
    for it in ins_truth:
        print(it["instrument"], it["n_points"], it["first_bjd"], it["last_bjd"],
              round(it["activity_rv_rms_mps_at_epochs"], 2))


def write_target(q):
    text = f"""# Target file of the invented demo system {NAME} (see README.md).
# Written by make_demo.py; every name here is made up.
name = "{NAME}"

[star]
mass_msun = {STAR['mass_msun']:.2f}
mass_err_msun = {STAR['mass_err_msun']:.2f}
radius_rsun = {STAR['radius_rsun']:.2f}
radius_err_rsun = {STAR['radius_err_rsun']:.2f}
teff_k = {STAR['teff_k']:.1f}
teff_err_k = {STAR['teff_err_k']:.1f}
age_gyr = {STAR['age_gyr']:.1f}
# Spot modulation in the (invented) survey light curve.
rotation_d = {PHOTOMETRIC_ROTATION_D[0]:.1f}
rotation_err_d = {PHOTOMETRIC_ROTATION_D[1]:.1f}

# Quill: CSV, full BJD_TDB.
[[data]]
file = "quill.csv"
instrument = "Quill"
unit = "m/s"
time = "BJD_TDB"

# Tarn: whitespace-separated text, times written as BJD_TDB - 2 450 000.
[[data]]
file = "tarn.txt"
instrument = "Tarn"
unit = "m/s"
time = "BJD-2450000"

# Fennick: tab-separated, full BJD_TDB.
[[data]]
file = "fennick.tsv"
instrument = "Fennick"
unit = "m/s"
time = "BJD_TDB"

# Planet b transits; these values come from the (invented) light curve.
[[transit]]
label = "{q['label']}"
period_d = {q['period_d']:.6f}
period_err_d = {q['period_err_d']}
tc = {q['tc']:.5f}
tc_err_d = {q['tc_err_d']}
rp_rs = {q['rp_rs']:.5f}
rp_rs_err = {q['rp_rs_err']}
impact = {q['impact']:.3f}
impact_err = {q['impact_err']}
a_rs = {q['a_rs']:.2f}
a_rs_err = {q['a_rs_err']}

[settings]
seed = 1
period_min_d = 1.0
oversample = 10.0
max_signals = 4
fap_threshold = 0.001
orbit = "eccentric"
trend = 1
draws = 20000
sample = true
"""
    with open(os.path.join(HERE, "ostrel-12.toml"), "w", newline="\n") as fh:
        fh.write(text)


def write_readme(tr):
    b, c = tr["planets"]
    q = tr["transit_quoted_in_target"]
    a = tr["activity"]
    ins_rows = "\n".join(
        f"| {i['instrument']} | `{i['file']}` | {i['format']} | {i['time_standard']} | {i['n_points']} | "
        f"{i['first_bjd']:.1f} – {i['last_bjd']:.1f} | {i['rv_err_range_mps'][0]}–{i['rv_err_range_mps'][1]} | "
        f"{i['offset_mps']:+.1f} | {i['jitter_mps']:.1f} |"
        for i in tr["instruments"])
    text = f"""# Demo: the invented system {tr['name']}

Everything in this folder is **invented**: the star {tr['name']}, its planets, the three
spectrographs (Quill, Tarn, Fennick) and their sites. Any likeness to a real object or
instrument is accidental. The data were simulated by `make_demo.py` (numpy only, seed
{tr['seed']}); `truth.json` holds every injected value. This file is written by the same
script, so the numbers below are the ones used.

Run it with

    heft run data-demo/ostrel-12.toml

or look at pieces, e.g. `heft periodogram data-demo/quill.csv data-demo/fennick.tsv` or
`heft audit data-demo/quill.csv data-demo/fennick.tsv --period 47.3 --rotation-d 6.4`.

## The scenario

A young (~{tr['star']['age_gyr']} Gyr), magnetically active, roughly solar-type star:
M = {tr['star']['mass_msun']:.2f} ± {tr['star']['mass_err_msun']:.2f} M_sun,
R = {tr['star']['radius_rsun']:.2f} ± {tr['star']['radius_err_rsun']:.2f} R_sun,
Teff = {tr['star']['teff_k']:.0f} ± {tr['star']['teff_err_k']:.0f} K. A transit survey (invented) found a
{b['period_d']} d planet, **b**, of about {b['radius_rearth']} Earth radii. Three spectrographs then
followed the star for three observing seasons. The RVs also reveal a second, non-transiting
planet, **c**, on a moderately eccentric {c['period_d']} d orbit. Spots on the rotating star
add a quasi-periodic RV signal at the rotation period (~{a['rotation_d']} d) which also shows
in the `line_width` activity indicator.

The question the demo is built around: **is b really a low-density planet?** Its RV
semi-amplitude ({b['k_mps']} m/s) is comparable to the activity signal plus the jitter. In a
periodogram of all RVs (instrument offsets removed) c dominates, and the daily aliases of
its period stand taller than b's peak; b stands out once c is fitted. The rotation shows
clearly in the `line_width` periodogram and only weakly in the RV residuals.

## Files

| instrument | file | format | time column | epochs | span (BJD_TDB) | rv_err (m/s) | zero point (m/s) | jitter (m/s) |
|---|---|---|---|---|---|---|---|---|
{ins_rows}

Columns: `time`, `rv` (m/s, barycentric-corrected, positive = receding), `rv_err` (m/s,
1σ, quoted; the jitter is not included), `line_width` (m/s, width of the mean line; an
activity indicator with its own zero point per instrument). Tarn's times are written
as BJD_TDB − 2 450 000 and declared so in the target file (`time = "BJD-2450000"`).
Tarn's pipeline gives absolute RVs (hence the −14.2 km/s zero point); the others give
RVs relative to a template.

`ostrel-12.toml` is the target file: star, the three data files, the transit of b
(period, Tc, Rp/R*, impact parameter, a/R* with errors) and the settings.

## True values (what heft should recover, within the errors)

Orbits in the convention of the design notes: ω is the argument of periastron of the
star's orbit, v = K[cos(ν + ω) + e cos ω], Tc is the transit (conjunction) time.

| | b (transiting) | c |
|---|---|---|
| period_d | {b['period_d']} | {c['period_d']} |
| k_mps | {b['k_mps']} | {c['k_mps']} |
| ecc | {b['ecc']} | {c['ecc']} |
| omega_deg (star) | {b['omega_deg']} | {c['omega_deg']} |
| tc (BJD_TDB) | {b['tc_bjd']:.5f} | {c['tc_bjd']:.3f} |
| tp (BJD_TDB) | {b['tp_bjd']:.5f} | {c['tp_bjd']:.5f} |
| msini_mearth | {b['msini_mearth']:.3f} | {c['msini_mearth']:.3f} |
| mass_mearth | {b['mass_mearth']:.3f} (i = {b['incl_deg']:.3f}°) | — (inclination unknown) |
| radius_rearth | {b['radius_rearth']} (Rp/R* = {b['rp_rs']:.5f}) | — |
| density_gcc | {b['density_gcc']:.3f} | — |
| gravity_mps2 | {b['gravity_mps2']:.3f} | — |
| a_au | {b['a_au']:.5f} | {c['a_au']:.5f} |
| a/R* | {b['a_rs']:.3f} (impact {b['impact']}) | — |
| teq_k (A = 0, full redistribution) | {b['teq_k']:.0f} | {c['teq_k']:.0f} |

Masses use the exact K relation with the IAU 2015 nominal GM values; Earth radii are the
nominal equatorial radius (6 378.1 km); densities use that radius. With a density of
about {b['density_gcc']:.2f} g/cm³, b is far less dense than water, below the ~0.3 g/cm³
cut-off some authors use for super-puffs (others use 0.1 g/cm³).

Other injected terms:

- linear trend {tr['trend_mps_per_yr']} m/s/yr, referred to BJD_TDB {tr['trend_ref_bjd']};
- zero points and jitters per instrument: the table above;
- activity: one draw of a Gaussian process with quasi-periodic covariance
  exp(−Δt²/(2l²)) [cos(2πΔt/P_rot) + r² cos(4πΔt/P_rot)]/(1 + r²), P_rot = {a['rotation_d']} d,
  l = {a['evolution_d']} d, r = {a['harmonic_ratio']}, RV amplitude {a['amplitude_rv_mps']} m/s (rms); `line_width` follows
  the same process (slopes {', '.join(f"{i['line_width_per_unit_activity_mps']:.0f}" for i in tr['instruments'])} m/s
  per unit for Quill, Tarn, Fennick) plus noise of {tr["instruments"][0]["line_width_noise_mps"]}.

The transit values in the target file are the true ones plus one random draw of their
quoted errors, as real measurements would be: period {q['period_d']} ± {q['period_err_d']} d,
Tc {q['tc']} ± {q['tc_err_d']}, Rp/R* {q['rp_rs']} ± {q['rp_rs_err']}, impact {q['impact']} ± {q['impact_err']},
a/R* {q['a_rs']} ± {q['a_rs_err']}.

## Regenerating

    pip install numpy
    python3 data-demo/make_demo.py

The seed is fixed, so the files come out identical.
"""
    with open(os.path.join(HERE, "README.md"), "w", newline="\n") as fh:
        fh.write(text)


if __name__ == "__main__":
    sys.exit(main())
