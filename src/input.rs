//! Reading user arrays for sources and masks: NumPy `.npy` files and
//! grey-scale PNG images.
//!
//! Conventions:
//! - Every reader returns an [`Array2`] indexed `[iy, ix]` (row = y,
//!   column = x) with **row 0 the most negative y**, the grid convention of
//!   [`crate::grid`]. NPY arrays are taken as stored (`a[iy, ix]`, as NumPy
//!   users index them; `plt.imshow(a, origin="lower")` shows them the same
//!   way up). PNG images are stored top row first, and the top of a picture
//!   is +y, so [`read_png_gray`] **flips the rows**: image row 0 (top)
//!   becomes array row `ny − 1` (most positive y). A mask drawn with "up"
//!   pointing up therefore lands on the grid with +y up.
//! - No unit is attached: the caller decides whether the numbers are field
//!   amplitudes in sqrt(W)/m, transmissions or phases.
//! - Shapes are not checked against a grid here (non-square arrays are
//!   returned as they are); the caller compares with its grid and reports an
//!   [`Error::Shape`].
//! - NaN or infinite values are refused with [`Error::NonFinite`] naming the
//!   file; all other problems give [`Error::Io`] (cannot read the file) or
//!   [`Error::File`] (the file exists but its content is wrong), both of
//!   which name the file.

use std::path::Path;

use ndarray::Array2;
use num_complex::Complex64;

use crate::error::{Error, Result};
use crate::report::npy::{parse_npy, NpyArray};

/// Reads a 2-D complex array from an NPY file.
///
/// Accepts complex128 and complex64, and also float64 and float32 (taken as
/// real values with zero imaginary part). The array is returned as stored,
/// `[iy, ix]`, row 0 = most negative y.
///
/// # Errors
/// [`Error::Io`] if the file cannot be read; [`Error::File`] if it is not an
/// NPY file, has another dtype, or is not 2-D; [`Error::NonFinite`] if any
/// value is NaN or infinite.
///
/// ```
/// use beamwright::input::read_complex_npy;
/// let err = read_complex_npy(std::path::Path::new("no/such/file.npy")).unwrap_err();
/// assert!(err.to_string().starts_with("no/such/file.npy: "));
/// ```
pub fn read_complex_npy(path: &Path) -> Result<Array2<Complex64>> {
    let array = match parse_npy(path, &read_bytes(path)?)? {
        NpyArray::Complex(a, _) => a,
        NpyArray::Real(a, _) => a.mapv(|v| Complex64::new(v, 0.0)),
    };
    let bad = array
        .iter()
        .filter(|v| !(v.re.is_finite() && v.im.is_finite()))
        .count();
    check_finite(path, bad)?;
    Ok(array)
}

/// Reads a 2-D real array from an NPY file (float64, or float32 widened to
/// f64). The array is returned as stored, `[iy, ix]`, row 0 = most negative y.
///
/// # Errors
/// [`Error::Io`] if the file cannot be read; [`Error::File`] if it is not an
/// NPY file, is complex or of another dtype, or is not 2-D;
/// [`Error::NonFinite`] if any value is NaN or infinite.
pub fn read_real_npy(path: &Path) -> Result<Array2<f64>> {
    let array = match parse_npy(path, &read_bytes(path)?)? {
        NpyArray::Real(a, _) => a,
        NpyArray::Complex(_, dtype) => {
            return Err(Error::File {
                path: path.to_path_buf(),
                message: format!(
                    "dtype {} is complex: expected a real array (float64 or float32)",
                    dtype.name()
                ),
            })
        }
    };
    check_finite(path, array.iter().filter(|v| !v.is_finite()).count())?;
    Ok(array)
}

/// Reads a PNG image as grey levels in `[0, 1]`, flipped so that the array
/// follows the grid convention.
///
/// - 8-bit values are divided by 255 and 16-bit values by 65535.
/// - Colour images are converted to luminance `0.2126 R + 0.7152 G +
///   0.0722 B` (Rec. 709 weights) computed on the stored values, with no
///   gamma decoding, so a grey level is used exactly as written; pure greys
///   keep their value.
/// - An alpha channel is ignored.
/// - **Orientation**: image row 0 is the top of the picture, which is the
///   most positive y; the returned array has row 0 = most negative y, i.e.
///   `array[[iy, ix]] = image[row = ny − 1 − iy, column = ix]`.
///
/// # Errors
/// [`Error::Io`] if the file cannot be read; [`Error::File`] if it is not a
/// PNG or cannot be decoded.
pub fn read_png_gray(path: &Path) -> Result<Array2<f64>> {
    let bytes = read_bytes(path)?;
    let fail = |message: String| Error::File {
        path: path.to_path_buf(),
        message,
    };
    if !bytes.starts_with(b"\x89PNG\r\n\x1a\n") {
        return Err(fail("not a PNG file (the PNG signature is missing)".into()));
    }
    let image = image::load_from_memory_with_format(&bytes, image::ImageFormat::Png)
        .map_err(|e| fail(format!("cannot decode PNG: {e}")))?;
    let (width, height) = (image.width() as usize, image.height() as usize);
    if width == 0 || height == 0 {
        return Err(fail(format!("image is empty ({width}x{height} pixels)")));
    }
    // Work from the integer samples in f64 so that 8- and 16-bit grey levels
    // come out exactly as k/255 or k/65535.
    let sixteen_bit = image.color().bytes_per_pixel() / image.color().channel_count() > 1;
    let pixels: Vec<[f64; 3]> = if sixteen_bit {
        image
            .into_rgb16()
            .pixels()
            .map(|p| p.0.map(|c| c as f64 / 65535.0))
            .collect()
    } else {
        image
            .into_rgb8()
            .pixels()
            .map(|p| p.0.map(|c| c as f64 / 255.0))
            .collect()
    };
    let mut out = Array2::zeros((height, width));
    for (k, [r, g, b]) in pixels.into_iter().enumerate() {
        let (row, ix) = (k / width, k % width);
        let value = if r == g && g == b {
            r
        } else {
            0.2126 * r + 0.7152 * g + 0.0722 * b
        };
        out[[height - 1 - row, ix]] = value.clamp(0.0, 1.0);
    }
    Ok(out)
}

fn read_bytes(path: &Path) -> Result<Vec<u8>> {
    std::fs::read(path).map_err(|source| Error::Io {
        path: path.to_path_buf(),
        source,
    })
}

fn check_finite(path: &Path, count: usize) -> Result<()> {
    if count > 0 {
        Err(Error::NonFinite {
            what: path.display().to_string(),
            count,
        })
    } else {
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::npy::{write_complex_npy, write_real_npy};
    use ndarray::array;

    #[test]
    fn npy_round_trips_and_real_is_accepted_as_complex() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("a.npy");
        let c = array![
            [Complex64::new(1.0, -2.0), Complex64::new(3.5, 0.25)],
            [Complex64::new(-1e-300, 1e300), Complex64::new(0.0, 0.0)]
        ];
        write_complex_npy(&path, &c).unwrap();
        assert_eq!(read_complex_npy(&path).unwrap(), c);

        let r = array![[1.0, 2.0, 3.0], [4.0, 5.0, 6.0]];
        write_real_npy(&path, &r).unwrap();
        assert_eq!(read_real_npy(&path).unwrap(), r);
        assert_eq!(
            read_complex_npy(&path).unwrap(),
            r.mapv(|v| Complex64::new(v, 0.0))
        );
    }

    #[test]
    fn errors_name_the_file_and_the_problem() {
        let dir = tempfile::tempdir().unwrap();
        let missing = dir.path().join("missing.npy");
        let err = read_real_npy(&missing).unwrap_err();
        assert!(
            matches!(&err, Error::Io { path, .. } if *path == missing),
            "{err:?}"
        );
        assert!(err.to_string().contains("missing.npy"));
        assert!(matches!(read_png_gray(&missing), Err(Error::Io { .. })));

        let complex = dir.path().join("complex.npy");
        write_complex_npy(&complex, &array![[Complex64::new(1.0, 1.0)]]).unwrap();
        let err = read_real_npy(&complex).unwrap_err();
        assert!(matches!(err, Error::File { .. }));
        assert_eq!(
            err.to_string(),
            format!(
                "{}: dtype complex128 is complex: expected a real array (float64 or float32)",
                complex.display()
            )
        );

        let nan = dir.path().join("nan.npy");
        write_real_npy(&nan, &array![[1.0, f64::NAN], [f64::INFINITY, 0.0]]).unwrap();
        match read_real_npy(&nan).unwrap_err() {
            Error::NonFinite { what, count } => {
                assert_eq!(count, 2);
                assert!(what.ends_with("nan.npy"));
            }
            other => panic!("expected NonFinite, got {other:?}"),
        }
        assert!(matches!(
            read_complex_npy(&nan),
            Err(Error::NonFinite { count: 2, .. })
        ));

        let text = dir.path().join("text.png");
        std::fs::write(&text, "not an image").unwrap();
        let err = read_png_gray(&text).unwrap_err();
        assert!(
            err.to_string()
                .ends_with("text.png: not a PNG file (the PNG signature is missing)"),
            "{err}"
        );
        let err = read_complex_npy(&text).unwrap_err();
        assert!(err.to_string().contains("not an NPY file"), "{err}");
    }

    #[test]
    fn png_rows_are_flipped_so_top_is_positive_y() {
        let dir = tempfile::tempdir().unwrap();
        // 3 wide, 2 tall; the top row is bright on the left only.
        let path = dir.path().join("mask.png");
        let img = image::GrayImage::from_raw(3, 2, vec![255, 0, 0, 0, 51, 102]).unwrap();
        img.save(&path).unwrap();
        let a = read_png_gray(&path).unwrap();
        assert_eq!(a.dim(), (2, 3));
        // Array row 1 (+y) is the image's top row.
        assert_eq!(a.row(1).to_vec(), vec![1.0, 0.0, 0.0]);
        assert_eq!(a.row(0).to_vec(), vec![0.0, 51.0 / 255.0, 102.0 / 255.0]);

        // 16-bit and colour images.
        let path16 = dir.path().join("mask16.png");
        let img16: image::ImageBuffer<image::Luma<u16>, Vec<u16>> =
            image::ImageBuffer::from_raw(1, 2, vec![65535, 32768]).unwrap();
        img16.save(&path16).unwrap();
        let a = read_png_gray(&path16).unwrap();
        assert_eq!(a[[1, 0]], 1.0);
        assert_eq!(a[[0, 0]], 32768.0 / 65535.0);

        let path_rgb = dir.path().join("rgb.png");
        let rgb = image::RgbImage::from_raw(2, 1, vec![255, 0, 0, 128, 128, 128]).unwrap();
        rgb.save(&path_rgb).unwrap();
        let a = read_png_gray(&path_rgb).unwrap();
        assert!((a[[0, 0]] - 0.2126).abs() < 1e-15);
        assert_eq!(a[[0, 1]], 128.0 / 255.0);
    }
}
