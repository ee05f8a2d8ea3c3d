//! Short tables for loggers and control systems: the fewest head→discharge breakpoints whose
//! linear interpolation reproduces the rating within a stated relative error, and a piecewise
//! power-law equation with each segment's largest deviation.
//!
//! The table is built greedily from the lowest head: each segment is made as long as the
//! interpolation error allows (found by bisection on its upper end), which for a rating whose
//! interpolation error grows with the segment's length gives the fewest breakpoints (common
//! practice, no source: the same greedy cover is used for any piecewise-linear approximation).
//! Each segment is checked at [`CHECK_POINTS`] heads and built to 98 % of the stated error, so
//! the statement holds between the checked heads too.

use super::{RatingError, RatingModel};

/// Heads at which each candidate segment's interpolation error is evaluated.
pub const CHECK_POINTS: usize = 400;

/// One breakpoint: head (m) and discharge (m³/s).
pub type Breakpoint = (f64, f64);

/// The largest relative error of linear interpolation between `a` and `b` over `n` interior
/// heads evenly spaced.
pub fn interpolation_error(model: &RatingModel, a: Breakpoint, b: Breakpoint, n: usize) -> Result<f64, RatingError> {
    let mut worst = 0.0f64;
    for k in 1..=n {
        let h = a.0 + (b.0 - a.0) * k as f64 / (n + 1) as f64;
        let q = model.discharge_m3s(h)?;
        let lin = a.1 + (b.1 - a.1) * (h - a.0) / (b.0 - a.0);
        worst = worst.max(((lin - q) / q).abs());
    }
    Ok(worst)
}

/// The fewest breakpoints from `lo_m` to `hi_m` whose linear interpolation stays within
/// `max_rel_error` (e.g. 0.005 for 0.5 %) of the rating.
pub fn breakpoints_within(
    model: &RatingModel,
    lo_m: f64,
    hi_m: f64,
    max_rel_error: f64,
) -> Result<Vec<Breakpoint>, RatingError> {
    let target = 0.98 * max_rel_error;
    let mut points = vec![(lo_m, model.discharge_m3s(lo_m)?)];
    let mut a = points[0];
    while a.0 < hi_m {
        let end = (hi_m, model.discharge_m3s(hi_m)?);
        if interpolation_error(model, a, end, CHECK_POINTS)? <= target {
            points.push(end);
            break;
        }
        // bisection on the segment's upper end: ok at `lo`, too long at `hi`
        let (mut lo, mut hi) = (a.0, hi_m);
        for _ in 0..60 {
            let mid = 0.5 * (lo + hi);
            let b = (mid, model.discharge_m3s(mid)?);
            if interpolation_error(model, a, b, CHECK_POINTS)? <= target {
                lo = mid;
            } else {
                hi = mid;
            }
            if hi - lo <= 1e-7 * hi_m {
                break;
            }
        }
        // never a zero-length step, whatever the rating does
        let next_h = lo.max(a.0 + 1e-6 * (hi_m - lo_m));
        let b = (next_h, model.discharge_m3s(next_h)?);
        points.push(b);
        a = b;
    }
    Ok(points)
}

/// The smallest error (as a fraction) at which [`breakpoints_within`] needs at most `count`
/// breakpoints (at least 2), with those breakpoints.
pub fn fewest_error(
    model: &RatingModel,
    lo_m: f64,
    hi_m: f64,
    count: usize,
) -> Result<(f64, Vec<Breakpoint>), RatingError> {
    let count = count.max(2);
    let (mut lo, mut hi) = (1e-7, 1.0);
    let mut best = breakpoints_within(model, lo_m, hi_m, hi)?;
    for _ in 0..40 {
        let mid = (lo * hi).sqrt();
        let p = breakpoints_within(model, lo_m, hi_m, mid)?;
        if p.len() <= count {
            hi = mid;
            best = p;
        } else {
            lo = mid;
        }
        if hi / lo < 1.001 {
            break;
        }
    }
    Ok((hi, best))
}

/// Heads splitting `[lo_m, hi_m]` into `n` segments of equal ratio (geometric), the usual way
/// to give a power-law segment each part of a rating.
pub fn segment_bounds(lo_m: f64, hi_m: f64, n: usize) -> Vec<f64> {
    let n = n.max(1);
    (0..=n)
        .map(|k| lo_m * (hi_m / lo_m).powf(k as f64 / n as f64))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::rating::{LossMethod, Structure};

    #[test]
    fn every_segment_meets_the_error_at_fine_heads() {
        let m = RatingModel::new(Structure::rectangular(0.5, 1.0, 0.2, 1.0, LossMethod::FixedCd(0.98))).expect("model");
        let p = breakpoints_within(&m, 0.05, 0.6, 0.005).expect("table");
        assert!(p.len() > 3 && p.len() < 40, "{}", p.len());
        for w in p.windows(2) {
            assert!(interpolation_error(&m, w[0], w[1], 2000).expect("err") <= 0.005);
        }
        let (err, q) = fewest_error(&m, 0.05, 0.6, 8).expect("fewest");
        assert!(q.len() <= 8 && err > 0.0 && err < 0.05);
    }
}
