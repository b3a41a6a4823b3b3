//! Optical elements applied to a [`crate::Field`] in place.
//!
//! Conventions: elements are thin: each multiplies the field by a complex
//! transmission `t(x, y)` evaluated at sample centres (apertures use the
//! covered fraction of each pixel). Phases follow the crate's sign
//! convention: an extra optical path `W` multiplies by `exp(+ikW)`, a
//! converging lens by `exp(−ik r²/(2f))`. Decentres are `[x, y]` in metres.
//! Every `apply` returns a [`Transmission`] with the power that physically
//! passes, so clipping losses are never hidden.

mod aperture;
mod mask;
mod phase_screens;
mod thin_lens;
pub mod zernike;

pub use aperture::{disk_pixel_fraction, Aperture, ApertureShape, Polarity};
pub use mask::{Mask, MaskKind};
pub use phase_screens::{Tilt, Vortex, VORTEX_AVERAGED_RADIUS};
pub use thin_lens::{LensModel, ThinLens};
pub use zernike::Aberration;

/// Power bookkeeping of one element.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Transmission {
    /// Power arriving at the element, watts.
    pub power_in_w: f64,
    /// Power the element physically passes on, watts. For a hard aperture
    /// this is `Σ f·|U|²·dx²` with `f` the open fraction of each pixel.
    pub power_out_w: f64,
    /// Power of the sampled field after the element, watts. Lower than
    /// `power_out_w` for hard edges, whose diffraction beyond the grid's
    /// band cannot be represented (PHYSICS.md §5).
    pub power_sampled_w: f64,
}

impl Transmission {
    /// Bookkeeping for a lossless (phase-only) element.
    pub fn lossless(power_w: f64) -> Self {
        Transmission {
            power_in_w: power_w,
            power_out_w: power_w,
            power_sampled_w: power_w,
        }
    }
}
