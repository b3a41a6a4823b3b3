//! Planned, parallel 2-D FFTs on square arrays.
//!
//! Conventions: the forward transform is rustfft's `Forward`, kernel
//! `exp(−2πi(fx·x + fy·y))`, unnormalised; [`Fft2::inverse`] scales by
//! `1/n²`, so forward then inverse returns the input. Output is in FFT order
//! (frequency 0 at index 0); this module is the only place where centring
//! phases are applied ([`centred_phase`]). Arrays are `(ny, nx)`, row-major.
//!
//! How it is fast: rows are transformed in parallel bands; the column pass
//! gathers strips of [`STRIP`] columns into a per-thread scratch buffer
//! (each column padded by one cache line so that power-of-two sizes do not
//! alias in the cache), transforms them there, optionally multiplies by a
//! transfer function while the strip is hot, and scatters back. Gather and
//! scatter move blocks of 4 rows, so every write into the strip buffer
//! fills a whole cache line of one column. Transfer functions are even in
//! `fx` and `fy` and passed as their `(n/2+1)²` quadrant, whose row
//! `min(kx, n−kx)` is column `kx` — read contiguously in the column pass.
//! [`Fft2::inverse`] scales by `1/n²` row by row inside the row pass;
//! [`Fft2::inverse_filtered_from`] gathers from a stored spectrum so that
//! a filtered copy costs no extra pass. Plans are cached per size and
//! scratch buffers per thread, so after the first call nothing is
//! allocated. Sums are formed per strip and then over strips in order,
//! so results do not depend on the number of threads.

use std::cell::RefCell;
use std::collections::HashMap;
use std::sync::{Arc, Mutex, OnceLock};

use ndarray::{Array2, ArrayView2, ArrayViewMut2, Axis};
use num_complex::Complex64;
use rayon::prelude::*;
use rustfft::{Fft, FftPlanner};

/// Columns gathered per strip in the column pass.
pub const STRIP: usize = 32;
/// Padding (in complex samples) after each gathered column: one 64-byte line.
const COLUMN_PAD: usize = 4;

/// A pair of planned 1-D transforms of length `n`, used along both axes.
pub struct Fft2 {
    n: usize,
    forward: Arc<dyn Fft<f64>>,
    inverse: Arc<dyn Fft<f64>>,
    scratch_len: usize,
}

impl std::fmt::Debug for Fft2 {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "Fft2 {{ n: {} }}", self.n)
    }
}

thread_local! {
    static FFT_SCRATCH: RefCell<Vec<Complex64>> = const { RefCell::new(Vec::new()) };
    static STRIP_SCRATCH: RefCell<Vec<Complex64>> = const { RefCell::new(Vec::new()) };
}

/// Runs `f` with a thread-local buffer of at least `len` samples.
fn with_buffer<R>(
    key: &'static std::thread::LocalKey<RefCell<Vec<Complex64>>>,
    len: usize,
    f: impl FnOnce(&mut [Complex64]) -> R,
) -> R {
    key.with(|cell| {
        let mut buf = cell.borrow_mut();
        if buf.len() < len {
            buf.resize(len, Complex64::new(0.0, 0.0));
        }
        f(&mut buf[..len])
    })
}

impl Fft2 {
    /// The cached transform pair for `n × n` arrays (planned on first use).
    pub fn for_size(n: usize) -> Arc<Fft2> {
        static CACHE: OnceLock<Mutex<HashMap<usize, Arc<Fft2>>>> = OnceLock::new();
        let cache = CACHE.get_or_init(|| Mutex::new(HashMap::new()));
        let mut map = cache.lock().unwrap_or_else(|p| p.into_inner());
        map.entry(n)
            .or_insert_with(|| {
                let mut planner = FftPlanner::<f64>::new();
                let forward = planner.plan_fft_forward(n);
                let inverse = planner.plan_fft_inverse(n);
                let scratch_len = forward
                    .get_inplace_scratch_len()
                    .max(inverse.get_inplace_scratch_len());
                Arc::new(Fft2 {
                    n,
                    forward,
                    inverse,
                    scratch_len,
                })
            })
            .clone()
    }

    /// Side length this transform is planned for.
    pub fn n(&self) -> usize {
        self.n
    }

    /// In-place forward 2-D FFT (unnormalised).
    ///
    /// # Panics
    /// If `data` is not `n × n` and contiguous in standard layout.
    pub fn forward(&self, data: &mut Array2<Complex64>) {
        self.rows(data, &self.forward);
        self.columns(data, None, Some(&self.forward), None, None);
    }

    /// In-place inverse 2-D FFT without the `1/n²` factor.
    ///
    /// # Panics
    /// As [`Fft2::forward`].
    pub fn inverse_unscaled(&self, data: &mut Array2<Complex64>) {
        self.columns(data, None, Some(&self.inverse), None, None);
        self.rows(data, &self.inverse);
    }

    /// In-place inverse 2-D FFT, scaled by `1/n²` (the scaling is applied
    /// in the row pass, while each band of rows is in cache).
    ///
    /// # Panics
    /// As [`Fft2::forward`].
    pub fn inverse(&self, data: &mut Array2<Complex64>) {
        self.columns(data, None, Some(&self.inverse), None, None);
        let scale = 1.0 / (self.n * self.n) as f64;
        self.rows_scaled(data, &self.inverse, Some(scale));
    }

    /// Fused convolution step with an *even* transfer function: forward
    /// FFT, multiply by `H`, inverse FFT. `H` must satisfy
    /// `H[ky][kx] = H[kx][ky] = H[n−ky][kx] = H[ky][n−kx]` (it depends only
    /// on `fx²` and `fy²`, as every propagator of a round-symmetric kernel
    /// does) and is passed as its `(n/2+1) × (n/2+1)` quadrant `quadrant`,
    /// indexed by `min(k, n−k)` on both axes, in FFT order and including
    /// the `1/n²` inverse scaling. Returns `Σ|F|²·(1 − n⁴|H|²)` over the
    /// spectrum `F`, i.e. `n²/dx²` times the power the transfer function
    /// removed (zero for an all-pass `H`).
    ///
    /// The multiply happens inside the column pass, between the forward and
    /// inverse column FFTs of each gathered strip; column `kx` of `H` is row
    /// `min(kx, n−kx)` of the quadrant, read contiguously.
    ///
    /// # Panics
    /// If `data` is not `n × n` or `quadrant` not `(n/2+1) × (n/2+1)`, or
    /// either is not contiguous.
    pub fn convolve(&self, data: &mut Array2<Complex64>, quadrant: &Array2<Complex64>) -> f64 {
        let n = self.n;
        let m = n / 2 + 1;
        assert_eq!(
            quadrant.dim(),
            (m, m),
            "transfer-function quadrant must be {m}x{m}"
        );
        let h = quadrant
            .as_slice()
            .expect("transfer function must be contiguous");
        let full = (n * n) as f64;
        let full2 = full * full;
        self.rows(data, &self.forward);
        let multiply = |ix: usize, column: &mut [Complex64]| -> f64 {
            let qx = ix.min(n - ix);
            let row = &h[qx * m..(qx + 1) * m];
            let (low, high) = column.split_at_mut(m.min(n));
            let mut lost = 0.0;
            for (v, &t) in low.iter_mut().zip(row) {
                lost += v.norm_sqr() * (1.0 - full2 * t.norm_sqr());
                *v *= t;
            }
            for (v, &t) in high.iter_mut().zip(row[1..=n - m.min(n)].iter().rev()) {
                lost += v.norm_sqr() * (1.0 - full2 * t.norm_sqr());
                *v *= t;
            }
            lost
        };
        let removed = self.columns(
            data,
            None,
            Some(&self.forward),
            Some(&multiply),
            Some(&self.inverse),
        );
        self.rows(data, &self.inverse);
        removed
    }

    /// Transforms every row in place, in parallel bands of rows.
    fn rows(&self, data: &mut Array2<Complex64>, fft: &Arc<dyn Fft<f64>>) {
        self.rows_scaled(data, fft, None);
    }

    /// [`Fft2::rows`], then multiplies each band by `scale` while it is in
    /// cache.
    fn rows_scaled(
        &self,
        data: &mut Array2<Complex64>,
        fft: &Arc<dyn Fft<f64>>,
        scale: Option<f64>,
    ) {
        let n = self.n;
        assert_eq!(data.dim(), (n, n), "array must be {n}x{n}");
        let slice = data
            .as_slice_mut()
            .expect("field arrays are contiguous in standard layout");
        let rows_per_band = (n / (4 * rayon::current_num_threads().max(1))).clamp(1, 64);
        slice.par_chunks_mut(n * rows_per_band).for_each(|band| {
            with_buffer(&FFT_SCRATCH, self.scratch_len, |scratch| match scale {
                None => fft.process_with_scratch(band, scratch),
                Some(scale) => {
                    // Row by row, so that the scaling finds the row in L1/L2.
                    for row in band.chunks_exact_mut(n) {
                        fft.process_with_scratch(row, scratch);
                        row.iter_mut().for_each(|v| *v *= scale);
                    }
                }
            });
        });
    }

    /// The column pass. For each strip of [`STRIP`] columns: gathers it
    /// (from `src` if given, else from `data`) into per-thread scratch,
    /// then for each column applies `first`, calls `middle(ix, column)`,
    /// applies `second` (each step only if given), and scatters the strip
    /// back into `data`. Returns the sum of `middle`'s results, summed per
    /// strip and then over strips in order (the same for any thread count).
    fn columns(
        &self,
        data: &mut Array2<Complex64>,
        src: Option<&Array2<Complex64>>,
        first: Option<&Arc<dyn Fft<f64>>>,
        middle: Option<&Middle<'_>>,
        second: Option<&Arc<dyn Fft<f64>>>,
    ) -> f64 {
        let n = self.n;
        assert_eq!(data.dim(), (n, n), "array must be {n}x{n}");
        let stride = n + COLUMN_PAD;
        let work = |strip_index: usize,
                    mut strip: ArrayViewMut2<Complex64>,
                    from: Option<ArrayView2<Complex64>>|
         -> f64 {
            let width = strip.ncols();
            with_buffer(&STRIP_SCRATCH, STRIP * stride, |buf| {
                match &from {
                    Some(from) => gather(from, buf, stride),
                    None => gather(&strip.view(), buf, stride),
                }
                let mut total = 0.0;
                with_buffer(&FFT_SCRATCH, self.scratch_len, |scratch| {
                    for c in 0..width {
                        let column = &mut buf[c * stride..c * stride + n];
                        if let Some(first) = first {
                            first.process_with_scratch(column, scratch);
                        }
                        if let Some(middle) = middle {
                            total += middle(strip_index * STRIP + c, column);
                        }
                        if let Some(second) = second {
                            second.process_with_scratch(column, scratch);
                        }
                    }
                });
                scatter(buf, &mut strip, stride);
                total
            })
        };
        let strips = data.axis_chunks_iter_mut(Axis(1), STRIP).into_par_iter();
        let sums: Vec<f64> = match src {
            Some(src) => {
                assert_eq!(src.dim(), (n, n), "source array must be {n}x{n}");
                strips
                    .zip(src.axis_chunks_iter(Axis(1), STRIP).into_par_iter())
                    .enumerate()
                    .map(|(i, (strip, from))| work(i, strip, Some(from)))
                    .collect()
            }
            None => strips
                .enumerate()
                .map(|(i, strip)| work(i, strip, None))
                .collect(),
        };
        sums.iter().sum()
    }

    /// Inverse 2-D FFT, without the `1/n²` factor, of `src` filtered by
    /// `filter` into `dst`: `filter(kx, column)` is called on each column
    /// of the spectrum (FFT order) after it is gathered from `src` and
    /// before its inverse FFT, so a multiply by a transfer function costs
    /// no pass of its own and `src` is left untouched. Returns the sum of
    /// `filter`'s results (per strip of columns, then strips in order).
    ///
    /// # Panics
    /// If `src` or `dst` are not `n × n` and contiguous.
    pub fn inverse_filtered_from(
        &self,
        src: &Array2<Complex64>,
        dst: &mut Array2<Complex64>,
        filter: &Middle<'_>,
    ) -> f64 {
        let total = self.columns(dst, Some(src), None, Some(filter), Some(&self.inverse));
        self.rows(dst, &self.inverse);
        total
    }
}

/// A per-column operation of the column pass: `(kx, column) -> partial sum`.
pub type Middle<'a> = dyn Fn(usize, &mut [Complex64]) -> f64 + Sync + 'a;

/// Rows handled together by [`gather`] and [`scatter`]: four complex f64
/// samples are one 64-byte cache line of a gathered column.
const ROW_BLOCK: usize = 4;

/// Copies a strip of columns into `buf`, column-major with `stride`.
///
/// Works on blocks of [`ROW_BLOCK`] rows so that each write into `buf`
/// fills a whole cache line of one gathered column.
fn gather(strip: &ArrayView2<Complex64>, buf: &mut [Complex64], stride: usize) {
    let width = strip.ncols();
    for (block_index, block) in strip.axis_chunks_iter(Axis(0), ROW_BLOCK).enumerate() {
        let iy = block_index * ROW_BLOCK;
        if block.nrows() == ROW_BLOCK {
            let r0 = row_slice(&block, 0);
            let r1 = row_slice(&block, 1);
            let r2 = row_slice(&block, 2);
            let r3 = row_slice(&block, 3);
            for (c, column) in buf.chunks_mut(stride).take(width).enumerate() {
                let dst = &mut column[iy..iy + ROW_BLOCK];
                dst[0] = r0[c];
                dst[1] = r1[c];
                dst[2] = r2[c];
                dst[3] = r3[c];
            }
        } else {
            for (r, row) in block.axis_iter(Axis(0)).enumerate() {
                for (c, v) in row.iter().enumerate() {
                    buf[c * stride + iy + r] = *v;
                }
            }
        }
    }
}

/// Row `r` of a block of a strip as a slice (rows of a standard-layout
/// array are contiguous).
fn row_slice<'a>(block: &'a ArrayView2<'_, Complex64>, r: usize) -> &'a [Complex64] {
    block
        .row(r)
        .to_slice()
        .expect("rows of a standard-layout array are contiguous")
}

/// Inverse of [`gather`].
fn scatter(buf: &[Complex64], strip: &mut ArrayViewMut2<Complex64>, stride: usize) {
    let width = strip.ncols();
    for (block_index, mut block) in strip.axis_chunks_iter_mut(Axis(0), ROW_BLOCK).enumerate() {
        let iy = block_index * ROW_BLOCK;
        if block.nrows() == ROW_BLOCK {
            let mut rows = block.outer_iter_mut().map(|row| {
                row.into_slice()
                    .expect("rows of a standard-layout array are contiguous")
            });
            let (r0, r1, r2, r3) = (
                rows.next().expect("4 rows"),
                rows.next().expect("4 rows"),
                rows.next().expect("4 rows"),
                rows.next().expect("4 rows"),
            );
            for (c, column) in buf.chunks(stride).take(width).enumerate() {
                let src = &column[iy..iy + ROW_BLOCK];
                r0[c] = src[0];
                r1[c] = src[1];
                r2[c] = src[2];
                r3[c] = src[3];
            }
        } else {
            for (r, mut row) in block.axis_iter_mut(Axis(0)).enumerate() {
                for (c, v) in row.iter_mut().enumerate() {
                    *v = buf[c * stride + iy + r];
                }
            }
        }
    }
}

/// Phase factors that turn the plain DFT into a centred transform along one
/// axis: with `c = n/2`, `FFTc[u][k] = p[k]·FFT[p·u][k]·exp(−2πi·c²/n)`,
/// where `p[j] = exp(2πi·j·c/n)` and both arrays use centred indices
/// (`j = 0` is the most negative coordinate). For even `n`, `p[j] = (−1)^j`.
/// Returns `(p, global)` with `global = exp(−2πi·c²/n)`.
pub fn centred_phase(n: usize) -> (Vec<Complex64>, Complex64) {
    let c = (n / 2) as f64;
    let nf = n as f64;
    let p = (0..n)
        .map(|j| {
            // Reduce j·c modulo n before converting to an angle (exact integers).
            let m = ((j * (n / 2)) % n) as f64;
            Complex64::from_polar(1.0, 2.0 * std::f64::consts::PI * m / nf)
        })
        .collect();
    let m = ((n / 2) * (n / 2) % n) as f64;
    let _ = c;
    let global = Complex64::from_polar(1.0, -2.0 * std::f64::consts::PI * m / nf);
    (p, global)
}

/// Direction of a transform.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Direction {
    /// Kernel `exp(−2πi·f·x)`.
    Forward,
    /// Kernel `exp(+2πi·f·x)`, unnormalised.
    Backward,
}

/// Centred transform `fftshift(FFT(ifftshift(u)))` of a square array, in
/// place and unnormalised: the sample on the grid axis maps to frequency 0
/// at the array centre. `Backward` uses the conjugate kernel without the
/// `1/n²` factor.
pub fn transform_centred(data: &mut Array2<Complex64>, direction: Direction) {
    let n = data.nrows();
    let (mut p, mut global) = centred_phase(n);
    if direction == Direction::Backward {
        p.iter_mut().for_each(|v| *v = v.conj());
        global = global.conj();
    }
    modulate(data, &p, Complex64::new(1.0, 0.0));
    let plan = Fft2::for_size(n);
    match direction {
        Direction::Forward => plan.forward(data),
        Direction::Backward => plan.inverse_unscaled(data),
    }
    modulate(data, &p, global * global);
}

/// [`transform_centred`] with separable factors merged into its centring
/// passes: computes `post[iy]·post[ix]·post_scale · T(pre[iy]·pre[ix]·src)`
/// into `data`, where `T` is the centred transform in `direction`. `src`
/// (the same shape as `data`) is read instead of `data` if given, so a copy
/// costs no extra pass. Two element-wise passes in total, one before and
/// one after the FFT, instead of four.
///
/// # Panics
/// If `pre`, `post` or `src` do not match the size of `data`.
pub fn transform_centred_separable(
    data: &mut Array2<Complex64>,
    src: Option<&Array2<Complex64>>,
    direction: Direction,
    pre: &[Complex64],
    post: &[Complex64],
    post_scale: Complex64,
) {
    let n = data.nrows();
    assert!(
        pre.len() == n && post.len() == n,
        "factors must have n = {n} samples"
    );
    let (mut p, mut global) = centred_phase(n);
    if direction == Direction::Backward {
        p.iter_mut().for_each(|v| *v = v.conj());
        global = global.conj();
    }
    let pre: Vec<Complex64> = pre.iter().zip(&p).map(|(a, b)| a * b).collect();
    let post: Vec<Complex64> = post.iter().zip(&p).map(|(a, b)| a * b).collect();
    match src {
        Some(src) => {
            assert_eq!(src.dim(), data.dim(), "source must match the destination");
            data.axis_iter_mut(Axis(0))
                .into_par_iter()
                .zip(src.axis_iter(Axis(0)))
                .enumerate()
                .for_each(|(iy, (mut row, from))| {
                    let py = pre[iy];
                    for ((v, s), px) in row.iter_mut().zip(from.iter()).zip(&pre) {
                        *v = s * (py * px);
                    }
                });
        }
        None => modulate(data, &pre, Complex64::new(1.0, 0.0)),
    }
    let plan = Fft2::for_size(n);
    match direction {
        Direction::Forward => plan.forward(data),
        Direction::Backward => plan.inverse_unscaled(data),
    }
    modulate(data, &post, global * global * post_scale);
}

/// Centred forward transform; see [`transform_centred`].
pub fn forward_centred(data: &mut Array2<Complex64>) {
    transform_centred(data, Direction::Forward);
}

/// Multiplies `data[[iy, ix]]` by `p[iy]·p[ix]·scale`, in parallel.
pub fn modulate(data: &mut Array2<Complex64>, p: &[Complex64], scale: Complex64) {
    data.axis_iter_mut(Axis(0))
        .into_par_iter()
        .enumerate()
        .for_each(|(iy, mut row)| {
            let py = p[iy] * scale;
            for (v, px) in row.iter_mut().zip(p) {
                *v *= py * px;
            }
        });
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn matches_naive_dft_for_awkward_sizes() {
        // Source: definition of the DFT (common practice). Tolerance 1e-10
        // relative to the largest coefficient: f64 round-off over n² terms.
        for n in [2, 3, 8, 15, 33, 40, 64] {
            let a = crate::reference::seeded_samples(n, 42 + n as u64);
            let mut b = a.clone();
            Fft2::for_size(n).forward(&mut b);
            let r = crate::reference::naive_dft2(&a);
            let scale = r.iter().map(|v| v.norm()).fold(0.0, f64::max);
            for (x, y) in b.iter().zip(r.iter()) {
                assert!((x - y).norm() <= 1e-10 * scale, "n = {n}: {x} vs {y}");
            }
            Fft2::for_size(n).inverse(&mut b);
            for (x, y) in b.iter().zip(a.iter()) {
                assert!((x - y).norm() <= 1e-12, "round trip n = {n}");
            }
        }
    }

    #[test]
    fn centred_transform_puts_axis_at_centre() {
        // A delta at the axis has a flat, real spectrum: FFTc of δ(x) is 1.
        for n in [8, 9, 16] {
            let mut a = Array2::zeros((n, n));
            a[[n / 2, n / 2]] = Complex64::new(1.0, 0.0);
            forward_centred(&mut a);
            for v in a.iter() {
                assert!(
                    (v - Complex64::new(1.0, 0.0)).norm() < 1e-12,
                    "n = {n}: {v}"
                );
            }
            // A plane wave at one frequency bin lands at centre + 1.
            let mut b = Array2::from_shape_fn((n, n), |(_, ix)| {
                let x = ix as f64 - (n / 2) as f64;
                Complex64::from_polar(1.0, 2.0 * std::f64::consts::PI * x / n as f64)
            });
            forward_centred(&mut b);
            assert!((b[[n / 2, n / 2 + 1]].norm() - (n * n) as f64).abs() < 1e-9);
        }
    }
}
