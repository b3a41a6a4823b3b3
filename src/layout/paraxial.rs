//! The paraxial check: the embedded Gaussian's q parameter carried through
//! the plan's spaces and lenses with the ABCD rule (Kogelnik & Li 1966;
//! Siegman ch. 15, 20; from memory).
//!
//! Conventions: `q = (z − z_waist) − i·zR`; only spaces and lenses act
//! (apertures, aberrations, vortices, tilts and masks are what the
//! simulation adds beyond the paraxial design). The Gouy phase of the
//! fundamental is accumulated segment by segment,
//! `Δψ = atan((z_b − z_w)/zR) − atan((z_a − z_w)/zR)`, so it unwraps past π.
//! Widths predicted for HG/LG sources are the embedded Gaussian's `w`
//! times `sqrt(M²)` (PHYSICS.md §2).

use num_complex::Complex64;

use super::plan::{Operation, Plan};
use crate::beams::{radius_from_q, Abcd};

/// The predicted beam after one element.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ParaxialPoint {
    /// Complex beam parameter of the embedded Gaussian, metres.
    pub q: Complex64,
    /// Embedded Gaussian 1/e² radius `w`, metres.
    pub w_m: f64,
    /// Wavefront radius of curvature, metres (infinite at a waist; positive diverging).
    pub radius_of_curvature_m: f64,
    /// Accumulated Gouy phase of the fundamental since the source, radians.
    pub gouy_rad: f64,
}

impl ParaxialPoint {
    fn at(q: Complex64, wavelength_m: f64, gouy_rad: f64) -> Self {
        let inv = 1.0 / q;
        ParaxialPoint {
            q,
            w_m: radius_from_q(q, wavelength_m),
            radius_of_curvature_m: 1.0 / inv.re,
            gouy_rad,
        }
    }
}

/// Paraxial prediction at the source and after every step; `None` when the
/// source has no embedded Gaussian (flat-top, sampled files).
pub fn trace(plan: &Plan) -> Option<(ParaxialPoint, Vec<ParaxialPoint>)> {
    let (beam, waist_at_m) = plan.source.embedded_gaussian()?;
    let lambda = plan.wavelength_m;
    let mut q = beam.q_at(-waist_at_m);
    let mut gouy = 0.0;
    let source = ParaxialPoint::at(q, lambda, gouy);
    let mut points = Vec::with_capacity(plan.steps.len());
    for step in &plan.steps {
        match &step.op {
            Operation::Space { length_m, .. } => {
                let z_r = -q.im;
                gouy += ((q.re + length_m) / z_r).atan() - (q.re / z_r).atan();
                q = Abcd::space(*length_m).apply(q);
            }
            Operation::Lens { lens, .. } => q = Abcd::lens(lens.focal_length_m).apply(q),
            _ => {}
        }
        points.push(ParaxialPoint::at(q, lambda, gouy));
    }
    Some((source, points))
}
