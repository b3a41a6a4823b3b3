//! Beam measurements engineers decide by: ISO 11146 moments and D4σ
//! widths, caustics and M², modal content, Strehl ratio, encircled and
//! ensquared energy, peak irradiance, profiles and donut (ring) metrics.
//!
//! Conventions (shared by every file here): SI units (m, W, W/m², rad);
//! irradiance maps are `Array2<f64>` indexed `[iy, ix]` = `[row = y, col = x]`
//! on a [`crate::Grid`], with the optical axis at index `n/2`; points are
//! `[x, y]` in metres; `|U|²` is irradiance in W/m² and power is
//! `Σ|U|²·dx²`. Widths are ISO 11146 second-moment widths unless a name
//! says otherwise: `D4σ = 4σ` is a *diameter*, `W = 2σ` a radius
//! (`W = w`, the 1/e² radius, for a Gaussian). Every function takes its
//! input by reference and never modifies the field.
//!
//! | file | measures | source |
//! |---|---|---|
//! | [`moments`] | centroid, σx², σy², σxy, D4σ along x/y and principal axes, azimuth, ISO iterated integration area | ISO 11146-1/-2 (from memory) |
//! | [`caustic`](mod@caustic) | through-focus D4σ scan, hyperbolic fit: M², waist diameter and position, Rayleigh length, full-angle divergence, residual | ISO 11146-1 (from memory) |
//! | [`modes`] | HG / LG overlap coefficients, power fractions, phases, captured fraction, basis used | common practice; Siegman 1990 for the embedded-Gaussian basis (from memory) |
//! | [`strehl`] | Strehl ratio, Maréchal estimate, exact defocus Strehl | Born & Wolf §8.8, §9; Mahajan 1983 (from memory) |
//! | [`encircled`] | encircled / ensquared energy, radius for a fraction, power through an aperture | Born & Wolf §8.5 (from memory) |
//! | [`profile`] | peak irradiance and location, radial profile, x/y cuts, ring radius, ring peak, null depth | PHYSICS.md §3 (d.h.) |

pub mod caustic;
pub mod encircled;
pub mod modes;
pub mod moments;
pub mod profile;
pub mod strehl;

pub use caustic::{caustic, AxisFit, Caustic, CausticOptions};
pub use encircled::{
    aperture_fraction, aperture_power_w, encircled_curve, encircled_energy,
    encircled_energy_irradiance, encircled_power_w, ensquared_curve, ensquared_energy,
    ensquared_power_w, half_width_for_fraction, half_widths_for_fractions, radii_for_fractions,
    radius_for_fraction, try_radius_for_fraction,
};
pub use modes::{decompose, embedded_gaussian, Basis, BasisChoice, Decomposition, ModeTerm};
pub use moments::{iso_moments, iso_moments_of, plain_moments, plain_moments_of, Moments};
pub use profile::{cuts, irradiance_at, peak, radial_profile, ring_metrics, RingMetrics};
pub use strehl::{defocus_strehl, marechal, pupil_strehl, strehl_ratio};
