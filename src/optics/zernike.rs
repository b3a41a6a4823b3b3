//! Zernike aberrations by Noll index (Noll 1976, from memory).
//!
//! Conventions: `ρ = r/a` with `a` the normalisation radius and
//! `θ = atan2(y, x)`; `Z_j = sqrt(n+1)·R_n^m(ρ)·sqrt(2)·cos(mθ)` for even j,
//! `sin(mθ)` for odd j, `sqrt(n+1)·R_n^0(ρ)` for m = 0. The terms are
//! orthonormal over the unit disc, so a coefficient is the RMS of its term
//! and the RMS wavefront error is `sqrt(Σ_{j≥2} a_j²)`. The aberration
//! `W = Σ a_j·Z_j` (metres of optical path) multiplies the field by
//! `exp(ikW)` on every pixel that overlaps the disc (centre within
//! `a + dx/√2`, the polynomial continued over that half-pixel margin), so
//! that an area-weighted aperture of the same radius has no unaberrated
//! edge pixels; further out the field is unchanged.

use num_complex::Complex64;

use super::Transmission;
use crate::error::{Error, Result};
use crate::field::Field;

/// Radial degree `n` and signed azimuthal order `m` of Noll index `j ≥ 1`
/// (`m < 0` means a sine term).
///
/// ```
/// use beamwright::optics::zernike::noll_to_nm;
/// assert_eq!(noll_to_nm(4), (2, 0));   // defocus
/// assert_eq!(noll_to_nm(7), (3, -1));  // coma y (sin)
/// assert_eq!(noll_to_nm(22), (6, 0));  // secondary spherical
/// ```
pub fn noll_to_nm(j: usize) -> (usize, i32) {
    let mut n = 0usize;
    let mut j1 = j.saturating_sub(1);
    while j1 > n {
        n += 1;
        j1 -= n;
    }
    let magnitude = (n % 2) + 2 * ((j1 + (n + 1) % 2) / 2);
    let m = magnitude as i32;
    if j.is_multiple_of(2) {
        (n, m)
    } else {
        (n, -m)
    }
}

/// Radial polynomial `R_n^|m|(ρ)` by its explicit sum.
pub fn radial(n: usize, m: usize, rho: f64) -> f64 {
    if m > n || !(n - m).is_multiple_of(2) {
        return 0.0;
    }
    let fact = |k: usize| (1..=k).map(|v| v as f64).product::<f64>();
    (0..=(n - m) / 2)
        .map(|k| {
            let sign = if k % 2 == 0 { 1.0 } else { -1.0 };
            sign * fact(n - k) / (fact(k) * fact((n + m) / 2 - k) * fact((n - m) / 2 - k))
                * rho.powi((n - 2 * k) as i32)
        })
        .sum()
}

/// The orthonormal Noll term `Z_j(ρ, θ)`.
pub fn zernike(j: usize, rho: f64, theta: f64) -> f64 {
    let (n, m) = noll_to_nm(j);
    let r = radial(n, m.unsigned_abs() as usize, rho);
    let nf = (n + 1) as f64;
    match m {
        0 => nf.sqrt() * r,
        m if m > 0 => (2.0 * nf).sqrt() * r * (m as f64 * theta).cos(),
        m => (2.0 * nf).sqrt() * r * ((-m) as f64 * theta).sin(),
    }
}

/// A Zernike phase screen.
#[derive(Debug, Clone, PartialEq)]
pub struct Aberration {
    /// Normalisation radius `a`, metres.
    pub radius_m: f64,
    /// Centre `[x, y]`, metres.
    pub offset_m: [f64; 2],
    /// `(Noll index, RMS coefficient as optical path in metres)`.
    pub terms: Vec<(usize, f64)>,
}

impl Aberration {
    /// A screen over radius `radius_m` with `(j, coefficient_m)` terms.
    ///
    /// # Errors
    /// [`Error::OutOfRange`] for a bad radius, `j = 0`, `j > 231` (n > 20) or
    /// non-finite coefficients.
    pub fn new(radius_m: f64, terms: Vec<(usize, f64)>) -> Result<Self> {
        if !(radius_m.is_finite() && radius_m > 0.0) {
            return Err(Error::out_of_range(
                "aberration radius",
                format!("{radius_m} m"),
                "expected a positive, finite length",
            ));
        }
        for &(j, c) in &terms {
            if !(1..=231).contains(&j) {
                return Err(Error::out_of_range(
                    "Noll index",
                    j,
                    "expected 1 to 231 (radial degree up to 20)",
                ));
            }
            if !c.is_finite() {
                return Err(Error::out_of_range(
                    format!("Zernike coefficient {j}"),
                    c,
                    "expected a finite value",
                ));
            }
        }
        Ok(Aberration {
            radius_m,
            offset_m: [0.0, 0.0],
            terms,
        })
    }

    /// Optical path `W(x, y)` in metres (0 outside the disc).
    pub fn path_m(&self, x_m: f64, y_m: f64) -> f64 {
        self.path_within_m(x_m, y_m, 0.0)
    }

    /// Optical path `W(x, y)` in metres, applied out to `margin_m` beyond
    /// the disc edge (the polynomial continued), 0 further out. With
    /// `margin_m = dx/√2` every pixel that overlaps the disc gets the phase,
    /// so the partly open edge pixels of an area-weighted aperture of the
    /// same radius are aberrated too.
    pub fn path_within_m(&self, x_m: f64, y_m: f64, margin_m: f64) -> f64 {
        let (x, y) = (x_m - self.offset_m[0], y_m - self.offset_m[1]);
        let r = (x * x + y * y).sqrt();
        if r > self.radius_m + margin_m {
            return 0.0;
        }
        let rho = r / self.radius_m;
        let theta = y.atan2(x);
        self.terms
            .iter()
            .map(|&(j, c)| c * zernike(j, rho, theta))
            .sum()
    }

    /// RMS wavefront error over the disc excluding piston, metres.
    pub fn rms_m(&self) -> f64 {
        self.terms
            .iter()
            .filter(|(j, _)| *j >= 2)
            .map(|(_, c)| c * c)
            .sum::<f64>()
            .sqrt()
    }

    /// RMS of the optical path over the beam, weighted by the field's
    /// amplitude `|U|`, piston removed, metres. This is the σ of the
    /// Maréchal estimate for a non-uniform pupil: the on-axis focal
    /// amplitude is `∫A·exp(iΦ)`, whose expansion weights the phase variance
    /// by `A` (PHYSICS.md §6, derived there).
    pub fn amplitude_weighted_rms_m(&self, field: &Field) -> f64 {
        let xs = field.grid().coords_m();
        let margin = field.grid().spacing_m() * std::f64::consts::FRAC_1_SQRT_2;
        let rows = crate::field::map_rows(&field.values, |iy, row| {
            let y = xs[iy];
            row.iter().zip(&xs).fold([0.0; 3], |[a, aw, aw2], (v, &x)| {
                let amp = v.norm();
                if amp == 0.0 {
                    return [a, aw, aw2];
                }
                let w = self.path_within_m(x, y, margin);
                [a + amp, aw + amp * w, aw2 + amp * w * w]
            })
        });
        let [a, aw, aw2] = rows.iter().fold([0.0; 3], |acc, r| {
            [acc[0] + r[0], acc[1] + r[1], acc[2] + r[2]]
        });
        if a <= 0.0 {
            return 0.0;
        }
        let mean = aw / a;
        (aw2 / a - mean * mean).max(0.0).sqrt()
    }

    /// Multiplies the field by `exp(ikW)`.
    pub fn apply(&self, field: &mut Field) -> Transmission {
        let p = field.power_w();
        let k = field.wavenumber_per_m();
        let margin = field.grid().spacing_m() * std::f64::consts::FRAC_1_SQRT_2;
        field.multiply_by(|x, y| Complex64::from_polar(1.0, k * self.path_within_m(x, y, margin)));
        Transmission::lossless(p)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn table_of_low_orders() {
        // Noll 1976 table (from memory), PHYSICS.md §5.
        let (rho, th) = (0.6f64, 0.7f64);
        let cases = [
            (1, 1.0),
            (2, 2.0 * rho * th.cos()),
            (3, 2.0 * rho * th.sin()),
            (4, 3f64.sqrt() * (2.0 * rho * rho - 1.0)),
            (5, 6f64.sqrt() * rho * rho * (2.0 * th).sin()),
            (6, 6f64.sqrt() * rho * rho * (2.0 * th).cos()),
            (7, 8f64.sqrt() * (3.0 * rho.powi(3) - 2.0 * rho) * th.sin()),
            (8, 8f64.sqrt() * (3.0 * rho.powi(3) - 2.0 * rho) * th.cos()),
            (9, 8f64.sqrt() * rho.powi(3) * (3.0 * th).sin()),
            (10, 8f64.sqrt() * rho.powi(3) * (3.0 * th).cos()),
            (
                11,
                5f64.sqrt() * (6.0 * rho.powi(4) - 6.0 * rho * rho + 1.0),
            ),
        ];
        for (j, expected) in cases {
            assert!((zernike(j, rho, th) - expected).abs() < 1e-13, "j = {j}");
        }
    }

    #[test]
    fn rejects_bad_terms() {
        assert!(Aberration::new(1e-3, vec![(0, 1e-9)]).is_err());
        assert!(Aberration::new(1e-3, vec![(4, f64::NAN)]).is_err());
        assert!(Aberration::new(0.0, vec![(4, 1e-9)]).is_err());
    }
}
