//! Hard and soft apertures with area-weighted (anti-aliased) edges.
//!
//! Conventions: the amplitude transmission of a hard aperture at a pixel is
//! the exact fraction `f` of the pixel's square area that is open (circle–
//! square intersection computed in closed form; rectangles as a product of
//! 1-D overlaps; annulus as outer minus inner). The power passed is
//! `Σ f·|U|²·dx²` (PHYSICS.md §5). A Gaussian apodiser has amplitude
//! transmission `exp(−r²/a²)` (intensity `exp(−2r²/a²)`, so `a` is its 1/e²
//! intensity radius). `Polarity::Obscuration` inverts the mask (`1 − t`).

use ndarray::Zip;
use num_complex::Complex64;

use super::Transmission;
use crate::error::{Error, Result};
use crate::field::Field;

/// The outline of an aperture.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ApertureShape {
    /// A disc of the given radius.
    Circle {
        /// Radius, metres.
        radius_m: f64,
    },
    /// An axis-aligned rectangle.
    Rectangle {
        /// Full width along x, metres.
        width_m: f64,
        /// Full height along y, metres.
        height_m: f64,
    },
    /// A ring between two radii.
    Annulus {
        /// Inner radius, metres.
        inner_m: f64,
        /// Outer radius, metres.
        outer_m: f64,
    },
    /// A soft Gaussian apodiser of 1/e² intensity radius `radius_m`.
    Gaussian {
        /// 1/e² intensity radius of the transmission, metres.
        radius_m: f64,
    },
}

/// Whether the shape is the open part or the blocked part.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Polarity {
    /// Light passes inside the shape.
    Opening,
    /// Light is blocked inside the shape (an obscuration or stop).
    Obscuration,
}

/// An aperture: a shape, a decentre and a polarity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Aperture {
    /// The outline.
    pub shape: ApertureShape,
    /// Centre `[x, y]`, metres.
    pub offset_m: [f64; 2],
    /// Opening or obscuration.
    pub polarity: Polarity,
}

impl Aperture {
    /// A centred opening of the given shape.
    ///
    /// # Errors
    /// [`Error::OutOfRange`] for non-positive or non-finite dimensions, or an
    /// annulus whose inner radius is not below its outer radius.
    pub fn new(shape: ApertureShape) -> Result<Self> {
        let check = |what: &str, v: f64| {
            if v.is_finite() && v > 0.0 {
                Ok(())
            } else {
                Err(Error::out_of_range(
                    format!("aperture {what}"),
                    format!("{v} m"),
                    "expected a positive, finite length",
                ))
            }
        };
        match shape {
            ApertureShape::Circle { radius_m } | ApertureShape::Gaussian { radius_m } => {
                check("radius", radius_m)?
            }
            ApertureShape::Rectangle { width_m, height_m } => {
                check("width", width_m)?;
                check("height", height_m)?
            }
            ApertureShape::Annulus { inner_m, outer_m } => {
                check("inner radius", inner_m)?;
                check("outer radius", outer_m)?;
                if inner_m >= outer_m {
                    return Err(Error::out_of_range(
                        "annulus inner radius",
                        format!("{inner_m} m"),
                        format!("expected less than the outer radius {outer_m} m"),
                    ));
                }
            }
        }
        Ok(Aperture {
            shape,
            offset_m: [0.0, 0.0],
            polarity: Polarity::Opening,
        })
    }

    /// The same aperture decentred to `[x, y]` metres.
    pub fn with_offset(mut self, offset_m: [f64; 2]) -> Self {
        self.offset_m = offset_m;
        self
    }

    /// The same shape used as an obscuration.
    pub fn inverted(mut self) -> Self {
        self.polarity = Polarity::Obscuration;
        self
    }

    /// Amplitude transmission of the pixel centred at `(x, y)` of side `dx`.
    pub fn pixel_transmission(&self, x_m: f64, y_m: f64, dx_m: f64) -> f64 {
        let (x, y) = (x_m - self.offset_m[0], y_m - self.offset_m[1]);
        let t = match self.shape {
            ApertureShape::Circle { radius_m } => disk_pixel_fraction(radius_m, x, y, dx_m),
            ApertureShape::Rectangle { width_m, height_m } => {
                overlap_1d(x, dx_m, width_m / 2.0) * overlap_1d(y, dx_m, height_m / 2.0)
            }
            ApertureShape::Annulus { inner_m, outer_m } => {
                disk_pixel_fraction(outer_m, x, y, dx_m) - disk_pixel_fraction(inner_m, x, y, dx_m)
            }
            ApertureShape::Gaussian { radius_m } => {
                (-(x * x + y * y) / (radius_m * radius_m)).exp()
            }
        };
        match self.polarity {
            Polarity::Opening => t,
            Polarity::Obscuration => 1.0 - t,
        }
    }

    /// Power passed by pixel transmission `t`: `t` for hard (area-weighted)
    /// edges, `t²` for the soft apodiser.
    fn intensity_weight(&self, t: f64) -> f64 {
        match self.shape {
            ApertureShape::Gaussian { .. } => t * t,
            _ => t,
        }
    }

    /// Power that passes this aperture, `Σ T·|U|²·dx²`, without changing the field.
    pub fn power_through_w(&self, field: &Field) -> f64 {
        let grid = field.grid();
        let dx = grid.spacing_m();
        let xs = grid.coords_m();
        let rows = crate::field::map_rows(&field.values, |iy, row| {
            let y = xs[iy];
            row.iter()
                .zip(&xs)
                .map(|(v, &x)| {
                    self.intensity_weight(self.pixel_transmission(x, y, dx)) * v.norm_sqr()
                })
                .sum::<f64>()
        });
        rows.iter().sum::<f64>() * grid.cell_area_m2()
    }

    /// Multiplies the field by the aperture's transmission.
    pub fn apply(&self, field: &mut Field) -> Transmission {
        let power_in_w = field.power_w();
        let power_out_w = self.power_through_w(field);
        let grid = field.grid();
        let dx = grid.spacing_m();
        let xs = grid.coords_m();
        Zip::indexed(&mut field.values).par_for_each(|(iy, ix), v| {
            *v *= self.pixel_transmission(xs[ix], xs[iy], dx);
        });
        Transmission {
            power_in_w,
            power_out_w,
            power_sampled_w: field.power_w(),
        }
    }

    /// The transmission sampled on a grid, as a complex mask (for pictures
    /// and for combining with other masks).
    pub fn transmission_map(&self, grid: crate::Grid) -> ndarray::Array2<Complex64> {
        let xs = grid.coords_m();
        let dx = grid.spacing_m();
        ndarray::Array2::from_shape_fn((grid.n(), grid.n()), |(iy, ix)| {
            Complex64::new(self.pixel_transmission(xs[ix], xs[iy], dx), 0.0)
        })
    }
}

/// Fraction of `[c − dx/2, c + dx/2]` inside `[−h, h]`.
fn overlap_1d(c: f64, dx: f64, h: f64) -> f64 {
    let lo = (c - dx / 2.0).max(-h);
    let hi = (c + dx / 2.0).min(h);
    ((hi - lo) / dx).clamp(0.0, 1.0)
}

/// Exact fraction of the square pixel of side `dx` centred at `(x, y)` that
/// lies inside the disc of radius `r` centred at the origin.
///
/// ```
/// use beamwright::optics::disk_pixel_fraction;
/// assert_eq!(disk_pixel_fraction(1.0, 0.0, 0.0, 0.1), 1.0);
/// assert_eq!(disk_pixel_fraction(1.0, 5.0, 0.0, 0.1), 0.0);
/// // A pixel centred on the edge of a large disc is half covered, less the
/// // sagitta sliver ∫y²/(2r)dy/dx² = dx/(24r) = 4.16667e-6.
/// assert!((disk_pixel_fraction(1e3, 1e3, 0.0, 0.1) - (0.5 - 0.1 / 24e3)).abs() < 1e-10);
/// ```
pub fn disk_pixel_fraction(r: f64, x: f64, y: f64, dx: f64) -> f64 {
    let h = dx / 2.0;
    let (ax, ay) = (x.abs(), y.abs());
    let far = ((ax + h).powi(2) + (ay + h).powi(2)).sqrt();
    if far <= r {
        return 1.0;
    }
    let near_x = (ax - h).max(0.0);
    let near_y = (ay - h).max(0.0);
    if near_x * near_x + near_y * near_y >= r * r {
        return 0.0;
    }
    (disk_rect_area(r, x - h, x + h, y - h, y + h) / (dx * dx)).clamp(0.0, 1.0)
}

/// Area of the disc of radius `r` (centred at the origin) inside the
/// rectangle `[x0, x1] × [y0, y1]`, by exact piecewise integration of the
/// chord length.
fn disk_rect_area(r: f64, x0: f64, x1: f64, y0: f64, y1: f64) -> f64 {
    let lo = x0.max(-r);
    let hi = x1.min(r);
    if hi <= lo {
        return 0.0;
    }
    let mut cuts = vec![lo, hi];
    for y in [y0, y1] {
        if y.abs() < r {
            let xc = (r * r - y * y).sqrt();
            for c in [-xc, xc] {
                if c > lo && c < hi {
                    cuts.push(c);
                }
            }
        }
    }
    cuts.sort_by(|a, b| a.total_cmp(b));
    // Chord half-length, written to keep precision near x = ±r.
    let s = |x: f64| ((r - x) * (r + x)).max(0.0).sqrt();
    // ∫_a^b s dx = [x·s + r²·asin(x/r)]/2, with the asin difference taken as
    // one atan2 so that it stays accurate where asin is steep (x near ±r).
    let integral_s = |a: f64, b: f64| {
        let (sa, sb) = (s(a), s(b));
        0.5 * (b * sb - a * sa + r * r * (b * sa - a * sb).atan2(sa * sb + a * b))
    };
    let mut area = 0.0;
    for w in cuts.windows(2) {
        let (a, b) = (w[0], w[1]);
        if b <= a {
            continue;
        }
        let m = 0.5 * (a + b);
        let sm = s(m);
        // upper = min(y1, s), lower = max(y0, −s): each is a constant or ±s.
        let (upper_const, upper_s) = if sm < y1 { (0.0, 1.0) } else { (y1, 0.0) };
        let (lower_const, lower_s) = if -sm > y0 { (0.0, -1.0) } else { (y0, 0.0) };
        if upper_const + upper_s * sm <= lower_const + lower_s * sm {
            continue;
        }
        area += (upper_const - lower_const) * (b - a) + (upper_s - lower_s) * integral_s(a, b);
    }
    area
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pixel_fractions_sum_to_disc_area() {
        // The fractions tile the plane, so their sum times dx² is the exact
        // disc area πr² (geometry; common practice) to round-off.
        for (r, cx, cy) in [(1.0, 0.0, 0.0), (0.37, 0.013, -0.021), (2.5, 0.5, 0.25)] {
            let dx = 0.05;
            let n = (2.0 * (r + 1.0) / dx) as i64;
            let mut sum = 0.0;
            for iy in -n..=n {
                for ix in -n..=n {
                    sum += disk_pixel_fraction(r, ix as f64 * dx - cx, iy as f64 * dx - cy, dx);
                }
            }
            let area = sum * dx * dx;
            assert!(
                (area / (std::f64::consts::PI * r * r) - 1.0).abs() < 1e-12,
                "r={r}: {area}"
            );
        }
    }

    #[test]
    fn rectangle_fraction_is_exact() {
        let a = Aperture::new(ApertureShape::Rectangle {
            width_m: 1.0,
            height_m: 0.5,
        })
        .unwrap();
        assert!((a.pixel_transmission(0.5, 0.0, 0.2) - 0.5).abs() < 1e-15);
        assert!((a.pixel_transmission(0.5, 0.25, 0.2) - 0.25).abs() < 1e-15);
        assert_eq!(a.inverted().pixel_transmission(0.0, 0.0, 0.2), 0.0);
    }

    #[test]
    fn rejects_bad_dimensions() {
        assert!(Aperture::new(ApertureShape::Circle { radius_m: 0.0 }).is_err());
        assert!(Aperture::new(ApertureShape::Annulus {
            inner_m: 2.0,
            outer_m: 1.0
        })
        .is_err());
        assert!(Aperture::new(ApertureShape::Rectangle {
            width_m: f64::NAN,
            height_m: 1.0
        })
        .is_err());
    }
}
