//! The layout file as written: serde types that keep every quantity as the
//! text the user typed (with its unit) and its position in the file.
//!
//! Conventions: every dimensional value is a string with a unit
//! (`"1064 nm"`, `"2.5 mm"`, `"1.5 W"`, `"0.1 wave"`, `"1 mrad"`); a bare
//! number is an error that says which unit is expected. Unknown keys are
//! errors. Elements are one flat table type with a `kind`; which keys apply
//! to which kind is checked in [`super::validate`], so that a misplaced key
//! (a `radius` on a lens) is reported rather than ignored.

use std::collections::BTreeMap;

use serde::de::{self, Deserializer, Visitor};
use serde::Deserialize;
use toml::Spanned;

/// A quantity as written, e.g. `"2.5 mm"`, with its byte span in the file.
pub type Q = Spanned<QuantityText>;

/// The text of a quantity. Deserialising a bare number fails with a message
/// asking for a unit.
#[derive(Debug, Clone, PartialEq)]
pub struct QuantityText(pub String);

impl<'de> Deserialize<'de> for QuantityText {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl Visitor<'_> for V {
            type Value = QuantityText;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a quantity with a unit, as a string such as \"2.5 mm\"")
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<QuantityText, E> {
                Ok(QuantityText(v.to_string()))
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<QuantityText, E> {
                Err(E::custom(format!(
                    "missing unit: write the value as a string with its unit, e.g. \"{v} mm\""
                )))
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<QuantityText, E> {
                Err(E::custom(format!(
                    "missing unit: write the value as a string with its unit, e.g. \"{v} mm\""
                )))
            }
        }
        d.deserialize_any(V)
    }
}

/// The whole layout file.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LayoutFile {
    /// Short description.
    #[serde(default)]
    pub title: Option<String>,
    /// Wavelength and power.
    pub beam: BeamSection,
    /// Sampling.
    pub grid: GridSection,
    /// The field at the first plane.
    pub source: Spanned<SourceSection>,
    /// The beam path, in order.
    #[serde(default, rename = "element")]
    pub elements: Vec<Spanned<ElementEntry>>,
}

/// `[beam]`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BeamSection {
    /// Vacuum wavelength, e.g. `"1064 nm"`.
    pub wavelength: Q,
    /// Source power, e.g. `"2 W"`; default 1 W.
    #[serde(default)]
    pub power: Option<Q>,
}

/// `[grid]`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GridSection {
    /// Samples per side.
    pub n: Spanned<i64>,
    /// Sample spacing (or give `width`).
    #[serde(default)]
    pub spacing: Option<Q>,
    /// Full window width `n·spacing` (or give `spacing`).
    #[serde(default)]
    pub width: Option<Q>,
}

/// `[source]`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SourceSection {
    /// gaussian | hermite-gauss | laguerre-gauss | flat-top | superposition | npy | image.
    pub kind: Spanned<String>,
    /// 1/e² waist radius of the (embedded) Gaussian.
    #[serde(default)]
    pub waist: Option<Q>,
    /// z of the waist relative to the source plane (positive: downstream).
    #[serde(default)]
    pub waist_at: Option<Q>,
    /// Hermite-Gauss order along x.
    #[serde(default)]
    pub m: Option<i64>,
    /// Hermite-Gauss order along y.
    #[serde(default)]
    pub n: Option<i64>,
    /// Laguerre-Gauss radial index.
    #[serde(default)]
    pub p: Option<i64>,
    /// Laguerre-Gauss azimuthal index.
    #[serde(default)]
    pub l: Option<i64>,
    /// Flat-top radius.
    #[serde(default)]
    pub radius: Option<Q>,
    /// Superposition terms.
    #[serde(default)]
    pub terms: Option<Vec<TermEntry>>,
    /// NPY or PNG file, relative to the layout file.
    #[serde(default)]
    pub file: Option<Spanned<String>>,
}

/// One term of a superposition source.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TermEntry {
    /// hermite-gauss | laguerre-gauss | gaussian.
    pub kind: String,
    /// HG order along x.
    #[serde(default)]
    pub m: Option<i64>,
    /// HG order along y.
    #[serde(default)]
    pub n: Option<i64>,
    /// LG radial index.
    #[serde(default)]
    pub p: Option<i64>,
    /// LG azimuthal index.
    #[serde(default)]
    pub l: Option<i64>,
    /// Complex weight `[re, im]` (default `[1, 0]`).
    #[serde(default)]
    pub weight: Option<[f64; 2]>,
}

/// `modes = { ... }` on a probe.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModesEntry {
    /// laguerre-gauss | hermite-gauss.
    pub basis: String,
    /// Maximum mode order N.
    pub order: i64,
    /// Basis waist (default: best fit).
    #[serde(default)]
    pub waist: Option<Q>,
    /// Absolute z of the basis waist from the source plane (default: best fit).
    #[serde(default)]
    pub waist_at: Option<Q>,
}

/// `caustic = { ... }` on a probe.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CausticEntry {
    /// Total z span of the scan.
    pub span: Q,
    /// Number of planes (at least 10).
    pub planes: i64,
    /// Offset of the scan centre from the probe (default 0).
    #[serde(default)]
    pub centre: Option<Q>,
}

/// One `[[element]]` table.
#[derive(Debug, Deserialize, Default)]
#[serde(deny_unknown_fields)]
#[allow(missing_docs)]
pub struct ElementEntry {
    pub kind: Option<Spanned<String>>,
    pub name: Option<String>,
    // space
    pub length: Option<Q>,
    pub method: Option<Spanned<String>>,
    // aperture
    pub shape: Option<Spanned<String>>,
    pub radius: Option<Q>,
    pub width: Option<Q>,
    pub height: Option<Q>,
    pub inner: Option<Q>,
    pub outer: Option<Q>,
    pub offset: Option<[Q; 2]>,
    pub invert: Option<bool>,
    // lens
    pub focal_length: Option<Q>,
    pub model: Option<Spanned<String>>,
    // aberration
    pub zernike: Option<BTreeMap<String, Q>>,
    // vortex
    pub charge: Option<i64>,
    // tilt
    pub x: Option<Q>,
    pub y: Option<Q>,
    // mask
    pub file: Option<Spanned<String>>,
    #[serde(rename = "type")]
    pub mask_type: Option<Spanned<String>>,
    // probe
    pub save: Option<Vec<Spanned<String>>>,
    pub modes: Option<ModesEntry>,
    pub caustic: Option<CausticEntry>,
    pub strehl: Option<bool>,
}

impl ElementEntry {
    /// Names of the keys present in this table (for "does not apply" errors).
    pub fn present_keys(&self) -> Vec<&'static str> {
        let mut keys = Vec::new();
        macro_rules! check {
            ($($field:ident => $name:literal),*) => {
                $( if self.$field.is_some() { keys.push($name); } )*
            };
        }
        check!(length => "length", method => "method", shape => "shape", radius => "radius",
               width => "width", height => "height", inner => "inner", outer => "outer",
               offset => "offset", invert => "invert", focal_length => "focal_length",
               model => "model", zernike => "zernike", charge => "charge", x => "x", y => "y",
               file => "file", mask_type => "type", save => "save", modes => "modes",
               caustic => "caustic", strehl => "strehl");
        keys
    }
}
