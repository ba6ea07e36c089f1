#!/usr/bin/env python3
"""Injection data sets simulated by numerical integration of the two-body problem.

What it makes (in tests/reference/twobody/):

  one_planet.csv      one instrument, 80 epochs over ~600 d, one planet
                      (P 12.3 d, K 25 m/s, e 0.3, omega 110 deg).
  two_planets_a.csv   two instruments with different zero points, errors and jitters, a
  two_planets_b.csv   linear trend and two planets (P 4.7 d, K 18 m/s, e 0.1 and P 41 d,
                      K 9 m/s, e 0.25); 150 epochs in total over ~900 d.
  truth.json          the injected values, written in the project's convention (below),
                      the noise model, seeds, constants and library versions, and the
                      results of this script's own checks.
  noisefree.csv       per data point: the integrated planetary signal, the analytic
                      Keplerian at the truth values, offset, trend and the noise draw.

Data files: header ``time,rv,rv_err``; time in full BJD_TDB (days), rv and rv_err in m/s.
No instrument column, so each file is one instrument named after its stem. ``rv_err`` is
the quoted 1-sigma error; the noise actually added has variance rv_err^2 + jitter^2.

How the velocities are made (outside the project's own RV model):
  For every planet, the star-planet two-body problem is integrated in 3D with
  scipy.integrate.solve_ivp (method DOP853, rtol 1e-12, atol 1e-14 in units of the
  semi-major axis), from periastron, for the relative vector r = r_planet - r_star with
  d2r/dt2 = -G (M_star + m_p) r / |r|^3. The star's barycentric velocity is
  -m_p/(M_star + m_p) dr/dt. Planets are superposed (each one its own two-body problem;
  planet-planet forces are neglected). Light-travel time and relativistic terms are
  ignored; the times are taken to be barycentric already.

Axes: X, Y span the plane of the sky, Z points along the line of sight AWAY from the
observer. The radial velocity is the star's dZ/dt: positive = receding. The orbit is
oriented by the usual rotation R_z(Omega) R_x(i) R_z(omega) of the in-plane vector
(cos(omega + nu), sin(omega + nu), 0) r, so Z = r sin(omega + nu) sin i.

Convention of the truth (design.md): omega is the argument of periastron of the STAR's
orbit (the planet's relative orbit has omega + pi), measured from the node where the
star recedes, and
    v(t) = K [cos(nu + omega) + e cos omega] + offset(instrument) + trend,
    trend = trend_mps_per_yr * (t - trend_ref_bjd) / 365.25.
The conjunction time Tc (planet between star and observer, the transit time) has
nu = pi/2 - omega. Tp follows from Tc by E_c = 2 atan(sqrt((1-e)/(1+e)) tan(nu_c/2)),
Tp = Tc - P/(2 pi) (E_c - e sin E_c) (references.md section 4).

Masses: each planet's mass follows from the chosen K, P, e, inclination and the star's
mass through the exact relation
    K = (2 pi / P)^(1/3) G m_p sin i / (G (M_star + m_p))^(2/3) / sqrt(1 - e^2)
solved numerically (scipy.optimize.brentq), with IAU 2015 nominal GM values (astropy
constants); the semi-major axis follows from Kepler's third law with G (M_star + m_p).

Checks done here (the script stops with an AssertionError if one fails):
  * the integrated stellar velocity at every epoch equals the analytic Keplerian of the
    truth values to better than 1e-6 of K;
  * K measured from the integrated orbit, (v_max - v_min)/2 at the nodes found by the
    integrator's event location, equals the K of the truth;
  * the conjunctions found by event location (planet in front, relative position
    perpendicular to the line of nodes) fall on Tc + n P.

Random numbers: numpy.random.default_rng (PCG64) with the seeds recorded in truth.json.
Times, RVs and errors are rounded to the decimals written, and the integration is done
at the written (rounded) times.

Rerun (needs Python 3 with numpy, scipy and astropy from PyPI):

    pip install numpy scipy astropy
    python3 tests/reference/make_twobody_fixture.py

CI does not run this script; its outputs are committed.
"""

import json
import math
import os
import platform
import sys

import astropy
import astropy.constants as const
import numpy as np
import scipy
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "twobody")

GM_SUN = const.GM_sun.value  # m^3 s^-2, IAU 2015 B3 nominal
GM_EARTH = const.GM_earth.value
GM_JUP = const.GM_jup.value
AU = const.au.value
DAY = 86400.0
YEAR_D = 365.25

RTOL = 1e-12
ATOL = 1e-14
CHECK_REL = 1e-6  # required agreement, integrated vs analytic, as a fraction of K

# ---------------------------------------------------------------------------------
# Scenario definitions (invented)
# ---------------------------------------------------------------------------------

DATASETS = [
    {
        "name": "one_planet",
        "seed": 101,
        "star_mass_msun": 0.93,
        "trend_mps_per_yr": 0.0,
        "trend_ref_bjd": 2459800.0,
        "planets": [
            {"label": "b", "period_d": 12.3047, "k_mps": 25.0, "ecc": 0.30, "omega_deg": 110.0,
             "tc_bjd": 2459712.3456, "incl_deg": 86.5, "node_deg": 35.0},
        ],
        "instruments": [
            {"file": "one_planet.csv", "n": 80, "start_bjd": 2459515.0, "end_bjd": 2460120.0,
             "season_start_doy": 300.0, "season_len_d": 250.0, "night_frac": 0.70,
             "err_lo": 1.2, "err_hi": 3.0, "offset_mps": 15.7, "jitter_mps": 1.5},
        ],
    },
    {
        "name": "two_planets",
        "seed": 202,
        "star_mass_msun": 1.07,
        "trend_mps_per_yr": 4.0,
        "trend_ref_bjd": 2459800.0,
        "planets": [
            {"label": "b", "period_d": 4.7021, "k_mps": 18.0, "ecc": 0.10, "omega_deg": 40.0,
             "tc_bjd": 2459801.2345, "incl_deg": 88.0, "node_deg": 120.0},
            {"label": "c", "period_d": 41.05, "k_mps": 9.0, "ecc": 0.25, "omega_deg": 250.0,
             "tc_bjd": 2459823.5000, "incl_deg": 84.0, "node_deg": 100.0},
        ],
        "instruments": [
            {"file": "two_planets_a.csv", "n": 95, "start_bjd": 2459350.0, "end_bjd": 2460250.0,
             "season_start_doy": 120.0, "season_len_d": 230.0, "night_frac": 0.62,
             "err_lo": 0.8, "err_hi": 2.0, "offset_mps": 12000.0, "jitter_mps": 1.0},
            {"file": "two_planets_b.csv", "n": 55, "start_bjd": 2459350.0, "end_bjd": 2460250.0,
             "season_start_doy": 135.0, "season_len_d": 200.0, "night_frac": 0.93,
             "err_lo": 2.5, "err_hi": 5.0, "offset_mps": -35.0, "jitter_mps": 3.5},
        ],
    },
]


def versions():
    return {
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "astropy": astropy.__version__,
    }


# ---------------------------------------------------------------------------------
# Analytic Keplerian (used only for the check and for Tc -> Tp)
# ---------------------------------------------------------------------------------

def tp_from_tc(tc, period, ecc, omega):
    """Periastron time from the conjunction time, nu_c = pi/2 - omega (star's omega)."""
    nu_c = math.pi / 2 - omega
    e_c = 2.0 * math.atan(math.sqrt((1 - ecc) / (1 + ecc)) * math.tan(nu_c / 2))
    return tc - period / (2 * math.pi) * (e_c - ecc * math.sin(e_c))


def kepler_e(mean_anom, ecc):
    """Eccentric anomaly by Newton's method, to machine precision."""
    m = np.mod(mean_anom, 2 * np.pi)
    e_anom = np.where(ecc < 0.8, m, np.pi)
    for _ in range(60):
        de = (e_anom - ecc * np.sin(e_anom) - m) / (1 - ecc * np.cos(e_anom))
        e_anom = e_anom - de
        if np.max(np.abs(de)) < 1e-15:
            break
    return e_anom


def kepler_rv(t, period, k, ecc, omega, tp):
    """v = K [cos(nu + omega) + e cos omega] (design.md convention)."""
    e_anom = kepler_e(2 * np.pi * (t - tp) / period, ecc)
    nu = 2 * np.arctan2(np.sqrt(1 + ecc) * np.sin(e_anom / 2), np.sqrt(1 - ecc) * np.cos(e_anom / 2))
    return k * (np.cos(nu + omega) + ecc * np.cos(omega))


# ---------------------------------------------------------------------------------
# Masses and the two-body integration
# ---------------------------------------------------------------------------------

def planet_gm_from_k(k, period_d, ecc, incl, gm_star):
    """Planet GM (m^3 s^-2) from K with the exact relation (no m_p << M_star)."""
    p_s = period_d * DAY

    def k_of(gm_p):
        return ((2 * math.pi / p_s) ** (1 / 3) * gm_p * math.sin(incl)
                / (gm_star + gm_p) ** (2 / 3) / math.sqrt(1 - ecc**2))

    return brentq(lambda g: k_of(g) - k, 1e-6 * GM_EARTH, 0.1 * gm_star, xtol=1e-30, rtol=1e-15,
                  maxiter=500)


def rotation(incl, node, arg):
    """Unit vectors P (towards the periastron of the given orbit) and Q (90 deg ahead)."""
    ci, si = math.cos(incl), math.sin(incl)
    cn, sn = math.cos(node), math.sin(node)

    def rot(x, y):
        # R_x(i): (x, y, 0) -> (x, y cos i, y sin i); then R_z(Omega).
        xx, yy, zz = x, y * ci, y * si
        return np.array([xx * cn - yy * sn, xx * sn + yy * cn, zz])

    return (rot(math.cos(arg), math.sin(arg)), rot(-math.sin(arg), math.cos(arg)))


def integrate_planet(pl, gm_star, times):
    """Integrates one star-planet pair; returns the star's Z velocity (m/s) at `times`,
    K from the node extremes, conjunction times, and orbit facts."""
    period = pl["period_d"]
    ecc = pl["ecc"]
    omega = math.radians(pl["omega_deg"])
    incl = math.radians(pl["incl_deg"])
    node = math.radians(pl["node_deg"])
    gm_p = planet_gm_from_k(pl["k_mps"], period, ecc, incl, gm_star)
    gm_tot = gm_star + gm_p
    a_m = (gm_tot * (period * DAY) ** 2 / (4 * math.pi**2)) ** (1 / 3)
    # Units inside the integration: length a_m, time days, so mu = (2 pi / P)^2.
    mu = (2 * math.pi / period) ** 2
    scale_mps = a_m / DAY  # (a per day) -> m/s
    star_factor = -gm_p / gm_tot  # star velocity = star_factor * relative velocity

    tp = tp_from_tc(pl["tc_bjd"], period, ecc, omega)
    t0 = tp + math.floor((times.min() - 1.0 - tp) / period) * period  # periastron before the data
    p_hat, q_hat = rotation(incl, node, omega + math.pi)  # relative orbit: omega + pi
    r0 = (1 - ecc) * p_hat
    v0 = math.sqrt(mu * (1 + ecc) / (1 - ecc)) * q_hat
    state = np.concatenate([r0, v0])

    def rhs(_t, y):
        r = y[:3]
        d3 = np.dot(r, r) ** 1.5
        return np.concatenate([y[3:], -mu * r / d3])

    node_dir = np.array([math.cos(node), math.sin(node), 0.0])

    def ev_conj(_t, y):
        return float(np.dot(y[:3], node_dir))

    def ev_node(_t, y):
        return float(y[2])

    order = np.argsort(times)
    vz = np.empty(len(times))
    t_now = 0.0
    conj, node_v = [], []
    t_end = times.max() - t0 + 1.0
    stops = list((times[order] - t0)) + [t_end]
    idx = list(order) + [None]
    for t_stop, k in zip(stops, idx):
        if t_stop > t_now:
            sol = solve_ivp(rhs, (t_now, t_stop), state, method="DOP853", rtol=RTOL, atol=ATOL,
                            events=(ev_conj, ev_node))
            assert sol.success, sol.message
            for te, ye in zip(sol.t_events[0], sol.y_events[0]):
                if ye[2] < 0:  # planet in front of the star (Z towards observer)
                    conj.append(te + t0)
            for ye in sol.y_events[1]:
                node_v.append(star_factor * ye[5] * scale_mps)
            state = sol.y[:, -1]
            t_now = t_stop
        if k is not None:
            vz[k] = star_factor * state[5] * scale_mps
    k_int = 0.5 * (max(node_v) - min(node_v))
    return {
        "vz": vz, "gm_p": gm_p, "a_m": a_m, "tp": tp, "k_integrated": k_int,
        "conjunctions": np.array(conj),
    }


# ---------------------------------------------------------------------------------
# Sampling and noise
# ---------------------------------------------------------------------------------

def sample_times(rng, ins):
    """Uneven nightly epochs inside yearly observing seasons, near a fixed hour."""
    nights = []
    year0 = math.floor((ins["start_bjd"] - 2451545.0) / YEAR_D)
    for y in range(year0, year0 + 6):
        s = 2451545.0 + y * YEAR_D + ins["season_start_doy"]
        for d in range(int(ins["season_len_d"])):
            n = math.floor(s) + d
            if ins["start_bjd"] <= n and n + 1 <= ins["end_bjd"]:
                nights.append(n)
    nights = np.array(nights, dtype=float)
    chosen = np.sort(rng.choice(nights, size=ins["n"], replace=False))
    t = chosen + ins["night_frac"] + rng.uniform(-0.06, 0.06, size=ins["n"])
    return np.array([float(f"{x:.6f}") for x in t])


def main():
    os.makedirs(OUT, exist_ok=True)
    truth = {
        "description": "Injection data sets from numerically integrated star-planet two-body "
                       "problems; truth in the design.md convention.",
        "made_by": "tests/reference/make_twobody_fixture.py",
        "versions": versions(),
        "integrator": {"function": "scipy.integrate.solve_ivp", "method": "DOP853",
                       "rtol": RTOL, "atol": ATOL,
                       "units": "length = relative semi-major axis, time = day"},
        "axes": "X, Y in the sky plane, Z along the line of sight away from the observer; "
                "rv = star's dZ/dt, positive = receding; orientation R_z(node) R_x(incl) "
                "R_z(omega)",
        "convention": "omega = argument of periastron of the star's orbit; "
                      "v = K [cos(nu + omega) + e cos omega] + offset + trend; "
                      "Tc (planet between star and observer) has nu = pi/2 - omega; "
                      "trend = trend_mps_per_yr * (t - trend_ref_bjd) / 365.25",
        "constants": {
            "gm_sun_m3_s2": GM_SUN, "gm_earth_m3_s2": GM_EARTH, "gm_jup_m3_s2": GM_JUP,
            "au_m": AU, "day_s": DAY, "year_d": YEAR_D,
            "source": "astropy.constants (IAU 2015 Resolution B3 nominal values)",
        },
        "mass_units": "masses in nominal solar, Earth and Jupiter masses: m = GM / (GM)^N; "
                      "msini_mearth = true mass times sin(incl); msini_mearth_without_incl "
                      "solves the exact K relation with sin i = 1, i.e. with (M_star + m sin i), "
                      "what an RV-only analysis without the inclination should find",
        "time_columns": "full BJD_TDB (days)",
        "noise_model": "rv = signal + offset + trend + N(0, rv_err^2 + jitter^2); quoted rv_err "
                       "excludes the jitter; rv_err ~ Uniform(err_lo, err_hi) per point; "
                       "rng = numpy.random.default_rng(seed) (PCG64)",
        "rounding": "time 6 decimals, rv and rv_err 3 decimals; the signal is computed at "
                    "the rounded times",
        "check_tolerance_fraction_of_k": CHECK_REL,
        "noisefree_csv": "one row per data point: file, line (1-based line number in that file, "
                         "header = line 1), time (as written), v_planets_integrated_mps (sum of "
                         "the integrated stellar velocities of all planets), "
                         "v_planets_kepler_mps (sum of analytic Keplerians at the truth values), "
                         "offset_mps, trend_mps, noise_mps (the draw added), rv_written_mps "
                         "(integrated + offset + trend + noise, rounded as in the data file)",
        "datasets": {},
    }
    nf_rows = []

    for ds in DATASETS:
        rng = np.random.default_rng(ds["seed"])
        gm_star = ds["star_mass_msun"] * GM_SUN
        # Sample the epochs and errors per instrument.
        ins_data = []
        for ins in ds["instruments"]:
            t = sample_times(rng, ins)
            err = np.array([float(f"{x:.3f}") for x in rng.uniform(ins["err_lo"], ins["err_hi"], ins["n"])])
            z = rng.standard_normal(ins["n"])
            ins_data.append((ins, t, err, z))
        all_t = np.concatenate([d[1] for d in ins_data])

        planets_out = []
        v_int_all = np.zeros_like(all_t)
        v_kep_all = np.zeros_like(all_t)
        for pl in ds["planets"]:
            res = integrate_planet(pl, gm_star, all_t)
            omega = math.radians(pl["omega_deg"])
            v_kep = kepler_rv(all_t, pl["period_d"], pl["k_mps"], pl["ecc"], omega, res["tp"])
            worst = float(np.max(np.abs(res["vz"] - v_kep)) / pl["k_mps"])
            assert worst < CHECK_REL, f"{ds['name']} {pl['label']}: integrated vs analytic {worst}"
            k_rel = abs(res["k_integrated"] - pl["k_mps"]) / pl["k_mps"]
            assert k_rel < CHECK_REL, f"{ds['name']} {pl['label']}: K from nodes off by {k_rel}"
            n_orb = np.round((res["conjunctions"] - pl["tc_bjd"]) / pl["period_d"])
            tc_dev = res["conjunctions"] - (pl["tc_bjd"] + n_orb * pl["period_d"])
            assert np.max(np.abs(tc_dev)) < 1e-6, f"conjunction off by {np.max(np.abs(tc_dev))} d"
            v_int_all += res["vz"]
            v_kep_all += v_kep
            # Report Tp as the periastron passage nearest to Tc.
            tp = res["tp"] + round((pl["tc_bjd"] - res["tp"]) / pl["period_d"]) * pl["period_d"]
            gm_p = res["gm_p"]
            incl = math.radians(pl["incl_deg"])
            planets_out.append({
                "label": pl["label"],
                "period_d": pl["period_d"],
                "k_mps": pl["k_mps"],
                "ecc": pl["ecc"],
                "omega_deg": pl["omega_deg"],
                "tc_bjd": pl["tc_bjd"],
                "tp_bjd": tp,
                "incl_deg": pl["incl_deg"],
                "node_deg": pl["node_deg"],
                "mass_mearth": gm_p / GM_EARTH,
                "mass_mjup": gm_p / GM_JUP,
                "msini_mearth": gm_p * math.sin(incl) / GM_EARTH,
                "msini_mearth_without_incl": planet_gm_from_k(
                    pl["k_mps"], pl["period_d"], pl["ecc"], math.pi / 2, gm_star) / GM_EARTH,
                "mass_msun": gm_p / GM_SUN,
                "star_mass_msun": ds["star_mass_msun"],
                "a_au": res["a_m"] / AU,
                "checks": {
                    "max_abs_integrated_minus_kepler_over_k": worst,
                    "k_mps_from_integrated_nodes": res["k_integrated"],
                    "n_conjunctions_found": int(len(res["conjunctions"])),
                    "max_abs_conjunction_minus_tc_plus_nP_d": float(np.max(np.abs(tc_dev))),
                },
            })

        # Offsets, trend, noise; write the files.
        instruments_out = []
        pos = 0
        for ins, t, err, z in ins_data:
            n = len(t)
            v_int = v_int_all[pos:pos + n]
            v_kep = v_kep_all[pos:pos + n]
            pos += n
            trend = ds["trend_mps_per_yr"] * (t - ds["trend_ref_bjd"]) / YEAR_D
            noise = np.sqrt(err**2 + ins["jitter_mps"] ** 2) * z
            rv = v_int + ins["offset_mps"] + trend + noise
            order = np.argsort(t)
            with open(os.path.join(OUT, ins["file"]), "w", newline="\n") as fh:
                fh.write("time,rv,rv_err\n")
                for line, k in enumerate(order, start=2):
                    fh.write(f"{t[k]:.6f},{rv[k]:.3f},{err[k]:.3f}\n")
                    nf_rows.append(
                        f"{ins['file']},{line},{t[k]:.6f},{float(v_int[k])!r},"
                        f"{float(v_kep[k])!r},{float(ins['offset_mps'])!r},"
                        f"{float(trend[k]) + 0.0!r},{float(noise[k])!r},{rv[k]:.3f}")
            instruments_out.append({
                "file": ins["file"],
                "instrument": os.path.splitext(ins["file"])[0],
                "n_points": n,
                "offset_mps": ins["offset_mps"],
                "jitter_mps": ins["jitter_mps"],
                "rv_err_range_mps": [ins["err_lo"], ins["err_hi"]],
                "first_bjd": float(t.min()), "last_bjd": float(t.max()),
            })
        truth["datasets"][ds["name"]] = {
            "seed": ds["seed"],
            "star_mass_msun": ds["star_mass_msun"],
            "planets": planets_out,
            "instruments": instruments_out,
            "trend_mps_per_yr": ds["trend_mps_per_yr"],
            "trend_ref_bjd": ds["trend_ref_bjd"],
        }

    with open(os.path.join(OUT, "noisefree.csv"), "w", newline="\n") as fh:
        fh.write("file,line,time,v_planets_integrated_mps,v_planets_kepler_mps,offset_mps,"
                 "trend_mps,noise_mps,rv_written_mps\n")
        fh.write("\n".join(nf_rows) + "\n")
    with open(os.path.join(OUT, "truth.json"), "w", newline="\n") as fh:
        json.dump(truth, fh, indent=1)
        fh.write("\n")
    for name, d in truth["datasets"].items():
        for p in d["planets"]:
            print(name, p["label"], json.dumps(p["checks"]), f"m={p['mass_mearth']:.4f} Me")


if __name__ == "__main__":
    sys.exit(main())
