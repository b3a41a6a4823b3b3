//! Square sampling grids.
//!
//! Conventions: `n × n` samples at spacing `dx` (metres) on both axes.
//! Sample `[iy, ix]` sits at `x = (ix − n/2)·dx`, `y = (iy − n/2)·dx`
//! (integer division), so the optical axis is at index `[n/2, n/2]` for even
//! and odd `n`, and row 0 is the most negative y. Spatial frequencies are in
//! FFT order: `fx[k] = k/L` for `k < ceil(n/2)`, `(k − n)/L` after, with
//! `L = n·dx`.

use crate::error::{Error, Result};

/// Largest grid side accepted by [`Grid::new`]; bigger grids are refused
/// before any allocation.
pub const MAX_N: usize = 1 << 15;

/// A square sampling grid: `n` samples per side at `spacing_m`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Grid {
    n: usize,
    spacing_m: f64,
}

impl Grid {
    /// A grid of `n × n` samples at `spacing_m` metres.
    ///
    /// # Errors
    /// [`Error::OutOfRange`] if `n < 2`, `n > MAX_N`, or the spacing is not
    /// positive and finite.
    ///
    /// ```
    /// use beamwright::Grid;
    /// let g = Grid::new(256, 5e-6).unwrap();
    /// assert_eq!(g.x_m(128), 0.0);
    /// assert!(Grid::new(0, 5e-6).is_err());
    /// ```
    pub fn new(n: usize, spacing_m: f64) -> Result<Self> {
        if !(2..=MAX_N).contains(&n) {
            return Err(Error::out_of_range(
                "grid n",
                n,
                format!("expected 2 to {MAX_N} samples per side"),
            ));
        }
        if !(spacing_m.is_finite() && spacing_m > 0.0) {
            return Err(Error::out_of_range(
                "grid spacing",
                format!("{spacing_m} m"),
                "expected a positive, finite length",
            ));
        }
        Ok(Grid { n, spacing_m })
    }

    /// Samples per side.
    pub fn n(&self) -> usize {
        self.n
    }
    /// Sample spacing in metres.
    pub fn spacing_m(&self) -> f64 {
        self.spacing_m
    }
    /// Side length `n·dx` in metres.
    pub fn width_m(&self) -> f64 {
        self.n as f64 * self.spacing_m
    }
    /// Area of one sample, m².
    pub fn cell_area_m2(&self) -> f64 {
        self.spacing_m * self.spacing_m
    }
    /// Index of the optical axis along either axis (`n/2`).
    pub fn centre_index(&self) -> usize {
        self.n / 2
    }
    /// x coordinate of column `ix` (also y of row `iy`), metres.
    #[inline]
    pub fn x_m(&self, ix: usize) -> f64 {
        (ix as f64 - (self.n / 2) as f64) * self.spacing_m
    }
    /// All coordinates along one axis, metres, in index order.
    pub fn coords_m(&self) -> Vec<f64> {
        (0..self.n).map(|i| self.x_m(i)).collect()
    }
    /// Spatial frequency of FFT bin `k`, cycles per metre, in FFT order.
    #[inline]
    pub fn freq_per_m(&self, k: usize) -> f64 {
        let n = self.n as i64;
        let k = k as i64;
        let signed = if k < (n + 1) / 2 { k } else { k - n };
        signed as f64 / self.width_m()
    }
    /// All spatial frequencies along one axis in FFT order, cycles per metre.
    pub fn freqs_per_m(&self) -> Vec<f64> {
        (0..self.n).map(|k| self.freq_per_m(k)).collect()
    }
    /// Nyquist frequency `1/(2dx)`, cycles per metre.
    pub fn nyquist_per_m(&self) -> f64 {
        0.5 / self.spacing_m
    }
    /// The same spacing with `n` samples per side.
    ///
    /// # Errors
    /// As [`Grid::new`].
    pub fn with_n(&self, n: usize) -> Result<Grid> {
        Grid::new(n, self.spacing_m)
    }
    /// Bytes of one complex128 field on this grid.
    pub fn field_bytes(&self) -> f64 {
        (self.n * self.n) as f64 * 16.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn axis_and_frequencies() {
        let g = Grid::new(8, 1.0).unwrap();
        assert_eq!(
            g.coords_m(),
            vec![-4.0, -3.0, -2.0, -1.0, 0.0, 1.0, 2.0, 3.0]
        );
        let f: Vec<f64> = g.freqs_per_m().iter().map(|f| f * 8.0).collect();
        assert_eq!(f, vec![0.0, 1.0, 2.0, 3.0, -4.0, -3.0, -2.0, -1.0]);
        let g = Grid::new(5, 1.0).unwrap();
        assert_eq!(g.coords_m(), vec![-2.0, -1.0, 0.0, 1.0, 2.0]);
        let f: Vec<f64> = g.freqs_per_m().iter().map(|f| f * 5.0).collect();
        assert_eq!(f, vec![0.0, 1.0, 2.0, -2.0, -1.0]);
    }

    #[test]
    fn rejects_bad_values() {
        assert!(Grid::new(1, 1e-6).is_err());
        assert!(Grid::new(MAX_N + 2, 1e-6).is_err());
        assert!(Grid::new(64, 0.0).is_err());
        assert!(Grid::new(64, -1e-6).is_err());
        assert!(Grid::new(64, f64::NAN).is_err());
    }
}
