//! Batches: every command that takes many recordings runs each through the same loop, so
//! one bad recording is reported in one line and the rest are still processed; the
//! outcome counts the failures for the summary line and the exit status
//! (docs/output-format.md, "Batches").

use std::path::{Path, PathBuf};

use crate::error::{Error, Result};

/// How a batch went.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct BatchOutcome {
    /// Recordings tried.
    pub total: usize,
    /// Recordings that failed (each reported as it failed).
    pub failed: usize,
}

impl BatchOutcome {
    /// True when some recording failed (the command then exits with status 1).
    pub fn any_failed(&self) -> bool {
        self.failed > 0
    }

    /// The summary line for stderr, `rotorsift: F of T recordings failed`, when some of
    /// several recordings failed (a single recording's error line says it all).
    pub fn summary(&self) -> Option<String> {
        (self.failed > 0 && self.total > 1).then(|| {
            format!(
                "rotorsift: {} of {} recordings failed",
                self.failed, self.total
            )
        })
    }
}

/// Runs `work` on every recording of `paths` in order; a failure is handed to `report`
/// and the batch goes on. Returns the results of the recordings that succeeded.
pub fn run_batch<T>(
    paths: &[PathBuf],
    mut work: impl FnMut(&Path) -> Result<T>,
    report: &mut dyn FnMut(&Error),
) -> (Vec<T>, BatchOutcome) {
    let mut out = Vec::with_capacity(paths.len());
    let mut outcome = BatchOutcome {
        total: paths.len(),
        failed: 0,
    };
    for p in paths {
        match work(p) {
            Ok(v) => out.push(v),
            Err(e) => {
                report(&e);
                outcome.failed += 1;
            }
        }
    }
    (out, outcome)
}

/// [`run_batch`] over up to `jobs` recordings at a time (0 = one per core), on a rayon
/// pool of `jobs` threads. Within a recording the work that parallelises (the two map
/// paths of a CPI, the tracks' range gates in pass two) spreads over the same pool, so
/// `jobs = 1` is one core throughout. Every result is the one a single thread gives, byte
/// for byte; results and failure reports come in the order of `paths`.
pub fn run_batch_parallel<T: Send>(
    paths: &[PathBuf],
    jobs: usize,
    work: impl Fn(&Path) -> Result<T> + Sync,
    report: &mut dyn FnMut(&Error),
) -> (Vec<T>, BatchOutcome) {
    use rayon::prelude::*;
    let run = || -> Vec<Result<T>> {
        if paths.len() < 2 {
            paths.iter().map(|p| work(p)).collect()
        } else {
            paths.par_iter().map(|p| work(p)).collect()
        }
    };
    let results = match rayon::ThreadPoolBuilder::new().num_threads(jobs).build() {
        Ok(pool) => pool.install(run),
        Err(_) => paths.iter().map(|p| work(p)).collect(),
    };
    let mut out = Vec::with_capacity(paths.len());
    let mut outcome = BatchOutcome {
        total: paths.len(),
        failed: 0,
    };
    for r in results {
        match r {
            Ok(v) => out.push(v),
            Err(e) => {
                report(&e);
                outcome.failed += 1;
            }
        }
    }
    (out, outcome)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The parallel batch gives the serial batch's results in the same order.
    #[test]
    fn parallel_batch_keeps_order_and_failures() {
        let paths: Vec<PathBuf> = (0..40).map(|i| PathBuf::from(format!("{i}"))).collect();
        let work = |p: &Path| {
            let i: usize = p.to_string_lossy().parse().unwrap();
            if i % 7 == 3 {
                Err(Error::format(p, "broken"))
            } else {
                Ok(i * i)
            }
        };
        let mut a_err = Vec::new();
        let (a, oa) = run_batch(&paths, work, &mut |e| a_err.push(e.to_string()));
        let mut b_err = Vec::new();
        let (b, ob) = run_batch_parallel(&paths, 2, work, &mut |e| b_err.push(e.to_string()));
        assert_eq!(a, b);
        assert_eq!(oa, ob);
        assert_eq!(a_err, b_err);
        assert_eq!(ob.failed, 6);
    }

    #[test]
    fn failures_are_reported_counted_and_skipped() {
        let paths: Vec<PathBuf> = ["a", "bad1", "b", "bad2", "c"]
            .iter()
            .map(PathBuf::from)
            .collect();
        let mut seen = Vec::new();
        let (ok, o) = run_batch(
            &paths,
            |p| {
                let s = p.to_string_lossy().into_owned();
                if s.starts_with("bad") {
                    Err(Error::format(p, "broken"))
                } else {
                    Ok(s)
                }
            },
            &mut |e| seen.push(e.to_string()),
        );
        assert_eq!(ok, ["a", "b", "c"]);
        assert_eq!(
            o,
            BatchOutcome {
                total: 5,
                failed: 2
            }
        );
        assert_eq!(seen, ["bad1: broken", "bad2: broken"]);
        assert_eq!(
            o.summary().as_deref(),
            Some("rotorsift: 2 of 5 recordings failed")
        );
        let single = BatchOutcome {
            total: 1,
            failed: 1,
        };
        assert!(single.any_failed() && single.summary().is_none());
        assert!(BatchOutcome {
            total: 3,
            failed: 0
        }
        .summary()
        .is_none());
    }
}
