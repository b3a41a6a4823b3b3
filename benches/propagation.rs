//! Criterion benchmarks of the propagation core.
//!
//! Only the work is timed: plans, transfer functions and fields are built
//! outside `b.iter`. Each group runs with 1 and 2 rayon threads (a local
//! pool per case). The baseline in the `fft2` group is a bare forward +
//! inverse pair; `asm_step` is one band-limited angular-spectrum step
//! (FFT, ×H, inverse FFT) with the transfer function precomputed.
//! Summarise with `scripts/bench-summary`.

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, SamplingMode};

use beamwright::beams::{Mode, ModeShape};
use beamwright::fft::Fft2;
use beamwright::measure::{caustic, CausticOptions};
use beamwright::propagate::{AngularSpectrum, FresnelSingleFft};
use beamwright::{Field, Grid};

const LAMBDA: f64 = 1064e-9;

/// A Gaussian filling a quarter of the window, the typical working case.
fn gaussian(n: usize) -> Field {
    let spacing = 10e-6;
    let grid = Grid::new(n, spacing).expect("grid");
    let waist = n as f64 * spacing / 8.0;
    Mode::new(ModeShape::HermiteGauss { m: 0, n: 0 }, LAMBDA, waist)
        .expect("mode")
        .sample(grid, 0.0, 1.0)
        .expect("field")
}

fn pool(threads: usize) -> rayon::ThreadPool {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .expect("thread pool")
}

fn fft2(c: &mut Criterion) {
    let mut group = c.benchmark_group("fft2_forward_inverse");
    group.sampling_mode(SamplingMode::Flat);
    for n in [512usize, 1000, 1023, 1024, 2048, 4096] {
        group.sample_size(if n >= 4096 { 10 } else { 20 });
        for threads in [1usize, 2] {
            let pool = pool(threads);
            let mut field = gaussian(n);
            let plan = Fft2::for_size(n);
            group.bench_with_input(BenchmarkId::new(format!("{threads}t"), n), &n, |b, _| {
                pool.install(|| {
                    b.iter(|| {
                        plan.forward(&mut field.values);
                        plan.inverse(&mut field.values);
                    })
                })
            });
        }
    }
    group.finish();
}

fn asm_step(c: &mut Criterion) {
    let mut group = c.benchmark_group("asm_step");
    group.sampling_mode(SamplingMode::Flat);
    for n in [512usize, 1024, 2048, 4096] {
        group.sample_size(if n >= 4096 { 10 } else { 20 });
        let grid = Grid::new(n, 10e-6).expect("grid");
        let step = AngularSpectrum::new(grid, LAMBDA, 0.05).expect("step");
        for threads in [1usize, 2] {
            let pool = pool(threads);
            let mut field = gaussian(n);
            group.bench_with_input(BenchmarkId::new(format!("{threads}t"), n), &n, |b, _| {
                pool.install(|| b.iter(|| step.apply(&mut field).expect("apply")))
            });
        }
    }
    group.finish();
}

fn fresnel_step(c: &mut Criterion) {
    let mut group = c.benchmark_group("fresnel_step");
    group.sample_size(20);
    for n in [1024usize, 2048] {
        let step = FresnelSingleFft::new(2.0).expect("step");
        for threads in [1usize, 2] {
            let pool = pool(threads);
            let field = gaussian(n);
            group.bench_with_input(BenchmarkId::new(format!("{threads}t"), n), &n, |b, _| {
                pool.install(|| {
                    b.iter_batched_ref(
                        || field.clone(),
                        |f| step.apply(f).expect("apply"),
                        criterion::BatchSize::LargeInput,
                    )
                })
            });
        }
    }
    group.finish();
}

/// Two 41-plane caustics at 1024²: `asm`, a focused waist (w0 = 0.1 mm,
/// zR = 30 mm, span ±3zR) whose planes all lie within the critical distance
/// n·dx²/λ = 96 mm, so every plane is one spectrum multiply and one inverse
/// FFT of the probe's spectrum; `fresnel`, a wide beam (w0 = 1.28 mm,
/// zR = 4.8 m, span 6zR) whose planes mostly lie beyond it and use the
/// single-FFT Fresnel transform of the probe.
fn caustic_41(c: &mut Criterion) {
    let mut group = c.benchmark_group("caustic_41_planes");
    group.sample_size(10);
    let n = 1024;
    let spacing = 10e-6;
    let focused = Mode::new(ModeShape::HermiteGauss { m: 0, n: 0 }, LAMBDA, 0.1e-3)
        .expect("mode")
        .sample(Grid::new(n, spacing).expect("grid"), 0.0, 1.0)
        .expect("field");
    let z_r_focused = std::f64::consts::PI * 0.1e-3f64.powi(2) / LAMBDA;
    let wide = gaussian(n);
    let z_r_wide = std::f64::consts::PI * (n as f64 * spacing / 8.0).powi(2) / LAMBDA;
    let cases = [
        ("asm", focused, 6.0 * z_r_focused),
        ("fresnel", wide, 6.0 * z_r_wide),
    ];
    for (name, field, span_m) in &cases {
        let options = CausticOptions {
            span_m: *span_m,
            planes: 41,
            centre_m: 0.0,
        };
        for threads in [1usize, 2] {
            let pool = pool(threads);
            group.bench_with_input(
                BenchmarkId::new(format!("{threads}t-{name}"), n),
                &n,
                |b, _| pool.install(|| b.iter(|| caustic(field, &options).expect("caustic"))),
            );
        }
    }
    group.finish();
}

fn examples_end_to_end(c: &mut Criterion) {
    let mut group = c.benchmark_group("example_end_to_end");
    group.sample_size(10);
    for example in beamwright::examples::ALL {
        let path = std::path::PathBuf::from(format!("examples/layouts/{}.toml", example.name));
        let plan = beamwright::layout::parse(example.layout, &path).expect("example parses");
        let dir = std::env::temp_dir().join(format!("beamwright-bench-{}", example.name));
        group.bench_function(example.name, |b| {
            b.iter(|| {
                std::fs::create_dir_all(&dir).expect("dir");
                beamwright::run::run(
                    &plan,
                    &beamwright::run::RunOptions {
                        out_dir: Some(&dir),
                        progress: None,
                    },
                )
                .expect("run")
            })
        });
        let _ = std::fs::remove_dir_all(&dir);
    }
    group.finish();
}

criterion_group!(
    benches,
    fft2,
    asm_step,
    fresnel_step,
    caustic_41,
    examples_end_to_end
);
criterion_main!(benches);
