//! Single-FFT Fresnel transform for long distances (Goodman ch. 4-5; Voelz
//! 2011 ch. 5; from memory).
//!
//! Conventions: `U2(r2) = (1/(iλz))·exp(iπr2²/(λz))·dx1²·FFTc[U1·exp(iπr1²/(λz))]`
//! with output spacing `dx2 = λ|z|/(n·dx1)`, carrier omitted. For `z < 0`
//! the conjugate kernel is used. An optional thin lens of focal length `f`
//! just before the step is merged into the input chirp
//! `exp(iπr1²·(1/z − 1/f)/λ)`, so a lens whose own phase would be
//! undersampled on the grid can still be focused exactly. The chirps are
//! separable and built from 1-D factors, which are merged with the centring
//! phases of the FFT: one element-wise pass before the FFT and one after
//! (no 2-D chirp is stored). Power is conserved exactly (Parseval).

use num_complex::Complex64;

use crate::error::{Error, Result};
use crate::fft::{transform_centred_separable, Direction};
use crate::field::Field;
use crate::grid::Grid;

/// A single-FFT Fresnel step over `z_m`, optionally merged with a preceding
/// thin lens.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FresnelSingleFft {
    z_m: f64,
    lens_focal_length_m: Option<f64>,
}

impl FresnelSingleFft {
    /// A step over `z_m` (non-zero, finite).
    ///
    /// # Errors
    /// [`Error::OutOfRange`] for zero or non-finite `z_m`.
    pub fn new(z_m: f64) -> Result<Self> {
        if !(z_m.is_finite() && z_m != 0.0) {
            return Err(Error::out_of_range(
                "Fresnel step length",
                format!("{z_m} m"),
                "expected a non-zero, finite length (the output spacing is λ|z|/(n·dx))",
            ));
        }
        Ok(FresnelSingleFft {
            z_m,
            lens_focal_length_m: None,
        })
    }

    /// The same step preceded by a paraxial thin lens of focal length `f_m`.
    ///
    /// # Errors
    /// [`Error::OutOfRange`] for zero or non-finite `f_m`.
    pub fn after_lens(mut self, f_m: f64) -> Result<Self> {
        if !(f_m.is_finite() && f_m != 0.0) {
            return Err(Error::out_of_range(
                "focal length",
                format!("{f_m} m"),
                "expected a non-zero, finite length",
            ));
        }
        self.lens_focal_length_m = Some(f_m);
        Ok(self)
    }

    /// Output grid for an input grid.
    ///
    /// # Errors
    /// [`Error::OutOfRange`] if the output spacing is not representable.
    pub fn output_grid(&self, input: Grid, wavelength_m: f64) -> Result<Grid> {
        Grid::new(input.n(), wavelength_m * self.z_m.abs() / input.width_m())
    }

    /// Propagates `field` in place; the field's grid changes to
    /// [`FresnelSingleFft::output_grid`].
    ///
    /// # Errors
    /// As [`FresnelSingleFft::output_grid`].
    pub fn apply(&self, field: &mut Field) -> Result<()> {
        self.apply_into(None, field)
    }

    /// [`FresnelSingleFft::apply`] reading the input from `src` (if given)
    /// instead of `field`, so a caller that propagates copies of one field
    /// pays no separate copy pass. `field` must have the same `n` and
    /// wavelength as `src`.
    pub(crate) fn apply_into(&self, src: Option<&Field>, field: &mut Field) -> Result<()> {
        let (input, lambda) = match src {
            Some(s) => (s.grid(), s.wavelength_m()),
            None => (field.grid(), field.wavelength_m()),
        };
        let output = self.output_grid(input, lambda)?;
        let z = self.z_m;
        let curvature = 1.0 / z - self.lens_focal_length_m.map_or(0.0, |f| 1.0 / f);
        let chirp_in = chirp(input, lambda, curvature);
        let direction = if z > 0.0 {
            Direction::Forward
        } else {
            Direction::Backward
        };
        let chirp_out = chirp(output, lambda, 1.0 / z);
        // 1/(iλz)·dx1²: keeps Σ|U|²dx² fixed (Parseval).
        let prefactor = Complex64::new(0.0, -1.0) * (input.cell_area_m2() / (lambda * z));
        transform_centred_separable(
            &mut field.values,
            src.map(|s| &s.values),
            direction,
            &chirp_in,
            &chirp_out,
            prefactor,
        );
        field.set_grid(output);
        Ok(())
    }
}

/// 1-D factors `exp(iπ·x²·c/λ)` of the separable chirp `exp(iπr²c/λ)`.
fn chirp(grid: Grid, wavelength_m: f64, curvature_per_m: f64) -> Vec<Complex64> {
    grid.coords_m()
        .iter()
        .map(|&x| {
            Complex64::from_polar(
                1.0,
                std::f64::consts::PI * x * x * curvature_per_m / wavelength_m,
            )
        })
        .collect()
}
