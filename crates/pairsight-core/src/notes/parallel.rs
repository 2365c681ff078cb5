//! Splitting work over threads on native targets. Every item (a note, a row
//! of a product) is computed by the same code whatever the split, and the
//! pieces are joined in order, so results are bit-identical to one thread,
//! and to the WebAssembly build, which always runs on one thread.

use std::ops::Range;

/// Threads to use: the machine's parallelism (at most 8) natively, 1 on
/// WebAssembly.
pub(crate) fn threads() -> usize {
    #[cfg(not(target_arch = "wasm32"))]
    {
        std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(1)
            .min(8)
    }
    #[cfg(target_arch = "wasm32")]
    {
        1
    }
}

/// Splits `0..n` into at most `threads()` contiguous ranges of at least
/// `min_len` items (one range when `n` is small).
fn ranges(n: usize, min_len: usize) -> Vec<Range<usize>> {
    let t = threads().min(n / min_len.max(1)).max(1);
    (0..t).map(|k| k * n / t..(k + 1) * n / t).collect()
}

/// `f` over contiguous ranges of `0..n`, results in range order.
pub(crate) fn map_ranges<T: Send>(
    n: usize,
    min_len: usize,
    f: impl Fn(Range<usize>) -> T + Sync,
) -> Vec<T> {
    let rs = ranges(n, min_len);
    if rs.len() <= 1 {
        return vec![f(0..n)];
    }
    #[cfg(not(target_arch = "wasm32"))]
    {
        std::thread::scope(|s| {
            let f = &f;
            let handles: Vec<_> = rs[1..]
                .iter()
                .map(|r| {
                    let r = r.clone();
                    s.spawn(move || f(r))
                })
                .collect();
            let mut out = vec![f(rs[0].clone())];
            for h in handles {
                out.push(h.join().unwrap_or_else(|e| std::panic::resume_unwind(e)));
            }
            out
        })
    }
    #[cfg(target_arch = "wasm32")]
    {
        rs.into_iter().map(f).collect()
    }
}

/// Calls `f(first_row, rows)` on contiguous blocks of a row-major buffer
/// with `width` values per row, in parallel.
pub(crate) fn for_row_blocks<T: Send>(
    buf: &mut [T],
    width: usize,
    min_rows: usize,
    f: impl Fn(usize, &mut [T]) + Sync,
) {
    let n = buf.len().checked_div(width).unwrap_or(0);
    let rs = ranges(n, min_rows);
    if rs.len() <= 1 {
        f(0, buf);
        return;
    }
    #[cfg(not(target_arch = "wasm32"))]
    {
        std::thread::scope(|s| {
            let f = &f;
            let mut rest = buf;
            let mut handles = Vec::new();
            for r in &rs {
                let (head, tail) = rest.split_at_mut((r.end - r.start) * width);
                rest = tail;
                let start = r.start;
                handles.push(s.spawn(move || f(start, head)));
            }
            for h in handles {
                h.join().unwrap_or_else(|e| std::panic::resume_unwind(e));
            }
        });
    }
    #[cfg(target_arch = "wasm32")]
    {
        let mut rest = buf;
        for r in &rs {
            let (head, tail) = rest.split_at_mut((r.end - r.start) * width);
            rest = tail;
            f(r.start, head);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges_cover_in_order() {
        let out = map_ranges(10_001, 10, |r| r.collect::<Vec<_>>());
        let flat: Vec<usize> = out.into_iter().flatten().collect();
        assert_eq!(flat, (0..10_001).collect::<Vec<_>>());
        let mut buf = vec![0usize; 3 * 1000];
        for_row_blocks(&mut buf, 3, 10, |first, rows| {
            for (k, r) in rows.chunks_exact_mut(3).enumerate() {
                r.fill(first + k);
            }
        });
        assert!(buf
            .chunks(3)
            .enumerate()
            .all(|(i, r)| r.iter().all(|&x| x == i)));
        assert_eq!(map_ranges(0, 10, |r| r.len()), vec![0]);
    }
}
