//! Through-focus scan (caustic) and ISO 11146 M² fit.
//!
//! Conventions: plane positions `z` are in metres **relative to the probe**
//! (`z = 0` is the field handed in, `z > 0` downstream); widths are ISO
//! 11146 D4σ *diameters* with the iterated integration area
//! ([`super::moments`]); the field passed in is never modified.
//!
//! **Method.** The probe field is forward-FFT'd once. For every plane with
//! `|z| ≤ n·dx²/λ` (the critical distance of PHYSICS.md §4) the spectrum is
//! multiplied by the carrier-free angular-spectrum transfer function
//! `exp(−2πi·z·ρ²/(1/λ + sqrt(1/λ² − ρ²)))` with the same
//! Matsushima–Shimobaba band limit as [`crate::propagate::AngularSpectrum`]
//! (evanescent components dropped) and inverse-FFT'd into a reused buffer;
//! the transfer function is built per plane on one quadrant of the
//! spectrum (it is even in `fx`, `fy`) and the multiply is fused into the
//! inverse FFT's column pass.
//! Spectral bins below 1e-34 of the largest bin's power (amplitude 1e-17,
//! under the FFT's round-off floor) are set to zero without evaluating the
//! transfer function, which makes smooth beams cheap.
//! Beyond the critical distance the single-FFT Fresnel transform
//! ([`crate::propagate::FresnelSingleFft`]) is used from the probe field
//! instead, whose output spacing is `λ|z|/(n·dx)`; the warnings say so.
//!
//! **Plane placement** (ISO 11146-1, from memory: at least 10 planes, about
//! half within one Rayleigh length of the waist and about half beyond two).
//! The span `[centre − span/2, centre + span/2]` is first sampled by
//! `max(5, planes/4)` evenly spaced *pilot* planes; a fit to those gives the
//! waist position `z0` and Rayleigh length `zR` (means of the two axes). The
//! remaining planes are then put evenly inside `|z − z0| ≤ zR` and in the
//! parts of the span with `|z − z0| ≥ 2zR` (shared in proportion to their
//! lengths) so that, counting the pilots, about half the planes are in each
//! region. If the span does not contain the waist or does not reach `2zR`
//! on either side, the remaining planes are spread evenly instead and a
//! warning says why. All planes (pilots included) enter the final fit.
//!
//! **Fit axes.** Widths are measured along a fixed pair of orthogonal axes:
//! `u` at angle [`Caustic::axes_azimuth_rad`] from +x (within ±45° of x)
//! and `v` at 90° to it. The angle is the orientation shared by the
//! planes' principal axes (an average of `4θ` weighted by ellipticity, so
//! that the major/minor swap through an astigmatic focus does not cancel
//! it); it is 0 (the grid axes) for beams that are round at every plane.
//! The fit per axis is the unweighted least-squares
//! `d²(z) = A + B·z + C·z²` (ISO 11146-1, from memory; PHYSICS.md §6):
//!
//! ```text
//! z0 = −B/(2C),  d0 = sqrt(4AC − B²)/(2·sqrt(C)),  Θ = sqrt(C) (full angle),
//! zR = d0/Θ,     M² = (π/(8λ))·sqrt(4AC − B²)
//! ```

use ndarray::{Array2, Axis};
use num_complex::Complex64;
use rayon::prelude::*;

use super::moments::{iso_generic, Moments};
use crate::error::{Error, Result};
use crate::fft::Fft2;
use crate::field::Field;
use crate::propagate::{critical_distance_m, FresnelSingleFft, Method};

/// What to scan.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CausticOptions {
    /// Full length of the scanned span, metres.
    pub span_m: f64,
    /// Number of planes (ISO 11146 asks for at least 10).
    pub planes: usize,
    /// Offset of the span centre from the probe, metres (0: centred on the
    /// probe).
    pub centre_m: f64,
}

impl CausticOptions {
    /// A span of `span_m` with `planes` planes centred on the probe.
    pub fn new(span_m: f64, planes: usize) -> Self {
        CausticOptions {
            span_m,
            planes,
            centre_m: 0.0,
        }
    }
}

/// The hyperbolic fit along one axis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AxisFit {
    /// Beam propagation ratio M² (dimensionless; 1 for a Gaussian).
    pub m2: f64,
    /// Waist D4σ diameter `d0`, metres.
    pub waist_d4sigma_m: f64,
    /// Waist position relative to the probe, metres (`> 0`: downstream).
    pub waist_z_m: f64,
    /// Rayleigh length `zR = d0/Θ`, metres.
    pub rayleigh_m: f64,
    /// **Full**-angle divergence `Θ = sqrt(C)` of the D4σ diameter, radians
    /// (the ISO 11146 quantity; the half-angle is `Θ/2`, which equals
    /// `M²·λ/(π·W0)` with `W0 = d0/2`).
    pub divergence_rad: f64,
    /// RMS of `d_fit(z) − d_measured(z)` over the planes, metres.
    pub residual_rms_m: f64,
    /// Whether the fit describes a beam (`C > 0` and `4AC > B²`). When
    /// `false`, the other numbers are NaN and a warning says why.
    pub valid: bool,
}

/// A measured caustic and its fit.
#[derive(Debug, Clone, PartialEq)]
pub struct Caustic {
    /// Plane positions relative to the probe, metres, ascending.
    pub z_m: Vec<f64>,
    /// ISO D4σ diameters `[along u, along v]` at each plane, metres.
    pub d4sigma_m: Vec<[f64; 2]>,
    /// Full ISO moments at each plane (grid axes; the grid may differ
    /// between planes when the Fresnel transform was used).
    pub moments: Vec<Moments>,
    /// Propagator used for each plane.
    pub methods: Vec<Method>,
    /// Angle of the fit axis `u` from +x towards +y, radians, in
    /// `(−π/4, π/4]`; `v` is at `+π/2` from it. 0 means the grid axes.
    pub axes_azimuth_rad: f64,
    /// Fits `[along u, along v]`.
    pub fit: [AxisFit; 2],
    /// Sampling and fit warnings, in words with numbers.
    pub warnings: Vec<String>,
}

/// Measures a caustic around the probe field and fits M² per axis.
///
/// # Errors
/// [`Error::OutOfRange`] for a non-positive or non-finite span, fewer than
/// 3 planes or a non-finite centre; [`Error::Physics`] if a plane has no
/// power.
pub fn caustic(field: &Field, options: &CausticOptions) -> Result<Caustic> {
    let CausticOptions {
        span_m,
        planes,
        centre_m,
    } = *options;
    if !(span_m.is_finite() && span_m > 0.0) {
        return Err(Error::out_of_range(
            "caustic span",
            format!("{span_m} m"),
            "expected a positive, finite length",
        ));
    }
    if !centre_m.is_finite() {
        return Err(Error::out_of_range(
            "caustic centre",
            format!("{centre_m} m"),
            "expected a finite length",
        ));
    }
    if planes < 3 {
        return Err(Error::out_of_range(
            "caustic planes",
            planes,
            "expected at least 3 (ISO 11146 asks for at least 10)",
        ));
    }
    let mut warnings = Vec::new();
    if planes < 10 {
        warnings.push(format!(
            "only {planes} caustic planes; ISO 11146 asks for at least 10"
        ));
    }
    let lo = centre_m - span_m / 2.0;
    let hi = centre_m + span_m / 2.0;
    let mut scanner = Scanner::new(field);

    // Pilot planes, evenly spaced over the span.
    let n_pilot = (planes / 4).max(5).min(planes);
    let mut zs: Vec<f64> = (0..n_pilot)
        .map(|i| lo + (hi - lo) * i as f64 / (n_pilot - 1).max(1) as f64)
        .collect();
    let mut measured: Vec<(f64, Moments, Method)> = Vec::with_capacity(planes);
    for &z in &zs {
        let (m, method) = scanner.measure(z)?;
        measured.push((z, m, method));
    }

    // Remaining planes, placed as ISO 11146 recommends about the pilot fit.
    let rest = planes - n_pilot;
    if rest > 0 {
        let pz: Vec<f64> = measured.iter().map(|p| p.0).collect();
        let fx = fit_axis(
            &pz,
            &measured
                .iter()
                .map(|p| p.1.d4sigma_m[0])
                .collect::<Vec<_>>(),
            scanner.lambda,
        );
        let fy = fit_axis(
            &pz,
            &measured
                .iter()
                .map(|p| p.1.d4sigma_m[1])
                .collect::<Vec<_>>(),
            scanner.lambda,
        );
        let extra = if fx.valid && fy.valid {
            let z0 = 0.5 * (fx.waist_z_m + fy.waist_z_m);
            let zr = (fx.rayleigh_m * fy.rayleigh_m).sqrt();
            iso_placement(&pz, lo, hi, z0, zr, planes, rest).unwrap_or_else(|why| {
                warnings.push(format!("ISO 11146 plane placement not possible ({why}); remaining planes spread evenly"));
                even_between(lo, hi, n_pilot, rest)
            })
        } else {
            warnings.push(
                "pilot fit found no waist in the span; remaining planes spread evenly".into(),
            );
            even_between(lo, hi, n_pilot, rest)
        };
        for z in extra {
            let (m, method) = scanner.measure(z)?;
            measured.push((z, m, method));
        }
    }
    measured.sort_by(|a, b| a.0.total_cmp(&b.0));
    zs.clear();
    zs.extend(measured.iter().map(|p| p.0));

    // Fit axes: a shared principal orientation, modulo 90°.
    let (mut c4, mut s4, mut weight) = (0.0, 0.0, 0.0);
    for (_, m, _) in &measured {
        let sum = m.sigma2_m2[0] + m.sigma2_m2[1];
        if sum > 0.0 {
            let a = (m.sigma2_m2[0] - m.sigma2_m2[1]) / sum;
            let b = 2.0 * m.sigma_xy_m2 / sum;
            c4 += a * a - b * b;
            s4 += 2.0 * a * b;
            weight += a * a + b * b;
        }
    }
    let theta = if (c4 * c4 + s4 * s4).sqrt() > 1e-6 * measured.len() as f64 {
        0.25 * s4.atan2(c4)
    } else {
        0.0
    };
    let _ = weight;
    let d4sigma_m: Vec<[f64; 2]> = measured
        .iter()
        .map(|(_, m, _)| {
            [
                4.0 * m.sigma2_along_m2(theta).max(0.0).sqrt(),
                4.0 * m
                    .sigma2_along_m2(theta + std::f64::consts::FRAC_PI_2)
                    .max(0.0)
                    .sqrt(),
            ]
        })
        .collect();
    let fit = [0, 1].map(|axis| {
        let d: Vec<f64> = d4sigma_m.iter().map(|d| d[axis]).collect();
        fit_axis(&zs, &d, scanner.lambda)
    });
    for (axis, f) in ["u", "v"].iter().zip(&fit) {
        if !f.valid {
            warnings.push(format!(
                "caustic fit along {axis} does not describe a beam (needs C > 0 and 4AC > B²); extend the span or add planes"
            ));
        } else {
            if f.waist_z_m < lo || f.waist_z_m > hi {
                warnings.push(format!(
                    "fitted waist along {axis} at z = {:.4e} m lies outside the scanned span [{lo:.4e}, {hi:.4e}] m; M² is extrapolated",
                    f.waist_z_m
                ));
            }
            let near = zs
                .iter()
                .filter(|&&z| (z - f.waist_z_m).abs() <= f.rayleigh_m)
                .count();
            let far = zs
                .iter()
                .filter(|&&z| (z - f.waist_z_m).abs() >= 2.0 * f.rayleigh_m)
                .count();
            if near * 4 < zs.len() || far * 4 < zs.len() {
                warnings.push(format!(
                    "along {axis}: {near} planes within zR and {far} beyond 2zR of the waist (zR = {:.4e} m); ISO 11146 asks for about half each",
                    f.rayleigh_m
                ));
            }
            let mean_d = d4sigma_m
                .iter()
                .map(|d| d[if *axis == "u" { 0 } else { 1 }])
                .sum::<f64>()
                / zs.len() as f64;
            if f.residual_rms_m > 0.02 * mean_d {
                warnings.push(format!(
                    "caustic fit along {axis} has an RMS residual of {:.1} % of the mean diameter; the beam may not follow a hyperbola",
                    100.0 * f.residual_rms_m / mean_d
                ));
            }
        }
    }
    let fresnel: Vec<f64> = measured
        .iter()
        .filter(|p| p.2 == Method::Fresnel)
        .map(|p| p.0)
        .collect();
    if !fresnel.is_empty() {
        warnings.push(format!(
            "{} caustic planes beyond the critical distance n·dx²/λ = {:.4e} m used the single-FFT Fresnel transform (output spacing λ|z|/(n·dx))",
            fresnel.len(),
            scanner.critical_m
        ));
    }
    if scanner.max_removed_fraction > 1e-3 {
        warnings.push(format!(
            "the angular-spectrum band limit or evanescent cut removed up to {:.2e} of the power at a caustic plane; wide-angle content is not represented",
            scanner.max_removed_fraction
        ));
    }
    let not_converged = measured.iter().filter(|p| !p.1.converged).count();
    if not_converged > 0 {
        warnings.push(format!(
            "ISO 11146 width iteration did not converge at {not_converged} caustic planes"
        ));
    }
    let crowded: Vec<f64> = measured
        .iter()
        .filter(|p| {
            p.1.window_power_fraction < 1.0 - 1e-3 || window_leaves_grid(&p.1, p.2, &scanner, p.0)
        })
        .map(|p| p.0)
        .collect();
    if !crowded.is_empty() {
        warnings.push(format!(
            "at {} caustic planes (first z = {:.4e} m) the ISO integration area reaches the grid edge; the beam outgrows the window there and widths are unreliable",
            crowded.len(),
            crowded[0]
        ));
    }
    let methods = measured.iter().map(|p| p.2).collect();
    let moments = measured.into_iter().map(|p| p.1).collect();
    Ok(Caustic {
        z_m: zs,
        d4sigma_m,
        moments,
        methods,
        axes_azimuth_rad: theta,
        fit,
        warnings,
    })
}

/// Whether the ISO window of `m` extends past the edge of the plane's grid.
fn window_leaves_grid(m: &Moments, method: Method, scanner: &Scanner, z: f64) -> bool {
    let grid = if method == Method::Fresnel {
        match FresnelSingleFft::new(z).and_then(|f| f.output_grid(scanner.grid, scanner.lambda)) {
            Ok(g) => g,
            Err(_) => return true,
        }
    } else {
        scanner.grid
    };
    let half = grid.width_m() / 2.0 - grid.spacing_m();
    let reach = 1.5 * m.principal_d4sigma_m[0];
    m.centroid_m[0].abs() + reach > half || m.centroid_m[1].abs() + reach > half
}

/// Puts `rest` more planes so that about half of all `planes` lie within
/// `zR` of `z0` and half beyond `2zR`, inside `[lo, hi]`.
fn iso_placement(
    pilots: &[f64],
    lo: f64,
    hi: f64,
    z0: f64,
    zr: f64,
    planes: usize,
    rest: usize,
) -> std::result::Result<Vec<f64>, String> {
    if !(zr > 0.0 && zr.is_finite() && z0.is_finite()) {
        return Err("no finite Rayleigh length".into());
    }
    let near_lo = lo.max(z0 - zr);
    let near_hi = hi.min(z0 + zr);
    if near_hi <= near_lo {
        return Err(format!(
            "the waist at z = {z0:.4e} m is not within the span"
        ));
    }
    let left = (lo, (z0 - 2.0 * zr).min(hi));
    let right = ((z0 + 2.0 * zr).max(lo), hi);
    let left_len = (left.1 - left.0).max(0.0);
    let right_len = (right.1 - right.0).max(0.0);
    if left_len + right_len <= 0.0 {
        return Err(format!(
            "the span does not reach 2·zR = {:.4e} m from the waist on either side",
            2.0 * zr
        ));
    }
    let pilot_near = pilots.iter().filter(|&&z| (z - z0).abs() <= zr).count();
    let pilot_far = pilots
        .iter()
        .filter(|&&z| (z - z0).abs() >= 2.0 * zr)
        .count();
    let target_near = planes.div_ceil(2);
    let target_far = planes - target_near;
    let want_near = target_near.saturating_sub(pilot_near);
    let want_far = target_far.saturating_sub(pilot_far);
    // Share `rest` in proportion to what each region still lacks.
    let total_want = (want_near + want_far).max(1);
    let mut n_near = ((rest * want_near) as f64 / total_want as f64).round() as usize;
    n_near = n_near.min(rest);
    let n_far = rest - n_near;
    let mut out = Vec::with_capacity(rest);
    for i in 0..n_near {
        out.push(near_lo + (near_hi - near_lo) * (i as f64 + 0.5) / n_near as f64);
    }
    let n_left = ((n_far as f64) * left_len / (left_len + right_len)).round() as usize;
    let n_left = n_left.min(n_far);
    let n_right = n_far - n_left;
    for (count, (a, b)) in [(n_left, left), (n_right, right)] {
        for i in 0..count {
            out.push(a + (b - a) * (i as f64 + 0.5) / count as f64);
        }
    }
    Ok(out)
}

/// `rest` planes evenly between the `n_pilot` evenly spaced pilot planes.
fn even_between(lo: f64, hi: f64, n_pilot: usize, rest: usize) -> Vec<f64> {
    let _ = n_pilot;
    (0..rest)
        .map(|i| lo + (hi - lo) * (i as f64 + 0.5) / rest as f64)
        .collect()
}

/// Least-squares fit of `d² = A + Bz + Cz²` and the ISO quantities.
pub(crate) fn fit_axis(z: &[f64], d: &[f64], wavelength_m: f64) -> AxisFit {
    let invalid = AxisFit {
        m2: f64::NAN,
        waist_d4sigma_m: f64::NAN,
        waist_z_m: f64::NAN,
        rayleigh_m: f64::NAN,
        divergence_rad: f64::NAN,
        residual_rms_m: f64::NAN,
        valid: false,
    };
    let n = z.len();
    if n < 3 || d.len() != n {
        return invalid;
    }
    // Centre and scale z for a well-conditioned 3×3 system.
    let mean = z.iter().sum::<f64>() / n as f64;
    let scale = z.iter().map(|v| (v - mean).abs()).fold(0.0, f64::max);
    if scale <= 0.0 {
        return invalid;
    }
    let mut ata = [[0.0; 3]; 3];
    let mut atb = [0.0; 3];
    for (&zi, &di) in z.iter().zip(d) {
        let t = (zi - mean) / scale;
        let row = [1.0, t, t * t];
        for r in 0..3 {
            for c in 0..3 {
                ata[r][c] += row[r] * row[c];
            }
            atb[r] += row[r] * di * di;
        }
    }
    let Some([a, b, c]) = solve3(ata, atb) else {
        return invalid;
    };
    // Back to z: d² = a + b·t + c·t², t = (z − mean)/scale.
    let cz = c / (scale * scale);
    let disc_t = 4.0 * a * c - b * b; // = (4AC − B²)·scale²
    if !(c > 0.0 && disc_t > 0.0) {
        return invalid;
    }
    let disc = disc_t / (scale * scale);
    let z0 = mean - b * scale / (2.0 * c);
    let theta = cz.sqrt();
    let d0 = disc.sqrt() / (2.0 * theta);
    let m2 = std::f64::consts::PI / (8.0 * wavelength_m) * disc.sqrt();
    let residual = (z
        .iter()
        .zip(d)
        .map(|(&zi, &di)| {
            let t = (zi - mean) / scale;
            let fit = (a + b * t + c * t * t).max(0.0).sqrt();
            (fit - di).powi(2)
        })
        .sum::<f64>()
        / n as f64)
        .sqrt();
    AxisFit {
        m2,
        waist_d4sigma_m: d0,
        waist_z_m: z0,
        rayleigh_m: d0 / theta,
        divergence_rad: theta,
        residual_rms_m: residual,
        valid: true,
    }
}

/// Solves a 3×3 system by Gaussian elimination with partial pivoting.
#[allow(clippy::needless_range_loop)]
fn solve3(mut m: [[f64; 3]; 3], mut v: [f64; 3]) -> Option<[f64; 3]> {
    for col in 0..3 {
        let pivot = (col..3).max_by(|&i, &j| m[i][col].abs().total_cmp(&m[j][col].abs()))?;
        if m[pivot][col].abs() < 1e-300 {
            return None;
        }
        m.swap(col, pivot);
        v.swap(col, pivot);
        for r in col + 1..3 {
            let f = m[r][col] / m[col][col];
            for c in col..3 {
                m[r][c] -= f * m[col][c];
            }
            v[r] -= f * v[col];
        }
    }
    let mut x = [0.0; 3];
    for r in (0..3).rev() {
        let s: f64 = (r + 1..3).map(|c| m[r][c] * x[c]).sum();
        x[r] = (v[r] - s) / m[r][r];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}

/// Holds the probe's spectrum and a reused work field.
///
/// The transfer function is even in `fx` and `fy`, so per plane it is built
/// only on the `(n/2+1)²` quadrant indexed by `q = min(k, n−k)`, and only
/// where one of the four mirrored spectrum bins is above the negligible
/// floor; the multiply by it is fused into the column pass of the inverse
/// FFT ([`Fft2::inverse_filtered_from`]), which reads the stored spectrum
/// and writes the plane into `work`. Per plane that is one quadrant of
/// `sin_cos` (usually sparse), one inverse FFT and the moment sums.
struct Scanner<'a> {
    probe: &'a Field,
    grid: crate::Grid,
    lambda: f64,
    critical_m: f64,
    spectrum: Array2<Complex64>,
    /// `ρ²/(1/λ + sqrt(1/λ² − ρ²))` on the quadrant, negative where evanescent.
    slowness: Array2<f64>,
    /// Whether any of the four bins mirrored onto a quadrant entry is above
    /// `negligible`, indexed `[qx][qy]` (by column: the spectrum need not be
    /// symmetric under x ↔ y, although `H` is).
    needed: Array2<bool>,
    /// The current plane's transfer function on the quadrant, `[qx][qy]`
    /// (reused).
    transfer: Array2<Complex64>,
    work: Field,
    max_removed_fraction: f64,
    total_spectral: f64,
    /// Spectral power per bin below which a component is dropped unpropagated:
    /// 1e-34 of the largest bin (amplitude 1e-17), below the FFT's round-off.
    negligible: f64,
}

impl<'a> Scanner<'a> {
    fn new(probe: &'a Field) -> Self {
        let grid = probe.grid();
        let n = grid.n();
        let m = n / 2 + 1;
        let lambda = probe.wavelength_m();
        let fft = Fft2::for_size(n);
        let mut spectrum = probe.values.clone();
        fft.forward(&mut spectrum);
        // |f| on the quadrant: bit-identical to |f[k]| for k and n − k.
        let f: Vec<f64> = grid.freqs_per_m()[..m].to_vec();
        let inv_lambda = 1.0 / lambda;
        let mut slowness = Array2::zeros((m, m));
        slowness
            .axis_iter_mut(Axis(0))
            .into_par_iter()
            .enumerate()
            .for_each(|(qy, mut row)| {
                for (qx, s) in row.iter_mut().enumerate() {
                    let rho2 = f[qx] * f[qx] + f[qy] * f[qy];
                    let inside = inv_lambda * inv_lambda - rho2;
                    *s = if inside >= 0.0 {
                        rho2 / (inv_lambda + inside.sqrt())
                    } else {
                        -1.0
                    };
                }
            });
        let total_spectral = crate::field::sum_norm_sqr(&spectrum);
        let largest = spectrum.iter().map(|v| v.norm_sqr()).fold(0.0, f64::max);
        let negligible = 1e-34 * largest;
        let mut needed = Array2::from_elem((m, m), false);
        needed
            .axis_iter_mut(Axis(0))
            .into_par_iter()
            .enumerate()
            .for_each(|(qx, mut row)| {
                // Stored by column, `[qx][qy]`, as the column pass reads it.
                let xs = [qx, (n - qx) % n];
                for (qy, flag) in row.iter_mut().enumerate() {
                    let ys = [qy, (n - qy) % n];
                    *flag = ys.iter().any(|&iy| {
                        xs.iter()
                            .any(|&ix| spectrum[[iy, ix]].norm_sqr() > negligible)
                    });
                }
            });
        Scanner {
            probe,
            grid,
            lambda,
            critical_m: critical_distance_m(grid, lambda),
            spectrum,
            slowness,
            needed,
            transfer: Array2::zeros((m, m)),
            work: probe.clone(),
            max_removed_fraction: 0.0,
            total_spectral,
            negligible,
        }
    }

    /// Propagates a copy of the probe to `z` and measures ISO moments.
    fn measure(&mut self, z: f64) -> Result<(Moments, Method)> {
        if z.abs() > self.critical_m {
            self.work.set_grid(self.grid);
            FresnelSingleFft::new(z)?.apply_into(Some(self.probe), &mut self.work)?;
            let m = iso_generic(&self.work.values, self.work.grid())?;
            return Ok((m, Method::Fresnel));
        }
        let n = self.grid.n();
        let m = n / 2 + 1;
        let f: Vec<f64> = self.grid.freqs_per_m()[..m].to_vec();
        let df = 1.0 / self.grid.width_m();
        let limit = 1.0 / (self.lambda * ((2.0 * df * z).powi(2) + 1.0).sqrt());
        let scale = 1.0 / (n * n) as f64;
        let two_pi_z = 2.0 * std::f64::consts::PI * z;
        let negligible = self.negligible;
        // The plane's transfer function on the quadrant; zero outside the
        // band, where evanescent, and where no mirrored bin needs it.
        self.transfer
            .axis_iter_mut(Axis(0))
            .into_par_iter()
            .zip(self.slowness.axis_iter(Axis(0)))
            .zip(self.needed.axis_iter(Axis(0)))
            .enumerate()
            .for_each(|(qx, ((mut out, slow), need))| {
                let column_ok = f[qx].abs() <= limit;
                for (qy, ((h, &w), &needed)) in
                    out.iter_mut().zip(slow.iter()).zip(need.iter()).enumerate()
                {
                    *h = if needed && column_ok && w >= 0.0 && f[qy].abs() <= limit {
                        let (sin, cos) = (-two_pi_z * w).sin_cos();
                        Complex64::new(cos * scale, sin * scale)
                    } else {
                        Complex64::new(0.0, 0.0)
                    };
                }
            });
        let h = self
            .transfer
            .as_slice()
            .expect("the quadrant is contiguous");
        // Per column of the spectrum: negligible bins are dropped, bins with
        // a zero transfer function (band limit, evanescent) are dropped and
        // counted as removed power.
        let filter = |ix: usize, column: &mut [Complex64]| -> f64 {
            let qx = ix.min(n - ix);
            let row = &h[qx * m..(qx + 1) * m];
            let mut lost = 0.0;
            let mut apply = |v: &mut Complex64, t: Complex64| {
                let e = v.norm_sqr();
                if e <= negligible {
                    *v = Complex64::new(0.0, 0.0);
                } else if t != Complex64::new(0.0, 0.0) {
                    *v *= t;
                } else {
                    lost += e;
                    *v = Complex64::new(0.0, 0.0);
                }
            };
            let (low, high) = column.split_at_mut(m.min(n));
            for (v, &t) in low.iter_mut().zip(row) {
                apply(v, t);
            }
            for (v, &t) in high.iter_mut().zip(row[1..=n - m.min(n)].iter().rev()) {
                apply(v, t);
            }
            lost
        };
        self.work.set_grid(self.grid);
        let lost =
            Fft2::for_size(n).inverse_filtered_from(&self.spectrum, &mut self.work.values, &filter);
        if self.total_spectral > 0.0 {
            self.max_removed_fraction = self.max_removed_fraction.max(lost / self.total_spectral);
        }
        let m = iso_generic(&self.work.values, self.grid)?;
        Ok((m, Method::AngularSpectrum))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fit_recovers_exact_hyperbola() {
        // d(z)² = d0²(1 + ((z − z0)/zR)²) with M² = π·d0²/(4λ·zR) (PHYSICS.md §6).
        let (d0, z0, zr, lambda) = (0.2e-3, 3e-3, 0.02, 1e-6);
        let z: Vec<f64> = (0..21).map(|i| -0.05 + 0.005 * i as f64).collect();
        let d: Vec<f64> = z
            .iter()
            .map(|&z| d0 * (1.0 + ((z - z0) / zr).powi(2)).sqrt())
            .collect();
        let f = fit_axis(&z, &d, lambda);
        assert!(f.valid);
        assert!((f.waist_d4sigma_m / d0 - 1.0).abs() < 1e-10);
        assert!((f.waist_z_m - z0).abs() < 1e-12);
        assert!((f.rayleigh_m / zr - 1.0).abs() < 1e-10);
        let m2 = std::f64::consts::PI * d0 * d0 / (4.0 * lambda * zr);
        assert!((f.m2 / m2 - 1.0).abs() < 1e-10);
        assert!((f.divergence_rad - d0 / zr).abs() < 1e-12);
        assert!(f.residual_rms_m < 1e-15);
    }

    #[test]
    fn plane_matches_angular_spectrum_step_for_asymmetric_mode() {
        // The per-plane quadrant transfer function (masked where the
        // spectrum is negligible) must reproduce a full angular-spectrum
        // step: HG_21 is not symmetric under x ↔ y, n = 100 has a partial
        // strip. Tolerance 1e-12 of the peak: only bins below the 1e-17
        // amplitude floor differ.
        use crate::beams::{Mode, ModeShape};
        use crate::propagate::AngularSpectrum;
        let grid = crate::Grid::new(100, 10e-6).unwrap();
        let field = Mode::new(ModeShape::HermiteGauss { m: 2, n: 1 }, 1064e-9, 80e-6)
            .unwrap()
            .sample(grid, 0.0, 1.0)
            .unwrap();
        let mut scanner = Scanner::new(&field);
        assert!(
            scanner.needed.iter().any(|&b| !b),
            "the mask must be sparse"
        );
        for z in [0.003, -0.002] {
            scanner.measure(z).unwrap();
            let mut reference = field.clone();
            AngularSpectrum::new(grid, 1064e-9, z)
                .unwrap()
                .apply(&mut reference)
                .unwrap();
            let peak = reference
                .values
                .iter()
                .map(|v| v.norm())
                .fold(0.0, f64::max);
            for (a, b) in reference.values.iter().zip(scanner.work.values.iter()) {
                assert!((a - b).norm() <= 1e-12 * peak, "z = {z}: {a} vs {b}");
            }
        }
    }

    #[test]
    fn fit_rejects_non_beams() {
        let z = [0.0, 1.0, 2.0, 3.0];
        // A shrinking-then-constant set with C < 0.
        assert!(!fit_axis(&z, &[1.0, 2.0, 2.2, 2.3], 1e-6).valid);
        assert!(!fit_axis(&[1.0, 1.0, 1.0], &[1.0, 1.0, 1.0], 1e-6).valid);
    }

    #[test]
    fn placement_is_half_near_half_far() {
        let pilots: Vec<f64> = (0..10).map(|i| -1.0 + 2.0 * i as f64 / 9.0).collect();
        let extra = iso_placement(&pilots, -1.0, 1.0, 0.0, 0.1, 40, 30).unwrap();
        let all: Vec<f64> = pilots.iter().chain(&extra).copied().collect();
        let near = all.iter().filter(|z| z.abs() <= 0.1).count();
        let far = all.iter().filter(|z| z.abs() >= 0.2).count();
        assert_eq!(all.len(), 40);
        assert!((18..=22).contains(&near), "near = {near}");
        assert!((18..=22).contains(&far), "far = {far}");
        assert!(all.iter().all(|z| z.abs() <= 1.0));
        assert!(iso_placement(&pilots, -1.0, 1.0, 5.0, 0.1, 40, 30).is_err());
        assert!(iso_placement(&pilots, -1.0, 1.0, 0.0, 1.0, 40, 30).is_err());
    }
}
