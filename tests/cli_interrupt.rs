//! An interrupted run leaves no partial output: the real binary is started on a cohort with a
//! long sweep, stopped while it writes, and the folder beside its output is inspected. Ctrl-C
//! (SIGINT) and SIGTERM: the handler removes the staging folder and exits with 130. SIGKILL
//! cannot be handled: the staging folder stays, and the next start removes it.
#![cfg(unix)]

use std::path::Path;
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use ndarray::Array2;

fn matrix_cohort(dir: &Path, count: usize, regions: usize) {
    let mut table = String::from("participant_id\tdiagnosis\n");
    for index in 0..count {
        let id = format!("sub-{:02}", index + 1);
        table.push_str(&format!("{id}\t{}\n", if index % 2 == 0 { "insomnia" } else { "control" }));
        let mut matrix = Array2::<f32>::eye(regions);
        for i in 0..regions {
            for j in (i + 1)..regions {
                let value = (((index * 7 + i * 3 + j * 5) % 11) as f32 - 5.0) / 10.0;
                matrix[[i, j]] = value;
                matrix[[j, i]] = value;
            }
        }
        ndarray_npy::write_npy(dir.join(format!("{id}_conn.npy")), &matrix).unwrap();
    }
    std::fs::write(dir.join("participants.tsv"), table).unwrap();
}

/// `strata run` into `out` with the given sweep and trials.
fn start(dir: &Path, out: &str, densities: &str, trials: &str) -> Child {
    Command::new(env!("CARGO_BIN_EXE_strata"))
        .args([
            "run",
            "--inputs",
            "sub-*_conn.npy",
            "--participants",
            "participants.tsv",
            "--group-column",
            "diagnosis",
            "--contrast",
            "insomnia,control",
            "--densities",
            densities,
            "--trials",
            trials,
            "--random-graphs",
            "0",
            "--out",
            out,
        ])
        .current_dir(dir)
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start strata")
}

fn staging_folders(dir: &Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .unwrap()
        .flatten()
        .map(|entry| entry.file_name().to_string_lossy().into_owned())
        .filter(|name| name.contains("strata-partial"))
        .collect()
}

/// Waits until the run has created its staging folder and is under way.
fn wait_for_staging(dir: &Path) {
    let started = Instant::now();
    while staging_folders(dir).is_empty() {
        assert!(started.elapsed() < Duration::from_secs(60), "no staging folder appeared");
        std::thread::sleep(Duration::from_millis(10));
    }
    std::thread::sleep(Duration::from_millis(300));
}

/// A sweep long enough to be stopped in the middle: 91 densities x 3,000 trials.
const LONG_SWEEP: (&str, &str) = ("0.05:0.95:0.01", "3000");

#[test]
fn ctrl_c_and_sigterm_remove_the_staging_folder() {
    for signal in ["-INT", "-TERM"] {
        let dir = tempfile::tempdir().unwrap();
        matrix_cohort(dir.path(), 40, 12);
        let mut child = start(dir.path(), "results", LONG_SWEEP.0, LONG_SWEEP.1);
        wait_for_staging(dir.path());
        let status = Command::new("kill").args([signal, &child.id().to_string()]).status().unwrap();
        assert!(status.success());
        let output = child.wait_with_output_after_kill();
        assert_eq!(output.0, Some(130), "{signal}: stderr {}", output.1);
        assert!(
            output
                .1
                .contains("strata: interrupted; 1 unfinished output folder(s) removed, nothing else written"),
            "{signal}: {}",
            output.1
        );
        assert!(staging_folders(dir.path()).is_empty(), "{signal}: staging folder left behind");
        assert!(!dir.path().join("results").exists());
    }
}

#[test]
fn a_killed_run_is_cleaned_up_at_the_next_start() {
    let dir = tempfile::tempdir().unwrap();
    matrix_cohort(dir.path(), 40, 12);
    let mut child = start(dir.path(), "results", LONG_SWEEP.0, LONG_SWEEP.1);
    wait_for_staging(dir.path());
    child.kill().unwrap(); // SIGKILL: no handler runs.
    child.wait().unwrap();
    let left = staging_folders(dir.path());
    assert_eq!(left.len(), 1, "a killed process cannot clean up: {left:?}");
    assert!(!dir.path().join("results").exists());
    // The next run into the same folder removes it (its process is gone) and finishes.
    let mut child = start(dir.path(), "results", "0.3", "2");
    let (code, stderr) = child.wait_with_output_after_kill();
    assert_eq!(code, Some(0), "{stderr}");
    assert!(staging_folders(dir.path()).is_empty(), "{:?}", staging_folders(dir.path()));
    assert!(dir.path().join("results/participants.tsv").exists());
}

trait WaitText {
    fn wait_with_output_after_kill(&mut self) -> (Option<i32>, String);
}

impl WaitText for Child {
    fn wait_with_output_after_kill(&mut self) -> (Option<i32>, String) {
        use std::io::Read;
        let mut stderr = String::new();
        if let Some(mut pipe) = self.stderr.take() {
            let _ = pipe.read_to_string(&mut stderr);
        }
        let status = self.wait().unwrap();
        (status.code(), stderr)
    }
}
