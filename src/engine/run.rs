//! Runs over many points: the engine's only parallel loops (rayon), on a pool of the
//! requested size, with results in input order so that the output is the same for any
//! number of threads.

use rayon::prelude::*;

/// Most worker threads accepted: far more than any machine's cores, so a typing error
/// (`--threads 100000`) is refused rather than starting that many threads.
pub const MAX_THREADS: usize = 1024;

/// Why a pool could not be started.
#[derive(Debug, thiserror::Error, PartialEq, Eq)]
pub enum PoolError {
    #[error("--threads 0: give at least one thread")]
    Zero,
    #[error("--threads {0}: give at most {MAX_THREADS} threads (more than a machine has cores only slows the run)")]
    TooMany(usize),
    #[error("the {0} worker threads cannot be started ({1})")]
    Start(usize, String),
}

/// Checks a requested thread count before any work.
pub fn check_threads(threads: Option<usize>) -> Result<(), PoolError> {
    match threads {
        Some(0) => Err(PoolError::Zero),
        Some(n) if n > MAX_THREADS => Err(PoolError::TooMany(n)),
        _ => Ok(()),
    }
}

/// Runs `f` on a pool of `threads` workers, or on rayon's default pool (one worker per
/// core) for `None`. Everything parallel inside `f` (pyramids, stations) uses that pool.
pub fn with_threads<T: Send>(
    threads: Option<usize>,
    f: impl FnOnce() -> T + Send,
) -> Result<T, PoolError> {
    check_threads(threads)?;
    match threads {
        None => Ok(f()),
        Some(n) => {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(n)
                .build()
                .map_err(|e| PoolError::Start(n, e.to_string()))?;
            Ok(pool.install(f))
        }
    }
}

/// Worker threads of the current pool.
pub fn current_threads() -> usize {
    rayon::current_num_threads()
}

/// `f(i)` for `i` in `0..n`, in parallel, results in index order; `tick(1)` after each.
pub fn map_indexed<T: Send>(
    n: usize,
    f: impl Fn(usize) -> T + Sync,
    tick: &(dyn Fn(u64) + Sync),
) -> Vec<T> {
    (0..n)
        .into_par_iter()
        .map(|i| {
            let r = f(i);
            tick(1);
            r
        })
        .collect()
}

/// `f(item)` for every item, in parallel, results in input order (no progress).
pub fn map_items<I: Sync, T: Send>(items: &[I], f: impl Fn(&I) -> T + Sync + Send) -> Vec<T> {
    items.par_iter().map(f).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thread_counts_are_checked() {
        assert_eq!(check_threads(Some(0)), Err(PoolError::Zero));
        assert_eq!(
            check_threads(Some(100_000)),
            Err(PoolError::TooMany(100_000))
        );
        assert!(check_threads(Some(3)).is_ok() && check_threads(None).is_ok());
        let sum = with_threads(Some(2), || map_indexed(100, |i| i * i, &|_| {}));
        assert_eq!(sum.unwrap()[7], 49);
    }
}
