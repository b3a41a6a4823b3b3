//! # beamwright
//!
//! Simulates what real laser beams do: sampled complex fields stepped
//! through free space, apertures, thin lenses and aberration screens with FFT
//! propagation on the CPU, checked against closed-form Hermite-Gauss and
//! Laguerre-Gauss modes, and measured the way a lab measures them.
//!
//! ## Conventions (expanded in [`doc::conventions`])
//! 1. **Units**: SI inside (m, W, rad); `|U|²` is irradiance in W/m²; power is
//!    `Σ|U|²·dx²`.
//! 2. **Phase sign**: carrier `exp(i(kz − ωt))`; a converging thin lens
//!    multiplies by `exp(−i k r²/(2f))`; the carrier `exp(ikz)` is not stored.
//! 3. **FFT**: forward kernel `exp(−2πi(fx·x + fy·y))`, unnormalised; the
//!    inverse is scaled by `1/n²`, in [`fft`] only.
//! 4. **Layout**: `Array2<Complex64>` of shape `(ny, nx)`, row = y, column =
//!    x; sample `[iy, ix]` at `x = (ix − n/2)·dx`, `y = (iy − n/2)·dx`.
//! 5. **Frequency order**: FFT order (zero first); centring happens in [`fft`].
//!
//! ## Example
//! ```
//! use beamwright::{beams::{Mode, ModeShape}, propagate::{Method, propagate}, Grid};
//! let grid = Grid::new(128, 20e-6).unwrap();
//! let beam = Mode::new(ModeShape::HermiteGauss { m: 0, n: 0 }, 1064e-9, 0.3e-3).unwrap();
//! let mut field = beam.sample(grid, 0.0, 1.0).unwrap();
//! let step = propagate(&mut field, 0.1, Method::AngularSpectrum).unwrap();
//! assert!((field.power_w() - 1.0).abs() < 1e-9 + step.power_removed_w);
//! ```
#![warn(missing_docs)]
#![doc(test(attr(deny(warnings))))]

pub mod beams;
pub mod doc;
pub mod error;
pub mod examples;
pub mod fft;
pub mod field;
pub mod grid;
pub mod input;
pub mod layout;
pub mod measure;
pub mod optics;
pub mod propagate;
pub mod reference;
pub mod report;
pub mod run;
pub mod units;
pub mod verify;

pub use error::{Error, Result};
pub use field::Field;
pub use grid::Grid;
