//! copse's own worker threads, one pool per thread count asked for (kept for the
//! life of the process, so repeated calls start no threads), and running work on
//! them with the interpreter let go: other Python threads go on meanwhile, and during
//! training the calling thread wakes every few hundredths of a second to let Python
//! run its signal handlers, so Ctrl-C stops a long training cleanly.
use crate::errors::{self, Kind};
use pyo3::prelude::*;
use rayon::ThreadPool;
use std::collections::HashMap;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex, OnceLock};
use std::time::Duration;

/// How often the calling thread looks for a pending signal during training.
const SIGNAL_POLL: Duration = Duration::from_millis(50);

/// The pool of `threads` workers (`None`: one per core, rayon's default).
///
/// # Errors
/// `UsageError` for zero threads; `CopseError` when threads cannot be started.
pub fn pool(threads: Option<usize>) -> PyResult<Arc<ThreadPool>> {
    static POOLS: OnceLock<Mutex<HashMap<usize, Arc<ThreadPool>>>> = OnceLock::new();
    if threads == Some(0) {
        return Err(errors::raise(
            Kind::Usage,
            "threads must be at least 1 (or None for one per core)",
        ));
    }
    let key = threads.unwrap_or(0);
    let mut pools = POOLS
        .get_or_init(Default::default)
        .lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner);
    if let Some(p) = pools.get(&key) {
        return Ok(p.clone());
    }
    // Named by pool, so a process listing shows which pool a thread belongs to.
    let mut builder = rayon::ThreadPoolBuilder::new().thread_name(move |i| match threads {
        Some(n) => format!("copse-t{n}-{i}"),
        None => format!("copse-all-{i}"),
    });
    if let Some(n) = threads {
        builder = builder.num_threads(n);
    }
    let p =
        Arc::new(builder.build().map_err(|e| {
            errors::raise(Kind::Other, format!("could not start worker threads: {e}"))
        })?);
    pools.insert(key, p.clone());
    Ok(p)
}

/// Runs `work` on `pool` with the interpreter let go.
pub fn run<T: Send>(py: Python<'_>, pool: &ThreadPool, work: impl FnOnce() -> T + Send) -> T {
    py.detach(|| pool.install(work))
}

/// Runs `work` on `pool` with the interpreter let go, handing it a stop flag that is
/// set when Python has a pending signal whose handler raises (Ctrl-C raises
/// `KeyboardInterrupt`). Returns what `work` returned and, if a handler raised, the
/// exception (for the caller to raise once it has seen how `work` ended).
///
/// # Errors
/// `CopseError` if `work` panicked.
pub fn run_stoppable<T: Send>(
    py: Python<'_>,
    pool: &ThreadPool,
    work: impl FnOnce(&AtomicBool) -> T + Send,
) -> PyResult<(T, Option<PyErr>)> {
    let stop = AtomicBool::new(false);
    let finished = AtomicBool::new(false);
    let caller = std::thread::current();
    let mut raised: Option<PyErr> = None;
    let (stop_flag, done) = (&stop, &finished);
    let outcome = std::thread::scope(|s| {
        let worker = s.spawn(move || {
            // Whatever happens in `work`, the caller must be woken to join.
            struct Wake<'a>(&'a AtomicBool, std::thread::Thread);
            impl Drop for Wake<'_> {
                fn drop(&mut self) {
                    self.0.store(true, Ordering::Release);
                    self.1.unpark();
                }
            }
            let _wake = Wake(done, caller);
            pool.install(|| work(stop_flag))
        });
        while !finished.load(Ordering::Acquire) {
            py.detach(|| std::thread::park_timeout(SIGNAL_POLL));
            if raised.is_none() {
                if let Err(e) = py.check_signals() {
                    stop.store(true, Ordering::Relaxed);
                    raised = Some(e);
                }
            }
        }
        worker.join()
    });
    outcome.map(|value| (value, raised)).map_err(|_| {
        errors::raise(
            Kind::Other,
            "copse stopped on an internal fault; please report it with the data and settings used",
        )
    })
}
