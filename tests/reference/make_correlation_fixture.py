#!/usr/bin/env python3
"""Pearson and Spearman correlations with their two-sided p-values, from scipy.stats.

What it makes: tests/reference/correlations.json, a few small deterministic data sets
(one with tied values, one without correlation, one strongly correlated) with, for each,
scipy.stats.pearsonr and scipy.stats.spearmanr (both two-sided; spearmanr's p-value uses
the t distribution with n - 2 degrees of freedom), and the library versions.

Run from the repository root: python3 tests/reference/make_correlation_fixture.py
"""

import json
import platform

import numpy as np
import scipy
from scipy import stats


def data_sets():
    rng = np.random.default_rng(20261202)
    x = rng.normal(size=40)
    yield "correlated", x, 0.6 * x + rng.normal(scale=0.8, size=40)
    x = rng.normal(size=25)
    yield "independent", x, rng.normal(size=25)
    # Ties in both columns (indicator values rounded to 0.5, RVs to 1).
    x = np.round(rng.normal(scale=2.0, size=30) * 2.0) / 2.0
    y = np.round(3.0 * x + rng.normal(scale=6.0, size=30))
    yield "ties", x, y
    x = np.linspace(0.0, 1.0, 12) ** 3
    yield "monotone", x, np.exp(3.0 * x) + 0.01 * np.sin(17.0 * x)


def main():
    out = {
        "source": "scipy.stats.pearsonr and scipy.stats.spearmanr, two-sided",
        "versions": {
            "python": platform.python_version(),
            "numpy": np.__version__,
            "scipy": scipy.__version__,
        },
        "sets": [],
    }
    for name, x, y in data_sets():
        p = stats.pearsonr(x, y)
        s = stats.spearmanr(x, y)
        out["sets"].append(
            {
                "name": name,
                "x": [float(v) for v in x],
                "y": [float(v) for v in y],
                "pearson_r": float(p.statistic),
                "pearson_p": float(p.pvalue),
                "spearman_rho": float(s.statistic),
                "spearman_p": float(s.pvalue),
            }
        )
    with open("tests/reference/correlations.json", "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
