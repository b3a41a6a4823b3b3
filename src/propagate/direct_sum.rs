//! Slow, direct-summation propagators: the reference the FFT propagators are
//! tested against (common practice: check fast code against a slow one).
//!
//! Conventions: output points are arbitrary `(x, y)` in metres; the carrier
//! `exp(ikz)` is removed as everywhere else. Cost is `O(n²)` per output
//! point, so use grids near 64². Each sample is treated as a point source
//! weighted by `dx²` (midpoint rule).

use num_complex::Complex64;

use crate::field::Field;

/// Fresnel (paraxial) diffraction integral at `(x, y)` a distance `z_m`
/// downstream: `(1/(iλz))·Σ U1·exp(iπ((x−x1)² + (y−y1)²)/(λz))·dx²`
/// (Goodman ch. 4, from memory).
pub fn fresnel_at(field: &Field, z_m: f64, x_m: f64, y_m: f64) -> Complex64 {
    let lambda = field.wavelength_m();
    let grid = field.grid();
    let xs = grid.coords_m();
    let a = std::f64::consts::PI / (lambda * z_m);
    let mut sum = Complex64::new(0.0, 0.0);
    for (iy, &y1) in xs.iter().enumerate() {
        for (ix, &x1) in xs.iter().enumerate() {
            let r2 = (x_m - x1).powi(2) + (y_m - y1).powi(2);
            sum += field.values[[iy, ix]] * Complex64::from_polar(1.0, a * r2);
        }
    }
    sum * grid.cell_area_m2() / Complex64::new(0.0, lambda * z_m)
}

/// First Rayleigh-Sommerfeld integral at `(x, y)` a distance `z_m > 0`
/// downstream, exact scalar: kernel `(z/(2π))·exp(ikr)·(1/r − ik)/r²`
/// (Goodman ch. 3, from memory), carrier `exp(ikz)` removed.
pub fn rayleigh_sommerfeld_at(field: &Field, z_m: f64, x_m: f64, y_m: f64) -> Complex64 {
    let k = field.wavenumber_per_m();
    let grid = field.grid();
    let xs = grid.coords_m();
    let mut sum = Complex64::new(0.0, 0.0);
    for (iy, &y1) in xs.iter().enumerate() {
        for (ix, &x1) in xs.iter().enumerate() {
            let rho2 = (x_m - x1).powi(2) + (y_m - y1).powi(2);
            let r = (rho2 + z_m * z_m).sqrt();
            // k·(r − z) computed without cancellation.
            let path = k * rho2 / (r + z_m);
            let kernel = Complex64::from_polar(1.0, path) * Complex64::new(1.0 / r, -k) / (r * r);
            sum += field.values[[iy, ix]] * kernel;
        }
    }
    sum * grid.cell_area_m2() * z_m / (2.0 * std::f64::consts::PI)
}
