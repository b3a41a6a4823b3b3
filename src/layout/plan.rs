//! The validated plan: SI values, engine objects, the grid at every element
//! and the method chosen for every free-space step.
//!
//! Conventions: `z_m` is measured along the axis from the source plane;
//! element indices are 0-based positions in the layout's `[[element]]`
//! list; grids change only at single-FFT Fresnel steps.

use std::path::PathBuf;

use ndarray::Array2;
use num_complex::Complex64;

use crate::beams::{GaussianBeam, Mode, Superposition};
use crate::error::Result;
use crate::field::Field;
use crate::grid::Grid;
use crate::measure::{Basis, CausticOptions};
use crate::optics::{Aberration, Aperture, Mask, ThinLens, Tilt, Vortex};
use crate::propagate::Method;

/// A validated layout, ready to run.
#[derive(Debug, Clone)]
pub struct Plan {
    /// The layout file.
    pub path: PathBuf,
    /// Title from the layout (or the file name).
    pub title: String,
    /// Vacuum wavelength, metres.
    pub wavelength_m: f64,
    /// Source power, watts.
    pub power_w: f64,
    /// Grid at the source plane.
    pub grid: Grid,
    /// Line of `grid.n` in the layout, for messages.
    pub grid_line: Option<usize>,
    /// The source field.
    pub source: Source,
    /// The elements in order.
    pub steps: Vec<Step>,
    /// Sampling warnings found while planning.
    pub warnings: Vec<String>,
    /// Every input file (NPY, PNG) the layout names, as resolved paths.
    pub inputs: Vec<PathBuf>,
}

/// The field at the source plane.
#[derive(Debug, Clone)]
pub enum Source {
    /// A single HG or LG mode (the Gaussian is HG_00).
    Mode {
        /// The mode.
        mode: Mode,
        /// z of its waist relative to the source plane, metres.
        waist_at_m: f64,
    },
    /// A coherent sum of modes sharing one waist.
    Superposition {
        /// The terms.
        modes: Superposition,
        /// The shared embedded Gaussian.
        beam: GaussianBeam,
        /// z of the waist relative to the source plane, metres.
        waist_at_m: f64,
    },
    /// A uniformly lit disc with area-weighted edge, flat phase.
    FlatTop {
        /// Disc radius, metres.
        radius_m: f64,
    },
    /// A sampled field read from a file (complex NPY, or the square root of
    /// a PNG intensity with flat phase).
    Sampled {
        /// Where it came from.
        what: String,
        /// The samples, `(n, n)`.
        values: Array2<Complex64>,
    },
}

impl Source {
    /// Samples the source on `grid` carrying `power_w`.
    ///
    /// Closed-form sources (modes and superpositions) carry `power_w` in
    /// their analytic normalisation, so a window too small for the beam
    /// shows up as missing power rather than being rescaled into a too-high
    /// irradiance (the field's power over `power_w` is the fraction the
    /// grid holds). Sampled sources (flat-top, files) are normalised on the
    /// grid ([`Source::is_normalised_on_grid`]).
    ///
    /// # Errors
    /// [`crate::Error::Physics`] if the source has no power on the grid.
    pub fn field(&self, grid: Grid, wavelength_m: f64, power_w: f64) -> Result<Field> {
        let field = match self {
            Source::Mode { mode, waist_at_m } => mode.sample(grid, -waist_at_m, power_w)?,
            Source::Superposition {
                modes, waist_at_m, ..
            } => {
                let scale = (power_w / superposition_power(modes)).sqrt();
                let mut field = modes.sample_unnormalised(grid, -waist_at_m)?;
                field.values.mapv_inplace(|v| v * scale);
                field
            }
            Source::FlatTop { radius_m } => {
                let disc = Aperture::new(crate::optics::ApertureShape::Circle {
                    radius_m: *radius_m,
                })?;
                let dx = grid.spacing_m();
                let mut field = Field::from_fn(grid, wavelength_m, |x, y| {
                    Complex64::new(disc.pixel_transmission(x, y, dx), 0.0)
                })?;
                field.normalise_to(power_w)?;
                field
            }
            Source::Sampled { values, .. } => {
                let mut field = Field::from_values(grid, wavelength_m, values.clone())?;
                field.normalise_to(power_w)?;
                field
            }
        };
        let power = field.power_w();
        if power.is_nan() || power <= 0.0 {
            return Err(crate::Error::Physics(
                "the source has no power on the grid: is the window far from the beam?".into(),
            ));
        }
        Ok(field)
    }

    /// True for sources normalised on the grid (flat-top and sampled
    /// files); closed-form sources carry their power analytically, so a
    /// too-small window shows as missing power.
    pub fn is_normalised_on_grid(&self) -> bool {
        matches!(self, Source::FlatTop { .. } | Source::Sampled { .. })
    }

    /// The embedded Gaussian and its waist position, for the paraxial check
    /// (None for sources without one).
    pub fn embedded_gaussian(&self) -> Option<(GaussianBeam, f64)> {
        match self {
            Source::Mode { mode, waist_at_m } => Some((mode.beam, *waist_at_m)),
            Source::Superposition {
                beam, waist_at_m, ..
            } => Some((*beam, *waist_at_m)),
            _ => None,
        }
    }

    /// `[Mx², My²]` of the source when known in closed form.
    pub fn m2(&self) -> Option<[f64; 2]> {
        match self {
            Source::Mode { mode, .. } => Some(mode.shape.m2()),
            _ => None,
        }
    }
}

/// One element of the plan.
#[derive(Debug, Clone)]
pub struct Step {
    /// 0-based position in the layout.
    pub index: usize,
    /// Optional name from the layout (probes always have one).
    pub name: Option<String>,
    /// Line of the `[[element]]` header in the layout, if known.
    pub line: Option<usize>,
    /// Axial position of the element's entrance, metres from the source.
    pub z_m: f64,
    /// Grid entering the element.
    pub grid_before: Grid,
    /// Grid leaving the element.
    pub grid_after: Grid,
    /// What the element does.
    pub op: Operation,
}

impl Step {
    /// Kind name as used in layouts and reports.
    pub fn kind(&self) -> &'static str {
        self.op.kind()
    }
    /// Axial length of the element (non-zero only for spaces), metres.
    pub fn length_m(&self) -> f64 {
        match self.op {
            Operation::Space { length_m, .. } => length_m,
            _ => 0.0,
        }
    }
}

/// What an element does to the field.
#[derive(Debug, Clone)]
pub enum Operation {
    /// Free-space propagation.
    Space {
        /// Signed length, metres.
        length_m: f64,
        /// Method actually used (never `Auto`).
        method: Method,
        /// Why, in words.
        reason: String,
        /// A paraxial lens immediately before, merged into this step's
        /// Fresnel chirp (focal length, metres).
        merged_lens_m: Option<f64>,
    },
    /// Aperture or obscuration.
    Aperture(Aperture),
    /// Thin lens; `merged` when its phase is applied inside the next
    /// Fresnel step instead of on the grid.
    Lens {
        /// The lens.
        lens: ThinLens,
        /// True when the next step applies this lens analytically.
        merged: bool,
    },
    /// Zernike phase screen.
    Aberration(Aberration),
    /// Spiral phase plate.
    Vortex(Vortex),
    /// Wavefront tilt.
    Tilt(Tilt),
    /// Sampled mask.
    Mask(Mask),
    /// A plane where results are kept.
    Probe(ProbeSpec),
}

impl Operation {
    /// Kind name as used in layouts and reports.
    pub fn kind(&self) -> &'static str {
        match self {
            Operation::Space { .. } => "space",
            Operation::Aperture(_) => "aperture",
            Operation::Lens { .. } => "lens",
            Operation::Aberration(_) => "aberration",
            Operation::Vortex(_) => "vortex",
            Operation::Tilt(_) => "tilt",
            Operation::Mask(_) => "mask",
            Operation::Probe(_) => "probe",
        }
    }
    /// True for elements removed in a Strehl reference run: aberrations and
    /// phase or complex masks (apertures, lenses, vortices and tilts stay).
    pub fn is_aberration(&self) -> bool {
        match self {
            Operation::Aberration(_) => true,
            Operation::Mask(m) => m.kind != crate::optics::MaskKind::Amplitude,
            _ => false,
        }
    }
}

/// What to do at a probe.
#[derive(Debug, Clone, PartialEq)]
pub struct ProbeSpec {
    /// Name, unique in the layout; used for file names.
    pub name: String,
    /// Write an intensity PNG.
    pub save_intensity: bool,
    /// Write a phase PNG.
    pub save_phase: bool,
    /// Write the complex field as NPY.
    pub save_field: bool,
    /// Write a radial-profile plot (and put the profiles in the report).
    pub save_profile: bool,
    /// Write an irradiance PNG on a logarithmic scale (4 decades).
    pub save_intensity_log: bool,
    /// Modal decomposition.
    pub modes: Option<ModesSpec>,
    /// Through-focus scan and M² fit.
    pub caustic: Option<CausticOptions>,
    /// Compare with the same path minus aberrations.
    pub strehl: bool,
}

/// Modal decomposition settings of a probe.
#[derive(Debug, Clone, PartialEq)]
pub struct ModesSpec {
    /// HG or LG.
    pub basis: Basis,
    /// Maximum mode order.
    pub order: usize,
    /// Basis waist, metres (None: best fit).
    pub waist_m: Option<f64>,
    /// Absolute z of the basis waist from the source plane (None: best fit).
    pub waist_at_m: Option<f64>,
}

/// Analytic power of a superposition of unit-power modes sharing one
/// waist: the modes are orthonormal, so it is `Σ_shape |Σ weights|²`
/// (repeated shapes add coherently).
fn superposition_power(modes: &Superposition) -> f64 {
    let mut by_shape: Vec<(crate::beams::ModeShape, Complex64)> = Vec::new();
    for (mode, w) in &modes.terms {
        match by_shape.iter_mut().find(|(s, _)| *s == mode.shape) {
            Some((_, total)) => *total += w,
            None => by_shape.push((mode.shape, *w)),
        }
    }
    by_shape.iter().map(|(_, w)| w.norm_sqr()).sum()
}
