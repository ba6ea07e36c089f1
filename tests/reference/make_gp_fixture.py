#!/usr/bin/env python3
"""Reference fixture for the Gaussian-process noise model (src/gp/).

What it makes (in the folder of this script):

  gp_numpy.json  library versions; an invented, unevenly sampled data set (times in
                 days, residuals in m/s, white variances in m^2/s^2, per-point amplitude
                 scales); and for each of several kernels the GP log-likelihood and the
                 predictive mean and variance at a set of times, all computed with a
                 dense covariance matrix and scipy's Cholesky factorisation.

Formulas (written out here from the papers, independently of heft's code):

  quasi-periodic (Rajpaul et al. 2015, MNRAS 452, 2269, eq. 4; Haywood et al. 2014):
      k(tau) = h^2 exp(-sin^2(pi tau / P) / (2 w^2) - tau^2 / (2 lam^2))
  damped driven oscillator (Foreman-Mackey et al. 2017, AJ 154, 220, eq. 20, Q > 1/2),
  with S0 from the zero-lag standard deviation sigma = sqrt(S0 w0 Q), w0 = 2 pi / P:
      k(tau) = S0 w0 Q exp(-w0 tau / (2Q)) [cos(eta w0 tau) + sin(eta w0 tau) / (2 eta Q)],
      eta = sqrt(1 - 1/(4 Q^2))
  covariance: K = diag(white) + s s^T * k(t_i - t_j)
  log-likelihood (Rasmussen & Williams 2006, eq. 2.30):
      -1/2 r^T K^-1 r - 1/2 ln det K - N/2 ln 2 pi
  prediction (Rasmussen & Williams 2006, eqs. 2.25-2.26), of the GP signal alone:
      mean = K*^T K^-1 r,  var = s*^2 k(0) - K*^T K^-1 K*

The data are generated with a fixed seed; every number is written with Python's
shortest round-trip repr, so heft reads exactly the values used here.

Rerun from the repository root: python3 tests/reference/make_gp_fixture.py
"""

import json
import platform
from pathlib import Path

import numpy as np
import scipy
import scipy.linalg


def qp(tau, h, lam, period, w):
    s = np.sin(np.pi * tau / period)
    return h * h * np.exp(-s * s / (2 * w * w) - tau * tau / (2 * lam * lam))


def sho(tau, sigma, period, q):
    w0 = 2 * np.pi / period
    s0 = sigma * sigma / (w0 * q)
    eta = np.sqrt(1 - 1 / (4 * q * q))
    t = np.abs(tau)
    return (
        s0 * w0 * q * np.exp(-w0 * t / (2 * q))
        * (np.cos(eta * w0 * t) + np.sin(eta * w0 * t) / (2 * eta * q))
    )


def kernel_value(terms, tau):
    total = np.zeros_like(tau)
    for term in terms:
        if term["kind"] == "quasi-periodic":
            total += qp(tau, term["amplitude_mps"], term["evolution_d"],
                        term["period_d"], term["smoothness"])
        else:
            total += sho(tau, term["amplitude_mps"], term["period_d"], term["quality"])
    return total


def main():
    rng = np.random.default_rng(20261202)
    n = 120
    t = np.sort(rng.uniform(-150.0, 150.0, n)).round(5)
    white = (rng.uniform(0.8, 2.5, n) ** 2).round(6)
    scale = np.where(rng.uniform(size=n) < 0.3, 1.3, 1.0)
    r = (4.0 * np.sin(2 * np.pi * t / 17.3) + rng.normal(0, 2.0, n)).round(4)
    at = np.linspace(-160.0, 160.0, 41)
    at_scale = np.ones_like(at)

    kernels = {
        "quasi_periodic": [
            {"kind": "quasi-periodic", "amplitude_mps": 5.0, "evolution_d": 40.0,
             "period_d": 17.3, "smoothness": 0.5}],
        "oscillator_pair": [
            {"kind": "oscillator", "amplitude_mps": 4.0, "period_d": 17.3, "quality": 6.0},
            {"kind": "oscillator", "amplitude_mps": 2.0, "period_d": 8.65, "quality": 6.0}],
        "quasi_periodic_plus_oscillator": [
            {"kind": "quasi-periodic", "amplitude_mps": 3.0, "evolution_d": 25.0,
             "period_d": 17.3, "smoothness": 0.8},
            {"kind": "oscillator", "amplitude_mps": 1.5, "period_d": 4.1, "quality": 0.9}],
    }
    cases = []
    for name, terms in kernels.items():
        for scaled in (False, True):
            s = scale if scaled else np.ones(n)
            tau = t[:, None] - t[None, :]
            k = np.diag(white) + np.outer(s, s) * kernel_value(terms, tau)
            cf = scipy.linalg.cho_factor(k, lower=True)
            alpha = scipy.linalg.cho_solve(cf, r)
            logdet = 2 * np.sum(np.log(np.diag(cf[0])))
            lnl = -0.5 * (r @ alpha + logdet + n * np.log(2 * np.pi))
            kstar = np.outer(s, at_scale) * kernel_value(terms, t[:, None] - at[None, :])
            mean = kstar.T @ alpha
            var = at_scale ** 2 * kernel_value(terms, np.zeros(1))[0] - np.sum(
                kstar * scipy.linalg.cho_solve(cf, kstar), axis=0)
            cases.append({
                "name": name, "scaled": scaled, "terms": terms,
                "log_likelihood": float(lnl),
                "mean_mps": [float(x) for x in mean],
                "variance_m2ps2": [float(x) for x in var],
            })
    out = {
        "made_by": "tests/reference/make_gp_fixture.py",
        "versions": {"python": platform.python_version(), "numpy": np.__version__,
                     "scipy": scipy.__version__},
        "method": "dense covariance, scipy.linalg.cho_factor/cho_solve (lower)",
        "time_d": [float(x) for x in t],
        "residual_mps": [float(x) for x in r],
        "white_m2ps2": [float(x) for x in white],
        "scale": [float(x) for x in scale],
        "at_d": [float(x) for x in at],
        "cases": cases,
    }
    path = Path(__file__).with_name("gp_numpy.json")
    path.write_text(json.dumps(out, indent=1) + "\n")
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
