//! The rows in time order, whatever order the file has: the nominal logging interval, the time
//! each row stands for, and rows that repeat an instant.
//!
//! Volumes are Σ Q·Δt, so every row needs the time Δt it stands for. A row stands for the time
//! from its instant to the next distinct instant in time order, but never more than the nominal
//! interval (a reading before a gap does not fill the gap; the gap is missing time). The last
//! reading stands for one nominal interval. The intervals [t, t + Δt) of the rows never overlap,
//! so no stretch of time is counted twice and a day is never covered for more than its length.
//!
//! Rows that share an instant (overlapping downloads joined together) are all kept and written,
//! but only one of them counts: among those with a readable value, the one with the middle
//! value (the lower of the two middle ones for an even number; the first in the file among
//! equal values), or the first in the file when none has a readable value. The others stand for
//! no time. The choice does not depend on the order of the rows. Where their values differ, the
//! lines are listed, because then the file cannot say which reading is right.
//!
//! A file whose readable instants rise strictly from row to row (the usual case) needs no extra
//! memory: each row's time is taken from the next readable row. Any other file (newest first,
//! merged, shuffled, with repeats) is put in time order once, keeping one duration and one
//! reference line per row.

use super::time::{FileOrder, NO_TIME};

/// At most this many groups of repeated instants whose values differ are listed (with the total).
pub const MAX_LISTED: usize = 100;

/// At most this many steps between instants are looked at for the nominal interval.
const MAX_STEPS: usize = 200_000;

/// The rows in time order.
#[derive(Debug, Clone, PartialEq)]
pub struct Timeline {
    /// Nominal logging interval (ms): the median step between consecutive distinct instants in
    /// time order.
    pub interval_ms: i64,
    /// Steps back in time between consecutive readable rows, in file order.
    pub backward_steps: usize,
    /// Whether the readable rows run newest first ([`FileOrder`]).
    pub newest_first: bool,
    /// Whether the readable rows are out of order, neither oldest nor newest first
    /// ([`FileOrder`]).
    pub shuffled: bool,
    /// Instants held by more than one row.
    pub repeated_instants: usize,
    /// Rows that do not count because another row holds their instant.
    pub repeat_rows: usize,
    /// Lines of repeated instants whose values differ (at most [`MAX_LISTED`] groups).
    pub differing: Vec<Vec<u32>>,
    /// How many repeated instants have differing values.
    pub differing_total: usize,
    /// The number of rows the timeline was made for (rows inserted later are not its own).
    rows: usize,
    order: Order,
}

#[derive(Debug, Clone, PartialEq)]
enum Order {
    /// The readable rows' instants rise strictly in file order.
    Rising,
    /// Per row: the time it stands for (ms; 0 for a repeat that does not count) and the line of
    /// the row that counts for its instant (0 where no other row holds the instant).
    Sorted {
        duration_ms: Vec<u32>,
        counted_line: Vec<u32>,
        /// The rows that count, one per instant, in time order.
        time_order: Vec<u32>,
    },
}

/// Why no timeline could be made.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[non_exhaustive]
pub enum TimelineError {
    /// Fewer than two distinct instants.
    #[error("fewer than two readings at distinct times ({readable} row(s) with a readable time): nothing to convert\n  fix: check the time column and time format (rows without a readable time are listed in the report)")]
    TooFewInstants {
        /// Rows with a readable time.
        readable: usize,
    },
}

impl Timeline {
    /// Puts the rows in time order. `utc` holds each row's instant ([`NO_TIME`] where it has
    /// none), `values` the value columns, stage or pressure first (NaN where unreadable), and
    /// `lines` each row's line.
    pub fn new(utc: &[i64], values: &[Vec<f64>], lines: &[u32]) -> Result<Self, TimelineError> {
        let (mut backward, mut equal) = (0usize, 0usize);
        let mut last = NO_TIME;
        let mut readable = 0usize;
        for &t in utc {
            if t == NO_TIME {
                continue;
            }
            readable += 1;
            if last != NO_TIME {
                backward += usize::from(t < last);
                equal += usize::from(t == last);
            }
            last = t;
        }
        if backward == 0 && equal == 0 {
            let interval_ms = rising_interval(utc).ok_or(TimelineError::TooFewInstants { readable })?;
            return Ok(Self {
                interval_ms,
                backward_steps: 0,
                newest_first: false,
                shuffled: false,
                repeated_instants: 0,
                repeat_rows: 0,
                differing: Vec::new(),
                differing_total: 0,
                rows: utc.len(),
                order: Order::Rising,
            });
        }
        Self::sorted(utc, values, lines, readable, backward, FileOrder::of(utc))
    }

    fn sorted(
        utc: &[i64],
        values: &[Vec<f64>],
        lines: &[u32],
        readable: usize,
        backward_steps: usize,
        order: FileOrder,
    ) -> Result<Self, TimelineError> {
        let value = |i: u32| values.first().map_or(f64::NAN, |v| v[i as usize]);
        let idx = time_sorted(utc, values);
        // the first row of each instant, in time order
        let firsts: Vec<usize> = (0..idx.len())
            .filter(|&k| k == 0 || utc[idx[k] as usize] != utc[idx[k - 1] as usize])
            .collect();
        if firsts.len() < 2 {
            return Err(TimelineError::TooFewInstants { readable });
        }
        let interval_ms = median_step(utc, &idx, &firsts);

        let mut duration_ms = vec![0u32; utc.len()];
        let mut counted_line = vec![0u32; utc.len()];
        let mut time_order: Vec<u32> = Vec::with_capacity(firsts.len());
        let (mut repeated_instants, mut repeat_rows) = (0, 0);
        let (mut differing, mut differing_total) = (Vec::new(), 0);
        for (g, &start) in firsts.iter().enumerate() {
            let end = firsts.get(g + 1).copied().unwrap_or(idx.len());
            let next = firsts.get(g + 1).map(|&k| utc[idx[k] as usize]);
            if end - start == 1 {
                let only = idx[start] as usize;
                duration_ms[only] = stands_for(utc[only], next, interval_ms);
                time_order.push(only as u32);
                continue;
            }
            let group = &idx[start..end];
            let readable = group.iter().filter(|&&i| value(i).is_finite()).count();
            let first = group[readable.saturating_sub(1) / 2] as usize;
            duration_ms[first] = stands_for(utc[first], next, interval_ms);
            time_order.push(first as u32);
            repeated_instants += 1;
            repeat_rows += end - start - 1;
            for &i in group {
                counted_line[i as usize] = lines[first];
            }
            let same = |a: usize, b: usize| {
                values
                    .iter()
                    .all(|v| v[a].to_bits() == v[b].to_bits() || (v[a].is_nan() && v[b].is_nan()))
            };
            if group.iter().any(|&i| !same(first, i as usize)) {
                differing_total += 1;
                if differing.len() < MAX_LISTED {
                    let mut ls: Vec<u32> = group.iter().map(|&i| lines[i as usize]).collect();
                    ls.sort_unstable();
                    differing.push(ls);
                }
            }
        }
        Ok(Self {
            interval_ms,
            backward_steps,
            newest_first: order.newest_first,
            shuffled: order.shuffled,
            repeated_instants,
            repeat_rows,
            differing,
            differing_total,
            rows: utc.len(),
            order: Order::Sorted {
                duration_ms,
                counted_line,
                time_order,
            },
        })
    }

    /// The time (ms) row `i` stands for; 0 for a row without a time or a repeat that does not
    /// count.
    #[inline]
    pub fn duration_ms(&self, i: usize, utc: &[i64]) -> i64 {
        match &self.order {
            Order::Sorted { duration_ms, .. } => i64::from(duration_ms[i]),
            Order::Rising => {
                if utc[i] == NO_TIME {
                    return 0;
                }
                let next = utc[i + 1..self.rows].iter().copied().find(|&t| t != NO_TIME);
                i64::from(stands_for(utc[i], next, self.interval_ms))
            }
        }
    }

    /// The rows that stand for time, one per instant, in time order; `None` when the rows with
    /// a time are in time order in the file (every one of them stands for its instant).
    pub fn sorted_order(&self) -> Option<&[u32]> {
        match &self.order {
            Order::Rising => None,
            Order::Sorted { time_order, .. } => Some(time_order),
        }
    }

    /// The number of rows the timeline was made for.
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// For a row whose instant other rows hold too: the line of the row that counts for it (the
    /// row's own line when it is that row). `None` when the row holds its instant alone.
    #[inline]
    pub fn counted_line(&self, i: usize) -> Option<u32> {
        match &self.order {
            Order::Rising => None,
            Order::Sorted { counted_line, .. } => counted_line.get(i).copied().filter(|l| *l != 0),
        }
    }

    /// Whether row `i` repeats an instant another row counts for.
    #[inline]
    pub fn is_repeat(&self, i: usize, line: u32) -> bool {
        self.counted_line(i).is_some_and(|l| l != line)
    }
}

/// The time (ms) a reading at `t` stands for: to the next instant, at most the nominal interval.
fn stands_for(t: i64, next: Option<i64>, interval_ms: i64) -> u32 {
    let d = next.map_or(interval_ms, |n| (n - t).min(interval_ms));
    d.clamp(0, i64::from(u32::MAX)) as u32
}

/// The median step between consecutive readable instants of a strictly rising series.
fn rising_interval(utc: &[i64]) -> Option<i64> {
    let n = utc.len();
    let stride = (n / MAX_STEPS).max(1);
    let mut steps: Vec<i64> = (1..n)
        .step_by(stride)
        .filter(|&i| utc[i] != NO_TIME && utc[i - 1] != NO_TIME)
        .map(|i| utc[i] - utc[i - 1])
        .collect();
    if steps.is_empty() {
        // readings separated by unread rows only: every readable neighbour
        let valid: Vec<i64> = utc.iter().copied().filter(|t| *t != NO_TIME).collect();
        steps = valid.windows(2).map(|w| w[1] - w[0]).collect();
    }
    if steps.is_empty() {
        return None;
    }
    let mid = steps.len() / 2;
    Some(*steps.select_nth_unstable(mid).1)
}

/// The rows with a time, in time order; rows of one instant with a readable value first, by
/// value, then the rest in file order.
fn time_sorted(utc: &[i64], values: &[Vec<f64>]) -> Vec<u32> {
    let value = |i: u32| values.first().map_or(f64::NAN, |v| v[i as usize]);
    let mut idx: Vec<u32> = (0..utc.len() as u32).filter(|&i| utc[i as usize] != NO_TIME).collect();
    idx.sort_unstable_by(|&a, &b| {
        let (va, vb) = (value(a), value(b));
        utc[a as usize]
            .cmp(&utc[b as usize])
            .then(vb.is_finite().cmp(&va.is_finite()))
            .then(va.total_cmp(&vb))
            .then(a.cmp(&b))
    });
    idx
}

/// The median step (ms) between consecutive instants (`firsts` indexes the first row of each
/// in `idx`), from at most [`MAX_STEPS`] evenly spaced steps.
fn median_step(utc: &[i64], idx: &[u32], firsts: &[usize]) -> i64 {
    let stride = (firsts.len() / MAX_STEPS).max(1);
    let mut steps: Vec<i64> = (1..firsts.len())
        .step_by(stride)
        .map(|k| utc[idx[firsts[k]] as usize] - utc[idx[firsts[k - 1]] as usize])
        .collect();
    let mid = steps.len() / 2;
    *steps.select_nth_unstable(mid).1
}

#[cfg(test)]
mod tests {
    use super::*;

    const MIN: i64 = 60_000;

    fn durations(t: &Timeline, utc: &[i64]) -> Vec<i64> {
        (0..utc.len()).map(|i| t.duration_ms(i, utc)).collect()
    }

    #[test]
    fn rising_rows_stand_for_the_time_to_the_next_at_most_the_interval() {
        // 15-minute readings, a 5-minute reading, a gap of an hour, an unread row
        let utc = [0, 15 * MIN, 20 * MIN, 35 * MIN, NO_TIME, 95 * MIN, 110 * MIN];
        let values = vec![vec![1.0; utc.len()]];
        let lines: Vec<u32> = (2..9).collect();
        let t = Timeline::new(&utc, &values, &lines).expect("timeline");
        assert_eq!(t.interval_ms, 15 * MIN);
        assert_eq!(
            durations(&t, &utc),
            vec![15 * MIN, 5 * MIN, 15 * MIN, 15 * MIN, 0, 15 * MIN, 15 * MIN]
        );
        assert_eq!(t.counted_line(0), None);
    }

    #[test]
    fn any_order_gives_the_same_durations_per_instant() {
        let utc = [0, 15 * MIN, 30 * MIN, 50 * MIN, 65 * MIN];
        let values = vec![vec![1.0, 2.0, 3.0, 4.0, 5.0]];
        let lines: Vec<u32> = (2..7).collect();
        let a = Timeline::new(&utc, &values, &lines).expect("timeline");
        let da = durations(&a, &utc);
        // newest first
        let mut r = utc;
        r.reverse();
        let b = Timeline::new(&r, &values, &lines).expect("timeline");
        assert!(b.newest_first);
        let mut db = durations(&b, &r);
        db.reverse();
        assert_eq!(da, db);
        // shuffled
        let perm = [3, 0, 4, 2, 1];
        let s: Vec<i64> = perm.iter().map(|&k| utc[k]).collect();
        let c = Timeline::new(&s, &values, &lines).expect("timeline");
        for (j, &k) in perm.iter().enumerate() {
            assert_eq!(c.duration_ms(j, &s), da[k]);
        }
        assert_eq!(a.interval_ms, 15 * MIN);
        assert_eq!(c.interval_ms, 15 * MIN);
    }

    #[test]
    fn repeats_count_once_and_differing_values_are_listed() {
        let utc = [0, 15 * MIN, 15 * MIN, 30 * MIN, 30 * MIN, 45 * MIN];
        // the first copy of 15 min has no value: the second counts; the copies of 30 min differ
        // and the lower middle value counts
        let values = vec![vec![1.0, f64::NAN, 2.0, 3.5, 3.0, 4.0]];
        let lines: Vec<u32> = vec![10, 11, 12, 13, 14, 15];
        let t = Timeline::new(&utc, &values, &lines).expect("timeline");
        assert_eq!(t.repeated_instants, 2);
        assert_eq!(t.repeat_rows, 2);
        let d = durations(&t, &utc);
        assert_eq!(d, vec![15 * MIN, 0, 15 * MIN, 0, 15 * MIN, 15 * MIN]);
        assert_eq!(t.counted_line(3), Some(14));
        assert_eq!(t.counted_line(1), Some(12));
        assert_eq!(t.counted_line(2), Some(12));
        assert!(t.is_repeat(1, 11));
        assert!(!t.is_repeat(2, 12));
        assert_eq!(t.counted_line(0), None);
        assert_eq!(t.differing_total, 2, "NaN against 2.0 differs too");
        assert_eq!(t.differing, vec![vec![11, 12], vec![13, 14]]);
    }

    /// Three copies of an instant in every order: the middle value counts.
    #[test]
    fn the_middle_value_counts_whatever_the_order() {
        let perms = [[0, 1, 2], [0, 2, 1], [1, 0, 2], [1, 2, 0], [2, 0, 1], [2, 1, 0]];
        let vals = [5.0, 1.0, 3.0];
        for p in perms {
            let utc = [0, 0, 0, 15 * MIN];
            let mut v: Vec<f64> = p.iter().map(|&k| vals[k]).collect();
            v.push(2.0);
            let t = Timeline::new(&utc, &[v.clone()], &[2, 3, 4, 5]).expect("timeline");
            let counted = (0..3).find(|&i| t.duration_ms(i, &utc) > 0).expect("one counts");
            assert!((v[counted] - 3.0).abs() < 1e-12, "order {p:?}");
        }
    }

    #[test]
    fn fewer_than_two_instants_is_an_error() {
        let v = vec![vec![1.0, 1.0]];
        assert!(Timeline::new(&[5, 5], &v, &[2, 3]).is_err());
        assert!(Timeline::new(&[NO_TIME, 5], &v, &[2, 3]).is_err());
        assert!(Timeline::new(&[10, 5], &v, &[2, 3]).is_ok(), "newest first, two rows");
    }
}
