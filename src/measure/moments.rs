//! ISO 11146 first and second moments, D4σ diameters and the iterated
//! integration area.
//!
//! Conventions: the input is irradiance `E[iy, ix]` in W/m² (or the complex
//! field, whose `|U|²` is used) on a [`Grid`]; coordinates in metres, angles
//! in radians measured from +x towards +y. Definitions (ISO 11146-1, -2,
//! from memory; PHYSICS.md §6):
//!
//! ```text
//! x̄ = ΣxE/ΣE,  σx² = Σ(x−x̄)²E/ΣE,  σxy = Σ(x−x̄)(y−ȳ)E/ΣE,  D4σ_x = 4σx
//! principal D4σ = 2√2·sqrt((σx²+σy²) ± sqrt((σx²−σy²)² + 4σxy²))   (major, minor)
//! ```
//!
//! The **azimuth** reported here is the angle of the *major* principal axis,
//! `½·atan2(2σxy, σx²−σy²)` in `(−π/2, π/2]`. ISO 11146 quotes
//! `½·atan(2σxy/(σx²−σy²))`, the axis within ±45° of x; the two agree when
//! the major axis is within ±45° of x and differ by ±90° otherwise. For a
//! round beam (`σx² = σy²`, `σxy = 0`) the azimuth is undefined and 0 is
//! reported.
//!
//! **Integration area** (ISO 11146-1 / ISO/TR 11146-3, from memory; the
//! clause is unverified): after a first pass over the whole grid, the sums
//! are restricted to a rectangle centred on the current centroid, aligned
//! with the current principal axes, with sides 3× the current principal
//! D4σ diameters (pixel-centre test). This is repeated until both principal
//! diameters change by less than [`ISO_TOLERANCE`] (relative) and the
//! centroid by less than that fraction of the major diameter, or until
//! [`ISO_MAX_ITERATIONS`] passes. The window makes widths of hard-clipped
//! beams finite and resolution independent, where the plain second moment
//! grows without bound as the sampling is refined (PHYSICS.md §6).
//!
//! Sums are taken per row in parallel and the row sums added in row order,
//! so results do not depend on the number of threads.

use ndarray::{Array2, Axis};
use num_complex::Complex64;
use rayon::prelude::*;

use crate::error::{Error, Result};
use crate::field::Field;
use crate::grid::Grid;

/// Relative change of the diameters at which the ISO iteration stops.
pub const ISO_TOLERANCE: f64 = 1e-4;
/// Maximum number of windowed passes of the ISO iteration.
pub const ISO_MAX_ITERATIONS: usize = 100;

/// First and second moments of an irradiance distribution.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Moments {
    /// Centroid `[x̄, ȳ]`, metres.
    pub centroid_m: [f64; 2],
    /// Variances `[σx², σy²]`, m².
    pub sigma2_m2: [f64; 2],
    /// Mixed moment `σxy` (ISO writes it `σxy²`), m².
    pub sigma_xy_m2: f64,
    /// D4σ diameters `[4σx, 4σy]` along the grid axes, metres.
    pub d4sigma_m: [f64; 2],
    /// D4σ diameters along the principal axes `[major, minor]`, metres.
    pub principal_d4sigma_m: [f64; 2],
    /// Angle of the major principal axis from +x towards +y, radians, in
    /// `(−π/2, π/2]` (see the module docs for the ISO convention).
    pub azimuth_rad: f64,
    /// Whether the ISO iteration converged (always `true` for
    /// [`plain_moments`]).
    pub converged: bool,
    /// Windowed passes made after the first whole-grid pass (0 for
    /// [`plain_moments`]).
    pub iterations: usize,
    /// Fraction of the grid's total power inside the final integration
    /// area (1 for [`plain_moments`]).
    pub window_power_fraction: f64,
}

impl Moments {
    /// Moments of a beam that has none (no power, or not finite): every
    /// value NaN, reported as null.
    pub fn undefined() -> Self {
        Self {
            centroid_m: [f64::NAN; 2],
            sigma2_m2: [f64::NAN; 2],
            sigma_xy_m2: f64::NAN,
            d4sigma_m: [f64::NAN; 2],
            principal_d4sigma_m: [f64::NAN; 2],
            azimuth_rad: f64::NAN,
            converged: false,
            iterations: 0,
            window_power_fraction: f64::NAN,
        }
    }

    /// Second-moment radius `W = 2σ` along x and y, metres (`= w` for a
    /// Gaussian).
    pub fn radius_m(&self) -> [f64; 2] {
        [self.d4sigma_m[0] / 2.0, self.d4sigma_m[1] / 2.0]
    }
    /// Generalised diameter `dσ = 2√2·sqrt(σx² + σy²)`, metres.
    pub fn generalised_d4sigma_m(&self) -> f64 {
        2.0 * 2f64.sqrt() * (self.sigma2_m2[0] + self.sigma2_m2[1]).max(0.0).sqrt()
    }
    /// Ellipticity `minor/major` (ISO 11146 calls a beam round when ≥ 0.87).
    pub fn ellipticity(&self) -> f64 {
        let [major, minor] = self.principal_d4sigma_m;
        if major > 0.0 {
            minor / major
        } else {
            1.0
        }
    }
    /// Variance along a direction at angle `theta_rad` from +x, m²:
    /// `σx²cos²θ + 2σxy·sinθcosθ + σy²sin²θ`.
    pub fn sigma2_along_m2(&self, theta_rad: f64) -> f64 {
        let (s, c) = theta_rad.sin_cos();
        self.sigma2_m2[0] * c * c + 2.0 * self.sigma_xy_m2 * s * c + self.sigma2_m2[1] * s * s
    }
}

/// Something that has an irradiance: `f64` is irradiance itself, a complex
/// amplitude contributes `|U|²`.
pub(crate) trait Irradiance: Copy + Send + Sync {
    fn irradiance(self) -> f64;
}
impl Irradiance for f64 {
    #[inline]
    fn irradiance(self) -> f64 {
        self
    }
}
impl Irradiance for Complex64 {
    #[inline]
    fn irradiance(self) -> f64 {
        self.norm_sqr()
    }
}

/// Integration region: the whole grid or a rotated rectangle.
#[derive(Debug, Clone, Copy)]
enum Region {
    All,
    /// Centre, unit vector of the first side, half-lengths along the first
    /// and second side.
    Rect {
        centre: [f64; 2],
        dir: [f64; 2],
        half: [f64; 2],
    },
}

impl Region {
    /// Inclusive range of column indices of row coordinate `y` inside the
    /// region, or `None`.
    fn columns(&self, grid: Grid, y: f64) -> Option<(usize, usize)> {
        let n = grid.n();
        match *self {
            Region::All => Some((0, n - 1)),
            Region::Rect { centre, dir, half } => {
                // u = dx·c + dy·s, v = −dx·s + dy·c with dx = x − cx, dy = y − cy;
                // |u| ≤ a and |v| ≤ b give an interval in x for this row.
                let (c, s) = (dir[0], dir[1]);
                let dy = y - centre[1];
                let mut lo = f64::NEG_INFINITY;
                let mut hi = f64::INFINITY;
                for (coef, offset, h) in [(c, dy * s, half[0]), (-s, dy * c, half[1])] {
                    // −h ≤ coef·dx + offset ≤ h
                    if coef.abs() < 1e-15 {
                        if offset.abs() > h {
                            return None;
                        }
                    } else {
                        let a = (-h - offset) / coef;
                        let b = (h - offset) / coef;
                        lo = lo.max(a.min(b));
                        hi = hi.min(a.max(b));
                    }
                }
                if hi < lo {
                    return None;
                }
                let dx = grid.spacing_m();
                let origin = (n / 2) as f64;
                let first = ((centre[0] + lo) / dx + origin).ceil().max(0.0);
                let last = ((centre[0] + hi) / dx + origin).floor().min((n - 1) as f64);
                (first <= last).then_some((first as usize, last as usize))
            }
        }
    }
}

/// Raw sums about a reference point: `[ΣE, ΣuE, ΣvE, Σu²E, Σv²E, ΣuvE]`
/// with `u = x − x0`, `v = y − y0`.
fn sums<T: Irradiance>(
    values: &Array2<T>,
    grid: Grid,
    region: Region,
    reference: [f64; 2],
) -> [f64; 6] {
    let xs = grid.coords_m();
    let rows: Vec<[f64; 6]> = values
        .axis_iter(Axis(0))
        .into_par_iter()
        .enumerate()
        .map(|(iy, row)| {
            let y = xs[iy];
            let mut acc = [0.0; 6];
            let Some((first, last)) = region.columns(grid, y) else {
                return acc;
            };
            let v = y - reference[1];
            let mut s0 = 0.0;
            let mut s1 = 0.0;
            let mut s2 = 0.0;
            for ix in first..=last {
                let e = row[ix].irradiance();
                let u = xs[ix] - reference[0];
                s0 += e;
                s1 += e * u;
                s2 += e * u * u;
            }
            acc[0] = s0;
            acc[1] = s1;
            acc[2] = s0 * v;
            acc[3] = s2;
            acc[4] = s0 * v * v;
            acc[5] = s1 * v;
            acc
        })
        .collect();
    let mut total = [0.0; 6];
    for r in &rows {
        for (t, v) in total.iter_mut().zip(r) {
            *t += v;
        }
    }
    total
}

/// Moments from raw sums about `reference`; `None` if the power is not
/// positive.
fn from_sums(s: [f64; 6], reference: [f64; 2]) -> Option<Moments> {
    let p = s[0];
    if !(p > 0.0 && p.is_finite()) {
        return None;
    }
    let mu = s[1] / p;
    let mv = s[2] / p;
    let sx = (s[3] / p - mu * mu).max(0.0);
    let sy = (s[4] / p - mv * mv).max(0.0);
    let sxy = s[5] / p - mu * mv;
    Some(moments_from(
        [reference[0] + mu, reference[1] + mv],
        [sx, sy],
        sxy,
    ))
}

/// Fills the derived quantities from centroid and second moments.
pub(crate) fn moments_from(centroid_m: [f64; 2], sigma2_m2: [f64; 2], sigma_xy_m2: f64) -> Moments {
    let [sx, sy] = sigma2_m2;
    let sum = sx + sy;
    let diff = ((sx - sy).powi(2) + 4.0 * sigma_xy_m2 * sigma_xy_m2).sqrt();
    let k = 2.0 * 2f64.sqrt();
    let major = k * (sum + diff).max(0.0).sqrt();
    let minor = k * (sum - diff).max(0.0).sqrt();
    let azimuth = if diff > 0.0 {
        0.5 * (2.0 * sigma_xy_m2).atan2(sx - sy)
    } else {
        0.0
    };
    Moments {
        centroid_m,
        sigma2_m2,
        sigma_xy_m2,
        d4sigma_m: [4.0 * sx.sqrt(), 4.0 * sy.sqrt()],
        principal_d4sigma_m: [major, minor],
        azimuth_rad: azimuth,
        converged: true,
        iterations: 0,
        window_power_fraction: 1.0,
    }
}

fn check_shape<T>(values: &Array2<T>, grid: Grid) -> Result<()> {
    let (rows, cols) = values.dim();
    if rows != grid.n() || cols != grid.n() {
        return Err(Error::Shape {
            what: "irradiance array".into(),
            got_rows: rows,
            got_cols: cols,
            expected_rows: grid.n(),
            expected_cols: grid.n(),
        });
    }
    Ok(())
}

fn zero_power() -> Error {
    Error::Physics("cannot measure moments of a beam with zero (or non-finite) power".into())
}

/// Plain moments over the whole grid, no integration window.
pub(crate) fn plain_generic<T: Irradiance>(values: &Array2<T>, grid: Grid) -> Result<Moments> {
    plain_with_total(values, grid).map(|(m, _)| m)
}

/// [`plain_generic`] and the total `ΣE`.
fn plain_with_total<T: Irradiance>(values: &Array2<T>, grid: Grid) -> Result<(Moments, f64)> {
    check_shape(values, grid)?;
    // Two passes: the first about the axis finds the centroid, the second
    // sums about the centroid to avoid cancellation in σ² = ⟨x²⟩ − x̄².
    let raw = sums(values, grid, Region::All, [0.0, 0.0]);
    let first = from_sums(raw, [0.0, 0.0]).ok_or_else(zero_power)?;
    let m = from_sums(
        sums(values, grid, Region::All, first.centroid_m),
        first.centroid_m,
    )
    .ok_or_else(zero_power)?;
    Ok((m, raw[0]))
}

/// ISO 11146 moments with the iterated integration area.
pub(crate) fn iso_generic<T: Irradiance>(values: &Array2<T>, grid: Grid) -> Result<Moments> {
    let (mut current, total) = plain_with_total(values, grid)?;
    let mut converged = false;
    let mut iterations = 0;
    let mut window_power = total;
    while iterations < ISO_MAX_ITERATIONS {
        iterations += 1;
        let (s, c) = current.azimuth_rad.sin_cos();
        let [major, minor] = current.principal_d4sigma_m;
        let region = Region::Rect {
            centre: current.centroid_m,
            dir: [c, s],
            half: [1.5 * major, 1.5 * minor],
        };
        let raw = sums(values, grid, region, current.centroid_m);
        let Some(next) = from_sums(raw, current.centroid_m) else {
            return Err(Error::Physics(
                "ISO 11146 integration area holds no power (the beam is narrower than one pixel or empty)".into(),
            ));
        };
        window_power = raw[0];
        let scale = major.max(grid.spacing_m() * 1e-6);
        let change = [
            (next.principal_d4sigma_m[0] - major).abs() / scale,
            (next.principal_d4sigma_m[1] - minor).abs() / minor.max(scale * 1e-3),
            (next.centroid_m[0] - current.centroid_m[0]).abs() / scale,
            (next.centroid_m[1] - current.centroid_m[1]).abs() / scale,
        ];
        current = next;
        if change.iter().all(|&d| d < ISO_TOLERANCE) {
            converged = true;
            break;
        }
    }
    current.converged = converged;
    current.iterations = iterations;
    current.window_power_fraction = if total > 0.0 {
        window_power / total
    } else {
        0.0
    };
    Ok(current)
}

/// ISO 11146 moments of an irradiance map with the iterated integration
/// area (see the module docs).
///
/// # Errors
/// [`Error::Shape`] if the array is not `n × n`; [`Error::Physics`] if the
/// total power is zero or not finite, or the window becomes empty.
///
/// ```
/// use beamwright::{beams::{Mode, ModeShape}, measure::iso_moments, Grid};
/// let grid = Grid::new(256, 10e-6).unwrap();
/// let beam = Mode::new(ModeShape::HermiteGauss { m: 0, n: 0 }, 1064e-9, 0.3e-3).unwrap();
/// let m = iso_moments(&beam.sample(grid, 0.0, 1.0).unwrap().irradiance(), grid).unwrap();
/// assert!((m.d4sigma_m[0] - 0.6e-3).abs() < 1e-7 && m.converged);
/// ```
pub fn iso_moments(irradiance: &Array2<f64>, grid: Grid) -> Result<Moments> {
    iso_generic(irradiance, grid)
}

/// Plain moments of an irradiance map over the whole grid, without a
/// window. For hard-clipped beams these depend on the sampling (see the
/// module docs); report them only beside the ISO values.
///
/// # Errors
/// As [`iso_moments`].
pub fn plain_moments(irradiance: &Array2<f64>, grid: Grid) -> Result<Moments> {
    plain_generic(irradiance, grid)
}

/// [`iso_moments`] of a field's `|U|²`, without building the irradiance array.
///
/// # Errors
/// As [`iso_moments`].
pub fn iso_moments_of(field: &Field) -> Result<Moments> {
    iso_generic(&field.values, field.grid())
}

/// [`plain_moments`] of a field's `|U|²`.
///
/// # Errors
/// As [`iso_moments`].
pub fn plain_moments_of(field: &Field) -> Result<Moments> {
    plain_generic(&field.values, field.grid())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn grid() -> Grid {
        Grid::new(64, 1.0).unwrap()
    }

    #[test]
    fn region_columns_match_pixel_test() {
        // The analytic row interval must select exactly the pixels whose
        // centres pass the rotated-rectangle test.
        let g = grid();
        let xs = g.coords_m();
        for (theta, cx, cy, a, b) in [
            (0.3f64, 1.2, -3.4, 10.0, 4.0),
            (0.0, 0.0, 0.0, 5.5, 7.0),
            (std::f64::consts::FRAC_PI_2, 2.0, 1.0, 3.0, 9.0),
            (-0.7, 0.5, 0.5, 12.0, 0.3),
        ] {
            let (s, c) = theta.sin_cos();
            let r = Region::Rect {
                centre: [cx, cy],
                dir: [c, s],
                half: [a, b],
            };
            for (iy, &y) in xs.iter().enumerate() {
                let sel = r.columns(g, y);
                for (ix, &x) in xs.iter().enumerate() {
                    let (dx, dy) = (x - cx, y - cy);
                    let inside = (dx * c + dy * s).abs() <= a && (-dx * s + dy * c).abs() <= b;
                    let chosen = sel.is_some_and(|(lo, hi)| ix >= lo && ix <= hi);
                    // Ties on the boundary may go either way by round-off.
                    let margin = ((dx * c + dy * s).abs() - a)
                        .abs()
                        .min(((-dx * s + dy * c).abs() - b).abs());
                    if margin > 1e-9 {
                        assert_eq!(inside, chosen, "theta={theta} iy={iy} ix={ix}");
                    }
                }
            }
        }
    }

    #[test]
    fn point_and_pair_of_points() {
        // Two equal points at x = ±3: centroid 0, σx² = 9, σy² = 0.
        let g = grid();
        let mut e = Array2::zeros((64, 64));
        e[[32, 29]] = 1.0;
        e[[32, 35]] = 1.0;
        let m = plain_moments(&e, g).unwrap();
        assert_eq!(m.centroid_m, [0.0, 0.0]);
        assert!((m.sigma2_m2[0] - 9.0).abs() < 1e-12);
        assert_eq!(m.sigma2_m2[1], 0.0);
        assert!((m.d4sigma_m[0] - 12.0).abs() < 1e-12);
        assert_eq!(m.azimuth_rad, 0.0);
        let iso = iso_moments(&e, g).unwrap();
        assert!(iso.converged);
        assert!((iso.d4sigma_m[0] - 12.0).abs() < 1e-12);
    }

    #[test]
    fn zero_power_and_bad_shape_are_errors() {
        let g = grid();
        assert!(matches!(
            iso_moments(&Array2::zeros((64, 64)), g),
            Err(Error::Physics(_))
        ));
        assert!(matches!(
            plain_moments(&Array2::zeros((64, 63)), g),
            Err(Error::Shape { .. })
        ));
    }

    #[test]
    fn azimuth_of_major_axis() {
        // σx² < σy²: the major axis is along y, azimuth π/2.
        let m = moments_from([0.0, 0.0], [1.0, 4.0], 0.0);
        assert!((m.azimuth_rad - std::f64::consts::FRAC_PI_2).abs() < 1e-15);
        assert!((m.principal_d4sigma_m[0] - 8.0).abs() < 1e-12);
        assert!((m.principal_d4sigma_m[1] - 4.0).abs() < 1e-12);
    }
}
