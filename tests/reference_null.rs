//! The rotation null test (src/validation/null.rs).
//!
//! Reference values come from tests/data/generators/null_model.py (numpy 2.4.6), which builds the
//! same null cohort in feature space, where strata works in participant space only: the
//! covariance spectrum every null cohort shares (numpy.linalg.eigvalsh of the centred Gram
//! matrix), and the similarity numpy.corrcoef gives for one explicit rotation of the
//! participants. Calibration and power are checked on cohorts of strata's own generator.

use ndarray::Array2;
use serde_json::Value;
use strata::communities::{detect, CommunityOptions};
use strata::demo::Scenario;
use strata::features::FeatureMatrix;
use strata::graph::SweepLevel;
use strata::similarity::{pearson, standardise_rows};
use strata::validation::{null_test, NullModel, NullOptions};

struct Reference {
    features: FeatureMatrix,
    participants: usize,
    norms: Vec<f64>,
    spectrum: Vec<f64>,
    rotation: Array2<f64>,
    s_null: Vec<f64>,
}

fn numbers(json: &Value, key: &str) -> Vec<f64> {
    json[key].as_array().unwrap().iter().map(|v| v.as_f64().unwrap()).collect()
}

fn reference() -> Reference {
    let text =
        std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/null_reference.json"))
            .expect("tests/data/null_reference.json (made by tests/data/generators/null_model.py)");
    let json: Value = serde_json::from_str(&text).unwrap();
    let participants = json["participants"].as_u64().unwrap() as usize;
    let width = json["features"].as_u64().unwrap() as usize;
    let x: Vec<f32> = numbers(&json, "x").into_iter().map(|v| v as f32).collect();
    Reference {
        features: FeatureMatrix { values: Array2::from_shape_vec((participants, width), x).unwrap() },
        participants,
        norms: numbers(&json, "norms"),
        spectrum: numbers(&json, "spectrum"),
        rotation: Array2::from_shape_vec((participants, participants), numbers(&json, "rotation")).unwrap(),
        s_null: numbers(&json, "s_null"),
    }
}

fn strata_norms(features: &FeatureMatrix) -> Vec<f64> {
    let (_, inverse) = standardise_rows(features);
    inverse.iter().map(|v| 1.0 / v).collect()
}

fn eigenvalues_descending(matrix: &Array2<f64>) -> Vec<f64> {
    let n = matrix.nrows();
    let mat = faer::Mat::<f64>::from_fn(n, n, |i, j| matrix[[i, j]]);
    let mut values = mat.self_adjoint_eigenvalues(faer::Side::Lower).unwrap();
    values.sort_by(|a, b| b.total_cmp(a));
    values
}

#[test]
fn row_norms_and_spectrum_match_numpy() {
    // Source: numpy 2.4.6 (linalg.norm, linalg.eigvalsh) in null_model.py. The similarity is
    // stored in float32, so the spectrum agrees to about 1e-6 relative.
    let reference = reference();
    let norms = strata_norms(&reference.features);
    for (ours, theirs) in norms.iter().zip(&reference.norms) {
        assert!((ours - theirs).abs() < 1e-9 * theirs, "{ours} vs {theirs}");
    }
    let model = NullModel::new(&pearson(&reference.features), Some(&norms)).unwrap();
    assert_eq!(model.spectrum().len(), reference.spectrum.len(), "rank N - 1 = 11");
    for (ours, theirs) in model.spectrum().iter().zip(&reference.spectrum) {
        assert!((ours - theirs).abs() < 1e-5 * reference.spectrum[0], "{ours} vs {theirs}");
    }
}

#[test]
fn a_rotation_in_participant_space_equals_the_same_rotation_in_feature_space() {
    // numpy.corrcoef of the explicit null rows y_bar + O (Y - 1 y_bar) (null_model.py) against
    // strata's N x N construction with the same O; tolerance 1e-5 (float32 similarity).
    let reference = reference();
    let n = reference.participants;
    let norms = strata_norms(&reference.features);
    let model = NullModel::new(&pearson(&reference.features), Some(&norms)).unwrap();
    let null = model.rotated(&reference.rotation);
    let mut worst = 0.0f64;
    for p in 0..n {
        for q in 0..n {
            worst = worst.max((f64::from(null.values[[p, q]]) - reference.s_null[p * n + q]).abs());
        }
    }
    assert!(worst < 1e-5, "largest |strata - numpy| = {worst:e}");
    // The rotation changes the similarity (the check is not the identity).
    let observed = pearson(&reference.features);
    let moved = (0..n * n).map(|i| (f64::from(observed.values[[i / n, i % n]]) - reference.s_null[i]).abs());
    assert!(moved.fold(0.0, f64::max) > 0.1);
}

#[test]
fn every_null_cohort_shares_the_observed_spectrum() {
    // The centred Gram matrix of a random null cohort has exactly the eigenvalues numpy gives
    // for the observed one (null_model.py), before the per-participant standardisation.
    let reference = reference();
    let n = reference.participants;
    let norms = strata_norms(&reference.features);
    let model = NullModel::new(&pearson(&reference.features), Some(&norms)).unwrap();
    for draw in 0..3u64 {
        let gram = model.draw_gram(&mut strata::seed::rng(11, "test", &[draw]));
        let row_means: Vec<f64> = (0..n).map(|i| gram.row(i).sum() / n as f64).collect();
        let grand = row_means.iter().sum::<f64>() / n as f64;
        let centred =
            Array2::from_shape_fn((n, n), |(i, j)| gram[[i, j]] - row_means[i] - row_means[j] + grand);
        let values = eigenvalues_descending(&centred);
        for (ours, theirs) in values.iter().zip(&reference.spectrum) {
            assert!((ours - theirs).abs() < 1e-5 * reference.spectrum[0], "draw {draw}: {ours} vs {theirs}");
        }
    }
}

/// A fast sweep for the calibration checks: the test holds for any options, provided observed
/// and null cohorts use the same ones.
fn quick_options(seed: u64) -> CommunityOptions {
    CommunityOptions {
        levels: [0.05, 0.1, 0.15, 0.2, 0.3].iter().map(|&d| SweepLevel::Density(d)).collect(),
        trials: 4,
        seed,
        ..CommunityOptions::default()
    }
}

fn rejects(scenario: &Scenario, cohort: u64, draws: usize) -> bool {
    let scenario = Scenario { seed: 5_000 + cohort, ..scenario.clone() };
    let (features, _) = strata::demo::matrix_features(&scenario);
    let similarity = pearson(&features);
    let norms = strata_norms(&features);
    let options = quick_options(cohort);
    let result = detect(&similarity, &options).unwrap();
    let null = null_test(
        &similarity,
        Some(&norms),
        &result,
        &options,
        &NullOptions { draws, alpha: 0.05, seed: 9_000 + cohort },
    )
    .unwrap();
    null.subgroups_supported
}

#[test]
fn homogeneous_cohorts_are_rejected_at_about_the_nominal_rate() {
    // One population (strata's generator, no subgroups, no diagnosis effect). Under the null every p is at least
    // uniform, so rejections at 0.05 follow at most Binomial(30, 0.05): mean 1.5, and
    // P(X >= 6) = 0.0033 (scipy.stats.binom(30, 0.05).sf(5) = 0.00327), so 6 or more
    // rejections would show an anti-conservative test.
    // No diagnosis difference either: a diagnosis effect makes two populations.
    let scenario =
        Scenario { participant_count: 60, region_count: 40, diagnosis_effect: 0.0, ..Scenario::default() }
            .homogeneous();
    let rejected = (0..30).filter(|&cohort| rejects(&scenario, cohort, 19)).count();
    assert!(rejected <= 5, "{rejected} of 30 homogeneous cohorts rejected");
}

#[test]
fn planted_subgroups_are_detected() {
    // Three subgroups at separation 0.4 (strata's generator): the test must reject in most of 8
    // cohorts (measured power on this setting is in docs/methods.md).
    let scenario =
        Scenario { participant_count: 60, region_count: 40, separation: 0.4, ..Scenario::default() };
    let rejected = (0..8).filter(|&cohort| rejects(&scenario, cohort, 19)).count();
    assert!(rejected >= 6, "only {rejected} of 8 planted cohorts rejected");
}

#[test]
fn the_null_test_is_identical_at_any_thread_count() {
    // Common practice for reproducible parallel code: the same values with 1 and 2 workers.
    let scenario =
        Scenario { participant_count: 40, region_count: 30, separation: 0.4, ..Scenario::default() };
    let (features, _) = strata::demo::matrix_features(&scenario);
    let similarity = pearson(&features);
    let norms = strata_norms(&features);
    let options = quick_options(3);
    let result = detect(&similarity, &options).unwrap();
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new().num_threads(threads).build().unwrap().install(|| {
            null_test(
                &similarity,
                Some(&norms),
                &result,
                &options,
                &NullOptions { draws: 9, alpha: 0.05, seed: 1 },
            )
            .unwrap()
        })
    };
    assert_eq!(run(1), run(2));
}
