//! Running the strata binary built for the integration tests.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use ndarray::Array2;

/// Runs strata with `args` in `cwd` and waits for it.
pub fn strata(args: &[&str], cwd: &Path) -> Output {
    Command::new(env!("CARGO_BIN_EXE_strata")).args(args).current_dir(cwd).output().expect("run strata")
}

/// Standard output and standard error as text.
pub fn text(output: &Output) -> (String, String) {
    (
        String::from_utf8_lossy(&output.stdout).into_owned(),
        String::from_utf8_lossy(&output.stderr).into_owned(),
    )
}

/// Runs strata expecting failure: checks the exit code, every fragment in standard error and
/// that nothing panicked; returns standard error.
pub fn fail(args: &[&str], cwd: &Path, code: i32, fragments: &[&str]) -> String {
    let output = strata(args, cwd);
    let (_, stderr) = text(&output);
    assert_eq!(output.status.code(), Some(code), "strata {args:?}:\n{stderr}");
    for fragment in fragments {
        assert!(stderr.contains(fragment), "expected '{fragment}' in:\n{stderr}");
    }
    assert!(!stderr.contains("panicked"), "{stderr}");
    stderr
}

/// After a failed run into `dir/out`: neither the output folder nor a staging folder exists.
pub fn assert_nothing_written(dir: &Path) {
    assert!(!dir.join("out").exists(), "nothing may be written on failure");
    let partial = std::fs::read_dir(dir)
        .unwrap()
        .flatten()
        .any(|entry| entry.file_name().to_string_lossy().contains("strata-partial"));
    assert!(!partial, "no staging folder may be left behind");
}

/// A small valid matrix cohort in `dir`: `count` participants with 6-region `.npy` matrices,
/// alternating diagnoses, and `participants.tsv`; returns the matrix paths.
pub fn matrix_cohort(dir: &Path, count: usize) -> Vec<PathBuf> {
    let mut table = String::from("participant_id\tdiagnosis\tage\n");
    let mut paths = Vec::new();
    for index in 0..count {
        let id = format!("sub-{:02}", index + 1);
        let level = if index % 2 == 0 { "insomnia" } else { "control" };
        table.push_str(&format!("{id}\t{level}\t{}\n", 12 + index));
        let mut matrix = Array2::<f32>::eye(6);
        for i in 0..6 {
            for j in (i + 1)..6 {
                let value = (((index * 7 + i * 3 + j * 5) % 11) as f32 - 5.0) / 10.0;
                matrix[[i, j]] = value;
                matrix[[j, i]] = value;
            }
        }
        let path = dir.join(format!("{id}_conn.npy"));
        ndarray_npy::write_npy(&path, &matrix).unwrap();
        paths.push(path);
    }
    std::fs::write(dir.join("participants.tsv"), table).unwrap();
    paths
}
