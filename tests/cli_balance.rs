//! The real binary: `composition.tsv` and `covariates.tsv` of a run, the covariate warning in
//! words, and the `--covariates` errors.

mod util;

use std::path::Path;
use util::cli::strata;

fn rows(path: &Path) -> Vec<Vec<String>> {
    let text = std::fs::read_to_string(path).unwrap_or_else(|_| panic!("{} is written", path.display()));
    text.lines().map(|line| line.split('\t').map(str::to_string).collect()).collect()
}

const HEADER: &str = "variable\tkind\tscope\ttest\tn\tn_missing\tstatistic\tdof\tdof_denominator\tp\tp_exact\tp_exact_method\teffect_size\teffect_size_name\tnote";

fn small_cohort_args<'a>(out: &'a str, extra: &[&'a str]) -> Vec<&'a str> {
    let mut args = vec![
        "run",
        "--inputs",
        "demo-data/small-matrices/matrices/sub-*",
        "--participants",
        "demo-data/small-matrices/participants.tsv",
        "--group-column",
        "diagnosis",
        "--contrast",
        "insomnia,control",
        "--quiet",
        "--out",
        out,
    ];
    args.extend_from_slice(extra);
    args
}

#[test]
fn demo_run_writes_balance_tables_and_flags_a_covariate_in_words() {
    let dir = tempfile::tempdir().unwrap();
    let output = strata(&["demo", "--out", "demo", "--kind", "matrices"], dir.path());
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(output.status.success(), "{stderr}");
    let results = dir.path().join("demo/results-matrices");
    let composition = rows(&results.join("composition.tsv"));
    assert_eq!(composition[0].join("\t"), HEADER);
    // The overall test first, then one row per community (the demo finds 3).
    assert_eq!(composition.len(), 1 + 1 + 3);
    assert_eq!(&composition[1][..4], ["diagnosis", "categorical", "communities", "chi_square"]);
    // The demo plants half insomnia in every subgroup: no evidence against balance.
    let p: f64 = composition[1][9].parse().unwrap();
    assert!(p > 0.05, "composition p {p}");
    let covariates = rows(&results.join("covariates.tsv"));
    assert_eq!(covariates[0].join("\t"), HEADER);
    let tests: Vec<(&str, &str)> =
        covariates[1..].iter().map(|row| (row[0].as_str(), row[3].as_str())).collect();
    assert_eq!(
        tests,
        [
            ("age", "one_way_anova"),
            ("age", "kruskal_wallis"),
            ("sex", "chi_square"),
            ("fd_mean", "one_way_anova"),
            ("fd_mean", "kruskal_wallis"),
            ("site", "chi_square"),
            ("followup_isi", "one_way_anova"),
            ("followup_isi", "kruskal_wallis"),
        ]
    );
    // The demo's follow-up score differs by planted subgroup: described in words, in the table
    // and as a warning.
    let followup =
        covariates.iter().find(|row| row[0] == "followup_isi" && row[3] == "kruskal_wallis").unwrap();
    assert!(followup[14].contains("has higher followup_isi (median"), "{}", followup[14]);
    assert!(stderr.contains("the subgroups may partly reflect followup_isi"), "{stderr}");
}

#[test]
fn covariates_flag_selects_columns_and_refuses_unknown_ones() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("results");
    let out = out.to_str().unwrap();
    let output = strata(&small_cohort_args(out, &["--covariates", "age,sex"]), root);
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    let covariates = rows(&Path::new(out).join("covariates.tsv"));
    let variables: Vec<&str> = covariates[1..].iter().map(|row| row[0].as_str()).collect();
    assert!(variables.iter().all(|v| *v == "age" || *v == "sex"), "{variables:?}");

    let missing = dir.path().join("missing");
    let output = strata(&small_cohort_args(missing.to_str().unwrap(), &["--covariates", "age,motion"]), root);
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("--covariates"), "{stderr}");
    assert!(stderr.contains("no column 'motion'; the table has: participant_id, diagnosis, age"), "{stderr}");
    assert!(!missing.exists());

    let output =
        strata(&small_cohort_args(missing.to_str().unwrap(), &["--covariates", "age,diagnosis"]), root);
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("'diagnosis' is the --group-column"), "{stderr}");
}

#[test]
fn covariates_turn_the_comparison_into_a_linear_model() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("results");
    let out = out.to_str().unwrap();
    let output = strata(&small_cohort_args(out, &["--covariates", "age,sex,fd_mean"]), root);
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    let maps = Path::new(out).join("maps");
    let sidecar: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(maps.join("comm-all_contrast-insomniaVsControl_t.json")).unwrap(),
    )
    .unwrap();
    // Design columns (treatment coding, first level F the reference): hand count 5 parameters,
    // 24 participants with every value in the committed cohort, so 24 - 5 = 19 residual dof.
    assert_eq!(sidecar["Model"], serde_json::json!(["intercept", "group", "age", "sex[M]", "fd_mean"]));
    assert_eq!(sidecar["DegreesOfFreedom"].as_f64(), Some(19.0));
    // The model writes estimate, t, p, q; Welch-only maps (dof per feature, Hedges g) are absent.
    assert!(maps.join("comm-all_contrast-insomniaVsControl_diff.npy").exists());
    assert!(maps.join("comm-all_contrast-insomniaVsControl_q.npy").exists());
    assert!(!maps.join("comm-all_contrast-insomniaVsControl_g.npy").exists());
    assert!(!maps.join("comm-all_contrast-insomniaVsControl_dof.npy").exists());
}

#[test]
fn permutation_maps_are_written_and_identical_at_any_thread_count() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let dir = tempfile::tempdir().unwrap();
    let mut maps = Vec::new();
    for threads in ["1", "2"] {
        let out = dir.path().join(format!("results-{threads}"));
        let out = out.to_str().unwrap().to_string();
        let output = strata(&small_cohort_args(&out, &["--permutations", "199", "--threads", threads]), root);
        assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
        maps.push(Path::new(&out).join("maps"));
    }
    let stem = "comm-all_contrast-insomniaVsControl";
    let read = |dir: &Path, suffix: &str| -> ndarray::Array2<f32> {
        ndarray_npy::read_npy(dir.join(format!("{stem}_{suffix}.npy"))).unwrap()
    };
    for suffix in ["pperm", "pfwe"] {
        assert_eq!(
            read(&maps[0], suffix),
            read(&maps[1], suffix),
            "{suffix} differs between 1 and 2 threads"
        );
    }
    let (uncorrected, family) = (read(&maps[0], "pperm"), read(&maps[0], "pfwe"));
    for (fwe, p) in family.iter().zip(uncorrected.iter()) {
        // p is a count over 200 permutations: never below 1/200, FWE never below uncorrected.
        assert!(*p >= 1.0 / 200.0 - 1e-7 && *fwe >= *p, "p {p}, fwe {fwe}");
    }
    let sidecar: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(maps[0].join(format!("{stem}_pfwe.json"))).unwrap())
            .unwrap();
    assert_eq!(sidecar["Permutations"], 200);
    assert_eq!(sidecar["Statistic"], "FWE p");

    // The interaction F gets the same pair of maps (Freedman-Lane against the model without the
    // group x community terms): identical at 1 and 2 threads, on the (b + 1)/200 grid, FWE >= p.
    let interaction = "comm-all_contrast-insomniaVsControl_effect-interaction";
    let read_interaction = |dir: &Path, suffix: &str| -> ndarray::Array2<f32> {
        ndarray_npy::read_npy(dir.join(format!("{interaction}_{suffix}.npy"))).unwrap()
    };
    for suffix in ["pperm", "pfwe"] {
        assert_eq!(
            read_interaction(&maps[0], suffix),
            read_interaction(&maps[1], suffix),
            "interaction {suffix} differs between 1 and 2 threads"
        );
    }
    let (uncorrected, family) = (read_interaction(&maps[0], "pperm"), read_interaction(&maps[0], "pfwe"));
    for (&fwe, &p) in family.iter().zip(uncorrected.iter()) {
        for value in [p, fwe] {
            let b = f64::from(value) * 200.0 - 1.0;
            assert!((b - b.round()).abs() < 1e-3 && b > -1e-3, "interaction p {value} off the grid");
        }
        assert!(fwe >= p, "interaction p {p}, fwe {fwe}");
    }
    let sidecar: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(maps[0].join(format!("{interaction}_pperm.json"))).unwrap(),
    )
    .unwrap();
    assert_eq!(sidecar["Permutations"], 200);
    assert_eq!(sidecar["Statistic"], "perm p");
    assert!(sidecar["PermutationMethod"].as_str().unwrap().starts_with("Freedman-Lane"));

    let output = strata(&small_cohort_args("never", &["--permutations", "10"]), root);
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{stderr}");
    assert!(
        stderr.contains("10 permutations give a smallest attainable p of 1/11 = 0.091, above --alpha 0.05"),
        "{stderr}"
    );
}

#[test]
fn outcome_table_with_effect_size_and_permutation_p() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("results");
    let out = out.to_str().unwrap();
    let output =
        strata(&small_cohort_args(out, &["--outcome", "followup_isi", "--permutations", "999"]), root);
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    let outcome = rows(&Path::new(out).join("outcome.tsv"));
    assert_eq!(outcome[0].join("\t"), HEADER);
    assert_eq!(outcome.len(), 3);
    for row in &outcome[1..] {
        assert_eq!((row[0].as_str(), row[11].as_str()), ("followup_isi", "permutation"));
        // With 999 shuffles p is a count over 1,000: at least 0.001; it estimates the
        // asymptotic p of a balanced design within Monte Carlo error (0.05 here, common practice
        // for 1,000 draws: 3.5 standard errors at p = 0.2).
        let (p, p_exact): (f64, f64) = (row[9].parse().unwrap(), row[10].parse().unwrap());
        assert!(p_exact >= 0.001 && (p - p_exact).abs() < 0.05, "p {p}, permutation p {p_exact}");
    }
    let missing = dir.path().join("missing");
    let output = strata(&small_cohort_args(missing.to_str().unwrap(), &["--outcome", "relapse"]), root);
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("--outcome") && stderr.contains("no column 'relapse'"), "{stderr}");
}

#[test]
fn nuisance_columns_change_the_similarity_but_not_the_maps() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let dir = tempfile::tempdir().unwrap();
    let plain = dir.path().join("plain");
    let adjusted = dir.path().join("adjusted");
    for (out, extra) in [(&plain, vec![]), (&adjusted, vec!["--nuisance", "fd_mean,sex"])] {
        let output = strata(&small_cohort_args(out.to_str().unwrap(), &extra), root);
        assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    }
    let similarity =
        |dir: &Path| -> ndarray::Array2<f32> { ndarray_npy::read_npy(dir.join("similarity.npy")).unwrap() };
    let (before, after) = (similarity(&plain), similarity(&adjusted));
    let largest_change = before.iter().zip(after.iter()).map(|(a, b)| (a - b).abs()).fold(0.0f32, f32::max);
    assert!(largest_change > 1e-3, "the nuisance regression must change the similarity ({largest_change})");
    // The maps come from the original features: the whole-cohort mean map is the same.
    let mean = |dir: &Path| -> ndarray::Array2<f32> {
        ndarray_npy::read_npy(dir.join("maps/comm-all_mean.npy")).unwrap()
    };
    for (a, b) in mean(&plain).iter().zip(mean(&adjusted).iter()) {
        approx::assert_abs_diff_eq!(*a, *b, epsilon = 1e-6);
    }
    // followup_isi has n/a for sub-NSM011: refused with the participant named.
    let refused = dir.path().join("refused");
    let output = strata(&small_cohort_args(refused.to_str().unwrap(), &["--nuisance", "followup_isi"]), root);
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{stderr}");
    assert!(
        stderr.contains("--nuisance")
            && stderr.contains("participant(s) sub-NSM011 have no value (n/a) in followup_isi"),
        "{stderr}"
    );
}

#[test]
fn contrast_correlations_top_edges_and_network_blocks() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("results");
    let out_text = out.to_str().unwrap();
    let atlas = "atlases/northfield100/northfield100_regions.tsv";
    let output = strata(&small_cohort_args(out_text, &["--atlas", atlas]), root);
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    let diff = |scope: &str| -> ndarray::Array2<f32> {
        ndarray_npy::read_npy(out.join(format!("maps/comm-{scope}_contrast-insomniaVsControl_diff.npy")))
            .unwrap()
    };
    let upper = |matrix: &ndarray::Array2<f32>| -> Vec<f64> {
        let r = matrix.nrows();
        (0..r).flat_map(|i| (i + 1..r).map(move |j| (i, j))).map(|(i, j)| f64::from(matrix[[i, j]])).collect()
    };
    // Pearson r of the whole-cohort and community-1 difference maps, recomputed here from the
    // written maps with the textbook formula (4 decimals in the table: format_number keeps 6).
    let (a, b) = (upper(&diff("all")), upper(&diff("1")));
    let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;
    let (ma, mb) = (mean(&a), mean(&b));
    let cross: f64 = a.iter().zip(&b).map(|(x, y)| (x - ma) * (y - mb)).sum();
    let r = cross
        / (a.iter().map(|x| (x - ma).powi(2)).sum::<f64>() * b.iter().map(|y| (y - mb).powi(2)).sum::<f64>())
            .sqrt();
    let table = rows(&out.join("contrast_correlations.tsv"));
    assert_eq!(table[0], ["community_a", "community_b", "correlation", "features"]);
    let row = table.iter().find(|row| row[0] == "all" && row[1] == "1").unwrap();
    approx::assert_abs_diff_eq!(row[2].parse::<f64>().unwrap(), r, epsilon = 1e-5);
    assert_eq!(row[3], "4950");
    // Top edges name their regions from the atlas.
    let top = rows(&out.join("top_edges.tsv"));
    assert_eq!(top.len(), 1 + 20 * 4);
    let atlas_rows = rows(&root.join(atlas));
    let first = &top[1];
    let region: usize = first[2].parse().unwrap();
    assert_eq!(first[4], atlas_rows[region][1]);
    // Default x Default block of the whole cohort: mean of diff over edges within Default.
    let networks: Vec<&str> = atlas_rows[1..].iter().map(|row| row[2].as_str()).collect();
    let matrix = diff("all");
    let within: Vec<f64> = (0..100)
        .flat_map(|i| (i + 1..100).map(move |j| (i, j)))
        .filter(|&(i, j)| networks[i] == "Default" && networks[j] == "Default")
        .map(|(i, j)| f64::from(matrix[[i, j]]))
        .collect();
    let blocks = rows(&out.join("network_blocks.tsv"));
    let block =
        blocks.iter().find(|row| row[0] == "all" && row[1] == "Default" && row[2] == "Default").unwrap();
    assert_eq!(block[3], within.len().to_string());
    approx::assert_abs_diff_eq!(block[4].parse::<f64>().unwrap(), mean(&within), epsilon = 1e-5);
}
