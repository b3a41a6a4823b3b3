//! Modal decomposition onto Hermite-Gauss or Laguerre-Gauss bases.
//!
//! Conventions: coefficients are overlap integrals with unit-power modes,
//! `c_k = Σ conj(u_k)·U·dx²` in √W (common practice; PHYSICS.md §6), so
//! `|c_k|²` is the power in mode k in watts and a complete basis gives
//! `Σ|c_k|² = P`. The modes are exactly those of [`crate::beams::Mode`]
//! (PHYSICS.md §3: no `(−1)^p` factor, curvature `exp(+ikr²/(2R))`, Gouy
//! phase `exp(−i(N+1)·atan(z/zR))`), evaluated at `z_from_waist_m`, the
//! probe's distance downstream of the basis waist. The basis is centred on
//! the **optical axis** (grid index `n/2`), not on the centroid; a warning
//! is given when the centroid is off axis by more than 5 % of the basis
//! radius. `order` is the largest mode order N kept (`m + n ≤ N` or
//! `2p + |l| ≤ N`); terms are listed by increasing N, then by decreasing m
//! (HG) or decreasing l (LG).
//!
//! **Default basis (best fit): the embedded Gaussian** of the beam's
//! single-plane second moments (Siegman 1990; ISO 11146-2 Wigner moments;
//! from memory; PHYSICS.md §6). From the whole-grid moments about the
//! centroid, `σr² = σx² + σy²`, the spectral variance `σf² = σfx² + σfy²`
//! and the cross moment `μ = μx + μy` (computed with spectral derivatives),
//! the beam's second-moment caustic is `σr²(z) = σr² + 2λzμ + λ²z²σf²`. Its
//! waist lies `z0 = −μ/(λσf²)` from the probe with `σ0² = σr² − μ²/σf²`,
//! and `M² = 2π·sqrt(σr²σf² − μ²)`. The basis waist is
//! `w0 = sqrt(2σ0²/M²)` (the second-moment radius divided by `√M²`) and
//! `z_from_waist = −z0`. This is exact for any single HG/LG mode or any
//! mixture of same-waist modes without cross terms, and gives `w0 = w` for
//! a Gaussian. A user-set waist or z replaces the fitted value of that
//! parameter only. For hard-clipped fields the spectral moments depend on
//! the sampling (PHYSICS.md §6), so set the basis explicitly there.

use ndarray::{Array2, Axis};
use num_complex::Complex64;
use rayon::prelude::*;

use super::moments::plain_generic;
use crate::beams::{hermite_function, GaussianBeam, ModeShape};
use crate::error::{Error, Result};
use crate::fft::Fft2;
use crate::field::{sum_norm_sqr, Field};

/// Largest mode order accepted by [`decompose`].
pub const MAX_ORDER: usize = 100;

/// Which family of modes to decompose onto.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Basis {
    /// Hermite-Gauss `HG_mn`.
    HermiteGauss,
    /// Laguerre-Gauss `LG_pl`.
    LaguerreGauss,
}

impl Basis {
    /// The name used in layouts and reports.
    pub fn name(self) -> &'static str {
        match self {
            Basis::HermiteGauss => "hermite-gauss",
            Basis::LaguerreGauss => "laguerre-gauss",
        }
    }
}

/// User choices for the basis; `None` means the best fit (module docs).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct BasisChoice {
    /// Basis waist radius `w0` (1/e² radius), metres.
    pub waist_m: Option<f64>,
    /// Distance of the probe downstream of the basis waist, metres.
    pub z_from_waist_m: Option<f64>,
}

/// One mode's share of the field.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ModeTerm {
    /// The mode.
    pub shape: ModeShape,
    /// Overlap `Σ conj(u)·U·dx²`, √W.
    pub coefficient: Complex64,
    /// `|c|²/P`, fraction of the field's power.
    pub power_fraction: f64,
    /// `arg c`, radians in `(−π, π]`, relative to the carrier.
    pub phase_rad: f64,
}

/// The result of [`decompose`].
#[derive(Debug, Clone, PartialEq)]
pub struct Decomposition {
    /// The family used.
    pub basis: Basis,
    /// Basis waist `w0`, metres.
    pub waist_m: f64,
    /// Probe z minus basis waist z, metres (`> 0`: the probe is downstream
    /// of the basis waist). The absolute waist z is the probe's z minus this.
    pub z_from_waist_m: f64,
    /// How the waist and z were chosen, in words.
    pub rule: String,
    /// The terms, by increasing order.
    pub terms: Vec<ModeTerm>,
    /// `Σ|c_k|²/P`: the fraction captured by the truncated basis.
    pub captured_fraction: f64,
    /// Largest `|Σ|u_k|²·dx² − 1|` over the basis on this grid: how well the
    /// grid samples and contains the highest modes.
    pub max_norm_error: f64,
    /// Warnings, in words with numbers.
    pub warnings: Vec<String>,
}

impl Decomposition {
    /// Power fraction not captured by the truncated basis, `1 − captured`.
    pub fn uncaptured_fraction(&self) -> f64 {
        (1.0 - self.captured_fraction).max(0.0)
    }
    /// The term for `shape`, if it is in the basis.
    pub fn term(&self, shape: ModeShape) -> Option<&ModeTerm> {
        self.terms.iter().find(|t| t.shape == shape)
    }
}

/// The embedded Gaussian of a field (module docs): `(w0, z_from_waist, M²)`.
///
/// # Errors
/// [`Error::Physics`] for zero power or degenerate moments.
pub fn embedded_gaussian(field: &Field) -> Result<(f64, f64, f64)> {
    let grid = field.grid();
    let n = grid.n();
    let lambda = field.wavelength_m();
    let m = plain_generic(&field.values, grid)?;
    let total = sum_norm_sqr(&field.values);
    let fft = Fft2::for_size(n);
    let mut spectrum = field.values.clone();
    fft.forward(&mut spectrum);
    let f = grid.freqs_per_m();
    // Spectral mean and variance (whole band).
    let spec = spectral_sums(&spectrum, &f);
    if !(spec[0] > 0.0 && spec[0].is_finite()) {
        return Err(Error::Physics(
            "cannot fit a basis to a field with zero power".into(),
        ));
    }
    let fx_mean = spec[1] / spec[0];
    let fy_mean = spec[2] / spec[0];
    let sfx = spec[3] / spec[0] - fx_mean * fx_mean;
    let sfy = spec[4] / spec[0] - fy_mean * fy_mean;
    // Cross moments ⟨x·fx⟩ = Σ x·Im(conj(U)·∂xU)/(2π·ΣU²), with ∂x = IFFT(i2πfx·FFT).
    let two_pi = 2.0 * std::f64::consts::PI;
    let mut cross = [0.0; 2];
    for (axis, slot) in cross.iter_mut().enumerate() {
        let mut d = spectrum.clone();
        d.axis_iter_mut(Axis(0))
            .into_par_iter()
            .enumerate()
            .for_each(|(iy, mut row)| {
                for (ix, v) in row.iter_mut().enumerate() {
                    let fr = if axis == 0 { f[ix] } else { f[iy] };
                    *v *= Complex64::new(0.0, two_pi * fr);
                }
            });
        fft.inverse(&mut d);
        let xs = grid.coords_m();
        let c = m.centroid_m;
        let rows: Vec<f64> = field
            .values
            .axis_iter(Axis(0))
            .into_par_iter()
            .zip(d.axis_iter(Axis(0)))
            .enumerate()
            .map(|(iy, (u, du))| {
                u.iter()
                    .zip(du.iter())
                    .enumerate()
                    .map(|(ix, (u, du))| {
                        let coord = if axis == 0 {
                            xs[ix] - c[0]
                        } else {
                            xs[iy] - c[1]
                        };
                        coord * (u.conj() * du).im
                    })
                    .sum::<f64>()
            })
            .collect();
        *slot = rows.iter().sum::<f64>() / (two_pi * total);
    }
    let sr = m.sigma2_m2[0] + m.sigma2_m2[1];
    let sf = sfx + sfy;
    let mu = cross[0] + cross[1];
    let det = sr * sf - mu * mu;
    if !(sf > 0.0 && det > 0.0) {
        return Err(Error::Physics(format!(
            "cannot fit an embedded Gaussian: σr² = {sr:e} m², σf² = {sf:e} m⁻², μ = {mu:e}"
        )));
    }
    let m2 = two_pi * det.sqrt();
    let z0 = -mu / (lambda * sf);
    let s0 = sr - mu * mu / sf;
    let w0 = (2.0 * s0 / m2).sqrt();
    Ok((w0, -z0, m2))
}

/// `[Σ|S|², Σfx|S|², Σfy|S|², Σfx²|S|², Σfy²|S|²]`, deterministic.
fn spectral_sums(spectrum: &Array2<Complex64>, f: &[f64]) -> [f64; 5] {
    let rows: Vec<[f64; 5]> = spectrum
        .axis_iter(Axis(0))
        .into_par_iter()
        .enumerate()
        .map(|(iy, row)| {
            let fy = f[iy];
            let mut a = [0.0; 5];
            for (ix, v) in row.iter().enumerate() {
                let e = v.norm_sqr();
                let fx = f[ix];
                a[0] += e;
                a[1] += e * fx;
                a[2] += e * fy;
                a[3] += e * fx * fx;
                a[4] += e * fy * fy;
            }
            a
        })
        .collect();
    let mut t = [0.0; 5];
    for r in &rows {
        for (a, b) in t.iter_mut().zip(r) {
            *a += b;
        }
    }
    t
}

/// Decomposes `field` onto `basis` up to mode order `order`.
///
/// # Errors
/// [`Error::OutOfRange`] for `order > MAX_ORDER` or a non-positive /
/// non-finite user waist or non-finite z; [`Error::Physics`] for a field
/// with zero power or when the best fit fails.
///
/// ```
/// use beamwright::{beams::{Mode, ModeShape}, measure::{decompose, Basis, BasisChoice}, Grid};
/// let grid = Grid::new(128, 20e-6).unwrap();
/// let mode = Mode::new(ModeShape::HermiteGauss { m: 1, n: 0 }, 1064e-9, 0.3e-3).unwrap();
/// let field = mode.sample(grid, 0.0, 1.0).unwrap();
/// let d = decompose(&field, Basis::HermiteGauss, 2, &BasisChoice::default()).unwrap();
/// assert!((d.term(mode.shape).unwrap().power_fraction - 1.0).abs() < 1e-6);
/// ```
pub fn decompose(
    field: &Field,
    basis: Basis,
    order: usize,
    choice: &BasisChoice,
) -> Result<Decomposition> {
    if order > MAX_ORDER {
        return Err(Error::out_of_range(
            "mode order",
            order,
            format!("expected 0 to {MAX_ORDER}"),
        ));
    }
    if let Some(w) = choice.waist_m {
        if !(w.is_finite() && w > 0.0) {
            return Err(Error::out_of_range(
                "basis waist",
                format!("{w} m"),
                "expected a positive, finite length",
            ));
        }
    }
    if let Some(z) = choice.z_from_waist_m {
        if !z.is_finite() {
            return Err(Error::out_of_range(
                "basis waist position",
                format!("{z} m"),
                "expected a finite length",
            ));
        }
    }
    let grid = field.grid();
    let total = sum_norm_sqr(&field.values) * grid.cell_area_m2();
    if !(total > 0.0 && total.is_finite()) {
        return Err(Error::Physics(
            "cannot decompose a field with zero power".into(),
        ));
    }
    let mut warnings = Vec::new();
    let (waist_m, z_from_waist_m, rule) = match (choice.waist_m, choice.z_from_waist_m) {
        (Some(w), Some(z)) => (w, z, "waist and position set by the user".to_string()),
        _ => {
            let (w_fit, z_fit, m2) = embedded_gaussian(field)?;
            let w = choice.waist_m.unwrap_or(w_fit);
            let z = choice.z_from_waist_m.unwrap_or(z_fit);
            let what = match (choice.waist_m, choice.z_from_waist_m) {
                (None, None) => "waist and position",
                (Some(_), None) => "position (waist set by the user)",
                _ => "waist (position set by the user)",
            };
            (
                w,
                z,
                format!(
                    "{what} from the embedded Gaussian of the single-plane second moments (M² = {m2:.4}, w0 = {w_fit:.6e} m, probe {z_fit:.6e} m from its waist)"
                ),
            )
        }
    };
    let beam = GaussianBeam::new(field.wavelength_m(), waist_m)?;
    let w = beam.radius_at(z_from_waist_m);
    let centroid = plain_generic(&field.values, grid)?.centroid_m;
    let off = centroid[0].hypot(centroid[1]);
    if off > 0.05 * w {
        warnings.push(format!(
            "the beam centroid is {off:.3e} m off axis ({:.1} % of the basis radius {w:.3e} m); the basis is centred on the axis, so power spreads into other modes",
            100.0 * off / w
        ));
    }
    let shapes = mode_list(basis, order);
    let (raw, norms) = match basis {
        Basis::HermiteGauss => overlaps_hg(field, &beam, z_from_waist_m, order),
        Basis::LaguerreGauss => overlaps_lg(field, &beam, z_from_waist_m, order, &shapes),
    };
    let gouy = beam.gouy_at(z_from_waist_m);
    let mut terms = Vec::with_capacity(shapes.len());
    let mut captured = 0.0;
    let mut max_norm_error: f64 = 0.0;
    for (k, shape) in shapes.iter().enumerate() {
        // conj(u) carries exp(+i(N+1)ψ).
        let c = raw[k] * Complex64::from_polar(1.0, (shape.order() as f64 + 1.0) * gouy);
        let pf = c.norm_sqr() / total;
        captured += pf;
        max_norm_error = max_norm_error.max((norms[k] - 1.0).abs());
        terms.push(ModeTerm {
            shape: *shape,
            coefficient: c,
            power_fraction: pf,
            phase_rad: c.arg(),
        });
    }
    if max_norm_error > 1e-3 {
        warnings.push(format!(
            "basis modes are not orthonormal on this grid (largest norm error {max_norm_error:.2e}): the highest orders are undersampled or exceed the window; lower the order or refine the grid"
        ));
    }
    if captured > 1.0 + 1e-3 {
        warnings.push(format!(
            "captured fraction {captured:.5} exceeds 1: the sampled basis is not orthonormal"
        ));
    }
    Ok(Decomposition {
        basis,
        waist_m,
        z_from_waist_m,
        rule,
        terms,
        captured_fraction: captured,
        max_norm_error,
        warnings,
    })
}

/// The modes of the truncated basis, in report order.
pub fn mode_list(basis: Basis, order: usize) -> Vec<ModeShape> {
    let mut out = Vec::new();
    for big_n in 0..=order {
        match basis {
            Basis::HermiteGauss => {
                for m in (0..=big_n).rev() {
                    out.push(ModeShape::HermiteGauss { m, n: big_n - m });
                }
            }
            Basis::LaguerreGauss => {
                let mut l = big_n as i32;
                while l >= -(big_n as i32) {
                    out.push(ModeShape::LaguerreGauss {
                        p: (big_n - l.unsigned_abs() as usize) / 2,
                        l,
                    });
                    l -= 2;
                }
            }
        }
    }
    out
}

/// HG overlaps without the Gouy factor, by separability:
/// `Σ_y Y_n(y)·cy·Σ_x X_m(x)·cx·U`. Also returns each mode's grid norm.
fn overlaps_hg(
    field: &Field,
    beam: &GaussianBeam,
    z: f64,
    order: usize,
) -> (Vec<Complex64>, Vec<f64>) {
    let grid = field.grid();
    let n = grid.n();
    let dx = grid.spacing_m();
    let w = beam.radius_at(z);
    let s = 2f64.sqrt() / w;
    let k = 2.0 * std::f64::consts::PI / beam.wavelength_m();
    let curv = beam.curvature_at(z);
    let xs = grid.coords_m();
    // 1-D factors: X[m][i] = ψ_m(s·x_i), chirp c[i] = exp(−ik x²/(2R)).
    let herm: Vec<Vec<f64>> = (0..=order)
        .map(|m| xs.iter().map(|&x| hermite_function(m, s * x)).collect())
        .collect();
    let chirp: Vec<Complex64> = xs
        .iter()
        .map(|&x| Complex64::from_polar(1.0, -k * x * x * curv / 2.0))
        .collect();
    // V[iy][m] = Σ_x X_m(x)·c(x)·U(x, y)
    let v: Vec<Vec<Complex64>> = field
        .values
        .axis_iter(Axis(0))
        .into_par_iter()
        .map(|row| {
            let mut acc = vec![Complex64::new(0.0, 0.0); order + 1];
            for (ix, u) in row.iter().enumerate() {
                let cu = chirp[ix] * u;
                for (m, a) in acc.iter_mut().enumerate() {
                    *a += cu * herm[m][ix];
                }
            }
            acc
        })
        .collect();
    let norm_1d: Vec<f64> = herm
        .iter()
        .map(|h| h.iter().map(|v| v * v).sum::<f64>() * s * dx)
        .collect();
    let mut raw = Vec::new();
    let mut norms = Vec::new();
    for big_n in 0..=order {
        for m in (0..=big_n).rev() {
            let nn = big_n - m;
            let mut sum = Complex64::new(0.0, 0.0);
            for iy in 0..n {
                sum += chirp[iy] * herm[nn][iy] * v[iy][m];
            }
            raw.push(sum * s * dx * dx);
            norms.push(norm_1d[m] * norm_1d[nn]);
        }
    }
    (raw, norms)
}

/// LG overlaps without the Gouy factor, pixel by pixel with the radial
/// recurrence of [`crate::beams::laguerre_radial`].
fn overlaps_lg(
    field: &Field,
    beam: &GaussianBeam,
    z: f64,
    order: usize,
    shapes: &[ModeShape],
) -> (Vec<Complex64>, Vec<f64>) {
    let grid = field.grid();
    let dx = grid.spacing_m();
    let w = beam.radius_at(z);
    let k = 2.0 * std::f64::consts::PI / beam.wavelength_m();
    let curv = beam.curvature_at(z);
    let xs = grid.coords_m();
    let modes = shapes.len();
    // index[a][p] = (index of l = +a, index of l = −a)
    let mut index = vec![vec![(0usize, 0usize); order / 2 + 1]; order + 1];
    for (i, s) in shapes.iter().enumerate() {
        if let ModeShape::LaguerreGauss { p, l } = *s {
            let a = l.unsigned_abs() as usize;
            if l >= 0 {
                index[a][p].0 = i;
            }
            if l <= 0 {
                index[a][p].1 = i;
            }
        }
    }
    let rows: Vec<(Vec<Complex64>, Vec<f64>)> = field
        .values
        .axis_iter(Axis(0))
        .into_par_iter()
        .enumerate()
        .map(|(iy, row)| {
            let y = xs[iy];
            let mut acc = vec![Complex64::new(0.0, 0.0); modes];
            let mut nrm = vec![0.0; modes];
            for (ix, u) in row.iter().enumerate() {
                let x = xs[ix];
                let r2 = x * x + y * y;
                let t = 2.0 * r2 / (w * w);
                let uc = u * Complex64::from_polar(1.0, -k * r2 * curv / 2.0);
                let r = r2.sqrt();
                let e_minus = if r > 0.0 {
                    Complex64::new(x / r, -y / r)
                } else {
                    Complex64::new(1.0, 0.0)
                };
                let mut g0 = (-t / 2.0).exp(); // t^(a/2)e^(−t/2)/sqrt(a!)
                let mut rot = Complex64::new(1.0, 0.0); // exp(−i·a·φ)
                for (a, index_a) in index.iter().enumerate() {
                    if a > 0 {
                        g0 *= (t / a as f64).sqrt();
                        rot *= e_minus;
                    }
                    let af = a as f64;
                    let plus = rot * uc;
                    let minus = rot.conj() * uc;
                    let mut prev = 0.0;
                    let mut cur = g0;
                    for (p, &(ip, im)) in index_a.iter().enumerate().take((order - a) / 2 + 1) {
                        if p > 0 {
                            let kf = (p - 1) as f64;
                            let next = ((2.0 * kf + 1.0 + af - t) * cur
                                - (kf * (kf + af)).sqrt() * prev)
                                / ((kf + 1.0) * (kf + 1.0 + af)).sqrt();
                            prev = cur;
                            cur = next;
                        }
                        acc[ip] += plus * cur;
                        nrm[ip] += cur * cur;
                        if a > 0 {
                            acc[im] += minus * cur;
                            nrm[im] += cur * cur;
                        }
                    }
                }
            }
            (acc, nrm)
        })
        .collect();
    let amp = (2.0 / std::f64::consts::PI).sqrt() / w;
    let mut raw = vec![Complex64::new(0.0, 0.0); modes];
    let mut norms = vec![0.0; modes];
    for (acc, nrm) in &rows {
        for i in 0..modes {
            raw[i] += acc[i];
            norms[i] += nrm[i];
        }
    }
    for i in 0..modes {
        raw[i] *= amp * dx * dx;
        norms[i] *= amp * amp * dx * dx;
    }
    (raw, norms)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::beams::Mode;
    use crate::Grid;

    /// Slow reference: overlap with `Mode::value_at` pixel by pixel.
    fn direct(field: &Field, shape: ModeShape, w0: f64, z: f64) -> Complex64 {
        let mode = Mode::new(shape, field.wavelength_m(), w0).unwrap();
        let xs = field.grid().coords_m();
        let mut s = Complex64::new(0.0, 0.0);
        for (iy, &y) in xs.iter().enumerate() {
            for (ix, &x) in xs.iter().enumerate() {
                s += mode.value_at(x, y, z).conj() * field.values[[iy, ix]];
            }
        }
        s * field.grid().cell_area_m2()
    }

    #[test]
    fn fast_overlaps_match_direct_sum() {
        // An arbitrary smooth field (sum of shifted, tilted Gaussians), a
        // curved basis; the fast HG and LG paths against Mode::value_at.
        let grid = Grid::new(64, 20e-6).unwrap();
        let field = Field::from_fn(grid, 1e-6, |x, y| {
            let g = (-((x - 50e-6).powi(2) + (y + 30e-6).powi(2)) / (150e-6f64).powi(2)).exp();
            let h = (-((x + 40e-6).powi(2) + y * y) / (100e-6f64).powi(2)).exp();
            Complex64::from_polar(g, 3e3 * x) + Complex64::new(0.0, 0.5) * h
        })
        .unwrap();
        let (w0, z) = (120e-6, 0.03);
        let choice = BasisChoice {
            waist_m: Some(w0),
            z_from_waist_m: Some(z),
        };
        for basis in [Basis::HermiteGauss, Basis::LaguerreGauss] {
            let d = decompose(&field, basis, 4, &choice).unwrap();
            for t in &d.terms {
                let c = direct(&field, t.shape, w0, z);
                assert!(
                    (t.coefficient - c).norm() < 1e-12 * (1.0 + c.norm()) + 1e-9,
                    "{:?}: {} vs {}",
                    t.shape,
                    t.coefficient,
                    c
                );
            }
        }
    }

    #[test]
    fn mode_list_counts() {
        assert_eq!(mode_list(Basis::HermiteGauss, 3).len(), 10);
        assert_eq!(mode_list(Basis::LaguerreGauss, 3).len(), 10);
        assert_eq!(
            mode_list(Basis::LaguerreGauss, 2)[4],
            ModeShape::LaguerreGauss { p: 1, l: 0 }
        );
    }

    #[test]
    fn embedded_gaussian_of_curved_gaussian() {
        // A Gaussian 20 mm past its waist: the fit returns its waist and z
        // (Siegman 1990, from memory). Tolerance 1e-6: smooth, well sampled.
        let grid = Grid::new(128, 10e-6).unwrap();
        let mode = Mode::new(ModeShape::HermiteGauss { m: 0, n: 0 }, 1064e-9, 0.15e-3).unwrap();
        let field = mode.sample(grid, 0.02, 1.0).unwrap();
        let (w0, z, m2) = embedded_gaussian(&field).unwrap();
        assert!((w0 / 0.15e-3 - 1.0).abs() < 1e-6, "{w0}");
        assert!((z / 0.02 - 1.0).abs() < 1e-6, "{z}");
        assert!((m2 - 1.0).abs() < 1e-6, "{m2}");
    }

    #[test]
    fn rejects_bad_choices() {
        let grid = Grid::new(16, 1e-5).unwrap();
        let f = Field::zeros(grid, 1e-6).unwrap();
        assert!(decompose(&f, Basis::HermiteGauss, 2, &BasisChoice::default()).is_err());
        let bad = BasisChoice {
            waist_m: Some(-1.0),
            z_from_waist_m: None,
        };
        assert!(decompose(&f, Basis::HermiteGauss, 2, &bad).is_err());
        assert!(decompose(
            &f,
            Basis::HermiteGauss,
            MAX_ORDER + 1,
            &BasisChoice::default()
        )
        .is_err());
    }
}
