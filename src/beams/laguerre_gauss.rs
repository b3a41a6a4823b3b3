//! Normalised radial factors of Laguerre-Gauss modes.

/// `sqrt(p!/(p+a)!)·t^(a/2)·L_p^a(t)·exp(−t/2)` for `t ≥ 0`, by the
/// recurrence for the normalised functions (common practice; no overflow
/// at high order). With `t = 2r²/w²`, the unit-power mode is
/// `sqrt(2/π)/w · laguerre_radial(p, |l|, t)·exp(ilφ)`. No `(−1)^p` factor.
///
/// ```
/// use beamwright::beams::laguerre_radial;
/// // p = 1: L_1^a(t) = 1 + a − t
/// let (a, t) = (2usize, 0.8f64);
/// let expected = (1.0f64 / 6.0).sqrt() * t * (3.0 - t) * (-t / 2.0).exp();
/// assert!((laguerre_radial(1, a, t) - expected).abs() < 1e-15);
/// ```
pub fn laguerre_radial(p: usize, a: usize, t: f64) -> f64 {
    let af = a as f64;
    // g_0 = t^(a/2)·e^(−t/2)/sqrt(a!), in logarithms to avoid overflow.
    let mut cur = if a == 0 {
        (-t / 2.0).exp()
    } else if t <= 0.0 {
        0.0
    } else {
        (0.5 * af * t.ln() - t / 2.0 - 0.5 * ln_factorial(a)).exp()
    };
    let mut prev = 0.0;
    for k in 0..p {
        let kf = k as f64;
        let next = ((2.0 * kf + 1.0 + af - t) * cur - (kf * (kf + af)).sqrt() * prev)
            / ((kf + 1.0) * (kf + 1.0 + af)).sqrt();
        prev = cur;
        cur = next;
    }
    cur
}

/// `ln(n!)` by summation (exact enough for the orders used here).
pub(crate) fn ln_factorial(n: usize) -> f64 {
    (2..=n).map(|k| (k as f64).ln()).sum()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn matches_explicit_polynomial_p2() {
        // L_2^a(t) = (a+1)(a+2)/2 − (a+2)t + t²/2 (Abramowitz & Stegun 22.3, from memory).
        for a in [0usize, 1, 3] {
            for t in [0.1, 1.0, 2.5f64] {
                let af = a as f64;
                let l2 = (af + 1.0) * (af + 2.0) / 2.0 - (af + 2.0) * t + t * t / 2.0;
                let fact = (1..=a + 2).map(|k| k as f64).product::<f64>();
                let expected = (2.0 / fact).sqrt() * t.powf(af / 2.0) * l2 * (-t / 2.0).exp();
                assert!(
                    (laguerre_radial(2, a, t) - expected).abs() < 1e-14,
                    "a={a} t={t}"
                );
            }
        }
    }
}
