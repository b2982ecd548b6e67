//! How a pass over the situations is cut into pieces and spread over the
//! cores: the pieces depend on the number of situations alone and results are
//! combined in piece order, so a pass gives the same figures to the last bit
//! whatever the number of cores.

/// The pieces a pass over `n` situations is cut into: one below 20,000
/// situations, else 2 to 64 of about 16,384 each. They depend on `n` alone, and
/// their sums are added in piece order, so that a pass gives the same figures
/// to the last bit whatever the number of cores and however the threads run.
pub fn pieces(n: usize) -> Vec<std::ops::Range<usize>> {
    let count = if n < 20_000 {
        1
    } else {
        (n / 16_384).clamp(2, 64)
    };
    let size = n.div_ceil(count).max(1);
    (0..count)
        .map(|t| (t * size).min(n)..((t + 1) * size).min(n))
        .filter(|r| !r.is_empty())
        .collect()
}

/// Runs `f` on each of `pieces(n)`, the cores taking the next piece as they
/// finish one (so a core slowed by other work takes fewer); results in piece order.
pub fn on_pieces<T: Send>(n: usize, f: impl Fn(std::ops::Range<usize>) -> T + Sync) -> Vec<T> {
    on_ranges(pieces(n), f)
}

/// `n` items of heavy work (decision makers with many draws) cut into up to
/// 64 pieces of at least `min` items: they depend on `n` and `min` alone.
pub fn heavy_pieces(n: usize, min: usize) -> Vec<std::ops::Range<usize>> {
    let count = (n / min.max(1)).clamp(1, 64);
    let size = n.div_ceil(count).max(1);
    (0..count)
        .map(|t| (t * size).min(n)..((t + 1) * size).min(n))
        .filter(|r| !r.is_empty())
        .collect()
}

std::thread_local! {
    /// Whether this thread is one of `on_ranges`' or `run_queue`'s workers:
    /// work it spreads again runs on it alone (the cores are already busy),
    /// in the same pieces and order, so the results do not change.
    static WORKER: std::cell::Cell<bool> = const { std::cell::Cell::new(false) };
}

/// How many threads to spread `items` pieces of work over: the cores, or
/// one inside a worker.
fn threads_for(items: usize) -> usize {
    if WORKER.with(|w| w.get()) {
        return 1;
    }
    std::thread::available_parallelism()
        .map(|t| t.get())
        .unwrap_or(1)
        .min(items)
}

/// Runs `f` on each of the given pieces (as `on_pieces`); results in piece order.
pub fn on_ranges<T: Send>(
    pieces: Vec<std::ops::Range<usize>>,
    f: impl Fn(std::ops::Range<usize>) -> T + Sync,
) -> Vec<T> {
    let threads = threads_for(pieces.len());
    if threads <= 1 {
        return pieces.into_iter().map(f).collect();
    }
    let next = std::sync::atomic::AtomicUsize::new(0);
    let (f, pieces, next) = (&f, &pieces, &next);
    let mut done: Vec<(usize, T)> = std::thread::scope(|s| {
        let handles: Vec<_> = (0..threads)
            .map(|_| {
                s.spawn(move || {
                    WORKER.with(|w| w.set(true));
                    let mut out = Vec::new();
                    loop {
                        let p = next.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                        let Some(r) = pieces.get(p) else { break };
                        out.push((p, f(r.clone())));
                    }
                    out
                })
            })
            .collect();
        handles
            .into_iter()
            .flat_map(|h| h.join().unwrap_or_else(|e| std::panic::resume_unwind(e)))
            .collect()
    });
    done.sort_by_key(|d| d.0);
    done.into_iter().map(|d| d.1).collect()
}

/// Runs `f` on every work item, the cores taking the next item as they finish
/// one. Items are usually a piece of the situations with the slices of output
/// arrays it fills.
pub fn run_queue<W: Send>(items: Vec<W>, f: impl Fn(W) + Sync) {
    let threads = threads_for(items.len());
    if threads <= 1 {
        items.into_iter().for_each(f);
        return;
    }
    let queue = std::sync::Mutex::new(items.into_iter());
    let (f, queue) = (&f, &queue);
    std::thread::scope(|s| {
        for _ in 0..threads {
            s.spawn(move || loop {
                WORKER.with(|w| w.set(true));
                let next = match queue.lock() {
                    Ok(mut q) => q.next(),
                    Err(_) => None,
                };
                let Some(item) = next else { break };
                f(item);
            });
        }
    });
}
