#!/usr/bin/env python3
"""Reference values for strata's group statistics (tests/reference_stats.rs).

Writes tests/data/stats_reference.json. Sources:
  * Welch t, dof, two-sided p: scipy.stats.ttest_ind(equal_var=False) (scipy version recorded).
  * BH q: scipy.stats.false_discovery_control(method="bh").
  * Hedges g: the textbook formula computed here with math.lgamma:
      d = (mean_a - mean_b) / s_pooled,  g = J(m) d,
      J(m) = Gamma(m/2) / (sqrt(m/2) Gamma((m-1)/2)),  m = n_a + n_b - 2
    (Hedges 1981, J Educ Stat 6:107-128, exact correction).
Data: data set A is Welch example 1 as given on Wikipedia's "Welch's t-test" page (from memory;
its scipy values match REFERENCES.md); the 1..5 vs evens example and the 20 x 50 matrix are
invented here (the matrix from numpy's seeded generator).
Run: python3 tests/data/generators/stats.py
"""
import json
import math
import pathlib

import numpy as np
import scipy
from scipy import stats

OUT = pathlib.Path(__file__).resolve().parents[1] / "stats_reference.json"


def hedges(a, b):
    a = np.asarray(a, dtype=np.float64)
    b = np.asarray(b, dtype=np.float64)
    na, nb = len(a), len(b)
    m = na + nb - 2
    pooled = math.sqrt(((na - 1) * a.var(ddof=1) + (nb - 1) * b.var(ddof=1)) / m)
    d = (a.mean() - b.mean()) / pooled
    j = math.exp(math.lgamma(m / 2) - math.lgamma((m - 1) / 2) - 0.5 * math.log(m / 2))
    return d, j, j * d


def welch(a, b):
    r = stats.ttest_ind(a, b, equal_var=False)
    d, j, g = hedges(a, b)
    return {
        "a": list(map(float, a)),
        "b": list(map(float, b)),
        "t": float(r.statistic),
        "dof": float(r.df),
        "p": float(r.pvalue),
        "cohen_d": d,
        "hedges_j": j,
        "hedges_g": g,
    }


def main():
    set_a1 = [27.5, 21.0, 19.0, 23.6, 17.0, 17.9, 16.9, 20.1, 21.9, 22.6, 23.1, 19.6, 19.0, 21.7, 21.4]
    set_a2 = [27.1, 22.0, 20.8, 23.4, 23.4, 23.5, 25.8, 22.0, 24.8, 20.2, 21.9, 22.1, 22.9, 20.5, 24.4]
    # REFERENCES.md's "1..5 vs 2,4..12" matches b = 2, 4, 6, 8, 10, 12 (the even numbers);
    # b = 2, 4, 5, ..., 12 gives t = -3.561 instead.
    small_a = [1, 2, 3, 4, 5]
    small_b = [2, 4, 6, 8, 10, 12]

    # Benjamini & Hochberg 1995's 15 p values (example list from the paper, from memory).
    bh15 = [0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344,
            0.0459, 0.3240, 0.4262, 0.5719, 0.6528, 0.7590, 1.0000]
    bh4 = [0.01, 0.04, 0.03, 0.005]

    rng = np.random.default_rng(20261201)
    rows, cols = 20, 50
    matrix = rng.normal(size=(rows, cols)) * rng.uniform(0.5, 3.0, size=cols)
    matrix[:8] += rng.normal(scale=1.0, size=cols)  # group A shifted per feature
    matrix += 10.0  # an offset, to exercise the two-pass variance
    matrix = matrix.astype(np.float32)  # strata stores f32: the reference uses the same values
    group_a = list(range(0, 8))
    group_b = list(range(8, 20))
    x = matrix.astype(np.float64)
    r = stats.ttest_ind(x[group_a], x[group_b], axis=0, equal_var=False)
    g = [hedges(x[group_a, f], x[group_b, f])[2] for f in range(cols)]
    q = stats.false_discovery_control(r.pvalue, method="bh")

    out = {
        "generator": "tests/data/generators/stats.py",
        "scipy": scipy.__version__,
        "numpy": np.__version__,
        "welch_set_a": welch(set_a1, set_a2),
        "welch_small": welch(small_a, small_b),
        "hedges_j_df28": math.exp(math.lgamma(14) - math.lgamma(13.5) - 0.5 * math.log(14)),
        "bh15": {"p": bh15, "q": list(map(float, stats.false_discovery_control(bh15, method="bh")))},
        "bh4": {"p": bh4, "q": list(map(float, stats.false_discovery_control(bh4, method="bh")))},
        "matrix": {
            "rows": rows,
            "cols": cols,
            "values_row_major": [float(v) for v in matrix.ravel()],
            "group_a": group_a,
            "group_b": group_b,
            "mean_a": list(map(float, x[group_a].mean(axis=0))),
            "mean_b": list(map(float, x[group_b].mean(axis=0))),
            "t": list(map(float, r.statistic)),
            "dof": list(map(float, r.df)),
            "p": list(map(float, r.pvalue)),
            "q": list(map(float, q)),
            "hedges_g": list(map(float, g)),
        },
    }
    OUT.write_text(json.dumps(out, indent=1) + "\n")
    print(f"wrote {OUT}")
    print("set A:", out["welch_set_a"]["t"], out["welch_set_a"]["dof"], out["welch_set_a"]["p"], out["welch_set_a"]["hedges_g"])
    print("small:", out["welch_small"]["t"], out["welch_small"]["dof"], out["welch_small"]["p"])
    print("J28:", out["hedges_j_df28"], "bh15:", out["bh15"]["q"][:5], "bh4:", out["bh4"]["q"])


if __name__ == "__main__":
    main()
