//! Progress on stderr for long runs: one bar over every chirp the batch reads (both
//! passes of each recording), with the count of recordings done, drawn only when stderr
//! is a terminal and `--quiet` is not given — off a terminal nothing at all is written, so
//! logs hold no control codes. The chirp readers count what they read into one atomic
//! counter ([`count_chirps`], one addition per block of chirps), and a ticker thread moves
//! the bar from it, so recordings analysed in parallel (`--jobs`) all advance the one bar
//! and the detection loops know nothing of it.

use std::io::IsTerminal;
use std::path::PathBuf;
use std::sync::atomic::{AtomicBool, AtomicU64, AtomicUsize, Ordering};
use std::sync::Arc;
use std::time::Duration;

use indicatif::{ProgressBar, ProgressStyle};

/// Chirps read by every [`crate::recording::ChirpReader`] of the process so far.
static CHIRPS_READ: AtomicU64 = AtomicU64::new(0);

/// How often the bar is redrawn from the counter (ten times a second is smooth enough to
/// read and costs nothing; common practice for terminal progress).
const TICK: Duration = Duration::from_millis(100);

/// Passes over the samples an analysis makes: pass one (tracks) and pass two (the
/// tracks' slow-time signals, `pipeline::track_signals`). The bar's length is this many
/// times the chirps; it grows if a run reads more.
pub const PASSES: u64 = 2;

/// Adds `n` chirps read (called by the chirp reader once per block).
pub fn count_chirps(n: usize) {
    CHIRPS_READ.fetch_add(n as u64, Ordering::Relaxed);
}

/// Whether bars are drawn: stderr is a terminal and the user did not ask for quiet.
pub fn wanted(quiet: bool) -> bool {
    !quiet && std::io::stderr().is_terminal()
}

/// A progress bar over a batch of recordings (nothing when not [`wanted`]).
pub struct Progress {
    bar: Option<ProgressBar>,
    total: usize,
    done: AtomicUsize,
    stop: Arc<AtomicBool>,
    ticker: Option<std::thread::JoinHandle<()>>,
}

impl Progress {
    /// A bar for analysing `paths` (their chirp counts read from the metadata; a
    /// recording that cannot be read counts 0), drawn only when `show`.
    pub fn start(paths: &[PathBuf], show: bool) -> Progress {
        let stop = Arc::new(AtomicBool::new(false));
        if !show {
            return Progress {
                bar: None,
                total: paths.len(),
                done: AtomicUsize::new(0),
                stop,
                ticker: None,
            };
        }
        let chirps: u64 = paths
            .iter()
            .filter_map(|p| crate::recording::RecordingMeta::open(p).ok())
            .map(|m| m.chirps as u64)
            .sum();
        let bar = ProgressBar::new((chirps * PASSES).max(1));
        let style = ProgressStyle::with_template(
            "{msg} [{bar:40}] {percent:>3}% {elapsed_precise} (eta {eta})",
        )
        .unwrap_or_else(|_| ProgressStyle::default_bar())
        .progress_chars("=> ");
        bar.set_style(style);
        bar.set_message(format!(
            "0/{} recording{}",
            paths.len(),
            plural(paths.len())
        ));
        let base = CHIRPS_READ.load(Ordering::Relaxed);
        let (b, s) = (bar.clone(), stop.clone());
        let ticker = std::thread::spawn(move || {
            while !s.load(Ordering::Relaxed) {
                let pos = CHIRPS_READ.load(Ordering::Relaxed).saturating_sub(base);
                if pos > b.length().unwrap_or(0) {
                    b.set_length(pos);
                }
                b.set_position(pos);
                std::thread::sleep(TICK);
            }
        });
        Progress {
            bar: Some(bar),
            total: paths.len(),
            done: AtomicUsize::new(0),
            stop,
            ticker: Some(ticker),
        }
    }

    /// One recording finished (or failed); the bar is cleared after the last, before any
    /// report is printed.
    pub fn recording_done(&self) {
        let done = self.done.fetch_add(1, Ordering::Relaxed) + 1;
        if let Some(bar) = &self.bar {
            bar.set_message(format!(
                "{done}/{} recording{}",
                self.total,
                plural(self.total)
            ));
            if done >= self.total {
                self.stop.store(true, Ordering::Relaxed);
                bar.finish_and_clear();
            }
        }
    }

    /// Whether a bar is drawn.
    pub fn is_shown(&self) -> bool {
        self.bar.is_some()
    }
}

impl Drop for Progress {
    fn drop(&mut self) {
        self.stop.store(true, Ordering::Relaxed);
        if let Some(bar) = &self.bar {
            bar.finish_and_clear();
        }
        if let Some(t) = self.ticker.take() {
            let _ = t.join();
        }
    }
}

fn plural(n: usize) -> &'static str {
    if n == 1 {
        ""
    } else {
        "s"
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Off a terminal (as under `cargo test`, stderr captured) no bar is made; the
    /// counter still counts.
    #[test]
    fn hidden_bar_counts_and_draws_nothing() {
        let p = Progress::start(&[PathBuf::from("a"), PathBuf::from("b")], false);
        assert!(!p.is_shown());
        let before = CHIRPS_READ.load(Ordering::Relaxed);
        count_chirps(2048);
        assert!(CHIRPS_READ.load(Ordering::Relaxed) >= before + 2048);
        p.recording_done();
        p.recording_done();
        assert_eq!(p.done.load(Ordering::Relaxed), 2);
        assert!(!wanted(true), "--quiet turns bars off");
    }
}
