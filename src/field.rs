//! Sampled complex scalar fields.
//!
//! Conventions: `values[[iy, ix]]` is the complex amplitude `U` at
//! `(x, y)` as laid out by [`Grid`]; `|U|²` is irradiance in W/m² and power is
//! `Σ|U|²·dx²` in watts. The on-axis carrier `exp(ikz)` is not stored, so
//! phases are relative to it. Time dependence is `exp(−iωt)`; a forward
//! plane wave is `exp(+ikz)`.

use ndarray::{s, Array2, ArrayView1, Axis, Zip};
use num_complex::Complex64;

use crate::error::{Error, Result};
use crate::grid::Grid;

/// A monochromatic scalar field sampled on a square grid.
#[derive(Debug, Clone, PartialEq)]
pub struct Field {
    grid: Grid,
    wavelength_m: f64,
    /// Complex amplitude in sqrt(W)/m, shape `(n, n)`, `[iy, ix]`.
    pub values: Array2<Complex64>,
}

impl Field {
    /// A field of zeros.
    ///
    /// # Errors
    /// [`Error::OutOfRange`] if the wavelength is not positive and finite.
    pub fn zeros(grid: Grid, wavelength_m: f64) -> Result<Self> {
        check_wavelength(wavelength_m)?;
        Ok(Field {
            grid,
            wavelength_m,
            values: Array2::zeros((grid.n(), grid.n())),
        })
    }

    /// A field from existing samples.
    ///
    /// # Errors
    /// [`Error::Shape`] if `values` is not `n × n`; [`Error::NonFinite`] for NaN or
    /// infinite samples; [`Error::OutOfRange`] for a bad wavelength.
    pub fn from_values(grid: Grid, wavelength_m: f64, values: Array2<Complex64>) -> Result<Self> {
        check_wavelength(wavelength_m)?;
        let (rows, cols) = values.dim();
        if rows != grid.n() || cols != grid.n() {
            return Err(Error::Shape {
                what: "field array".into(),
                got_rows: rows,
                got_cols: cols,
                expected_rows: grid.n(),
                expected_cols: grid.n(),
            });
        }
        let bad = values
            .iter()
            .filter(|v| !(v.re.is_finite() && v.im.is_finite()))
            .count();
        if bad > 0 {
            return Err(Error::NonFinite {
                what: "field array".into(),
                count: bad,
            });
        }
        Ok(Field {
            grid,
            wavelength_m,
            values,
        })
    }

    /// A field whose sample at `(x, y)` (metres) is `f(x, y)`.
    ///
    /// # Errors
    /// As [`Field::zeros`].
    pub fn from_fn(
        grid: Grid,
        wavelength_m: f64,
        f: impl Fn(f64, f64) -> Complex64 + Sync,
    ) -> Result<Self> {
        let mut field = Field::zeros(grid, wavelength_m)?;
        field.fill_with(f);
        Ok(field)
    }

    /// Overwrites every sample with `f(x, y)`, in parallel over rows.
    pub fn fill_with(&mut self, f: impl Fn(f64, f64) -> Complex64 + Sync) {
        let grid = self.grid;
        let xs = grid.coords_m();
        Zip::indexed(&mut self.values).par_for_each(|(iy, ix), v| {
            *v = f(xs[ix], grid.x_m(iy));
        });
    }

    /// Multiplies every sample by `t(x, y)`, in parallel over rows.
    pub fn multiply_by(&mut self, t: impl Fn(f64, f64) -> Complex64 + Sync) {
        let grid = self.grid;
        let xs = grid.coords_m();
        Zip::indexed(&mut self.values).par_for_each(|(iy, ix), v| {
            *v *= t(xs[ix], grid.x_m(iy));
        });
    }

    /// The sampling grid.
    pub fn grid(&self) -> Grid {
        self.grid
    }
    /// Vacuum wavelength, metres.
    pub fn wavelength_m(&self) -> f64 {
        self.wavelength_m
    }
    /// Wavenumber `2π/λ`, rad/m.
    pub fn wavenumber_per_m(&self) -> f64 {
        2.0 * std::f64::consts::PI / self.wavelength_m
    }
    /// Replaces the grid (same `n`) after a propagator changed the spacing.
    ///
    /// # Panics
    /// If `grid.n()` differs from the current size.
    pub fn set_grid(&mut self, grid: Grid) {
        assert_eq!(grid.n(), self.grid.n(), "set_grid cannot change n");
        self.grid = grid;
    }

    /// Power `Σ|U|²·dx²`, watts.
    pub fn power_w(&self) -> f64 {
        sum_norm_sqr(&self.values) * self.grid.cell_area_m2()
    }

    /// Irradiance `|U|²`, W/m².
    pub fn irradiance(&self) -> Array2<f64> {
        let mut out = Array2::zeros(self.values.dim());
        Zip::from(&mut out)
            .and(&self.values)
            .par_for_each(|o, v| *o = v.norm_sqr());
        out
    }

    /// Rescales the field so that its power is `power_w`.
    ///
    /// # Errors
    /// [`Error::Physics`] if the field has zero power.
    pub fn normalise_to(&mut self, power_w: f64) -> Result<()> {
        let p = self.power_w();
        if !(p > 0.0 && p.is_finite()) {
            return Err(Error::Physics(format!(
                "cannot normalise a field of power {p} W to {power_w} W"
            )));
        }
        let scale = (power_w / p).sqrt();
        self.values.par_mapv_inplace(|v| v * scale);
        Ok(())
    }

    /// Zero-pads symmetrically to `n` samples per side (axis stays on axis).
    ///
    /// # Errors
    /// [`Error::OutOfRange`] if `n` is smaller than the current size.
    pub fn padded(&self, n: usize) -> Result<Field> {
        let old = self.grid.n();
        if n < old {
            return Err(Error::out_of_range(
                "padded size",
                n,
                format!("expected at least the current size {old}"),
            ));
        }
        let grid = self.grid.with_n(n)?;
        let mut out = Field::zeros(grid, self.wavelength_m)?;
        let off = n / 2 - old / 2;
        out.values
            .slice_mut(s![off..off + old, off..off + old])
            .assign(&self.values);
        Ok(out)
    }

    /// Crops symmetrically to `n` samples per side; returns the field and the
    /// power that was outside the kept window, watts.
    ///
    /// # Errors
    /// [`Error::OutOfRange`] if `n` is larger than the current size.
    pub fn cropped(&self, n: usize) -> Result<(Field, f64)> {
        let old = self.grid.n();
        if n > old {
            return Err(Error::out_of_range(
                "cropped size",
                n,
                format!("expected at most the current size {old}"),
            ));
        }
        let grid = self.grid.with_n(n)?;
        let off = old / 2 - n / 2;
        let values = self.values.slice(s![off..off + n, off..off + n]).to_owned();
        let kept = Field {
            grid,
            wavelength_m: self.wavelength_m,
            values,
        };
        let lost = (self.power_w() - kept.power_w()).max(0.0);
        Ok((kept, lost))
    }

    /// Normalised overlap `⟨self, other⟩ / sqrt(P_self·P_other)`: complex,
    /// magnitude 1 for identical shapes, phase = arg of `Σ conj(self)·other`.
    ///
    /// # Errors
    /// [`Error::GridMismatch`] if the grids differ.
    pub fn overlap(&self, other: &Field) -> Result<Complex64> {
        if self.grid != other.grid {
            return Err(Error::GridMismatch {
                left: "field",
                left_n: self.grid.n(),
                left_spacing_m: self.grid.spacing_m(),
                right: "other field",
                right_n: other.grid.n(),
                right_spacing_m: other.grid.spacing_m(),
            });
        }
        let inner = inner_product(&self.values, &other.values);
        let norm = (sum_norm_sqr(&self.values) * sum_norm_sqr(&other.values)).sqrt();
        Ok(inner / norm)
    }
}

/// `f(iy, row)` for every row, computed in parallel and returned in row
/// order. Summing the results in that order makes a reduction independent
/// of the number of threads.
pub fn map_rows<T, F>(values: &Array2<Complex64>, f: F) -> Vec<T>
where
    T: Send,
    F: Fn(usize, ArrayView1<Complex64>) -> T + Sync,
{
    use rayon::prelude::*;
    values
        .axis_iter(Axis(0))
        .into_par_iter()
        .enumerate()
        .map(|(iy, row)| f(iy, row))
        .collect()
}

/// `Σ|v|²` over an array, in parallel over rows. The row sums are added in
/// row order, so the result does not depend on the number of threads.
pub fn sum_norm_sqr(values: &Array2<Complex64>) -> f64 {
    map_rows(values, |_, row| {
        row.iter().map(|v| v.norm_sqr()).sum::<f64>()
    })
    .iter()
    .sum()
}

/// `Σ conj(a)·b` over two arrays of the same shape, deterministic as
/// [`sum_norm_sqr`].
pub fn inner_product(a: &Array2<Complex64>, b: &Array2<Complex64>) -> Complex64 {
    use rayon::prelude::*;
    let rows: Vec<Complex64> = a
        .axis_iter(Axis(0))
        .into_par_iter()
        .zip(b.axis_iter(Axis(0)).into_par_iter())
        .map(|(ra, rb)| {
            ra.iter()
                .zip(rb.iter())
                .map(|(x, y)| x.conj() * y)
                .sum::<Complex64>()
        })
        .collect();
    rows.iter().sum()
}

fn check_wavelength(wavelength_m: f64) -> Result<()> {
    if wavelength_m.is_finite() && wavelength_m > 0.0 {
        Ok(())
    } else {
        Err(Error::out_of_range(
            "wavelength",
            format!("{wavelength_m} m"),
            "expected a positive, finite length",
        ))
    }
}

impl approx::AbsDiffEq for Field {
    type Epsilon = f64;
    fn default_epsilon() -> f64 {
        1e-12
    }
    fn abs_diff_eq(&self, other: &Self, epsilon: f64) -> bool {
        self.grid == other.grid
            && self.wavelength_m == other.wavelength_m
            && Zip::from(&self.values)
                .and(&other.values)
                .all(|a, b| (a - b).norm() <= epsilon)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn pad_crop_round_trip_keeps_axis_and_power() {
        let grid = Grid::new(8, 1e-3).unwrap();
        let f = Field::from_fn(grid, 1e-6, |x, y| Complex64::new(x + 10.0 * y, 1.0)).unwrap();
        let p = f.padded(16).unwrap();
        assert_eq!(p.values[[8, 8]], f.values[[4, 4]]);
        assert_relative_eq!(p.power_w(), f.power_w(), max_relative = 1e-14);
        let (c, lost) = p.cropped(8).unwrap();
        assert_eq!(c, f);
        assert_eq!(lost, 0.0);
    }

    #[test]
    fn rejects_wrong_shape_and_nan() {
        let grid = Grid::new(4, 1e-3).unwrap();
        assert!(matches!(
            Field::from_values(grid, 1e-6, Array2::zeros((4, 5))),
            Err(Error::Shape { .. })
        ));
        let mut v = Array2::zeros((4, 4));
        v[[1, 1]] = Complex64::new(f64::NAN, 0.0);
        assert!(matches!(
            Field::from_values(grid, 1e-6, v),
            Err(Error::NonFinite { count: 1, .. })
        ));
        assert!(Field::zeros(grid, 0.0).is_err());
    }
}
