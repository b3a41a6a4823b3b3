//! The one integration-test binary. Each module checks one area against
//! sources outside the project; every check names its source and states its
//! tolerance.

/// Command-line end-to-end tests: run the binary, check report.json and exit status.
mod cli;
/// Seeded mutation fuzzing of layouts through check and run.
mod fuzz;
/// Beam measurements (ISO 11146 widths, M², modes, Strehl, encircled energy).
mod measure;
/// Propagation engine against closed forms (modes, Gouy phase, Airy, Fresnel).
mod physics;
/// Output-folder safety under mistakes, signals and races.
mod safety;
