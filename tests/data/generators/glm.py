#!/usr/bin/env python3
"""Reference values for strata's linear model and participant-level tests (tests/reference_glm.rs).

Writes tests/data/glm_reference.json. Sources:
  * OLS estimates, t, p and a joint F test: statsmodels OLS (formula API, treatment coding with
    the alphabetically first level as reference) on a design with an intercept, a two-level
    group, a numeric covariate (age) and a three-level categorical factor (site).
  * Interaction F: statsmodels anova_lm comparison of the nested models
    y ~ group + community + age   and   y ~ group * community + age.
  * Chi-square test of independence (Yates for 2 x 2, scipy's default, and without), Fisher's
    exact test, Kruskal-Wallis and one-way ANOVA: scipy.stats.
Data are invented here from numpy's seeded generator; feature values are rounded to float32
because strata stores features in float32.
Run: python3 tests/data/generators/glm.py
"""
import json
import pathlib

import numpy as np
import pandas as pd
import scipy
import statsmodels
import statsmodels.formula.api as smf
from scipy import stats
from statsmodels.stats.anova import anova_lm

OUT = pathlib.Path(__file__).resolve().parents[1] / "glm_reference.json"


def floats(values):
    return [float(v) for v in np.asarray(values, dtype=np.float64).ravel()]


def main():
    rng = np.random.default_rng(20261202)
    n, features = 36, 6
    group = np.array(["control", "insomnia"] * (n // 2))
    site = np.array(["north", "east", "west"])[rng.integers(0, 3, size=n)]
    community = np.array(["1", "2", "3"])[np.arange(n) % 3]
    age = np.round(rng.uniform(20, 60, size=n), 1)
    y = rng.normal(size=(n, features))
    y += 0.04 * age[:, None] + (group == "insomnia")[:, None] * rng.normal(0.8, 0.3, size=features)
    y += (site == "west")[:, None] * 0.5
    # An interaction in the first two features: the group effect flips in community 3.
    y[:, :2] += ((group == "insomnia") & (community == "3"))[:, None] * -1.5
    y = y.astype(np.float32).astype(np.float64)

    frame = pd.DataFrame({"group": group, "site": site, "community": community, "age": age})
    ols = []
    interaction = []
    for f in range(features):
        frame["y"] = y[:, f]
        fit = smf.ols("y ~ C(group) + age + C(site)", data=frame).fit()
        site_test = fit.f_test("C(site)[T.north] = 0, C(site)[T.west] = 0")
        ols.append({
            "params": dict(zip(fit.params.index, floats(fit.params))),
            "t": dict(zip(fit.tvalues.index, floats(fit.tvalues))),
            "p": dict(zip(fit.pvalues.index, floats(fit.pvalues))),
            "dof": float(fit.df_resid),
            "site_f": float(np.squeeze(site_test.fvalue)),
            "site_f_p": float(site_test.pvalue),
            "site_f_dof": [float(site_test.df_num), float(site_test.df_denom)],
            "model_f": float(fit.fvalue),
            "model_f_p": float(fit.f_pvalue),
        })
        reduced = smf.ols("y ~ C(group) + C(community) + age", data=frame).fit()
        full = smf.ols("y ~ C(group) * C(community) + age", data=frame).fit()
        table = anova_lm(reduced, full)
        interaction.append({
            "f": float(table["F"].iloc[1]),
            "p": float(table["Pr(>F)"].iloc[1]),
            "dof_numerator": float(table["df_diff"].iloc[1]),
            "dof_denominator": float(table["df_resid"].iloc[1]),
            "ssr_reduced": float(table["ssr"].iloc[0]),
            "ssr_full": float(table["ssr"].iloc[1]),
        })

    chi_tables = {
        "handbook_2x2": [[10, 20], [30, 40]],
        "handbook_3x2": [[10, 20], [15, 15], [25, 5]],
        "community_by_group": [[12, 3], [4, 11], [7, 8], [2, 2]],
    }
    chi = {}
    for name, table in chi_tables.items():
        corrected = stats.chi2_contingency(table)
        plain = stats.chi2_contingency(table, correction=False)
        chi[name] = {
            "table": table,
            "statistic": float(corrected.statistic),
            "p": float(corrected.pvalue),
            "dof": int(corrected.dof),
            "pearson_statistic": float(plain.statistic),
            "pearson_p": float(plain.pvalue),
            "min_expected": float(np.min(corrected.expected_freq)),
            "cramers_v": float(stats.contingency.association(table, method="cramer")),
        }

    fisher_tables = [[[3, 1], [1, 3]], [[8, 2], [1, 5]], [[0, 5], [6, 2]], [[12, 30], [9, 11]]]
    fisher = []
    for table in fisher_tables:
        two = stats.fisher_exact(table)
        fisher.append({
            "table": table,
            "odds_ratio": float(two.statistic),
            "p_two_sided": float(two.pvalue),
            "p_less": float(stats.fisher_exact(table, alternative="less").pvalue),
            "p_greater": float(stats.fisher_exact(table, alternative="greater").pvalue),
        })

    # k samples with ties (motion-like values rounded to 0.01 mm) for Kruskal-Wallis and ANOVA.
    samples = [
        floats(np.round(rng.gamma(2.0, 0.08, size=size) + shift, 2))
        for size, shift in [(14, 0.0), (9, 0.05), (11, 0.12)]
    ]
    kruskal = stats.kruskal(*samples)
    anova = stats.f_oneway(*samples)
    grand = np.mean(np.concatenate(samples))
    ss_between = sum(len(s) * (np.mean(s) - grand) ** 2 for s in samples)
    ss_total = sum(((np.asarray(s) - grand) ** 2).sum() for s in samples)
    total = sum(len(s) for s in samples)

    out = {
        "generator": "tests/data/generators/glm.py",
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "statsmodels": statsmodels.__version__,
        "n": n,
        "features": features,
        "group": group.tolist(),
        "site": site.tolist(),
        "community": community.tolist(),
        "age": floats(age),
        "y_row_major": floats(y),
        "ols": ols,
        "interaction": interaction,
        "chi_square": chi,
        "fisher": fisher,
        "samples": samples,
        "kruskal": {"h": float(kruskal.statistic), "p": float(kruskal.pvalue),
                    "epsilon_squared": float(kruskal.statistic) / (total - 1)},
        "anova": {"f": float(anova.statistic), "p": float(anova.pvalue),
                  "eta_squared": float(ss_between / ss_total)},
    }
    OUT.write_text(json.dumps(out, indent=1) + "\n")
    print(f"wrote {OUT}")
    print("interaction F:", [round(r["f"], 3) for r in interaction])
    print("chi community_by_group:", chi["community_by_group"])
    print("kruskal:", out["kruskal"], "anova:", out["anova"])


if __name__ == "__main__":
    main()
