//! Peak irradiance, radial profiles, x/y cuts and ring (donut) metrics.
//!
//! Conventions: irradiance maps in W/m² on a [`Grid`], `[iy, ix]`; points
//! `[x, y]` in metres. The **radial profile** is the azimuthal average of
//! the pixels whose centres fall in annuli of equal width about a centre,
//! out to the nearest grid edge; each bin is reported at the mean radius of
//! its pixels. **Ring metrics** (what a blue-detuned donut trap is judged
//! by): the ring radius is where the radial profile peaks (parabolic
//! refinement over the three bins around the maximum), the ring peak
//! irradiance is the profile's value there (azimuthal average, so a ring
//! that is brighter on one side is reported by its mean), the centre
//! irradiance is bilinearly interpolated at the centre, and the null depth
//! is centre/ring peak (0 for a perfect donut; PHYSICS.md §3: `LG_0l` has its
//! ring at `w·sqrt(|l|/2)`).

use ndarray::Array2;

use crate::grid::Grid;

/// The largest irradiance on the grid (W/m²) and its pixel centre `[x, y]`
/// (m). Ties go to the first pixel in row-major order.
pub fn peak(irradiance: &Array2<f64>, grid: Grid) -> (f64, [f64; 2]) {
    let mut best = (f64::NEG_INFINITY, 0usize, 0usize);
    for ((iy, ix), &v) in irradiance.indexed_iter() {
        if v > best.0 {
            best = (v, iy, ix);
        }
    }
    (best.0, [grid.x_m(best.2), grid.x_m(best.1)])
}

/// Bilinear interpolation of the irradiance at `[x, y]` (0 outside the grid).
pub fn irradiance_at(irradiance: &Array2<f64>, grid: Grid, point_m: [f64; 2]) -> f64 {
    let n = grid.n();
    let origin = (n / 2) as f64;
    let fx = point_m[0] / grid.spacing_m() + origin;
    let fy = point_m[1] / grid.spacing_m() + origin;
    if !(fx >= 0.0 && fy >= 0.0 && fx <= (n - 1) as f64 && fy <= (n - 1) as f64) {
        return 0.0;
    }
    let (ix, iy) = (
        (fx.floor() as usize).min(n - 2),
        (fy.floor() as usize).min(n - 2),
    );
    let (tx, ty) = (fx - ix as f64, fy - iy as f64);
    let e = |a: usize, b: usize| irradiance[[a, b]];
    (1.0 - ty) * ((1.0 - tx) * e(iy, ix) + tx * e(iy, ix + 1))
        + ty * ((1.0 - tx) * e(iy + 1, ix) + tx * e(iy + 1, ix + 1))
}

/// Azimuthally averaged irradiance about `centre_m`: `(radius_m, w_m2)`
/// per bin, out to the nearest grid edge in `bins` annuli (fewer if an
/// annulus would be narrower than one pixel). Empty annuli take the value
/// of the previous bin.
pub fn radial_profile(
    irradiance: &Array2<f64>,
    grid: Grid,
    centre_m: [f64; 2],
    bins: usize,
) -> (Vec<f64>, Vec<f64>) {
    let dx = grid.spacing_m();
    let half = grid.width_m() / 2.0 - dx;
    let r_max = (half - centre_m[0].abs()).min(half - centre_m[1].abs());
    if r_max.is_nan() || r_max <= 0.0 || bins == 0 {
        return (Vec::new(), Vec::new());
    }
    let bins = bins.min((r_max / dx).floor().max(1.0) as usize);
    let width = r_max / bins as f64;
    let mut sum = vec![0.0; bins];
    let mut rsum = vec![0.0; bins];
    let mut count = vec![0usize; bins];
    for ((iy, ix), &v) in irradiance.indexed_iter() {
        let r = (grid.x_m(ix) - centre_m[0]).hypot(grid.x_m(iy) - centre_m[1]);
        let b = (r / width) as usize;
        if b < bins {
            sum[b] += v;
            rsum[b] += r;
            count[b] += 1;
        }
    }
    let mut radii = Vec::with_capacity(bins);
    let mut values = Vec::with_capacity(bins);
    for b in 0..bins {
        if count[b] > 0 {
            radii.push(rsum[b] / count[b] as f64);
            values.push(sum[b] / count[b] as f64);
        } else {
            radii.push((b as f64 + 0.5) * width);
            values.push(values.last().copied().unwrap_or(0.0));
        }
    }
    (radii, values)
}

/// Cuts through `centre_m` along x and y: `(x_m, row values, y_m, column
/// values)` from the row and column nearest the centre.
pub fn cuts(
    irradiance: &Array2<f64>,
    grid: Grid,
    centre_m: [f64; 2],
) -> (Vec<f64>, Vec<f64>, Vec<f64>, Vec<f64>) {
    let n = grid.n();
    let index = |c: f64| {
        ((c / grid.spacing_m()).round() + (n / 2) as f64).clamp(0.0, (n - 1) as f64) as usize
    };
    let (ix, iy) = (index(centre_m[0]), index(centre_m[1]));
    let coords = grid.coords_m();
    (
        coords.clone(),
        irradiance.row(iy).to_vec(),
        coords,
        irradiance.column(ix).to_vec(),
    )
}

/// Ring (donut) metrics.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RingMetrics {
    /// Radius of the ring maximum of the radial profile, metres.
    pub ring_radius_m: f64,
    /// Azimuthally averaged irradiance at the ring maximum, W/m².
    pub ring_peak_w_m2: f64,
    /// Irradiance at the centre (bilinear), W/m².
    pub centre_w_m2: f64,
    /// `centre / ring peak`: 0 for a perfect null.
    pub null_depth: f64,
}

/// Ring metrics about `centre_m` (see the module docs); `None` when the
/// radial profile has its maximum in the first bin (no ring) or the field
/// is empty.
pub fn ring_metrics(
    irradiance: &Array2<f64>,
    grid: Grid,
    centre_m: [f64; 2],
) -> Option<RingMetrics> {
    let (r, v) = radial_profile(irradiance, grid, centre_m, grid.n());
    if v.len() < 3 {
        return None;
    }
    let (imax, &vmax) = v.iter().enumerate().max_by(|a, b| a.1.total_cmp(b.1))?;
    if imax == 0 || vmax.is_nan() || vmax <= 0.0 {
        return None;
    }
    let (mut radius, mut peak) = (r[imax], vmax);
    if imax + 1 < v.len() {
        // Parabola through the three points (r, v) around the maximum.
        let (x0, x1, x2) = (r[imax - 1], r[imax], r[imax + 1]);
        let (y0, y1, y2) = (v[imax - 1], v[imax], v[imax + 1]);
        let d01 = (y1 - y0) / (x1 - x0);
        let d12 = (y2 - y1) / (x2 - x1);
        let a = (d12 - d01) / (x2 - x0);
        if a < 0.0 {
            let b = d01 - a * (x0 + x1);
            let xm = (-b / (2.0 * a)).clamp(x0, x2);
            radius = xm;
            peak = y1 + d01 * (xm - x1) + a * (xm - x1) * (xm - x0);
            peak = peak.max(vmax);
        }
    }
    let centre = irradiance_at(irradiance, grid, centre_m);
    Some(RingMetrics {
        ring_radius_m: radius,
        ring_peak_w_m2: peak,
        centre_w_m2: centre,
        null_depth: centre / peak,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn peak_and_interpolation() {
        let g = Grid::new(8, 1.0).unwrap();
        let mut e = Array2::zeros((8, 8));
        e[[5, 2]] = 3.0;
        e[[5, 3]] = 1.0;
        assert_eq!(peak(&e, g), (3.0, [-2.0, 1.0]));
        assert!((irradiance_at(&e, g, [-1.5, 1.0]) - 2.0).abs() < 1e-15);
        assert!(ring_metrics(&e, g, [-2.0, 1.0]).is_none());
    }

    #[test]
    fn parabola_recovers_vertex() {
        // v = 5 − (r − 10.3)²: the refined ring radius is exact.
        let g = Grid::new(64, 1.0).unwrap();
        let e = Array2::from_shape_fn((64, 64), |(iy, ix)| {
            let r = g.x_m(ix).hypot(g.x_m(iy));
            (5.0 - (r - 10.3).powi(2)).max(0.0)
        });
        let ring = ring_metrics(&e, g, [0.0, 0.0]).unwrap();
        assert!((ring.ring_radius_m - 10.3).abs() < 0.1, "{ring:?}");
        assert_eq!(ring.centre_w_m2, 0.0);
    }
}
