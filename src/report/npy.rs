//! NumPy `.npy` files: complex field dumps and real arrays.
//!
//! Conventions: a field is written as a C-ordered (row-major) array of
//! little-endian complex128 (`'<c16'`) of shape `(n, n)`, indexed
//! `[iy, ix]` exactly like [`Field::values`]: row 0 is the most negative y,
//! sample `[iy, ix]` sits at `x = (ix − n/2)·dx`, `y = (iy − n/2)·dx`, and
//! `|U|²` is irradiance in W/m². The grid spacing and wavelength are not in
//! the file; `report.json` carries them. In NumPy:
//!
//! ```text
//! u = np.load("focus_field.npy")      # complex128, shape (n, n), u[iy, ix]
//! irradiance_w_m2 = abs(u)**2
//! plt.imshow(irradiance_w_m2, origin="lower")   # origin="lower" puts +y up
//! ```
//!
//! The format is NPY version 1.0 (header padded to 64 bytes), readable by
//! every NumPy since 1.0. The reader (used by [`crate::input`]) accepts
//! versions 1.0, 2.0 and 3.0, either byte order, C or Fortran order, and the
//! dtypes float32, float64, complex64 and complex128. The codec is written
//! here rather than taken from `ndarray-npy` so that every way a user file
//! can be wrong gets a message naming the file and the problem.

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::Path;

use ndarray::{Array2, ShapeBuilder};
use num_complex::Complex64;

use crate::error::{Error, Result};
use crate::field::Field;

const MAGIC: &[u8; 6] = b"\x93NUMPY";

/// Writes the field's samples as complex128, shape `(n, n)`, `[iy, ix]`.
///
/// # Errors
/// [`Error::Io`] if the file cannot be created or written.
///
/// ```
/// use beamwright::{Field, Grid, report::npy::write_field_npy, input::read_complex_npy};
/// use num_complex::Complex64;
/// let grid = Grid::new(4, 1e-5).unwrap();
/// let field = Field::from_fn(grid, 1064e-9, |x, y| Complex64::new(x, y)).unwrap();
/// let path = std::env::temp_dir().join("beamwright_doc_field.npy");
/// write_field_npy(&path, &field).unwrap();
/// assert_eq!(read_complex_npy(&path).unwrap(), field.values);
/// # std::fs::remove_file(&path).unwrap();
/// ```
pub fn write_field_npy(path: &Path, field: &Field) -> Result<()> {
    write_complex_npy(path, &field.values)
}

/// Writes a complex array as complex128 in C order, shape `(rows, cols)`.
///
/// # Errors
/// [`Error::Io`] if the file cannot be created or written.
pub fn write_complex_npy(path: &Path, values: &Array2<Complex64>) -> Result<()> {
    let (rows, cols) = values.dim();
    write_with(path, "<c16", rows, cols, |out| {
        for row in values.rows() {
            let mut buf = Vec::with_capacity(cols * 16);
            for v in row.iter() {
                buf.extend_from_slice(&v.re.to_le_bytes());
                buf.extend_from_slice(&v.im.to_le_bytes());
            }
            out.write_all(&buf)?;
        }
        Ok(())
    })
}

/// Writes a real array (for example irradiance in W/m²) as float64 in C
/// order, shape `(rows, cols)`, `[iy, ix]`.
///
/// # Errors
/// [`Error::Io`] if the file cannot be created or written.
pub fn write_real_npy(path: &Path, values: &Array2<f64>) -> Result<()> {
    let (rows, cols) = values.dim();
    write_with(path, "<f8", rows, cols, |out| {
        for row in values.rows() {
            let mut buf = Vec::with_capacity(cols * 8);
            for v in row.iter() {
                buf.extend_from_slice(&v.to_le_bytes());
            }
            out.write_all(&buf)?;
        }
        Ok(())
    })
}

fn write_with(
    path: &Path,
    descr: &str,
    rows: usize,
    cols: usize,
    body: impl FnOnce(&mut BufWriter<File>) -> std::io::Result<()>,
) -> Result<()> {
    let io = |source| Error::Io {
        path: path.to_path_buf(),
        source,
    };
    let file = File::create(path).map_err(io)?;
    let mut out = BufWriter::new(file);
    out.write_all(&header_bytes(descr, rows, cols))
        .map_err(io)?;
    body(&mut out).map_err(io)?;
    out.flush().map_err(io)?;
    Ok(())
}

/// NPY 1.0 header: magic, version, little-endian u16 length, then the dict
/// padded with spaces and a final newline so the data starts on a multiple
/// of 64 bytes (the NPY specification asks for 64-byte alignment).
fn header_bytes(descr: &str, rows: usize, cols: usize) -> Vec<u8> {
    let mut dict =
        format!("{{'descr': '{descr}', 'fortran_order': False, 'shape': ({rows}, {cols}), }}");
    let unpadded = MAGIC.len() + 2 + 2 + dict.len() + 1;
    let pad = (64 - unpadded % 64) % 64;
    dict.push_str(&" ".repeat(pad));
    dict.push('\n');
    let mut out = Vec::with_capacity(unpadded + pad);
    out.extend_from_slice(MAGIC);
    out.extend_from_slice(&[1, 0]);
    out.extend_from_slice(&(dict.len() as u16).to_le_bytes());
    out.extend_from_slice(dict.as_bytes());
    out
}

/// Element type of an NPY array that beamwright can read.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NpyDtype {
    /// 32-bit float (`f4`).
    Float32,
    /// 64-bit float (`f8`).
    Float64,
    /// Two 32-bit floats (`c8`).
    Complex64,
    /// Two 64-bit floats (`c16`).
    Complex128,
}

impl NpyDtype {
    /// NumPy's name for the type (`"float64"`, ...).
    pub fn name(self) -> &'static str {
        match self {
            NpyDtype::Float32 => "float32",
            NpyDtype::Float64 => "float64",
            NpyDtype::Complex64 => "complex64",
            NpyDtype::Complex128 => "complex128",
        }
    }
    fn item_bytes(self) -> usize {
        match self {
            NpyDtype::Float32 => 4,
            NpyDtype::Float64 | NpyDtype::Complex64 => 8,
            NpyDtype::Complex128 => 16,
        }
    }
    fn is_complex(self) -> bool {
        matches!(self, NpyDtype::Complex64 | NpyDtype::Complex128)
    }
}

/// A 2-D array read from an NPY file, widened to f64 precision.
#[derive(Debug, Clone, PartialEq)]
pub enum NpyArray {
    /// A real array (file dtype float32 or float64).
    Real(Array2<f64>, NpyDtype),
    /// A complex array (file dtype complex64 or complex128).
    Complex(Array2<Complex64>, NpyDtype),
}

/// Parses the bytes of a 2-D NPY file. Non-finite values are kept (the
/// callers in [`crate::input`] count them); `path` is only used in messages.
///
/// # Errors
/// [`Error::File`] naming `path` if the bytes are not an NPY file, the dtype
/// is not float32/float64/complex64/complex128, the array is not 2-D or is
/// empty, or the data are shorter or longer than the header says.
pub fn parse_npy(path: &Path, bytes: &[u8]) -> Result<NpyArray> {
    let fail = |message: String| Error::File {
        path: path.to_path_buf(),
        message,
    };
    if bytes.len() < 10 || &bytes[..6] != MAGIC {
        return Err(fail(
            "not an NPY file (it does not start with the NumPy magic bytes \\x93NUMPY; save arrays with numpy.save)".into(),
        ));
    }
    let major = bytes[6];
    let (header_len, start) = match major {
        1 => (u16::from_le_bytes([bytes[8], bytes[9]]) as usize, 10usize),
        2 | 3 if bytes.len() >= 12 => (
            u32::from_le_bytes([bytes[8], bytes[9], bytes[10], bytes[11]]) as usize,
            12,
        ),
        _ => {
            return Err(fail(format!(
                "unsupported NPY format version {major}.{} (expected 1.0, 2.0 or 3.0)",
                bytes[7]
            )))
        }
    };
    let data_start = start
        .checked_add(header_len)
        .filter(|&end| end <= bytes.len())
        .ok_or_else(|| {
            fail(format!(
                "NPY header of {header_len} bytes runs past the end of the file"
            ))
        })?;
    let header = std::str::from_utf8(&bytes[start..data_start])
        .map_err(|_| fail("NPY header is not text".into()))?;
    let (descr, fortran_order, shape) = parse_header(header)
        .map_err(|m| fail(format!("malformed NPY header {:?}: {m}", header.trim_end())))?;

    let (little_endian, dtype) = parse_descr(&descr).ok_or_else(|| {
        fail(format!(
            "unsupported dtype '{descr}': expected float64 or complex128 (float32 and complex64 are also accepted)"
        ))
    })?;
    let (rows, cols) = match shape.as_slice() {
        [r, c] => (*r, *c),
        _ => {
            return Err(fail(format!(
                "array is {}-D with shape {}: expected a 2-D array (rows = y, columns = x)",
                shape.len(),
                shape_text(&shape)
            )))
        }
    };
    if rows == 0 || cols == 0 {
        return Err(fail(format!(
            "array is empty (shape {})",
            shape_text(&shape)
        )));
    }
    let expected = rows
        .checked_mul(cols)
        .and_then(|n| n.checked_mul(dtype.item_bytes()))
        .ok_or_else(|| fail(format!("shape {} is too large", shape_text(&shape))))?;
    let data = &bytes[data_start..];
    if data.len() != expected {
        return Err(fail(format!(
            "header says shape {} of {} ({expected} bytes) but {} bytes of data follow{}",
            shape_text(&shape),
            dtype.name(),
            data.len(),
            if data.len() < expected {
                " (truncated file?)"
            } else {
                ""
            }
        )));
    }

    let read_f = |chunk: &[u8]| -> f64 {
        match chunk.len() {
            4 => {
                let b = [chunk[0], chunk[1], chunk[2], chunk[3]];
                (if little_endian {
                    f32::from_le_bytes(b)
                } else {
                    f32::from_be_bytes(b)
                }) as f64
            }
            _ => {
                let mut b = [0u8; 8];
                b.copy_from_slice(&chunk[..8]);
                if little_endian {
                    f64::from_le_bytes(b)
                } else {
                    f64::from_be_bytes(b)
                }
            }
        }
    };
    let shape2 = (rows, cols).set_f(fortran_order);
    let array = if dtype.is_complex() {
        let half = dtype.item_bytes() / 2;
        let flat: Vec<Complex64> = data
            .chunks_exact(2 * half)
            .map(|c| Complex64::new(read_f(&c[..half]), read_f(&c[half..])))
            .collect();
        let a = Array2::from_shape_vec(shape2, flat)
            .map_err(|e| fail(format!("cannot arrange data as {rows}x{cols}: {e}")))?;
        NpyArray::Complex(a.as_standard_layout().into_owned(), dtype)
    } else {
        let flat: Vec<f64> = data.chunks_exact(dtype.item_bytes()).map(read_f).collect();
        let a = Array2::from_shape_vec(shape2, flat)
            .map_err(|e| fail(format!("cannot arrange data as {rows}x{cols}: {e}")))?;
        NpyArray::Real(a.as_standard_layout().into_owned(), dtype)
    };
    Ok(array)
}

fn shape_text(shape: &[usize]) -> String {
    match shape {
        [one] => format!("({one},)"),
        _ => format!(
            "({})",
            shape
                .iter()
                .map(|s| s.to_string())
                .collect::<Vec<_>>()
                .join(", ")
        ),
    }
}

/// Returns (little endian, dtype) for descriptors like `<f8`, `>c16`, `=f4`.
fn parse_descr(descr: &str) -> Option<(bool, NpyDtype)> {
    let (order, kind) = match descr.as_bytes().first()? {
        b'<' => (Some(true), &descr[1..]),
        b'>' => (Some(false), &descr[1..]),
        b'=' | b'|' => (None, &descr[1..]),
        _ => (None, descr),
    };
    let dtype = match kind {
        "f4" => NpyDtype::Float32,
        "f8" => NpyDtype::Float64,
        "c8" => NpyDtype::Complex64,
        "c16" => NpyDtype::Complex128,
        _ => return None,
    };
    Some((order.unwrap_or(cfg!(target_endian = "little")), dtype))
}

/// Parses NumPy's header dict, e.g.
/// `{'descr': '<c16', 'fortran_order': False, 'shape': (4, 4), }`.
fn parse_header(header: &str) -> std::result::Result<(String, bool, Vec<usize>), String> {
    let value_after = |key: &str| -> std::result::Result<&str, String> {
        let at = header
            .find(&format!("'{key}'"))
            .or_else(|| header.find(&format!("\"{key}\"")))
            .ok_or_else(|| format!("no '{key}' key"))?;
        let rest = &header[at + key.len() + 2..];
        let rest = rest.trim_start();
        let rest = rest
            .strip_prefix(':')
            .ok_or_else(|| format!("no ':' after '{key}'"))?;
        Ok(rest.trim_start())
    };
    let descr_text = value_after("descr")?;
    let quote = descr_text.chars().next().unwrap_or(' ');
    if quote != '\'' && quote != '"' {
        return Err("'descr' is not a simple type (structured arrays are not supported)".into());
    }
    let descr_end = descr_text[1..]
        .find(quote)
        .ok_or("unterminated 'descr' string")?;
    let descr = descr_text[1..1 + descr_end].to_string();

    let fortran_text = value_after("fortran_order")?;
    let fortran_order = if fortran_text.starts_with("True") {
        true
    } else if fortran_text.starts_with("False") {
        false
    } else {
        return Err("'fortran_order' is neither True nor False".into());
    };

    let shape_text = value_after("shape")?;
    let shape_text = shape_text
        .strip_prefix('(')
        .ok_or("'shape' is not a tuple")?;
    let close = shape_text.find(')').ok_or("unterminated 'shape' tuple")?;
    let shape = shape_text[..close]
        .split(',')
        .map(str::trim)
        .filter(|s| !s.is_empty())
        .map(|s| {
            s.trim_end_matches('L')
                .parse::<usize>()
                .map_err(|_| format!("bad dimension '{s}' in 'shape'"))
        })
        .collect::<std::result::Result<Vec<_>, _>>()?;
    Ok((descr, fortran_order, shape))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Grid;

    #[test]
    fn header_is_aligned_and_parsable() {
        for (r, c) in [(1, 1), (7, 3), (1024, 1024), (123456, 7)] {
            let h = header_bytes("<c16", r, c);
            assert_eq!(h.len() % 64, 0, "header for {r}x{c} is {} bytes", h.len());
            assert_eq!(*h.last().unwrap(), b'\n');
            let text = std::str::from_utf8(&h[10..]).unwrap();
            assert_eq!(
                parse_header(text).unwrap(),
                ("<c16".into(), false, vec![r, c])
            );
        }
    }

    #[test]
    fn field_round_trip_is_exact() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("f.npy");
        let grid = Grid::new(6, 1e-5).unwrap();
        let field = Field::from_fn(grid, 1e-6, |x, y| {
            Complex64::new(x.sin() * 1e3, 1.0 / (1.0 + y))
        })
        .unwrap();
        write_field_npy(&path, &field).unwrap();
        let bytes = std::fs::read(&path).unwrap();
        match parse_npy(&path, &bytes).unwrap() {
            NpyArray::Complex(a, NpyDtype::Complex128) => assert_eq!(a, field.values),
            other => panic!("unexpected {other:?}"),
        }
        let real = field.irradiance();
        write_real_npy(&path, &real).unwrap();
        let bytes = std::fs::read(&path).unwrap();
        assert_eq!(
            parse_npy(&path, &bytes).unwrap(),
            NpyArray::Real(real, NpyDtype::Float64)
        );
    }

    #[test]
    fn reads_big_endian_fortran_order_and_version_2() {
        // A 2x3 float32 array [[1,2,3],[4,5,6]] stored big-endian in Fortran
        // order (columns first) with a version 2.0 header.
        let dict = "{'descr': '>f4', 'fortran_order': True, 'shape': (2, 3), }\n";
        let mut bytes = Vec::new();
        bytes.extend_from_slice(MAGIC);
        bytes.extend_from_slice(&[2, 0]);
        bytes.extend_from_slice(&(dict.len() as u32).to_le_bytes());
        bytes.extend_from_slice(dict.as_bytes());
        for v in [1.0f32, 4.0, 2.0, 5.0, 3.0, 6.0] {
            bytes.extend_from_slice(&v.to_be_bytes());
        }
        let a = parse_npy(Path::new("x.npy"), &bytes).unwrap();
        let expected = ndarray::array![[1.0, 2.0, 3.0], [4.0, 5.0, 6.0]];
        assert_eq!(a, NpyArray::Real(expected, NpyDtype::Float32));
    }

    #[test]
    fn rejects_bad_files_with_clear_messages() {
        let p = Path::new("bad.npy");
        let msg = |bytes: &[u8]| parse_npy(p, bytes).unwrap_err().to_string();
        assert!(msg(b"hello world, not numpy").contains("not an NPY file"));
        let int_header = header_bytes("<i4", 2, 2);
        let m = msg(&[int_header.clone(), vec![0; 16]].concat());
        assert!(m.starts_with("bad.npy: unsupported dtype '<i4'"), "{m}");
        let mut three_d = header_bytes("<f8", 2, 2);
        let text = String::from_utf8(three_d[10..].to_vec())
            .unwrap()
            .replace("(2, 2)", "(2, 2, 2)");
        three_d.truncate(10);
        three_d.extend_from_slice(text.as_bytes());
        three_d[8..10].copy_from_slice(&(text.len() as u16).to_le_bytes());
        let m = msg(&[three_d, vec![0; 64]].concat());
        assert!(m.contains("array is 3-D with shape (2, 2, 2)"), "{m}");
        let m = msg(&[header_bytes("<f8", 4, 4), vec![0; 100]].concat());
        assert!(
            m.contains("128 bytes) but 100 bytes of data follow (truncated file?)"),
            "{m}"
        );
        let m = msg(&header_bytes("<f8", 0, 4));
        assert!(m.contains("array is empty"), "{m}");
    }
}
