#!/usr/bin/env python3
"""Reference fixture for the joint GP model of several series (src/gp/joint.rs).

What it makes (in the folder of this script):

  joint_gp_numpy.json  library versions; an invented data set of three series (an RV-like
                       series, and two indicator-like series) sampled at partly different,
                       unevenly spaced times; and for several couplings the log-likelihood
                       of the stacked residuals and the predictive mean and variance of
                       every series at a set of times, computed with a dense covariance
                       matrix and scipy's Cholesky factorisation.

Model (Rajpaul et al. 2015, MNRAS 452, 2269, multi-output framework), written out here
independently of heft's code: a latent process G with the quasi-periodic covariance
(Rajpaul et al. 2015, eq. 4; Haywood et al. 2014)

    k(tau) = h^2 exp(-sin^2(pi tau / P) / (2 w^2) - tau^2 / (2 lam^2)),  tau = t - t',

and series X(t) = a_X G(t) + b_X dG/dt(t). By linearity of the covariance,

    cov(X(t), Y(t')) = a_X a_Y k + a_X b_Y d/dt' k + b_X a_Y d/dt k + b_X b_Y d2/(dt dt') k.

Here the partial derivatives in t and t' are taken of k(t - t') as a function of the
two times, from the chain rule of the expression above (computed by the helper `qp_parts`
in the form d/dt = +d/dtau, d/dt' = -d/dtau). The script checks these analytic
derivatives against central finite differences of k in t and t' before using them.

  covariance: K = blocks above + diag(white)
  log-likelihood (Rasmussen & Williams 2006, eq. 2.30):
      -1/2 r^T K^-1 r - 1/2 ln det K - N/2 ln 2 pi
  prediction (Rasmussen & Williams 2006, eqs. 2.25-2.26), activity signal alone:
      mean = K*^T K^-1 r,  var = cov(X(t*), X(t*)) - K*^T K^-1 K*

The data are generated with a fixed seed; every number is written with Python's
shortest round-trip repr, so heft reads exactly the values used here.

Rerun from the repository root: python3 tests/reference/make_joint_gp_fixture.py
"""

import json
import platform
from pathlib import Path

import numpy as np
import scipy
import scipy.linalg


def qp_parts(tau, h, lam, period, w):
    """k, dk/dtau and d2k/dtau2 of the quasi-periodic kernel.

    With u = pi tau / P: ln(k/h^2) = -sin(u)^2 / (2 w^2) - tau^2 / (2 lam^2), so
    d ln k / dtau = -(pi / P) sin(u) cos(u) / w^2 - tau / lam^2 =: g,
    dg/dtau = -(pi / P)^2 (cos(u)^2 - sin(u)^2) / w^2 - 1 / lam^2,
    dk/dtau = k g, d2k/dtau2 = k (g^2 + dg/dtau).
    """
    u = np.pi * tau / period
    s, c = np.sin(u), np.cos(u)
    k = h * h * np.exp(-s * s / (2 * w * w) - tau * tau / (2 * lam * lam))
    g = -(np.pi / period) * s * c / (w * w) - tau / (lam * lam)
    dg = -(np.pi / period) ** 2 * (c * c - s * s) / (w * w) - 1 / (lam * lam)
    return k, k * g, k * (g * g + dg)


def cross_cov(t1, s1, t2, s2, latent, coupling):
    """cov(X_{s1}(t1), X_{s2}(t2)) for arrays of times and series numbers."""
    tau = t1[:, None] - t2[None, :]
    k, dk, d2k = qp_parts(tau, *latent)
    a1 = np.array([coupling[i][0] for i in s1])[:, None]
    b1 = np.array([coupling[i][1] for i in s1])[:, None]
    a2 = np.array([coupling[i][0] for i in s2])[None, :]
    b2 = np.array([coupling[i][1] for i in s2])[None, :]
    # d/dt k(t - t') = dk, d/dt' k(t - t') = -dk, d2/(dt dt') k(t - t') = -d2k.
    return a1 * a2 * k + a1 * b2 * (-dk) + b1 * a2 * dk + b1 * b2 * (-d2k)


def check_derivatives(latent):
    """The analytic derivatives against central differences of k(t - t')."""
    h = 1e-4
    for t, tp in [(3.0, 1.0), (0.0, 7.9), (20.0, 20.0), (-5.5, 30.2)]:
        def k(x, y):
            return qp_parts(np.array(x - y), *latent)[0]
        _, dk, d2k = qp_parts(np.array(t - tp), *latent)
        dt = (k(t + h, tp) - k(t - h, tp)) / (2 * h)
        dtp = (k(t, tp + h) - k(t, tp - h)) / (2 * h)
        dttp = (k(t + h, tp + h) - k(t + h, tp - h) - k(t - h, tp + h)
                + k(t - h, tp - h)) / (4 * h * h)
        scale = latent[0] ** 2
        assert abs(dt - dk) < 1e-7 * scale, (t, tp, dt, dk)
        assert abs(dtp + dk) < 1e-7 * scale, (t, tp, dtp, dk)
        assert abs(dttp + d2k) < 1e-5 * scale, (t, tp, dttp, d2k)


def main():
    rng = np.random.default_rng(20261203)
    # Three invented series: series 0 (RV-like, m/s), 1 and 2 (indicator-like); series 1
    # shares most of series 0's epochs, series 2 has its own.
    t0 = np.sort(rng.uniform(-90.0, 90.0, 70)).round(5)
    t1 = np.sort(rng.choice(t0, 55, replace=False))
    t2 = np.sort(rng.uniform(-90.0, 90.0, 30)).round(5)
    t = np.concatenate([t0, t1, t2])
    series = np.array([0] * len(t0) + [1] * len(t1) + [2] * len(t2))
    white = np.concatenate([
        rng.uniform(0.8, 2.0, len(t0)) ** 2,
        rng.uniform(0.02, 0.05, len(t1)) ** 2,
        rng.uniform(3.0, 6.0, len(t2)) ** 2,
    ]).round(6)
    r = np.concatenate([
        4.0 * np.sin(2 * np.pi * t0 / 11.7) + rng.normal(0, 1.5, len(t0)),
        0.1 * np.cos(2 * np.pi * t1 / 11.7) + rng.normal(0, 0.03, len(t1)),
        6.0 * np.sin(2 * np.pi * t2 / 11.7 + 0.4) + rng.normal(0, 4.0, len(t2)),
    ]).round(5)
    at = np.linspace(-100.0, 100.0, 21)
    at_t = np.concatenate([at, at, at])
    at_series = np.array([0] * len(at) + [1] * len(at) + [2] * len(at))

    latents = {
        "smooth": [1.0, 30.0, 11.7, 0.6],
        "rough": [1.0, 18.0, 11.7, 0.35],
    }
    couplings = {
        # (a, b) per series; b = 0 for the two indicator-like series.
        "rv_slope_indicators_level": [[3.0, 9.0], [0.08, 0.0], [-5.0, 0.0]],
        # every series with both terms (e.g. a line-shape indicator with a slope term).
        "all_slopes": [[2.5, -6.0], [0.05, 0.2], [4.0, 12.0]],
        # level terms only: every block is a scaled plain quasi-periodic covariance.
        "levels_only": [[3.0, 0.0], [0.08, 0.0], [-5.0, 0.0]],
    }
    cases = []
    for lname, latent in latents.items():
        check_derivatives(latent)
        for cname, coupling in couplings.items():
            k = cross_cov(t, series, t, series, latent, coupling) + np.diag(white)
            cf = scipy.linalg.cho_factor(k, lower=True)
            alpha = scipy.linalg.cho_solve(cf, r)
            logdet = 2 * np.sum(np.log(np.diag(cf[0])))
            lnl = -0.5 * (r @ alpha + logdet + len(r) * np.log(2 * np.pi))
            kstar = cross_cov(t, series, at_t, at_series, latent, coupling)
            mean = kstar.T @ alpha
            prior = np.diag(cross_cov(at_t, at_series, at_t, at_series, latent, coupling))
            var = prior - np.sum(kstar * scipy.linalg.cho_solve(cf, kstar), axis=0)
            cases.append({
                "name": f"{lname}/{cname}",
                "latent": {"amplitude": latent[0], "evolution_d": latent[1],
                           "period_d": latent[2], "smoothness": latent[3]},
                "coupling": coupling,
                "log_likelihood": float(lnl),
                "mean": [float(x) for x in mean],
                "variance": [float(x) for x in var],
            })
    out = {
        "made_by": "tests/reference/make_joint_gp_fixture.py",
        "versions": {"python": platform.python_version(), "numpy": np.__version__,
                     "scipy": scipy.__version__},
        "method": "dense stacked covariance, scipy.linalg.cho_factor/cho_solve (lower)",
        "time_d": [float(x) for x in t],
        "series": [int(x) for x in series],
        "residual": [float(x) for x in r],
        "white": [float(x) for x in white],
        "at_d": [float(x) for x in at_t],
        "at_series": [int(x) for x in at_series],
        "cases": cases,
    }
    path = Path(__file__).with_name("joint_gp_numpy.json")
    path.write_text(json.dumps(out, indent=1) + "\n")
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
