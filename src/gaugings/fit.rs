//! The statistics of a rating check, as pure functions: the weighted mean of deviations, a
//! weighted straight line (a trend), and the weighted least-squares fit of a coefficient factor
//! and a gauge-zero error to gauged discharges.
//!
//! Weights are 1/u² of each gauging's independent standard uncertainty (JCGM 100 §5.1; the
//! weighted mean and the weighted straight line are the textbook minimum-variance estimates,
//! e.g. Bevington & Robinson 2003 ch. 4 and 6, from memory). Covariances are computed from the
//! stated uncertainties ("absolute sigma"); where the scatter exceeds them (reduced χ² above 1)
//! they are also given scaled by the reduced χ² (the Birge ratio, Birge 1932, from memory).

/// A weighted mean with its standard uncertainty.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WeightedMean {
    /// The mean.
    pub mean: f64,
    /// Its standard uncertainty from the stated uncertainties.
    pub u: f64,
    /// χ² of the values about the mean.
    pub chi2: f64,
    /// Degrees of freedom (n − 1).
    pub dof: usize,
}

impl WeightedMean {
    /// The standard uncertainty, scaled up by √(χ²/ν) where the scatter exceeds the stated
    /// uncertainties.
    pub fn u_scaled(&self) -> f64 {
        self.u * birge(self.chi2, self.dof)
    }
}

/// √(χ²/ν), at least 1 (1 without degrees of freedom).
pub fn birge(chi2: f64, dof: usize) -> f64 {
    if dof == 0 {
        1.0
    } else {
        (chi2 / dof as f64).sqrt().max(1.0)
    }
}

/// The weighted mean of `values` with standard uncertainties `u` (all > 0).
pub fn weighted_mean(values: &[f64], u: &[f64]) -> Option<WeightedMean> {
    if values.is_empty() || values.len() != u.len() || u.iter().any(|u| !(u.is_finite() && *u > 0.0)) {
        return None;
    }
    let w: Vec<f64> = u.iter().map(|u| 1.0 / (u * u)).collect();
    let sw: f64 = w.iter().sum();
    let mean = values.iter().zip(&w).map(|(v, w)| v * w).sum::<f64>() / sw;
    let chi2 = values.iter().zip(&w).map(|(v, w)| w * (v - mean).powi(2)).sum();
    Some(WeightedMean {
        mean,
        u: 1.0 / sw.sqrt(),
        chi2,
        dof: values.len() - 1,
    })
}

/// A weighted straight line y = a + b·(x − x̄), x̄ the weighted mean of x.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Line {
    /// The weighted mean of x.
    pub x_mean: f64,
    /// y at x̄.
    pub a: f64,
    /// The slope.
    pub b: f64,
    /// Standard uncertainty of the slope, from the stated uncertainties.
    pub u_b: f64,
    /// χ² about the line.
    pub chi2: f64,
    /// Degrees of freedom (n − 2).
    pub dof: usize,
}

impl Line {
    /// The slope's standard uncertainty scaled by √(χ²/ν) where the scatter exceeds the stated
    /// uncertainties.
    pub fn u_b_scaled(&self) -> f64 {
        self.u_b * birge(self.chi2, self.dof)
    }
}

/// The weighted least-squares line through (x, y) with standard uncertainties `u` of y; `None`
/// with fewer than three points or no spread in x.
pub fn weighted_line(x: &[f64], y: &[f64], u: &[f64]) -> Option<Line> {
    let n = x.len();
    if n < 3 || y.len() != n || u.len() != n || u.iter().any(|u| !(u.is_finite() && *u > 0.0)) {
        return None;
    }
    let w: Vec<f64> = u.iter().map(|u| 1.0 / (u * u)).collect();
    let sw: f64 = w.iter().sum();
    let x_mean = x.iter().zip(&w).map(|(x, w)| x * w).sum::<f64>() / sw;
    let sxx: f64 = x.iter().zip(&w).map(|(x, w)| w * (x - x_mean).powi(2)).sum();
    if sxx.is_nan() || sxx <= 0.0 {
        return None;
    }
    let a = y.iter().zip(&w).map(|(y, w)| y * w).sum::<f64>() / sw;
    let b = x
        .iter()
        .zip(y)
        .zip(&w)
        .map(|((x, y), w)| w * (x - x_mean) * y)
        .sum::<f64>()
        / sxx;
    let chi2 = x
        .iter()
        .zip(y)
        .zip(&w)
        .map(|((x, y), w)| w * (y - a - b * (x - x_mean)).powi(2))
        .sum();
    Some(Line {
        x_mean,
        a,
        b,
        u_b: 1.0 / sxx.sqrt(),
        chi2,
        dof: n - 2,
    })
}

/// The fit of Q_gauged = f · Q_rating(h + dz).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FactorZeroFit {
    /// The coefficient factor f.
    pub factor: f64,
    /// The gauge-zero error dz (m): the gauge reads dz low where it is positive.
    pub zero_m: f64,
    /// Covariance of (f, dz) from the stated uncertainties: [[var f, cov], [cov, var dz]].
    pub covariance: [[f64; 2]; 2],
    /// χ² at the solution.
    pub chi2: f64,
    /// Degrees of freedom (n − 2).
    pub dof: usize,
    /// Gauss–Newton iterations taken.
    pub iterations: usize,
}

impl FactorZeroFit {
    /// Standard uncertainties of f and dz (scaled by √(χ²/ν) where the scatter exceeds the
    /// stated uncertainties).
    pub fn u_scaled(&self) -> (f64, f64) {
        let s = birge(self.chi2, self.dof);
        (self.covariance[0][0].sqrt() * s, self.covariance[1][1].sqrt() * s)
    }

    /// The correlation of f and dz.
    pub fn correlation(&self) -> f64 {
        self.covariance[0][1] / (self.covariance[0][0] * self.covariance[1][1]).sqrt()
    }
}

/// Why a fit could not be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FitError {
    /// Too few points.
    #[error("{0} usable gauging(s): the factor and the zero need at least 3")]
    TooFew(usize),
    /// The rating has no discharge at some corrected head.
    #[error("the rating has no discharge at head {0} m (corrected by the fitted zero)")]
    NoRating(f64),
    /// The normal equations are singular: the data cannot separate f from dz.
    #[error("the gaugings cannot separate the factor from the zero (singular fit)")]
    Singular,
    /// No convergence.
    #[error("the fit did not converge in {0} iterations")]
    NoConvergence(usize),
}

/// The normal equations JᵀWJ, the gradient JᵀWr and χ².
type Normal = ([[f64; 2]; 2], [f64; 2], f64);

/// Fits f and dz by weighted least squares (Gauss–Newton, started at f = 1, dz = 0):
/// minimises Σ ((Q_i − f·q(h_i + dz)) / σ_i)² where σ_i is the standard uncertainty of Q_i
/// (m³/s). `q` is the rating and `dq` its derivative with respect to head.
pub fn fit_factor_zero(
    heads_m: &[f64],
    discharges: &[f64],
    sigma: &[f64],
    q: &dyn Fn(f64) -> Option<f64>,
    dq: &dyn Fn(f64) -> Option<f64>,
) -> Result<FactorZeroFit, FitError> {
    let n = heads_m.len();
    if n < 3 {
        return Err(FitError::TooFew(n));
    }
    let (mut f, mut dz) = (1.0, 0.0);
    let normal = |f: f64, dz: f64| -> Result<Normal, FitError> {
        let (mut a, mut g, mut chi2) = ([[0.0; 2]; 2], [0.0; 2], 0.0);
        for k in 0..n {
            let h = heads_m[k] + dz;
            let qk = q(h).ok_or(FitError::NoRating(h))?;
            let dk = dq(h).ok_or(FitError::NoRating(h))?;
            let w = 1.0 / (sigma[k] * sigma[k]);
            let r = discharges[k] - f * qk;
            let j = [qk, f * dk];
            for (p, jp) in j.iter().enumerate() {
                g[p] += w * jp * r;
                for (s, js) in j.iter().enumerate() {
                    a[p][s] += w * jp * js;
                }
            }
            chi2 += w * r * r;
        }
        Ok((a, g, chi2))
    };
    let invert = |a: [[f64; 2]; 2]| -> Result<[[f64; 2]; 2], FitError> {
        let det = a[0][0] * a[1][1] - a[0][1] * a[1][0];
        if !(det.abs() > 1e-300 && det.is_finite()) {
            return Err(FitError::Singular);
        }
        Ok([[a[1][1] / det, -a[0][1] / det], [-a[1][0] / det, a[0][0] / det]])
    };
    const MAX: usize = 100;
    for it in 1..=MAX {
        let (a, g, _) = normal(f, dz)?;
        let c = invert(a)?;
        let step = [c[0][0] * g[0] + c[0][1] * g[1], c[1][0] * g[0] + c[1][1] * g[1]];
        f += step[0];
        dz += step[1];
        // converged when a step changes f by less than 1e-12 of itself and dz by less than 1e-12 m
        // (far below anything a gauging resolves; the rating's derivative is numerical, so the
        // steps stall near the rounding level rather than reach zero)
        let small = step[0].abs() <= 1e-12 * f.abs().max(1.0) && step[1].abs() <= 1e-12;
        if small {
            let (a, _, chi2) = normal(f, dz)?;
            return Ok(FactorZeroFit {
                factor: f,
                zero_m: dz,
                covariance: invert(a)?,
                chi2,
                dof: n - 2,
                iterations: it,
            });
        }
    }
    Err(FitError::NoConvergence(MAX))
}

/// Fits f alone with dz fixed at 0: f = Σ w Q q / Σ w q², var f = 1 / Σ w q² (linear least
/// squares). Returns (f, u(f) from the stated uncertainties, χ², ν).
pub fn fit_factor(discharges: &[f64], rated: &[f64], sigma: &[f64]) -> Option<(f64, f64, f64, usize)> {
    let n = discharges.len();
    if n == 0 {
        return None;
    }
    let (mut sqq, mut sqr) = (0.0, 0.0);
    for k in 0..n {
        let w = 1.0 / (sigma[k] * sigma[k]);
        sqq += w * rated[k] * rated[k];
        sqr += w * rated[k] * discharges[k];
    }
    if sqq.is_nan() || sqq <= 0.0 {
        return None;
    }
    let f = sqr / sqq;
    let chi2 = (0..n)
        .map(|k| ((discharges[k] - f * rated[k]) / sigma[k]).powi(2))
        .sum();
    Some((f, 1.0 / sqq.sqrt(), chi2, n - 1))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn weighted_mean_and_line_by_hand() {
        // analytic: equal weights give the plain mean; u = σ/√n
        let m = weighted_mean(&[1.0, 2.0, 3.0], &[0.5, 0.5, 0.5]).expect("mean");
        assert!((m.mean - 2.0).abs() < 1e-15 && (m.u - 0.5 / 3f64.sqrt()).abs() < 1e-15);
        assert!((m.chi2 - 8.0).abs() < 1e-12, "Σ (v − 2)² / 0.25 = 8");
        // a point with twice the uncertainty weighs a quarter
        let m = weighted_mean(&[0.0, 10.0], &[1.0, 2.0]).expect("mean");
        assert!((m.mean - 2.0).abs() < 1e-12);
        // an exact line: slope 2, no scatter
        let l = weighted_line(&[0.0, 1.0, 2.0, 3.0], &[1.0, 3.0, 5.0, 7.0], &[1.0; 4]).expect("line");
        assert!((l.b - 2.0).abs() < 1e-12 && l.chi2 < 1e-20);
        // u(b) = σ / √Σ(x − x̄)² = 1/√5 (analytic)
        assert!((l.u_b - 1.0 / 5f64.sqrt()).abs() < 1e-12);
        assert!(weighted_line(&[1.0, 1.0, 1.0], &[1.0, 2.0, 3.0], &[1.0; 3]).is_none());
    }

    #[test]
    fn exact_data_give_back_the_factor_and_zero() {
        // a power-law rating q = 1.7 h^1.55 (invented); data made with f = 0.97, dz = 0.004 m
        let q = |h: f64| (h > 0.0).then(|| 1.7 * h.powf(1.55));
        let dq = |h: f64| (h > 0.0).then(|| 1.7 * 1.55 * h.powf(0.55));
        let heads = [0.05, 0.1, 0.2, 0.3, 0.45];
        let gauged: Vec<f64> = heads.iter().map(|h| 0.97 * q(h + 0.004).expect("q")).collect();
        let sigma: Vec<f64> = gauged.iter().map(|g| 0.025 * g).collect();
        let fit = fit_factor_zero(&heads, &gauged, &sigma, &q, &dq).expect("fit");
        assert!((fit.factor - 0.97).abs() < 1e-12, "{fit:?}");
        assert!((fit.zero_m - 0.004).abs() < 1e-12, "{fit:?}");
        assert!(fit.chi2 < 1e-20);
        assert!(fit.correlation().abs() < 1.0);
        // with dz fixed at 0, the factor alone absorbs what it can
        let rated: Vec<f64> = heads.iter().map(|&h| q(h).expect("q")).collect();
        let (f, u, _, _) = fit_factor(&gauged, &rated, &sigma).expect("factor");
        assert!(f > 0.97 && u > 0.0);
        assert!(matches!(
            fit_factor_zero(&heads[..2], &gauged[..2], &sigma[..2], &q, &dq),
            Err(FitError::TooFew(2))
        ));
    }
}
