//! Reporting: images, plots and array files written from results.
//!
//! Conventions shared by every writer here:
//! - Inputs are SI (metres, W/m², rad); figures choose display units (mm or
//!   µm, W/cm² with an SI prefix, rad) and say them on the axes.
//! - Images put **+y up and +x right** (the array's row 0, the most negative
//!   y, is drawn at the bottom). NPY dumps keep the array as stored,
//!   `[iy, ix]` with row 0 = most negative y.
//! - Colour maps: sequential viridis for irradiance, a cyclic
//!   constant-lightness wheel for phase ([`colormap`]).
//! - Every writer writes the path it is given, directly; the caller
//!   (`run`) writes into a temporary directory and renames it when the run
//!   has finished, so a failed run leaves nothing half-written.
//! - Errors are [`crate::Error`] values that name the file.
//!
//! | module | writes |
//! |---|---|
//! | [`json`] | `report.json` (format documented there) |
//! | [`png`] | irradiance and phase images of a field (PNG) |
//! | [`plot`] | caustic with ISO 11146 fit, radial profiles (PNG) |
//! | [`npy`] | complex128 field dumps and float64 arrays (NumPy `.npy`) |
//! | [`colormap`] | the colour maps used by the images |

pub mod colormap;
mod figure;
pub mod json;
pub mod npy;
pub mod plot;
pub mod png;

pub use npy::write_field_npy;
pub use plot::{write_caustic_plot, write_radial_profile_plot, CausticPlot};
pub use png::{
    write_intensity_png, write_intensity_png_with, write_phase_png, write_phase_png_with,
    ImageOptions, IrradianceScale,
};
