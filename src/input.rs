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
use ndarray_npy::{ReadNpyError, ReadNpyExt, ReadableElement};
use num_complex::{Complex32, Complex64};

use crate::error::{Error, Result};

/// Reads a 2-D complex array from an NPY file.
///
/// Accepts complex128 and complex64, and also float64 and float32 (taken as
/// real values with zero imaginary part), either byte order, C or Fortran
/// order. The array is returned as stored, `[iy, ix]`, row 0 = most negative
/// y (Fortran-ordered files are rearranged to C order, same indices).
///
/// # Errors
/// [`Error::Io`] if the file cannot be read; [`Error::File`] if it is not an
/// NPY file, has another dtype, is not 2-D, is empty or is truncated;
/// [`Error::NonFinite`] if any value is NaN or infinite.
///
/// ```
/// use beamwright::input::read_complex_npy;
/// let err = read_complex_npy(std::path::Path::new("no/such/file.npy")).unwrap_err();
/// assert!(err.to_string().starts_with("no/such/file.npy: "));
/// ```
pub fn read_complex_npy(path: &Path) -> Result<Array2<Complex64>> {
    let bytes = read_bytes(path)?;
    let array = read_npy_as::<Complex64>(&bytes)
        .or_else(|e| {
            on_wrong_dtype(e, || {
                read_npy_as::<Complex32>(&bytes)
                    .map(|a| a.mapv(|v| Complex64::new(v.re.into(), v.im.into())))
            })
        })
        .or_else(|e| {
            on_wrong_dtype(e, || {
                read_npy_as::<f64>(&bytes).map(|a| a.mapv(|v| Complex64::new(v, 0.0)))
            })
        })
        .or_else(|e| {
            on_wrong_dtype(e, || {
                read_npy_as::<f32>(&bytes).map(|a| a.mapv(|v| Complex64::new(v.into(), 0.0)))
            })
        })
        .map_err(|e| {
            npy_error(
                path,
                &bytes,
                e,
                "expected complex128, complex64, float64 or float32",
            )
        })?;
    check_not_empty(path, array.dim())?;
    let bad = array
        .iter()
        .filter(|v| !(v.re.is_finite() && v.im.is_finite()))
        .count();
    check_finite(path, bad)?;
    Ok(array)
}

/// Reads a 2-D real array from an NPY file (float64, or float32 widened to
/// f64; either byte order, C or Fortran order). The array is returned as
/// stored, `[iy, ix]`, row 0 = most negative y.
///
/// # Errors
/// [`Error::Io`] if the file cannot be read; [`Error::File`] if it is not an
/// NPY file, is complex or of another dtype, is not 2-D, is empty or is
/// truncated; [`Error::NonFinite`] if any value is NaN or infinite.
pub fn read_real_npy(path: &Path) -> Result<Array2<f64>> {
    let bytes = read_bytes(path)?;
    let array = read_npy_as::<f64>(&bytes)
        .or_else(|e| on_wrong_dtype(e, || read_npy_as::<f32>(&bytes).map(|a| a.mapv(f64::from))))
        .map_err(|e| {
            if let ReadNpyError::WrongDescriptor(descr) = &e {
                if let Some(name) = complex_dtype_name(&descr.to_string()) {
                    return Error::File {
                        path: path.to_path_buf(),
                        message: format!(
                            "dtype {name} is complex: expected a real array (float64 or float32)"
                        ),
                    };
                }
            }
            npy_error(path, &bytes, e, "expected float64 or float32")
        })?;
    check_not_empty(path, array.dim())?;
    check_finite(path, array.iter().filter(|v| !v.is_finite()).count())?;
    Ok(array)
}

/// Parses the bytes of an NPY file as a 2-D array of `A` with `ndarray-npy`.
fn read_npy_as<A: ReadableElement>(bytes: &[u8]) -> std::result::Result<Array2<A>, ReadNpyError> {
    Array2::<A>::read_npy(bytes)
}

/// Runs the next attempt if the file's dtype was not the one tried;
/// passes any other error through.
fn on_wrong_dtype<T>(
    err: ReadNpyError,
    next: impl FnOnce() -> std::result::Result<T, ReadNpyError>,
) -> std::result::Result<T, ReadNpyError> {
    match err {
        ReadNpyError::WrongDescriptor(_) => next(),
        other => Err(other),
    }
}

/// NumPy's name for a complex descriptor as printed by `ndarray-npy`
/// (`'<c16'` → `complex128`), or `None` for other descriptors.
fn complex_dtype_name(descr: &str) -> Option<&'static str> {
    let code = descr
        .trim_matches('\'')
        .trim_start_matches(['<', '>', '=', '|']);
    match code {
        "c16" => Some("complex128"),
        "c8" => Some("complex64"),
        _ => None,
    }
}

/// Turns an `ndarray-npy` read error into a message for the user, naming
/// the file. `expected` lists the accepted dtypes.
fn npy_error(path: &Path, bytes: &[u8], err: ReadNpyError, expected: &str) -> Error {
    let message = if !bytes.starts_with(b"\x93NUMPY") {
        "not a NumPy .npy file (it does not start with the NPY magic bytes \\x93NUMPY; \
         save arrays with numpy.save)"
            .to_string()
    } else {
        match err {
            // Reading from memory, an I/O error can only be the header
            // running past the end of the file (the data have their own
            // variant, `MissingData`).
            ReadNpyError::Io(_) => "truncated file: it ends inside the NPY header".to_string(),
            ReadNpyError::ParseHeader(e) => format!("malformed or unsupported NPY header: {e}"),
            ReadNpyError::ParseData(e) => format!("cannot decode the array data: {e}"),
            ReadNpyError::LengthOverflow => "the shape in the NPY header is too large".to_string(),
            ReadNpyError::WrongNdim(_, ndim) => {
                format!("expected a 2-D array (rows = y, columns = x), found {ndim}-D")
            }
            ReadNpyError::WrongDescriptor(descr) => {
                format!("unsupported dtype {descr} ({expected})")
            }
            ReadNpyError::MissingData => format!(
                "truncated file: {} bytes in all, fewer than the shape and dtype in the NPY \
                 header require",
                bytes.len()
            ),
            ReadNpyError::ExtraBytes(n) => {
                format!("{n} bytes follow the array data (the NPY header does not match the data)")
            }
        }
    };
    Error::File {
        path: path.to_path_buf(),
        message,
    }
}

fn check_not_empty(path: &Path, (rows, cols): (usize, usize)) -> Result<()> {
    if rows == 0 || cols == 0 {
        Err(Error::File {
            path: path.to_path_buf(),
            message: format!("array is empty (shape ({rows}, {cols}))"),
        })
    } else {
        Ok(())
    }
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
    use ndarray_npy::write_npy;

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
        assert!(matches!(err, Error::File { .. }), "{err:?}");
        assert!(
            err.to_string()
                .starts_with(&format!("{}: not a NumPy .npy file", text.display())),
            "{err}"
        );
    }

    #[test]
    fn narrower_dtypes_are_widened() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("a.npy");
        let c32 = array![[Complex32::new(0.5, -1.25), Complex32::new(3.0, 1e-3)]];
        write_npy(&path, &c32).unwrap();
        let expected = c32.mapv(|v| Complex64::new(v.re.into(), v.im.into()));
        assert_eq!(read_complex_npy(&path).unwrap(), expected);
        let err = read_real_npy(&path).unwrap_err();
        assert_eq!(
            err.to_string(),
            format!(
                "{}: dtype complex64 is complex: expected a real array (float64 or float32)",
                path.display()
            )
        );

        let f32s = array![[1.5f32, -2.0], [0.1, 4.0]];
        write_npy(&path, &f32s).unwrap();
        assert_eq!(read_real_npy(&path).unwrap(), f32s.mapv(f64::from));
        assert_eq!(
            read_complex_npy(&path).unwrap(),
            f32s.mapv(|v| Complex64::new(v.into(), 0.0))
        );
    }

    /// An NPY version 2.0 file with the given header dict and data bytes.
    fn npy_v2(dict: &str, data: &[u8]) -> Vec<u8> {
        let mut bytes = b"\x93NUMPY\x02\x00".to_vec();
        bytes.extend_from_slice(&(dict.len() as u32).to_le_bytes());
        bytes.extend_from_slice(dict.as_bytes());
        bytes.extend_from_slice(data);
        bytes
    }

    #[test]
    fn reads_big_endian_fortran_order_and_version_2() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("be.npy");
        // A 2x3 float32 array [[1,2,3],[4,5,6]] stored big-endian in Fortran
        // order (columns first) with a version 2.0 header.
        let dict = "{'descr': '>f4', 'fortran_order': True, 'shape': (2, 3), }\n";
        let data: Vec<u8> = [1.0f32, 4.0, 2.0, 5.0, 3.0, 6.0]
            .iter()
            .flat_map(|v| v.to_be_bytes())
            .collect();
        std::fs::write(&path, npy_v2(dict, &data)).unwrap();
        let expected = array![[1.0, 2.0, 3.0], [4.0, 5.0, 6.0]];
        assert_eq!(read_real_npy(&path).unwrap(), expected);

        // The same for big-endian complex128 [[1+2i, 3+4i]] in Fortran order.
        let dict = "{'descr': '>c16', 'fortran_order': True, 'shape': (1, 2), }\n";
        let data: Vec<u8> = [1.0f64, 2.0, 3.0, 4.0]
            .iter()
            .flat_map(|v| v.to_be_bytes())
            .collect();
        std::fs::write(&path, npy_v2(dict, &data)).unwrap();
        assert_eq!(
            read_complex_npy(&path).unwrap(),
            array![[Complex64::new(1.0, 2.0), Complex64::new(3.0, 4.0)]]
        );
    }

    #[test]
    fn rejects_bad_files_with_clear_messages() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("bad.npy");
        let shown = path.display().to_string();
        let message = |err: Error| {
            assert!(matches!(err, Error::File { .. }), "{err:?}");
            let text = err.to_string();
            text.strip_prefix(&format!("{shown}: "))
                .unwrap_or_else(|| panic!("message does not name the file: {text}"))
                .to_string()
        };

        write_npy(&path, &array![[1i32, 2], [3, 4]]).unwrap();
        assert_eq!(
            message(read_complex_npy(&path).unwrap_err()),
            "unsupported dtype '<i4' (expected complex128, complex64, float64 or float32)"
        );
        assert_eq!(
            message(read_real_npy(&path).unwrap_err()),
            "unsupported dtype '<i4' (expected float64 or float32)"
        );

        write_npy(&path, &ndarray::Array3::<f64>::zeros((2, 2, 2))).unwrap();
        let expected = "expected a 2-D array (rows = y, columns = x), found 3-D";
        assert_eq!(message(read_complex_npy(&path).unwrap_err()), expected);
        assert_eq!(message(read_real_npy(&path).unwrap_err()), expected);

        write_real_npy(&path, &Array2::zeros((4, 4))).unwrap();
        let full = std::fs::read(&path).unwrap();
        std::fs::write(&path, &full[..full.len() - 28]).unwrap();
        let m = message(read_real_npy(&path).unwrap_err());
        assert!(m.starts_with("truncated file:"), "{m}");
        assert!(message(read_complex_npy(&path).unwrap_err()).starts_with("truncated file:"));
        std::fs::write(&path, &full[..40]).unwrap();
        assert_eq!(
            message(read_real_npy(&path).unwrap_err()),
            "truncated file: it ends inside the NPY header"
        );
        std::fs::write(&path, [&full[..], &[0u8; 8]].concat()).unwrap();
        let m = message(read_real_npy(&path).unwrap_err());
        assert!(m.starts_with("8 bytes follow the array data"), "{m}");

        write_real_npy(&path, &Array2::zeros((0, 4))).unwrap();
        assert_eq!(
            message(read_real_npy(&path).unwrap_err()),
            "array is empty (shape (0, 4))"
        );

        let dict = "{'descr': '<f8', 'fortran_order': False, 'shape': (1, 1), }\n";
        let mut bytes = npy_v2(dict, &[0; 8]);
        bytes[6] = 9; // format version 9.0 does not exist
        std::fs::write(&path, bytes).unwrap();
        let m = message(read_real_npy(&path).unwrap_err());
        assert!(m.starts_with("malformed or unsupported NPY header"), "{m}");
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
