//! Hermite-Gauss and Laguerre-Gauss modes as sampled fields.

use num_complex::Complex64;

use super::gaussian::GaussianBeam;
use super::hermite_gauss::hermite_function;
use super::laguerre_gauss::laguerre_radial;
use crate::error::{Error, Result};
use crate::field::Field;
use crate::grid::Grid;

/// The transverse shape of a paraxial mode.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ModeShape {
    /// Hermite-Gauss `HG_mn`: `m` nodes along x, `n` along y. `HG_00` is the
    /// fundamental Gaussian.
    HermiteGauss {
        /// Order along x.
        m: usize,
        /// Order along y.
        n: usize,
    },
    /// Laguerre-Gauss `LG_pl`: `p` radial nodes, azimuthal charge `l`
    /// (phase `exp(+ilφ)`).
    LaguerreGauss {
        /// Radial index.
        p: usize,
        /// Azimuthal index (either sign).
        l: i32,
    },
}

impl ModeShape {
    /// Mode order `N = m + n` or `2p + |l|`; the Gouy phase is `(N+1)·atan(z/zR)`.
    pub fn order(&self) -> usize {
        match *self {
            ModeShape::HermiteGauss { m, n } => m + n,
            ModeShape::LaguerreGauss { p, l } => 2 * p + l.unsigned_abs() as usize,
        }
    }
    /// Beam quality `[Mx², My²]` (Siegman 1990, from memory).
    pub fn m2(&self) -> [f64; 2] {
        match *self {
            ModeShape::HermiteGauss { m, n } => [2.0 * m as f64 + 1.0, 2.0 * n as f64 + 1.0],
            ModeShape::LaguerreGauss { .. } => {
                let v = self.order() as f64 + 1.0;
                [v, v]
            }
        }
    }
}

/// A unit-power paraxial mode with its waist at `z = 0`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Mode {
    /// Transverse shape.
    pub shape: ModeShape,
    /// The embedded fundamental Gaussian (waist and wavelength).
    pub beam: GaussianBeam,
}

impl Mode {
    /// A mode of the given shape on a Gaussian of waist `waist_m`.
    ///
    /// # Errors
    /// As [`GaussianBeam::new`].
    pub fn new(shape: ModeShape, wavelength_m: f64, waist_m: f64) -> Result<Self> {
        Ok(Mode {
            shape,
            beam: GaussianBeam::new(wavelength_m, waist_m)?,
        })
    }

    /// Gouy phase `(N+1)·atan(z/zR)` at `z_m` from the waist, radians.
    pub fn gouy_at(&self, z_m: f64) -> f64 {
        (self.shape.order() as f64 + 1.0) * self.beam.gouy_at(z_m)
    }

    /// Complex amplitude of the unit-power mode at `(x, y)` and `z_m` from
    /// the waist, carrier omitted.
    pub fn value_at(&self, x_m: f64, y_m: f64, z_m: f64) -> Complex64 {
        let w = self.beam.radius_at(z_m);
        let k = 2.0 * std::f64::consts::PI / self.beam.wavelength_m();
        let r2 = x_m * x_m + y_m * y_m;
        let phase = k * r2 * self.beam.curvature_at(z_m) / 2.0 - self.gouy_at(z_m);
        let amplitude = match self.shape {
            ModeShape::HermiteGauss { m, n } => {
                let s = 2f64.sqrt() / w;
                s * hermite_function(m, s * x_m) * hermite_function(n, s * y_m)
            }
            ModeShape::LaguerreGauss { p, l } => {
                let t = 2.0 * r2 / (w * w);
                (2.0 / std::f64::consts::PI).sqrt() / w
                    * laguerre_radial(p, l.unsigned_abs() as usize, t)
            }
        };
        let azimuth = match self.shape {
            ModeShape::LaguerreGauss { l, .. } if l != 0 => l as f64 * y_m.atan2(x_m),
            _ => 0.0,
        };
        Complex64::from_polar(amplitude, phase + azimuth)
    }

    /// Samples the mode at `z_m` from its waist, scaled to `power_w`
    /// (the closed form's power, not renormalised on the grid).
    ///
    /// # Errors
    /// As [`Field::zeros`].
    pub fn sample(&self, grid: Grid, z_m: f64, power_w: f64) -> Result<Field> {
        let scale = power_w.sqrt();
        Field::from_fn(grid, self.beam.wavelength_m(), |x, y| {
            self.value_at(x, y, z_m) * scale
        })
    }
}

/// A coherent sum of modes with complex weights, all sharing one z.
#[derive(Debug, Clone, PartialEq)]
pub struct Superposition {
    /// The terms: unit-power modes and their complex weights.
    pub terms: Vec<(Mode, Complex64)>,
}

impl Superposition {
    /// Samples `Σ weight·mode` at `z_m` and normalises the result to `power_w`
    /// on the grid.
    ///
    /// # Errors
    /// [`Error::Physics`] if there are no terms or the sum vanishes; also
    /// as [`Field::zeros`].
    pub fn sample(&self, grid: Grid, z_m: f64, power_w: f64) -> Result<Field> {
        let mut field = self.sample_unnormalised(grid, z_m)?;
        field.normalise_to(power_w)?;
        Ok(field)
    }

    /// Samples `Σ weight·mode` at `z_m` as it stands (unit-power modes times
    /// their weights), without normalising on the grid.
    ///
    /// # Errors
    /// [`Error::Physics`] if there are no terms; also as [`Field::zeros`].
    pub fn sample_unnormalised(&self, grid: Grid, z_m: f64) -> Result<Field> {
        let first = self
            .terms
            .first()
            .ok_or_else(|| Error::Physics("a superposition needs at least one term".into()))?;
        Field::from_fn(grid, first.0.beam.wavelength_m(), |x, y| {
            self.terms
                .iter()
                .map(|(mode, weight)| mode.value_at(x, y, z_m) * weight)
                .sum()
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn gaussian_peak_matches_closed_form() {
        // I0 = 2P/(π w²) (Siegman ch. 17, from memory), at the waist and at z = zR.
        let mode = Mode::new(ModeShape::HermiteGauss { m: 0, n: 0 }, 1e-6, 1e-3).unwrap();
        for z in [0.0, mode.beam.rayleigh_m()] {
            let w = mode.beam.radius_at(z);
            let i0 = mode.value_at(0.0, 0.0, z).norm_sqr();
            assert_relative_eq!(
                i0,
                2.0 / (std::f64::consts::PI * w * w),
                max_relative = 1e-14
            );
        }
        // The on-axis phase is −ψ: at z = zR that is −π/4.
        let v = mode.value_at(0.0, 0.0, mode.beam.rayleigh_m());
        assert_relative_eq!(v.arg(), -std::f64::consts::FRAC_PI_4, max_relative = 1e-14);
    }

    #[test]
    fn lg0l_peak_and_ring_radius() {
        // PHYSICS.md §3 (d.h.): ring at w·sqrt(|l|/2), peak
        // (2P/(πw²))·|l|^|l|·e^(−|l|)/|l|! — 0.367879, 0.270671, 0.224042.
        let w = 1e-3;
        for (l, factor) in [(1, 0.367879), (-2, 0.270671), (3, 0.224042)] {
            let mode = Mode::new(ModeShape::LaguerreGauss { p: 0, l }, 1e-6, w).unwrap();
            let r = w * (l.unsigned_abs() as f64 / 2.0).sqrt();
            let peak = mode.value_at(r, 0.0, 0.0).norm_sqr();
            let expected = factor * 2.0 / (std::f64::consts::PI * w * w);
            assert_relative_eq!(peak, expected, max_relative = 2e-6);
        }
    }
}
