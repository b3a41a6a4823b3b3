//! # Conventions
//!
//! **Units.** SI inside: metres, watts, radians. `|U|²` is irradiance in
//! W/m²; power is `P = Σ|U|²·dx²`. Layout files carry explicit units and are
//! converted once, in [`crate::units`].
//!
//! **Phase sign.** Real field `Re{U·exp(−iωt)}`; a forward plane wave is
//! `exp(+ikz)`. Consequences: a diverging wave is `exp(+ik r²/(2R))` with
//! `R > 0`; a converging lens multiplies by `exp(−ik r²/(2f))`; an extra
//! optical path `W` multiplies by `exp(+ikW)`; a phase increasing along +x
//! steers light towards +x; `exp(+ilφ)` carries `+lħ` per photon about +z.
//! The carrier `exp(ikz)` is never stored: every reported phase is relative
//! to it, and the Gouy phase of a fundamental Gaussian appears as
//! `exp(−iψ)` with `ψ = atan(z/zR)`.
//!
//! **FFT sign and scaling.** The forward transform is rustfft's `Forward`
//! with kernel `exp(−2πi(fx·x + fy·y))`, unnormalised. The inverse is scaled
//! by `1/n²`; in the propagators this factor is folded into the transfer
//! function. Only [`crate::fft`] scales or centres.
//!
//! **Layout.** `Array2<Complex64>` with shape `(ny, nx)`, row-major; row
//! means y and column means x. Sample `[iy, ix]` sits at
//! `x = (ix − n/2)·dx`, `y = (iy − n/2)·dx` with integer division, so the
//! axis is at `[n/2, n/2]` for even and odd n, and row 0 is the most
//! negative y. PNG images are written with row 0 at the **top** and rows
//! flipped so that +y points up, as on a lab camera viewed from behind the
//! beam (looking along +z, +x to the right).
//!
//! **Frequency order.** Spectra are in FFT order: `fx[k] = k/L` for
//! `k < ceil(n/2)`, `(k − n)/L` after. The Nyquist bin of even n is
//! ambiguous in sign and should not be trusted. The centred transform
//! `fftshift(FFT(ifftshift(u)))` is computed by phase modulation in
//! [`crate::fft::forward_centred`], never by copying.
