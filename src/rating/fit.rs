//! The rating equation Q = K·(h + h0)^u fitted to a computed rating table.
//!
//! For a fixed h0 the model is linear in ln Q = ln K + u·ln(h + h0), so K and u follow from
//! ordinary least squares on the logarithms (equal weight to relative errors); h0 is chosen by a
//! grid scan refined with golden-section search (Kiefer 1953) to minimise that sum of squares.
//! This is the usual power-law form of a stage–discharge relation (ISO 18320; WMO-No. 1044,
//! *Manual on Stream Gauging* vol. II, §1.3), reported with its largest deviation from the table.

/// A fitted rating equation in SI units: Q (m³/s) = K·(h (m) + h0 (m))^u.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PowerLaw {
    /// Coefficient K (m³/s per m^u).
    pub k: f64,
    /// Offset h0 (m) added to the head.
    pub h0_m: f64,
    /// Exponent u.
    pub u: f64,
    /// Largest |Q_fit − Q|/Q over the points fitted.
    pub max_relative_deviation: f64,
    /// Number of points fitted.
    pub points: usize,
}

impl PowerLaw {
    /// Discharge (m³/s) given by the equation at `head_m`.
    pub fn discharge_m3s(&self, head_m: f64) -> f64 {
        let x = head_m + self.h0_m;
        if x <= 0.0 {
            0.0
        } else {
            self.k * x.powf(self.u)
        }
    }
}

/// Least-squares line through (x, y): returns (intercept, slope, sum of squared residuals).
fn line_fit(x: &[f64], y: &[f64]) -> (f64, f64, f64) {
    let n = x.len() as f64;
    let mx = x.iter().sum::<f64>() / n;
    let my = y.iter().sum::<f64>() / n;
    let sxx: f64 = x.iter().map(|v| (v - mx).powi(2)).sum();
    let sxy: f64 = x.iter().zip(y).map(|(a, b)| (a - mx) * (b - my)).sum();
    let slope = if sxx > 0.0 { sxy / sxx } else { 0.0 };
    let intercept = my - slope * mx;
    let ssr = x.iter().zip(y).map(|(a, b)| (b - intercept - slope * a).powi(2)).sum();
    (intercept, slope, ssr)
}

/// Fits Q = K·(h + h0)^u to `(head_m, discharge_m3s)` pairs with positive discharge. Needs at
/// least three points; returns `None` otherwise.
pub fn fit_power_law(points: &[(f64, f64)]) -> Option<PowerLaw> {
    let pts: Vec<(f64, f64)> = points
        .iter()
        .copied()
        .filter(|(h, q)| h.is_finite() && q.is_finite() && *q > 0.0)
        .collect();
    if pts.len() < 3 {
        return None;
    }
    let h_min = pts.iter().map(|p| p.0).fold(f64::INFINITY, f64::min);
    let h_max = pts.iter().map(|p| p.0).fold(f64::NEG_INFINITY, f64::max);
    // The search for h0 runs on at most SEARCH_POINTS rows spread evenly through the table (a
    // rating is smooth, so they fix h0 as well as all rows would, at a fraction of the cost of
    // long tables); K and u are then fitted on every row at that h0.
    const SEARCH_POINTS: usize = 400;
    let stride = pts.len().div_ceil(SEARCH_POINTS);
    let search: Vec<(f64, f64)> = pts.iter().copied().step_by(stride).collect();
    let fit_on = |set: &[(f64, f64)], h0: f64| {
        let x: Vec<f64> = set.iter().map(|p| (p.0 + h0).ln()).collect();
        let y: Vec<f64> = set.iter().map(|p| p.1.ln()).collect();
        line_fit(&x, &y)
    };
    let sse = |h0: f64| fit_on(&search, h0);
    // h0 may not make any head non-positive; search (−0.95·h_min, h_max − h_min]
    let (lo, hi) = (-0.95 * h_min, (h_max - h_min).max(h_min));
    let n = 60;
    let grid: Vec<f64> = (0..=n).map(|i| lo + (hi - lo) * i as f64 / n as f64).collect();
    let best = grid
        .iter()
        .copied()
        .min_by(|a, b| sse(*a).2.total_cmp(&sse(*b).2))
        .expect("non-empty grid");
    let step = (hi - lo) / n as f64;
    let (mut a, mut b) = ((best - step).max(lo), (best + step).min(hi));
    let ratio = (5f64.sqrt() - 1.0) / 2.0;
    for _ in 0..100 {
        let c = b - ratio * (b - a);
        let d = a + ratio * (b - a);
        if sse(c).2 < sse(d).2 {
            b = d;
        } else {
            a = c;
        }
        if (b - a).abs() < 1e-10 * h_max {
            break;
        }
    }
    let h0 = 0.5 * (a + b);
    let (ln_k, u, _) = fit_on(&pts, h0);
    let mut law = PowerLaw {
        k: ln_k.exp(),
        h0_m: h0,
        u,
        max_relative_deviation: 0.0,
        points: pts.len(),
    };
    law.max_relative_deviation = pts
        .iter()
        .map(|&(h, q)| ((law.discharge_m3s(h) - q) / q).abs())
        .fold(0.0, f64::max);
    Some(law)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn recovers_an_exact_power_law() {
        // analytic: data generated from Q = 1.7·(h + 0.01)^1.55 must be fitted back exactly
        let pts: Vec<(f64, f64)> = (1..=40)
            .map(|i| {
                let h = 0.02 * i as f64;
                (h, 1.7 * (h + 0.01f64).powf(1.55))
            })
            .collect();
        let law = fit_power_law(&pts).expect("fit");
        assert_relative_eq!(law.u, 1.55, max_relative = 1e-6);
        assert_relative_eq!(law.k, 1.7, max_relative = 1e-5);
        assert!((law.h0_m - 0.01).abs() < 1e-6, "{}", law.h0_m);
        assert!(law.max_relative_deviation < 1e-6);
    }

    #[test]
    fn too_few_points_give_none() {
        assert!(fit_power_law(&[(0.1, 0.01), (0.2, 0.03)]).is_none());
    }
}
