//! A rating calibrated against field gaugings (`[calibration]` in a station file, written by
//! `flumerate gaugings --write-calibration`): Q = f · Q_rating(h + dz), with f the coefficient
//! factor and dz the gauge-zero correction the gaugings gave, and their uncertainties.

/// The calibration of a rating against gaugings.
#[derive(Debug, Clone, PartialEq)]
pub struct Calibration {
    /// The coefficient factor f.
    pub factor: f64,
    /// Its expanded (k = 2) uncertainty, % of f.
    pub factor_u95_pct: f64,
    /// The gauge-zero correction dz (m), added to every gauged head.
    pub zero_offset_m: f64,
    /// Its expanded (k = 2) uncertainty (m).
    pub zero_offset_u95_m: f64,
    /// How many gaugings it rests on.
    pub gaugings: usize,
    /// The first gauging's date.
    pub from: String,
    /// The last gauging's date.
    pub to: String,
    /// SHA-256 of the gaugings file.
    pub source_sha256: String,
    /// The correlation of the factor and the zero in the fit (recorded; the uncertainty budget
    /// treats the two as independent, which overstates the calibrated rating's uncertainty when
    /// the correlation is negative, as it usually is).
    pub factor_zero_correlation: f64,
    /// The gaugings' mean deviation from the uncalibrated rating (%), when recorded.
    pub mean_deviation_pct: Option<f64>,
    /// Its expanded uncertainty (%).
    pub mean_deviation_u95_pct: Option<f64>,
}

impl Calibration {
    /// One sentence for reports: what is applied and what it rests on, `dz` in `length` units of
    /// `per_m` per metre.
    pub fn sentence(&self, length: &str, per_m: f64) -> String {
        let check = match (self.mean_deviation_pct, self.mean_deviation_u95_pct) {
            (Some(d), Some(u)) => format!("; their mean deviation from the uncalibrated rating: {d:+.2} % ± {u:.2} %"),
            _ => String::new(),
        };
        format!(
            "calibrated against {} field gauging(s) from {} to {}: Q = {:.4} · Q_rating(h {} {:.4} {length}) (factor ±{:.2} %, zero ±{:.4} {length}, k = 2){check}",
            self.gaugings,
            self.from,
            self.to,
            self.factor,
            if self.zero_offset_m < 0.0 { '-' } else { '+' },
            self.zero_offset_m.abs() * per_m,
            self.factor_u95_pct,
            self.zero_offset_u95_m * per_m
        )
    }
}
