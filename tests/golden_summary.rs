//! Golden tests of the words strata prints: the demo's report and the run summary of the demo's
//! matrix cohort, for a fixed seed, against the committed texts in tests/data/golden/. Wording
//! and numbers must stay exactly as reviewed; only the elapsed seconds and the temporary folder
//! names are masked. After an intended change, regenerate with `STRATA_UPDATE_GOLDEN=1 cargo
//! test --test golden_summary` and review the diff.

use std::path::Path;
use std::process::{Command, Output};

fn strata(args: &[&str], cwd: &Path) -> Output {
    Command::new(env!("CARGO_BIN_EXE_strata")).args(args).current_dir(cwd).output().expect("run strata")
}

/// Replaces every "<number> s" after "in " or "(" (elapsed times) by "<seconds> s".
fn mask_seconds(text: &str) -> String {
    let mut masked = String::new();
    for line in text.lines() {
        let mut out = line.to_string();
        for opener in ["finished in ", "("] {
            if let Some(start) = out.find(opener) {
                let rest = &out[start + opener.len()..];
                let number: String = rest.chars().take_while(|c| c.is_ascii_digit() || *c == '.').collect();
                if !number.is_empty() && rest[number.len()..].starts_with(" s") {
                    out = format!("{}{opener}<seconds>{}", &out[..start], &rest[number.len()..]);
                }
            }
        }
        masked.push_str(&out);
        masked.push('\n');
    }
    masked
}

fn compare(name: &str, actual: &str) {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/golden").join(name);
    if std::env::var("STRATA_UPDATE_GOLDEN").as_deref() == Ok("1") {
        std::fs::create_dir_all(path.parent().unwrap()).unwrap();
        std::fs::write(&path, actual).unwrap();
        return;
    }
    let expected = std::fs::read_to_string(&path)
        .unwrap_or_else(|error| panic!("{}: {error} (STRATA_UPDATE_GOLDEN=1 writes it)", path.display()));
    if expected != actual {
        let first = expected
            .lines()
            .zip(actual.lines())
            .position(|(a, b)| a != b)
            .unwrap_or(expected.lines().count().min(actual.lines().count()));
        panic!(
            "{name} differs from the golden text at line {}:\n  expected: {:?}\n  actual:   {:?}\n--- actual ---\n{actual}",
            first + 1,
            expected.lines().nth(first).unwrap_or(""),
            actual.lines().nth(first).unwrap_or("")
        );
    }
}

#[test]
fn demo_and_run_summary_read_as_reviewed() {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    let demo = strata(
        &[
            "demo",
            "--out",
            "demo",
            "--kind",
            "matrices",
            "--null-draws",
            "19",
            "--subsamples",
            "10",
            "--quiet",
        ],
        root,
    );
    assert!(demo.status.success(), "{}", String::from_utf8_lossy(&demo.stderr));
    compare("demo_matrices.txt", &mask_seconds(&String::from_utf8_lossy(&demo.stdout)));

    let run = strata(
        &[
            "run",
            "--inputs",
            "demo/inputs-matrices/matrices/sub-*_conn.npy",
            "--participants",
            "demo/inputs-matrices/participants.tsv",
            "--atlas",
            "demo/inputs-matrices/atlas/northfield100_regions.tsv",
            "--group-column",
            "diagnosis",
            "--contrast",
            "insomnia,control",
            "--null-draws",
            "19",
            "--subsamples",
            "10",
            "--quiet",
            "--out",
            "results",
        ],
        root,
    );
    assert!(run.status.success(), "{}", String::from_utf8_lossy(&run.stderr));
    compare("run_summary_matrices.txt", &mask_seconds(&String::from_utf8_lossy(&run.stdout)));
}

#[test]
fn seconds_are_masked_and_nothing_else() {
    // The masking itself: elapsed times go, figures in parentheses that are not times stay.
    let text = "Results: results (12.3 s).\nDemo finished in 4.5 s; inputs\nmodularity (0.617) stays\n";
    assert_eq!(
        mask_seconds(text),
        "Results: results (<seconds> s).\nDemo finished in <seconds> s; inputs\nmodularity (0.617) stays\n"
    );
}
