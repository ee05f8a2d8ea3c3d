//! Corrections to logged heads: gauge zero, drift against field visits, barometric compensation.
//!
//! - Gauge zero: head = stage − zero, where zero is the logger stage with the water level with the
//!   crest.
//! - Drift: at each field visit the staff-gauge head is compared with the logger head at that time
//!   (interpolated linearly between the readings around it); the difference is applied to every
//!   reading, interpolated linearly in time between visits and held constant before the first and
//!   after the last visit (ISO 18365:2013 describes correcting recorder drift against reference
//!   gauge readings; the linear distribution in time is the usual practice, no source).
//! - Barometric compensation: depth = (p_logger − p_baro)/(ρ·g), with the barometric pressure
//!   interpolated linearly in time and ρ the density of water at the logged or given temperature
//!   from Kell's (1975) formula (J. Chem. Eng. Data 20(1), 97–105; coefficients from memory,
//!   checked in the tests against tabulated densities).

/// A series of (time, value) pairs sorted by time, for interpolation.
#[derive(Debug, Clone, PartialEq)]
pub struct TimeSeries {
    points: Vec<(i64, f64)>,
}

impl TimeSeries {
    /// Builds from pairs in any order; non-finite values are dropped (they are not readings).
    pub fn new(mut points: Vec<(i64, f64)>) -> Self {
        points.retain(|p| p.1.is_finite());
        points.sort_by_key(|p| p.0);
        Self { points }
    }

    /// Number of usable points.
    pub fn len(&self) -> usize {
        self.points.len()
    }

    /// True when there are no points.
    pub fn is_empty(&self) -> bool {
        self.points.is_empty()
    }

    /// The value at `t` (ms), interpolated linearly between the points around it when they are at
    /// most `max_gap_ms` apart (an exact hit needs no neighbour); `None` outside the series or
    /// across a longer gap.
    pub fn at(&self, t: i64, max_gap_ms: i64) -> Option<f64> {
        let i = self.points.partition_point(|p| p.0 < t);
        if let Some(p) = self.points.get(i) {
            if p.0 == t {
                return Some(p.1);
            }
        }
        // before the first and after the last point the end value holds, within the same reach
        if i == 0 {
            return self.points.first().filter(|p| p.0 - t <= max_gap_ms).map(|p| p.1);
        }
        if i >= self.points.len() {
            return self.points.last().filter(|p| t - p.0 <= max_gap_ms).map(|p| p.1);
        }
        let ((t0, v0), (t1, v1)) = (self.points[i - 1], self.points[i]);
        if t1 - t0 > max_gap_ms {
            return None;
        }
        Some(v0 + (v1 - v0) * (t - t0) as f64 / (t1 - t0) as f64)
    }
}

/// One field visit after comparison with the logger.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DriftPoint {
    /// Visit time (UTC ms).
    pub time_ms: i64,
    /// Head read on the staff gauge (m above the crest).
    pub staff_head_m: f64,
    /// Logger head at that time before drift correction (m), if the logger had readings around it.
    pub logger_head_m: Option<f64>,
}

impl DriftPoint {
    /// Staff minus logger (m), when both are known.
    pub fn drift_m(&self) -> Option<f64> {
        self.logger_head_m.map(|l| self.staff_head_m - l)
    }
}

/// Compares each visit with the logger heads (`logger`, before drift correction).
pub fn drift_points(visits: &[(i64, f64)], logger: &TimeSeries, max_gap_ms: i64) -> Vec<DriftPoint> {
    let mut v: Vec<DriftPoint> = visits
        .iter()
        .map(|&(t, staff)| DriftPoint {
            time_ms: t,
            staff_head_m: staff,
            logger_head_m: logger.at(t, max_gap_ms),
        })
        .collect();
    v.sort_by_key(|d| d.time_ms);
    v
}

/// The usable visits as (time, staff − logger) pairs sorted by time.
pub fn usable_drift(points: &[DriftPoint]) -> Vec<(i64, f64)> {
    let mut v: Vec<(i64, f64)> = points
        .iter()
        .filter_map(|p| p.drift_m().map(|d| (p.time_ms, d)))
        .collect();
    v.sort_by_key(|p| p.0);
    v
}

/// The drift correction (m) to add at time `t`, from [`usable_drift`] pairs: linear in time
/// between visits, constant before the first and after the last; zero without usable visits.
pub fn drift_at_usable(usable: &[(i64, f64)], t: i64) -> f64 {
    match usable {
        [] => 0.0,
        [(_, d)] => *d,
        _ => {
            let i = usable.partition_point(|p| p.0 < t);
            if i == 0 {
                return usable[0].1;
            }
            if i >= usable.len() {
                return usable[usable.len() - 1].1;
            }
            let ((t0, d0), (t1, d1)) = (usable[i - 1], usable[i]);
            if t1 == t0 {
                return d1;
            }
            d0 + (d1 - d0) * (t - t0) as f64 / (t1 - t0) as f64
        }
    }
}

/// Density of air-free water at `temp_c` °C (kg/m³), Kell (1975), valid 0–150 °C.
pub fn water_density_kg_m3(temp_c: f64) -> f64 {
    let t = temp_c;
    (999.83952 + 16.945176 * t - 7.9870401e-3 * t * t - 46.170461e-6 * t.powi(3) + 105.56302e-9 * t.powi(4)
        - 280.54253e-12 * t.powi(5))
        / (1.0 + 16.879850e-3 * t)
}

/// Water depth (m) over a pressure sensor: (p − p_baro)/(ρ(T)·g), pressures in pascals.
pub fn depth_from_pressure_m(pressure_pa: f64, baro_pa: f64, temp_c: f64, g: f64) -> f64 {
    (pressure_pa - baro_pa) / (water_density_kg_m3(temp_c) * g)
}

/// Pascals per unit of a pressure unit name (`kPa`, `hPa`, `mbar`, `bar`, `Pa`, `psi`), or `None`.
pub fn pascals_per(unit: &str) -> Option<f64> {
    match unit.to_ascii_lowercase().as_str() {
        "pa" => Some(1.0),
        "hpa" | "mbar" => Some(100.0),
        "kpa" => Some(1000.0),
        "bar" => Some(100_000.0),
        // 1 psi = 6894.757293168 Pa (NIST SP 811)
        "psi" => Some(6_894.757_293_168),
        _ => None,
    }
}

/// Metres per unit of a stage unit name (`m`, `cm`, `mm`, `ft`, `in`), or `None`.
pub fn metres_per(unit: &str) -> Option<f64> {
    match unit {
        "m" => Some(1.0),
        "cm" => Some(0.01),
        "mm" => Some(0.001),
        "ft" => Some(0.3048),
        "in" => Some(0.0254),
        _ => None,
    }
}

/// A drift correction above this (m) is warned about: a pressure sensor that has moved by more
/// than 5 mm between visits deserves a look at its mounting (common practice, no source).
pub const DRIFT_WARNING_M: f64 = 0.005;

/// Warnings about the drift found at the visits, from [`usable_drift`] pairs: a correction
/// larger than [`DRIFT_WARNING_M`], and a correction that changes sign between visits (a
/// logger does not drift back and forth; the staff reading or the visit time may be wrong).
pub fn drift_warnings(usable: &[(i64, f64)]) -> Vec<String> {
    let when = |t: i64| {
        chrono::DateTime::from_timestamp_millis(t)
            .map_or_else(|| t.to_string(), |d| d.format("%Y-%m-%d %H:%M UTC").to_string())
    };
    let mut out = Vec::new();
    for &(t, d) in usable {
        if d.abs() > DRIFT_WARNING_M {
            out.push(format!(
                "drift at the visit of {} is {:+.1} mm, more than {} mm: check the sensor's mounting and the staff reading",
                when(t),
                d * 1000.0,
                DRIFT_WARNING_M * 1000.0
            ));
        }
    }
    for w in usable.windows(2) {
        let ((t0, d0), (t1, d1)) = (w[0], w[1]);
        if d0 * d1 < 0.0 {
            out.push(format!(
                "drift changes sign between the visits of {} ({:+.1} mm) and {} ({:+.1} mm): a logger does not drift back and forth; check both staff readings and their times",
                when(t0),
                d0 * 1000.0,
                when(t1),
                d1 * 1000.0
            ));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kell_density_matches_tabulated_values() {
        // CRC Handbook of Chemistry and Physics, density of water (from memory):
        // 4 °C 999.972, 10 °C 999.702, 20 °C 998.207, 30 °C 995.650 kg/m³
        for (t, rho) in [(4.0, 999.972), (10.0, 999.702), (20.0, 998.207), (30.0, 995.650)] {
            assert!(
                (water_density_kg_m3(t) - rho).abs() < 0.01,
                "{t} °C: {}",
                water_density_kg_m3(t)
            );
        }
    }

    #[test]
    fn interpolation_respects_gaps_and_ends() {
        let s = TimeSeries::new(vec![(0, 1.0), (100, 2.0), (1000, 3.0), (50, f64::NAN)]);
        assert_eq!(s.len(), 3);
        assert_eq!(s.at(50, 200), Some(1.5));
        assert_eq!(s.at(100, 0), Some(2.0));
        assert_eq!(s.at(500, 200), None, "gap longer than allowed");
        // beyond the ends the end value holds within the reach, and only within it
        assert_eq!(s.at(-1, 200), Some(1.0));
        assert_eq!(s.at(1001, 200), Some(3.0));
        assert_eq!(s.at(-201, 200), None);
        assert_eq!(s.at(1201, 200), None);
    }
}
