//! Long runs in the terminal: a progress line for a run that lasts longer than a second, and
//! Ctrl-C that ends the run cleanly.
//!
//! - Progress: simulated time on a log scale between the first positive output time and the
//!   end time, the steps taken and the elapsed wall time, redrawn ten times a second on
//!   standard error. Shown only when standard error is a terminal and `--quiet` is not given,
//!   and only once the run has lasted [`PROGRESS_DELAY`].
//! - Ctrl-C: the first press asks the integration to stop at its next accepted step (the
//!   profile so far is written as for a failed run and the exit status is
//!   [`EXIT_INTERRUPTED`](crate::error::EXIT_INTERRUPTED)); a second press ends the process at once.

use indicatif::{ProgressBar, ProgressStyle};
use std::io::IsTerminal;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, OnceLock};
use std::thread::JoinHandle;
use std::time::{Duration, Instant};
use stoik::reactor::RunMonitor;

/// How long a run goes before its progress line appears.
pub const PROGRESS_DELAY: Duration = Duration::from_secs(1);

/// Redraw interval of the progress line.
const REDRAW: Duration = Duration::from_millis(100);

/// Positions of the progress bar (its resolution).
const BAR_POSITIONS: u64 = 1000;

/// The process's monitor, interrupted by Ctrl-C. The handler is installed on first use; if
/// it cannot be (another handler owns the signal), the monitor still works without it.
pub fn interrupt_monitor() -> RunMonitor {
    static MONITOR: OnceLock<RunMonitor> = OnceLock::new();
    MONITOR
        .get_or_init(|| {
            let monitor = RunMonitor::new();
            let handle = monitor.clone();
            let installed = ctrlc::set_handler(move || {
                if handle.is_interrupted() {
                    // Second Ctrl-C: the user does not want to wait for the next step.
                    std::process::exit(i32::from(crate::error::EXIT_INTERRUPTED));
                }
                handle.interrupt();
                eprintln!("\ninterrupted: stopping at the next step and writing the profile so far (Ctrl-C again to quit at once)");
            });
            if let Err(e) = installed {
                eprintln!("note: Ctrl-C will end the process without writing the profile so far ({e})");
            }
            monitor
        })
        .clone()
}

/// Fraction (0 to 1) of a run from `first_s` to `end_s` (s) reached at `t_s`, on a log scale
/// of time when `0 < first_s < end_s` (linear otherwise).
pub fn log_fraction(t_s: f64, first_s: f64, end_s: f64) -> f64 {
    let f = if first_s > 0.0 && end_s > first_s {
        if t_s <= first_s {
            0.0
        } else {
            (t_s / first_s).ln() / (end_s / first_s).ln()
        }
    } else if end_s > 0.0 {
        t_s / end_s
    } else {
        1.0
    };
    if f.is_finite() {
        f.clamp(0.0, 1.0)
    } else {
        0.0
    }
}

/// The progress line of one run, drawn from a thread of its own; [`RunProgress::finish`]
/// (or dropping it) stops the thread and clears the line.
pub struct RunProgress {
    done: Arc<AtomicBool>,
    thread: Option<JoinHandle<()>>,
}

impl RunProgress {
    /// Starts following `monitor` for a run whose output times go from `first_s` (its first
    /// positive output time, s) to `end_s` (s). Draws nothing when `quiet` or when standard
    /// error is not a terminal.
    pub fn start(monitor: &RunMonitor, first_s: f64, end_s: f64, quiet: bool) -> RunProgress {
        let done = Arc::new(AtomicBool::new(false));
        if quiet || !std::io::stderr().is_terminal() {
            return RunProgress { done, thread: None };
        }
        let (monitor, flag) = (monitor.clone(), done.clone());
        // The monitor counts steps across runs; this line counts from here.
        let steps_before = monitor.steps();
        let started = Instant::now();
        let thread = std::thread::spawn(move || {
            while started.elapsed() < PROGRESS_DELAY {
                if flag.load(Ordering::Relaxed) {
                    return;
                }
                std::thread::sleep(REDRAW / 2);
            }
            // The elapsed time counts from the start of the run, not of the line.
            let bar = ProgressBar::new(BAR_POSITIONS).with_elapsed(started.elapsed());
            bar.set_style(
                ProgressStyle::with_template("{bar:30} {msg}, {elapsed} elapsed")
                    .unwrap_or_else(|_| ProgressStyle::default_bar()),
            );
            while !flag.load(Ordering::Relaxed) {
                let t = monitor.time_s();
                let steps = monitor.steps().saturating_sub(steps_before);
                // Truncation intended: a position on the bar.
                bar.set_position((log_fraction(t, first_s, end_s) * BAR_POSITIONS as f64) as u64);
                bar.set_message(progress_message(t, end_s, steps));
                std::thread::sleep(REDRAW);
            }
            bar.finish_and_clear();
        });
        RunProgress {
            done,
            thread: Some(thread),
        }
    }

    /// Stops the progress line and clears it.
    pub fn finish(mut self) {
        self.stop();
    }

    fn stop(&mut self) {
        self.done.store(true, Ordering::Relaxed);
        if let Some(thread) = self.thread.take() {
            // A panicked drawing thread has nothing left to clean up.
            let _ = thread.join();
        }
    }
}

impl Drop for RunProgress {
    fn drop(&mut self) {
        self.stop();
    }
}

/// The text beside the bar: simulated time reached of the end time, and steps.
pub fn progress_message(t_s: f64, end_s: f64, steps: u64) -> String {
    format!("t = {t_s:.3e} s of {end_s:.3e} s, {steps} steps")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn log_fraction_is_the_decades_covered() {
        // 1e-6 s to 1e2 s is 8 decades; 1e-2 s is 4 of them.
        assert!((log_fraction(1e-2, 1e-6, 1e2) - 0.5).abs() < 1e-12);
        assert!((log_fraction(1e-5, 1e-6, 1e2) - 0.125).abs() < 1e-12);
        assert_eq!(log_fraction(0.0, 1e-6, 1e2), 0.0);
        assert_eq!(log_fraction(5e2, 1e-6, 1e2), 1.0);
        // One output time: linear.
        assert!((log_fraction(2.5, 10.0, 10.0) - 0.25).abs() < 1e-15);
        assert_eq!(log_fraction(f64::NAN, 1e-6, 1e2), 0.0);
    }

    #[test]
    fn message_names_time_end_and_steps() {
        assert_eq!(
            progress_message(1.25e-3, 100.0, 4321),
            "t = 1.250e-3 s of 1.000e2 s, 4321 steps"
        );
    }
}
