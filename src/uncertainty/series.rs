//! Uncertainty of discharges read from a series of heads, and of the mean or volume over a period.
//!
//! The systematic inputs (discharge coefficient, control width, gauge zero) take the same value
//! for every reading of the period, so their contributions add linearly across readings (fully
//! correlated, JCGM 100 §5.2.2 with r = 1); the reading error is independent from one reading to
//! the next, so its contributions add in quadrature. Adding the reading noise linearly, as if it
//! were systematic, would overstate it by up to √N for N readings (docs/references.md C5).

use super::gum::{GumPoint, COVERAGE_FACTOR};
use super::inputs::Inputs;

/// One reading of a series, with the sensitivities of its discharge.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SeriesReading {
    /// Discharge (m³/s).
    pub discharge_m3s: f64,
    /// ∂Q/∂f_Cd (m³/s).
    pub dq_dcoefficient: f64,
    /// ∂Q/∂f_b (m³/s).
    pub dq_ddimension: f64,
    /// ∂Q/∂h (m²/s).
    pub dq_dhead: f64,
    /// Time the reading stands for (s).
    pub duration_s: f64,
    /// False for a gap or a flagged row: it adds neither volume nor uncertainty, and the result
    /// reports the time it stood for as not covered.
    pub included: bool,
}

impl SeriesReading {
    /// A reading from a GUM point.
    pub fn from_point(p: &GumPoint, duration_s: f64, included: bool) -> Self {
        Self {
            discharge_m3s: p.discharge_m3s,
            dq_dcoefficient: p.dq_dcoefficient,
            dq_ddimension: p.dq_ddimension,
            dq_dhead: p.dq_dhead,
            duration_s,
            included,
        }
    }
}

/// The 95 % band of one reading's discharge: Q ± k·u_c with every input, systematic and random.
pub fn reading_band(inputs: &Inputs, r: &SeriesReading) -> (f64, f64) {
    BandWeights::new(inputs).band(r)
}

/// The inputs' standard uncertainties, taken once for the bands of many readings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BandWeights {
    coefficient: f64,
    dimension: f64,
    head_m: f64,
}

impl BandWeights {
    /// From the uncertainty inputs.
    pub fn new(inputs: &Inputs) -> Self {
        Self {
            coefficient: inputs.coefficient.standard,
            dimension: inputs.dimension.standard,
            head_m: inputs.head_standard_m(),
        }
    }

    /// Q ± k·u_c for one reading (JCGM 100 §5.1.2, uncorrelated inputs within the reading).
    #[inline]
    pub fn band(&self, r: &SeriesReading) -> (f64, f64) {
        let u = ((r.dq_dcoefficient * self.coefficient).powi(2)
            + (r.dq_ddimension * self.dimension).powi(2)
            + (r.dq_dhead * self.head_m).powi(2))
        .sqrt();
        (
            r.discharge_m3s - COVERAGE_FACTOR * u,
            r.discharge_m3s + COVERAGE_FACTOR * u,
        )
    }
}

/// Volume over a period and its standard uncertainty, split by input.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PeriodUncertainty {
    /// Σ Q·Δt over the included readings (m³).
    pub volume_m3: f64,
    /// Time covered by included readings (s).
    pub covered_s: f64,
    /// Time of excluded readings (gaps, flagged rows) (s).
    pub excluded_s: f64,
    /// Readings included.
    pub readings: usize,
    /// Readings excluded.
    pub excluded: usize,
    /// From the discharge coefficient, fully correlated (m³).
    pub u_coefficient_m3: f64,
    /// From the control width, fully correlated (m³).
    pub u_dimension_m3: f64,
    /// From the gauge zero, fully correlated (m³).
    pub u_zero_m3: f64,
    /// From reading noise, independent between readings (m³).
    pub u_random_m3: f64,
    /// What the reading noise would give if it were wrongly treated as fully correlated (m³).
    pub u_random_if_correlated_m3: f64,
    /// From the interpolation of filled heads, taken as fully correlated over the period (m³);
    /// 0 without filled readings.
    pub u_fill_m3: f64,
}

impl PeriodUncertainty {
    /// Combined standard uncertainty of the volume (m³).
    pub fn u_total_m3(&self) -> f64 {
        (self.u_coefficient_m3.powi(2)
            + self.u_dimension_m3.powi(2)
            + self.u_zero_m3.powi(2)
            + self.u_random_m3.powi(2)
            + self.u_fill_m3.powi(2))
        .sqrt()
    }

    /// Expanded (k = 2, about 95 %) uncertainty of the volume (m³).
    pub fn expanded_m3(&self) -> f64 {
        COVERAGE_FACTOR * self.u_total_m3()
    }

    /// Mean discharge over the covered time (m³/s).
    pub fn mean_discharge_m3s(&self) -> f64 {
        if self.covered_s > 0.0 {
            self.volume_m3 / self.covered_s
        } else {
            f64::NAN
        }
    }
}

/// Running sums for [`PeriodUncertainty`], fed one reading at a time (long series need not be
/// held in memory).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct PeriodAccumulator {
    volume_m3: f64,
    covered_s: f64,
    excluded_s: f64,
    readings: usize,
    excluded: usize,
    s_cd: f64,
    s_b: f64,
    s_h: f64,
    s_h2: f64,
    s_fill: f64,
}

impl PeriodAccumulator {
    /// Adds one estimated reading whose every uncertainty contribution is `factor` times the
    /// model's, with an extra head uncertainty `u_fill_m` (standard, m) from interpolation,
    /// taken as fully correlated with that of every other filled reading of the period (a
    /// conservative choice: the readings of one gap err together).
    pub fn push_estimated(&mut self, r: &SeriesReading, factor: f64, u_fill_m: f64) {
        let scaled = SeriesReading {
            dq_dcoefficient: r.dq_dcoefficient * factor,
            dq_ddimension: r.dq_ddimension * factor,
            dq_dhead: r.dq_dhead * factor,
            ..*r
        };
        self.push(&scaled);
        if r.included {
            self.s_fill += (r.dq_dhead * u_fill_m * r.duration_s).abs();
        }
    }

    /// Adds one reading.
    pub fn push(&mut self, r: &SeriesReading) {
        if !r.included {
            self.excluded += 1;
            self.excluded_s += r.duration_s;
            return;
        }
        self.readings += 1;
        self.covered_s += r.duration_s;
        self.volume_m3 += r.discharge_m3s * r.duration_s;
        self.s_cd += r.dq_dcoefficient * r.duration_s;
        self.s_b += r.dq_ddimension * r.duration_s;
        self.s_h += r.dq_dhead * r.duration_s;
        self.s_h2 += (r.dq_dhead * r.duration_s).powi(2);
    }

    /// Adds another accumulator's readings (the sums are additive).
    pub fn merge(&mut self, o: &PeriodAccumulator) {
        self.volume_m3 += o.volume_m3;
        self.covered_s += o.covered_s;
        self.excluded_s += o.excluded_s;
        self.readings += o.readings;
        self.excluded += o.excluded;
        self.s_cd += o.s_cd;
        self.s_b += o.s_b;
        self.s_h += o.s_h;
        self.s_h2 += o.s_h2;
        self.s_fill += o.s_fill;
    }

    /// The period's volume and uncertainty.
    pub fn finish(&self, inputs: &Inputs) -> PeriodUncertainty {
        PeriodUncertainty {
            volume_m3: self.volume_m3,
            covered_s: self.covered_s,
            excluded_s: self.excluded_s,
            readings: self.readings,
            excluded: self.excluded,
            u_coefficient_m3: self.s_cd.abs() * inputs.coefficient.standard,
            u_dimension_m3: self.s_b.abs() * inputs.dimension.standard,
            u_zero_m3: self.s_h.abs() * inputs.zero.standard,
            u_random_m3: self.s_h2.sqrt() * inputs.reading.standard,
            u_random_if_correlated_m3: self.s_h.abs() * inputs.reading.standard,
            u_fill_m3: self.s_fill,
        }
    }
}

/// Volume and uncertainty of a period of readings (see the module notes for the correlations).
pub fn period_uncertainty(inputs: &Inputs, readings: &[SeriesReading]) -> PeriodUncertainty {
    let mut acc = PeriodAccumulator::default();
    for r in readings {
        acc.push(r);
    }
    acc.finish(inputs)
}
