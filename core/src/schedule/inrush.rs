//! Supply inrush: at most `cap` coils in their pull-in window at once.
//!
//! Each pulse holds an inrush window `[on, on + w)` (half-open, `w` = the channel's window, cut to
//! the pulse's length). A new window may start at `s` only if, everywhere in `[s, s + w)`, fewer
//! than `cap` existing windows are open. The earliest such `s` at or after a given tick is found by
//! one sweep over the window edges in time order (ends before starts at equal ticks), keeping the
//! start of the current run of ticks with fewer than `cap` open windows: the first run at least `w`
//! long gives the answer, its start (or the given tick, if the run began earlier). Cost: sorting the
//! at most `Q` starts and `Q` ends (insertion sort), then O(Q).

use heapless::Vec;

/// The earliest `s ≥ from` at which a window of `w` ticks keeps every tick's count of open windows
/// at most `cap` (counting the new one), given the existing windows `(start, end)`.
pub(crate) fn earliest_start<const Q: usize>(
    windows: &Vec<(u64, u64), Q>,
    from: u64,
    w: u64,
    cap: u8,
) -> u64 {
    let cap = cap as u32;
    let mut open = 0u32;
    let mut starts: Vec<u64, Q> = Vec::new();
    let mut ends: Vec<u64, Q> = Vec::new();
    for &(a, b) in windows.iter() {
        if b <= from || a >= b {
            continue;
        }
        if a <= from {
            open += 1;
        } else {
            // Both have capacity Q, as `windows` does: pushes cannot fail.
            let _ = starts.push(a);
        }
        let _ = ends.push(b);
    }
    if (open + starts.len() as u32) < cap {
        return from;
    }
    sort(&mut starts);
    sort(&mut ends);
    let mut run = if open < cap { Some(from) } else { None };
    let (mut i, mut j) = (0, 0);
    loop {
        let next_start = starts.get(i).copied();
        let next_end = ends.get(j).copied();
        let (t, is_end) = match (next_start, next_end) {
            (Some(a), Some(b)) if b <= a => (b, true),
            (Some(a), _) => (a, false),
            (None, Some(b)) => (b, true),
            (None, None) => break,
        };
        if let Some(r) = run {
            if t - r >= w {
                return r;
            }
        }
        if is_end {
            j += 1;
            open = open.saturating_sub(1);
            if open < cap && run.is_none() {
                run = Some(t);
            }
        } else {
            i += 1;
            open += 1;
            if open >= cap {
                run = None;
            }
        }
    }
    // After the last end no window is open; `run` is set by then. The fallback is the last end,
    // which is also free.
    run.unwrap_or_else(|| ends.last().copied().unwrap_or(from))
}

/// Insertion sort, ascending (a handful of entries: smaller than the library sort).
fn sort<const Q: usize>(v: &mut Vec<u64, Q>) {
    for k in 1..v.len() {
        for m in (1..=k).rev() {
            let Some([a, b]) = v.get_mut(m - 1..=m) else {
                break;
            };
            if *a <= *b {
                break;
            }
            core::mem::swap(a, b);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn windows(list: &[(u64, u64)]) -> Vec<(u64, u64), 8> {
        list.iter().copied().collect()
    }

    /// Brute force over every tick: the first start whose window never meets `cap` open windows.
    fn brute(list: &[(u64, u64)], from: u64, w: u64, cap: u8) -> u64 {
        let open_at = |t: u64| list.iter().filter(|&&(a, b)| a <= t && t < b).count();
        (from..)
            .find(|&s| (s..s + w).all(|t| open_at(t) < cap as usize))
            .unwrap()
    }

    #[test]
    fn staggers_behind_existing_windows() {
        let l = [(10, 20), (15, 30)];
        assert_eq!(earliest_start(&windows(&l), 10, 5, 1), 30);
        assert_eq!(earliest_start(&windows(&l), 0, 5, 1), 0);
        assert_eq!(earliest_start(&windows(&l), 0, 11, 1), 30);
        assert_eq!(earliest_start(&windows(&l), 12, 5, 2), 20);
        assert_eq!(earliest_start(&windows(&l), 12, 5, 3), 12);
    }

    #[test]
    fn matches_brute_force_on_many_layouts() {
        // Deterministic pseudo-random layouts (xorshift), checked tick by tick.
        let mut x: u64 = 0x9E37_79B9_7F4A_7C15;
        let mut next = |m: u64| {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            x % m
        };
        for _ in 0..3000 {
            let n = next(8) as usize;
            let list: std::vec::Vec<(u64, u64)> = (0..n)
                .map(|_| {
                    let a = next(60);
                    (a, a + next(20))
                })
                .collect();
            let from = next(50);
            let w = 1 + next(15);
            let cap = 1 + next(3) as u8;
            assert_eq!(
                earliest_start(&windows(&list), from, w, cap),
                brute(&list, from, w, cap),
                "{list:?} from {from} w {w} cap {cap}"
            );
        }
    }
}
