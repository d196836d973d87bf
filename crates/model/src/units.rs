//! Torque and angle units and their conversion to the canonical N·mm and degrees.
//!
//! Factors are derived from the exact definitions NIST SP 811 (2008) rests on
//! (1 lbf = 0.453 592 37 kg × 9.806 65 m/s², 1 in = 25.4 mm, 1 ozf = lbf/16,
//! 1 kgf = 9.806 65 N), so they carry more digits than the table prints; the
//! tests check them against the printed Appendix B values.

use serde::{Deserialize, Serialize};
use std::fmt;
use std::str::FromStr;

/// Standard acceleration of gravity, m/s², exact by definition.
const STANDARD_GRAVITY_M_PER_S2: f64 = 9.806_65;
/// Avoirdupois pound in kilograms, exact by definition.
const POUND_KG: f64 = 0.453_592_37;
/// Inch in millimetres, exact by definition.
const INCH_MM: f64 = 25.4;

/// A unit of torque a rig may export in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(try_from = "String", into = "String")]
pub enum TorqueUnit {
    /// newton millimetre, the canonical unit
    NewtonMillimetre,
    /// newton centimetre
    NewtonCentimetre,
    /// newton metre
    NewtonMetre,
    /// pound-force inch
    PoundForceInch,
    /// ounce-force inch
    OunceForceInch,
    /// kilogram-force centimetre
    KilogramForceCentimetre,
    /// kilogram-force millimetre
    KilogramForceMillimetre,
}

impl TorqueUnit {
    /// Every torque unit, in the order they are documented.
    pub const ALL: [TorqueUnit; 7] = [
        TorqueUnit::NewtonMillimetre,
        TorqueUnit::NewtonCentimetre,
        TorqueUnit::NewtonMetre,
        TorqueUnit::PoundForceInch,
        TorqueUnit::OunceForceInch,
        TorqueUnit::KilogramForceCentimetre,
        TorqueUnit::KilogramForceMillimetre,
    ];

    /// How many N·mm one of this unit is.
    pub fn nmm_per_unit(self) -> f64 {
        let pound_force_n = POUND_KG * STANDARD_GRAVITY_M_PER_S2;
        match self {
            TorqueUnit::NewtonMillimetre => 1.0,
            TorqueUnit::NewtonCentimetre => 10.0,
            TorqueUnit::NewtonMetre => 1000.0,
            TorqueUnit::PoundForceInch => pound_force_n * INCH_MM,
            TorqueUnit::OunceForceInch => pound_force_n / 16.0 * INCH_MM,
            TorqueUnit::KilogramForceCentimetre => STANDARD_GRAVITY_M_PER_S2 * 10.0,
            TorqueUnit::KilogramForceMillimetre => STANDARD_GRAVITY_M_PER_S2,
        }
    }

    /// Converts a value in this unit to N·mm.
    pub fn to_nmm(self, value: f64) -> f64 {
        value * self.nmm_per_unit()
    }

    /// Converts a value in N·mm to this unit.
    pub fn from_nmm(self, torque_nmm: f64) -> f64 {
        torque_nmm / self.nmm_per_unit()
    }

    /// The symbol twistlot writes for this unit.
    pub fn symbol(self) -> &'static str {
        match self {
            TorqueUnit::NewtonMillimetre => "N·mm",
            TorqueUnit::NewtonCentimetre => "N·cm",
            TorqueUnit::NewtonMetre => "N·m",
            TorqueUnit::PoundForceInch => "lbf·in",
            TorqueUnit::OunceForceInch => "ozf·in",
            TorqueUnit::KilogramForceCentimetre => "kgf·cm",
            TorqueUnit::KilogramForceMillimetre => "kgf·mm",
        }
    }
}

/// Normalises a unit spelling: lower case, with the product sign, dots, stars,
/// dashes and spaces between factors removed, so `N·mm`, `N.mm`, `N*mm` and `Nmm` agree.
fn unit_key(text: &str) -> String {
    text.trim()
        .chars()
        .filter(|c| !matches!(c, '·' | '.' | '*' | '-' | ' ' | '_' | '⋅' | '×'))
        .flat_map(char::to_lowercase)
        .collect()
}

impl FromStr for TorqueUnit {
    type Err = UnknownUnit;

    fn from_str(text: &str) -> Result<Self, Self::Err> {
        let unit = match unit_key(text).as_str() {
            "nmm" | "mnm" => TorqueUnit::NewtonMillimetre,
            "ncm" => TorqueUnit::NewtonCentimetre,
            "nm" => TorqueUnit::NewtonMetre,
            "lbfin" | "inlbf" | "lbin" | "inlb" => TorqueUnit::PoundForceInch,
            "ozfin" | "inozf" | "ozin" | "inoz" => TorqueUnit::OunceForceInch,
            "kgfcm" | "kpcm" => TorqueUnit::KilogramForceCentimetre,
            "kgfmm" | "kpmm" => TorqueUnit::KilogramForceMillimetre,
            _ => return Err(UnknownUnit { quantity: "torque", text: text.to_string() }),
        };
        Ok(unit)
    }
}

impl fmt::Display for TorqueUnit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.symbol())
    }
}

impl TryFrom<String> for TorqueUnit {
    type Error = UnknownUnit;
    fn try_from(text: String) -> Result<Self, Self::Error> {
        text.parse()
    }
}

impl From<TorqueUnit> for String {
    fn from(unit: TorqueUnit) -> String {
        unit.symbol().to_string()
    }
}

/// A unit of angle a rig may export in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(try_from = "String", into = "String")]
pub enum AngleUnit {
    /// degree, the canonical unit
    Degree,
    /// radian
    Radian,
    /// full turn (revolution)
    Turn,
}

impl AngleUnit {
    /// Every angle unit.
    pub const ALL: [AngleUnit; 3] = [AngleUnit::Degree, AngleUnit::Radian, AngleUnit::Turn];

    /// How many degrees one of this unit is.
    pub fn deg_per_unit(self) -> f64 {
        match self {
            AngleUnit::Degree => 1.0,
            AngleUnit::Radian => 180.0 / std::f64::consts::PI,
            AngleUnit::Turn => 360.0,
        }
    }

    /// Converts a value in this unit to degrees.
    pub fn to_deg(self, value: f64) -> f64 {
        value * self.deg_per_unit()
    }

    /// Converts a value in degrees to this unit.
    pub fn from_deg(self, angle_deg: f64) -> f64 {
        angle_deg / self.deg_per_unit()
    }

    /// The symbol twistlot writes for this unit.
    pub fn symbol(self) -> &'static str {
        match self {
            AngleUnit::Degree => "deg",
            AngleUnit::Radian => "rad",
            AngleUnit::Turn => "turn",
        }
    }
}

impl FromStr for AngleUnit {
    type Err = UnknownUnit;

    fn from_str(text: &str) -> Result<Self, Self::Err> {
        let unit = match unit_key(text).as_str() {
            "deg" | "degree" | "degrees" | "°" => AngleUnit::Degree,
            "rad" | "radian" | "radians" => AngleUnit::Radian,
            "turn" | "turns" | "rev" | "revolution" | "revolutions" | "r" => AngleUnit::Turn,
            _ => return Err(UnknownUnit { quantity: "angle", text: text.to_string() }),
        };
        Ok(unit)
    }
}

impl fmt::Display for AngleUnit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.symbol())
    }
}

impl TryFrom<String> for AngleUnit {
    type Error = UnknownUnit;
    fn try_from(text: String) -> Result<Self, Self::Error> {
        text.parse()
    }
}

impl From<AngleUnit> for String {
    fn from(unit: AngleUnit) -> String {
        unit.symbol().to_string()
    }
}

/// A unit spelling twistlot does not know.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("unknown {quantity} unit `{text}`")]
pub struct UnknownUnit {
    /// "torque" or "angle"
    pub quantity: &'static str,
    /// the spelling as given
    pub text: String,
}

#[cfg(test)]
mod tests {
    use super::*;

    fn assert_rel(actual: f64, expected: f64, rel: f64) {
        let err = ((actual - expected) / expected).abs();
        assert!(err <= rel, "{actual} vs {expected}: relative error {err}");
    }

    // NIST SP 811 (2008) Appendix B prints factors to 7 significant digits, so the
    // derived factors must agree with them to within half a unit of the last digit.
    const PRINTED: f64 = 5e-7;

    #[test]
    fn pound_force_inch_matches_nist_sp811() {
        // Source: NIST SP 811 (2008) Appendix B.9, pound-force inch (lbf·in) to N·m: 1.129 848 E-01
        assert_rel(TorqueUnit::PoundForceInch.nmm_per_unit() / 1000.0, 1.129_848e-1, PRINTED);
    }

    #[test]
    fn ounce_force_inch_matches_nist_sp811() {
        // Source: NIST SP 811 (2008) Appendix B.9, ounce (avoirdupois)-force inch (ozf·in) to N·m: 7.061 552 E-03
        assert_rel(TorqueUnit::OunceForceInch.nmm_per_unit() / 1000.0, 7.061_552e-3, PRINTED);
    }

    #[test]
    fn kilogram_force_units_match_nist_sp811() {
        // Source: NIST SP 811 (2008) Appendix B.9, kilogram-force meter (kgf·m) to N·m: 9.806 65 E+00 (exact)
        let kgf_m_in_nm = 9.806_65;
        assert_rel(TorqueUnit::KilogramForceCentimetre.nmm_per_unit() / 1000.0, kgf_m_in_nm / 100.0, 1e-12);
        assert_rel(TorqueUnit::KilogramForceMillimetre.nmm_per_unit() / 1000.0, kgf_m_in_nm / 1000.0, 1e-12);
    }

    #[test]
    fn si_prefixed_torque_units_are_powers_of_ten() {
        // Source: NIST SP 811 (2008) §4 and Table 5, SI prefixes centi (1E-02) and milli (1E-03)
        assert_eq!(TorqueUnit::NewtonCentimetre.nmm_per_unit(), 10.0);
        assert_eq!(TorqueUnit::NewtonMetre.nmm_per_unit(), 1000.0);
    }

    #[test]
    fn degree_matches_nist_sp811() {
        // Source: NIST SP 811 (2008) Appendix B.9, degree (°) to radian: 1.745 329 E-02
        assert_rel(1.0 / AngleUnit::Radian.deg_per_unit(), 1.745_329e-2, PRINTED);
    }

    #[test]
    #[allow(clippy::approx_constant)] // the printed table value is the point of the check
    fn turn_is_two_pi_radians() {
        // Source: NIST SP 811 (2008) Appendix B.9, revolution (r) to radian: 6.283 185 E+00
        let rad_per_turn = AngleUnit::Turn.deg_per_unit() / AngleUnit::Radian.deg_per_unit();
        assert_rel(rad_per_turn, 6.283_185, PRINTED);
    }

    #[test]
    fn spellings_parse() {
        for (text, unit) in [
            ("N·mm", TorqueUnit::NewtonMillimetre),
            ("Nmm", TorqueUnit::NewtonMillimetre),
            ("mN.m", TorqueUnit::NewtonMillimetre),
            ("N*cm", TorqueUnit::NewtonCentimetre),
            ("N m", TorqueUnit::NewtonMetre),
            ("lbf·in", TorqueUnit::PoundForceInch),
            ("in-lb", TorqueUnit::PoundForceInch),
            ("ozf-in", TorqueUnit::OunceForceInch),
            ("kgf·cm", TorqueUnit::KilogramForceCentimetre),
            ("kgf.mm", TorqueUnit::KilogramForceMillimetre),
        ] {
            assert_eq!(text.parse::<TorqueUnit>().unwrap(), unit, "{text}");
        }
        assert_eq!("Rad".parse::<AngleUnit>().unwrap(), AngleUnit::Radian);
        assert_eq!("°".parse::<AngleUnit>().unwrap(), AngleUnit::Degree);
        assert_eq!("turns".parse::<AngleUnit>().unwrap(), AngleUnit::Turn);
    }

    #[test]
    fn unknown_units_are_named() {
        let err = "N·furlong".parse::<TorqueUnit>().unwrap_err();
        assert_eq!(err.to_string(), "unknown torque unit `N·furlong`");
        assert!("gon".parse::<AngleUnit>().is_err());
    }

    proptest::proptest! {
        #[test]
        fn conversions_round_trip(value in -1e6f64..1e6) {
            for unit in TorqueUnit::ALL {
                let back = unit.from_nmm(unit.to_nmm(value));
                proptest::prop_assert!((back - value).abs() <= 1e-9 * value.abs().max(1.0));
            }
            for unit in AngleUnit::ALL {
                let back = unit.from_deg(unit.to_deg(value));
                proptest::prop_assert!((back - value).abs() <= 1e-9 * value.abs().max(1.0));
            }
        }
    }
}
