//! Irradiance and phase images of a field, as PNG files a lab can put in a
//! report.
//!
//! Conventions:
//! - **Orientation: +x is to the right and +y is up.** The field's row 0
//!   (most negative y) is drawn at the *bottom* of the picture, unlike a
//!   plain dump of the array, which would put it at the top. With z pointing
//!   out of the page the frame is right-handed: the beam comes towards the
//!   viewer. Angles φ = atan2(y, x) run anticlockwise on the page, so vortex
//!   handedness and sin-type Zernike terms appear as the formulas say, not
//!   mirrored.
//! - **Axes** are physical coordinates `x = (ix − n/2)·dx`, `y = (iy − n/2)·dx`
//!   in mm (views 1 mm wide or more) or µm (smaller views). A scale bar in
//!   the lower left repeats the scale.
//! - **View**: [`auto_window`] picks a square about the beam (see there);
//!   the intensity and the phase image of one field use the same view. The
//!   view's width is printed under the title. Samples are box-averaged when
//!   several fall in one pixel and bilinearly interpolated when a pixel is
//!   smaller than a sample; the fixed image size is 800 × 700 pixels.
//! - **Irradiance** `|U|²` uses the sequential [`Colormap::Viridis`] on a
//!   linear scale from 0 to the peak; the colour bar is in W/cm² with an SI
//!   prefix. The title block also gives the peak and the share of the power
//!   inside the view.
//! - **Phase** `arg U` in `(−π, π]` uses the cyclic [`Colormap::PhaseWheel`];
//!   the colour bar is in rad. Phase is relative to the on-axis carrier
//!   `exp(ikz)` (the stored field). Where the irradiance is below
//!   [`PHASE_MASK_FRACTION`] of its peak the phase is meaningless and is
//!   drawn in light grey.

use std::ops::{AddAssign, Mul};
use std::path::Path;

use ndarray::Array2;
use num_complex::Complex64;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::colormap::Colormap;
use super::figure::{
    draw_error, encode_png, ensure_font, format_length, format_sig, format_tick, irradiance_unit,
    length_unit, nice_step, refuse_non_finite, ticks, Unit, FONT,
};
use crate::error::{Error, Result};
use crate::field::Field;
use crate::grid::Grid;

/// Image width in pixels.
pub const IMAGE_WIDTH: u32 = 800;
/// Image height in pixels.
pub const IMAGE_HEIGHT: u32 = 700;
/// Phase is drawn only where the irradiance is at least this fraction of the
/// peak irradiance; elsewhere the pixel is light grey.
pub const PHASE_MASK_FRACTION: f64 = 1e-3;
/// View half-width as a multiple of the 95 %-power radius (see [`auto_window`]).
pub const VIEW_FACTOR: f64 = 1.6;
/// Smallest view, in samples across (unless the grid itself is smaller).
pub const MIN_VIEW_SAMPLES: usize = 64;

const PLOT_SIZE: i32 = 540;
const PLOT_LEFT: i32 = 88;
const PLOT_TOP: i32 = 84;
const BAR_LEFT: i32 = PLOT_LEFT + PLOT_SIZE + 26;
const BAR_WIDTH: i32 = 26;
const MASK_GREY: RGBColor = RGBColor(222, 222, 222);
const FRAME: RGBColor = RGBColor(40, 40, 40);

/// The square region of the grid shown in an image, in metres.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ImageWindow {
    /// Centre `(x, y)` of the view, metres.
    pub centre_m: [f64; 2],
    /// Half of the view's side, metres.
    pub half_width_m: f64,
}

impl ImageWindow {
    /// The whole grid: every sample, each drawn as a `dx × dx` cell.
    pub fn full(grid: Grid) -> Self {
        let (lo, hi) = grid_extent(grid);
        ImageWindow {
            centre_m: [0.5 * (lo + hi); 2],
            half_width_m: 0.5 * (hi - lo),
        }
    }
    /// Side of the view, metres.
    pub fn width_m(&self) -> f64 {
        2.0 * self.half_width_m
    }
}

/// Extent covered by the samples' cells: `[x_0 − dx/2, x_{n−1} + dx/2]`.
fn grid_extent(grid: Grid) -> (f64, f64) {
    let dx = grid.spacing_m();
    (grid.x_m(0) - 0.5 * dx, grid.x_m(grid.n() - 1) + 0.5 * dx)
}

/// Chooses the view for a field's images.
///
/// - The half-width is [`VIEW_FACTOR`] times the radius (about the power
///   centroid) that holds 95 % of the power, rounded up to 1, 1.2, 1.5, 2,
///   2.5, 3, 4, 5, 6 or 8 × 10^k metres so the axis ends on a round number.
///   For a Gaussian of radius w this shows ±2 w to ±2.4 w; for an Airy
///   pattern four to five rings; for a flat-top of radius a about ±1.6 a.
/// - It is at least [`MIN_VIEW_SAMPLES`]/2 samples and at most the grid.
/// - The view is centred on the optical axis when the centroid lies within a
///   quarter of the half-width of it, and on the centroid otherwise; it is
///   then shifted as needed to stay inside the grid.
/// - A field with no power (or non-finite samples) gets the whole grid.
pub fn auto_window(field: &Field) -> ImageWindow {
    let grid = field.grid();
    let full = ImageWindow::full(grid);
    let dx = grid.spacing_m();
    let n = grid.n();
    let xs = grid.coords_m();
    let mut total = 0.0;
    let (mut sx, mut sy) = (0.0, 0.0);
    for ((iy, ix), v) in field.values.indexed_iter() {
        let i = v.norm_sqr();
        total += i;
        sx += i * xs[ix];
        sy += i * xs[iy];
    }
    if !(total.is_finite() && total > 0.0) {
        return full;
    }
    let (cx, cy) = (sx / total, sy / total);
    // Encircled power in bins of dx/4 about the centroid.
    let bin = 0.25 * dx;
    let bins =
        ((std::f64::consts::SQRT_2 * (full.width_m() + cx.abs() + cy.abs())) / bin) as usize + 2;
    let mut hist = vec![0.0; bins];
    for ((iy, ix), v) in field.values.indexed_iter() {
        let r = (xs[ix] - cx).hypot(xs[iy] - cy);
        let k = ((r / bin) as usize).min(bins - 1);
        hist[k] += v.norm_sqr();
    }
    let mut acc = 0.0;
    let mut r95 = full.width_m();
    for (k, h) in hist.iter().enumerate() {
        acc += h;
        if acc >= 0.95 * total {
            r95 = (k + 1) as f64 * bin;
            break;
        }
    }
    let min_half = 0.5 * MIN_VIEW_SAMPLES.min(n) as f64 * dx;
    let half = round_up_nice(VIEW_FACTOR * r95).max(min_half);
    let centre = if cx.hypot(cy) <= 0.25 * half {
        [0.0, 0.0]
    } else {
        [cx, cy]
    };
    clamp_window(
        grid,
        ImageWindow {
            centre_m: centre,
            half_width_m: half,
        },
    )
}

fn round_up_nice(v: f64) -> f64 {
    if !(v.is_finite() && v > 0.0) {
        return v;
    }
    let mag = 10f64.powf(v.log10().floor());
    for m in [1.0, 1.2, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 8.0, 10.0] {
        if m * mag >= v * (1.0 - 1e-12) {
            return m * mag;
        }
    }
    10.0 * mag
}

/// Keeps a window inside the grid: no wider than the grid, shifted inwards.
fn clamp_window(grid: Grid, w: ImageWindow) -> ImageWindow {
    let (lo, hi) = grid_extent(grid);
    if 2.0 * w.half_width_m >= hi - lo {
        return ImageWindow::full(grid);
    }
    let h = w.half_width_m;
    let c = w.centre_m.map(|c| c.clamp(lo + h, hi - h));
    ImageWindow {
        centre_m: c,
        half_width_m: h,
    }
}

/// How irradiance maps to colour.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum IrradianceScale {
    /// Linear from 0 to the peak; colour bar in W/cm² with an SI prefix.
    Linear,
    /// Logarithmic over `decades` decades below the peak (values below are
    /// drawn in the darkest colour); colour bar in units of the peak.
    /// Shows weak structure such as Airy rings or diffraction from edges.
    Logarithmic {
        /// Decades shown below the peak (for example 4: from 10⁻⁴ to 1).
        decades: f64,
    },
}

/// Choices for [`write_intensity_png_with`] and [`write_phase_png_with`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ImageOptions {
    /// The view; `None` lets [`auto_window`] choose.
    pub window: Option<ImageWindow>,
    /// Colour scale for irradiance images (phase images ignore it).
    pub scale: IrradianceScale,
}

impl Default for ImageOptions {
    fn default() -> Self {
        ImageOptions {
            window: None,
            scale: IrradianceScale::Linear,
        }
    }
}

/// Writes an irradiance image of `field` in the view chosen by
/// [`auto_window`]: viridis, colour bar in W/cm², axes in mm or µm, +y up.
///
/// `title` is printed at the top (shrunk to fit); the second line gives the
/// view width, the peak irradiance and the share of power in the view.
///
/// # Errors
/// [`Error::NonFinite`] if the field holds NaN or infinite samples;
/// [`Error::Io`] if the file cannot be written; [`Error::File`] if drawing
/// fails.
pub fn write_intensity_png(path: &Path, field: &Field, title: &str) -> Result<()> {
    write_intensity_png_with(path, field, title, &ImageOptions::default())
}

/// As [`write_intensity_png`] with a chosen view (clamped to the grid) and
/// colour scale.
///
/// # Errors
/// As [`write_intensity_png`], and [`Error::OutOfRange`] for a window whose
/// size or centre is not finite or whose size is not positive, or a
/// logarithmic scale whose number of decades is not positive and finite.
pub fn write_intensity_png_with(
    path: &Path,
    field: &Field,
    title: &str,
    options: &ImageOptions,
) -> Result<()> {
    render(path, field, title, options, Kind::Irradiance)
}

/// Writes a phase image of `field` in the same view as
/// [`write_intensity_png`]: cyclic colour map over `(−π, π]`, colour bar in
/// rad, light grey where the irradiance is below [`PHASE_MASK_FRACTION`] of
/// the peak, +y up.
///
/// # Errors
/// As [`write_intensity_png`].
pub fn write_phase_png(path: &Path, field: &Field, title: &str) -> Result<()> {
    write_phase_png_with(path, field, title, &ImageOptions::default())
}

/// As [`write_phase_png`] with a chosen view (clamped to the grid).
///
/// # Errors
/// As [`write_intensity_png_with`].
pub fn write_phase_png_with(
    path: &Path,
    field: &Field,
    title: &str,
    options: &ImageOptions,
) -> Result<()> {
    render(path, field, title, options, Kind::Phase)
}

#[derive(Clone, Copy, PartialEq)]
enum Kind {
    Irradiance,
    Phase,
}

/// Resampling weights for one output pixel: samples `start..start+w.len()`.
struct Taps {
    start: usize,
    w: Vec<f64>,
}

/// Weights over samples `0..n` for a pixel covering sample-index coordinates
/// `[t_lo, t_hi]`, where sample `j` covers `[j − ½, j + ½]`: the overlap
/// (box average) when the pixel spans a sample or more, linear interpolation
/// at the pixel centre otherwise.
fn make_taps(n: usize, t_lo: f64, t_hi: f64) -> Taps {
    let last = n as f64 - 1.0;
    if t_hi - t_lo >= 1.0 {
        let j0 = (t_lo + 0.5).floor().clamp(0.0, last) as usize;
        let j1 = (t_hi - 0.5).ceil().clamp(0.0, last) as usize;
        let mut w: Vec<f64> = (j0..=j1)
            .map(|j| ((j as f64 + 0.5).min(t_hi) - (j as f64 - 0.5).max(t_lo)).max(0.0))
            .collect();
        let sum: f64 = w.iter().sum();
        if sum > 0.0 {
            w.iter_mut().for_each(|v| *v /= sum);
            return Taps { start: j0, w };
        }
    }
    let tc = (0.5 * (t_lo + t_hi)).clamp(0.0, last);
    let j0 = tc.floor() as usize;
    if j0 + 1 >= n {
        return Taps {
            start: n - 1,
            w: vec![1.0],
        };
    }
    let f = tc - j0 as f64;
    Taps {
        start: j0,
        w: vec![1.0 - f, f],
    }
}

/// Separable resampling of `a` (`[iy, ix]`) to `rows.len() × cols.len()`.
fn resample<T>(a: &Array2<T>, rows: &[Taps], cols: &[Taps]) -> Array2<T>
where
    T: Copy + Default + Mul<f64, Output = T> + AddAssign,
{
    let row0 = rows.iter().map(|t| t.start).min().unwrap_or(0);
    let row1 = rows.iter().map(|t| t.start + t.w.len()).max().unwrap_or(0);
    let mut tmp = Array2::from_elem((row1 - row0, cols.len()), T::default());
    for (r, mut out) in tmp.outer_iter_mut().enumerate() {
        let src = a.row(row0 + r);
        for (o, taps) in out.iter_mut().zip(cols) {
            let mut acc = T::default();
            for (k, w) in taps.w.iter().enumerate() {
                acc += src[taps.start + k] * *w;
            }
            *o = acc;
        }
    }
    let mut out = Array2::from_elem((rows.len(), cols.len()), T::default());
    for (r, taps) in rows.iter().enumerate() {
        for (k, w) in taps.w.iter().enumerate() {
            let src = tmp.row(taps.start + k - row0);
            for (o, s) in out.row_mut(r).iter_mut().zip(src.iter()) {
                *o += *s * *w;
            }
        }
    }
    out
}

fn render(
    path: &Path,
    field: &Field,
    title: &str,
    options: &ImageOptions,
    kind: Kind,
) -> Result<()> {
    if let IrradianceScale::Logarithmic { decades } = options.scale {
        if !(decades.is_finite() && decades > 0.0) {
            return Err(Error::out_of_range(
                "logarithmic image scale",
                format!("{decades} decades"),
                "expected a positive, finite number of decades",
            ));
        }
    }
    let window = options.window.unwrap_or_else(|| auto_window(field));
    if !(window.half_width_m.is_finite()
        && window.half_width_m > 0.0
        && window.centre_m.iter().all(|c| c.is_finite()))
    {
        return Err(Error::out_of_range(
            "image window",
            format!(
                "centre {:?} m, half-width {} m",
                window.centre_m, window.half_width_m
            ),
            "expected a finite centre and a positive, finite half-width",
        ));
    }
    let bad = field
        .values
        .iter()
        .filter(|v| !(v.re.is_finite() && v.im.is_finite()))
        .count();
    refuse_non_finite(bad, || format!("field for image {}", path.display()))?;
    ensure_font(path)?;

    let grid = field.grid();
    let window = clamp_window(grid, window);
    let n = grid.n();
    let dx = grid.spacing_m();
    let h = window.half_width_m;
    let [cx, cy] = window.centre_m;
    let (x0, x1, y0, y1) = (cx - h, cx + h, cy - h, cy + h);
    let pixel_m = 2.0 * h / PLOT_SIZE as f64;
    let to_t = |v: f64| v / dx + (n / 2) as f64;
    let col_taps: Vec<Taps> = (0..PLOT_SIZE)
        .map(|p| {
            make_taps(
                n,
                to_t(x0 + p as f64 * pixel_m),
                to_t(x0 + (p + 1) as f64 * pixel_m),
            )
        })
        .collect();
    // Picture row 0 is the top, i.e. the most positive y.
    let row_taps: Vec<Taps> = (0..PLOT_SIZE)
        .map(|p| {
            make_taps(
                n,
                to_t(y1 - (p + 1) as f64 * pixel_m),
                to_t(y1 - p as f64 * pixel_m),
            )
        })
        .collect();

    let irradiance = field.irradiance();
    let peak = irradiance.iter().cloned().fold(0.0, f64::max);
    let shown = resample(&irradiance, &row_taps, &col_taps);
    let raster: Vec<RGBColor> = match kind {
        Kind::Irradiance => {
            let scale = if peak > 0.0 { 1.0 / peak } else { 0.0 };
            shown
                .iter()
                .map(|i| {
                    let t = match options.scale {
                        IrradianceScale::Linear => i * scale,
                        IrradianceScale::Logarithmic { decades } => {
                            1.0 + (i * scale).max(1e-300).log10() / decades
                        }
                    };
                    let [r, g, b] = Colormap::Viridis.rgb(t);
                    RGBColor(r, g, b)
                })
                .collect()
        }
        Kind::Phase => {
            let u = resample(&field.values, &row_taps, &col_taps);
            let threshold = PHASE_MASK_FRACTION * peak;
            u.iter()
                .zip(shown.iter())
                .map(|(u, i): (&Complex64, &f64)| {
                    if peak <= 0.0 || *i < threshold {
                        MASK_GREY
                    } else {
                        let t = (u.arg() + std::f64::consts::PI) / (2.0 * std::f64::consts::PI);
                        let [r, g, b] = Colormap::PhaseWheel.rgb(t);
                        RGBColor(r, g, b)
                    }
                })
                .collect()
        }
    };

    // Power in the view: samples whose centres lie inside it.
    let total_power = field.power_w();
    let inside = |v: f64, lo: f64, hi: f64| v >= lo && v < hi;
    let xs = grid.coords_m();
    let mut power_in_view = 0.0;
    for ((iy, ix), i) in irradiance.indexed_iter() {
        if inside(xs[ix], x0, x1) && inside(xs[iy], y0, y1) {
            power_in_view += i;
        }
    }
    power_in_view *= grid.cell_area_m2();

    let view_text = format!(
        "{} × {} view",
        format_length(2.0 * h),
        format_length(2.0 * h)
    );
    let subtitle = match kind {
        Kind::Irradiance if peak > 0.0 => {
            let unit = irradiance_unit(peak);
            let scale_text = match options.scale {
                IrradianceScale::Linear => "irradiance",
                IrradianceScale::Logarithmic { .. } => "irradiance, log scale",
            };
            format!(
                "{scale_text} · {view_text} · peak {} {} · {:.1} % of {} W in view",
                format_sig(unit.in_unit(peak)),
                unit.symbol,
                100.0 * power_in_view / total_power,
                format_sig(total_power)
            )
        }
        Kind::Irradiance => format!("irradiance · {view_text} · the field is zero"),
        Kind::Phase => format!("phase relative to the carrier exp(ikz) · {view_text} · grey: irradiance < 10⁻³ of peak"),
    };

    let mut buf = vec![255u8; (IMAGE_WIDTH * IMAGE_HEIGHT * 3) as usize];
    {
        let root =
            BitMapBackend::with_buffer(&mut buf, (IMAGE_WIDTH, IMAGE_HEIGHT)).into_drawing_area();
        let e = |err| draw_error(path, err);
        root.fill(&WHITE).map_err(e)?;
        draw_title(&root, title, &subtitle).map_err(e)?;

        // Raster.
        for (k, colour) in raster.iter().enumerate() {
            let (r, c) = (k as i32 / PLOT_SIZE, k as i32 % PLOT_SIZE);
            root.draw_pixel((PLOT_LEFT + c, PLOT_TOP + r), colour)
                .map_err(e)?;
        }
        root.draw(&Rectangle::new(
            [
                (PLOT_LEFT - 1, PLOT_TOP - 1),
                (PLOT_LEFT + PLOT_SIZE, PLOT_TOP + PLOT_SIZE),
            ],
            FRAME.stroke_width(1),
        ))
        .map_err(e)?;

        // Axes.
        let unit = length_unit(2.0 * h);
        draw_axes(&root, unit, (x0, x1), (y0, y1)).map_err(e)?;
        draw_scale_bar(&root, 2.0 * h).map_err(e)?;

        match kind {
            Kind::Irradiance => match options.scale {
                IrradianceScale::Linear => draw_irradiance_bar(&root, peak).map_err(e)?,
                IrradianceScale::Logarithmic { decades } => {
                    draw_log_bar(&root, decades).map_err(e)?
                }
            },
            Kind::Phase => draw_phase_bar(&root).map_err(e)?,
        }
        root.present().map_err(e)?;
    }
    encode_png(path, IMAGE_WIDTH, IMAGE_HEIGHT, &buf)
}

type Root<'a> = DrawingArea<BitMapBackend<'a>, plotters::coord::Shift>;
type DrawResult<'a> =
    std::result::Result<(), DrawingAreaErrorKind<<BitMapBackend<'a> as DrawingBackend>::ErrorType>>;

/// Title (shrunk to fit the width) and a smaller grey subtitle.
fn draw_title<'a>(root: &Root<'a>, title: &str, subtitle: &str) -> DrawResult<'a> {
    let max_width = IMAGE_WIDTH as i32 - 40;
    draw_fitted(root, title, 22, (20, 14), max_width, &BLACK)?;
    draw_fitted(
        root,
        subtitle,
        15,
        (20, 46),
        max_width,
        &RGBColor(70, 70, 70),
    )
}

/// Draws `text` at `pos` (top-left), reducing the font size down to 10 px and
/// then cutting the text with "…" until it fits in `max_width` pixels.
pub(crate) fn draw_fitted<'a>(
    root: &Root<'a>,
    text: &str,
    size: u32,
    pos: (i32, i32),
    max_width: i32,
    colour: &RGBColor,
) -> DrawResult<'a> {
    let mut size = size;
    let mut text = text.to_string();
    loop {
        let style = TextStyle::from((FONT, size).into_font()).color(colour);
        let (w, _) = root.estimate_text_size(&text, &style)?;
        if w as i32 <= max_width || text.is_empty() {
            return root.draw_text(&text, &style, pos);
        }
        if size > 12 {
            size -= 1;
        } else {
            let mut chars: Vec<char> = text.trim_end_matches('…').chars().collect();
            chars.pop();
            text = chars.into_iter().collect::<String>() + "…";
            if text == "…" {
                return Ok(());
            }
        }
    }
}

fn draw_axes<'a>(
    root: &Root<'a>,
    unit: Unit,
    (x0, x1): (f64, f64),
    (y0, y1): (f64, f64),
) -> DrawResult<'a> {
    let label = TextStyle::from((FONT, 15).into_font()).color(&BLACK);
    let span = unit.in_unit(x1 - x0);
    let step = nice_step(span, 6);
    let px = |v: f64| PLOT_LEFT as f64 + (v - unit.in_unit(x0)) / span * PLOT_SIZE as f64;
    let py =
        |v: f64| (PLOT_TOP + PLOT_SIZE) as f64 - (v - unit.in_unit(y0)) / span * PLOT_SIZE as f64;
    let bottom = PLOT_TOP + PLOT_SIZE;
    for v in ticks(unit.in_unit(x0), unit.in_unit(x1), step) {
        let x = px(v).round() as i32;
        root.draw(&PathElement::new(vec![(x, bottom), (x, bottom + 6)], FRAME))?;
        root.draw_text(
            &format_tick(v, step),
            &label.pos(Pos::new(HPos::Center, VPos::Top)),
            (x, bottom + 9),
        )?;
    }
    for v in ticks(unit.in_unit(y0), unit.in_unit(y1), step) {
        let y = py(v).round() as i32;
        root.draw(&PathElement::new(
            vec![(PLOT_LEFT - 7, y), (PLOT_LEFT - 1, y)],
            FRAME,
        ))?;
        root.draw_text(
            &format_tick(v, step),
            &label.pos(Pos::new(HPos::Right, VPos::Center)),
            (PLOT_LEFT - 10, y),
        )?;
    }
    let desc = TextStyle::from((FONT, 17).into_font()).color(&BLACK);
    root.draw_text(
        &format!("x ({})", unit.symbol),
        &desc.pos(Pos::new(HPos::Center, VPos::Top)),
        (PLOT_LEFT + PLOT_SIZE / 2, bottom + 34),
    )?;
    root.draw_text(
        &format!("y ({})", unit.symbol),
        &desc
            .transform(FontTransform::Rotate270)
            .pos(Pos::new(HPos::Center, VPos::Top)),
        (18, PLOT_TOP + PLOT_SIZE / 2),
    )
}

/// A white bar of a round length (at most a quarter of the view) on a
/// translucent dark backing, in the lower left of the plot.
fn draw_scale_bar<'a>(root: &Root<'a>, view_m: f64) -> DrawResult<'a> {
    let quarter = 0.25 * view_m;
    let mag = 10f64.powf(quarter.log10().floor());
    let length_m = [5.0, 2.0, 1.0]
        .iter()
        .map(|m| m * mag)
        .find(|l| *l <= quarter * (1.0 + 1e-9))
        .unwrap_or(mag);
    let length_px = (length_m / view_m * PLOT_SIZE as f64).round() as i32;
    let left = PLOT_LEFT + 18;
    let bar_y = PLOT_TOP + PLOT_SIZE - 22;
    let label = format_length(length_m)
        .replace(".00 ", " ")
        .replace(".0 ", " ");
    let style = TextStyle::from((FONT, 15).into_font()).color(&WHITE);
    let (tw, th) = root.estimate_text_size(&label, &style)?;
    let box_w = length_px.max(tw as i32) + 16;
    root.draw(&Rectangle::new(
        [
            (left - 8, bar_y - th as i32 - 14),
            (left - 8 + box_w, bar_y + 12),
        ],
        BLACK.mix(0.5).filled(),
    ))?;
    root.draw(&Rectangle::new(
        [(left, bar_y), (left + length_px, bar_y + 5)],
        WHITE.filled(),
    ))?;
    root.draw_text(
        &label,
        &style.pos(Pos::new(HPos::Center, VPos::Bottom)),
        (left + length_px / 2, bar_y - 4),
    )
}

/// A vertical colour bar beside the plot, filled by `colour(t)` with t = 0 at
/// the bottom and 1 at the top.
fn draw_bar_fill<'a>(root: &Root<'a>, colour: impl Fn(f64) -> RGBColor) -> DrawResult<'a> {
    for r in 0..PLOT_SIZE {
        let t = 1.0 - (r as f64 + 0.5) / PLOT_SIZE as f64;
        let c = colour(t);
        for k in 0..BAR_WIDTH {
            root.draw_pixel((BAR_LEFT + k, PLOT_TOP + r), &c)?;
        }
    }
    root.draw(&Rectangle::new(
        [
            (BAR_LEFT - 1, PLOT_TOP - 1),
            (BAR_LEFT + BAR_WIDTH, PLOT_TOP + PLOT_SIZE),
        ],
        FRAME.stroke_width(1),
    ))?;
    Ok(())
}

/// Tick and label at fraction `t` (0 = bottom) of the colour bar.
fn draw_bar_tick<'a>(root: &Root<'a>, t: f64, text: &str) -> DrawResult<'a> {
    let y = (PLOT_TOP as f64 + (1.0 - t) * PLOT_SIZE as f64).round() as i32;
    let x = BAR_LEFT + BAR_WIDTH;
    root.draw(&PathElement::new(vec![(x, y), (x + 5, y)], FRAME))?;
    let style = TextStyle::from((FONT, 15).into_font())
        .color(&BLACK)
        .pos(Pos::new(HPos::Left, VPos::Center));
    root.draw_text(text, &style, (x + 8, y))
}

fn draw_bar_label<'a>(root: &Root<'a>, text: &str) -> DrawResult<'a> {
    let style = TextStyle::from((FONT, 17).into_font())
        .color(&BLACK)
        .transform(FontTransform::Rotate90)
        .pos(Pos::new(HPos::Center, VPos::Top));
    root.draw_text(
        text,
        &style,
        (IMAGE_WIDTH as i32 - 30, PLOT_TOP + PLOT_SIZE / 2),
    )
}

fn draw_irradiance_bar<'a>(root: &Root<'a>, peak_w_m2: f64) -> DrawResult<'a> {
    draw_bar_fill(root, |t| {
        let [r, g, b] = Colormap::Viridis.rgb(t);
        RGBColor(r, g, b)
    })?;
    let unit = irradiance_unit(peak_w_m2);
    let top = if peak_w_m2 > 0.0 {
        unit.in_unit(peak_w_m2)
    } else {
        1.0
    };
    let step = nice_step(top, 5);
    for v in ticks(0.0, top, step) {
        draw_bar_tick(root, v / top, &format_tick(v, step))?;
    }
    draw_bar_label(root, &format!("irradiance ({})", unit.symbol))
}

fn draw_log_bar<'a>(root: &Root<'a>, decades: f64) -> DrawResult<'a> {
    draw_bar_fill(root, |t| {
        let [r, g, b] = Colormap::Viridis.rgb(t);
        RGBColor(r, g, b)
    })?;
    let whole = decades.floor() as i32;
    let every = (whole / 8 + 1).max(1);
    for k in (0..=whole).filter(|k| k % every == 0) {
        let text = if k == 0 {
            "1".to_string()
        } else {
            format!("10{}", superscript(-k))
        };
        draw_bar_tick(root, 1.0 - k as f64 / decades, &text)?;
    }
    draw_bar_label(root, "irradiance / peak (log scale)")
}

/// An integer in Unicode superscript digits, e.g. −3 → "⁻³".
fn superscript(v: i32) -> String {
    v.to_string()
        .chars()
        .map(|c| match c {
            '-' => '⁻',
            '0' => '⁰',
            '1' => '¹',
            '2' => '²',
            '3' => '³',
            '4' => '⁴',
            '5' => '⁵',
            '6' => '⁶',
            '7' => '⁷',
            '8' => '⁸',
            _ => '⁹',
        })
        .collect()
}

fn draw_phase_bar<'a>(root: &Root<'a>) -> DrawResult<'a> {
    draw_bar_fill(root, |t| {
        let [r, g, b] = Colormap::PhaseWheel.rgb(t);
        RGBColor(r, g, b)
    })?;
    for (t, text) in [
        (0.0, "−π"),
        (0.25, "−π/2"),
        (0.5, "0"),
        (0.75, "π/2"),
        (1.0, "π"),
    ] {
        draw_bar_tick(root, t, text)?;
    }
    draw_bar_label(root, "phase (rad)")?;
    // Key for the masked colour.
    let y = PLOT_TOP + PLOT_SIZE + 16;
    root.draw(&Rectangle::new(
        [(BAR_LEFT, y), (BAR_LEFT + BAR_WIDTH, y + 14)],
        MASK_GREY.filled(),
    ))?;
    root.draw(&Rectangle::new(
        [(BAR_LEFT - 1, y - 1), (BAR_LEFT + BAR_WIDTH, y + 14)],
        FRAME.stroke_width(1),
    ))?;
    let style = TextStyle::from((FONT, 13).into_font())
        .color(&BLACK)
        .pos(Pos::new(HPos::Left, VPos::Center));
    root.draw_text("I < 10⁻³ peak", &style, (BAR_LEFT + BAR_WIDTH + 6, y + 7))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::beams::{Mode, ModeShape};

    fn gaussian(n: usize, dx: f64, w: f64) -> Field {
        Mode::new(ModeShape::HermiteGauss { m: 0, n: 0 }, 1064e-9, w)
            .unwrap()
            .sample(Grid::new(n, dx).unwrap(), 0.0, 1.0)
            .unwrap()
    }

    #[test]
    fn window_holds_the_beam_and_stays_in_the_grid() {
        // Gaussian w = 0.5 mm: r95 = w·sqrt(−ln(0.05)/2) = 0.612 mm, so the
        // half-width is 1.6·r95 = 0.979 mm rounded up to 1 mm.
        let f = gaussian(512, 10e-6, 0.5e-3);
        let w = auto_window(&f);
        assert_eq!(w.centre_m, [0.0, 0.0]);
        assert!((w.half_width_m - 1e-3).abs() < 1e-12, "{w:?}");
        // A tiny beam still gets 64 samples.
        let f = gaussian(512, 10e-6, 20e-6);
        assert!((auto_window(&f).half_width_m - 32.0 * 10e-6).abs() < 1e-15);
        // A beam filling the grid gets the whole grid.
        let f = gaussian(64, 10e-6, 0.3e-3);
        assert_eq!(auto_window(&f), ImageWindow::full(f.grid()));
        // A zero field gets the whole grid.
        let z = Field::zeros(Grid::new(32, 1e-5).unwrap(), 1e-6).unwrap();
        assert_eq!(auto_window(&z), ImageWindow::full(z.grid()));
    }

    #[test]
    fn taps_average_or_interpolate() {
        let t = make_taps(10, 1.5, 4.5); // covers samples 2, 3, 4 fully
        assert_eq!((t.start, t.w.len()), (2, 3));
        assert!(t.w.iter().all(|w| (w - 1.0 / 3.0).abs() < 1e-12));
        let t = make_taps(10, 2.0, 2.5); // centre 2.25: between 2 and 3
        assert_eq!(t.start, 2);
        assert!((t.w[0] - 0.75).abs() < 1e-12 && (t.w[1] - 0.25).abs() < 1e-12);
        let t = make_taps(10, 9.2, 9.4); // beyond the last centre: clamp
        assert_eq!((t.start, t.w.clone()), (9, vec![1.0]));
    }

    #[test]
    fn images_decode_at_the_documented_size_with_y_up() {
        let dir = tempfile::tempdir().unwrap();
        // A beam displaced to +y must appear in the upper half of the plot.
        let grid = Grid::new(128, 10e-6).unwrap();
        let f = Field::from_fn(grid, 1e-6, |x, y| {
            Complex64::new(
                (-(x * x + (y - 0.2e-3).powi(2)) / (0.05e-3f64).powi(2)).exp(),
                0.0,
            )
        })
        .unwrap();
        let window = ImageWindow::full(grid);
        let path = dir.path().join("i.png");
        write_intensity_png_with(
            &path,
            &f,
            "displaced beam",
            &ImageOptions {
                window: Some(window),
                ..Default::default()
            },
        )
        .unwrap();
        let img = image::open(&path).unwrap().into_rgb8();
        assert_eq!(img.dimensions(), (IMAGE_WIDTH, IMAGE_HEIGHT));
        let bright = |y: i32| {
            let p = img
                .get_pixel((PLOT_LEFT + PLOT_SIZE / 2) as u32, y as u32)
                .0;
            p.iter().map(|&c| c as u32).sum::<u32>()
        };
        // y = +0.2 mm on a 1.28 mm view lies 0.156 of the height above the centre.
        let y_beam = PLOT_TOP + PLOT_SIZE / 2 - (0.2e-3 / 1.28e-3 * PLOT_SIZE as f64) as i32;
        let y_mirror = PLOT_TOP + PLOT_SIZE / 2 + (0.2e-3 / 1.28e-3 * PLOT_SIZE as f64) as i32;
        assert!(
            bright(y_beam) > bright(y_mirror) + 200,
            "{} vs {}",
            bright(y_beam),
            bright(y_mirror)
        );

        let path = dir.path().join("p.png");
        write_phase_png(&path, &f, "displaced beam").unwrap();
        let img = image::open(&path).unwrap();
        assert_eq!((img.width(), img.height()), (IMAGE_WIDTH, IMAGE_HEIGHT));
    }

    #[test]
    fn refuses_non_finite_fields_and_bad_windows() {
        let mut f = gaussian(64, 10e-6, 0.1e-3);
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("x.png");
        let bad = ImageWindow {
            centre_m: [0.0, 0.0],
            half_width_m: f64::NAN,
        };
        let opts = ImageOptions {
            window: Some(bad),
            ..Default::default()
        };
        assert!(matches!(
            write_intensity_png_with(&path, &f, "t", &opts),
            Err(Error::OutOfRange { .. })
        ));
        let opts = ImageOptions {
            scale: IrradianceScale::Logarithmic { decades: 0.0 },
            ..Default::default()
        };
        assert!(matches!(
            write_intensity_png_with(&path, &f, "t", &opts),
            Err(Error::OutOfRange { .. })
        ));
        f.values[[3, 3]] = Complex64::new(f64::NAN, 0.0);
        assert!(matches!(
            write_intensity_png(&path, &f, "t"),
            Err(Error::NonFinite { count: 1, .. })
        ));
        let f = gaussian(64, 10e-6, 0.1e-3);
        let err = write_intensity_png(&dir.path().join("no/such/dir/x.png"), &f, "t").unwrap_err();
        assert!(matches!(err, Error::Io { .. }), "{err:?}");
    }

    /// Renders a Gaussian, an LG_0,1 donut (intensity and phase) and an Airy
    /// pattern. They go to a temporary directory, or to
    /// `$BEAMWRIGHT_SAMPLE_DIR` when set, for looking at by eye.
    #[test]
    fn sample_images_render() {
        use crate::optics::{Aperture, ApertureShape, LensModel, ThinLens};
        use crate::propagate::{propagate, Method};
        let tmp = tempfile::tempdir().unwrap();
        let dir = std::env::var_os("BEAMWRIGHT_SAMPLE_DIR")
            .map(std::path::PathBuf::from)
            .unwrap_or_else(|| tmp.path().to_path_buf());
        std::fs::create_dir_all(&dir).unwrap();
        let grid = Grid::new(512, 10e-6).unwrap();

        let g = Mode::new(ModeShape::HermiteGauss { m: 0, n: 0 }, 1064e-9, 0.5e-3)
            .unwrap()
            .sample(grid, 0.3, 1.0)
            .unwrap();
        write_intensity_png(
            &dir.join("gaussian_intensity.png"),
            &g,
            "Gaussian, w0 = 0.5 mm, z = 300 mm",
        )
        .unwrap();
        write_phase_png(
            &dir.join("gaussian_phase.png"),
            &g,
            "Gaussian, w0 = 0.5 mm, z = 300 mm",
        )
        .unwrap();

        let lg = Mode::new(ModeShape::LaguerreGauss { p: 0, l: 1 }, 1064e-9, 1e-3)
            .unwrap()
            .sample(grid, 0.0, 1.0)
            .unwrap();
        write_intensity_png(
            &dir.join("lg01_intensity.png"),
            &lg,
            "LG₀,₁ donut, w0 = 1 mm",
        )
        .unwrap();
        write_phase_png(&dir.join("lg01_phase.png"), &lg, "LG₀,₁ donut, w0 = 1 mm").unwrap();

        // Airy pattern: a 0.5 mm-diameter disc, focused by f = 200 mm and
        // propagated to the focal plane by the single-FFT Fresnel transform.
        let mut airy = Field::from_fn(grid, 1064e-9, |_, _| Complex64::new(1.0, 0.0)).unwrap();
        Aperture::new(ApertureShape::Circle { radius_m: 0.25e-3 })
            .unwrap()
            .apply(&mut airy);
        airy.normalise_to(1.0).unwrap();
        ThinLens::new(0.2, LensModel::Paraxial)
            .unwrap()
            .apply(&mut airy);
        propagate(&mut airy, 0.2, Method::Fresnel).unwrap();
        write_intensity_png(
            &dir.join("airy_intensity.png"),
            &airy,
            "Airy pattern: 0.5 mm aperture, f = 200 mm, focal plane",
        )
        .unwrap();
        let log = ImageOptions {
            scale: IrradianceScale::Logarithmic { decades: 4.0 },
            ..Default::default()
        };
        write_intensity_png_with(
            &dir.join("airy_intensity_log.png"),
            &airy,
            "Airy pattern: 0.5 mm aperture, f = 200 mm, focal plane",
            &log,
        )
        .unwrap();
        write_phase_png(
            &dir.join("airy_phase.png"),
            &airy,
            "Airy pattern: 0.5 mm aperture, f = 200 mm, focal plane",
        )
        .unwrap();
        assert!(dir.join("airy_phase.png").exists());
    }
}
