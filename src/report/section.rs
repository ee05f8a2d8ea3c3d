//! One cross-section's open-channel quantities as a report: critical depth and energy (or every
//! critical depth of a compound section), the Froude number and specific energy at a depth,
//! the alternate depths at an energy and the normal depth by Manning. `flumerate section` only
//! builds the section from its arguments and picks where the report goes. Inputs and outputs are
//! in the report's unit system; the computation is SI inside.

use serde_json::{json, Map, Value};

use super::sig;
use crate::hydraulics::{
    alternate_depths_m, critical_depths_m, froude_number, normal_depths_m, specific_energy_m, FlowError, Section,
    STANDARD_GRAVITY_M_S2,
};
use crate::units::Units;

/// What to compute for a section. Every value is in the report's unit system.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SectionQuery {
    /// Discharge (m³/s, or ft³/s in US units).
    pub discharge: f64,
    /// Velocity-distribution (Coriolis) coefficient, 1.0 to 2.0.
    pub alpha: f64,
    /// A depth at which to report the Froude number and specific energy.
    pub depth: Option<f64>,
    /// A specific energy at which to report both alternate depths.
    pub energy: Option<f64>,
    /// Manning's n (SI, s/m^(1/3)) and bed slope (m/m) for the normal depth.
    pub manning: Option<(f64, f64)>,
}

/// Why a section report cannot be made.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum SectionError {
    /// The Coriolis coefficient is out of its range.
    #[error("--alpha {0} is out of range: the Coriolis coefficient is between 1.0 and 2.0")]
    Alpha(f64),
    /// The discharge is not positive.
    #[error("--discharge must be greater than zero (got {0})")]
    Discharge(f64),
    /// The depth is not positive.
    #[error("--depth must be greater than zero (got {0})")]
    Depth(f64),
    /// The depth is at or above a pipe's crown.
    #[error("--depth {depth} is at or above the crown of the pipe ({crown}): the pipe flows full there and has no free surface, so no Froude number or specific energy\n  fix: give a depth below the crown")]
    AboveCrown {
        /// The depth asked for, as given.
        depth: f64,
        /// The crown, with its unit.
        crown: String,
    },
    /// The critical depth cannot be found.
    #[error(transparent)]
    Critical(FlowError),
    /// A computation failed; `what` names it.
    #[error("{what}: {source}")]
    Flow {
        /// What was being computed.
        what: String,
        /// Why it failed.
        source: FlowError,
    },
}

/// A section's quantities, in the order they are printed, and the warnings they raise.
#[derive(Debug, Clone)]
pub struct SectionReport {
    units: Units,
    doc: Map<String, Value>,
    /// Cautions a reader must see (several critical depths, two normal depths); a run with any
    /// ends with exit status 1.
    pub warnings: Vec<String>,
}

impl SectionReport {
    /// Computes what `query` asks for `section` (named `shape` in the report).
    pub fn compute(section: &Section, shape: &str, query: &SectionQuery, units: Units) -> Result<Self, SectionError> {
        if !(query.alpha.is_finite() && (1.0..=2.0).contains(&query.alpha)) {
            return Err(SectionError::Alpha(query.alpha));
        }
        let q = units.discharge_to_si(query.discharge);
        if !(q.is_finite() && q > 0.0) {
            return Err(SectionError::Discharge(query.discharge));
        }
        let mut report = SectionReport {
            units,
            doc: Map::new(),
            warnings: Vec::new(),
        };
        report.doc.insert("shape".into(), json!(shape));
        report.doc.insert(
            "units".into(),
            json!(match units {
                Units::Si => "si",
                Units::Us => "us",
            }),
        );
        report.doc.insert(
            format!("discharge_{}", units.discharge_suffix()),
            json!(query.discharge),
        );
        report.critical(section, q, query.alpha)?;
        if let Some(depth) = query.depth {
            report.at_depth(section, q, query.alpha, depth)?;
        }
        if let Some(energy) = query.energy {
            report.alternate(section, q, query.alpha, energy)?;
        }
        if let Some((n, slope)) = query.manning {
            report.normal(section, q, n, slope)?;
        }
        let warnings = json!(report.warnings);
        report.doc.insert("warnings".into(), warnings);
        Ok(report)
    }

    fn length(&self, m: f64) -> Value {
        json!(self.units.length_from_si(m))
    }

    fn with_unit(&self, m: f64) -> String {
        format!("{} {}", sig(self.units.length_from_si(m), 6), self.units.symbols().0)
    }

    /// Critical depth, energy, area, top width and velocity; or, for a compound section with
    /// several critical depths, all of them and a warning.
    fn critical(&mut self, section: &Section, q: f64, alpha: f64) -> Result<(), SectionError> {
        let g = STANDARD_GRAVITY_M_S2;
        let u = self.units;
        let (l, ar, v) = (u.length_suffix(), u.area_suffix(), u.velocity_suffix());
        let depths = critical_depths_m(section, q, alpha, g).map_err(SectionError::Critical)?;
        if depths.len() == 1 {
            let yc = depths[0];
            let area = section.area_m2(yc);
            self.doc.insert(format!("critical_depth_{l}"), self.length(yc));
            let energy = self.length(specific_energy_m(section, yc, q, alpha, g));
            self.doc.insert(format!("critical_energy_{l}"), energy);
            self.doc
                .insert(format!("critical_area_{ar}"), json!(u.area_from_si(area)));
            let top = self.length(section.top_width_m(yc));
            self.doc.insert(format!("critical_top_width_{l}"), top);
            self.doc.insert(format!("critical_velocity_{v}"), self.length(q / area));
        } else {
            let listed: Vec<String> = depths.iter().map(|&y| self.with_unit(y)).collect();
            self.warnings.push(format!(
                "this compound section has {} critical depths for this discharge ({}): the control can switch between them; none is picked",
                depths.len(),
                listed.join(", ")
            ));
            self.doc.insert(format!("critical_depth_{l}"), Value::Null);
            let e_min = depths
                .iter()
                .map(|&y| specific_energy_m(section, y, q, alpha, g))
                .fold(f64::INFINITY, f64::min);
            self.doc.insert(format!("critical_energy_{l}"), self.length(e_min));
        }
        let all = Value::Array(depths.iter().map(|&y| self.length(y)).collect());
        self.doc.insert(format!("critical_depths_{l}"), all);
        Ok(())
    }

    /// The Froude number and specific energy at `depth` (report units).
    fn at_depth(&mut self, section: &Section, q: f64, alpha: f64, depth: f64) -> Result<(), SectionError> {
        let g = STANDARD_GRAVITY_M_S2;
        let l = self.units.length_suffix();
        let y = self.units.length_to_si(depth);
        if !(y.is_finite() && y > 0.0) {
            return Err(SectionError::Depth(depth));
        }
        if let Some(full) = section.full_depth_m() {
            if y >= full {
                return Err(SectionError::AboveCrown {
                    depth,
                    crown: self.with_unit(full),
                });
            }
        }
        self.doc.insert(format!("depth_{l}"), json!(depth));
        self.doc.insert("froude".into(), json!(froude_number(section, y, q, g)));
        let e = self.length(specific_energy_m(section, y, q, alpha, g));
        self.doc.insert(format!("specific_energy_{l}"), e);
        Ok(())
    }

    /// Both alternate depths at specific energy `energy` (report units).
    fn alternate(&mut self, section: &Section, q: f64, alpha: f64, energy: f64) -> Result<(), SectionError> {
        let u = self.units;
        let l = u.length_suffix();
        let e = u.length_to_si(energy);
        let alt =
            alternate_depths_m(section, e, q, alpha, STANDARD_GRAVITY_M_S2).map_err(|source| SectionError::Flow {
                what: format!("alternate depths at --energy {energy}"),
                source,
            })?;
        self.doc.insert(format!("energy_{l}"), json!(energy));
        self.doc.insert(
            format!("alternate_depths_{l}"),
            json!({
                "subcritical": u.length_from_si(alt.subcritical_m),
                "supercritical": u.length_from_si(alt.supercritical_m),
            }),
        );
        Ok(())
    }

    /// The normal depth(s) by Manning's equation.
    fn normal(&mut self, section: &Section, q: f64, n: f64, slope: f64) -> Result<(), SectionError> {
        let l = self.units.length_suffix();
        let yn = normal_depths_m(section, q, n, slope).map_err(|source| SectionError::Flow {
            what: "normal depth".into(),
            source,
        })?;
        self.doc.insert(format!("normal_depth_{l}"), self.length(yn[0]));
        let all = Value::Array(yn.iter().map(|&y| self.length(y)).collect());
        self.doc.insert(format!("normal_depths_{l}"), all);
        if yn.len() > 1 {
            self.warnings.push(format!(
                "the pipe carries this discharge in uniform flow at two depths, {} and {}: near full, flow can switch between them (and the pipe may surcharge)",
                self.with_unit(yn[0]),
                self.with_unit(yn[1]),
            ));
        }
        Ok(())
    }

    /// One JSON object, full precision.
    pub fn to_json(&self) -> Result<Vec<u8>, serde_json::Error> {
        let mut b = serde_json::to_vec_pretty(&Value::Object(self.doc.clone()))?;
        b.push(b'\n');
        Ok(b)
    }

    /// Readable text: one `key: value` line each, numbers to 6 figures.
    pub fn to_text(&self) -> String {
        let (lu, qu) = self.units.symbols();
        let mut s =
            format!("flumerate section (lengths in {lu}, discharge in {qu}, g = {STANDARD_GRAVITY_M_S2} m/s²)\n");
        for (k, v) in &self.doc {
            let shown = match v {
                Value::Number(n) => sig(n.as_f64().unwrap_or(f64::NAN), 6),
                Value::Array(items) if k != "warnings" => items
                    .iter()
                    .map(|i| sig(i.as_f64().unwrap_or(f64::NAN), 6))
                    .collect::<Vec<_>>()
                    .join(", "),
                Value::Array(items) => {
                    if items.is_empty() {
                        continue;
                    }
                    items.iter().filter_map(|i| i.as_str()).collect::<Vec<_>>().join("\n  ")
                }
                Value::Object(o) => o
                    .iter()
                    .map(|(k, v)| format!("{k} {}", sig(v.as_f64().unwrap_or(f64::NAN), 6)))
                    .collect::<Vec<_>>()
                    .join(", "),
                Value::String(t) => t.clone(),
                Value::Null => "(see warnings)".into(),
                Value::Bool(b) => b.to_string(),
            };
            s.push_str(&format!("{k:<28} {shown}\n"));
        }
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn query(discharge: f64) -> SectionQuery {
        SectionQuery {
            discharge,
            alpha: 1.0,
            depth: None,
            energy: None,
            manning: None,
        }
    }

    #[test]
    fn a_rectangle_has_the_textbook_critical_depth() {
        // Chow (1959) §3-2: in a rectangle yc = (q²/g)^(1/3); q = 1 m²/s gives 0.467 m.
        let rect = Section::Rectangle { width_m: 2.0 };
        let r = SectionReport::compute(&rect, "rectangle", &query(2.0), Units::Si).unwrap();
        let yc = r.doc["critical_depth_m"].as_f64().unwrap();
        let expected = (1.0f64 / STANDARD_GRAVITY_M_S2).cbrt();
        assert!((yc - expected).abs() < 1e-9, "{yc}");
        // E_c = 1.5 yc in a rectangle (Chow 1959 §3-2)
        let ec = r.doc["critical_energy_m"].as_f64().unwrap();
        assert!((ec - 1.5 * expected).abs() < 1e-9);
        assert!(r.warnings.is_empty());
    }

    #[test]
    fn bad_inputs_are_refused_with_the_flag_that_caused_them() {
        let rect = Section::Rectangle { width_m: 2.0 };
        let e = SectionReport::compute(&rect, "rectangle", &query(0.0), Units::Si).unwrap_err();
        assert!(e.to_string().contains("--discharge"), "{e}");
        let mut q = query(1.0);
        q.alpha = 2.5;
        let e = SectionReport::compute(&rect, "rectangle", &q, Units::Si).unwrap_err();
        assert!(e.to_string().contains("--alpha"), "{e}");
        let pipe = Section::Circle { diameter_m: 0.5 };
        let mut q = query(0.05);
        q.depth = Some(0.5);
        let e = SectionReport::compute(&pipe, "circle", &q, Units::Si).unwrap_err();
        assert!(e.to_string().contains("crown"), "{e}");
    }
}
