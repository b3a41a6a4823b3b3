//! Amplitude, phase or complex masks given as arrays on the field's grid.
//!
//! Conventions: the mask array has the field's shape `(n, n)` and the
//! same `[iy, ix]` layout (row 0 is the most negative y). Amplitude masks
//! multiply by a real value (intensity transmission is its square); phase
//! masks by `exp(iφ)` with `φ` in radians; complex masks by the value.

use ndarray::{Array2, Zip};
use num_complex::Complex64;

use super::Transmission;
use crate::error::{Error, Result};
use crate::field::Field;

/// How the mask values are used.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MaskKind {
    /// Real amplitude transmission (0 blocks, 1 passes).
    Amplitude,
    /// Phase in radians.
    Phase,
    /// Complex transmission.
    Complex,
}

/// A sampled mask.
#[derive(Debug, Clone, PartialEq)]
pub struct Mask {
    /// How the values apply.
    pub kind: MaskKind,
    /// The values, `(n, n)`; for amplitude and phase masks only the real
    /// part is used.
    pub values: Array2<Complex64>,
}

impl Mask {
    /// Multiplies the field by the mask.
    ///
    /// # Errors
    /// [`Error::Shape`] if the mask is not the field's size.
    pub fn apply(&self, field: &mut Field) -> Result<Transmission> {
        let n = field.grid().n();
        let (rows, cols) = self.values.dim();
        if rows != n || cols != n {
            return Err(Error::Shape {
                what: "mask".into(),
                got_rows: rows,
                got_cols: cols,
                expected_rows: n,
                expected_cols: n,
            });
        }
        let power_in_w = field.power_w();
        let kind = self.kind;
        Zip::from(&mut field.values)
            .and(&self.values)
            .par_for_each(|v, m| {
                *v *= match kind {
                    MaskKind::Amplitude => Complex64::new(m.re, 0.0),
                    MaskKind::Phase => Complex64::from_polar(1.0, m.re),
                    MaskKind::Complex => *m,
                }
            });
        let p = field.power_w();
        Ok(Transmission {
            power_in_w,
            power_out_w: p,
            power_sampled_w: p,
        })
    }
}
