//! Closed-form beams: the Gaussian q parameter and ABCD rule, Hermite-Gauss
//! and Laguerre-Gauss modes, flat-top discs and coherent superpositions,
//! sampled onto a grid at any distance from their waist.
//!
//! Conventions (Siegman ch. 16-17; Kogelnik & Li 1966; from memory): the
//! waist is at `z = 0`; `zR = π·w0²/λ`; `w(z) = w0·sqrt(1 + (z/zR)²)`;
//! curvature `exp(+ik r²/(2R))` with `R > 0` diverging; Gouy phase
//! `exp(−i(N+1)·atan(z/zR))` for mode order `N`; `q(z) = z − i·zR`. Every
//! mode is normalised to unit power before it is scaled to the requested
//! power. No `(−1)^p` factor is used in the Laguerre-Gauss modes.

mod gaussian;
mod hermite_gauss;
mod laguerre_gauss;
mod mode;

pub use gaussian::{radius_from_q, Abcd, GaussianBeam};
pub use hermite_gauss::hermite_function;
pub use laguerre_gauss::laguerre_radial;
pub use mode::{Mode, ModeShape, Superposition};
