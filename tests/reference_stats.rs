//! Group statistics against reference values from scipy and the textbook formulas.
//!
//! Expected values come from `tests/data/stats_reference.json`, written by
//! `tests/data/generators/stats.py` (scipy 1.17.1, numpy 2.4.6; Hedges g by the formula of
//! Hedges 1981 computed in the script). Headline values are also repeated here from
//! /work/shared/REFERENCES.md so a regenerated file cannot drift silently.

use approx::assert_relative_eq;
use ndarray::Array2;
use serde_json::Value;
use strata::features::FeatureMatrix;
use strata::stats::{benjamini_hochberg, group_mean, hedges_correction, welch_comparison};

fn reference() -> Value {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/stats_reference.json");
    let text = std::fs::read_to_string(path).expect("tests/data/stats_reference.json is committed");
    serde_json::from_str(&text).expect("reference JSON parses")
}

fn floats(value: &Value) -> Vec<f64> {
    value.as_array().expect("array").iter().map(|v| v.as_f64().expect("number")).collect()
}

fn indices(value: &Value) -> Vec<usize> {
    value.as_array().expect("array").iter().map(|v| v.as_u64().expect("index") as usize).collect()
}

/// Two samples as a 1-feature matrix: rows of `a` first, then `b`.
fn two_samples(a: &[f64], b: &[f64]) -> (FeatureMatrix, Vec<usize>, Vec<usize>) {
    let values: Vec<f32> = a.iter().chain(b).map(|&v| v as f32).collect();
    let rows = values.len();
    let matrix = FeatureMatrix { values: Array2::from_shape_vec((rows, 1), values).unwrap() };
    (matrix, (0..a.len()).collect(), (a.len()..rows).collect())
}

fn check_welch(case: &Value, t: f64, dof: f64, p: f64) {
    let a = floats(&case["a"]);
    let b = floats(&case["b"]);
    let (matrix, rows_a, rows_b) = two_samples(&a, &b);
    let result = welch_comparison(&matrix, &rows_a, &rows_b).unwrap();
    // scipy values from the JSON, f32 storage of t/dof: 1e-6 relative.
    assert_relative_eq!(f64::from(result.t[0]), case["t"].as_f64().unwrap(), max_relative = 1e-6);
    assert_relative_eq!(f64::from(result.dof[0]), case["dof"].as_f64().unwrap(), max_relative = 1e-6);
    // p in f64 from f32-rounded inputs (one-decimal data are not exact in f32): 1e-6.
    assert_relative_eq!(result.p[0], case["p"].as_f64().unwrap(), max_relative = 1e-6);
    assert_relative_eq!(
        f64::from(result.hedges_g[0]),
        case["hedges_g"].as_f64().unwrap(),
        max_relative = 1e-6
    );
    // REFERENCES.md (computed scipy) values, repeated.
    assert_relative_eq!(f64::from(result.t[0]), t, max_relative = 1e-6);
    assert_relative_eq!(f64::from(result.dof[0]), dof, max_relative = 1e-6);
    assert_relative_eq!(result.p[0], p, max_relative = 1e-6);
    assert_eq!((result.count_a, result.count_b), (a.len(), b.len()));
}

#[test]
fn welch_data_set_a_matches_scipy() {
    // REFERENCES.md: t = -2.4553563983, dof = 24.9885292902, p = 0.0213780015 (computed scipy;
    // data: Wikipedia's Welch example 1, from memory).
    let reference = reference();
    check_welch(&reference["welch_set_a"], -2.4553563983, 24.9885292902, 0.0213780015);
}

#[test]
fn welch_small_unequal_sizes_matches_scipy() {
    // REFERENCES.md "1..5 vs 2,4..12": t = -2.3763541031, dof = 6.9722557298, p = 0.0492843382;
    // scipy 1.17.1 reproduces these with b = [2, 4, 6, 8, 10, 12] (the generator says so).
    let reference = reference();
    check_welch(&reference["welch_small"], -2.3763541031, 6.9722557298, 0.0492843382);
}

#[test]
fn hedges_g_data_set_a_uses_exact_correction() {
    let reference = reference();
    let case = &reference["welch_set_a"];
    let (matrix, rows_a, rows_b) = two_samples(&floats(&case["a"]), &floats(&case["b"]));
    let result = welch_comparison(&matrix, &rows_a, &rows_b).unwrap();
    let g = f64::from(result.hedges_g[0]);
    // Cohen's d = -0.8965693907 (REFERENCES.md, computed); exact J(28) = 0.9729321151
    // (REFERENCES.md; Hedges 1981) so g = -0.8723011536 (generator, textbook formula).
    assert_relative_eq!(g, -0.8965693907 * 0.9729321151, max_relative = 1e-6);
    assert_relative_eq!(g, case["hedges_g"].as_f64().unwrap(), max_relative = 1e-6);
    // REFERENCES.md's g = -0.8723377855 is d times the approximation 1 - 3/(4m - 1) = 36/37 * ...
    // strata uses the exact J, which differs in the fifth digit: check we are NOT that value.
    assert!((g - -0.8723377855).abs() > 1e-5);
    assert_relative_eq!(hedges_correction(28.0), 0.9729321151, max_relative = 1e-9);
    assert_relative_eq!(
        hedges_correction(28.0),
        reference["hedges_j_df28"].as_f64().unwrap(),
        max_relative = 1e-12
    );
}

#[test]
fn benjamini_hochberg_matches_scipy() {
    let reference = reference();
    for case in ["bh15", "bh4"] {
        let p = floats(&reference[case]["p"]);
        let expected = floats(&reference[case]["q"]);
        let q = benjamini_hochberg(&p);
        assert_eq!(q.len(), expected.len());
        for (got, want) in q.iter().zip(&expected) {
            // scipy.stats.false_discovery_control 1.17.1; same arithmetic, 1e-12 relative.
            assert_relative_eq!(*got, *want, max_relative = 1e-12);
        }
    }
    // REFERENCES.md (computed scipy): BH 1995's 15 p at q = 0.05 gives 4 rejections,
    // adjusted p(4) = 0.035625, p(5) = 0.0603.
    let q = benjamini_hochberg(&floats(&reference["bh15"]["p"]));
    assert_eq!(q.iter().filter(|&&q| q <= 0.05).count(), 4);
    assert_relative_eq!(q[3], 0.035625, max_relative = 1e-12);
    assert_relative_eq!(q[4], 0.0603, max_relative = 1e-12);
    // REFERENCES.md: [0.01,0.04,0.03,0.005] -> [0.02,0.04,0.04,0.02].
    let q = benjamini_hochberg(&[0.01, 0.04, 0.03, 0.005]);
    for (got, want) in q.iter().zip([0.02, 0.04, 0.04, 0.02]) {
        assert_relative_eq!(*got, want, max_relative = 1e-12);
    }
}

#[test]
fn multi_feature_matrix_matches_scipy() {
    let reference = reference();
    let case = &reference["matrix"];
    let rows = case["rows"].as_u64().unwrap() as usize;
    let cols = case["cols"].as_u64().unwrap() as usize;
    let values: Vec<f32> = floats(&case["values_row_major"]).iter().map(|&v| v as f32).collect();
    let matrix = FeatureMatrix { values: Array2::from_shape_vec((rows, cols), values).unwrap() };
    let group_a = indices(&case["group_a"]);
    let group_b = indices(&case["group_b"]);
    let result = welch_comparison(&matrix, &group_a, &group_b).unwrap();
    assert_eq!(result.feature_count(), cols);
    assert_eq!((result.count_a, result.count_b), (8, 12));

    let to_f64 = |v: &[f32]| v.iter().map(|&x| f64::from(x)).collect::<Vec<_>>();
    let checks: [(&str, Vec<f64>); 7] = [
        ("mean_a", to_f64(&result.mean_a)),
        ("mean_b", to_f64(&result.mean_b)),
        ("t", to_f64(&result.t)),
        ("dof", to_f64(&result.dof)),
        ("p", result.p.clone()),
        ("q", result.q.clone()),
        ("hedges_g", to_f64(&result.hedges_g)),
    ];
    for (name, got) in checks {
        let want = floats(&case[name]);
        assert_eq!(got.len(), want.len(), "{name}");
        for (feature, (g, w)) in got.iter().zip(&want).enumerate() {
            // scipy 1.17.1 on the same f32 values in f64; strata stores f32: 1e-5 relative.
            assert!(((g - w) / w).abs() <= 1e-5, "{name}[{feature}]: strata {g} vs scipy {w}");
        }
    }
    // The pooled mean of all rows equals the count-weighted group means (identity).
    let all: Vec<usize> = (0..rows).collect();
    let pooled = group_mean(&matrix, &all);
    assert_eq!(pooled.len(), cols);
    for ((&mean, &a), &b) in pooled.iter().zip(&result.mean_a).zip(&result.mean_b) {
        let expected = (8.0 * f64::from(a) + 12.0 * f64::from(b)) / 20.0;
        assert_relative_eq!(f64::from(mean), expected, max_relative = 1e-6);
    }
}

#[test]
fn thread_count_does_not_change_results() {
    // 3 blocks of features; compare a 1-thread pool with the global pool (bitwise).
    let rows = 30;
    let cols = 1300;
    let values: Vec<f32> = (0..rows * cols).map(|v| ((v * 7919) % 1009) as f32 * 0.01).collect();
    let matrix = FeatureMatrix { values: Array2::from_shape_vec((rows, cols), values).unwrap() };
    let a: Vec<usize> = (0..13).collect();
    let b: Vec<usize> = (13..rows).collect();
    let parallel = welch_comparison(&matrix, &a, &b).unwrap();
    let pool = rayon::ThreadPoolBuilder::new().num_threads(1).build().unwrap();
    let serial = pool.install(|| welch_comparison(&matrix, &a, &b).unwrap());
    assert_eq!(format!("{parallel:?}"), format!("{serial:?}"));
}
