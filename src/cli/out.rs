//! Printing for every subcommand: lines to standard output ([`say!`]) and notes to standard
//! error ([`tell!`]) that never panic. When the reader goes away (`countersteer plan … | head`)
//! the pipe breaks: printing then stops quietly and the command finishes its work (files are
//! written before anything is printed) and exits 0. Rust's `println!` would panic instead.

use std::fmt::Arguments;
use std::io::Write;
use std::sync::atomic::{AtomicBool, Ordering};

static STDOUT_GONE: AtomicBool = AtomicBool::new(false);
static STDERR_GONE: AtomicBool = AtomicBool::new(false);

/// Writes one line to standard output, unless an earlier write failed (then nothing).
pub fn line(args: Arguments<'_>) {
    write_line(&mut std::io::stdout().lock(), &STDOUT_GONE, args);
}

/// Writes one line to standard error, unless an earlier write failed (then nothing).
pub fn note(args: Arguments<'_>) {
    write_line(&mut std::io::stderr().lock(), &STDERR_GONE, args);
}

/// Writes `args` and a newline to `w`; on any failure (a broken pipe, a full disk behind a
/// redirect) marks the stream `gone` so that later lines are skipped.
pub fn write_line(w: &mut impl Write, gone: &AtomicBool, args: Arguments<'_>) {
    if gone.load(Ordering::Relaxed) {
        return;
    }
    if w.write_fmt(args).and_then(|()| w.write_all(b"\n")).is_err() {
        gone.store(true, Ordering::Relaxed);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    struct Broken(usize);
    impl Write for Broken {
        fn write(&mut self, _: &[u8]) -> std::io::Result<usize> {
            self.0 += 1;
            Err(std::io::ErrorKind::BrokenPipe.into())
        }
        fn flush(&mut self) -> std::io::Result<()> {
            Ok(())
        }
    }

    #[test]
    fn a_broken_stream_is_written_once_then_left_alone() {
        let gone = AtomicBool::new(false);
        let mut w = Broken(0);
        write_line(&mut w, &gone, format_args!("one {}", 1));
        write_line(&mut w, &gone, format_args!("two"));
        assert!(gone.load(Ordering::Relaxed));
        assert_eq!(w.0, 1);
    }
}
