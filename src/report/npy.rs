//! NumPy `.npy` files: complex field dumps and real arrays.
//!
//! Conventions: a field is written as a C-ordered (row-major) array of
//! little-endian complex128 (`'<c16'`) of shape `(n, n)`, indexed
//! `[iy, ix]` exactly like [`Field::values`]: row 0 is the most negative y,
//! sample `[iy, ix]` sits at `x = (ix − n/2)·dx`, `y = (iy − n/2)·dx`, and
//! `|U|²` is irradiance in W/m². Real arrays (for example irradiance) are
//! written as float64 (`'<f8'`) with the same C order and `[iy, ix]`
//! indexing. The grid spacing and wavelength are not in the file;
//! `report.json` carries them. In NumPy:
//!
//! ```text
//! u = np.load("focus_field.npy")      # complex128, shape (n, n), u[iy, ix]
//! irradiance_w_m2 = abs(u)**2
//! plt.imshow(irradiance_w_m2, origin="lower")   # origin="lower" puts +y up
//! ```
//!
//! The files are written with the `ndarray-npy` crate (NPY format version
//! 1.0, header padded to 64 bytes), readable by every NumPy since 1.0. The
//! reader for user files is in [`crate::input`].

use std::path::Path;

use ndarray::Array2;
use ndarray_npy::{write_npy, WriteNpyError};
use num_complex::Complex64;

use crate::error::{Error, Result};
use crate::field::Field;

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
    // `as_standard_layout` borrows when the array is already C-ordered, and
    // makes sure the file says `fortran_order: False` otherwise.
    write_npy(path, &values.as_standard_layout()).map_err(|e| write_error(path, e))
}

/// Writes a real array (for example irradiance in W/m²) as float64 in C
/// order, shape `(rows, cols)`, `[iy, ix]`.
///
/// # Errors
/// [`Error::Io`] if the file cannot be created or written.
pub fn write_real_npy(path: &Path, values: &Array2<f64>) -> Result<()> {
    write_npy(path, &values.as_standard_layout()).map_err(|e| write_error(path, e))
}

fn write_error(path: &Path, err: WriteNpyError) -> Error {
    match err {
        WriteNpyError::Io(source) => Error::Io {
            path: path.to_path_buf(),
            source,
        },
        other => Error::File {
            path: path.to_path_buf(),
            message: format!("cannot write NPY file: {other}"),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Grid;
    use ndarray_npy::read_npy;

    /// The NPY header of a written file, as text, after checking the magic,
    /// the version (1.0) and the 64-byte alignment of the data.
    fn header_of(bytes: &[u8]) -> String {
        assert_eq!(&bytes[..8], b"\x93NUMPY\x01\x00");
        let len = u16::from_le_bytes([bytes[8], bytes[9]]) as usize;
        assert_eq!((10 + len) % 64, 0, "data start at byte {}", 10 + len);
        String::from_utf8(bytes[10..10 + len].to_vec()).unwrap()
    }

    #[test]
    fn files_are_c_ordered_little_endian_complex128_and_float64() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("c.npy");
        let c = Array2::from_shape_fn((3, 5), |(i, j)| Complex64::new(i as f64, -(j as f64)));
        write_complex_npy(&path, &c).unwrap();
        let bytes = std::fs::read(&path).unwrap();
        let header = header_of(&bytes);
        assert!(header.contains("'descr': '<c16'"), "{header}");
        assert!(header.contains("'fortran_order': False"), "{header}");
        assert!(header.contains("'shape': (3, 5)"), "{header}");
        assert_eq!(bytes.len(), 10 + header.len() + 15 * 16);

        // A Fortran-ordered (transposed) array is still written in C order.
        let f = c.t().to_owned();
        assert!(!f.is_standard_layout());
        write_complex_npy(&path, &f).unwrap();
        let header = header_of(&std::fs::read(&path).unwrap());
        assert!(header.contains("'fortran_order': False"), "{header}");
        assert_eq!(read_npy::<_, Array2<Complex64>>(&path).unwrap(), f);

        let r = Array2::from_shape_fn((2, 7), |(i, j)| (i * 7 + j) as f64);
        write_real_npy(&path, &r).unwrap();
        let header = header_of(&std::fs::read(&path).unwrap());
        assert!(header.contains("'descr': '<f8'"), "{header}");
        assert!(header.contains("'shape': (2, 7)"), "{header}");
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
        let back: Array2<Complex64> = read_npy(&path).unwrap();
        assert_eq!(back, field.values);
        let real = field.irradiance();
        write_real_npy(&path, &real).unwrap();
        let back: Array2<f64> = read_npy(&path).unwrap();
        assert_eq!(back, real);
    }

    #[test]
    fn unwritable_path_is_an_io_error_naming_the_file() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("no_such_dir").join("f.npy");
        let err = write_real_npy(&path, &Array2::zeros((2, 2))).unwrap_err();
        assert!(
            matches!(&err, Error::Io { path: p, .. } if *p == path),
            "{err:?}"
        );
        assert!(err.to_string().contains("f.npy"), "{err}");
    }
}
