//! Executes a [`Plan`]: steps the source field through every element,
//! keeps the power books per element, measures at probes, and writes the
//! files the layout asks for.
//!
//! Conventions: `z_m` is from the source plane; power lost by an element is
//! `power_in_w − power_out_w`; a propagation's loss is the power its band
//! limit and evanescent cut removed. Before each FFT propagation the power
//! in the outer 5 % border of the grid is checked (wrap-around), and after
//! it the band-limited power; both become warnings above 1e-6 of the
//! field's power. Files are written into `out_dir`, which the caller makes
//! atomic (write to a temporary directory, then rename).

use std::collections::BTreeMap;
use std::path::Path;

use ndarray::s;

use crate::error::{Error, Result};
use crate::field::Field;
use crate::grid::Grid;
use crate::layout::advisor::{self, fmt_len};
use crate::layout::paraxial::{self, ParaxialPoint};
use crate::layout::{Operation, Plan, ProbeSpec, Source, Step};
use crate::measure::{self, Basis, BasisChoice};
use crate::optics::Transmission;
use crate::propagate::{AngularSpectrum, FresnelSingleFft, Method};
use crate::report::json::{
    BasisRecord, CausticRecord, CurveRecord, ElementRecord, ModeRecord, ParaxialRecord,
    ProbeRecord, ProfileRecord, Report, RingRecord,
};

/// Fraction of the field power in the outer border above which a warning is raised.
pub const BORDER_WARNING_FRACTION: f64 = 1e-6;
/// Width of the border checked before FFT propagation, as a fraction of n.
pub const BORDER_FRACTION: f64 = 0.05;

/// Progress of a run, for a progress bar.
#[derive(Debug, Clone)]
pub struct Progress {
    /// Steps finished.
    pub done: usize,
    /// Steps in total.
    pub total: usize,
    /// What is happening now.
    pub message: String,
}

/// Options of [`run`].
pub struct RunOptions<'a> {
    /// Directory for the saved files (None: measure only, write nothing).
    pub out_dir: Option<&'a Path>,
    /// Called after each element.
    pub progress: Option<&'a (dyn Fn(Progress) + Sync)>,
}

/// Estimated peak memory of running `plan`, bytes.
///
/// The run's phases happen one after another, so the peak is the largest
/// of them, counted per sample of the largest grid (`n²`) plus a fixed
/// 6 MiB (binary, FFT plans, per-thread scratch). Calibrated against the
/// maximum resident set size of `/usr/bin/time -v` (docs/performance.md):
///
/// - source: 24 B/sample (the field, sampled once and handed to the run,
///   and an irradiance map when its width has to be measured);
/// - angular-spectrum step: 16 B field + the transfer function's even
///   quadrant, `16·(n/2+1)²` bytes; a Fresnel step needs only the field;
/// - probe: 24 B (field + irradiance); saving any picture or array adds
///   8 B/sample and 8 MiB (a second irradiance/phase map and the resampled
///   image); a caustic holds the probe's spectrum and a work plane
///   (+32 B/sample) and its quadrant tables (`25·(n/2+1)²` bytes); a modal
///   decomposition holds +24 B/sample.
///
/// A one-step 4096² run is estimated at 390 MiB (measured 406 MiB); bytes
/// per sample are at least 24, so n = 8192 needs about 1.5 GiB.
pub fn estimate_memory_bytes(plan: &Plan) -> f64 {
    let n = plan
        .steps
        .iter()
        .map(|s| s.grid_after.n())
        .chain(std::iter::once(plan.grid.n()))
        .max()
        .unwrap_or(plan.grid.n()) as f64;
    let samples = n * n;
    let half = (n / 2.0).floor() + 1.0;
    let quadrant = half * half;
    let mib = 1024.0 * 1024.0;
    let source_check = 24.0 * samples;
    let asm_step = if plan.steps.iter().any(|s| {
        matches!(&s.op, Operation::Space { method, .. } if *method != crate::propagate::Method::Fresnel)
    }) {
        16.0 * samples + 16.0 * quadrant
    } else {
        16.0 * samples
    };
    let probes = plan.steps.iter().filter_map(|s| match &s.op {
        Operation::Probe(p) => Some(p),
        _ => None,
    });
    let probe_peak = probes
        .map(|p| {
            let measure = 24.0 * samples;
            let saves = p.save_intensity
                || p.save_phase
                || p.save_field
                || p.save_profile
                || p.save_intensity_log;
            let saving = if saves {
                measure + 8.0 * samples + 8.0 * mib
            } else {
                measure
            };
            let caustic = if p.caustic.is_some() {
                measure + 32.0 * samples + 25.0 * quadrant
            } else {
                0.0
            };
            let modes = if p.modes.is_some() {
                measure + 24.0 * samples
            } else {
                0.0
            };
            saving.max(caustic).max(modes)
        })
        .fold(0.0, f64::max);
    source_check.max(asm_step).max(probe_peak) + 6.0 * mib
}

/// The memory limit, bytes: `BEAMWRIGHT_MEMORY_LIMIT_MIB` if set, else
/// the smallest of 90 % of the available memory reported by the OS (16 GiB
/// if unknown), 90 % of the process address-space limit (`ulimit -v`) and
/// 90 % of the control group's memory limit (`memory.max`, cgroup v2, or
/// `memory.limit_in_bytes`, v1).
///
/// # Errors
/// [`Error::OutOfRange`] if `BEAMWRIGHT_MEMORY_LIMIT_MIB` is set but not a
/// positive whole number of MiB.
pub fn memory_limit_bytes() -> Result<f64> {
    if let Some(text) = std::env::var_os("BEAMWRIGHT_MEMORY_LIMIT_MIB") {
        let text = text.to_string_lossy();
        return match text.trim().parse::<u64>() {
            Ok(mib) if mib > 0 && mib <= 1 << 40 => Ok(mib as f64 * 1024.0 * 1024.0),
            _ => Err(Error::out_of_range(
                "BEAMWRIGHT_MEMORY_LIMIT_MIB",
                crate::error::echo(&text),
                "expected a positive whole number of MiB (for example 4096), at most 2^40",
            )),
        };
    }
    let available = std::fs::read_to_string("/proc/meminfo")
        .ok()
        .and_then(|text| {
            text.lines()
                .find(|l| l.starts_with("MemAvailable:"))
                .and_then(|l| l.split_whitespace().nth(1))
                .and_then(|kb| kb.parse::<f64>().ok())
        })
        .map(|kb| kb * 1024.0)
        .unwrap_or(16.0 * 1024.0 * 1024.0 * 1024.0);
    let limits = [available, address_space_limit(), cgroup_limit()];
    Ok(0.9 * limits.into_iter().fold(f64::INFINITY, f64::min))
}

/// The soft address-space limit of this process (`/proc/self/limits`),
/// bytes; infinite when unlimited or unknown.
fn address_space_limit() -> f64 {
    std::fs::read_to_string("/proc/self/limits")
        .ok()
        .and_then(|text| {
            text.lines()
                .find(|l| l.starts_with("Max address space"))
                .and_then(|l| l.split_whitespace().nth(3))
                .and_then(|v| v.parse::<f64>().ok())
        })
        .unwrap_or(f64::INFINITY)
}

/// The memory limit of this process's control group, bytes; infinite when
/// there is none or it cannot be read.
fn cgroup_limit() -> f64 {
    let Ok(groups) = std::fs::read_to_string("/proc/self/cgroup") else {
        return f64::INFINITY;
    };
    let mut limit = f64::INFINITY;
    for line in groups.lines() {
        let mut parts = line.splitn(3, ':');
        let (Some(_), Some(controllers), Some(path)) = (parts.next(), parts.next(), parts.next())
        else {
            continue;
        };
        let candidates = if controllers.is_empty() {
            vec![format!("/sys/fs/cgroup{path}/memory.max")]
        } else if controllers.split(',').any(|c| c == "memory") {
            vec![
                format!("/sys/fs/cgroup/memory{path}/memory.limit_in_bytes"),
                "/sys/fs/cgroup/memory/memory.limit_in_bytes".to_string(),
            ]
        } else {
            continue;
        };
        for file in candidates {
            if let Some(v) = std::fs::read_to_string(&file)
                .ok()
                .and_then(|t| t.trim().parse::<f64>().ok())
            {
                limit = limit.min(v);
                break;
            }
        }
    }
    limit
}

/// Refuses plans whose estimated memory exceeds the limit.
///
/// # Errors
/// [`Error::Layout`] naming `grid.n`, wrapping an [`Error::TooLarge`] message
/// with both numbers.
pub fn check_memory(plan: &Plan) -> Result<()> {
    let needed = estimate_memory_bytes(plan);
    let limit = memory_limit_bytes()?;
    if needed > limit {
        let too_large = Error::TooLarge {
            what: format!("a {n}x{n} grid", n = plan.grid.n()),
            needed_mib: needed / 1048576.0,
            limit_mib: limit / 1048576.0,
        };
        return Err(Error::Layout {
            path: plan.path.clone(),
            line: plan.grid_line,
            message: format!("grid.n: {too_large}"),
        });
    }
    Ok(())
}

/// `sqrt(M²)` of the source: exact for single modes, measured (ISO second-moment
/// radius over the embedded Gaussian's radius) for superpositions.
fn source_width_factor(plan: &Plan, source: &Field) -> f64 {
    if let Some([mx, my]) = plan.source.m2() {
        return ((mx + my) / 2.0).sqrt();
    }
    match (
        plan.source.embedded_gaussian(),
        measure::iso_moments(&source.irradiance(), source.grid()),
    ) {
        (Some((beam, at)), Ok(m)) => {
            let w_sim = second_moment_radius(m.d4sigma_m);
            w_sim / beam.radius_at(-at)
        }
        _ => 1.0,
    }
}

/// Generalised second-moment radius `sqrt(2(σx² + σy²))` from D4σ diameters.
pub fn second_moment_radius(d4sigma_m: [f64; 2]) -> f64 {
    ((d4sigma_m[0].powi(2) + d4sigma_m[1].powi(2)) / 8.0).sqrt()
}

/// What planning learns from the sampled source, kept so that the run does
/// not sample it again.
struct Prepared {
    /// Static plan warnings and the source-window check.
    warnings: Vec<String>,
    /// `sqrt(M²)` of the source.
    width_factor: f64,
    /// The source field, handed to the main path.
    source: Field,
}

/// Checks memory, samples the source once, and collects the plan warnings.
fn prepare(plan: &Plan) -> Result<Prepared> {
    check_memory(plan)?;
    let source = plan
        .source
        .field(plan.grid, plan.wavelength_m, plan.power_w)?;
    let (warnings, width_factor) = source_findings(plan, &source, true)?;
    Ok(Prepared {
        warnings,
        width_factor,
        source,
    })
}

/// What the sampled source says about the plan: the warnings (static
/// advice and the window check) and `sqrt(M²)`.
///
/// `exact` is false when `source` is a planning sample on a coarser grid
/// of the same window ([`planning_sample`]); its power then only tells the
/// captured fraction, not the grid's resolution of the beam.
///
/// # Errors
/// [`Error::Layout`] naming the grid when the grid holds more than 1 %
/// more power than the source carries, or a beam that fits the window
/// loses more than 1 % (the grid does not resolve it).
fn source_findings(plan: &Plan, source: &Field, exact: bool) -> Result<(Vec<String>, f64)> {
    let trace = paraxial::trace(plan);
    let width_factor = source_width_factor(plan, source);
    let mut warnings = plan.warnings.clone();
    // Closed-form sources carry the layout's power analytically, so the
    // power on the grid says how much of the beam the window holds.
    let captured = if plan.source.is_normalised_on_grid() {
        1.0
    } else {
        source.power_w() / plan.power_w
    };
    let fits = source_extent_m(plan).is_some_and(|r| r < plan.grid.width_m() / 2.0);
    if exact
        && (captured > 1.0 + UNRESOLVED_SOURCE_FRACTION
            || (fits && captured < 1.0 - UNRESOLVED_SOURCE_FRACTION))
    {
        let w = plan
            .source
            .embedded_gaussian()
            .map(|(beam, at)| beam.radius_at(-at))
            .unwrap_or(f64::NAN);
        return Err(Error::Layout {
            path: plan.path.clone(),
            line: plan.grid_line,
            message: format!(
                "grid.spacing: the grid does not resolve the source: sampled at {} it holds {:.4} W of the {:.4} W source ({:+.2} %); use spacing ≤ {} (8 samples per beam radius {})",
                fmt_len(plan.grid.spacing_m()),
                source.power_w(),
                plan.power_w,
                100.0 * (captured - 1.0),
                fmt_len(w / advisor::MIN_SAMPLES_PER_RADIUS),
                fmt_len(w)
            ),
        });
    }
    if 1.0 - captured > BORDER_WARNING_FRACTION {
        warnings.push(format!(
            "source: the {} window holds only {:.6} of the source power; the rest is not simulated (the field is not rescaled to make up for it): enlarge the window n·dx",
            fmt_len(plan.grid.width_m()),
            captured
        ));
    }
    warnings.extend(advisor::advise(plan, trace.as_ref(), width_factor));
    Ok((warnings, width_factor))
}

/// Largest power mismatch between the sampled source and `beam.power` that
/// is put down to sampling (beyond it the plan is refused).
const UNRESOLVED_SOURCE_FRACTION: f64 = 0.01;

/// Samples per side above which planning samples the source on a coarser
/// grid or a sub-window (`check` then stays within a few tens of MiB).
const PLANNING_MAX_N: usize = 1024;

/// Radius outside which a closed-form source holds less than ~1e-12 of its
/// power at the source plane, metres: `w·(sqrt(N + 1) + 4)` for a mode of
/// order N (the Hermite/Laguerre-Gauss envelope ends near `w·sqrt(N + 1/2)`,
/// beyond which it decays like a Gaussian; common practice), the radius
/// plus one sample for a flat-top, none for sampled sources.
fn source_extent_m(plan: &Plan) -> Option<f64> {
    let dx = plan.grid.spacing_m();
    match &plan.source {
        Source::Mode { mode, waist_at_m } => {
            let w = mode.beam.radius_at(-waist_at_m);
            Some(w * ((mode.shape.order() as f64 + 1.0).sqrt() + 4.0))
        }
        Source::Superposition {
            modes,
            beam,
            waist_at_m,
        } => {
            let order = modes.terms.iter().map(|(m, _)| m.shape.order()).max()?;
            Some(beam.radius_at(-waist_at_m) * ((order as f64 + 1.0).sqrt() + 4.0))
        }
        Source::FlatTop { radius_m } => Some(radius_m + 2.0 * dx),
        Source::Sampled { .. } => None,
    }
}

/// The source sampled for planning without holding the whole grid: on the
/// same samples but only over the central square that holds the beam
/// ([`source_extent_m`]) when that is at most [`PLANNING_MAX_N`] wide
/// (the power and moments are then those of the full grid), else over the
/// whole window at a coarser spacing (`n = PLANNING_MAX_N`; the beam then
/// spans over a hundred samples of it, so its power and moments are
/// accurate, but the grid's resolution is not tested). Returns the field
/// and whether it is exact.
fn planning_sample(plan: &Plan) -> Result<(Field, bool)> {
    let n = plan.grid.n();
    let dx = plan.grid.spacing_m();
    let sub = source_extent_m(plan).map(|r| 2 * ((r / dx).ceil() as usize).saturating_add(1));
    let grid = match sub {
        _ if n <= PLANNING_MAX_N => plan.grid,
        Some(side) if side <= PLANNING_MAX_N => Grid::new(side.min(n), dx)?,
        _ => match plan.source {
            Source::Sampled { .. } => plan.grid,
            _ => Grid::new(PLANNING_MAX_N, plan.grid.width_m() / PLANNING_MAX_N as f64)?,
        },
    };
    let exact = grid.spacing_m() == dx;
    let field = plan.source.field(grid, plan.wavelength_m, plan.power_w)?;
    Ok((field, exact))
}

/// Static plan warnings (used by `check`; `run` reports the same). The
/// source is sampled only where the beam is, or on a coarser grid, so that
/// checking a large grid needs little memory ([`planning_sample`]).
///
/// # Errors
/// [`Error::Layout`] if the grid is too large for memory or does not
/// resolve the source; as [`crate::layout::Source::field`].
pub fn plan_warnings(plan: &Plan) -> Result<Vec<String>> {
    check_memory(plan)?;
    let (source, exact) = planning_sample(plan)?;
    source_findings(plan, &source, exact).map(|(w, _)| w)
}

/// Power in the outer `BORDER_FRACTION` of the grid, watts.
pub fn border_power_w(field: &Field) -> f64 {
    let n = field.grid().n();
    let b = ((n as f64 * BORDER_FRACTION).ceil() as usize)
        .max(1)
        .min(n / 2);
    let v = &field.values;
    let total = crate::field::sum_norm_sqr(v);
    let inner = v.slice(s![b..n - b, b..n - b]);
    let inner_sum: f64 = inner.iter().map(|c| c.norm_sqr()).sum();
    (total - inner_sum).max(0.0) * field.grid().cell_area_m2()
}

/// Applies one non-probe step to the field; returns the bookkeeping and
/// warnings. `skip_aberrations` leaves out aberration and phase-mask
/// elements (the Strehl reference path).
fn apply_step(
    step: &Step,
    next_merged_lens: Option<f64>,
    field: &mut Field,
    skip_aberrations: bool,
) -> Result<(Transmission, Vec<String>)> {
    let mut warnings = Vec::new();
    let p_in = field.power_w();
    if skip_aberrations && step.op.is_aberration() {
        return Ok((Transmission::lossless(p_in), warnings));
    }
    let t = match &step.op {
        Operation::Space {
            length_m,
            method,
            merged_lens_m,
            ..
        } => {
            let border = border_power_w(field);
            if p_in > 0.0 && border / p_in > BORDER_WARNING_FRACTION {
                warnings.push(format!(
                    "{:.2e} of the power is in the outer {:.0} % of the grid before this propagation; it will wrap around (angular spectrum) or alias (Fresnel): enlarge the window n·dx",
                    border / p_in,
                    100.0 * BORDER_FRACTION
                ));
            }
            let removed = match method {
                Method::Fresnel => {
                    let mut step = FresnelSingleFft::new(*length_m)?;
                    if let Some(f) = merged_lens_m {
                        step = step.after_lens(*f)?;
                    }
                    step.apply(field)?;
                    0.0
                }
                _ => {
                    if *length_m == 0.0 {
                        0.0
                    } else {
                        AngularSpectrum::new(field.grid(), field.wavelength_m(), *length_m)?
                            .apply(field)?
                    }
                }
            };
            if p_in > 0.0 && removed / p_in > BORDER_WARNING_FRACTION {
                warnings.push(format!(
                    "the band limit and evanescent cut removed {:.2e} of the power: the step is longer than this grid can carry at these angles; use a finer spacing or method = \"fresnel\"",
                    removed / p_in
                ));
            }
            let p = field.power_w();
            Transmission {
                power_in_w: p_in,
                power_out_w: p_in - removed,
                power_sampled_w: p,
            }
        }
        Operation::Aperture(a) => a.apply(field),
        Operation::Lens { lens, merged } => {
            if *merged && next_merged_lens.is_some() {
                Transmission::lossless(p_in)
            } else {
                lens.apply(field)
            }
        }
        Operation::Aberration(a) => a.apply(field),
        Operation::Vortex(v) => v.apply(field),
        Operation::Tilt(t) => t.apply(field),
        Operation::Mask(m) => m.apply(field)?,
        Operation::Probe(_) => Transmission::lossless(p_in),
    };
    Ok((t, warnings))
}

/// Steps `source` through the plan, calling `at_probe` at every probe.
fn execute(
    plan: &Plan,
    source: Field,
    skip_aberrations: bool,
    mut on_step: impl FnMut(&Step, &Transmission, Vec<String>, &Field) -> Result<()>,
    mut at_probe: impl FnMut(&Step, &ProbeSpec, &Field) -> Result<()>,
) -> Result<()> {
    let mut field = source;
    for (i, step) in plan.steps.iter().enumerate() {
        let next_merged = plan.steps.get(i + 1).and_then(|s| match s.op {
            Operation::Space { merged_lens_m, .. } => merged_lens_m,
            _ => None,
        });
        let (t, warnings) = apply_step(step, next_merged, &mut field, skip_aberrations)?;
        if let Operation::Probe(spec) = &step.op {
            at_probe(step, spec, &field)?;
        }
        on_step(step, &t, warnings, &field)?;
    }
    Ok(())
}

/// Runs the plan and returns the report; writes the requested files into
/// `options.out_dir`.
///
/// # Errors
/// Any engine error (bad sampling that makes a width undefined, files that
/// cannot be written) and [`Error::TooLarge`] before allocating.
pub fn run(plan: &Plan, options: &RunOptions) -> Result<Report> {
    let Prepared {
        warnings,
        width_factor,
        source,
    } = prepare(plan)?;
    let trace = paraxial::trace(plan);
    let total = plan.steps.len();
    let needs_reference = plan
        .steps
        .iter()
        .any(|s| matches!(&s.op, Operation::Probe(p) if p.strehl));
    let report_progress = |done: usize, message: String| {
        if let Some(cb) = options.progress {
            cb(Progress {
                done,
                total,
                message,
            });
        }
    };

    let mut elements = Vec::with_capacity(total);
    let mut probes = Vec::new();
    // Shared by both callbacks: aberrations seen so far (for Maréchal).
    let rms_waves_sq = std::cell::Cell::new(0.0);
    execute(
        plan,
        source,
        false,
        |step, t, step_warnings, field| {
            if let Operation::Aberration(a) = &step.op {
                let sigma_waves = a.amplitude_weighted_rms_m(field) / plan.wavelength_m;
                rms_waves_sq.set(rms_waves_sq.get() + sigma_waves * sigma_waves);
            }
            let (method, method_reason) = match &step.op {
                Operation::Space { method, reason, .. } => {
                    (Some(method.name().to_string()), Some(reason.clone()))
                }
                _ => (None, None),
            };
            elements.push(ElementRecord {
                index: step.index,
                kind: step.kind().to_string(),
                name: step.name.clone(),
                z_m: step.z_m,
                power_in_w: t.power_in_w,
                power_out_w: t.power_out_w,
                power_sampled_w: t.power_sampled_w,
                power_lost_w: t.power_in_w - t.power_out_w,
                method,
                method_reason,
                grid_after: field.grid().into(),
                warnings: step_warnings,
            });
            report_progress(
                step.index + 1,
                format!("element[{}] {}", step.index, step.kind()),
            );
            Ok(())
        },
        |step, spec, field| {
            let point = trace.as_ref().map(|(_, pts)| pts[step.index]);
            let mut record = measure_probe(
                plan,
                step,
                spec,
                field,
                point,
                width_factor,
                options.out_dir,
            )?;
            if spec.strehl {
                record.strehl_marechal = Some(measure::marechal(rms_waves_sq.get().sqrt()));
                // The Strehl ratio is a focal-plane figure: away from the
                // paraxial focus a peak ratio measures defocus, not quality.
                if let Some(p) = point {
                    let (from_waist, rayleigh) = (p.q.re, -p.q.im);
                    if from_waist.abs() > rayleigh {
                        record.warnings.push(format!(
                            "Strehl is defined at a focus, but this probe is {} from the paraxial waist (Rayleigh length {}): the ratio here measures the beam's peak, not its focusability",
                            fmt_len(from_waist.abs()),
                            fmt_len(rayleigh)
                        ));
                    }
                }
            }
            probes.push(record);
            Ok(())
        },
    )?;

    // Strehl reference: the same path without aberrations, peaks only. The
    // source is sampled again rather than kept, so that the two paths never
    // hold fields at the same time.
    if needs_reference {
        report_progress(total, "reference path without aberrations".into());
        let mut reference_peaks: BTreeMap<String, f64> = BTreeMap::new();
        let source = plan
            .source
            .field(plan.grid, plan.wavelength_m, plan.power_w)?;
        execute(
            plan,
            source,
            true,
            |_, _, _, _| Ok(()),
            |_, spec, field| {
                if spec.strehl {
                    let (peak, _) = measure::peak(&field.irradiance(), field.grid());
                    reference_peaks.insert(spec.name.clone(), peak);
                }
                Ok(())
            },
        )?;
        for record in &mut probes {
            if let Some(&reference) = reference_peaks.get(&record.name) {
                record.strehl = Some(measure::strehl_ratio(
                    record.peak_irradiance_w_m2,
                    reference,
                ));
            }
        }
    }

    Ok(Report {
        version: env!("CARGO_PKG_VERSION").to_string(),
        layout: plan.path.display().to_string(),
        title: plan.title.clone(),
        wavelength_m: plan.wavelength_m,
        power_w: plan.power_w,
        grid: plan.grid.into(),
        elements,
        probes,
        warnings,
    })
}

/// Measures everything a probe asks for and writes its files.
fn measure_probe(
    plan: &Plan,
    step: &Step,
    spec: &ProbeSpec,
    field: &Field,
    paraxial_point: Option<ParaxialPoint>,
    width_factor: f64,
    out_dir: Option<&Path>,
) -> Result<ProbeRecord> {
    let grid = field.grid();
    let irradiance = field.irradiance();
    let power_w = field.power_w();
    let mut warnings = Vec::new();
    let iso = optional(
        "widths (ISO 11146)",
        &mut warnings,
        measure::iso_moments(&irradiance, grid),
    )?
    .unwrap_or_else(measure::Moments::undefined);
    let plain = optional(
        "plain second moments",
        &mut warnings,
        measure::plain_moments(&irradiance, grid),
    )?
    .unwrap_or_else(measure::Moments::undefined);
    if !iso.converged {
        warnings.push(format!(
            "the ISO 11146 integration area did not converge after {} iterations; widths are approximate",
            iso.iterations
        ));
    }
    let (peak, peak_at) = measure::peak(&irradiance, grid);
    const FRACTIONS: [f64; 3] = [0.5, 0.865, 0.95];
    let by_fraction = |values: Vec<Result<f64>>| -> BTreeMap<String, f64> {
        FRACTIONS
            .iter()
            .zip(values)
            .map(|(f, v)| (format!("{f}"), v.unwrap_or(f64::NAN)))
            .collect()
    };
    let encircled = by_fraction(measure::radii_for_fractions(
        field,
        iso.centroid_m,
        &FRACTIONS,
    ));
    let ensquared = by_fraction(measure::half_widths_for_fractions(
        field,
        iso.centroid_m,
        &FRACTIONS,
    ));
    // The encircled-energy curve: 48 radii out to twice the 95 % radius.
    let r95 = encircled.get("0.95").copied().unwrap_or(f64::NAN);
    let r_max = if r95.is_finite() && r95 > 0.0 {
        (2.0 * r95).min(grid.width_m() / 2.0)
    } else {
        grid.width_m() / 2.0
    };
    let radii: Vec<f64> = (1..=48).map(|k| r_max * k as f64 / 48.0).collect();
    let encircled_energy = CurveRecord {
        y: measure::encircled_curve(field, iso.centroid_m, &radii),
        x_m: radii,
    };
    let ring = measure::ring_metrics(&irradiance, grid, iso.centroid_m).map(|r| RingRecord {
        ring_radius_m: r.ring_radius_m,
        ring_peak_w_m2: r.ring_peak_w_m2,
        centre_w_m2: r.centre_w_m2,
        null_depth: r.null_depth,
    });
    // Elements upstream that change the beam's shape in ways the paraxial
    // design does not describe at all (a vortex or a mask): the width
    // comparison is then not a design check, and says so.
    let reshaping: Vec<String> = plan
        .steps
        .iter()
        .take(step.index)
        .filter(|s| matches!(s.op, Operation::Vortex(_) | Operation::Mask(_)))
        .map(|s| format!("element[{}] {}", s.index, s.kind()))
        .collect();
    if paraxial_point.is_some() && !reshaping.is_empty() {
        warnings.push(format!(
            "the paraxial prediction ignores {}: width_deviation here is not a design check (a vortex or mask changes the mode content; a spiral plate on a Gaussian has an unbounded second moment, so D4σ depends on the window)",
            reshaping.join(", ")
        ));
    }
    let paraxial = paraxial_point.map(|p| {
        let predicted = p.w_m * width_factor;
        let simulated = second_moment_radius(iso.d4sigma_m);
        ParaxialRecord {
            w_m: p.w_m,
            radius_of_curvature_m: p
                .radius_of_curvature_m
                .is_finite()
                .then_some(p.radius_of_curvature_m),
            gouy_rad: p.gouy_rad,
            predicted_radius_m: predicted,
            width_deviation: simulated / predicted - 1.0,
        }
    });
    let (modes, modes_basis) = match &spec.modes {
        Some(m) => {
            let choice = BasisChoice {
                waist_m: m.waist_m,
                z_from_waist_m: m.waist_at_m.map(|at| step.z_m - at),
            };
            let decomposed = optional(
                "modal decomposition",
                &mut warnings,
                measure::decompose(field, m.basis, m.order, &choice),
            )?;
            match decomposed {
                None => (None, None),
                Some(d) => {
                    let records = d
                        .terms
                        .iter()
                        .map(|t| {
                            let (p, l, mm, nn) = match t.shape {
                                crate::beams::ModeShape::LaguerreGauss { p, l } => {
                                    (Some(p), Some(l), None, None)
                                }
                                crate::beams::ModeShape::HermiteGauss { m, n } => {
                                    (None, None, Some(m), Some(n))
                                }
                            };
                            ModeRecord {
                                p,
                                l,
                                m: mm,
                                n: nn,
                                power_fraction: t.power_fraction,
                                phase_rad: t.phase_rad,
                            }
                        })
                        .collect();
                    warnings.extend(d.warnings.iter().cloned());
                    let rule = d.rule.clone();
                    let basis = BasisRecord {
                        basis: match m.basis {
                            Basis::LaguerreGauss => "laguerre-gauss",
                            Basis::HermiteGauss => "hermite-gauss",
                        }
                        .to_string(),
                        waist_m: d.waist_m,
                        waist_z_m: step.z_m - d.z_from_waist_m,
                        captured_fraction: d.captured_fraction,
                        rule,
                    };
                    if d.captured_fraction < 0.9 {
                        warnings.push(format!(
                    "the truncated {} basis captures only {:.1} % of the power; raise modes.order or set modes.waist",
                    basis.basis,
                    100.0 * d.captured_fraction
                ));
                    }
                    (Some(records), Some(basis))
                }
            }
        }
        None => (None, None),
    };
    // Profiles through the centroid, out to 1.5 principal D4σ diameters.
    let shown = (iso.principal_d4sigma_m[0] * 1.5).min(grid.width_m() / 2.0);
    let profile = spec.save_profile.then(|| {
        let (r, i) = measure::radial_profile(&irradiance, grid, iso.centroid_m, grid.n());
        let keep = r
            .iter()
            .take_while(|&&r| r <= shown)
            .count()
            .max(2)
            .min(r.len());
        let (x, xv, y, yv) = measure::cuts(&irradiance, grid, iso.centroid_m);
        let window = |c: &[f64], v: &[f64], centre: f64| -> CurveRecord {
            let (x_m, y): (Vec<f64>, Vec<f64>) = c
                .iter()
                .zip(v)
                .filter(|(c, _)| (**c - centre).abs() <= shown)
                .map(|(c, v)| (*c, *v))
                .unzip();
            CurveRecord { x_m, y }
        };
        ProfileRecord {
            radial: CurveRecord {
                x_m: r[..keep].to_vec(),
                y: i[..keep].to_vec(),
            },
            x_cut: window(&x, &xv, iso.centroid_m[0]),
            y_cut: window(&y, &yv, iso.centroid_m[1]),
        }
    });
    let mut files = BTreeMap::new();
    let caustic = match &spec.caustic {
        Some(options) => match optional(
            "caustic (M²)",
            &mut warnings,
            measure::caustic(field, options),
        )? {
            None => None,
            Some(c) => {
                warnings.extend(c.warnings.iter().cloned());
                let record = CausticRecord {
                    m2: [c.fit[0].m2, c.fit[1].m2],
                    waist_d4sigma_m: [c.fit[0].waist_d4sigma_m, c.fit[1].waist_d4sigma_m],
                    waist_z_m: [step.z_m + c.fit[0].waist_z_m, step.z_m + c.fit[1].waist_z_m],
                    rayleigh_m: [c.fit[0].rayleigh_m, c.fit[1].rayleigh_m],
                    divergence_rad: [c.fit[0].divergence_rad, c.fit[1].divergence_rad],
                    residual_rms_m: [c.fit[0].residual_rms_m, c.fit[1].residual_rms_m],
                    z_m: c.z_m.iter().map(|z| step.z_m + z).collect(),
                    d4sigma_m: c.d4sigma_m.clone(),
                };
                if let Some(dir) = out_dir {
                    let name = format!("{}_caustic.png", spec.name);
                    let written = crate::report::plot::write_caustic_plot(
                        &dir.join(&name),
                        &crate::report::plot::CausticPlot {
                            z_m: &record.z_m,
                            d4sigma_m: &record.d4sigma_m,
                            fit: caustic_fit_in_absolute_z(&c, step.z_m),
                            m2: record.m2,
                            title: &format!(
                                "{} — caustic about {} at z = {}",
                                plan.title,
                                spec.name,
                                fmt_len(step.z_m)
                            ),
                        },
                    );
                    if picture(&name, dir, &mut warnings, written)? {
                        files.insert("caustic".to_string(), name);
                    }
                }
                Some(record)
            }
        },
        None => None,
    };
    if let Some(dir) = out_dir {
        let title = format!(
            "{} — {} at z = {}",
            plan.title,
            spec.name,
            fmt_len(step.z_m)
        );
        if spec.save_intensity {
            let name = format!("{}_intensity.png", spec.name);
            let written = crate::report::png::write_intensity_png(&dir.join(&name), field, &title);
            if picture(&name, dir, &mut warnings, written)? {
                files.insert("intensity".to_string(), name);
            }
        }
        if spec.save_intensity_log {
            let name = format!("{}_intensity_log.png", spec.name);
            let written = crate::report::png::write_intensity_png_with(
                &dir.join(&name),
                field,
                &title,
                &crate::report::png::ImageOptions {
                    window: None,
                    scale: crate::report::png::IrradianceScale::Logarithmic { decades: 4.0 },
                },
            );
            if picture(&name, dir, &mut warnings, written)? {
                files.insert("intensity_log".to_string(), name);
            }
        }
        if spec.save_phase {
            let name = format!("{}_phase.png", spec.name);
            let written = crate::report::png::write_phase_png(&dir.join(&name), field, &title);
            if picture(&name, dir, &mut warnings, written)? {
                files.insert("phase".to_string(), name);
            }
        }
        if spec.save_field {
            let name = format!("{}_field.npy", spec.name);
            let written = crate::report::npy::write_field_npy(&dir.join(&name), field);
            if picture(&name, dir, &mut warnings, written)? {
                files.insert("field".to_string(), name);
            }
        }
        if let Some(prof) = &profile {
            let name = format!("{}_profile.png", spec.name);
            let (r, i) = (&prof.radial.x_m, &prof.radial.y);
            // For a Gaussian source, the paraxial Gaussian with this probe's
            // power is drawn for comparison.
            let reference: Option<Vec<f64>> = match (&paraxial, plan.source.m2()) {
                (Some(p), Some([mx, my])) if mx == 1.0 && my == 1.0 && reshaping.is_empty() => {
                    Some(
                        r.iter()
                            .map(|&r| {
                                2.0 * power_w / (std::f64::consts::PI * p.w_m * p.w_m)
                                    * (-2.0 * r * r / (p.w_m * p.w_m)).exp()
                            })
                            .collect(),
                    )
                }
                _ => None,
            };
            let written = crate::report::plot::write_radial_profile_plot(
                &dir.join(&name),
                r,
                i,
                reference
                    .as_deref()
                    .map(|v| ("paraxial Gaussian, same power", v)),
                &format!(
                    "{} — {} at z = {}: radial profile about the centroid",
                    plan.title,
                    spec.name,
                    fmt_len(step.z_m)
                ),
            );
            if picture(&name, dir, &mut warnings, written)? {
                files.insert("profile".to_string(), name);
            }
        }
    }
    Ok(ProbeRecord {
        name: spec.name.clone(),
        z_m: step.z_m,
        grid: grid.into(),
        power_w,
        power_fraction: power_w / plan.power_w,
        centroid_m: iso.centroid_m,
        d4sigma_m: iso.d4sigma_m,
        d4sigma_principal_m: iso.principal_d4sigma_m,
        azimuth_rad: iso.azimuth_rad,
        ellipticity: iso.principal_d4sigma_m[1] / iso.principal_d4sigma_m[0],
        iso_converged: iso.converged,
        d4sigma_plain_m: plain.d4sigma_m,
        peak_irradiance_w_m2: peak,
        peak_location_m: peak_at,
        axis_irradiance_w_m2: irradiance[[grid.centre_index(), grid.centre_index()]],
        encircled_radius_m: encircled,
        ensquared_half_width_m: ensquared,
        encircled_energy,
        profile,
        ring,
        paraxial,
        strehl: None,
        strehl_marechal: None,
        modes,
        modes_basis,
        caustic,
        files,
        warnings,
    })
}

/// One measurement of a probe that may fail without discarding the run: a
/// data problem (no power, non-finite values, an area that holds nothing)
/// becomes a warning naming the quantity, and its value is reported as
/// null; a file-system error still ends the run, since the output would be
/// incomplete.
fn optional<T>(what: &str, warnings: &mut Vec<String>, result: Result<T>) -> Result<Option<T>> {
    match result {
        Ok(v) => Ok(Some(v)),
        Err(e @ Error::Io { .. }) => Err(e),
        Err(e) => {
            warnings.push(format!("{what} not computed (reported as null): {e}"));
            Ok(None)
        }
    }
}

/// Like [`optional`] for a file the probe writes: true if it was written.
/// The warning names the file without the run's working folder.
fn picture(name: &str, dir: &Path, warnings: &mut Vec<String>, result: Result<()>) -> Result<bool> {
    match result {
        Ok(()) => Ok(true),
        Err(e @ Error::Io { .. }) => Err(e),
        Err(e) => {
            let prefix = format!("{}/", dir.display());
            warnings.push(format!(
                "{name} not written: {}",
                e.to_string().replace(&prefix, "")
            ));
            Ok(false)
        }
    }
}

/// The caustic's diameter fits `d² = a + b·z + c·z²` re-expressed in absolute z.
fn caustic_fit_in_absolute_z(c: &measure::Caustic, z0: f64) -> [(f64, f64, f64); 2] {
    let shift = |f: &measure::AxisFit| {
        // d²(z) = d0² + θ²(z − zw)², with θ the full-angle divergence.
        let theta = f.divergence_rad;
        let zw = z0 + f.waist_z_m;
        let d0 = f.waist_d4sigma_m;
        (
            d0 * d0 + theta * theta * zw * zw,
            -2.0 * theta * theta * zw,
            theta * theta,
        )
    };
    [shift(&c.fit[0]), shift(&c.fit[1])]
}
