//! The fundamental Gaussian beam, its q parameter and the ABCD rule.

use num_complex::Complex64;

use crate::error::{Error, Result};

/// A fundamental Gaussian beam of waist `w0` in a medium of index 1.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GaussianBeam {
    wavelength_m: f64,
    waist_m: f64,
}

impl GaussianBeam {
    /// A beam of vacuum wavelength `wavelength_m` and 1/e² waist radius `waist_m`.
    ///
    /// # Errors
    /// [`Error::OutOfRange`] for non-positive or non-finite values.
    pub fn new(wavelength_m: f64, waist_m: f64) -> Result<Self> {
        for (what, v) in [("wavelength", wavelength_m), ("waist", waist_m)] {
            if !(v.is_finite() && v > 0.0) {
                return Err(Error::out_of_range(
                    what,
                    format!("{v} m"),
                    "expected a positive, finite length",
                ));
            }
        }
        Ok(GaussianBeam {
            wavelength_m,
            waist_m,
        })
    }
    /// The beam with the waist that gives complex parameter `q` (`Im q < 0`).
    ///
    /// # Errors
    /// [`Error::Physics`] if `q` does not describe a beam.
    pub fn from_q(wavelength_m: f64, q: Complex64) -> Result<(Self, f64)> {
        let z_r = -q.im;
        if !(z_r > 0.0 && z_r.is_finite()) {
            return Err(Error::Physics(format!(
                "q = {q} has no real waist (Im q must be negative)"
            )));
        }
        let waist = (z_r * wavelength_m / std::f64::consts::PI).sqrt();
        Ok((GaussianBeam::new(wavelength_m, waist)?, q.re))
    }
    /// Vacuum wavelength, metres.
    pub fn wavelength_m(&self) -> f64 {
        self.wavelength_m
    }
    /// Waist radius `w0`, metres.
    pub fn waist_m(&self) -> f64 {
        self.waist_m
    }
    /// Rayleigh range `π·w0²/λ`, metres.
    pub fn rayleigh_m(&self) -> f64 {
        std::f64::consts::PI * self.waist_m * self.waist_m / self.wavelength_m
    }
    /// Far-field half-angle divergence `λ/(π·w0)`, radians.
    pub fn divergence_rad(&self) -> f64 {
        self.wavelength_m / (std::f64::consts::PI * self.waist_m)
    }
    /// 1/e² radius `w(z)` at distance `z_m` from the waist.
    pub fn radius_at(&self, z_m: f64) -> f64 {
        self.waist_m * (1.0 + (z_m / self.rayleigh_m()).powi(2)).sqrt()
    }
    /// Wavefront curvature `1/R(z) = z/(z² + zR²)`, 1/m (0 at the waist).
    pub fn curvature_at(&self, z_m: f64) -> f64 {
        let zr = self.rayleigh_m();
        z_m / (z_m * z_m + zr * zr)
    }
    /// Radius of curvature `R(z)`, metres (infinite at the waist).
    pub fn radius_of_curvature_at(&self, z_m: f64) -> f64 {
        1.0 / self.curvature_at(z_m)
    }
    /// Gouy phase `atan(z/zR)` of the fundamental, radians.
    pub fn gouy_at(&self, z_m: f64) -> f64 {
        (z_m / self.rayleigh_m()).atan()
    }
    /// Complex beam parameter `q = z − i·zR`.
    pub fn q_at(&self, z_m: f64) -> Complex64 {
        Complex64::new(z_m, -self.rayleigh_m())
    }
}

/// 1/e² radius from a complex beam parameter: `w² = λ/(π·Im(1/q))`.
pub fn radius_from_q(q: Complex64, wavelength_m: f64) -> f64 {
    (wavelength_m / (std::f64::consts::PI * (1.0 / q).im)).sqrt()
}

/// A ray-transfer (ABCD) matrix (Kogelnik & Li 1966, from memory).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Abcd {
    /// A element.
    pub a: f64,
    /// B element, metres.
    pub b: f64,
    /// C element, 1/m.
    pub c: f64,
    /// D element.
    pub d: f64,
}

impl Abcd {
    /// The identity.
    pub fn identity() -> Self {
        Abcd {
            a: 1.0,
            b: 0.0,
            c: 0.0,
            d: 1.0,
        }
    }
    /// Free space of length `d_m`.
    pub fn space(d_m: f64) -> Self {
        Abcd {
            a: 1.0,
            b: d_m,
            c: 0.0,
            d: 1.0,
        }
    }
    /// Thin lens of focal length `f_m` (positive converging).
    pub fn lens(f_m: f64) -> Self {
        Abcd {
            a: 1.0,
            b: 0.0,
            c: -1.0 / f_m,
            d: 1.0,
        }
    }
    /// `self` followed by `next` (matrix product `next·self`).
    pub fn then(self, next: Abcd) -> Abcd {
        Abcd {
            a: next.a * self.a + next.b * self.c,
            b: next.a * self.b + next.b * self.d,
            c: next.c * self.a + next.d * self.c,
            d: next.c * self.b + next.d * self.d,
        }
    }
    /// The ABCD rule `q2 = (A·q1 + B)/(C·q1 + D)`.
    pub fn apply(&self, q: Complex64) -> Complex64 {
        (q * self.a + self.b) / (q * self.c + self.d)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn rayleigh_range_and_divergence() {
        // PHYSICS.md §7 divergence row: 1064 nm, w0 = 1 mm → zR = 2.95262 m,
        // θ = 0.338682 mrad (Siegman, from memory); 6 digits quoted.
        let b = GaussianBeam::new(1064e-9, 1e-3).unwrap();
        assert_relative_eq!(b.rayleigh_m(), 2.95262, max_relative = 2e-6);
        assert_relative_eq!(b.divergence_rad(), 0.338682e-3, max_relative = 2e-6);
        // At z = zR: w = √2·w0, R = 2zR, ψ = π/4 (Siegman ch. 17, from memory).
        let zr = b.rayleigh_m();
        assert_relative_eq!(b.radius_at(zr), 2f64.sqrt() * 1e-3, max_relative = 1e-14);
        assert_relative_eq!(b.radius_of_curvature_at(zr), 2.0 * zr, max_relative = 1e-14);
        assert_relative_eq!(
            b.gouy_at(zr),
            std::f64::consts::FRAC_PI_4,
            max_relative = 1e-14
        );
    }

    #[test]
    fn self_focusing_example() {
        // Self 1983 (from memory), worked example in PHYSICS.md §2:
        // 1064 nm, w0 = 1 mm at the lens, f = 100 mm → w0'' = 33.8488 µm at
        // s'' = 99.88543 mm. The ABCD rule reproduces it to the quoted digits.
        let b = GaussianBeam::new(1064e-9, 1e-3).unwrap();
        let q = Abcd::lens(0.1).apply(b.q_at(0.0));
        let (focus, z_from_waist) = GaussianBeam::from_q(1064e-9, q).unwrap();
        assert_relative_eq!(focus.waist_m(), 33.8488e-6, max_relative = 3e-6);
        assert_relative_eq!(-z_from_waist, 99.88543e-3, max_relative = 1e-7);
        assert_relative_eq!(
            radius_from_q(b.q_at(0.3), 1064e-9),
            b.radius_at(0.3),
            max_relative = 1e-12
        );
    }
}
