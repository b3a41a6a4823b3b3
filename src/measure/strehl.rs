//! Strehl ratio and the Maréchal estimate.
//!
//! Conventions: irradiances in W/m²; RMS wavefront errors in **waves** at
//! the simulation wavelength (a length `σ_m` is `σ_m/λ` waves).
//! Definitions (Born & Wolf §9.1-9.3; Mahajan 1983; from memory;
//! PHYSICS.md §6):
//!
//! * Strehl ratio `S = I_peak(aberrated)/I_peak(reference)`, where the
//!   reference is the same path with the aberration and phase-mask elements
//!   removed (apertures kept), at equal power. The caller runs both paths;
//!   [`strehl_ratio`] divides the peaks. For a pupil of amplitude `A` and
//!   phase `Φ` focused by an ideal lens, the on-axis value is
//!   `|ΣA·exp(iΦ)|²/|ΣA|²` ([`pupil_strehl`]).
//! * Maréchal estimate `S ≈ exp(−(2πσ)²)`, σ the RMS error in waves
//!   (amplitude-weighted for a non-uniform pupil).
//! * Exact for pure defocus on a uniform circular pupil, on axis at the
//!   paraxial focus: `S = (sin β/β)²`, `β = 2√3·π·a4` with `a4` the Noll Z4
//!   RMS coefficient in waves (PHYSICS.md §6, d.h.; Born & Wolf §8.8).

use crate::error::{Error, Result};
use crate::field::{inner_product, Field};

/// `peak_aberrated / peak_reference`; NaN if the reference peak is not
/// positive and finite.
///
/// ```
/// assert_eq!(beamwright::measure::strehl_ratio(0.8, 2.0), 0.4);
/// ```
pub fn strehl_ratio(peak_aberrated_w_m2: f64, peak_reference_w_m2: f64) -> f64 {
    if peak_reference_w_m2 > 0.0 && peak_reference_w_m2.is_finite() {
        peak_aberrated_w_m2 / peak_reference_w_m2
    } else {
        f64::NAN
    }
}

/// Maréchal estimate `exp(−(2πσ)²)` for an RMS wavefront error of
/// `rms_waves` waves.
///
/// ```
/// // σ = λ/14 gives 0.8176 (PHYSICS.md §6).
/// assert!((beamwright::measure::marechal(1.0 / 14.0) - 0.8176).abs() < 1e-4);
/// ```
pub fn marechal(rms_waves: f64) -> f64 {
    (-(2.0 * std::f64::consts::PI * rms_waves).powi(2)).exp()
}

/// Exact Strehl ratio of pure defocus (Noll Z4 RMS coefficient `a4_waves`)
/// on a uniformly lit circular pupil: `(sin β/β)²`, `β = 2√3·π·a4`.
///
/// ```
/// // PHYSICS.md §7: a4 = 0.05 waves gives 0.90512.
/// assert!((beamwright::measure::defocus_strehl(0.05) - 0.90512).abs() < 1e-5);
/// ```
pub fn defocus_strehl(a4_waves: f64) -> f64 {
    let beta = 2.0 * 3f64.sqrt() * std::f64::consts::PI * a4_waves;
    if beta == 0.0 {
        1.0
    } else {
        (beta.sin() / beta).powi(2)
    }
}

/// On-axis Strehl ratio of two pupil fields at equal power:
/// `|Σ U_aberrated|²/|Σ U_reference|² · P_reference/P_aberrated`. This is
/// the ratio of on-axis focal irradiances behind an ideal lens; it equals
/// the peak ratio while the aberrated peak stays on axis.
///
/// # Errors
/// [`Error::GridMismatch`] if the grids differ; [`Error::Physics`] if
/// either field has zero power or the reference has no on-axis focus.
pub fn pupil_strehl(aberrated: &Field, reference: &Field) -> Result<f64> {
    if aberrated.grid() != reference.grid() {
        return Err(Error::GridMismatch {
            left: "aberrated pupil",
            left_n: aberrated.grid().n(),
            left_spacing_m: aberrated.grid().spacing_m(),
            right: "reference pupil",
            right_n: reference.grid().n(),
            right_spacing_m: reference.grid().spacing_m(),
        });
    }
    let ones = ndarray::Array2::from_elem(
        aberrated.values.dim(),
        num_complex::Complex64::new(1.0, 0.0),
    );
    let a = inner_product(&ones, &aberrated.values).norm_sqr();
    let r = inner_product(&ones, &reference.values).norm_sqr();
    let (pa, pr) = (aberrated.power_w(), reference.power_w());
    if !(pa > 0.0 && pr > 0.0 && r > 0.0) {
        return Err(Error::Physics(
            "pupil Strehl needs two fields with power and a reference with an on-axis focus".into(),
        ));
    }
    Ok(a / r * pr / pa)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn defocus_table() {
        // PHYSICS.md §7 Strehl row (d.h.): exact and Maréchal values.
        for (a4, exact, mar) in [
            (0.02, 0.98431, 0.98433),
            (0.10, 0.66255, 0.67383),
            (0.15, 0.37384, 0.41137),
        ] {
            assert!((defocus_strehl(a4) - exact).abs() < 1e-5, "{a4}");
            assert!((marechal(a4) - mar).abs() < 1e-5, "{a4}");
        }
        assert!(strehl_ratio(1.0, 0.0).is_nan());
    }
}
