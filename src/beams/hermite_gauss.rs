//! Normalised Hermite functions, the 1-D factors of Hermite-Gauss modes.

/// The normalised Hermite function `ψ_m(t) = H_m(t)·exp(−t²/2)/sqrt(2^m·m!·√π)`,
/// computed by its stable three-term recurrence
/// `ψ_{m+1} = sqrt(2/(m+1))·t·ψ_m − sqrt(m/(m+1))·ψ_{m−1}`
/// (common practice; avoids the overflow of `H_m` and `m!` at high order).
/// `∫ψ_m² dt = 1`.
///
/// ```
/// use beamwright::beams::hermite_function;
/// let t: f64 = 0.7;
/// // ψ_1(t) = sqrt(2)·t·exp(−t²/2)/π^(1/4)
/// let expected = 2f64.sqrt() * t * (-t * t / 2.0).exp() / std::f64::consts::PI.powf(0.25);
/// assert!((hermite_function(1, t) - expected).abs() < 1e-15);
/// ```
pub fn hermite_function(m: usize, t: f64) -> f64 {
    let mut prev = 0.0;
    let mut cur = (-t * t / 2.0).exp() / std::f64::consts::PI.powf(0.25);
    for k in 0..m {
        let next =
            (2.0 / (k as f64 + 1.0)).sqrt() * t * cur - (k as f64 / (k as f64 + 1.0)).sqrt() * prev;
        prev = cur;
        cur = next;
    }
    cur
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn matches_explicit_polynomials() {
        // H2 = 4t² − 2, H3 = 8t³ − 12t (Abramowitz & Stegun 22.3, from memory).
        let norm =
            |m: i32, fact: f64| 1.0 / (2f64.powi(m) * fact * std::f64::consts::PI.sqrt()).sqrt();
        for t in [-2.0, -0.3, 0.0, 0.9, 3.1f64] {
            let g = (-t * t / 2.0).exp();
            let h2 = (4.0 * t * t - 2.0) * g * norm(2, 2.0);
            let h3 = (8.0 * t.powi(3) - 12.0 * t) * g * norm(3, 6.0);
            assert!((hermite_function(2, t) - h2).abs() < 1e-14);
            assert!((hermite_function(3, t) - h3).abs() < 1e-14);
        }
    }

    #[test]
    fn orthonormal_by_quadrature() {
        // Orthonormality of Hermite functions (common practice); trapezoid on
        // a fine grid is spectrally accurate for these decaying functions.
        let dt = 0.01;
        let ts: Vec<f64> = (-1500..=1500).map(|i| i as f64 * dt).collect();
        for m in [0usize, 1, 5, 12] {
            for k in [0usize, 1, 5, 12] {
                let s: f64 = ts
                    .iter()
                    .map(|&t| hermite_function(m, t) * hermite_function(k, t))
                    .sum::<f64>()
                    * dt;
                let expected = if m == k { 1.0 } else { 0.0 };
                assert!((s - expected).abs() < 1e-10, "m={m} k={k}: {s}");
            }
        }
    }
}
