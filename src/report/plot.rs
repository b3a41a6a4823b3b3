//! Line plots as PNG: the through-focus caustic with its ISO 11146 fit, and
//! radial irradiance profiles.
//!
//! Conventions: inputs are SI (metres, W/m²); the plots show lengths in mm,
//! or µm when the largest value is below 1 mm, and irradiance in W/cm² with
//! an SI prefix (see the axis titles). Colours are from the Okabe–Ito
//! palette, which stays distinguishable for colour-blind readers: x is blue,
//! y is vermillion; measured values are markers, fits are lines. Images are
//! [`PLOT_WIDTH`] × [`PLOT_HEIGHT`] pixels, text in the bundled DejaVu Sans.

use std::path::Path;

use plotters::coord::ranged1d::{DefaultFormatting, KeyPointHint, Ranged};
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;

use super::figure::{
    draw_error, encode_png, ensure_font, format_sig, format_tick, irradiance_unit, length_unit,
    nice_step, refuse_non_finite, ticks, FONT,
};
use crate::error::{Error, Result};

/// Plot width in pixels.
pub const PLOT_WIDTH: u32 = 800;
/// Plot height in pixels.
pub const PLOT_HEIGHT: u32 = 600;

const BLUE: RGBColor = RGBColor(0, 114, 178);
const VERMILLION: RGBColor = RGBColor(213, 94, 0);
const GRID_GREY: RGBColor = RGBColor(225, 225, 225);

/// A linear f64 axis whose tick positions are chosen here (round steps from
/// [`nice_step`]) so that the label formatter knows how many decimals to show.
struct TickedAxis {
    range: RangedCoordf64,
    ticks: Vec<f64>,
}

impl TickedAxis {
    fn new(lo: f64, hi: f64, ticks: Vec<f64>) -> Self {
        TickedAxis {
            range: (lo..hi).into(),
            ticks,
        }
    }
}

impl Ranged for TickedAxis {
    type FormatOption = DefaultFormatting;
    type ValueType = f64;
    fn map(&self, value: &f64, limit: (i32, i32)) -> i32 {
        self.range.map(value, limit)
    }
    fn key_points<Hint: KeyPointHint>(&self, hint: Hint) -> Vec<f64> {
        if hint.max_num_points() == 0 {
            Vec::new()
        } else {
            self.ticks.clone()
        }
    }
    fn range(&self) -> std::ops::Range<f64> {
        self.range.range()
    }
}

/// Data for [`write_caustic_plot`], all in SI units.
#[derive(Debug, Clone, Copy)]
pub struct CausticPlot<'a> {
    /// Plane positions along the axis, metres.
    pub z_m: &'a [f64],
    /// Measured D4σ diameters `[x, y]` at each plane, metres.
    pub d4sigma_m: &'a [[f64; 2]],
    /// Per axis `[x, y]`: the fitted `(a, b, c)` of `d²(z) = a + b·z + c·z²`,
    /// with `d` the D4σ diameter in metres and `z` in metres (so `a` is in m²,
    /// `b` in m and `c` is dimensionless), as in ISO 11146-1.
    pub fit: [(f64, f64, f64); 2],
    /// Beam propagation ratio M² per axis `[x, y]` (shown in the legend;
    /// NaN is shown as "n/a").
    pub m2: [f64; 2],
    /// Title printed above the plot.
    pub title: &'a str,
}

/// Writes the caustic: measured D4σ diameters (x: blue circles, y:
/// vermillion triangles) against z, the fitted hyperbolas as lines, and M²
/// per axis in the legend. z is in mm; diameters in mm or µm.
///
/// # Errors
/// [`Error::File`] if `z_m` and `d4sigma_m` differ in length or are empty;
/// [`Error::NonFinite`] for NaN or infinite z, diameters or fit
/// coefficients; [`Error::Io`] if the file cannot be written.
pub fn write_caustic_plot(path: &Path, plot: &CausticPlot) -> Result<()> {
    let fail = |message: String| Error::File {
        path: path.to_path_buf(),
        message,
    };
    if plot.z_m.len() != plot.d4sigma_m.len() {
        return Err(fail(format!(
            "caustic plot: {} z positions but {} diameter pairs",
            plot.z_m.len(),
            plot.d4sigma_m.len()
        )));
    }
    if plot.z_m.is_empty() {
        return Err(fail("caustic plot: no planes to plot".into()));
    }
    let bad = plot.z_m.iter().filter(|v| !v.is_finite()).count()
        + plot
            .d4sigma_m
            .iter()
            .flatten()
            .filter(|v| !v.is_finite())
            .count()
        + plot
            .fit
            .iter()
            .flat_map(|(a, b, c)| [a, b, c])
            .filter(|v| !v.is_finite())
            .count();
    refuse_non_finite(bad, || format!("caustic plot data for {}", path.display()))?;
    ensure_font(path)?;

    let z_lo = plot.z_m.iter().cloned().fold(f64::INFINITY, f64::min);
    let z_hi = plot.z_m.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
    let pad = if z_hi > z_lo {
        0.04 * (z_hi - z_lo)
    } else {
        1e-3
    };
    let (z0, z1) = (z_lo - pad, z_hi + pad);
    let fit_d = |axis: usize, z: f64| {
        let (a, b, c) = plot.fit[axis];
        let d2 = a + b * z + c * z * z;
        (d2 >= 0.0).then(|| d2.sqrt())
    };
    const SAMPLES: usize = 300;
    let curve = |axis: usize| -> Vec<(f64, f64)> {
        (0..=SAMPLES)
            .filter_map(|k| {
                let z = z0 + (z1 - z0) * k as f64 / SAMPLES as f64;
                fit_d(axis, z).map(|d| (z, d))
            })
            .collect()
    };
    let curves = [curve(0), curve(1)];
    let d_max = plot
        .d4sigma_m
        .iter()
        .flatten()
        .cloned()
        .chain(curves.iter().flatten().map(|p| p.1))
        .fold(0.0, f64::max);
    let d_top = if d_max > 0.0 { 1.15 * d_max } else { 1e-3 };
    let z_unit = length_unit(1.0);
    let d_unit = length_unit(d_max);
    let zs = |v: f64| z_unit.in_unit(v);
    let ds = |v: f64| d_unit.in_unit(v);

    let x_step = nice_step(zs(z1 - z0), 8);
    let y_step = nice_step(ds(d_top), 6);
    let x_ticks = ticks(zs(z0), zs(z1), x_step);
    let y_ticks = ticks(0.0, ds(d_top), y_step);

    let m2_text = |v: f64| {
        if v.is_finite() {
            format!("{v:.2}")
        } else {
            "n/a".into()
        }
    };
    let mut buf = vec![255u8; (PLOT_WIDTH * PLOT_HEIGHT * 3) as usize];
    {
        let root =
            BitMapBackend::with_buffer(&mut buf, (PLOT_WIDTH, PLOT_HEIGHT)).into_drawing_area();
        let e = |err| draw_error(path, err);
        root.fill(&WHITE).map_err(e)?;
        let title = fit_title(&root, plot.title).map_err(e)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title.0, (FONT, title.1))
            .margin(18)
            .margin_right(30)
            .x_label_area_size(55)
            .y_label_area_size(80)
            .build_cartesian_2d(
                TickedAxis::new(zs(z0), zs(z1), x_ticks),
                TickedAxis::new(0.0, ds(d_top), y_ticks),
            )
            .map_err(e)?;
        chart
            .configure_mesh()
            .light_line_style(TRANSPARENT)
            .bold_line_style(GRID_GREY)
            .x_desc(format!("z ({})", z_unit.symbol))
            .y_desc(format!("D4σ diameter ({})", d_unit.symbol))
            .label_style((FONT, 15))
            .axis_desc_style((FONT, 17))
            .x_label_formatter(&|v| format_tick(*v, x_step))
            .y_label_formatter(&|v| format_tick(*v, y_step))
            .draw()
            .map_err(e)?;

        let colours = [BLUE, VERMILLION];
        for axis in 0..2 {
            let colour = colours[axis];
            let name = ["x", "y"][axis];
            let points: Vec<(f64, f64)> = plot
                .z_m
                .iter()
                .zip(plot.d4sigma_m)
                .map(|(z, d)| (zs(*z), ds(d[axis])))
                .collect();
            if axis == 0 {
                chart
                    .draw_series(points.iter().map(|p| Circle::new(*p, 4, colour.filled())))
                    .map_err(e)?
                    .label(format!("{name}: measured D4σ"))
                    .legend(move |(x, y)| Circle::new((x + 10, y), 4, colour.filled()));
            } else {
                chart
                    .draw_series(
                        points
                            .iter()
                            .map(|p| TriangleMarker::new(*p, 5, colour.filled())),
                    )
                    .map_err(e)?
                    .label(format!("{name}: measured D4σ"))
                    .legend(move |(x, y)| TriangleMarker::new((x + 10, y), 5, colour.filled()));
            }
            chart
                .draw_series(LineSeries::new(
                    curves[axis].iter().map(|(z, d)| (zs(*z), ds(*d))),
                    colour.stroke_width(2),
                ))
                .map_err(e)?
                .label(format!(
                    "{name}: ISO 11146 fit, M² = {}",
                    m2_text(plot.m2[axis])
                ))
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], colour.stroke_width(2))
                });
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperMiddle)
            .background_style(WHITE.mix(0.9))
            .border_style(RGBColor(160, 160, 160))
            .label_font((FONT, 15))
            .draw()
            .map_err(e)?;
        root.present().map_err(e)?;
    }
    encode_png(path, PLOT_WIDTH, PLOT_HEIGHT, &buf)
}

/// Writes a radial irradiance profile `I(r)` (line), with an optional
/// reference curve `(name, values)` on the same radii (dashed). r is in mm or
/// µm, irradiance in W/cm² with an SI prefix chosen from the largest value.
///
/// # Errors
/// [`Error::File`] if the arrays differ in length or are empty;
/// [`Error::NonFinite`] for NaN or infinite values; [`Error::Io`] if the file
/// cannot be written.
pub fn write_radial_profile_plot(
    path: &Path,
    r_m: &[f64],
    irradiance_w_m2: &[f64],
    reference: Option<(&str, &[f64])>,
    title: &str,
) -> Result<()> {
    let fail = |message: String| Error::File {
        path: path.to_path_buf(),
        message,
    };
    if r_m.is_empty() {
        return Err(fail("radial profile plot: no points to plot".into()));
    }
    if r_m.len() != irradiance_w_m2.len() {
        return Err(fail(format!(
            "radial profile plot: {} radii but {} irradiance values",
            r_m.len(),
            irradiance_w_m2.len()
        )));
    }
    if let Some((name, values)) = reference {
        if values.len() != r_m.len() {
            return Err(fail(format!(
                "radial profile plot: {} radii but {} values in reference '{name}'",
                r_m.len(),
                values.len()
            )));
        }
    }
    let bad = r_m
        .iter()
        .chain(irradiance_w_m2)
        .chain(reference.map(|r| r.1).unwrap_or(&[]))
        .filter(|v| !v.is_finite())
        .count();
    refuse_non_finite(bad, || {
        format!("radial profile data for {}", path.display())
    })?;
    ensure_font(path)?;

    let r_max = r_m.iter().cloned().fold(0.0, f64::max);
    let r_min = r_m.iter().cloned().fold(f64::INFINITY, f64::min).min(0.0);
    let i_max = irradiance_w_m2
        .iter()
        .chain(reference.map(|r| r.1).unwrap_or(&[]))
        .cloned()
        .fold(0.0, f64::max);
    let i_min = irradiance_w_m2
        .iter()
        .chain(reference.map(|r| r.1).unwrap_or(&[]))
        .cloned()
        .fold(0.0, f64::min);
    let r_unit = length_unit(r_max - r_min);
    let i_unit = irradiance_unit(i_max);
    let rs = |v: f64| r_unit.in_unit(v);
    let is = |v: f64| i_unit.in_unit(v);
    let r_hi = if r_max > r_min {
        rs(r_max)
    } else {
        rs(r_min) + 1.0
    };
    let i_hi = if i_max > 0.0 { 1.08 * is(i_max) } else { 1.0 };
    let i_lo = if i_min < 0.0 { 1.08 * is(i_min) } else { 0.0 };
    let x_step = nice_step(r_hi - rs(r_min), 8);
    let y_step = nice_step(i_hi - i_lo, 6);

    let mut buf = vec![255u8; (PLOT_WIDTH * PLOT_HEIGHT * 3) as usize];
    {
        let root =
            BitMapBackend::with_buffer(&mut buf, (PLOT_WIDTH, PLOT_HEIGHT)).into_drawing_area();
        let e = |err| draw_error(path, err);
        root.fill(&WHITE).map_err(e)?;
        let title = fit_title(&root, title).map_err(e)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title.0, (FONT, title.1))
            .margin(18)
            .margin_right(30)
            .x_label_area_size(55)
            .y_label_area_size(80)
            .build_cartesian_2d(
                TickedAxis::new(rs(r_min), r_hi, ticks(rs(r_min), r_hi, x_step)),
                TickedAxis::new(i_lo, i_hi, ticks(i_lo, i_hi, y_step)),
            )
            .map_err(e)?;
        chart
            .configure_mesh()
            .light_line_style(TRANSPARENT)
            .bold_line_style(GRID_GREY)
            .x_desc(format!("r ({})", r_unit.symbol))
            .y_desc(format!("irradiance ({})", i_unit.symbol))
            .label_style((FONT, 15))
            .axis_desc_style((FONT, 17))
            .x_label_formatter(&|v| format_tick(*v, x_step))
            .y_label_formatter(&|v| format_tick(*v, y_step))
            .draw()
            .map_err(e)?;
        chart
            .draw_series(LineSeries::new(
                r_m.iter()
                    .zip(irradiance_w_m2)
                    .map(|(r, i)| (rs(*r), is(*i))),
                BLUE.stroke_width(2),
            ))
            .map_err(e)?
            .label("simulated")
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], BLUE.stroke_width(2)));
        if let Some((name, values)) = reference {
            chart
                .draw_series(DashedLineSeries::new(
                    r_m.iter().zip(values).map(|(r, i)| (rs(*r), is(*i))),
                    8,
                    5,
                    VERMILLION.stroke_width(2),
                ))
                .map_err(e)?
                .label(name.to_string())
                .legend(|(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], VERMILLION.stroke_width(2))
                });
            chart
                .configure_series_labels()
                .position(SeriesLabelPosition::UpperRight)
                .background_style(WHITE.mix(0.9))
                .border_style(RGBColor(160, 160, 160))
                .label_font((FONT, 15))
                .draw()
                .map_err(e)?;
        }
        root.present().map_err(e)?;
    }
    encode_png(path, PLOT_WIDTH, PLOT_HEIGHT, &buf)
}

/// The title and a font size at which it fits the plot width (cut with "…"
/// at 12 px if still too long).
fn fit_title<DB: DrawingBackend>(
    root: &DrawingArea<DB, plotters::coord::Shift>,
    title: &str,
) -> std::result::Result<(String, u32), DrawingAreaErrorKind<DB::ErrorType>> {
    let max_width = PLOT_WIDTH - 40;
    let mut text = title.to_string();
    let mut size = 22;
    loop {
        let (w, _) = root.estimate_text_size(&text, &TextStyle::from((FONT, size).into_font()))?;
        if w <= max_width || text.is_empty() {
            return Ok((text, size));
        }
        if size > 12 {
            size -= 1;
        } else {
            let mut chars: Vec<char> = text.trim_end_matches('…').chars().collect();
            chars.pop();
            text = chars.into_iter().collect::<String>() + "…";
        }
    }
}

/// Formats the M² values for captions elsewhere (`"M²x = 1.02, M²y = 1.05"`).
pub fn format_m2(m2: [f64; 2]) -> String {
    format!("M²x = {}, M²y = {}", format_sig(m2[0]), format_sig(m2[1]))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// `$BEAMWRIGHT_SAMPLE_DIR` (for looking at the plots by eye) or a
    /// temporary directory.
    fn out_dir(tmp: &tempfile::TempDir) -> std::path::PathBuf {
        let dir = std::env::var_os("BEAMWRIGHT_SAMPLE_DIR")
            .map(std::path::PathBuf::from)
            .unwrap_or_else(|| tmp.path().to_path_buf());
        std::fs::create_dir_all(&dir).unwrap();
        dir
    }

    #[test]
    fn caustic_plot_is_a_png_of_the_documented_size() {
        let dir = tempfile::tempdir().unwrap();
        let path = out_dir(&dir).join("caustic.png");
        // Gaussian-like caustic: d0 = 70 µm waist diameter at z = 100 mm,
        // zR = 3.6 mm, M² = 1.
        let (d0, z0, zr) = (70e-6, 0.1, 3.6e-3);
        let z: Vec<f64> = (0..21).map(|k| z0 - 20e-3 + 2e-3 * k as f64).collect();
        let d: Vec<[f64; 2]> = z
            .iter()
            .map(|z| {
                let v = d0 * (1.0 + ((z - z0) / zr).powi(2)).sqrt();
                [v, 1.1 * v]
            })
            .collect();
        let c = (d0 / zr).powi(2);
        let fit = (d0 * d0 + c * z0 * z0, -2.0 * c * z0, c);
        let plot = CausticPlot {
            z_m: &z,
            d4sigma_m: &d,
            fit: [fit, (fit.0 * 1.21, fit.1 * 1.21, fit.2 * 1.21)],
            m2: [1.0, 1.1],
            title: "Caustic through the focus of a 150 mm lens",
        };
        write_caustic_plot(&path, &plot).unwrap();
        let img = image::open(&path).unwrap();
        assert_eq!((img.width(), img.height()), (PLOT_WIDTH, PLOT_HEIGHT));

        let path = dir.path().join("bad.png");
        let short = CausticPlot {
            z_m: &z[..3],
            ..plot
        };
        let err = write_caustic_plot(&path, &short).unwrap_err();
        assert!(
            err.to_string()
                .contains("3 z positions but 21 diameter pairs"),
            "{err}"
        );
        let mut nan = d.clone();
        nan[0][1] = f64::NAN;
        let bad = CausticPlot {
            d4sigma_m: &nan,
            ..plot
        };
        assert!(matches!(
            write_caustic_plot(&path, &bad),
            Err(Error::NonFinite { count: 1, .. })
        ));
    }

    #[test]
    fn radial_profile_plot_is_a_png_and_checks_lengths() {
        let dir = tempfile::tempdir().unwrap();
        let path = out_dir(&dir).join("radial.png");
        let r: Vec<f64> = (0..200).map(|k| k as f64 * 5e-6).collect();
        let i: Vec<f64> = r
            .iter()
            .map(|r| 1e8 * (-2.0 * (r / 300e-6f64).powi(2)).exp())
            .collect();
        let reference: Vec<f64> = i.iter().map(|v| v * 1.02).collect();
        write_radial_profile_plot(
            &path,
            &r,
            &i,
            Some(("Gaussian, closed form", &reference)),
            "Radial profile at the waist",
        )
        .unwrap();
        let img = image::open(&path).unwrap();
        assert_eq!((img.width(), img.height()), (PLOT_WIDTH, PLOT_HEIGHT));
        let path = dir.path().join("bad.png");
        let err = write_radial_profile_plot(&path, &r, &i[..10], None, "t").unwrap_err();
        assert!(matches!(err, Error::File { .. }));
        assert!(err
            .to_string()
            .contains("200 radii but 10 irradiance values"));
    }
}
