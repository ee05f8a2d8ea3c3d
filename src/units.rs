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

/// Cubic metres per US gallon (exact: 231 in³, NIST SP 811 (2008) Appendix B.8).
pub const M3_PER_US_GAL: f64 = 3.785_411_784e-3;
/// Cubic metres per acre-foot (exact: 43 560 ft³ of the international foot, NIST SP 811 (2008)
/// Appendix B.8).
pub const M3_PER_ACRE_FT: f64 = 43_560.0 * M3_PER_FT3;

/// A unit people report discharge in (series and summaries of `convert`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum FlowUnit {
    /// m³/s
    #[default]
    CubicMetresPerSecond,
    /// L/s
    LitresPerSecond,
    /// m³/h
    CubicMetresPerHour,
    /// ML/d (megalitres per day)
    MegalitresPerDay,
    /// ft³/s
    CubicFeetPerSecond,
    /// US gallons per minute
    GallonsPerMinute,
    /// million US gallons per day
    MillionGallonsPerDay,
}

impl FlowUnit {
    /// Every unit, in the order help lists them.
    pub const ALL: [FlowUnit; 7] = [
        FlowUnit::CubicMetresPerSecond,
        FlowUnit::LitresPerSecond,
        FlowUnit::CubicMetresPerHour,
        FlowUnit::MegalitresPerDay,
        FlowUnit::CubicFeetPerSecond,
        FlowUnit::GallonsPerMinute,
        FlowUnit::MillionGallonsPerDay,
    ];

    /// Cubic metres per second per unit (exact definitions, NIST SP 811 (2008) Appendix B.8).
    pub fn m3s_per_unit(self) -> f64 {
        match self {
            FlowUnit::CubicMetresPerSecond => 1.0,
            FlowUnit::LitresPerSecond => 1.0e-3,
            FlowUnit::CubicMetresPerHour => 1.0 / 3600.0,
            FlowUnit::MegalitresPerDay => 1000.0 / 86_400.0,
            FlowUnit::CubicFeetPerSecond => M3_PER_FT3,
            FlowUnit::GallonsPerMinute => M3_PER_US_GAL / 60.0,
            FlowUnit::MillionGallonsPerDay => 1.0e6 * M3_PER_US_GAL / 86_400.0,
        }
    }

    /// A discharge in m³/s in this unit.
    #[inline]
    pub fn from_si(self, m3s: f64) -> f64 {
        match self {
            FlowUnit::CubicMetresPerSecond => m3s,
            other => m3s / other.m3s_per_unit(),
        }
    }

    /// The name on the command line and in texts.
    pub fn name(self) -> &'static str {
        match self {
            FlowUnit::CubicMetresPerSecond => "m3/s",
            FlowUnit::LitresPerSecond => "L/s",
            FlowUnit::CubicMetresPerHour => "m3/h",
            FlowUnit::MegalitresPerDay => "ML/d",
            FlowUnit::CubicFeetPerSecond => "cfs",
            FlowUnit::GallonsPerMinute => "gpm",
            FlowUnit::MillionGallonsPerDay => "Mgal/d",
        }
    }

    /// The symbol in texts and on axes.
    pub fn symbol(self) -> &'static str {
        match self {
            FlowUnit::CubicMetresPerSecond => "m³/s",
            FlowUnit::LitresPerSecond => "L/s",
            FlowUnit::CubicMetresPerHour => "m³/h",
            FlowUnit::MegalitresPerDay => "ML/d",
            FlowUnit::CubicFeetPerSecond => "ft³/s",
            FlowUnit::GallonsPerMinute => "gal/min (US)",
            FlowUnit::MillionGallonsPerDay => "Mgal/d (US)",
        }
    }

    /// The suffix of column names (`discharge_ls`).
    pub fn suffix(self) -> &'static str {
        match self {
            FlowUnit::CubicMetresPerSecond => "m3s",
            FlowUnit::LitresPerSecond => "ls",
            FlowUnit::CubicMetresPerHour => "m3h",
            FlowUnit::MegalitresPerDay => "MLd",
            FlowUnit::CubicFeetPerSecond => "cfs",
            FlowUnit::GallonsPerMinute => "gpm",
            FlowUnit::MillionGallonsPerDay => "Mgald",
        }
    }
}

impl std::str::FromStr for FlowUnit {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        let t = s.trim();
        FlowUnit::ALL
            .into_iter()
            .find(|u| u.name() == t || u.suffix() == t)
            .or(match t {
                "m³/s" | "cumecs" => Some(FlowUnit::CubicMetresPerSecond),
                "l/s" => Some(FlowUnit::LitresPerSecond),
                "m³/h" => Some(FlowUnit::CubicMetresPerHour),
                "ft3/s" | "ft³/s" => Some(FlowUnit::CubicFeetPerSecond),
                "MGD" | "mgd" => Some(FlowUnit::MillionGallonsPerDay),
                _ => None,
            })
            .ok_or_else(|| {
                format!(
                    "unknown flow unit \"{s}\": use {}",
                    FlowUnit::ALL.map(FlowUnit::name).join(", ")
                )
            })
    }
}

/// A unit people report volume in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum VolumeUnit {
    /// m³
    #[default]
    CubicMetres,
    /// ML (megalitres, 1000 m³)
    Megalitres,
    /// acre-feet
    AcreFeet,
    /// million US gallons
    MillionGallons,
}

impl VolumeUnit {
    /// Every unit.
    pub const ALL: [VolumeUnit; 4] = [
        VolumeUnit::CubicMetres,
        VolumeUnit::Megalitres,
        VolumeUnit::AcreFeet,
        VolumeUnit::MillionGallons,
    ];

    /// Cubic metres per unit (exact definitions, NIST SP 811 (2008) Appendix B.8).
    pub fn m3_per_unit(self) -> f64 {
        match self {
            VolumeUnit::CubicMetres => 1.0,
            VolumeUnit::Megalitres => 1000.0,
            VolumeUnit::AcreFeet => M3_PER_ACRE_FT,
            VolumeUnit::MillionGallons => 1.0e6 * M3_PER_US_GAL,
        }
    }

    /// A volume in m³ in this unit.
    #[inline]
    pub fn from_si(self, m3: f64) -> f64 {
        match self {
            VolumeUnit::CubicMetres => m3,
            other => m3 / other.m3_per_unit(),
        }
    }

    /// The name on the command line and in texts.
    pub fn name(self) -> &'static str {
        match self {
            VolumeUnit::CubicMetres => "m3",
            VolumeUnit::Megalitres => "ML",
            VolumeUnit::AcreFeet => "acre-ft",
            VolumeUnit::MillionGallons => "Mgal",
        }
    }

    /// The symbol in texts.
    pub fn symbol(self) -> &'static str {
        match self {
            VolumeUnit::CubicMetres => "m³",
            VolumeUnit::Megalitres => "ML",
            VolumeUnit::AcreFeet => "acre-ft",
            VolumeUnit::MillionGallons => "Mgal (US)",
        }
    }

    /// The suffix of column names (`volume_ML`).
    pub fn suffix(self) -> &'static str {
        match self {
            VolumeUnit::CubicMetres => "m3",
            VolumeUnit::Megalitres => "ML",
            VolumeUnit::AcreFeet => "acre_ft",
            VolumeUnit::MillionGallons => "Mgal",
        }
    }
}

impl std::str::FromStr for VolumeUnit {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        let t = s.trim();
        VolumeUnit::ALL
            .into_iter()
            .find(|u| u.name() == t || u.suffix() == t)
            .or(match t {
                "m³" => Some(VolumeUnit::CubicMetres),
                "acre-feet" | "af" | "AF" => Some(VolumeUnit::AcreFeet),
                _ => None,
            })
            .ok_or_else(|| {
                format!(
                    "unknown volume unit \"{s}\": use {} (ML is megalitres; there is no mL)",
                    VolumeUnit::ALL.map(VolumeUnit::name).join(", ")
                )
            })
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

    #[test]
    fn reporting_units_follow_their_exact_definitions() {
        // NIST SP 811 (2008) Appendix B.8: 1 gal (US) = 3.785 411 784 L, 1 acre-foot =
        // 1233.489 m³ (to 7 figures; 43 560 ft³ of 0.3048 m exactly gives 1233.481 837 547 52)
        assert_relative_eq!(M3_PER_ACRE_FT, 1_233.481_837_547_52, max_relative = 1e-15);
        assert_relative_eq!(
            VolumeUnit::AcreFeet.from_si(1_233.481_837_547_52),
            1.0,
            max_relative = 1e-15
        );
        assert_relative_eq!(
            VolumeUnit::MillionGallons.from_si(3_785.411_784),
            1.0,
            max_relative = 1e-15
        );
        assert_relative_eq!(VolumeUnit::Megalitres.from_si(2500.0), 2.5, max_relative = 1e-15);
        // 1 m³/s = 1000 L/s = 3600 m³/h = 86.4 ML/d (analytic)
        let q = 1.0;
        assert_relative_eq!(FlowUnit::LitresPerSecond.from_si(q), 1000.0, max_relative = 1e-15);
        assert_relative_eq!(FlowUnit::CubicMetresPerHour.from_si(q), 3600.0, max_relative = 1e-15);
        assert_relative_eq!(FlowUnit::MegalitresPerDay.from_si(q), 86.4, max_relative = 1e-14);
        // 1 MGD = 1.547 228 5 ft³/s (from memory; exact: 1e6 gal / 86400 s / ft³)
        let mgd = FlowUnit::MillionGallonsPerDay.m3s_per_unit();
        assert_relative_eq!(
            FlowUnit::CubicFeetPerSecond.from_si(mgd),
            1.547_228_5,
            max_relative = 1e-7
        );
        // 1 ft³/s = 448.831 gpm (from memory)
        assert_relative_eq!(
            FlowUnit::GallonsPerMinute.from_si(M3_PER_FT3),
            448.831_169,
            max_relative = 1e-8
        );
        for u in FlowUnit::ALL {
            assert_eq!(u.name().parse::<FlowUnit>(), Ok(u));
        }
        for u in VolumeUnit::ALL {
            assert_eq!(u.name().parse::<VolumeUnit>(), Ok(u));
        }
        assert!("ml".parse::<VolumeUnit>().is_err(), "no millilitres");
    }
}
