//! Output unit systems. Everything inside flumerate is SI; conversion happens only here, at the
//! edges. 1 ft = 0.3048 m exactly (international foot, 1959); 1 ft³/s = 0.028316846592 m³/s
//! exactly (its cube).

/// Metres per foot (exact).
pub const M_PER_FT: f64 = 0.3048;
/// Cubic metres per cubic foot (exact).
pub const M3_PER_FT3: f64 = M_PER_FT * M_PER_FT * M_PER_FT;

/// The unit system of inputs and outputs on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Units {
    /// metres and cubic metres per second
    #[default]
    Si,
    /// feet and cubic feet per second
    Us,
}

impl Units {
    /// Converts a length in metres to this system.
    pub fn length_from_si(self, m: f64) -> f64 {
        match self {
            Units::Si => m,
            Units::Us => m / M_PER_FT,
        }
    }

    /// Converts a length in this system to metres.
    pub fn length_to_si(self, v: f64) -> f64 {
        match self {
            Units::Si => v,
            Units::Us => v * M_PER_FT,
        }
    }

    /// Converts an area in m² to this system.
    pub fn area_from_si(self, m2: f64) -> f64 {
        match self {
            Units::Si => m2,
            Units::Us => m2 / (M_PER_FT * M_PER_FT),
        }
    }

    /// Converts a discharge in m³/s to this system.
    pub fn discharge_from_si(self, m3s: f64) -> f64 {
        match self {
            Units::Si => m3s,
            Units::Us => m3s / M3_PER_FT3,
        }
    }

    /// Converts a discharge in this system to m³/s.
    pub fn discharge_to_si(self, v: f64) -> f64 {
        match self {
            Units::Si => v,
            Units::Us => v * M3_PER_FT3,
        }
    }

    /// Column-name suffix for lengths: `m` or `ft`.
    pub fn length_suffix(self) -> &'static str {
        match self {
            Units::Si => "m",
            Units::Us => "ft",
        }
    }

    /// Column-name suffix for areas: `m2` or `ft2`.
    pub fn area_suffix(self) -> &'static str {
        match self {
            Units::Si => "m2",
            Units::Us => "ft2",
        }
    }

    /// Column-name suffix for discharges: `m3s` or `cfs`.
    pub fn discharge_suffix(self) -> &'static str {
        match self {
            Units::Si => "m3s",
            Units::Us => "cfs",
        }
    }

    /// Column-name suffix for velocities: `m_s` or `ft_s`.
    pub fn velocity_suffix(self) -> &'static str {
        match self {
            Units::Si => "m_s",
            Units::Us => "ft_s",
        }
    }

    /// Human unit symbols: (length, discharge).
    pub fn symbols(self) -> (&'static str, &'static str) {
        match self {
            Units::Si => ("m", "m³/s"),
            Units::Us => ("ft", "ft³/s"),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn cubic_foot_is_exact() {
        // docs/references.md conventions: 1 ft³/s = 0.028316846592 m³/s exactly
        assert_relative_eq!(M3_PER_FT3, 0.028316846592, max_relative = 1e-15);
        assert_relative_eq!(Units::Us.discharge_from_si(M3_PER_FT3), 1.0, max_relative = 1e-15);
    }
}
