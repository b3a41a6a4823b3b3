//! Quantities with explicit units, parsed from text such as `"1064 nm"`.
//!
//! Conventions: everything is converted to SI (metres, watts, radians) at
//! this edge; numeric code elsewhere uses plain `f64` with a unit suffix in
//! its name. A number without a unit is rejected, as are NaN and infinity,
//! so a layout can never be read in the wrong unit by accident. The number
//! and unit may be separated by spaces; `µm` and `um` are both accepted.

use crate::error::{Error, Result};

/// A length in metres.
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd)]
pub struct Length(f64);

/// A power in watts.
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd)]
pub struct Power(f64);

/// An angle in radians.
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd)]
pub struct Angle(f64);

/// An optical path difference, either in waves of the simulation
/// wavelength or as a length.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Wavefront {
    /// In waves at the simulation wavelength.
    Waves(f64),
    /// As an optical path length in metres.
    Length(Length),
}

const LENGTH_UNITS: &[(&str, f64)] = &[
    ("m", 1.0),
    ("cm", 1e-2),
    ("mm", 1e-3),
    ("um", 1e-6),
    ("µm", 1e-6),
    ("μm", 1e-6),
    ("nm", 1e-9),
    ("pm", 1e-12),
    ("km", 1e3),
];
const LENGTH_EXPECTED: &str = "expected a number and one of m, cm, mm, um (or µm), nm, pm, km";

const POWER_UNITS: &[(&str, f64)] = &[
    ("W", 1.0),
    ("kW", 1e3),
    ("mW", 1e-3),
    ("uW", 1e-6),
    ("µW", 1e-6),
    ("μW", 1e-6),
    ("nW", 1e-9),
];
const POWER_EXPECTED: &str = "expected a number and one of W, kW, mW, uW (or µW), nW";

const ANGLE_UNITS: &[(&str, f64)] = &[
    ("rad", 1.0),
    ("mrad", 1e-3),
    ("urad", 1e-6),
    ("µrad", 1e-6),
    ("μrad", 1e-6),
    ("deg", std::f64::consts::PI / 180.0),
    ("°", std::f64::consts::PI / 180.0),
];
const ANGLE_EXPECTED: &str = "expected a number and one of rad, mrad, urad (or µrad), deg";

const WAVEFRONT_EXPECTED: &str =
    "expected a number and 'wave' (waves at the simulation wavelength) or a length unit (nm, um, ...)";

/// Splits "2.5 mm" into (2.5, "mm"); None if there is no number.
fn split_number(text: &str) -> Option<(f64, &str)> {
    let t = text.trim();
    // The number ends where the unit (first alphabetic char or µ/°) begins,
    // but an 'e' followed by a digit or sign is an exponent.
    let bytes: Vec<(usize, char)> = t.char_indices().collect();
    let mut end = t.len();
    for (k, &(pos, c)) in bytes.iter().enumerate() {
        let is_exp = (c == 'e' || c == 'E')
            && k > 0
            && bytes
                .get(k + 1)
                .is_some_and(|&(_, d)| d.is_ascii_digit() || d == '-' || d == '+');
        if (c.is_alphabetic() || c == '°' || c == 'µ') && !is_exp {
            end = pos;
            break;
        }
    }
    let number = t[..end].trim();
    let unit = t[end..].trim();
    let value: f64 = number.parse().ok()?;
    Some((value, unit))
}

fn parse_with(
    text: &str,
    quantity: &'static str,
    units: &[(&str, f64)],
    expected: &str,
) -> Result<f64> {
    let err = |expected: String| Error::Quantity {
        quantity,
        text: crate::error::echo(text),
        expected,
    };
    let lower = text
        .trim()
        .trim_start_matches(['-', '+'])
        .to_ascii_lowercase();
    if lower.starts_with("nan") || lower.starts_with("inf") {
        return Err(err(format!("the number must be finite; {expected}")));
    }
    let (value, unit) = split_number(text).ok_or_else(|| err(expected.to_string()))?;
    if !value.is_finite() {
        return Err(err(format!("the number must be finite; {expected}")));
    }
    if unit.is_empty() {
        return Err(err(format!("missing unit; {expected}")));
    }
    units
        .iter()
        .find(|(name, _)| *name == unit)
        .map(|(_, scale)| value * scale)
        .ok_or_else(|| err(format!("unknown unit '{unit}'; {expected}")))
}

impl Length {
    /// Parses a length such as `"2.5 mm"`.
    ///
    /// # Errors
    /// [`Error::Quantity`] if the number or unit is missing, unknown or not finite.
    ///
    /// ```
    /// use beamwright::units::Length;
    /// assert_eq!(Length::parse("2.5 mm").unwrap().as_m(), 2.5e-3);
    /// assert!(Length::parse("2.5").is_err());
    /// ```
    pub fn parse(text: &str) -> Result<Self> {
        parse_with(text, "length", LENGTH_UNITS, LENGTH_EXPECTED).map(Length)
    }
    /// A length from metres.
    pub fn from_m(m: f64) -> Self {
        Length(m)
    }
    /// A length from millimetres.
    pub fn from_mm(mm: f64) -> Self {
        Length(mm * 1e-3)
    }
    /// A length from micrometres.
    pub fn from_um(um: f64) -> Self {
        Length(um * 1e-6)
    }
    /// A length from nanometres.
    pub fn from_nm(nm: f64) -> Self {
        Length(nm * 1e-9)
    }
    /// The length in metres.
    pub fn as_m(self) -> f64 {
        self.0
    }
}

impl Power {
    /// Parses a power such as `"300 mW"`.
    ///
    /// # Errors
    /// [`Error::Quantity`] if the number or unit is missing, unknown or not finite.
    ///
    /// ```
    /// use beamwright::units::Power;
    /// assert_eq!(Power::parse("300 mW").unwrap().as_w(), 0.3);
    /// ```
    pub fn parse(text: &str) -> Result<Self> {
        parse_with(text, "power", POWER_UNITS, POWER_EXPECTED).map(Power)
    }
    /// A power from watts.
    pub fn from_w(w: f64) -> Self {
        Power(w)
    }
    /// The power in watts.
    pub fn as_w(self) -> f64 {
        self.0
    }
}

impl Angle {
    /// Parses an angle such as `"1 mrad"` or `"0.5 deg"`.
    ///
    /// # Errors
    /// [`Error::Quantity`] if the number or unit is missing, unknown or not finite.
    ///
    /// ```
    /// use beamwright::units::Angle;
    /// assert!((Angle::parse("180 deg").unwrap().as_rad() - std::f64::consts::PI).abs() < 1e-15);
    /// ```
    pub fn parse(text: &str) -> Result<Self> {
        parse_with(text, "angle", ANGLE_UNITS, ANGLE_EXPECTED).map(Angle)
    }
    /// An angle from radians.
    pub fn from_rad(rad: f64) -> Self {
        Angle(rad)
    }
    /// The angle in radians.
    pub fn as_rad(self) -> f64 {
        self.0
    }
}

impl Wavefront {
    /// Parses `"0.1 wave"` (also `waves`) or a length such as `"30 nm"`.
    ///
    /// # Errors
    /// [`Error::Quantity`] if neither form matches.
    ///
    /// ```
    /// use beamwright::units::Wavefront;
    /// assert_eq!(Wavefront::parse("0.1 wave").unwrap().as_waves(500e-9), 0.1);
    /// assert!((Wavefront::parse("50 nm").unwrap().as_waves(500e-9) - 0.1).abs() < 1e-15);
    /// ```
    pub fn parse(text: &str) -> Result<Self> {
        if let Some((value, unit)) = split_number(text) {
            if (unit == "wave" || unit == "waves") && value.is_finite() {
                return Ok(Wavefront::Waves(value));
            }
        }
        Length::parse(text)
            .map(Wavefront::Length)
            .map_err(|_| Error::Quantity {
                quantity: "wavefront",
                text: crate::error::echo(text),
                expected: WAVEFRONT_EXPECTED.to_string(),
            })
    }
    /// The value in waves at `wavelength_m`.
    pub fn as_waves(self, wavelength_m: f64) -> f64 {
        match self {
            Wavefront::Waves(w) => w,
            Wavefront::Length(l) => l.as_m() / wavelength_m,
        }
    }
    /// The value as an optical path in metres at `wavelength_m`.
    pub fn as_m(self, wavelength_m: f64) -> f64 {
        self.as_waves(wavelength_m) * wavelength_m
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn lengths_in_every_unit() {
        for (text, m) in [
            ("1064 nm", 1064e-9),
            ("5 um", 5e-6),
            ("5 µm", 5e-6),
            ("5µm", 5e-6),
            ("2.5 mm", 2.5e-3),
            ("1 cm", 1e-2),
            ("1 m", 1.0),
            ("-3 mm", -3e-3),
            ("1e-3 m", 1e-3),
            ("1.5E2 um", 150e-6),
        ] {
            assert_relative_eq!(Length::parse(text).unwrap().as_m(), m, max_relative = 1e-15);
        }
    }

    #[test]
    fn rejects_missing_wrong_and_nonfinite() {
        for bad in ["2.5", "2.5 nn", "mm", "", "NaN mm", "inf m", "2.5 W"] {
            let e = Length::parse(bad).unwrap_err().to_string();
            assert!(e.contains("expected a number and one of m"), "{bad}: {e}");
        }
        assert!(Length::parse("2.5")
            .unwrap_err()
            .to_string()
            .contains("missing unit"));
        assert!(Length::parse("NaN mm")
            .unwrap_err()
            .to_string()
            .contains("finite"));
        assert!(Length::parse("-inf m")
            .unwrap_err()
            .to_string()
            .contains("finite"));
        assert!(Power::parse("2 mm")
            .unwrap_err()
            .to_string()
            .contains("W, kW, mW"));
    }

    #[test]
    fn powers_angles_wavefronts() {
        assert_relative_eq!(Power::parse("2 W").unwrap().as_w(), 2.0);
        assert_relative_eq!(Power::parse("300 mW").unwrap().as_w(), 0.3);
        assert_relative_eq!(Angle::parse("1 mrad").unwrap().as_rad(), 1e-3);
        assert_relative_eq!(
            Angle::parse("0.5 deg").unwrap().as_rad(),
            0.5f64.to_radians()
        );
        assert_eq!(Wavefront::parse("0.1 wave").unwrap(), Wavefront::Waves(0.1));
        assert_eq!(
            Wavefront::parse("-0.2 waves").unwrap(),
            Wavefront::Waves(-0.2)
        );
        assert_relative_eq!(
            Wavefront::parse("-30 nm").unwrap().as_m(1e-6),
            -30e-9,
            max_relative = 1e-12
        );
        assert!(Wavefront::parse("0.1").is_err());
        assert!(Angle::parse("3 W").is_err());
    }
}
