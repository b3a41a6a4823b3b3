//! Turns parsed arguments into library calls and prints results.

use std::io::IsTerminal;
use std::path::Path;
use std::process::ExitCode;

use beamwright::layout::advisor::fmt_len;
use beamwright::layout::{self, Operation, Plan};
use beamwright::report::json::Report;
use beamwright::run::{self, Progress, RunOptions};
use beamwright::{Error, Result};

use crate::args::{Cli, Command};
use crate::console;
use crate::output::{self, OutputDir};

/// Runs one command; `Err` maps to exit status 2.
pub fn dispatch(cli: Cli) -> Result<ExitCode> {
    match cli.command {
        Command::Run {
            layout,
            out,
            threads,
            quiet,
            strict,
            tolerance,
            force,
        } => {
            set_threads(threads)?;
            run_layout(&layout, &out, quiet, strict.then_some(tolerance), force)
        }
        Command::Check { layout } => check(&layout),
        Command::Verify => verify(),
        Command::Examples { name, out } => examples(name.as_deref(), out.as_deref()),
    }
}

/// Most worker threads `--threads` accepts (more only adds overhead).
pub const MAX_THREADS: usize = 1024;

fn set_threads(threads: Option<usize>) -> Result<()> {
    if let Some(n) = threads {
        if n == 0 || n > MAX_THREADS {
            return Err(Error::out_of_range(
                "--threads",
                n,
                format!("expected 1 to {MAX_THREADS}"),
            ));
        }
        rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build_global()
            .map_err(|e| Error::Physics(format!("cannot start {n} threads: {e}")))?;
    }
    Ok(())
}

fn stdout_err(source: std::io::Error) -> Error {
    Error::Io {
        path: "standard output".into(),
        source,
    }
}

fn io_err(path: &Path) -> impl FnOnce(std::io::Error) -> Error + '_ {
    move |source| Error::Io {
        path: path.to_path_buf(),
        source,
    }
}

fn run_layout(
    layout_path: &Path,
    out: &Path,
    quiet: bool,
    strict_tolerance_pct: Option<f64>,
    force: bool,
) -> Result<ExitCode> {
    if let Some(t) = strict_tolerance_pct {
        if !(t.is_finite() && t > 0.0) {
            return Err(Error::out_of_range(
                "--tolerance",
                t,
                "expected a positive percentage",
            ));
        }
    }
    let plan = layout::load(layout_path)?;
    let mut protected = vec![layout_path.to_path_buf()];
    protected.extend(plan.inputs.iter().cloned());
    let output = OutputDir::prepare(out, &protected, force)?;
    run::check_memory(&plan)?;
    output::install_signal_handlers()?;

    let bar = (!quiet && std::io::stderr().is_terminal()).then(|| {
        let bar = indicatif::ProgressBar::new(plan.steps.len() as u64);
        bar.set_style(
            indicatif::ProgressStyle::with_template("{bar:30} {pos}/{len} {msg} [{elapsed}]")
                .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
        );
        bar
    });
    let progress = |p: Progress| {
        if let Some(bar) = &bar {
            bar.set_position(p.done as u64);
            bar.set_message(p.message);
        }
    };
    let report = run::run(
        &plan,
        &RunOptions {
            out_dir: Some(output.staging()),
            progress: Some(&progress),
        },
    )
    .map_err(|e| output.user_facing(e))?;
    if let Some(bar) = &bar {
        bar.finish_and_clear();
    }
    let json_path = output.staging().join("report.json");
    let text = serde_json::to_string_pretty(&report)
        .map_err(|e| Error::Physics(format!("cannot serialise the report: {e}")))?;
    std::fs::write(&json_path, text + "\n")
        .map_err(io_err(&json_path))
        .map_err(|e| output.user_facing(e))?;
    output.commit()?;

    print_summary(&report, out);
    if let Some(tolerance_pct) = strict_tolerance_pct {
        let failures = strict_failures(&plan, &report, tolerance_pct / 100.0);
        if !failures.is_empty() {
            for f in &failures {
                console::error(&format!("strict: {f}"));
            }
            return Ok(ExitCode::from(1));
        }
    }
    Ok(ExitCode::SUCCESS)
}

/// Probes whose width deviates from the paraxial prediction by more than
/// `tolerance` (a fraction), each with the likely reason.
pub fn strict_failures(plan: &Plan, report: &Report, tolerance: f64) -> Vec<String> {
    let mut out = Vec::new();
    for probe in &report.probes {
        let Some(p) = &probe.paraxial else {
            console::error(&format!(
                "strict: probe '{}' not checked: the source has no paraxial prediction (flat-top or sampled source)",
                probe.name
            ));
            continue;
        };
        if p.width_deviation.abs() <= tolerance {
            continue;
        }
        let upstream: Vec<_> = report
            .elements
            .iter()
            .filter(|e| e.z_m <= probe.z_m && e.index < probe_index(plan, &probe.name))
            .collect();
        let mut reasons = Vec::new();
        for e in &upstream {
            let label = match &e.name {
                Some(name) => format!("element[{}] {} '{name}'", e.index, e.kind),
                None => format!("element[{}] {}", e.index, e.kind),
            };
            if e.kind == "aperture" && e.power_in_w > 0.0 && e.power_lost_w / e.power_in_w > 1e-3 {
                reasons.push(format!(
                    "clipping upstream: {label} passes {:.2} % of the power",
                    100.0 * e.power_out_w / e.power_in_w
                ));
            }
            if matches!(e.kind.as_str(), "aberration" | "mask" | "vortex" | "tilt") {
                reasons.push(format!("{label} upstream is not in the paraxial design"));
            }
            if !e.warnings.is_empty() {
                reasons.push(format!("sampling: {label}: {}", e.warnings[0]));
            }
        }
        if reasons.is_empty() && !report.warnings.is_empty() {
            reasons.push(format!("sampling: {}", report.warnings[0]));
        }
        if reasons.is_empty() {
            reasons.push("no clipping, aberration or sampling warning upstream: check the grid by halving the spacing and doubling the window".into());
        }
        out.push(format!(
            "probe '{}' at z = {}: second-moment radius {} vs paraxial {} ({:+.2} %, tolerance {:.2} %); {}",
            probe.name,
            fmt_len(probe.z_m),
            fmt_len(p.predicted_radius_m * (1.0 + p.width_deviation)),
            fmt_len(p.predicted_radius_m),
            100.0 * p.width_deviation,
            100.0 * tolerance,
            reasons.join("; ")
        ));
    }
    out
}

fn probe_index(plan: &Plan, name: &str) -> usize {
    plan.steps
        .iter()
        .find(|s| matches!(&s.op, Operation::Probe(p) if p.name == name))
        .map(|s| s.index)
        .unwrap_or(usize::MAX)
}

fn print_summary(report: &Report, out: &Path) {
    let mut s = String::new();
    s.push_str(&format!("{}\n", report.title));
    s.push_str("elements:\n");
    for e in &report.elements {
        let lost = if e.power_in_w > 0.0 {
            100.0 * e.power_lost_w / e.power_in_w
        } else {
            0.0
        };
        s.push_str(&format!(
            "  [{:>2}] {:<10} z = {:>10}  power {:.6} W -> {:.6} W{}{}\n",
            e.index,
            e.kind,
            fmt_len(e.z_m),
            e.power_in_w,
            e.power_out_w,
            if lost > 1e-4 {
                format!("  (lost {lost:.3} %)")
            } else {
                String::new()
            },
            e.method
                .as_ref()
                .map(|m| format!("  [{m}]"))
                .unwrap_or_default()
        ));
        for w in &e.warnings {
            s.push_str(&format!("       warning: {w}\n"));
        }
    }
    for p in &report.probes {
        s.push_str(&format!(
            "probe '{}' at z = {}: power {:.6} W ({:.3} % of source), D4σ {} x {}, peak {:.4e} W/m²\n",
            p.name,
            fmt_len(p.z_m),
            p.power_w,
            100.0 * p.power_fraction,
            fmt_len(p.d4sigma_m[0]),
            fmt_len(p.d4sigma_m[1]),
            p.peak_irradiance_w_m2
        ));
        if let Some(par) = &p.paraxial {
            s.push_str(&format!(
                "  paraxial: w = {}, predicted radius {}, deviation {:+.2} %\n",
                fmt_len(par.w_m),
                fmt_len(par.predicted_radius_m),
                100.0 * par.width_deviation
            ));
        }
        if let Some(r) = &p.ring {
            s.push_str(&format!(
                "  ring: radius {}, peak {:.4e} W/m², centre/ring {:.3e}\n",
                fmt_len(r.ring_radius_m),
                r.ring_peak_w_m2,
                r.null_depth
            ));
        }
        if let Some(st) = p.strehl {
            s.push_str(&format!(
                "  Strehl {:.4} (Maréchal {:.4})\n",
                st,
                p.strehl_marechal.unwrap_or(f64::NAN)
            ));
        }
        if let (Some(modes), Some(basis)) = (&p.modes, &p.modes_basis) {
            let mut sorted: Vec<_> = modes.iter().collect();
            sorted.sort_by(|a, b| b.power_fraction.total_cmp(&a.power_fraction));
            let top: Vec<String> = sorted
                .iter()
                .take(3)
                .map(|m| match (m.p, m.l, m.m, m.n) {
                    (Some(pp), Some(l), _, _) => format!("LG{pp},{l} {:.4}", m.power_fraction),
                    (_, _, Some(mm), Some(nn)) => format!("HG{mm},{nn} {:.4}", m.power_fraction),
                    _ => String::new(),
                })
                .collect();
            s.push_str(&format!(
                "  modes ({} basis, waist {}): {} (captured {:.4})\n",
                basis.basis,
                fmt_len(basis.waist_m),
                top.join(", "),
                basis.captured_fraction
            ));
        }
        if let Some(c) = &p.caustic {
            s.push_str(&format!(
                "  caustic: M² = {:.3} x {:.3}, waist D4σ {} x {}\n",
                c.m2[0],
                c.m2[1],
                fmt_len(c.waist_d4sigma_m[0]),
                fmt_len(c.waist_d4sigma_m[1])
            ));
        }
        for w in &p.warnings {
            s.push_str(&format!("  warning: {w}\n"));
        }
    }
    for w in &report.warnings {
        s.push_str(&format!("warning: {w}\n"));
    }
    s.push_str(&format!("wrote {}\n", out.join("report.json").display()));
    let _ = console::out(&s);
}

fn check(layout_path: &Path) -> Result<ExitCode> {
    let plan = layout::load(layout_path)?;
    let warnings = run::plan_warnings(&plan)?;
    let trace = layout::paraxial::trace(&plan);
    let mut s = String::new();
    s.push_str(&format!("{}: {}\n", layout_path.display(), plan.title));
    s.push_str(&format!(
        "wavelength {}, power {} W, grid {}x{} at {} (window {})\n",
        fmt_len(plan.wavelength_m),
        plan.power_w,
        plan.grid.n(),
        plan.grid.n(),
        fmt_len(plan.grid.spacing_m()),
        fmt_len(plan.grid.width_m())
    ));
    s.push_str(&format!(
        "estimated peak memory {:.0} MiB (limit {:.0} MiB)\n",
        run::estimate_memory_bytes(&plan) / 1048576.0,
        run::memory_limit_bytes()? / 1048576.0
    ));
    for step in &plan.steps {
        let g0 = step.grid_before;
        let g1 = step.grid_after;
        s.push_str(&format!(
            "  [{:>2}] {:<10} z = {:>10}{}",
            step.index,
            step.kind(),
            fmt_len(step.z_m),
            step.name
                .as_ref()
                .map(|n| format!("  '{n}'"))
                .unwrap_or_default()
        ));
        if let Some((_, pts)) = &trace {
            s.push_str(&format!(
                "  paraxial w after = {}",
                fmt_len(pts[step.index].w_m)
            ));
        }
        s.push('\n');
        if let Operation::Space { reason, .. } = &step.op {
            s.push_str(&format!("       {reason}\n"));
        }
        if g0 != g1 {
            s.push_str(&format!(
                "       grid {}x{} at {} -> {}x{} at {} (window {} -> {})\n",
                g0.n(),
                g0.n(),
                fmt_len(g0.spacing_m()),
                g1.n(),
                g1.n(),
                fmt_len(g1.spacing_m()),
                fmt_len(g0.width_m()),
                fmt_len(g1.width_m())
            ));
        }
        if let Operation::Lens { merged: true, .. } = step.op {
            s.push_str("       applied analytically inside the next Fresnel step\n");
        }
    }
    if warnings.is_empty() {
        s.push_str("no sampling warnings\n");
    }
    for w in &warnings {
        s.push_str(&format!("warning: {w}\n"));
    }
    console::out(&s).map_err(stdout_err)?;
    Ok(ExitCode::SUCCESS)
}

fn verify() -> Result<ExitCode> {
    let results = beamwright::verify::run_checks();
    console::out(&beamwright::verify::format_table(&results)).map_err(stdout_err)?;
    let failed = results.iter().filter(|r| !r.passed).count();
    if failed > 0 {
        console::error(&format!(
            "verify: {failed} of {} checks failed",
            results.len()
        ));
        return Ok(ExitCode::from(1));
    }
    Ok(ExitCode::SUCCESS)
}

fn examples(name: Option<&str>, out: Option<&Path>) -> Result<ExitCode> {
    let Some(name) = name else {
        let mut s = String::new();
        for e in beamwright::examples::ALL {
            s.push_str(&format!("{:<16} {}\n", e.name, e.summary));
        }
        console::out(&s).map_err(stdout_err)?;
        return Ok(ExitCode::SUCCESS);
    };
    let example = beamwright::examples::find(name).ok_or_else(|| {
        Error::out_of_range(
            "example",
            name,
            format!(
                "expected one of {}",
                beamwright::examples::ALL
                    .iter()
                    .map(|e| e.name)
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
        )
    })?;
    match out {
        Some(path) => {
            if path.exists() {
                return Err(Error::File {
                    path: path.to_path_buf(),
                    message: "already exists; not overwritten".into(),
                });
            }
            std::fs::write(path, example.layout).map_err(io_err(path))?;
        }
        None => {
            console::out(example.layout).map_err(stdout_err)?;
        }
    }
    Ok(ExitCode::SUCCESS)
}
