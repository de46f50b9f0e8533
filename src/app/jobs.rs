//! Background work for the window: each job runs on a named thread, reports through a
//! [`Progress`] handle, can be cancelled, and hands its result back through a channel that the
//! window polls once per frame. Replacing a job cancels the old one, so the latest request wins.

use std::sync::mpsc::{Receiver, TryRecvError, channel};

use crate::progress::{Progress, Snapshot};

/// A running background job producing a `T`.
pub struct Job<T> {
    /// What the job does, for the progress line ("loading campaign").
    pub label: String,
    progress: Progress,
    rx: Receiver<T>,
}

impl<T: Send + 'static> Job<T> {
    /// Starts `work` on a thread named `countersteer-<name>`. If the thread cannot be started
    /// the job is returned already finished with nothing to deliver.
    pub fn spawn(
        name: &str,
        label: &str,
        work: impl FnOnce(&Progress) -> T + Send + 'static,
    ) -> Self {
        let (tx, rx) = channel();
        let progress = Progress::new();
        let p = progress.clone();
        let _ = std::thread::Builder::new()
            .name(format!("countersteer-{name}"))
            .spawn(move || {
                let out = work(&p);
                // The receiver is gone when the job was replaced: the result is simply dropped.
                let _ = tx.send(out);
            });
        Job {
            label: label.to_string(),
            progress,
            rx,
        }
    }
}

impl<T> Job<T> {
    /// The result, once the job has finished; `Err(())` when the worker died without one.
    pub fn poll(&self) -> Option<Result<T, ()>> {
        match self.rx.try_recv() {
            Ok(v) => Some(Ok(v)),
            Err(TryRecvError::Empty) => None,
            Err(TryRecvError::Disconnected) => Some(Err(())),
        }
    }

    /// The job's stage and counts.
    pub fn snapshot(&self) -> Snapshot {
        self.progress.snapshot()
    }

    /// Asks the worker to stop.
    pub fn cancel(&self) {
        self.progress.cancel();
    }
}

impl<T> Drop for Job<T> {
    fn drop(&mut self) {
        self.progress.cancel();
    }
}

/// A slot holding at most one job of a kind: starting a new one cancels the previous.
pub struct Slot<T> {
    job: Option<Job<T>>,
}

impl<T> Default for Slot<T> {
    fn default() -> Self {
        Slot { job: None }
    }
}

impl<T: Send + 'static> Slot<T> {
    /// Replaces whatever runs in the slot with a new job.
    pub fn start(
        &mut self,
        name: &str,
        label: &str,
        work: impl FnOnce(&Progress) -> T + Send + 'static,
    ) {
        self.job = Some(Job::spawn(name, label, work));
    }
}

impl<T> Slot<T> {
    /// Takes the finished result, if any; the slot is empty afterwards.
    pub fn take_result(&mut self) -> Option<Result<T, ()>> {
        let out = self.job.as_ref()?.poll()?;
        self.job = None;
        Some(out)
    }

    /// Cancels and forgets the running job.
    pub fn cancel(&mut self) {
        self.job = None;
    }

    /// The running job, if any.
    pub fn running(&self) -> Option<&Job<T>> {
        self.job.as_ref()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::time::Duration;

    fn wait<T>(slot: &mut Slot<T>) -> Option<Result<T, ()>> {
        for _ in 0..500 {
            if let Some(r) = slot.take_result() {
                return Some(r);
            }
            std::thread::sleep(Duration::from_millis(2));
        }
        None
    }

    #[test]
    fn latest_request_wins() {
        let mut slot = Slot::default();
        slot.start("t", "slow", |p: &Progress| {
            while !p.is_cancelled() {
                std::thread::sleep(Duration::from_millis(1));
            }
            1
        });
        slot.start("t", "fast", |_: &Progress| 2);
        assert_eq!(wait(&mut slot), Some(Ok(2)));
        assert!(slot.running().is_none());
    }

    #[test]
    fn cancel_reaches_the_worker() {
        let mut slot: Slot<()> = Slot::default();
        let (tx, rx) = channel();
        slot.start("t", "waits", move |p: &Progress| {
            while !p.is_cancelled() {
                std::thread::sleep(Duration::from_millis(1));
            }
            let _ = tx.send(true);
        });
        slot.cancel();
        assert_eq!(rx.recv_timeout(Duration::from_secs(5)), Ok(true));
    }
}
