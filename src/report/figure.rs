//! Shared pieces of every figure: the bundled font, unit and prefix choice,
//! tick placement and label formatting, and PNG encoding.
//!
//! Conventions: values come in SI (metres, W/m²); a figure picks a display
//! unit so that tick labels have at most four significant digits. Lengths
//! are shown in mm (spans of 1 mm or more) or µm (smaller spans); irradiance
//! in W/cm² with an SI prefix chosen so the peak lies in `[1, 1000)`.
//! Negative numbers use the typographic minus sign (U+2212).

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::Path;
use std::sync::OnceLock;

use image::ImageEncoder;

use crate::error::{Error, Result};

/// Family name under which the bundled DejaVu Sans is registered with plotters.
pub(crate) const FONT: &str = "sans-serif";

static FONT_BYTES: &[u8] = include_bytes!("../../assets/DejaVuSans.ttf");

/// Registers the bundled font once, so text renders on machines without
/// system fonts.
/// Refuses to draw data holding `bad` non-finite values, naming `what`.
pub(crate) fn refuse_non_finite(bad: usize, what: impl FnOnce() -> String) -> Result<()> {
    if bad > 0 {
        return Err(Error::NonFinite {
            what: what(),
            count: bad,
        });
    }
    Ok(())
}

pub(crate) fn ensure_font(path: &Path) -> Result<()> {
    static REGISTERED: OnceLock<std::result::Result<(), String>> = OnceLock::new();
    REGISTERED
        .get_or_init(|| {
            plotters::style::register_font(FONT, plotters::style::FontStyle::Normal, FONT_BYTES)
                .map_err(|_| "the bundled font DejaVuSans.ttf could not be loaded".to_string())
        })
        .clone()
        .map_err(|message| Error::File {
            path: path.to_path_buf(),
            message,
        })
}

/// Wraps a plotters drawing error as an [`Error::File`] naming the output.
pub(crate) fn draw_error(path: &Path, e: impl std::fmt::Debug) -> Error {
    Error::File {
        path: path.to_path_buf(),
        message: format!("drawing the figure failed: {e:?}"),
    }
}

/// Encodes an 8-bit RGB buffer (`width·height·3` bytes, top row first) as PNG.
pub(crate) fn encode_png(path: &Path, width: u32, height: u32, rgb: &[u8]) -> Result<()> {
    let io = |source| Error::Io {
        path: path.to_path_buf(),
        source,
    };
    let file = File::create(path).map_err(io)?;
    let mut out = BufWriter::new(file);
    image::codecs::png::PngEncoder::new(&mut out)
        .write_image(rgb, width, height, image::ExtendedColorType::Rgb8)
        .map_err(|e| match e {
            image::ImageError::IoError(source) => io(source),
            other => Error::File {
                path: path.to_path_buf(),
                message: format!("encoding PNG failed: {other}"),
            },
        })?;
    out.flush().map_err(io)
}

/// A display unit: its symbol and its size in SI units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Unit {
    pub symbol: &'static str,
    pub si: f64,
}

impl Unit {
    /// Converts an SI value into this unit.
    pub fn in_unit(self, v: f64) -> f64 {
        v / self.si
    }
}

/// mm for spans of at least 1 mm, µm below 1 mm, nm below 1 µm.
pub(crate) fn length_unit(span_m: f64) -> Unit {
    if span_m >= 1e-3 || !span_m.is_finite() {
        Unit {
            symbol: "mm",
            si: 1e-3,
        }
    } else if span_m >= 1e-6 {
        Unit {
            symbol: "µm",
            si: 1e-6,
        }
    } else {
        Unit {
            symbol: "nm",
            si: 1e-9,
        }
    }
}

/// W/cm² with the SI prefix that puts `peak_w_m2` in `[1, 1000)`.
pub(crate) fn irradiance_unit(peak_w_m2: f64) -> Unit {
    const PREFIXES: [(&str, f64); 9] = [
        ("pW/cm²", 1e-12),
        ("nW/cm²", 1e-9),
        ("µW/cm²", 1e-6),
        ("mW/cm²", 1e-3),
        ("W/cm²", 1.0),
        ("kW/cm²", 1e3),
        ("MW/cm²", 1e6),
        ("GW/cm²", 1e9),
        ("TW/cm²", 1e12),
    ];
    let w_cm2 = peak_w_m2 * 1e-4;
    let mut chosen = PREFIXES[4];
    if w_cm2.is_finite() && w_cm2 > 0.0 {
        for p in PREFIXES {
            if w_cm2 >= p.1 {
                chosen = p;
            }
        }
        if w_cm2 < PREFIXES[0].1 {
            chosen = PREFIXES[0];
        }
    }
    Unit {
        symbol: chosen.0,
        si: chosen.1 * 1e4,
    }
}

/// A "nice" step (1, 2 or 5 × 10^k) giving about `target` intervals over `span`.
pub(crate) fn nice_step(span: f64, target: usize) -> f64 {
    if !(span.is_finite() && span > 0.0) {
        return 1.0;
    }
    let raw = span / target.max(1) as f64;
    let mag = 10f64.powf(raw.log10().floor());
    let m = raw / mag;
    let nice = if m < 1.5 {
        1.0
    } else if m < 3.5 {
        2.0
    } else if m < 7.5 {
        5.0
    } else {
        10.0
    };
    nice * mag
}

/// Tick values at multiples of `step` within `[lo, hi]`.
pub(crate) fn ticks(lo: f64, hi: f64, step: f64) -> Vec<f64> {
    if !(lo.is_finite() && hi.is_finite() && step > 0.0) || hi < lo {
        return Vec::new();
    }
    let first = (lo / step - 1e-9).ceil() as i64;
    let last = (hi / step + 1e-9).floor() as i64;
    (first..=last).take(200).map(|k| k as f64 * step).collect()
}

/// Formats a tick value with as many decimals as `step` needs, the
/// typographic minus and no "−0".
pub(crate) fn format_tick(v: f64, step: f64) -> String {
    let decimals = if step > 0.0 && step.is_finite() {
        (-(step.log10()).floor()).clamp(0.0, 9.0) as usize
    } else {
        3
    };
    // A step such as 0.25 needs one more decimal than its magnitude says.
    let scaled = step * 10f64.powi(decimals as i32);
    let decimals = if step > 0.0 && (scaled - scaled.round()).abs() > 1e-6 {
        decimals + 1
    } else {
        decimals
    };
    let text = format!("{:.*}", decimals, v);
    let text = if text
        .trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        text.trim_start_matches('-').to_string()
    } else {
        text
    };
    text.replace('-', "\u{2212}")
}

/// Formats a value with 3 significant digits (4 for values ≥ 1000), typographic minus.
pub(crate) fn format_sig(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    let mag = v.abs().log10().floor() as i32;
    let decimals = (2 - mag).clamp(0, 12) as usize;
    format!("{:.*}", decimals, v).replace('-', "\u{2212}")
}

/// Formats a length in metres with a fitting unit, e.g. `2.40 mm`, `35.2 µm`.
pub(crate) fn format_length(v_m: f64) -> String {
    let unit = length_unit(v_m.abs());
    format!("{} {}", format_sig(unit.in_unit(v_m)), unit.symbol)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn units_and_ticks() {
        assert_eq!(length_unit(2.4e-3).symbol, "mm");
        assert_eq!(length_unit(0.6e-3).symbol, "µm");
        let u = irradiance_unit(1.27e7); // 1.27 kW/cm²
        assert_eq!(u.symbol, "kW/cm²");
        assert!((u.in_unit(1.27e7) - 1.27).abs() < 1e-12);
        assert_eq!(irradiance_unit(0.0).symbol, "W/cm²");
        assert_eq!(nice_step(2.4, 6), 0.5);
        assert_eq!(nice_step(1.0, 4), 0.2);
        assert_eq!(ticks(-1.2, 1.2, 0.5), vec![-1.0, -0.5, 0.0, 0.5, 1.0]);
        assert_eq!(format_tick(-0.5, 0.5), "\u{2212}0.5");
        assert_eq!(format_tick(-0.0, 0.5), "0.0");
        assert_eq!(format_tick(250.0, 50.0), "250");
        assert_eq!(format_tick(0.25, 0.25), "0.25");
        assert_eq!(format_length(2.4e-3), "2.40 mm");
        assert_eq!(format_length(35.2e-6), "35.2 µm");
    }
}
