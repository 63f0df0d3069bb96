//! The HTML report through the real binary: written by every run, re-rendered by
//! `strata report RUN_DIR` from the run's files alone, optional sections shown only when their
//! files or keys exist, and text from the participants table escaped (an injected tag shows as
//! text and never becomes an element).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use strata::demo::Scenario;

fn strata(args: &[&str], cwd: &Path) -> Output {
    Command::new(env!("CARGO_BIN_EXE_strata")).args(args).current_dir(cwd).output().expect("run strata")
}

fn stderr(output: &Output) -> String {
    String::from_utf8_lossy(&output.stderr).into_owned()
}

/// A small fictional Northfield cohort of region matrices (no atlas: 20 regions) in `dir`.
fn small_cohort(dir: &Path) -> String {
    let scenario = Scenario { participant_count: 48, region_count: 20, ..Scenario::default() };
    strata::demo::write_matrix_cohort(&scenario, dir).expect("demo cohort").inputs_glob
}

/// Runs strata on the cohort in `dir` with `contrast`, writing `out`.
fn run(dir: &Path, inputs: &str, contrast: &str, out: &str) -> PathBuf {
    let output = strata(
        &[
            "run",
            "--inputs",
            inputs,
            "--participants",
            "participants.tsv",
            "--group-column",
            "diagnosis",
            "--contrast",
            contrast,
            "--out",
            out,
            "--quiet",
            // No null test and no stability check: their report sections are tested by
            // planting their files and keys (optional_sections_appear_only_with_their_files_and_keys).
            "--null-draws",
            "0",
            "--subsamples",
            "0",
        ],
        dir,
    );
    assert!(output.status.success(), "strata run failed: {}", stderr(&output));
    dir.join(out)
}

fn read(path: &Path) -> String {
    std::fs::read_to_string(path).unwrap_or_else(|error| panic!("{}: {error}", path.display()))
}

/// True if the page has an element with this tag name (case-insensitive, `<name` followed by a
/// space, `>` or `/`).
fn has_element(page: &str, name: &str) -> bool {
    let lower = page.to_ascii_lowercase();
    let opening = format!("<{name}");
    lower.match_indices(&opening).any(|(at, _)| {
        matches!(lower.as_bytes().get(at + opening.len()), Some(b' ' | b'>' | b'/' | b'\t' | b'\n'))
    })
}

#[test]
fn every_run_writes_a_self_contained_report_that_report_renders_again() {
    let dir = tempfile::tempdir().unwrap();
    let inputs = small_cohort(dir.path());
    let out = run(dir.path(), &inputs, "insomnia,control", "results");
    let page = read(&out.join("report.html"));
    for id in [
        "id=\"summary\"",
        "id=\"caution\"",
        "id=\"figure-similarity\"",
        "id=\"figure-composition\"",
        "id=\"figure-sweep\"",
        "id=\"figure-coassignment\"",
        "id=\"figure-profiles\"",
        "id=\"figure-covariates\"",
        "id=\"figure-contrasts\"",
        "id=\"table-communities\"",
        "id=\"table-comparisons\"",
        "id=\"table-top-features\"",
        "id=\"table-participants\"",
        "id=\"table-parameters\"",
    ] {
        assert!(page.contains(id), "report lacks {id}");
    }
    let cohort = page.split("<p>Cohort: ").nth(1).and_then(|rest| rest.split("</p>").next()).unwrap_or("");
    // The counts as the participants table has them, levels in order of first appearance.
    let table = read(&dir.path().join("participants.tsv"));
    let labels: Vec<&str> = table.lines().skip(1).map(|line| line.split('\t').nth(1).unwrap()).collect();
    let first = labels[0];
    let other = if first == "insomnia" { "control" } else { "insomnia" };
    let count = |level: &str| labels.iter().filter(|label| **label == level).count();
    let expected = format!(
        "48 participants ({} {first}, {} {other}; group column &#39;diagnosis&#39;), region-by-region connectivity matrices: 20 regions, 190 edges.",
        count(first),
        count(other)
    );
    assert_eq!(cohort, expected, "summary words");
    assert!(page.contains("not diagnoses"), "the research-use caution");
    assert!(page.contains("Community profiles by region"), "no atlas: profiles by region");
    // Offline: no script, no stylesheet link, no remote URL anywhere but the SVG namespace name.
    assert!(!has_element(&page, "script") && !has_element(&page, "link") && !has_element(&page, "iframe"));
    let remote = page.replace("xmlns=\"http://www.w3.org/2000/svg\"", "");
    assert!(!remote.contains("http://") && !remote.contains("https://"), "a remote reference is in the page");
    assert!(page.contains("data:image/png;base64,iVBORw0KGgo"), "PNG rasters inline");
    // The folder's final name, not its staging name.
    assert!(page.contains("Run folder <span class=\"mono\">results</span>"));

    // Re-rendering from the files alone gives the same page.
    std::fs::remove_file(out.join("report.html")).unwrap();
    let output = strata(&["report", "results"], dir.path());
    assert!(output.status.success(), "{}", stderr(&output));
    assert_eq!(String::from_utf8_lossy(&output.stdout).trim(), "results/report.html");
    assert!(read(&out.join("report.html")) == page, "re-rendered report differs from the run's");
}

#[test]
fn optional_sections_appear_only_with_their_files_and_keys() {
    let dir = tempfile::tempdir().unwrap();
    let inputs = small_cohort(dir.path());
    let out = run(dir.path(), &inputs, "insomnia,control", "results");
    // Every run writes composition.tsv and covariates.tsv: take them away and re-render, so
    // that each optional section is seen absent first.
    for table in ["composition.tsv", "covariates.tsv", "contrast_correlations.tsv"] {
        assert!(out.join(table).is_file(), "{table} is written by every run");
        std::fs::remove_file(out.join(table)).unwrap();
    }
    let output = strata(&["report", "results"], dir.path());
    assert!(output.status.success(), "{}", stderr(&output));
    let before = read(&out.join("report.html"));
    for absent in [
        "table-composition",
        "table-covariates",
        "table-outcome",
        "table-stability",
        "figure-null",
        "figure-stability",
        "figure-contrast-correlations",
        "Null test",
        "Stability:",
    ] {
        assert!(!before.contains(absent), "{absent} shown without its file");
    }
    std::fs::write(out.join("composition.tsv"), "test\tstatistic\tp\nchi-squared\t1.5\t0.47\n").unwrap();
    std::fs::write(out.join("covariates.tsv"), "covariate\ttest\tp\nage\tKruskal-Wallis\t0.31\n").unwrap();
    // Three scopes, one named with markup (it must stay text) and one pair missing (n/a).
    std::fs::write(
        out.join("contrast_correlations.tsv"),
        "community_a\tcommunity_b\tcorrelation\tfeatures\nall\t1\t0.8134\t90\nall\t<i>9</i>\t-0.5\t90\n",
    )
    .unwrap();
    std::fs::write(out.join("outcome.tsv"), "outcome\tstatistic\tp\nfollowup_isi\t2.1\t0.04\n").unwrap();
    let mut stability = String::from("resample\tari\n");
    for resample in 0..40 {
        stability.push_str(&format!("{resample}\t{}\n", 0.6 + 0.01 * f64::from(resample % 30)));
    }
    std::fs::write(out.join("stability.tsv"), stability).unwrap();
    let summary_path = out.join("summary.json");
    let mut summary: serde_json::Value = serde_json::from_str(&read(&summary_path)).unwrap();
    summary["null_test"] = serde_json::json!({
        "statistic": "modularity", "observed": 0.41, "p_value": 0.002,
        "null_quantiles": {"0.05": 0.2, "0.5": 0.24, "0.95": 0.29}, "subgroups_supported": true
    });
    summary["stability"] = serde_json::json!({"median_ari": 0.74, "subsamples": 40});
    std::fs::write(&summary_path, serde_json::to_string_pretty(&summary).unwrap()).unwrap();
    let output = strata(&["report", "results"], dir.path());
    assert!(output.status.success(), "{}", stderr(&output));
    let page = read(&out.join("report.html"));
    for present in [
        "id=\"table-composition\"",
        "id=\"table-covariates\"",
        "id=\"table-outcome\"",
        "id=\"table-stability\"",
        "id=\"figure-null\"",
        "id=\"figure-stability\"",
        "Null test (modularity): observed 0.41, p = 0.002: the subgroups are supported by the null test.",
        "Stability: median adjusted Rand index 0.74 between resampled and full partitions (subsamples 40).",
        "Kruskal-Wallis",
        "id=\"figure-contrast-correlations\"",
        "Pearson correlation between the insomnia - control difference maps",
        ">0.81</text>",
        ">-0.50</text>",
        ">n/a</text>",
        "&lt;i&gt;9&lt;/i&gt;",
    ] {
        assert!(page.contains(present), "report lacks {present}");
    }
    assert!(!page.contains("<i>9</i>"), "a scope name was written as markup");
    // The diagonal is 1 and the matrix symmetric: the 3 x 3 cells carry 1.00 three times.
    let figure =
        page.split("id=\"figure-contrast-correlations\"").nth(1).unwrap().split("</figure>").next().unwrap();
    assert_eq!(figure.matches(">1.00</text>").count(), 3);
    assert_eq!(figure.matches(">0.81</text>").count(), 2);
}

#[test]
fn markup_in_the_participants_table_shows_as_text() {
    let dir = tempfile::tempdir().unwrap();
    let inputs = small_cohort(dir.path());
    // A group level that is a script tag: it reaches the summary, the figures and the tables.
    let table_path = dir.path().join("participants.tsv");
    let injected_level = "<script>alert(1)</script>";
    std::fs::write(&table_path, read(&table_path).replace("\tinsomnia\t", &format!("\t{injected_level}\t")))
        .unwrap();
    let out = run(dir.path(), &inputs, &format!("{injected_level},control"), "results");
    let page = read(&out.join("report.html"));
    assert!(page.contains("&lt;script&gt;alert(1)&lt;/script&gt;"), "the level shows as text");
    assert!(!has_element(&page, "script"), "no script element in the page");

    // A participant id and a column value with markup in the run folder's table (BIDS ids
    // cannot hold them, so they are planted after the run): `strata report` escapes them too.
    let run_table = out.join("participants.tsv");
    let text = read(&run_table);
    let first_id = text.lines().nth(1).unwrap().split('\t').next().unwrap().to_string();
    let injected_id = format!("{first_id}<script>alert(2)</script>");
    let injected_value = "<img src=x onerror=alert(3)>";
    let replaced = text.replacen(&first_id, &injected_id, 1).replacen(
        "\tcontrol\t",
        &format!("\t{injected_value}\t"),
        1,
    );
    std::fs::write(&run_table, replaced).unwrap();
    let output = strata(&["report", "results"], dir.path());
    assert!(output.status.success(), "{}", stderr(&output));
    let page = read(&out.join("report.html"));
    assert!(
        page.contains(&format!("{first_id}&lt;script&gt;alert(2)&lt;/script&gt;")),
        "the id shows as text"
    );
    assert!(page.contains("&lt;img src=x onerror=alert(3)&gt;"), "the value shows as text");
    assert!(!has_element(&page, "script") && !has_element(&page, "img"), "no injected element");
}

#[test]
fn report_needs_a_run_folder() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::create_dir(dir.path().join("empty")).unwrap();
    let output = strata(&["report", "empty"], dir.path());
    // Exit code 3 (invalid input data), as documented in --help.
    assert_eq!(output.status.code(), Some(3), "{}", stderr(&output));
    let message = stderr(&output);
    assert!(
        message.contains(
            "empty/summary.json: not found; `strata report` needs a run folder written by `strata run`"
        ),
        "{message}"
    );
    assert!(!dir.path().join("empty/report.html").exists());
}

#[test]
fn damaged_run_folders_give_notes_or_clear_errors() {
    let dir = tempfile::tempdir().unwrap();
    let inputs = small_cohort(dir.path());
    let out = run(dir.path(), &inputs, "insomnia,control", "results");
    // Optional files of the wrong shape: their figures are left out with a note.
    ndarray_npy::write_npy(out.join("similarity.npy"), &ndarray::Array2::<f32>::zeros((3, 3))).unwrap();
    let t_map = out.join("maps/comm-all_contrast-insomniaVsControl_t.npy");
    ndarray_npy::write_npy(&t_map, &ndarray::Array2::<f32>::zeros((2, 3))).unwrap();
    let output = strata(&["report", "results"], dir.path());
    assert!(output.status.success(), "{}", stderr(&output));
    let page = read(&out.join("report.html"));
    assert!(!page.contains("id=\"figure-similarity\""));
    assert!(
        page.contains("similarity.npy: 3x3 matrix for 48 participants; figure left out"),
        "note on similarity.npy"
    );
    assert!(
        page.contains("comm-all_contrast-insomniaVsControl_t.npy: 2x3 matrix, expected a square region-by-region matrix; left out"),
        "note on the t map"
    );
    // Required files unreadable: exit code 3 and a message naming the file.
    std::fs::write(out.join("summary.json"), "{").unwrap();
    let output = strata(&["report", "results"], dir.path());
    assert_eq!(output.status.code(), Some(3));
    let message = stderr(&output);
    assert!(message.contains("results/summary.json: not valid JSON"), "{message}");
    assert!(!message.contains("panicked"), "{message}");
}
