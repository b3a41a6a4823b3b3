//! Pure phase screens: spiral (vortex) phase plates and tilts.
//!
//! Conventions: the vortex multiplies by `exp(ilφ)` with
//! `φ = atan2(y − y0, x − x0)`, so `l > 0` carries `+lħ` per photon about
//! +z. Pixels within [`VORTEX_AVERAGED_RADIUS`] pixels of the singularity
//! get the pixel average of `exp(ilφ)` (16×16 sub-samples), as a real plate
//! imaged onto the pixel would give: a pixel centred on the singularity
//! transmits 0 instead of an arbitrary phase, so the sampled vortex has a
//! dark core rather than a point source on its axis; the tilt multiplies by `exp(ik(x·sinθx + y·sinθy))`, steering the beam
//! towards +x for `θx > 0`.

use num_complex::Complex64;

use super::Transmission;
use crate::field::Field;

/// Pixels closer than this many spacings to the vortex centre are averaged.
pub const VORTEX_AVERAGED_RADIUS: f64 = 3.0;

/// A spiral phase plate of integer charge `l`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Vortex {
    /// Topological charge.
    pub charge: i32,
    /// Centre of the singularity `[x, y]`, metres.
    pub offset_m: [f64; 2],
}

impl Vortex {
    /// Transmission of the pixel of side `dx_m` centred at `(x, y)`.
    pub fn pixel_transmission(&self, x_m: f64, y_m: f64, dx_m: f64) -> Complex64 {
        const SUB: usize = 16;
        let l = self.charge as f64;
        let (x, y) = (x_m - self.offset_m[0], y_m - self.offset_m[1]);
        if x.hypot(y) >= VORTEX_AVERAGED_RADIUS * dx_m {
            return Complex64::from_polar(1.0, l * y.atan2(x));
        }
        let mut sum = Complex64::new(0.0, 0.0);
        for iy in 0..SUB {
            let ys = y + ((iy as f64 + 0.5) / SUB as f64 - 0.5) * dx_m;
            for ix in 0..SUB {
                let xs = x + ((ix as f64 + 0.5) / SUB as f64 - 0.5) * dx_m;
                sum += Complex64::from_polar(1.0, l * ys.atan2(xs));
            }
        }
        sum / (SUB * SUB) as f64
    }

    /// Multiplies the field by `exp(ilφ)` (pixel-averaged near the centre);
    /// the power passed is `Σ|t|²·|U|²·dx²`, slightly below the input because
    /// the averaged core pixels transmit less than 1.
    pub fn apply(&self, field: &mut Field) -> Transmission {
        let power_in_w = field.power_w();
        let dx = field.grid().spacing_m();
        field.multiply_by(|x, y| self.pixel_transmission(x, y, dx));
        let p = field.power_w();
        Transmission {
            power_in_w,
            power_out_w: p,
            power_sampled_w: p,
        }
    }
}

/// A wavefront tilt.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tilt {
    /// Tilt angle about the y axis (beam steered in x), radians.
    pub x_rad: f64,
    /// Tilt angle about the x axis (beam steered in y), radians.
    pub y_rad: f64,
}

impl Tilt {
    /// Multiplies the field by the linear phase.
    pub fn apply(&self, field: &mut Field) -> Transmission {
        let p = field.power_w();
        let k = field.wavenumber_per_m();
        let (sx, sy) = (self.x_rad.sin(), self.y_rad.sin());
        field.multiply_by(|x, y| Complex64::from_polar(1.0, k * (x * sx + y * sy)));
        Transmission::lossless(p)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn vortex_core_pixel_is_dark_and_far_pixels_are_unit_phasors() {
        // By symmetry the average of exp(ilφ) over a square centred on the
        // singularity vanishes for every l ≠ 0 (common practice).
        for l in [1, -2, 3] {
            let v = Vortex {
                charge: l,
                offset_m: [0.0, 0.0],
            };
            assert!(v.pixel_transmission(0.0, 0.0, 1e-5).norm() < 1e-12);
            let t = v.pixel_transmission(5e-5, 2e-5, 1e-5);
            let expected = Complex64::from_polar(1.0, l as f64 * 2f64.atan2(5.0));
            assert!((t - expected).norm() < 1e-15);
            // A neighbour of the core has |t| < 1 but keeps the phase direction.
            let n = v.pixel_transmission(1e-5, 0.0, 1e-5);
            assert!(
                n.norm() < 1.0 && n.norm() > 0.3 && n.arg().abs() < 1e-12,
                "l = {l}: {n}"
            );
        }
    }
}
