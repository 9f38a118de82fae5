//! Ordered parallel maps for independent evaluations (frequencies, speeds,
//! candidate designs): spread over rayon's thread pool, each worker with its
//! own scratch space, results collected in input order.
//!
//! Every evaluation depends only on its own input (a network workspace keeps
//! no state that changes a result), so the output is the same, bit for bit,
//! whatever the number of threads; tests run analyses on one thread and on
//! several and compare. The pool is rayon's global one: all cores by
//! default, `RAYON_NUM_THREADS` or the command line's `--threads` to change it.

use rayon::prelude::*;
use std::cell::Cell;

thread_local! {
    /// Set while this thread evaluates an item of a parallel map.
    static IN_PARALLEL_ITEM: Cell<bool> = const { Cell::new(false) };
}

/// Marks the current thread as evaluating a parallel map's item until
/// dropped (restoring what was there: maps nest).
struct ItemGuard(bool);

impl ItemGuard {
    fn enter() -> Self {
        ItemGuard(IN_PARALLEL_ITEM.replace(true))
    }
}

impl Drop for ItemGuard {
    fn drop(&mut self) {
        IN_PARALLEL_ITEM.set(self.0);
    }
}

/// Number of chunks a long map is cut into: the progress callback runs after
/// each, so a progress bar moves in steps of 1/`PROGRESS_STEPS`.
pub const PROGRESS_STEPS: usize = 50;

/// Work (unknowns × solves) from which spreading solves over threads pays
/// for starting them: a solve costs roughly 0.1 µs per unknown, a parallel
/// batch some tens of µs (measured on the development machine, see
/// DEVELOPERS.md "Benchmarks").
pub const PARALLEL_WORK: usize = 5_000;

/// Whether `solves` network solves of `unknowns` unknowns each are worth
/// spreading over threads ([`PARALLEL_WORK`]).
pub fn pays(unknowns: usize, solves: usize) -> bool {
    unknowns.saturating_mul(solves) >= PARALLEL_WORK
}

/// Maps `f` over `items` and returns the results in input order.
///
/// With `parallel`, the items are evaluated on rayon's pool: each chunk is
/// cut into one contiguous share per thread, evaluated with one scratch
/// value made by `init` (a network workspace, say); without, on the calling
/// thread with one scratch value (for work too small to pay for the
/// threads). One share per thread rather than rayon's finer splitting: each
/// split made its own scratch value, and the 30-element solve bench ran
/// 1.56× faster on two threads than on one against 1.92× now (DEVELOPERS.md,
/// Benchmarks). Items go in chunks of about 1/[`PROGRESS_STEPS`] of the
/// whole; after each chunk, `progress` is called on the calling thread once
/// per item of it, with the number of items done (1, 2, … as a serial loop
/// would). A map called from inside
/// an item of a parallel map runs serially: the outer map already keeps
/// every core busy, and splitting the inner one only adds synchronisation
/// (the bands' draws each sweep 100 speeds).
///
/// # Errors
/// The first failure in input order, as a serial loop would stop at; the
/// items after its chunk are not evaluated.
pub fn ordered_map<T, R, E, W>(
    items: &[T],
    parallel: bool,
    init: impl Fn() -> W + Sync + Send,
    f: impl Fn(&mut W, &T) -> Result<R, E> + Sync + Send,
    progress: &mut dyn FnMut(usize),
) -> Result<Vec<R>, E>
where
    T: Sync,
    R: Send,
    E: Send,
{
    map_in_chunks(items, parallel, init, f, PROGRESS_STEPS, progress)
}

/// [`ordered_map`] for work that reports no progress: the items in one
/// chunk, so that the threads meet once instead of [`PROGRESS_STEPS`]
/// times (the resonance searches of the 30-element `response` took 0.65×
/// the time of 50 chunks; DEVELOPERS.md, Benchmarks). On a failure every
/// item may have been evaluated.
///
/// # Errors
/// The first failure in input order.
pub fn ordered_map_quiet<T, R, E, W>(
    items: &[T],
    parallel: bool,
    init: impl Fn() -> W + Sync + Send,
    f: impl Fn(&mut W, &T) -> Result<R, E> + Sync + Send,
) -> Result<Vec<R>, E>
where
    T: Sync,
    R: Send,
    E: Send,
{
    map_in_chunks(items, parallel, init, f, 1, &mut |_| {})
}

/// [`ordered_map`] in `steps` chunks.
fn map_in_chunks<T, R, E, W>(
    items: &[T],
    parallel: bool,
    init: impl Fn() -> W + Sync + Send,
    f: impl Fn(&mut W, &T) -> Result<R, E> + Sync + Send,
    steps: usize,
    progress: &mut dyn FnMut(usize),
) -> Result<Vec<R>, E>
where
    T: Sync,
    R: Send,
    E: Send,
{
    let mut out = Vec::with_capacity(items.len());
    if items.is_empty() {
        return Ok(out);
    }
    let chunk = items.len().div_ceil(steps.max(1)).max(1);
    if !parallel || rayon::current_num_threads() < 2 || IN_PARALLEL_ITEM.get() {
        let mut scratch = init();
        for item in items {
            out.push(f(&mut scratch, item)?);
            progress(out.len());
        }
        return Ok(out);
    }
    // one contiguous share of each chunk per thread, one scratch value each
    let share = chunk.div_ceil(rayon::current_num_threads()).max(1);
    for part in items.chunks(chunk) {
        let results: Vec<Vec<Result<R, E>>> = part
            .par_chunks(share)
            .map(|items| {
                let _item = ItemGuard::enter();
                let mut scratch = init();
                items.iter().map(|item| f(&mut scratch, item)).collect()
            })
            .collect();
        for r in results.into_iter().flatten() {
            out.push(r?);
            progress(out.len());
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Results come back in input order, the first failure in order is the
    /// one reported, and progress reaches the item count.
    #[test]
    fn order_errors_and_progress() {
        let items: Vec<u64> = (0..1000).collect();
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(3)
            .build()
            .unwrap();
        for parallel in [false, true] {
            let mut last = 0;
            let out: Result<Vec<u64>, u64> = pool.install(|| {
                ordered_map(&items, parallel, || 0u64, |_, &x| Ok(x * x), &mut |n| {
                    last = n
                })
            });
            assert_eq!(
                out.unwrap(),
                items.iter().map(|x| x * x).collect::<Vec<_>>()
            );
            assert_eq!(last, items.len());
            let failed: Result<Vec<u64>, u64> = pool.install(|| {
                ordered_map(
                    &items,
                    parallel,
                    || (),
                    |_, &x| if x % 300 == 299 { Err(x) } else { Ok(x) },
                    &mut |_| {},
                )
            });
            assert_eq!(failed, Err(299));
            let quiet: Result<Vec<u64>, u64> =
                pool.install(|| ordered_map_quiet(&items, parallel, || 0u64, |_, &x| Ok(x * x)));
            assert_eq!(
                quiet.unwrap(),
                items.iter().map(|x| x * x).collect::<Vec<_>>()
            );
            let failed: Result<Vec<u64>, u64> = pool.install(|| {
                ordered_map_quiet(
                    &items,
                    parallel,
                    || (),
                    |_, &x| {
                        if x % 300 == 299 { Err(x) } else { Ok(x) }
                    },
                )
            });
            assert_eq!(failed, Err(299));
        }
    }

    /// A map inside a parallel map's item runs on that item's thread, in
    /// order; after the outer map the thread is no longer marked.
    #[test]
    fn a_nested_map_runs_serially() {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(3)
            .build()
            .unwrap();
        let outer: Vec<u32> = (0..12).collect();
        let inner: Vec<u32> = (0..200).collect();
        let ran = pool.install(|| {
            ordered_map(
                &outer,
                true,
                || (),
                |_, _| {
                    let me = rayon::current_thread_index();
                    ordered_map(
                        &inner,
                        true,
                        || (),
                        |_, &x| Ok::<_, ()>((rayon::current_thread_index() == me, x)),
                        &mut |_| {},
                    )
                },
                &mut |_| {},
            )
        });
        for items in ran.unwrap() {
            assert!(items.iter().all(|(same, _)| *same));
            assert!(items.iter().map(|(_, x)| *x).eq(inner.iter().copied()));
        }
        assert!(!IN_PARALLEL_ITEM.get());
    }
}
