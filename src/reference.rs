//! Slow, simple references and deterministic test signals, shared by the
//! unit tests, the integration tests and `beamwright verify` (common
//! practice: check fast code against a slow one, with fixed seeds).
//!
//! Conventions: arrays are square `(n, n)`, `[iy, ix]`; the DFT uses the
//! crate's forward kernel `exp(−2πi(kx·ix + ky·iy)/n)`, unnormalised, in
//! FFT order — exactly what [`crate::fft::Fft2::forward`] computes.

use ndarray::Array2;
use num_complex::Complex64;

/// The 2-D DFT by direct summation, `O(n⁴)`: use it on arrays up to ~64².
///
/// ```
/// use beamwright::reference::naive_dft2;
/// use ndarray::Array2;
/// use num_complex::Complex64;
/// let mut delta = Array2::zeros((4, 4));
/// delta[[0, 0]] = Complex64::new(1.0, 0.0);
/// assert!(naive_dft2(&delta).iter().all(|v| (v - 1.0).norm() < 1e-15));
/// ```
pub fn naive_dft2(a: &Array2<Complex64>) -> Array2<Complex64> {
    let n = a.nrows();
    // Reduce the index product modulo n before converting to an angle.
    let w = |k: usize| {
        Complex64::from_polar(1.0, -2.0 * std::f64::consts::PI * (k % n) as f64 / n as f64)
    };
    Array2::from_shape_fn((n, n), |(ky, kx)| {
        let mut s = Complex64::new(0.0, 0.0);
        for iy in 0..n {
            for ix in 0..n {
                s += a[[iy, ix]] * w(ky * iy) * w(kx * ix);
            }
        }
        s
    })
}

/// `n × n` complex samples with real and imaginary parts in `[−0.5, 0.5)`,
/// from Knuth's MMIX linear congruential generator seeded with `seed`: the
/// same "random" array on every run and machine.
///
/// ```
/// use beamwright::reference::seeded_samples;
/// assert_eq!(seeded_samples(8, 1), seeded_samples(8, 1));
/// assert_ne!(seeded_samples(8, 1), seeded_samples(8, 2));
/// ```
pub fn seeded_samples(n: usize, seed: u64) -> Array2<Complex64> {
    let mut state = seed;
    let mut next = || {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((state >> 11) as f64 / (1u64 << 53) as f64) - 0.5
    };
    Array2::from_shape_fn((n, n), |_| {
        let re = next();
        Complex64::new(re, next())
    })
}
