//! Progress and cancellation shared between a worker and whoever watches it (CLI bar, GUI).

use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::{Arc, Mutex};

#[derive(Debug, Default)]
struct Inner {
    done: AtomicU64,
    total: AtomicU64,
    cancel: AtomicBool,
    stage: Mutex<String>,
}

/// A cheap, cloneable progress handle: the worker advances it and checks for cancellation,
/// the watcher reads snapshots and may cancel.
#[derive(Debug, Clone, Default)]
pub struct Progress(Arc<Inner>);

/// What a watcher sees of a [`Progress`].
#[derive(Debug, Clone, PartialEq)]
pub struct Snapshot {
    /// Name of the current stage ("loading", "scoring", ...).
    pub stage: String,
    /// Units done in this stage.
    pub done: u64,
    /// Units in this stage (0 when unknown).
    pub total: u64,
}

impl Snapshot {
    /// Share done in `0..=1` (0 when the total is unknown).
    pub fn fraction(&self) -> f32 {
        if self.total == 0 {
            0.0
        } else {
            (self.done as f64 / self.total as f64).min(1.0) as f32
        }
    }
}

impl Progress {
    /// A fresh handle.
    pub fn new() -> Self {
        Self::default()
    }

    /// Starts a stage with `total` units.
    pub fn stage(&self, name: &str, total: u64) {
        if let Ok(mut s) = self.0.stage.lock() {
            name.clone_into(&mut s);
        }
        self.0.total.store(total, Ordering::Relaxed);
        self.0.done.store(0, Ordering::Relaxed);
    }

    /// Adds `n` units done.
    pub fn advance(&self, n: u64) {
        self.0.done.fetch_add(n, Ordering::Relaxed);
    }

    /// Asks the worker to stop.
    pub fn cancel(&self) {
        self.0.cancel.store(true, Ordering::Relaxed);
    }

    /// True once [`Progress::cancel`] was called.
    pub fn is_cancelled(&self) -> bool {
        self.0.cancel.load(Ordering::Relaxed)
    }

    /// The current stage and counts.
    pub fn snapshot(&self) -> Snapshot {
        let stage = self.0.stage.lock().map(|s| s.clone()).unwrap_or_default();
        Snapshot {
            stage,
            done: self.0.done.load(Ordering::Relaxed),
            total: self.0.total.load(Ordering::Relaxed),
        }
    }
}
