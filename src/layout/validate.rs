//! Turns a parsed layout into a [`Plan`]: units into SI, keys checked per
//! element kind, files read, grids tracked, methods chosen.
//!
//! Conventions: every error is an [`Error::Layout`] naming the file, the
//! line where known, and the key path (`element[3].radius`), with the unit
//! or choices expected. File paths in a layout are relative to the layout
//! file's directory.

use std::path::{Path, PathBuf};

use ndarray::Array2;
use num_complex::Complex64;
use toml::Spanned;

use super::plan::{ModesSpec, Operation, Plan, ProbeSpec, Source, Step};
use super::schema::{ElementEntry, LayoutFile, SourceSection, TermEntry, Q};
use crate::beams::{GaussianBeam, Mode, ModeShape, Superposition};
use crate::error::{Error, Result};
use crate::grid::Grid;
use crate::measure::{Basis, CausticOptions};
use crate::optics::{
    Aberration, Aperture, ApertureShape, LensModel, Mask, MaskKind, ThinLens, Tilt, Vortex,
};
use crate::propagate::{resolve_method, FresnelSingleFft, Method};
use crate::units::{Angle, Length, Power, Wavefront};

/// Element kinds accepted in `[[element]]`.
pub const ELEMENT_KINDS: &[&str] = &[
    "space",
    "aperture",
    "lens",
    "aberration",
    "vortex",
    "tilt",
    "mask",
    "probe",
];

/// Keys each element kind accepts (besides `kind` and `name`).
fn allowed_keys(kind: &str) -> &'static [&'static str] {
    match kind {
        "space" => &["length", "method"],
        "aperture" => &[
            "shape", "radius", "width", "height", "inner", "outer", "offset", "invert",
        ],
        "lens" => &["focal_length", "model"],
        "aberration" => &["radius", "zernike", "offset"],
        "vortex" => &["charge", "offset"],
        "tilt" => &["x", "y"],
        "mask" => &["file", "type"],
        "probe" => &["save", "modes", "caustic", "strehl"],
        _ => &[],
    }
}

/// Reads and validates a layout file.
///
/// # Errors
/// [`Error::Io`] if the file cannot be read; [`Error::Layout`] for anything
/// wrong inside it.
pub fn load(path: &Path) -> Result<Plan> {
    use std::io::Read;
    let io = |source| Error::Io {
        path: path.to_path_buf(),
        source,
    };
    let mut bytes = Vec::new();
    std::fs::File::open(path)
        .map_err(io)?
        .take(MAX_LAYOUT_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(io)?;
    if bytes.len() as u64 > MAX_LAYOUT_BYTES {
        return Err(Error::File {
            path: path.to_path_buf(),
            message: format!(
                "larger than {} KiB; a layout is a short TOML text (is this the right file?)",
                MAX_LAYOUT_BYTES / 1024
            ),
        });
    }
    let text = String::from_utf8(bytes).map_err(|e| {
        let at = e.utf8_error().valid_up_to();
        let line = e.as_bytes()[..at].iter().filter(|&&b| b == b'\n').count() + 1;
        Error::Layout {
            path: path.to_path_buf(),
            line: Some(line),
            message: format!(
                "not valid UTF-8 text (first bad byte at offset {at}); save the layout as UTF-8"
            ),
        }
    })?;
    parse(&text, path)
}

/// Largest length accepted anywhere in a layout, metres: far beyond any
/// optical layout, small enough that squares and products of lengths stay
/// finite.
pub const MAX_LENGTH_M: f64 = 1e12;

/// Largest source power, watts (above the peak power of any laser; keeps
/// irradiances on the finest grid finite).
pub const MAX_POWER_W: f64 = 1e18;

/// Longest probe name: it becomes part of file names.
pub const MAX_PROBE_NAME_CHARS: usize = 64;

/// Largest layout file read, bytes (layouts are a few kilobytes; this
/// stops `check /dev/zero` from reading until memory runs out).
pub const MAX_LAYOUT_BYTES: u64 = 1 << 20;

/// Validates layout text as if read from `path` (used for messages and to
/// resolve relative file names).
///
/// # Errors
/// [`Error::Layout`] for anything wrong in the text.
pub fn parse(text: &str, path: &Path) -> Result<Plan> {
    let ctx = Ctx {
        text,
        path,
        inputs: std::cell::RefCell::new(Vec::new()),
    };
    let file: LayoutFile = toml::from_str(text).map_err(|e| {
        let (line, message) = ctx.describe_toml_error(&e);
        Error::Layout {
            path: path.to_path_buf(),
            line,
            message: crate::error::shorten(&message),
        }
    })?;
    ctx.plan(file)
}

struct Ctx<'a> {
    text: &'a str,
    path: &'a Path,
    /// Every input file the layout names, in order of appearance.
    inputs: std::cell::RefCell<Vec<PathBuf>>,
}

impl Ctx<'_> {
    /// Rewrites a TOML/serde error as `key.path: message` in the words of
    /// this format (one line, units and choices named).
    fn describe_toml_error(&self, e: &toml::de::Error) -> (Option<usize>, String) {
        let raw = e
            .message()
            .lines()
            .map(str::trim)
            .filter(|l| !l.is_empty())
            .collect::<Vec<_>>()
            .join("; ");
        let Some(span) = e.span() else {
            return (None, raw);
        };
        let line = self.line_of(span.start);
        let key = self.key_path_at(span.start);
        let last_key = key.rsplit('.').next().unwrap_or("").to_string();
        let message = if raw.starts_with("missing unit") {
            let number = raw
                .split("e.g. \"")
                .nth(1)
                .and_then(|t| t.split_whitespace().next())
                .map(crate::error::echo)
                .unwrap_or_else(|| "1".to_string());
            let unit = if key.contains("zernike.") {
                "wave"
            } else {
                match last_key.as_str() {
                    "wavelength" => "nm",
                    "power" => "W",
                    "x" | "y" if key.starts_with("element") => "mrad",
                    _ => "mm",
                }
            };
            format!("missing unit: write it as a string with a unit, e.g. \"{number} {unit}\"")
        } else if let Some(rest) = raw.strip_prefix("unknown field `") {
            let name = rest.split('`').next().unwrap_or("");
            let mut choices: Vec<&str> = rest
                .split_once("expected ")
                .map(|(_, l)| {
                    l.trim_start_matches("one of ")
                        .split(", ")
                        .flat_map(|c| c.split(" or "))
                        .map(|c| c.trim_matches(['`', ' ']))
                        .filter(|c| !c.is_empty())
                        .collect()
                })
                .unwrap_or_default();
            // Directly inside an element, offer only the keys of its kind
            // (inside its inline tables, serde's list is the right one).
            let in_element_table = key.starts_with("element[") && !key.contains('.');
            if let (true, Some(kind)) = (in_element_table, self.element_kind_at(span.start)) {
                let allowed = allowed_keys(kind);
                if !allowed.is_empty() {
                    choices = ["kind", "name"]
                        .into_iter()
                        .chain(allowed.iter().copied())
                        .collect();
                }
            }
            let hint = closest(name, &choices)
                .map(|c| format!(" (did you mean '{c}'?)"))
                .unwrap_or_default();
            let name = crate::error::echo(name);
            if choices.is_empty() {
                format!("unknown key '{name}'; this table takes no such key")
            } else {
                format!(
                    "unknown key '{name}'{hint}; keys allowed here: {}",
                    choices.join(", ")
                )
            }
        } else if let Some(rest) = raw.strip_prefix("missing field `") {
            format!("missing key '{}'", rest.split('`').next().unwrap_or(""))
        } else if raw.starts_with("invalid type:") {
            let found = raw
                .trim_start_matches("invalid type: ")
                .split(", expected")
                .next()
                .unwrap_or("")
                .replace('`', "");
            let expected = match raw.rsplit("expected ").next().unwrap_or("") {
                "i64" => "an integer".to_string(),
                "a boolean" | "bool" => "true or false".to_string(),
                other => other.replace('`', ""),
            };
            format!("expected {expected}, found {found}")
        } else if let Some(rest) = raw.strip_prefix("invalid length ") {
            let found = rest.split(',').next().unwrap_or("?");
            format!("expected two values [x, y], found {found}")
        } else if raw.is_empty() {
            "a value is missing after '=' (write it, e.g. \"1064 nm\")".to_string()
        } else {
            raw
        };
        let message = if key.is_empty() {
            message
        } else {
            format!("{key}: {message}")
        };
        (Some(line), message)
    }

    /// The `kind` written in the `[[element]]` table that contains byte `at`.
    fn element_kind_at(&self, at: usize) -> Option<&'static str> {
        let start = self.text[..at.min(self.text.len())].rfind("[[element]]")?;
        let rest = &self.text[start + "[[element]]".len()..];
        let end = rest.find("\n[").unwrap_or(rest.len());
        rest[..end].lines().find_map(|l| {
            let (k, v) = l.split_once('=')?;
            if k.trim() != "kind" {
                return None;
            }
            let v = v.trim().trim_matches('"');
            ELEMENT_KINDS.iter().copied().find(|kind| *kind == v)
        })
    }

    /// The key path (`element[2].offset`, `source.terms`, `beam.power`) of
    /// the value at byte `at`, found from the table headers and the key on
    /// its line.
    fn key_path_at(&self, at: usize) -> String {
        let before = &self.text[..at.min(self.text.len())];
        let mut section = String::new();
        let mut elements = 0usize;
        for l in before.lines() {
            let t = l.trim();
            if t.starts_with("[[element]]") {
                elements += 1;
                section = format!("element[{}]", elements - 1);
            } else if t.starts_with('[') && !t.starts_with("[[") {
                section = t.trim_matches(['[', ']']).trim().to_string();
            }
        }
        let line_start = before.rfind('\n').map_or(0, |i| i + 1);
        let head = &before[line_start..];
        let mut keys: Vec<String> = Vec::new();
        // Outer key before '=' at the line start, then inner keys of inline tables.
        // A part that ends at the start of a key (after '{' or ',') adds
        // nothing: the error is about that key, named in the message.
        for part in head.split('{') {
            let last = part.rsplit(',').next().unwrap_or("");
            if let Some(eq) = last.rfind('=') {
                let k = last[..eq].trim().trim_matches('"');
                if !k.is_empty() && !k.starts_with('[') {
                    keys.push(k.to_string());
                }
            }
        }
        let mut path = section;
        for k in keys {
            if path.is_empty() {
                path = k;
            } else {
                path = format!("{path}.{k}");
            }
        }
        path
    }

    /// The line of `key = …` in the table whose header is on `header_line`.
    fn key_line(&self, header_line: Option<usize>, key: &str) -> Option<usize> {
        let header = header_line?;
        self.text
            .lines()
            .enumerate()
            .skip(header)
            .take_while(|(_, l)| !l.trim_start().starts_with('['))
            .find(|(_, l)| {
                l.split_once('=')
                    .is_some_and(|(k, _)| k.trim().trim_matches('"') == key)
            })
            .map(|(i, _)| i + 1)
    }

    fn line_of(&self, byte: usize) -> usize {
        self.text[..byte.min(self.text.len())]
            .bytes()
            .filter(|&b| b == b'\n')
            .count()
            + 1
    }

    fn err(&self, line: Option<usize>, message: impl Into<String>) -> Error {
        Error::Layout {
            path: self.path.to_path_buf(),
            line,
            message: crate::error::shorten(&message.into()),
        }
    }

    fn wrap(&self, key: &str, q: &Q, e: Error) -> Error {
        self.err(Some(self.line_of(q.span().start)), format!("{key}: {e}"))
    }

    fn length(&self, key: &str, q: &Q) -> Result<f64> {
        let v = Length::parse(&q.get_ref().0)
            .map(Length::as_m)
            .map_err(|e| self.wrap(key, q, e))?;
        if v.abs() > MAX_LENGTH_M {
            return Err(self.wrap(
                key,
                q,
                Error::out_of_range(
                    "length",
                    &q.get_ref().0,
                    format!("expected at most {MAX_LENGTH_M:e} m in size"),
                ),
            ));
        }
        Ok(v)
    }

    fn positive_length(&self, key: &str, q: &Q) -> Result<f64> {
        let v = self.length(key, q)?;
        if v > 0.0 {
            Ok(v)
        } else {
            Err(self.err(
                Some(self.line_of(q.span().start)),
                format!("{key}: '{}' must be a positive length", q.get_ref().0),
            ))
        }
    }

    fn required<'q, T>(&self, key: &str, line: Option<usize>, v: &'q Option<T>) -> Result<&'q T> {
        v.as_ref()
            .ok_or_else(|| self.err(line, format!("{key}: missing (required here)")))
    }

    fn plan(&self, file: LayoutFile) -> Result<Plan> {
        let wavelength_m = self.positive_length("beam.wavelength", &file.beam.wavelength)?;
        let power_w = match &file.beam.power {
            Some(q) => {
                let p = Power::parse(&q.get_ref().0)
                    .map(Power::as_w)
                    .map_err(|e| self.wrap("beam.power", q, e))?;
                if p <= 0.0 || p > MAX_POWER_W {
                    return Err(self.wrap(
                        "beam.power",
                        q,
                        Error::out_of_range(
                            "power",
                            &q.get_ref().0,
                            format!("expected a positive power up to {MAX_POWER_W:e} W"),
                        ),
                    ));
                }
                p
            }
            None => 1.0,
        };
        let grid = self.grid(&file)?;
        let source = self.source(&file.source, grid, wavelength_m)?;
        let title = file.title.clone().unwrap_or_else(|| {
            self.path
                .file_stem()
                .map(|s| s.to_string_lossy().into_owned())
                .unwrap_or_default()
        });
        let mut steps = Vec::with_capacity(file.elements.len());
        let mut z_m = 0.0;
        let mut current = grid;
        let mut probe_names: Vec<String> = Vec::new();
        for (index, spanned) in file.elements.iter().enumerate() {
            let line = Some(self.line_of(spanned.span().start));
            let entry = spanned.get_ref();
            let (op, after) = self.element(index, line, entry, current, wavelength_m)?;
            if let Operation::Probe(p) = &op {
                if let Some(other) = probe_names
                    .iter()
                    .find(|other| other.eq_ignore_ascii_case(&p.name))
                {
                    return Err(self.err(
                        self.key_line(line, "name").or(line),
                        format!(
                            "element[{index}].name: probe name '{}' is used twice ('{other}'; names become file names, and some file systems ignore case)",
                            p.name
                        ),
                    ));
                }
                probe_names.push(p.name.clone());
            }
            let name = match &op {
                Operation::Probe(p) => Some(p.name.clone()),
                _ => entry.name.clone(),
            };
            let step = Step {
                index,
                name,
                line,
                z_m,
                grid_before: current,
                grid_after: after,
                op,
            };
            z_m += step.length_m();
            current = after;
            steps.push(step);
        }
        merge_lenses_into_fresnel(&mut steps);
        Ok(Plan {
            path: self.path.to_path_buf(),
            title,
            wavelength_m,
            power_w,
            grid,
            grid_line: Some(self.line_of(file.grid.n.span().start)),
            source,
            steps,
            warnings: Vec::new(),
            inputs: self.inputs.borrow().clone(),
        })
    }

    fn grid(&self, file: &LayoutFile) -> Result<Grid> {
        let n_line = Some(self.line_of(file.grid.n.span().start));
        let n = *file.grid.n.get_ref();
        if !(2..=crate::grid::MAX_N as i64).contains(&n) {
            return Err(self.err(
                n_line,
                format!(
                    "grid.n: {n} samples per side is out of range (expected 2 to {})",
                    crate::grid::MAX_N
                ),
            ));
        }
        let n = n as usize;
        let spacing = match (&file.grid.spacing, &file.grid.width) {
            (Some(s), None) => self.positive_length("grid.spacing", s)?,
            (None, Some(w)) => self.positive_length("grid.width", w)? / n as f64,
            (Some(_), Some(_)) => {
                return Err(self.err(
                    n_line,
                    "grid: give either spacing or width, not both",
                ))
            }
            (None, None) => {
                return Err(self.err(
                    n_line,
                    "grid: missing spacing (e.g. spacing = \"5 um\") or width (e.g. width = \"5.12 mm\")",
                ))
            }
        };
        Grid::new(n, spacing).map_err(|e| self.err(n_line, format!("grid: {e}")))
    }

    fn source(
        &self,
        spanned: &Spanned<SourceSection>,
        grid: Grid,
        wavelength_m: f64,
    ) -> Result<Source> {
        let s = spanned.get_ref();
        let line = Some(self.line_of(spanned.span().start));
        let kind = s.kind.get_ref().as_str();
        let allowed: &[&str] = match kind {
            "gaussian" => &["waist", "waist_at"],
            "hermite-gauss" => &["waist", "waist_at", "m", "n"],
            "laguerre-gauss" => &["waist", "waist_at", "p", "l"],
            "flat-top" => &["radius"],
            "superposition" => &["waist", "waist_at", "terms"],
            "npy" | "image" => &["file"],
            other => {
                return Err(self.err(
                    Some(self.line_of(s.kind.span().start)),
                    format!(
                        "source.kind: unknown kind '{other}' (expected gaussian, hermite-gauss, laguerre-gauss, flat-top, superposition, npy, image)"
                    ),
                ))
            }
        };
        let present: Vec<&str> = [
            ("waist", s.waist.is_some()),
            ("waist_at", s.waist_at.is_some()),
            ("m", s.m.is_some()),
            ("n", s.n.is_some()),
            ("p", s.p.is_some()),
            ("l", s.l.is_some()),
            ("radius", s.radius.is_some()),
            ("terms", s.terms.is_some()),
            ("file", s.file.is_some()),
        ]
        .into_iter()
        .filter(|(_, p)| *p)
        .map(|(k, _)| k)
        .collect();
        for key in present {
            if !allowed.contains(&key) {
                return Err(self.err(
                    self.key_line(line, key).or(line),
                    format!(
                        "source.{key}: does not apply to a {kind} source (its keys: {})",
                        allowed.join(", ")
                    ),
                ));
            }
        }
        let waist_and_position = || -> Result<(f64, f64)> {
            let w = self.positive_length(
                "source.waist",
                self.required("source.waist", line, &s.waist)?,
            )?;
            let at = match &s.waist_at {
                Some(q) => self.length("source.waist_at", q)?,
                None => 0.0,
            };
            Ok((w, at))
        };
        let index = |key: &str, v: Option<i64>, signed: bool| -> Result<i64> {
            let v = v.ok_or_else(|| {
                self.err(
                    line,
                    format!("source.{key}: missing (required for a {kind} source)"),
                )
            })?;
            if (!signed && v < 0) || v.unsigned_abs() > 60 {
                return Err(self.err(
                    line,
                    format!(
                        "source.{key}: {v} is out of range (expected {} to 60)",
                        if signed { "-60" } else { "0" }
                    ),
                ));
            }
            Ok(v)
        };
        let mode = |shape: ModeShape| -> Result<Source> {
            let (w, at) = waist_and_position()?;
            let mode = Mode::new(shape, wavelength_m, w)
                .map_err(|e| self.err(line, format!("source: {e}")))?;
            Ok(Source::Mode {
                mode,
                waist_at_m: at,
            })
        };
        match kind {
            "gaussian" => mode(ModeShape::HermiteGauss { m: 0, n: 0 }),
            "hermite-gauss" => mode(ModeShape::HermiteGauss {
                m: index("m", s.m, false)? as usize,
                n: index("n", s.n, false)? as usize,
            }),
            "laguerre-gauss" => mode(ModeShape::LaguerreGauss {
                p: index("p", s.p, false)? as usize,
                l: index("l", s.l, true)? as i32,
            }),
            "flat-top" => Ok(Source::FlatTop {
                radius_m: self.positive_length(
                    "source.radius",
                    self.required("source.radius", line, &s.radius)?,
                )?,
            }),
            "superposition" => {
                let (w, at) = waist_and_position()?;
                let terms = self.required("source.terms", line, &s.terms)?;
                if terms.is_empty() {
                    return Err(self.err(line, "source.terms: needs at least one term"));
                }
                let modes = terms
                    .iter()
                    .enumerate()
                    .map(|(i, t)| self.term(i, t, line, wavelength_m, w))
                    .collect::<Result<Vec<_>>>()?;
                Ok(Source::Superposition {
                    modes: Superposition { terms: modes },
                    beam: GaussianBeam::new(wavelength_m, w)
                        .map_err(|e| self.err(line, format!("source: {e}")))?,
                    waist_at_m: at,
                })
            }
            "npy" | "image" => {
                let f = self.required("source.file", line, &s.file)?;
                let path = self.resolve(f.get_ref());
                let fline = Some(self.line_of(f.span().start));
                let values = if kind == "npy" {
                    crate::input::read_complex_npy(&path)
                } else {
                    crate::input::read_png_gray(&path)
                        .map(|a| a.mapv(|v| Complex64::new(v.max(0.0).sqrt(), 0.0)))
                }
                .map_err(|e| self.err(fline, format!("source.file: {e}")))?;
                self.check_size("source.file", fline, &path, &values, grid)?;
                Ok(Source::Sampled {
                    what: path.display().to_string(),
                    values,
                })
            }
            _ => unreachable!("kinds are matched above"),
        }
    }

    fn term(
        &self,
        i: usize,
        t: &TermEntry,
        line: Option<usize>,
        wavelength_m: f64,
        waist_m: f64,
    ) -> Result<(Mode, Complex64)> {
        let key = format!("source.terms[{i}]");
        let get = |name: &str, v: Option<i64>, signed: bool| -> Result<i64> {
            let v = v.ok_or_else(|| {
                self.err(
                    line,
                    format!("{key}.{name}: missing (required for a {} term)", t.kind),
                )
            })?;
            if (!signed && v < 0) || v.unsigned_abs() > 60 {
                return Err(self.err(line, format!("{key}.{name}: {v} is out of range")));
            }
            Ok(v)
        };
        let shape = match t.kind.as_str() {
            "gaussian" => ModeShape::HermiteGauss { m: 0, n: 0 },
            "hermite-gauss" => ModeShape::HermiteGauss {
                m: get("m", t.m, false)? as usize,
                n: get("n", t.n, false)? as usize,
            },
            "laguerre-gauss" => ModeShape::LaguerreGauss {
                p: get("p", t.p, false)? as usize,
                l: get("l", t.l, true)? as i32,
            },
            other => {
                return Err(self.err(
                    line,
                    format!("{key}.kind: unknown kind '{other}' (expected gaussian, hermite-gauss, laguerre-gauss)"),
                ))
            }
        };
        let [re, im] = t.weight.unwrap_or([1.0, 0.0]);
        if !(re.is_finite() && im.is_finite()) {
            return Err(self.err(line, format!("{key}.weight: must be finite [re, im]")));
        }
        let mode = Mode::new(shape, wavelength_m, waist_m)
            .map_err(|e| self.err(line, format!("{key}: {e}")))?;
        Ok((mode, Complex64::new(re, im)))
    }

    fn resolve(&self, file: &str) -> PathBuf {
        let p = Path::new(file);
        let resolved = if p.is_absolute() {
            p.to_path_buf()
        } else {
            self.path.parent().unwrap_or(Path::new(".")).join(p)
        };
        self.inputs.borrow_mut().push(resolved.clone());
        resolved
    }

    fn check_size<T>(
        &self,
        key: &str,
        line: Option<usize>,
        path: &Path,
        a: &Array2<T>,
        grid: Grid,
    ) -> Result<()> {
        let (r, c) = a.dim();
        if r != grid.n() || c != grid.n() {
            return Err(self.err(
                line,
                format!(
                    "{key}: {} is {r}x{c}, expected {n}x{n} (the grid size at this element)",
                    path.display(),
                    n = grid.n()
                ),
            ));
        }
        Ok(())
    }

    fn element(
        &self,
        index: usize,
        line: Option<usize>,
        e: &ElementEntry,
        grid: Grid,
        wavelength_m: f64,
    ) -> Result<(Operation, Grid)> {
        let key = |k: &str| format!("element[{index}].{k}");
        let kind_spanned = e.kind.as_ref().ok_or_else(|| {
            self.err(
                line,
                format!(
                    "element[{index}].kind: missing (expected one of {})",
                    ELEMENT_KINDS.join(", ")
                ),
            )
        })?;
        let kind = kind_spanned.get_ref().as_str();
        if !ELEMENT_KINDS.contains(&kind) {
            return Err(self.err(
                Some(self.line_of(kind_spanned.span().start)),
                format!(
                    "element[{index}].kind: unknown kind '{kind}' (expected {})",
                    ELEMENT_KINDS.join(", ")
                ),
            ));
        }
        let allowed = allowed_keys(kind);
        for k in e.present_keys() {
            if !allowed.contains(&k) {
                return Err(self.err(
                    self.key_line(line, k).or(line),
                    format!(
                        "{}: does not apply to a {kind} element (its keys: {}, name)",
                        key(k),
                        allowed.join(", ")
                    ),
                ));
            }
        }
        let req = |k: &str, v: &Option<Q>| -> Result<f64> {
            self.length(&key(k), self.required(&key(k), line, v)?)
        };
        let req_pos = |k: &str, v: &Option<Q>| -> Result<f64> {
            self.positive_length(&key(k), self.required(&key(k), line, v)?)
        };
        let offset = |v: &Option<[Q; 2]>| -> Result<[f64; 2]> {
            match v {
                Some([x, y]) => Ok([
                    self.length(&key("offset[0]"), x)?,
                    self.length(&key("offset[1]"), y)?,
                ]),
                None => Ok([0.0, 0.0]),
            }
        };
        let choice = |k: &str,
                      v: &Option<Spanned<String>>,
                      default: &str,
                      options: &[&str]|
         -> Result<String> {
            match v {
                None => Ok(default.to_string()),
                Some(s) if options.contains(&s.get_ref().as_str()) => Ok(s.get_ref().clone()),
                Some(s) => Err(self.err(
                    Some(self.line_of(s.span().start)),
                    format!(
                        "{}: unknown value '{}' (expected {})",
                        key(k),
                        s.get_ref(),
                        options.join(", ")
                    ),
                )),
            }
        };
        let in_range = |e: Error| self.err(line, format!("element[{index}]: {e}"));
        let op = match kind {
            "space" => {
                let length_m = req("length", &e.length)?;
                let requested = match choice(
                    "method",
                    &e.method,
                    "auto",
                    &["auto", "angular-spectrum", "fresnel"],
                )?
                .as_str()
                {
                    "angular-spectrum" => Method::AngularSpectrum,
                    "fresnel" => Method::Fresnel,
                    _ => Method::Auto,
                };
                let (method, reason) = resolve_method(grid, wavelength_m, length_m, requested);
                if method == Method::Fresnel && length_m == 0.0 {
                    return Err(self.err(
                        line,
                        format!("{}: a Fresnel step needs a non-zero length", key("length")),
                    ));
                }
                Operation::Space {
                    length_m,
                    method,
                    reason,
                    merged_lens_m: None,
                }
            }
            "aperture" => {
                let shape = choice(
                    "shape",
                    &e.shape,
                    "",
                    &["circle", "rectangle", "annulus", "gaussian"],
                )?;
                let shape = match shape.as_str() {
                    "circle" => ApertureShape::Circle {
                        radius_m: req_pos("radius", &e.radius)?,
                    },
                    "gaussian" => ApertureShape::Gaussian {
                        radius_m: req_pos("radius", &e.radius)?,
                    },
                    "rectangle" => ApertureShape::Rectangle {
                        width_m: req_pos("width", &e.width)?,
                        height_m: req_pos("height", &e.height)?,
                    },
                    "annulus" => ApertureShape::Annulus {
                        inner_m: req_pos("inner", &e.inner)?,
                        outer_m: req_pos("outer", &e.outer)?,
                    },
                    _ => {
                        return Err(self.err(
                            line,
                            format!(
                                "{}: missing (expected circle, rectangle, annulus, gaussian)",
                                key("shape")
                            ),
                        ))
                    }
                };
                let mut a = Aperture::new(shape)
                    .map_err(in_range)?
                    .with_offset(offset(&e.offset)?);
                if e.invert == Some(true) {
                    a = a.inverted();
                }
                Operation::Aperture(a)
            }
            "lens" => {
                let f = req("focal_length", &e.focal_length)?;
                let model =
                    match choice("model", &e.model, "paraxial", &["paraxial", "exact"])?.as_str() {
                        "exact" => LensModel::Exact,
                        _ => LensModel::Paraxial,
                    };
                Operation::Lens {
                    lens: ThinLens::new(f, model).map_err(in_range)?,
                    merged: false,
                }
            }
            "aberration" => {
                let radius = req_pos("radius", &e.radius)?;
                let table = self.required(&key("zernike"), line, &e.zernike)?;
                let mut terms = Vec::new();
                for (j_text, q) in table {
                    let j: usize = j_text.trim().parse().map_err(|_| {
                        self.err(
                            Some(self.line_of(q.span().start)),
                            format!(
                                "{}: '{j_text}' is not a Noll index (expected an integer 1 to 231)",
                                key("zernike")
                            ),
                        )
                    })?;
                    let k = format!("{}.{j}", key("zernike"));
                    let w = Wavefront::parse(&q.get_ref().0).map_err(|er| self.wrap(&k, q, er))?;
                    terms.push((j, w.as_m(wavelength_m)));
                }
                let mut ab = Aberration::new(radius, terms).map_err(in_range)?;
                ab.offset_m = offset(&e.offset)?;
                Operation::Aberration(ab)
            }
            "vortex" => {
                let charge = *self.required(&key("charge"), line, &e.charge)?;
                if charge == 0 || charge.unsigned_abs() > 200 {
                    return Err(self.err(line, format!("{}: {charge} is out of range (expected a non-zero integer, |charge| ≤ 200)", key("charge"))));
                }
                Operation::Vortex(Vortex {
                    charge: charge as i32,
                    offset_m: offset(&e.offset)?,
                })
            }
            "tilt" => {
                let angle = |k: &str, v: &Option<Q>| -> Result<f64> {
                    match v {
                        Some(q) => Angle::parse(&q.get_ref().0)
                            .map(Angle::as_rad)
                            .map_err(|er| self.wrap(&key(k), q, er)),
                        None => Ok(0.0),
                    }
                };
                let t = Tilt {
                    x_rad: angle("x", &e.x)?,
                    y_rad: angle("y", &e.y)?,
                };
                for (k, v) in [("x", t.x_rad), ("y", t.y_rad)] {
                    if v.abs() >= std::f64::consts::FRAC_PI_2 {
                        return Err(
                            self.err(line, format!("{}: tilt must be below 90 deg", key(k)))
                        );
                    }
                }
                Operation::Tilt(t)
            }
            "mask" => {
                let f = self.required(&key("file"), line, &e.file)?;
                let fline = Some(self.line_of(f.span().start));
                let kind =
                    match choice("type", &e.mask_type, "", &["amplitude", "phase", "complex"])?
                        .as_str()
                    {
                        "amplitude" => MaskKind::Amplitude,
                        "phase" => MaskKind::Phase,
                        "complex" => MaskKind::Complex,
                        _ => {
                            return Err(self.err(
                                line,
                                format!(
                                    "{}: missing (expected amplitude, phase, complex)",
                                    key("type")
                                ),
                            ))
                        }
                    };
                let path = self.resolve(f.get_ref());
                let is_png = path
                    .extension()
                    .is_some_and(|x| x.eq_ignore_ascii_case("png"));
                let values = if is_png {
                    if kind == MaskKind::Complex {
                        return Err(self.err(fline, format!("{}: a PNG mask can be amplitude or phase, not complex (use an NPY file)", key("type"))));
                    }
                    // PNG grey levels 0..1: amplitude as is; phase as 0..2π.
                    let scale = if kind == MaskKind::Phase { 2.0 * std::f64::consts::PI } else { 1.0 };
                    crate::input::read_png_gray(&path).map(|a| a.mapv(|v| Complex64::new(v * scale, 0.0)))
                } else {
                    crate::input::read_complex_npy(&path)
                }
                .map_err(|er| self.err(fline, format!("{}: {er}", key("file"))))?;
                self.check_size(&key("file"), fline, &path, &values, grid)?;
                Operation::Mask(Mask { kind, values })
            }
            "probe" => Operation::Probe(self.probe(index, line, e)?),
            _ => unreachable!("kinds are checked above"),
        };
        let after = match &op {
            Operation::Space {
                method: Method::Fresnel,
                length_m,
                ..
            } => FresnelSingleFft::new(*length_m)
                .and_then(|f| f.output_grid(grid, wavelength_m))
                .map_err(in_range)?,
            _ => grid,
        };
        Ok((op, after))
    }

    fn probe(&self, index: usize, line: Option<usize>, e: &ElementEntry) -> Result<ProbeSpec> {
        let key = |k: &str| format!("element[{index}].{k}");
        let name = e.name.clone().ok_or_else(|| {
            self.err(
                line,
                format!(
                    "{}: missing (a probe needs a name; it is used for file names)",
                    key("name")
                ),
            )
        })?;
        let name_line = self.key_line(line, "name").or(line);
        if name.is_empty()
            || name.chars().count() > MAX_PROBE_NAME_CHARS
            || !name
                .chars()
                .all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_')
        {
            return Err(self.err(
                name_line,
                format!(
                    "{}: '{}' must be 1 to {MAX_PROBE_NAME_CHARS} characters of letters, digits, '-' and '_' (it names files)",
                    key("name"),
                    crate::error::echo(&name)
                ),
            ));
        }
        let mut spec = ProbeSpec {
            name,
            save_intensity: false,
            save_phase: false,
            save_field: false,
            save_profile: false,
            save_intensity_log: false,
            modes: None,
            caustic: None,
            strehl: e.strehl.unwrap_or(false),
        };
        for s in e.save.iter().flatten() {
            match s.get_ref().as_str() {
                "intensity" => spec.save_intensity = true,
                "phase" => spec.save_phase = true,
                "field" => spec.save_field = true,
                "profile" => spec.save_profile = true,
                "intensity-log" => spec.save_intensity_log = true,
                other => {
                    return Err(self.err(
                        Some(self.line_of(s.span().start)),
                        format!(
                        "{}: unknown item '{other}' (expected intensity, intensity-log, phase, field, profile)",
                        key("save")
                    ),
                    ))
                }
            }
        }
        if let Some(m) = &e.modes {
            let line = self.key_line(line, "modes").or(line);
            let basis = match m.basis.as_str() {
                "laguerre-gauss" => Basis::LaguerreGauss,
                "hermite-gauss" => Basis::HermiteGauss,
                other => {
                    return Err(self.err(
                        line,
                        format!(
                            "{}: unknown basis '{other}' (expected laguerre-gauss, hermite-gauss)",
                            key("modes.basis")
                        ),
                    ))
                }
            };
            if !(0..=40).contains(&m.order) {
                return Err(self.err(
                    line,
                    format!(
                        "{}: {} is out of range (expected 0 to 40)",
                        key("modes.order"),
                        m.order
                    ),
                ));
            }
            spec.modes = Some(ModesSpec {
                basis,
                order: m.order as usize,
                waist_m: m
                    .waist
                    .as_ref()
                    .map(|q| self.positive_length(&key("modes.waist"), q))
                    .transpose()?,
                waist_at_m: m
                    .waist_at
                    .as_ref()
                    .map(|q| self.length(&key("modes.waist_at"), q))
                    .transpose()?,
            });
        }
        if let Some(c) = &e.caustic {
            let line = self.key_line(line, "caustic").or(line);
            let span_m = self.positive_length(&key("caustic.span"), &c.span)?;
            if !(10..=401).contains(&c.planes) {
                return Err(self.err(line, format!("{}: {} is out of range (expected 10 to 401; ISO 11146 asks for at least 10)", key("caustic.planes"), c.planes)));
            }
            spec.caustic = Some(CausticOptions {
                span_m,
                planes: c.planes as usize,
                centre_m: c
                    .centre
                    .as_ref()
                    .map(|q| self.length(&key("caustic.centre"), q))
                    .transpose()?
                    .unwrap_or(0.0),
            });
        }
        Ok(spec)
    }
}

/// Marks each paraxial lens that is immediately followed by a Fresnel step
/// as merged into it: the lens phase then never has to be sampled on the
/// grid (PHYSICS.md §4, "lens then distance f").
fn merge_lenses_into_fresnel(steps: &mut [Step]) {
    for i in 0..steps.len().saturating_sub(1) {
        let (head, tail) = steps.split_at_mut(i + 1);
        if let (
            Operation::Lens { lens, merged },
            Operation::Space {
                method: Method::Fresnel,
                merged_lens_m,
                reason,
                ..
            },
        ) = (&mut head[i].op, &mut tail[0].op)
        {
            if lens.model == LensModel::Paraxial {
                *merged = true;
                *merged_lens_m = Some(lens.focal_length_m);
                reason.push_str("; the preceding paraxial lens is applied inside this step's chirp, so its phase is never sampled on the grid");
            }
        }
    }
}

/// The choice closest to `name` by edit distance (insertions, deletions,
/// substitutions and adjacent transpositions), if within 2 edits.
fn closest<'a>(name: &str, choices: &[&'a str]) -> Option<&'a str> {
    fn distance(a: &str, b: &str) -> usize {
        let a: Vec<char> = a.chars().collect();
        let b: Vec<char> = b.chars().collect();
        let mut d = vec![vec![0usize; b.len() + 1]; a.len() + 1];
        for (i, row) in d.iter_mut().enumerate() {
            row[0] = i;
        }
        for (j, cell) in d[0].iter_mut().enumerate() {
            *cell = j;
        }
        for i in 1..=a.len() {
            for j in 1..=b.len() {
                let cost = usize::from(a[i - 1] != b[j - 1]);
                let mut v = (d[i - 1][j] + 1)
                    .min(d[i][j - 1] + 1)
                    .min(d[i - 1][j - 1] + cost);
                if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                    v = v.min(d[i - 2][j - 2] + 1);
                }
                d[i][j] = v;
            }
        }
        d[a.len()][b.len()]
    }
    // A suggestion only when the typo is small next to the word: one edit
    // in up to four characters, two in longer words (common practice).
    let allowed = |len: usize| if len <= 4 { 1 } else { 2 };
    if name.chars().count() > 64 {
        return None;
    }
    choices
        .iter()
        .map(|c| (distance(name, c), *c))
        .filter(|(d, c)| *d <= allowed(name.chars().count().min(c.chars().count())))
        .min()
        .map(|(_, c)| c)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn err(text: &str) -> String {
        parse(text, Path::new("t.toml")).unwrap_err().to_string()
    }

    const HEAD: &str = "[beam]\nwavelength = \"1064 nm\"\n[grid]\nn = 64\nspacing = \"10 um\"\n[source]\nkind = \"gaussian\"\nwaist = \"0.1 mm\"\n";

    #[test]
    fn toml_errors_name_the_key_and_the_unit() {
        let e = err(&HEAD.replace("\"1064 nm\"", "1064"));
        assert!(
            e.contains("line 2: beam.wavelength: missing unit") && e.contains("\"1064 nm\""),
            "{e}"
        );
        let e = err(&format!(
            "{HEAD}[[element]]\nkind = \"space\"\nlenght = \"1 mm\"\n"
        ));
        assert!(
            e.contains("element[0].lenght") || e.contains("element[0]"),
            "{e}"
        );
        assert!(e.contains("did you mean 'length'"), "{e}");
        let e = err(&format!(
            "{HEAD}[[element]]\nkind = \"vortex\"\ncharge = 1.5\n"
        ));
        assert!(
            e.contains("element[0].charge: expected an integer, found floating point 1.5"),
            "{e}"
        );
        let e = err(&format!("{HEAD}[[element]]\nkind = \"aberration\"\nradius = \"1 mm\"\nzernike = {{ 4 = 0.1 }}\n"));
        assert!(
            e.contains("element[0].zernike.4: missing unit") && e.contains("\"0.1 wave\""),
            "{e}"
        );
        let e = err(&format!("{HEAD}[[element]]\nkind = \"aperture\"\nshape = \"circle\"\nradius = \"1 mm\"\noffset = [\"1 mm\"]\n"));
        assert!(
            e.contains("element[0].offset: expected two values [x, y], found 1"),
            "{e}"
        );
        let e = err(&HEAD
            .replace("\"10 um\"", "10")
            .replace("[beam]", "[beam]\npower = 2"));
        assert!(
            e.contains("beam.power: missing unit") && e.contains("\"2 W\""),
            "{e}"
        );
    }

    #[test]
    fn closest_key() {
        assert_eq!(closest("lenght", &["length", "method"]), Some("length"));
        assert_eq!(closest("zzz", &["length", "method"]), None);
    }
}
