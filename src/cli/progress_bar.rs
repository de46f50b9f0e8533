//! A terminal progress bar that follows a library [`Progress`] handle from a side thread.

use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::thread::JoinHandle;
use std::time::Duration;

use indicatif::{ProgressBar, ProgressStyle};

use countersteer::progress::Progress;

/// Draws `progress` on stderr until dropped. Hidden when stderr is not a terminal.
pub struct Bar {
    stop: Arc<AtomicBool>,
    thread: Option<JoinHandle<()>>,
}

impl Bar {
    /// Starts following `progress`.
    pub fn follow(progress: &Progress) -> Self {
        let stop = Arc::new(AtomicBool::new(false));
        let (p, s) = (progress.clone(), stop.clone());
        let thread = std::thread::Builder::new()
            .name("progress-bar".into())
            .spawn(move || draw(p, s))
            .ok();
        Bar { stop, thread }
    }
}

fn draw(p: Progress, stop: Arc<AtomicBool>) {
    let bar = ProgressBar::new(0);
    let style = ProgressStyle::with_template("{msg:>10} [{bar:30}] {percent:>3}% {elapsed}")
        .unwrap_or_else(|_| ProgressStyle::default_bar())
        .progress_chars("=> ");
    bar.set_style(style);
    while !stop.load(Ordering::Relaxed) {
        let s = p.snapshot();
        bar.set_message(s.stage);
        bar.set_length(s.total.max(1));
        bar.set_position(s.done.min(s.total));
        std::thread::sleep(Duration::from_millis(100));
    }
    bar.finish_and_clear();
}

impl Drop for Bar {
    fn drop(&mut self) {
        self.stop.store(true, Ordering::Relaxed);
        if let Some(t) = self.thread.take() {
            let _ = t.join();
        }
    }
}
