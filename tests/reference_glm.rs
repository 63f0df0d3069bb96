//! Linear model and participant-level tests against statsmodels and scipy.
//!
//! Expected values come from `tests/data/glm_reference.json`, written by
//! `tests/data/generators/glm.py` (statsmodels 0.15.0 OLS, f_test and anova_lm; scipy 1.17.1
//! chi2_contingency, contingency.association, fisher_exact, kruskal, f_oneway). Handbook values
//! from /work/shared/REFERENCES.md are repeated in the unit tests of `src/stats/contingency.rs`.

use approx::assert_relative_eq;
use ndarray::Array2;
use serde_json::Value;
use strata::features::FeatureMatrix;
use strata::stats::{
    chi_square_independence, contrast_f, contrast_t, fisher_exact, fit_linear_model, kruskal_wallis,
    nested_f, one_way_anova, Design,
};

fn reference() -> Value {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/glm_reference.json");
    let text = std::fs::read_to_string(path).expect("tests/data/glm_reference.json is committed");
    serde_json::from_str(&text).expect("reference JSON parses")
}

fn floats(value: &Value) -> Vec<f64> {
    value.as_array().expect("array").iter().map(|v| v.as_f64().expect("number")).collect()
}

fn strings(value: &Value) -> Vec<String> {
    value.as_array().expect("array").iter().map(|v| v.as_str().expect("string").to_string()).collect()
}

fn counts(value: &Value) -> Vec<Vec<u64>> {
    value
        .as_array()
        .expect("table")
        .iter()
        .map(|row| row.as_array().expect("row").iter().map(|v| v.as_u64().expect("count")).collect())
        .collect()
}

struct Cohort {
    matrix: FeatureMatrix,
    group: Vec<String>,
    site: Vec<String>,
    community: Vec<String>,
    age: Vec<f64>,
}

fn cohort(reference: &Value) -> Cohort {
    let n = reference["n"].as_u64().unwrap() as usize;
    let features = reference["features"].as_u64().unwrap() as usize;
    let values: Vec<f32> = floats(&reference["y_row_major"]).iter().map(|&v| v as f32).collect();
    Cohort {
        matrix: FeatureMatrix { values: Array2::from_shape_vec((n, features), values).unwrap() },
        group: strings(&reference["group"]),
        site: strings(&reference["site"]),
        community: strings(&reference["community"]),
        age: floats(&reference["age"]),
    }
}

fn indicator(labels: &[String], level: &str) -> Vec<f64> {
    labels.iter().map(|label| if label == level { 1.0 } else { 0.0 }).collect()
}

/// A design from named columns (one value per participant each).
fn design(columns: Vec<(&str, Vec<f64>)>) -> Design {
    let n = columns[0].1.len();
    let mut values = Vec::with_capacity(n * columns.len());
    for row in 0..n {
        for (_, column) in &columns {
            values.push(column[row]);
        }
    }
    Design { columns: columns.iter().map(|(name, _)| name.to_string()).collect(), values }
}

#[test]
fn ols_estimates_t_p_and_f_match_statsmodels() {
    let reference = reference();
    let data = cohort(&reference);
    let n = data.age.len();
    // statsmodels' treatment coding: the alphabetically first level (control, east) is the
    // reference level.
    let design = design(vec![
        ("Intercept", vec![1.0; n]),
        ("C(group)[T.insomnia]", indicator(&data.group, "insomnia")),
        ("C(site)[T.north]", indicator(&data.site, "north")),
        ("C(site)[T.west]", indicator(&data.site, "west")),
        ("age", data.age.clone()),
    ]);
    let rows: Vec<usize> = (0..n).collect();
    let model = fit_linear_model(&data.matrix, &rows, &design).unwrap();
    assert_eq!(model.residual_dof, 31);
    let k = design.columns.len();
    for (f, expected) in reference["ols"].as_array().unwrap().iter().enumerate() {
        for (j, name) in design.columns.iter().enumerate() {
            // statsmodels 0.15.0 OLS on the same float32-rounded values: estimates to 1e-9
            // relative (both solve by orthogonal factorisation in f64).
            let want = expected["params"][name].as_f64().unwrap();
            assert_relative_eq!(model.coefficient(j)[f], want, max_relative = 1e-9, epsilon = 1e-12);
            let mut weights = vec![0.0; k];
            weights[j] = 1.0;
            let test = contrast_t(&model, &weights).unwrap();
            // t is stored as f32: 1e-6 relative; p kept in f64: 1e-6 relative.
            assert_relative_eq!(
                f64::from(test.t[f]),
                expected["t"][name].as_f64().unwrap(),
                max_relative = 1e-6
            );
            assert_relative_eq!(test.p[f], expected["p"][name].as_f64().unwrap(), max_relative = 1e-6);
            assert_relative_eq!(test.dof, expected["dof"].as_f64().unwrap());
        }
        // Joint test of the two site terms: statsmodels f_test.
        let site =
            contrast_f(&model, &[vec![0.0, 0.0, 1.0, 0.0, 0.0], vec![0.0, 0.0, 0.0, 1.0, 0.0]]).unwrap();
        assert_relative_eq!(f64::from(site.f[f]), expected["site_f"].as_f64().unwrap(), max_relative = 1e-6);
        assert_relative_eq!(site.p[f], expected["site_f_p"].as_f64().unwrap(), max_relative = 1e-6);
        assert_eq!([site.dof_numerator, site.dof_denominator], [2.0, 31.0]);
        // The model F (every column but the intercept): statsmodels fvalue / f_pvalue.
        let all: Vec<Vec<f64>> = (1..k)
            .map(|j| {
                let mut weights = vec![0.0; k];
                weights[j] = 1.0;
                weights
            })
            .collect();
        let model_f = contrast_f(&model, &all).unwrap();
        assert_relative_eq!(
            f64::from(model_f.f[f]),
            expected["model_f"].as_f64().unwrap(),
            max_relative = 1e-6
        );
        assert_relative_eq!(model_f.p[f], expected["model_f_p"].as_f64().unwrap(), max_relative = 1e-6);
    }
}

#[test]
fn interaction_f_matches_statsmodels_anova_lm() {
    let reference = reference();
    let data = cohort(&reference);
    let n = data.age.len();
    let insomnia = indicator(&data.group, "insomnia");
    let community2 = indicator(&data.community, "2");
    let community3 = indicator(&data.community, "3");
    let product = |a: &[f64], b: &[f64]| a.iter().zip(b).map(|(x, y)| x * y).collect::<Vec<f64>>();
    let main_effects = vec![
        ("Intercept", vec![1.0; n]),
        ("group", insomnia.clone()),
        ("community2", community2.clone()),
        ("community3", community3.clone()),
        ("age", data.age.clone()),
    ];
    let mut with_interaction = main_effects.clone();
    with_interaction.push(("group:community2", product(&insomnia, &community2)));
    with_interaction.push(("group:community3", product(&insomnia, &community3)));
    let rows: Vec<usize> = (0..n).collect();
    let reduced = fit_linear_model(&data.matrix, &rows, &design(main_effects)).unwrap();
    let full = fit_linear_model(&data.matrix, &rows, &design(with_interaction)).unwrap();
    let nested = nested_f(&full, &reduced).unwrap();
    let contrast = contrast_f(
        &full,
        &[vec![0.0, 0.0, 0.0, 0.0, 0.0, 1.0, 0.0], vec![0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0]],
    )
    .unwrap();
    for (f, expected) in reference["interaction"].as_array().unwrap().iter().enumerate() {
        // statsmodels 0.15.0 anova_lm(reduced, full): F, Pr(>F), df_diff, df_resid, ssr.
        let want_f = expected["f"].as_f64().unwrap();
        let want_p = expected["p"].as_f64().unwrap();
        assert_relative_eq!(
            reduced.residual_ss[f],
            expected["ssr_reduced"].as_f64().unwrap(),
            max_relative = 1e-9
        );
        assert_relative_eq!(full.residual_ss[f], expected["ssr_full"].as_f64().unwrap(), max_relative = 1e-9);
        for result in [&nested, &contrast] {
            assert_relative_eq!(f64::from(result.f[f]), want_f, max_relative = 1e-6);
            assert_relative_eq!(result.p[f], want_p, max_relative = 1e-6);
            assert_relative_eq!(result.dof_numerator, expected["dof_numerator"].as_f64().unwrap());
            assert_relative_eq!(result.dof_denominator, expected["dof_denominator"].as_f64().unwrap());
        }
    }
    // The generator plants an interaction in features 0 and 1 only: a check that the data
    // exercise both outcomes (statsmodels gives F = 3.21 and 9.01 there).
    assert!(nested.f[1] > 5.0);
}

#[test]
fn chi_square_matches_scipy() {
    let reference = reference();
    for (name, expected) in reference["chi_square"].as_object().unwrap() {
        let table = counts(&expected["table"]);
        let corrected = chi_square_independence(&table, true).unwrap();
        let plain = chi_square_independence(&table, false).unwrap();
        // scipy 1.17.1 chi2_contingency (correction=True default, and False): 1e-9 relative.
        assert_relative_eq!(
            corrected.statistic,
            expected["statistic"].as_f64().unwrap(),
            max_relative = 1e-9
        );
        assert_relative_eq!(corrected.p, expected["p"].as_f64().unwrap(), max_relative = 1e-9);
        assert_eq!(corrected.dof as u64, expected["dof"].as_u64().unwrap(), "{name}");
        assert_relative_eq!(
            plain.statistic,
            expected["pearson_statistic"].as_f64().unwrap(),
            max_relative = 1e-9
        );
        assert_relative_eq!(plain.p, expected["pearson_p"].as_f64().unwrap(), max_relative = 1e-9);
        assert_relative_eq!(
            corrected.min_expected,
            expected["min_expected"].as_f64().unwrap(),
            max_relative = 1e-12
        );
        // scipy.stats.contingency.association(method="cramer").
        assert_relative_eq!(
            corrected.cramers_v,
            expected["cramers_v"].as_f64().unwrap(),
            max_relative = 1e-9
        );
    }
}

#[test]
fn fisher_exact_matches_scipy() {
    let reference = reference();
    for expected in reference["fisher"].as_array().unwrap() {
        let table = counts(&expected["table"]);
        let result = fisher_exact([[table[0][0], table[0][1]], [table[1][0], table[1][1]]]);
        // scipy 1.17.1 fisher_exact, three alternatives: 1e-9 relative.
        assert_relative_eq!(
            result.odds_ratio,
            expected["odds_ratio"].as_f64().unwrap(),
            max_relative = 1e-12
        );
        assert_relative_eq!(
            result.p_two_sided,
            expected["p_two_sided"].as_f64().unwrap(),
            max_relative = 1e-9
        );
        assert_relative_eq!(result.p_less, expected["p_less"].as_f64().unwrap(), max_relative = 1e-9);
        assert_relative_eq!(result.p_greater, expected["p_greater"].as_f64().unwrap(), max_relative = 1e-9);
    }
}

#[test]
fn kruskal_wallis_and_anova_match_scipy() {
    let reference = reference();
    let samples: Vec<Vec<f64>> = reference["samples"].as_array().unwrap().iter().map(floats).collect();
    let kruskal = kruskal_wallis(&samples).unwrap();
    // scipy 1.17.1 kruskal (tie-corrected H): 1e-10 relative; epsilon^2 = H / (N - 1).
    assert_relative_eq!(kruskal.h, reference["kruskal"]["h"].as_f64().unwrap(), max_relative = 1e-10);
    assert_relative_eq!(kruskal.p, reference["kruskal"]["p"].as_f64().unwrap(), max_relative = 1e-9);
    assert_relative_eq!(
        kruskal.epsilon_squared,
        reference["kruskal"]["epsilon_squared"].as_f64().unwrap(),
        max_relative = 1e-10
    );
    assert_eq!(kruskal.dof, 2);
    let anova = one_way_anova(&samples).unwrap();
    // scipy 1.17.1 f_oneway; eta^2 = SS_between / SS_total computed in the generator.
    assert_relative_eq!(anova.f, reference["anova"]["f"].as_f64().unwrap(), max_relative = 1e-10);
    assert_relative_eq!(anova.p, reference["anova"]["p"].as_f64().unwrap(), max_relative = 1e-9);
    assert_relative_eq!(
        anova.eta_squared,
        reference["anova"]["eta_squared"].as_f64().unwrap(),
        max_relative = 1e-10
    );
}
