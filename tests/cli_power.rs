//! `strata power` through the real binary: the figures in words and in JSON, the trials per graph
//! carried through, and a refused flag. The expected 95% Wilson interval of 2 supported cohorts
//! out of 2 is (0.342380227506653, 1.0): statsmodels 0.15.0 (PyPI)
//! `proportion_confint(2, 2, method="wilson")`, run by hand when writing this test.

mod util;

use util::cli::{strata, text};

#[test]
fn well_separated_subgroups_are_recovered_with_the_trials_asked_for() {
    let dir = tempfile::tempdir().unwrap();
    let args = [
        "--quiet",
        "power",
        "--participants",
        "40",
        "--proportions",
        "0.5,0.5",
        "--separation",
        "1.0",
        "--regions",
        "30",
        "--cohorts",
        "2",
        "--null-draws",
        "19",
        "--trials",
        "3",
        "--json",
        "power.json",
    ];
    let output = strata(&args, dir.path());
    let (stdout, stderr) = text(&output);
    assert!(output.status.success(), "{stderr}");
    assert!(stdout.contains("3 trials per graph of the sweep"), "{stdout}");
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("power.json")).unwrap()).unwrap();
    assert_eq!(json["trials"], 3);
    assert_eq!(json["cohorts"], 2);
    assert_eq!(json["null_draws"], 19);
    assert_eq!(json["diagnosis_effect"], 0.0);
    // Two subgroups one noise SD apart in 435 features are recovered nearly exactly (an ARI of
    // 0.95 is one or two participants misplaced out of 40) and supported in both cohorts.
    let mean_ari = json["mean_ari"].as_f64().unwrap();
    assert!(mean_ari > 0.95 && mean_ari <= 1.0, "{json}");
    assert_eq!(json["supported"], 2, "{json}");
    let interval = json["rate_interval"].as_array().unwrap();
    assert!((interval[0].as_f64().unwrap() - 0.342_380_227_506_653).abs() < 1e-9, "{json}");
    assert!((interval[1].as_f64().unwrap() - 1.0).abs() < 1e-12, "{json}");
}

#[test]
fn a_diagnosis_effect_is_named_and_not_called_a_false_positive_rate() {
    let dir = tempfile::tempdir().unwrap();
    let args = [
        "--quiet",
        "power",
        "--participants",
        "20",
        "--regions",
        "20",
        "--cohorts",
        "1",
        "--null-draws",
        "19",
        "--trials",
        "2",
        "--diagnosis-effect",
        "0.2",
    ];
    let output = strata(&args, dir.path());
    let (stdout, stderr) = text(&output);
    assert!(output.status.success(), "{stderr}");
    assert!(stdout.contains("difference of 0.2 Fisher z is planted"), "{stdout}");
    assert!(!stdout.contains("false-positive"), "{stdout}");
}

#[test]
fn zero_trials_are_refused_with_the_flag_named() {
    let dir = tempfile::tempdir().unwrap();
    let output = strata(&["power", "--participants", "40", "--trials", "0"], dir.path());
    let (_, stderr) = text(&output);
    assert_eq!(output.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("--trials"), "{stderr}");
    assert!(!stderr.contains("panicked"), "{stderr}");
}
