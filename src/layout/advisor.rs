//! The sampling advisor: checks a plan against the sampling rules of
//! PHYSICS.md §4 before anything is computed, and says what to change.
//!
//! Conventions: beam sizes come from the paraxial trace (second-moment
//! radius `W = w·sqrt(M²)`), so these are predictions; the run adds
//! measured checks (power near the window edge, power cut by the band
//! limit). Every warning names the element, the numbers, and a fix.

use super::paraxial::ParaxialPoint;
use super::plan::{Operation, Plan, Source};
use crate::optics::LensModel;
use crate::propagate::Method;

/// Samples per beam radius below which widths and modes lose accuracy
/// (PHYSICS.md §4: 8–10 per w, common practice).
pub const MIN_SAMPLES_PER_RADIUS: f64 = 8.0;
/// Window width in units of the second-moment radius: edge at ±3W.
pub const WINDOW_RADII: f64 = 6.0;
/// Numerical aperture beyond which the paraxial lens and Fresnel steps lose accuracy.
pub const PARAXIAL_NA: f64 = 0.1;
/// Numerical aperture beyond which scalar diffraction itself is doubtful.
pub const SCALAR_NA: f64 = 0.6;

/// Formats metres with a readable unit.
pub fn fmt_len(m: f64) -> String {
    let a = m.abs();
    if a == 0.0 {
        "0 m".to_string()
    } else if a >= 0.9995 {
        format!("{m:.4} m")
    } else if a >= 0.9995e-3 {
        format!("{:.4} mm", m * 1e3)
    } else if a >= 0.9995e-6 {
        format!("{:.3} µm", m * 1e6)
    } else {
        format!("{:.3} nm", m * 1e9)
    }
}

/// The next size ≥ `n` whose prime factors are 2, 3, 5 and 7 (fast FFTs).
///
/// Found by enumerating the products 2^a·3^b·5^c·7^d, so it takes at most a
/// few thousand steps whatever `n` is; sizes beyond 2^62 (never a usable
/// grid) are returned unchanged.
pub fn fft_friendly(n: usize) -> usize {
    let n = n.max(2) as u128;
    if n > 1 << 62 {
        return n as usize;
    }
    let mut best = u128::MAX;
    let mut p7 = 1u128;
    while p7 < best {
        let mut p5 = p7;
        while p5 < best {
            let mut p3 = p5;
            while p3 < best {
                // The smallest power of two taking p3 to at least n.
                let mut k = p3;
                while k < n {
                    k *= 2;
                }
                best = best.min(k);
                p3 *= 3;
            }
            p5 *= 5;
        }
        p7 *= 7;
    }
    best as usize
}

/// Static warnings for a plan. `width_factor` is `sqrt(M²)` (second-moment
/// radius over embedded-Gaussian radius) of the source, when known.
pub fn advise(
    plan: &Plan,
    trace: Option<&(ParaxialPoint, Vec<ParaxialPoint>)>,
    width_factor: f64,
) -> Vec<String> {
    let mut out = Vec::new();
    let n = plan.grid.n();
    let friendly = fft_friendly(n);
    if friendly != n {
        out.push(format!(
            "grid.n = {n} has a prime factor above 7, which makes FFTs slow; use n = {friendly} (2^a·3^b·5^c·7^d)"
        ));
    }
    if let Source::FlatTop { radius_m } = plan.source {
        let dx = plan.grid.spacing_m();
        if radius_m / dx < 4.0 * MIN_SAMPLES_PER_RADIUS {
            out.push(format!(
                "source: flat-top radius {} spans only {:.1} samples; use spacing ≤ {} for a well-resolved edge",
                fmt_len(radius_m),
                radius_m / dx,
                fmt_len(radius_m / (4.0 * MIN_SAMPLES_PER_RADIUS))
            ));
        }
    }
    let Some((source, points)) = trace else {
        return out;
    };
    let radius = |p: &ParaxialPoint| p.w_m * width_factor;
    let lambda = plan.wavelength_m;
    let check_resolution = |out: &mut Vec<String>, at: &str, w: f64, dx: f64| {
        if w / dx < MIN_SAMPLES_PER_RADIUS {
            out.push(format!(
                "{at}: predicted beam radius {} spans only {:.1} samples (spacing {}); use spacing ≤ {} ({} samples per radius)",
                fmt_len(w),
                w / dx,
                fmt_len(dx),
                fmt_len(w / MIN_SAMPLES_PER_RADIUS),
                MIN_SAMPLES_PER_RADIUS
            ));
        }
    };
    check_resolution(&mut out, "source", radius(source), plan.grid.spacing_m());
    if plan.grid.width_m() < WINDOW_RADII * radius(source) {
        out.push(format!(
            "source: the beam radius {} needs a window of at least {} (edge at ±3 radii) but the window is {}; use n ≥ {} at this spacing",
            fmt_len(radius(source)),
            fmt_len(WINDOW_RADII * radius(source)),
            fmt_len(plan.grid.width_m()),
            fft_friendly((WINDOW_RADII * radius(source) / plan.grid.spacing_m()).ceil() as usize)
        ));
    }
    let mut before = *source;
    for (step, after) in plan.steps.iter().zip(points) {
        let at = format!("element[{}] ({})", step.index, step.kind());
        let grid = step.grid_before;
        let (w_in, w_out) = (radius(&before), radius(after));
        match &step.op {
            Operation::Space {
                length_m, method, ..
            } => {
                // The function that is Fourier transformed must be sampled:
                // the field itself for the angular spectrum, the field times
                // the input chirp exp(iπr²/(λz)) for the single-FFT Fresnel
                // step. Its local frequency at radius ρ is ρ·|c|/λ with c the
                // total wavefront curvature (PHYSICS.md §4, lens phase rule).
                let rho = (3.0 * w_in).min(grid.width_m() / 2.0);
                let mut curvature = 1.0 / before.radius_of_curvature_m;
                if *method == Method::Fresnel {
                    curvature += 1.0 / length_m;
                }
                let local = rho * curvature.abs() / lambda;
                if local > grid.nyquist_per_m() {
                    out.push(format!(
                        "{at}: the field's phase aliases at the input of this step: wavefront curvature 1/{} gives a local frequency {:.3e} /m at r = {}, above the Nyquist limit 1/(2dx) = {:.3e} /m; use spacing ≤ {}{}",
                        fmt_len(1.0 / curvature),
                        local,
                        fmt_len(rho),
                        grid.nyquist_per_m(),
                        fmt_len(lambda / (2.0 * rho * curvature.abs())),
                        if *method == Method::AngularSpectrum {
                            ", or put a lens directly before a space with method = \"fresnel\" so that its phase is applied analytically"
                        } else {
                            ""
                        }
                    ));
                }
                if *method == Method::AngularSpectrum {
                    let w_max = w_in.max(w_out);
                    if grid.width_m() < WINDOW_RADII * w_max {
                        let needed = WINDOW_RADII * w_max / grid.spacing_m();
                        out.push(format!(
                            "{at}: the beam grows to a radius of {} but the window is {} wide, so light wraps around at the edges; use n ≥ {} at this spacing (window ≥ {})",
                            fmt_len(w_max),
                            fmt_len(grid.width_m()),
                            fft_friendly(needed.ceil() as usize),
                            fmt_len(WINDOW_RADII * w_max)
                        ));
                    }
                } else {
                    let out_grid = step.grid_after;
                    if w_out / out_grid.spacing_m() < MIN_SAMPLES_PER_RADIUS {
                        let window = MIN_SAMPLES_PER_RADIUS * lambda * length_m.abs() / w_out;
                        out.push(format!(
                            "{at}: the single-FFT Fresnel output spacing λ|z|/(n·dx) = {} is too coarse for the predicted radius {} at its end; widen the input window n·dx to ≥ {} (n ≥ {} at spacing {})",
                            fmt_len(out_grid.spacing_m()),
                            fmt_len(w_out),
                            fmt_len(window),
                            fft_friendly((window / grid.spacing_m()).ceil() as usize),
                            fmt_len(grid.spacing_m())
                        ));
                    }
                    if out_grid.width_m() < WINDOW_RADII * w_out {
                        out.push(format!(
                            "{at}: the single-FFT Fresnel output window λ|z|/dx = {} is smaller than {} times the predicted radius {}; use input spacing ≤ {}",
                            fmt_len(out_grid.width_m()),
                            WINDOW_RADII,
                            fmt_len(w_out),
                            fmt_len(lambda * length_m.abs() / (WINDOW_RADII * w_out))
                        ));
                    }
                }
            }
            Operation::Lens { lens, .. } => {
                // The lens phase itself is checked where it matters: at the
                // input of the next FFT step, combined with the field's own
                // curvature (a lens that cancels the curvature is harmless).
                let rho = (3.0 * w_in).min(grid.width_m() / 2.0);
                let na = (rho / lens.focal_length_m.abs()).atan().sin();
                if na > SCALAR_NA {
                    out.push(format!(
                        "{at}: numerical aperture ≈ {na:.2} is beyond the range of scalar diffraction (≈ {SCALAR_NA}); polarisation effects are not modelled"
                    ));
                } else if na > PARAXIAL_NA && lens.model == LensModel::Paraxial {
                    out.push(format!(
                        "{at}: numerical aperture ≈ {na:.2} exceeds the paraxial range (≈ {PARAXIAL_NA}); use model = \"exact\" and angular-spectrum spaces"
                    ));
                } else if na > PARAXIAL_NA {
                    out.push(format!(
                        "{at}: numerical aperture ≈ {na:.2} exceeds the paraxial range (≈ {PARAXIAL_NA}); the paraxial check and any Fresnel step lose accuracy here"
                    ));
                }
            }
            Operation::Vortex(v) => {
                // exp(ilφ) has local frequency |l|/(2πr): it aliases for
                // r < |l|·dx/π. Warn when the beam arriving (a Gaussian of
                // second-moment radius W about the axis) puts more than
                // 1e-3 of its power inside that disc.
                let l = v.charge.unsigned_abs() as f64;
                let r_alias = l * grid.spacing_m() / std::f64::consts::PI;
                let inside = 1.0 - (-2.0 * r_alias * r_alias / (w_in * w_in)).exp();
                if inside > 1e-3 {
                    out.push(format!(
                        "{at}: the charge-{} spiral phase aliases within r = {} of its centre, where the beam carries {:.2} % of its power; use spacing ≤ {}",
                        v.charge,
                        fmt_len(r_alias),
                        100.0 * inside,
                        fmt_len(0.02236 * std::f64::consts::PI * w_in / l)
                    ));
                }
            }
            Operation::Tilt(t) => {
                // sin θ plus the beam's own half-angle must stay below
                // λ/(2dx) (PHYSICS.md §5).
                let beam_angle = lambda / (std::f64::consts::PI * w_in);
                let limit = lambda / (2.0 * grid.spacing_m());
                for (axis, angle) in [("x", t.x_rad), ("y", t.y_rad)] {
                    let needed = angle.sin().abs() + beam_angle;
                    if angle != 0.0 && needed > limit {
                        out.push(format!(
                            "{at}: the tilt {axis} = {:.4} mrad plus the beam's half-angle {:.4} mrad exceeds the grid's angular range λ/(2dx) = {:.4} mrad, so the tilted field aliases; use spacing ≤ {}",
                            angle * 1e3,
                            beam_angle * 1e3,
                            limit * 1e3,
                            fmt_len(lambda / (2.0 * needed))
                        ));
                    }
                }
            }
            Operation::Aberration(a) => {
                // Largest phase gradient |∇W|/λ over the part of the disc the
                // beam fills (r ≤ 3W), sampled on a polar grid.
                let reach = (3.0 * w_in).min(a.radius_m);
                let mut slope_max: f64 = 0.0;
                let h = 1e-4 * a.radius_m;
                for ir in 1..=32 {
                    let r = reach * ir as f64 / 32.0 - h;
                    for it in 0..64 {
                        let th = 2.0 * std::f64::consts::PI * it as f64 / 64.0;
                        let (x, y) = (a.offset_m[0] + r * th.cos(), a.offset_m[1] + r * th.sin());
                        let gx = (a.path_m(x + h, y) - a.path_m(x - h, y)) / (2.0 * h);
                        let gy = (a.path_m(x, y + h) - a.path_m(x, y - h)) / (2.0 * h);
                        slope_max = slope_max.max(gx.hypot(gy));
                    }
                }
                let local = slope_max / lambda;
                if local > grid.nyquist_per_m() {
                    out.push(format!(
                        "{at}: the aberration's phase aliases: its steepest wavefront slope {:.3e} rad gives a local frequency {:.3e} /m, above the Nyquist limit 1/(2dx) = {:.3e} /m; use spacing ≤ {}",
                        slope_max,
                        local,
                        grid.nyquist_per_m(),
                        fmt_len(lambda / (2.0 * slope_max))
                    ));
                }
            }
            _ => {}
        }
        check_resolution(&mut out, &at, w_out, step.grid_after.spacing_m());
        before = *after;
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn friendly_sizes() {
        assert_eq!(fft_friendly(1024), 1024);
        assert_eq!(fft_friendly(1000), 1000);
        assert_eq!(fft_friendly(1023), 1024);
        assert_eq!(fft_friendly(1021), 1024);
        assert_eq!(fft_friendly(11), 12);
        assert_eq!(fft_friendly(0), 2);
        assert_eq!(fft_friendly(2), 2);
        assert_eq!(fft_friendly(13), 14);
        assert_eq!(fft_friendly(65537), 65610); // 2·3^8·5 (brute-force search, common practice)
                                                // Bounded time for absurd suggestions (a 1 pm step then 1 m).
        assert!(fft_friendly(usize::MAX) == usize::MAX);
        let big = fft_friendly(1 << 61 | 1);
        assert!(big > 1 << 61 && big <= 1 << 62);
    }
}
