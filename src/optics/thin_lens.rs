//! Thin lenses, paraxial or exact (an ideal spherical wave).
//!
//! Conventions: `f > 0` converges. Paraxial: `t = exp(−ik r²/(2f))`
//! (Goodman ch. 5, from memory). Exact: `t = exp(−ik·(sqrt(r² + f²) − f))`
//! for `f > 0` (common practice), computed as `−k r²/(f + sign(f)·sqrt(r² + f²))`
//! to avoid cancellation; it differs from the paraxial phase by the
//! spherical aberration `W040 = a⁴/(8f³)`.

use super::Transmission;
use crate::error::{Error, Result};
use crate::field::Field;
use num_complex::Complex64;

/// Which phase a thin lens applies.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LensModel {
    /// Quadratic phase `−k r²/(2f)`; pair with Fresnel propagation.
    Paraxial,
    /// Ideal spherical wave to the focus; pair with the angular spectrum.
    Exact,
}

/// A thin lens on the axis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ThinLens {
    /// Focal length, metres (positive converges).
    pub focal_length_m: f64,
    /// Phase model.
    pub model: LensModel,
}

impl ThinLens {
    /// A lens of focal length `focal_length_m`.
    ///
    /// # Errors
    /// [`Error::OutOfRange`] for zero or non-finite focal length.
    pub fn new(focal_length_m: f64, model: LensModel) -> Result<Self> {
        if !(focal_length_m.is_finite() && focal_length_m != 0.0) {
            return Err(Error::out_of_range(
                "focal length",
                format!("{focal_length_m} m"),
                "expected a non-zero, finite length (negative diverges)",
            ));
        }
        Ok(ThinLens {
            focal_length_m,
            model,
        })
    }

    /// Phase added at radius² `r2` (m²), radians.
    pub fn phase_rad(&self, k: f64, r2: f64) -> f64 {
        let f = self.focal_length_m;
        match self.model {
            LensModel::Paraxial => -k * r2 / (2.0 * f),
            LensModel::Exact => -k * r2 / (f + f.signum() * (r2 + f * f).sqrt()),
        }
    }

    /// Largest local spatial frequency of the lens phase within radius
    /// `radius_m`, cycles per metre: `r/(λ|f|)` (paraxial) or
    /// `r/(λ·sqrt(r² + f²))` (exact) — PHYSICS.md §4.
    pub fn local_frequency_per_m(&self, wavelength_m: f64, radius_m: f64) -> f64 {
        let f = self.focal_length_m.abs();
        match self.model {
            LensModel::Paraxial => radius_m / (wavelength_m * f),
            LensModel::Exact => radius_m / (wavelength_m * (radius_m * radius_m + f * f).sqrt()),
        }
    }

    /// Multiplies the field by the lens phase.
    pub fn apply(&self, field: &mut Field) -> Transmission {
        let p = field.power_w();
        let k = field.wavenumber_per_m();
        field.multiply_by(|x, y| Complex64::from_polar(1.0, self.phase_rad(k, x * x + y * y)));
        Transmission::lossless(p)
    }
}
