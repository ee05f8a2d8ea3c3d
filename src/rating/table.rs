//! A rating table: the model evaluated over a sequence of heads, each row checked against the
//! limits of application.

use super::limits::broken_limits;
use super::model::{RatingModel, RatingPoint};

/// Largest number of rows a table may have; beyond it the step is almost surely a typo.
pub const MAX_ROWS: usize = 100_000;

/// The head sequence asked for cannot be built.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum HeadRangeError {
    /// A bound or step is not a positive finite number.
    #[error("{what} must be a number greater than zero (got {value})")]
    NotPositive {
        /// `from`, `to` or `step`.
        what: &'static str,
        /// The value given (in the caller's unit).
        value: f64,
    },
    /// `from` lies above `to`.
    #[error("the first head {from} is above the last head {to}: give --from below --to")]
    Reversed {
        /// First head.
        from: f64,
        /// Last head.
        to: f64,
    },
    /// A head below the crest.
    #[error("{what} must be zero or more (got {value}): heads are measured above the crest")]
    Negative {
        /// Which flag.
        what: &'static str,
        /// Its value.
        value: f64,
    },
    /// Too many rows.
    #[error("{rows} rows is more than the {max} a table may have: use a larger --step")]
    TooManyRows {
        /// Rows the request would give.
        rows: f64,
        /// The ceiling.
        max: usize,
    },
}

/// The decimal scale 10^d (d ≤ 12) at which `x` is a whole number, to 1e-9 of itself.
fn decimal_scale(x: f64) -> f64 {
    let mut scale = 1.0;
    for _ in 0..12 {
        if ((x * scale).round() - x * scale).abs() <= 1e-9 * (x * scale).abs().max(1e-9) {
            break;
        }
        scale *= 10.0;
    }
    scale
}

/// Heads from `from` to `to` (inclusive) every `step`, in one unit; `from` may be 0 (the crest,
/// no flow). The last head is `to` even when the range is not a whole number of steps. Heads
/// come from whole numbers of steps at the decimal scale of `from` and `step`, head = (F + k·S)/10^d,
/// so they print as people write them (0.07, not 0.06999999999999999).
pub fn head_sequence(from: f64, to: f64, step: f64) -> Result<Vec<f64>, HeadRangeError> {
    if !(from.is_finite() && from >= 0.0) {
        return Err(HeadRangeError::Negative {
            what: "--from",
            value: from,
        });
    }
    for (what, value) in [("--to", to), ("--step", step)] {
        if !(value.is_finite() && value > 0.0) {
            return Err(HeadRangeError::NotPositive { what, value });
        }
    }
    if from > to {
        return Err(HeadRangeError::Reversed { from, to });
    }
    let n = ((to - from) / step + 1e-9).floor();
    if n + 2.0 > MAX_ROWS as f64 {
        return Err(HeadRangeError::TooManyRows {
            rows: n + 1.0,
            max: MAX_ROWS,
        });
    }
    let n = n as usize;
    let scale = decimal_scale(from).max(decimal_scale(step));
    let (first, each) = ((from * scale).round(), (step * scale).round());
    let mut heads: Vec<f64> = (0..=n).map(|k| (first + k as f64 * each) / scale).collect();
    let last = heads[heads.len() - 1];
    if to - last > 1e-9 * step {
        heads.push(to);
    } else {
        // land exactly on `to`, not on a rounded neighbour of it
        let len = heads.len();
        heads[len - 1] = to;
    }
    Ok(heads)
}

/// A step from the 1–2–5 series giving roughly 50 to 100 rows over `span`.
pub fn sensible_step(span: f64) -> f64 {
    let raw = span / 60.0;
    if !(raw.is_finite() && raw > 0.0) {
        return 0.01;
    }
    let decade = 10f64.powf(raw.log10().floor());
    [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * decade)
        .find(|s| *s >= raw * 0.999)
        .unwrap_or(10.0 * decade)
}

/// One row of a rating table.
#[derive(Debug, Clone, PartialEq)]
pub struct RatingRow {
    /// Gauged head above the crest (m).
    pub head_m: f64,
    /// The computed point, or `None` when no discharge exists at this head (see `notes`).
    pub point: Option<RatingPoint>,
    /// True when the point was computed and lies within every limit of application.
    pub valid: bool,
    /// Why the row is not valid (empty when it is).
    pub notes: Vec<String>,
}

/// A computed rating table.
#[derive(Debug, Clone, PartialEq)]
pub struct RatingTable {
    /// Rows in ascending head order.
    pub rows: Vec<RatingRow>,
}

impl RatingTable {
    /// Evaluates `model` at every head (m) and checks the limits of application. (The rating
    /// equation is the station's, [`super::RatingEquation`], not a fit to this table.)
    pub fn compute(model: &RatingModel, heads_m: &[f64]) -> Self {
        let rows: Vec<RatingRow> = heads_m
            .iter()
            .map(|&head_m| match model.point(head_m) {
                // the water level with the crest: no flow, nothing to rate
                _ if head_m == 0.0 => RatingRow {
                    head_m,
                    point: Some(RatingPoint {
                        head_m: 0.0,
                        energy_head_m: 0.0,
                        discharge_m3s: 0.0,
                        critical_depth_m: 0.0,
                        cd: f64::NAN,
                        cv: f64::NAN,
                        froude_approach: 0.0,
                        approach_velocity_m_s: 0.0,
                        control_critical_states: 1,
                    }),
                    valid: false,
                    notes: vec!["no flow: the water is level with the crest".into()],
                },
                Ok(point) => {
                    let broken = broken_limits(model.structure(), &point);
                    RatingRow {
                        head_m,
                        point: Some(point),
                        valid: broken.is_empty(),
                        notes: broken.iter().map(|l| format!("outside {}", l.id)).collect(),
                    }
                }
                Err(e) => RatingRow {
                    head_m,
                    point: None,
                    valid: false,
                    notes: vec![e.to_string()],
                },
            })
            .collect();
        Self { rows }
    }

    /// Number of rows outside the limits of application.
    pub fn invalid_rows(&self) -> usize {
        self.rows.iter().filter(|r| !r.valid).count()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn head_sequence_includes_both_ends() {
        let h = head_sequence(0.03, 0.55, 0.01).expect("ok");
        assert_eq!(h.len(), 53);
        assert!((h[52] - 0.55).abs() < 1e-15);
        let h = head_sequence(0.1, 0.25, 0.1).expect("ok");
        assert_eq!(h, vec![0.1, 0.2, 0.25]);
    }

    #[test]
    fn head_sequence_rejects_bad_input() {
        assert!(matches!(
            head_sequence(0.5, 0.1, 0.01),
            Err(HeadRangeError::Reversed { .. })
        ));
        assert!(matches!(
            head_sequence(0.1, 0.5, 0.0),
            Err(HeadRangeError::NotPositive { .. })
        ));
        assert!(matches!(
            head_sequence(0.1, 5000.0, 1e-6),
            Err(HeadRangeError::TooManyRows { .. })
        ));
    }

    #[test]
    fn sensible_steps_follow_the_1_2_5_series() {
        assert!((sensible_step(0.52) - 0.01).abs() < 1e-15);
        assert!((sensible_step(2.0) - 0.05).abs() < 1e-15);
        assert!((sensible_step(0.1) - 0.002).abs() < 1e-15);
    }
}
