//! `report.json`: the machine-readable result of a run.
//!
//! # Format
//! Keys carry their SI unit in the name (`_m`, `_w`, `_w_m2`, `_rad`);
//! optional values are omitted or `null`. These keys are a public
//! interface: new keys may be added, none renamed or removed.
//!
//! * `version` — beamwright version that wrote the report.
//! * `layout` — path of the layout file; `title`.
//! * `wavelength_m`, `power_w` (source power), `grid` `{n, spacing_m}` at the source.
//! * `elements[]` — one per `[[element]]`, in order: `index` (0-based),
//!   `kind`, `name`?, `z_m` (entrance, from the source plane), `power_in_w`,
//!   `power_out_w` (power the element physically passes: for an aperture
//!   `Σ f·|U|²·dx²` with `f` the open fraction of each pixel),
//!   `power_sampled_w` (power of the sampled field after the element),
//!   `power_lost_w` (`power_in_w − power_out_w`: clipped by an aperture, or
//!   removed by the band limit / evanescent cut of a propagation),
//!   `method`/`method_reason` for spaces, `grid_after` `{n, spacing_m}`,
//!   `warnings[]`.
//! * `probes[]` — `name`, `z_m`, `grid`, `power_w`, `power_fraction`
//!   (probe power / source power), `centroid_m [x, y]`, `d4sigma_m [x, y]`
//!   (ISO 11146 with the iterated 3× integration area), `d4sigma_principal_m
//!   [major, minor]`, `azimuth_rad`, `ellipticity` (minor/major), `iso_converged`, `d4sigma_plain_m`
//!   (whole-grid second moments, no integration area), `peak_irradiance_w_m2`,
//!   `peak_location_m`, `axis_irradiance_w_m2`, `encircled_radius_m` `{"0.5", "0.865", "0.95"}` about
//!   the centroid, `ensquared_half_width_m` (same fractions, centred
//!   squares), `encircled_energy` `{x_m: radii, y: fractions}`, `profile`?
//!   `{radial, x_cut, y_cut}` each `{x_m, y: W/m²}` (when `save` has
//!   "profile"), `ring`? `{ring_radius_m, ring_peak_w_m2, centre_w_m2,
//!   null_depth}`, `paraxial`? `{w_m, radius_of_curvature_m, gouy_rad,
//!   predicted_radius_m, width_deviation}`, `strehl`?, `strehl_marechal`?,
//!   `modes`? `[{p|m, l|n, power_fraction, phase_rad}]`, `modes_basis`?
//!   `{basis, waist_m, waist_z_m (absolute), captured_fraction}`, `caustic`?
//!   `{m2 [x, y], waist_d4sigma_m, waist_z_m (absolute), rayleigh_m,
//!   divergence_rad, residual_rms_m}`, `files` `{intensity?, phase?, field?,
//!   profile?, caustic?}`, `warnings[]`.
//! * `warnings[]` — plan-level sampling warnings.
//!
//! Example (abridged):
//! ```json
//! { "version": "0.1.0", "layout": "expander.toml", "wavelength_m": 1.064e-6,
//!   "grid": {"n": 1024, "spacing_m": 1e-5},
//!   "elements": [{"index": 0, "kind": "space", "z_m": 0.0, "power_in_w": 1.0, "power_out_w": 1.0}],
//!   "probes": [{"name": "focus", "z_m": 0.25, "d4sigma_m": [6.7e-5, 6.7e-5]}],
//!   "warnings": [] }
//! ```

use std::collections::BTreeMap;

use serde::Serialize;

/// `{n, spacing_m}`.
#[derive(Debug, Clone, Copy, Serialize, PartialEq)]
pub struct GridRecord {
    /// Samples per side.
    pub n: usize,
    /// Spacing, metres.
    pub spacing_m: f64,
}

impl From<crate::Grid> for GridRecord {
    fn from(g: crate::Grid) -> Self {
        GridRecord {
            n: g.n(),
            spacing_m: g.spacing_m(),
        }
    }
}

/// The whole report.
#[derive(Debug, Clone, Serialize)]
pub struct Report {
    /// beamwright version.
    pub version: String,
    /// Layout file path.
    pub layout: String,
    /// Layout title.
    pub title: String,
    /// Vacuum wavelength, metres.
    pub wavelength_m: f64,
    /// Source power, watts.
    pub power_w: f64,
    /// Source grid.
    pub grid: GridRecord,
    /// Per element results.
    pub elements: Vec<ElementRecord>,
    /// Per probe results.
    pub probes: Vec<ProbeRecord>,
    /// Plan-level warnings.
    pub warnings: Vec<String>,
}

/// One element's bookkeeping.
#[derive(Debug, Clone, Serialize)]
pub struct ElementRecord {
    /// 0-based position in the layout.
    pub index: usize,
    /// Element kind.
    pub kind: String,
    /// Name, if given.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    /// Entrance position from the source plane, metres.
    pub z_m: f64,
    /// Power arriving, watts.
    pub power_in_w: f64,
    /// Power physically passed on, watts.
    pub power_out_w: f64,
    /// Power of the sampled field after the element, watts.
    pub power_sampled_w: f64,
    /// `power_in_w − power_out_w`, watts.
    pub power_lost_w: f64,
    /// Propagation method (spaces only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub method: Option<String>,
    /// Why that method.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub method_reason: Option<String>,
    /// Grid after the element.
    pub grid_after: GridRecord,
    /// Warnings raised while applying it.
    pub warnings: Vec<String>,
}

/// A sampled curve `y(x)`.
#[derive(Debug, Clone, Serialize)]
pub struct CurveRecord {
    /// Abscissa (radius, half-width or coordinate), metres.
    pub x_m: Vec<f64>,
    /// Ordinate: a fraction, or irradiance in W/m² (see the key).
    pub y: Vec<f64>,
}

/// Irradiance profiles through the centroid, W/m².
#[derive(Debug, Clone, Serialize)]
pub struct ProfileRecord {
    /// Azimuthal average versus radius (one-pixel annuli).
    pub radial: CurveRecord,
    /// Cut along x through the centroid's row.
    pub x_cut: CurveRecord,
    /// Cut along y through the centroid's column.
    pub y_cut: CurveRecord,
}

/// Paraxial prediction at a probe.
#[derive(Debug, Clone, Serialize)]
pub struct ParaxialRecord {
    /// Embedded Gaussian 1/e² radius, metres.
    pub w_m: f64,
    /// Radius of curvature, metres (null at a waist).
    pub radius_of_curvature_m: Option<f64>,
    /// Accumulated Gouy phase of the fundamental, radians.
    pub gouy_rad: f64,
    /// Predicted second-moment radius `w·sqrt(M²)`, metres.
    pub predicted_radius_m: f64,
    /// Simulated ISO second-moment radius over the prediction, minus 1.
    pub width_deviation: f64,
}

/// Ring (donut) metrics.
#[derive(Debug, Clone, Serialize)]
pub struct RingRecord {
    /// Radius of the azimuthally averaged maximum, metres.
    pub ring_radius_m: f64,
    /// Azimuthally averaged irradiance at the ring, W/m².
    pub ring_peak_w_m2: f64,
    /// Irradiance at the centre, W/m².
    pub centre_w_m2: f64,
    /// `centre_w_m2 / ring_peak_w_m2`.
    pub null_depth: f64,
}

/// One modal coefficient.
#[derive(Debug, Clone, Serialize)]
pub struct ModeRecord {
    /// LG radial index.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub p: Option<usize>,
    /// LG azimuthal index.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub l: Option<i32>,
    /// HG x order.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub m: Option<usize>,
    /// HG y order.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub n: Option<usize>,
    /// `|c|²/P`.
    pub power_fraction: f64,
    /// `arg c`, radians.
    pub phase_rad: f64,
}

/// The basis used for a decomposition.
#[derive(Debug, Clone, Serialize)]
pub struct BasisRecord {
    /// "laguerre-gauss" or "hermite-gauss".
    pub basis: String,
    /// Basis waist, metres.
    pub waist_m: f64,
    /// Absolute z of the basis waist from the source plane, metres.
    pub waist_z_m: f64,
    /// Fraction of the probe power captured by the truncated basis.
    pub captured_fraction: f64,
    /// How the waist was chosen ("layout" or the best-fit rule).
    pub rule: String,
}

/// Caustic fit per axis `[x, y]`.
#[derive(Debug, Clone, Serialize)]
pub struct CausticRecord {
    /// Beam quality factors.
    pub m2: [f64; 2],
    /// Waist D4σ diameters, metres.
    pub waist_d4sigma_m: [f64; 2],
    /// Absolute waist positions from the source plane, metres.
    pub waist_z_m: [f64; 2],
    /// Rayleigh lengths, metres.
    pub rayleigh_m: [f64; 2],
    /// Far-field divergence (full angle of the D4σ diameter), radians.
    pub divergence_rad: [f64; 2],
    /// RMS residual of the diameter fit, metres.
    pub residual_rms_m: [f64; 2],
    /// Planes used: absolute z, metres.
    pub z_m: Vec<f64>,
    /// D4σ diameters at the planes, metres.
    pub d4sigma_m: Vec<[f64; 2]>,
}

/// Everything measured at one probe.
#[derive(Debug, Clone, Serialize)]
pub struct ProbeRecord {
    /// Probe name.
    pub name: String,
    /// Position from the source plane, metres.
    pub z_m: f64,
    /// Grid at the probe.
    pub grid: GridRecord,
    /// Power at the probe, watts.
    pub power_w: f64,
    /// Probe power / source power.
    pub power_fraction: f64,
    /// ISO 11146 centroid `[x, y]`, metres.
    pub centroid_m: [f64; 2],
    /// ISO 11146 D4σ diameters `[x, y]` (iterated 3× area), metres.
    pub d4sigma_m: [f64; 2],
    /// Principal D4σ diameters `[major, minor]`, metres.
    pub d4sigma_principal_m: [f64; 2],
    /// Azimuth of the major axis from +x, radians (not meaningful for a
    /// round beam: see `ellipticity`).
    pub azimuth_rad: f64,
    /// Minor over major principal D4σ diameter; ISO 11146 calls a beam
    /// round when this is at least 0.87.
    pub ellipticity: f64,
    /// Whether the ISO integration-area iteration converged.
    pub iso_converged: bool,
    /// Whole-grid (unwindowed) D4σ `[x, y]`, metres.
    pub d4sigma_plain_m: [f64; 2],
    /// Peak irradiance, W/m².
    pub peak_irradiance_w_m2: f64,
    /// Location of the peak `[x, y]`, metres.
    pub peak_location_m: [f64; 2],
    /// Irradiance on the optical axis (grid centre), W/m².
    pub axis_irradiance_w_m2: f64,
    /// Radii about the centroid holding 50 %, 86.5 % and 95 % of the power.
    pub encircled_radius_m: BTreeMap<String, f64>,
    /// Half-widths of centroid-centred squares holding 50 %, 86.5 % and 95 %.
    pub ensquared_half_width_m: BTreeMap<String, f64>,
    /// Encircled-energy curve about the centroid.
    pub encircled_energy: CurveRecord,
    /// Radial profile and x/y cuts (when the probe saves "profile").
    #[serde(skip_serializing_if = "Option::is_none")]
    pub profile: Option<ProfileRecord>,
    /// Ring metrics for ring-shaped beams.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ring: Option<RingRecord>,
    /// Paraxial prediction (null when the source has no embedded Gaussian:
    /// flat-top and sampled sources).
    pub paraxial: Option<ParaxialRecord>,
    /// Strehl ratio against the path without aberrations.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub strehl: Option<f64>,
    /// Maréchal estimate `exp(−(2πσ)²)`, σ the RMS wavefront error (waves) of the
    /// aberrations upstream, each weighted by the beam amplitude where it acts.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub strehl_marechal: Option<f64>,
    /// Modal coefficients.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub modes: Option<Vec<ModeRecord>>,
    /// The basis used.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub modes_basis: Option<BasisRecord>,
    /// Caustic fit.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub caustic: Option<CausticRecord>,
    /// Files written, relative to the output directory.
    pub files: BTreeMap<String, String>,
    /// Warnings for this probe.
    pub warnings: Vec<String>,
}
