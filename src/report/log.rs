//! Messages to standard error, honouring `--quiet` and `--verbose`, printed above an active
//! progress bar ([`super::progress`]).

use std::io::Write;

/// Where notes and warnings go: standard error, unless quiet.
#[derive(Debug, Clone, Copy)]
pub struct Log {
    quiet: bool,
    verbose: bool,
}

impl Log {
    /// A logger; `quiet` silences notes and warnings, `verbose` adds details.
    pub fn new(quiet: bool, verbose: bool) -> Self {
        Log { quiet, verbose }
    }

    /// A logger that prints nothing (library use and tests).
    pub fn silent() -> Self {
        Log { quiet: true, verbose: false }
    }

    /// A progress note ("reading 120 seed maps").
    pub fn note(&self, message: &str) {
        if !self.quiet {
            super::progress::above_bar(|| {
                let _ = writeln!(std::io::stderr(), "strata: {message}");
            });
        }
    }

    /// A detail shown only with `--verbose`.
    pub fn detail(&self, message: &str) {
        if self.verbose && !self.quiet {
            super::progress::above_bar(|| {
                let _ = writeln!(std::io::stderr(), "strata: {message}");
            });
        }
    }

    /// Whether `--verbose` details are shown.
    pub fn is_verbose(&self) -> bool {
        self.verbose && !self.quiet
    }

    /// A progress bar for `stage` counting `total` items named `unit`: drawn on standard error
    /// unless quiet or standard error is not a terminal; [`super::progress::tick`] advances it.
    pub fn progress(&self, stage: &str, total: usize, unit: &str) -> super::progress::Progress {
        super::progress::Progress::start(stage, total as u64, unit, !self.quiet)
    }

    /// A warning.
    pub fn warn(&self, warning: &super::Warning) {
        if !self.quiet {
            super::progress::above_bar(|| {
                let _ = writeln!(std::io::stderr(), "strata: warning: {warning}");
            });
        }
    }
}
