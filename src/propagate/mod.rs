//! Free-space propagation of a [`Field`] over a signed distance `z` (metres).
//!
//! Conventions: `z > 0` is forward along +z; the carrier `exp(ikz)` is
//! factored out, so a propagated plane wave keeps phase 0. Two methods:
//!
//! * [`AngularSpectrum`]: the exact scalar transfer function with the band
//!   limit of Matsushima & Shimobaba (2009); same grid in and out; power that
//!   the band limit or evanescent cut removes is returned.
//! * [`FresnelSingleFft`]: the single-FFT Fresnel transform; the output
//!   spacing becomes `λ|z|/(n·dx)`; conserves power exactly (Parseval).
//!
//! [`choose_method`] picks between them with the critical-sampling rule
//! `|z| ≤ n·dx²/λ` (Voelz 2011; from memory) and says why in words.

mod angular_spectrum;
pub mod direct_sum;
mod fresnel_single_fft;

pub use angular_spectrum::AngularSpectrum;
pub use fresnel_single_fft::FresnelSingleFft;

use crate::error::Result;
use crate::field::Field;
use crate::grid::Grid;

/// Which propagator to use for a free-space step.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Method {
    /// Choose by the critical-sampling rule ([`choose_method`]).
    Auto,
    /// Band-limited angular spectrum (same grid).
    AngularSpectrum,
    /// Single-FFT Fresnel transform (output spacing `λ|z|/(n·dx)`).
    Fresnel,
}

impl Method {
    /// The name used in layouts and reports.
    pub fn name(self) -> &'static str {
        match self {
            Method::Auto => "auto",
            Method::AngularSpectrum => "angular-spectrum",
            Method::Fresnel => "fresnel",
        }
    }
}

/// What one propagation step did.
#[derive(Debug, Clone, PartialEq)]
pub struct StepReport {
    /// The method actually used (never `Auto`).
    pub method: Method,
    /// Why that method, in words with numbers.
    pub reason: String,
    /// Grid before the step.
    pub grid_before: Grid,
    /// Grid after the step.
    pub grid_after: Grid,
    /// Power removed by the band limit and the evanescent cut, watts.
    pub power_removed_w: f64,
}

/// The distance below which the angular-spectrum transfer function is
/// adequately sampled on `grid`: `n·dx²/λ` (Voelz 2011, from memory).
pub fn critical_distance_m(grid: Grid, wavelength_m: f64) -> f64 {
    grid.n() as f64 * grid.spacing_m() * grid.spacing_m() / wavelength_m
}

/// Picks a method for a step of `z_m`, with the reason in words.
///
/// ```
/// use beamwright::{Grid, propagate::{choose_method, Method}};
/// let grid = Grid::new(512, 10e-6).unwrap(); // n·dx²/λ = 48 mm at 1064 nm
/// assert_eq!(choose_method(grid, 1064e-9, 0.01).0, Method::AngularSpectrum);
/// assert_eq!(choose_method(grid, 1064e-9, 1.0).0, Method::Fresnel);
/// ```
pub fn choose_method(grid: Grid, wavelength_m: f64, z_m: f64) -> (Method, String) {
    let zc = critical_distance_m(grid, wavelength_m);
    if z_m.abs() <= zc {
        (
            Method::AngularSpectrum,
            format!(
                "angular spectrum: |z| = {:.4} m ≤ n·dx²/λ = {:.4} m, so the transfer function is sampled and the grid is kept",
                z_m.abs(),
                zc
            ),
        )
    } else {
        let dx2 = wavelength_m * z_m.abs() / grid.width_m();
        (
            Method::Fresnel,
            format!(
                "single-FFT Fresnel: |z| = {:.4} m > n·dx²/λ = {:.4} m, where the angular spectrum would be undersampled; output spacing λ|z|/(n·dx) = {:.4e} m",
                z_m.abs(),
                zc,
                dx2
            ),
        )
    }
}

/// The method for a step as requested in a layout: `Auto` is resolved by
/// [`choose_method`]; an explicit choice is kept and said to be the user's.
pub fn resolve_method(
    grid: Grid,
    wavelength_m: f64,
    z_m: f64,
    requested: Method,
) -> (Method, String) {
    match requested {
        Method::Auto => choose_method(grid, wavelength_m, z_m),
        Method::AngularSpectrum => (
            Method::AngularSpectrum,
            "angular spectrum: chosen in the layout".to_string(),
        ),
        Method::Fresnel => (
            Method::Fresnel,
            "single-FFT Fresnel: chosen in the layout".to_string(),
        ),
    }
}

/// Propagates `field` in place by `z_m` with `method` (building the
/// transfer function for this one step).
///
/// # Errors
/// [`crate::Error::OutOfRange`] for a non-finite distance, or a zero
/// distance with the Fresnel method.
pub fn propagate(field: &mut Field, z_m: f64, method: Method) -> Result<StepReport> {
    let grid_before = field.grid();
    let (method, reason) = resolve_method(grid_before, field.wavelength_m(), z_m, method);
    let power_removed_w = match method {
        Method::Fresnel => {
            FresnelSingleFft::new(z_m)?.apply(field)?;
            0.0
        }
        _ => AngularSpectrum::new(grid_before, field.wavelength_m(), z_m)?.apply(field)?,
    };
    Ok(StepReport {
        method,
        reason,
        grid_before,
        grid_after: field.grid(),
        power_removed_w,
    })
}
