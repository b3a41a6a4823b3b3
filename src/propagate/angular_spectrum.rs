//! Band-limited angular-spectrum propagation (Goodman ch. 3-4; Matsushima &
//! Shimobaba 2009; from memory).
//!
//! Conventions: the transfer function is the carrier-free
//! `H' = exp(−2πi·z·ρ²/(1/λ + sqrt(1/λ² − ρ²)))`, which equals
//! `exp(i2πz·sqrt(1/λ² − ρ²))·exp(−ikz)` without cancellation. Evanescent
//! components (`ρ > 1/λ`) are dropped. The band limit keeps
//! `|fx|, |fy| ≤ 1/(λ·sqrt((2Δf·z)² + 1))` with `Δf = 1/L`, treating the
//! whole window as the padded window of that paper: components beyond it
//! would cross half the window within `z` and wrap around. Sources should
//! therefore fill at most the central half of the grid. The `1/n²` inverse
//! scaling is folded into the stored transfer function.
//!
//! Storage: `H` depends only on `fx²` and `fy²`, so only the quadrant
//! indexed by `min(k, n−k)` is stored — `(n/2+1)²` values, a quarter of a
//! field — and [`Fft2::convolve`] multiplies by it inside its column pass,
//! while each strip of columns is in cache.

use ndarray::{Array2, Axis};
use num_complex::Complex64;
use rayon::prelude::*;

use crate::error::{Error, Result};
use crate::fft::Fft2;
use crate::field::Field;
use crate::grid::Grid;

/// A precomputed angular-spectrum step for one grid, wavelength and distance.
#[derive(Debug, Clone)]
pub struct AngularSpectrum {
    grid: Grid,
    wavelength_m: f64,
    z_m: f64,
    band_limit_per_m: f64,
    transfer: Array2<Complex64>,
}

/// `ρ²/(1/λ + sqrt(1/λ² − ρ²))` for propagating components, `None` beyond `1/λ`.
#[inline]
pub(crate) fn phase_slowness(rho2: f64, inv_lambda: f64) -> Option<f64> {
    let inside = inv_lambda * inv_lambda - rho2;
    (inside >= 0.0).then(|| rho2 / (inv_lambda + inside.sqrt()))
}

/// The Matsushima–Shimobaba band limit for window `width_m`, cycles/m.
pub fn band_limit_per_m(width_m: f64, wavelength_m: f64, z_m: f64) -> f64 {
    let df = 1.0 / width_m;
    1.0 / (wavelength_m * ((2.0 * df * z_m).powi(2) + 1.0).sqrt())
}

impl AngularSpectrum {
    /// Precomputes the transfer function (parallel over rows).
    ///
    /// # Errors
    /// [`Error::OutOfRange`] if `z_m` or the wavelength is not finite.
    pub fn new(grid: Grid, wavelength_m: f64, z_m: f64) -> Result<Self> {
        if !z_m.is_finite() {
            return Err(Error::out_of_range(
                "propagation distance",
                format!("{z_m} m"),
                "expected a finite length",
            ));
        }
        if !(wavelength_m.is_finite() && wavelength_m > 0.0) {
            return Err(Error::out_of_range(
                "wavelength",
                format!("{wavelength_m} m"),
                "expected a positive, finite length",
            ));
        }
        let n = grid.n();
        let m = n / 2 + 1;
        // |f| for quadrant index q = min(k, n − k): bit-identical to |f[k]|.
        let f: Vec<f64> = grid.freqs_per_m()[..m].to_vec();
        let limit = band_limit_per_m(grid.width_m(), wavelength_m, z_m);
        let inv_lambda = 1.0 / wavelength_m;
        let scale = 1.0 / (n * n) as f64;
        let two_pi_z = 2.0 * std::f64::consts::PI * z_m;
        let mut transfer = Array2::zeros((m, m));
        transfer
            .axis_iter_mut(Axis(0))
            .into_par_iter()
            .enumerate()
            .for_each(|(qy, mut row)| {
                let fy = f[qy];
                if fy.abs() > limit {
                    return;
                }
                for (qx, h) in row.iter_mut().enumerate() {
                    let fx = f[qx];
                    if fx.abs() > limit {
                        continue;
                    }
                    if let Some(s) = phase_slowness(fx * fx + fy * fy, inv_lambda) {
                        *h = Complex64::from_polar(scale, -two_pi_z * s);
                    }
                }
            });
        Ok(AngularSpectrum {
            grid,
            wavelength_m,
            z_m,
            band_limit_per_m: limit,
            transfer,
        })
    }

    /// The distance this step propagates, metres.
    pub fn z_m(&self) -> f64 {
        self.z_m
    }
    /// The band limit applied to |fx| and |fy|, cycles per metre.
    pub fn band_limit_per_m(&self) -> f64 {
        self.band_limit_per_m
    }
    /// The stored transfer function: the `(n/2+1) × (n/2+1)` quadrant
    /// indexed by `min(k, n−k)` along each axis (`H` is even in `fx` and
    /// `fy`), including the `1/n²` factor. See [`Fft2::convolve`].
    pub fn transfer(&self) -> &Array2<Complex64> {
        &self.transfer
    }

    /// Propagates `field` in place; returns the power removed by the band
    /// limit and the evanescent cut, watts.
    ///
    /// # Errors
    /// [`Error::GridMismatch`] if the field is not on this step's grid, and
    /// [`Error::OutOfRange`] if its wavelength differs.
    pub fn apply(&self, field: &mut Field) -> Result<f64> {
        if field.grid() != self.grid {
            return Err(Error::GridMismatch {
                left: "field",
                left_n: field.grid().n(),
                left_spacing_m: field.grid().spacing_m(),
                right: "angular-spectrum step",
                right_n: self.grid.n(),
                right_spacing_m: self.grid.spacing_m(),
            });
        }
        if field.wavelength_m() != self.wavelength_m {
            return Err(Error::out_of_range(
                "field wavelength",
                format!("{} m", field.wavelength_m()),
                format!(
                    "expected {} m, the wavelength of this step",
                    self.wavelength_m
                ),
            ));
        }
        let n = self.grid.n();
        let removed = Fft2::for_size(n).convolve(&mut field.values, &self.transfer);
        Ok((removed * self.grid.cell_area_m2() / (n * n) as f64).max(0.0))
    }
}
