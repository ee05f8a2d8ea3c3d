//! Splitting a conversion's row-wise work over the cores with scoped threads (no pool: a pool's
//! worker waiting here could start other work meanwhile, see src/network.rs).

/// Threads for a conversion's parallel parts: the cores, at most 8.
pub fn cores() -> usize {
    std::thread::available_parallelism().map_or(1, |t| t.get()).clamp(1, 8)
}

/// Whether `n` entries are worth sharing over the cores: 64 Ki or more, and more than one core
/// (below that a thread would cost more than it saves).
pub fn worth_sharing(n: usize) -> bool {
    n >= 1 << 16 && cores() > 1
}

/// Entries per part when `n` entries are shared over the cores: all of them when they are not
/// [`worth_sharing`].
fn per_part(n: usize) -> usize {
    if worth_sharing(n) {
        n.div_ceil(cores())
    } else {
        n.max(1)
    }
}

/// Runs `f` on parts of `0..n` on all cores.
pub fn for_ranges(n: usize, f: impl Fn(std::ops::Range<usize>) + Sync) {
    let per = per_part(n);
    if per >= n {
        f(0..n);
        return;
    }
    std::thread::scope(|scope| {
        for from in (0..n).step_by(per) {
            let f = &f;
            scope.spawn(move || f(from..(from + per).min(n)));
        }
    });
}

/// Runs `f` on parts of `data` on all cores; `f` gets each part with the index of its first
/// entry.
pub fn for_parts<T: Send>(data: &mut [T], f: impl Fn(usize, &mut [T]) + Sync) {
    let per = per_part(data.len());
    if per >= data.len() {
        f(0, data);
        return;
    }
    std::thread::scope(|scope| {
        for (k, part) in data.chunks_mut(per).enumerate() {
            let f = &f;
            scope.spawn(move || f(k * per, part));
        }
    });
}
