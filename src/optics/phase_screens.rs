//! Pure phase screens: spiral (vortex) phase plates and tilts.
//!
//! Conventions: the vortex multiplies by `exp(ilφ)` with
//! `φ = atan2(y − y0, x − x0)`, so `l > 0` carries `+lħ` per photon about
//! +z; the tilt multiplies by `exp(ik(x·sinθx + y·sinθy))`, steering the beam
//! towards +x for `θx > 0`.

use num_complex::Complex64;

use super::Transmission;
use crate::field::Field;

/// A spiral phase plate of integer charge `l`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Vortex {
    /// Topological charge.
    pub charge: i32,
    /// Centre of the singularity `[x, y]`, metres.
    pub offset_m: [f64; 2],
}

impl Vortex {
    /// Multiplies the field by `exp(ilφ)`.
    pub fn apply(&self, field: &mut Field) -> Transmission {
        let p = field.power_w();
        let l = self.charge as f64;
        let [x0, y0] = self.offset_m;
        field.multiply_by(|x, y| Complex64::from_polar(1.0, l * (y - y0).atan2(x - x0)));
        Transmission::lossless(p)
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
