//! Progress bars of long stages on standard error (the `indicatif` crate), one at a time.
//!
//! The pipeline opens a bar per stage with [`crate::report::Log::progress`]; the stage's inner
//! loops call [`tick`] as work items finish (a participant read, a feature block multiplied, a
//! trial run; later a null draw, a permutation, a subsample), without a handle passed through
//! their signatures. The bar is hidden when `--quiet` is given or standard error is not a
//! terminal (indicatif's own test); [`crate::report::Log`] prints its messages above an active
//! bar, so notes are never lost or torn (indicatif drops `println` output of a hidden bar).

use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Mutex;
use std::time::Duration;

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

/// The bar of the stage running now, if any, with its serial number.
static ACTIVE: Mutex<Option<(u64, ProgressBar)>> = Mutex::new(None);

/// Serial numbers of bars, so a finished bar clears only itself from [`ACTIVE`].
static SERIAL: AtomicU64 = AtomicU64::new(0);

/// Redraws per second at most; enough for a smooth bar at no measurable cost.
const REFRESH_PER_SECOND: u8 = 10;

/// Template of the bars: stage name, bar, counts, elapsed and remaining time.
const TEMPLATE: &str = "strata: {prefix:<12} [{bar:30}] {pos}/{len} {unit} ({elapsed}, {eta} left)";

/// A stage's progress bar; the bar is finished and removed when this is dropped.
#[derive(Debug)]
pub struct Progress {
    bar: Option<(u64, ProgressBar)>,
}

impl Progress {
    /// Opens a bar for `stage` counting `total` work items named `unit` ("participants"),
    /// drawn on standard error when `visible` and standard error is a terminal.
    pub fn start(stage: &str, total: u64, unit: &str, visible: bool) -> Self {
        if !visible {
            return Progress { bar: None };
        }
        let target = ProgressDrawTarget::stderr_with_hz(REFRESH_PER_SECOND);
        if target.is_hidden() {
            return Progress { bar: None };
        }
        let template = TEMPLATE.replace("{unit}", unit);
        let style = ProgressStyle::with_template(&template)
            .unwrap_or_else(|_| ProgressStyle::default_bar())
            .progress_chars("=> ");
        let bar = ProgressBar::with_draw_target(Some(total), target)
            .with_style(style)
            .with_prefix(stage.to_string());
        bar.enable_steady_tick(Duration::from_millis(1000 / u64::from(REFRESH_PER_SECOND)));
        let serial = SERIAL.fetch_add(1, Ordering::Relaxed);
        if let Ok(mut active) = ACTIVE.lock() {
            if let Some((_, previous)) = active.replace((serial, bar.clone())) {
                previous.finish_and_clear();
            }
        }
        Progress { bar: Some((serial, bar)) }
    }

    /// Whether a bar is drawn.
    pub fn is_visible(&self) -> bool {
        self.bar.is_some()
    }
}

impl Drop for Progress {
    fn drop(&mut self) {
        if let Some((serial, bar)) = self.bar.take() {
            bar.finish_and_clear();
            if let Ok(mut active) = ACTIVE.lock() {
                if active.as_ref().is_some_and(|(current, _)| *current == serial) {
                    *active = None;
                }
            }
        }
    }
}

/// Reports `count` finished work items to the active bar, if any (cheap when none is shown).
/// A stage that does more items than announced stretches its bar rather than overflow it.
pub fn tick(count: u64) {
    let Ok(active) = ACTIVE.lock() else { return };
    if let Some((_, bar)) = active.as_ref() {
        if let Some(length) = bar.length() {
            let position = bar.position() + count;
            if position > length {
                bar.set_length(position);
            }
        }
        bar.inc(count);
    }
}

/// Runs `print` with the active bar (if any) cleared from the terminal, then redraws it.
pub(crate) fn above_bar(print: impl FnOnce()) {
    let bar = ACTIVE.lock().ok().and_then(|active| active.as_ref().map(|(_, bar)| bar.clone()));
    match bar {
        Some(bar) => bar.suspend(print),
        None => print(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hidden_bars_accept_ticks_and_draw_nothing() {
        // Under `cargo test` standard error is captured or not a terminal: the bar is hidden.
        let progress = Progress::start("test", 3, "items", false);
        assert!(!progress.is_visible());
        tick(5);
        drop(progress);
        assert!(ACTIVE.lock().unwrap().is_none());
    }
}
