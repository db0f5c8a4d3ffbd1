//! Watching and stopping a running integration from another thread: [`RunMonitor`].
//!
//! An integration that carries a monitor ([`IntegrationOptions::monitor`](crate::IntegrationOptions::monitor))
//! publishes the time it has reached and the number of steps it has taken after every
//! accepted step, and checks the monitor's stop request there. A request ends the
//! integration like a solver failure: an [`IntegrationFailure`](crate::IntegrationFailure)
//! of kind [`FailureKind::Interrupted`](crate::FailureKind::Interrupted) with the profile
//! up to the last accepted step. Publishing is two relaxed atomic stores per step; nothing
//! allocates.

use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::Arc;

/// A handle shared between running integrations and the code that watches them (a progress
/// display, a Ctrl-C handler, a supervisor thread). Clones share the same state. Two
/// monitors are equal when they are clones of one another.
#[derive(Debug, Clone, Default)]
pub struct RunMonitor(Arc<Shared>);

#[derive(Debug, Default)]
struct Shared {
    stop: AtomicBool,
    /// Bits of the f64 time (s) reached by the last accepted step.
    time_bits: AtomicU64,
    /// Accepted steps of every integration that carried this monitor.
    steps: AtomicU64,
}

impl PartialEq for RunMonitor {
    fn eq(&self, other: &Self) -> bool {
        Arc::ptr_eq(&self.0, &other.0)
    }
}

impl RunMonitor {
    /// A monitor with no stop request, time 0 s and no steps.
    pub fn new() -> RunMonitor {
        RunMonitor::default()
    }

    /// Asks every integration carrying this monitor to stop at its next accepted step.
    /// Safe to call from a signal handler's thread; the request stays until
    /// [`clear_interrupt`](Self::clear_interrupt).
    pub fn interrupt(&self) {
        self.0.stop.store(true, Ordering::SeqCst);
    }

    /// Withdraws a stop request.
    pub fn clear_interrupt(&self) {
        self.0.stop.store(false, Ordering::SeqCst);
    }

    /// Whether a stop has been requested.
    pub fn is_interrupted(&self) -> bool {
        self.0.stop.load(Ordering::SeqCst)
    }

    /// The time (s) reached by the last accepted step of an integration carrying this
    /// monitor (with several integrations at once, of whichever published last).
    pub fn time_s(&self) -> f64 {
        f64::from_bits(self.0.time_bits.load(Ordering::Relaxed))
    }

    /// Accepted steps taken so far by every integration carrying this monitor.
    pub fn steps(&self) -> u64 {
        self.0.steps.load(Ordering::Relaxed)
    }

    /// Publishes an accepted step ending at `time_s` (s).
    pub(crate) fn step_taken(&self, time_s: f64) {
        self.0.time_bits.store(time_s.to_bits(), Ordering::Relaxed);
        self.0.steps.fetch_add(1, Ordering::Relaxed);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn clones_share_state_and_compare_equal() {
        let a = RunMonitor::new();
        let b = a.clone();
        assert_eq!(a, b);
        assert_ne!(a, RunMonitor::new());
        b.step_taken(2.5e-3);
        b.step_taken(7.25e-3);
        assert_eq!(a.steps(), 2);
        assert_eq!(a.time_s(), 7.25e-3);
        assert!(!a.is_interrupted());
        b.interrupt();
        assert!(a.is_interrupted());
        a.clear_interrupt();
        assert!(!b.is_interrupted());
    }
}
