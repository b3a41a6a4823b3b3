//! The library's error type.
//!
//! Every variant carries the values involved so that a message can be read
//! without the source code: the text as written, the unit or choices
//! expected, and the sizes that disagree. Messages are lowercase, without a
//! final period, and are chained with `": "` when wrapped with context.

use std::path::PathBuf;

/// Everything that can go wrong in beamwright on user input.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    /// A quantity could not be parsed: the text as written and what was expected.
    #[error("invalid {quantity} '{text}': {expected}")]
    Quantity {
        /// Kind of quantity ("length", "power", ...).
        quantity: &'static str,
        /// The text as the user wrote it.
        text: String,
        /// What would have been accepted.
        expected: String,
    },
    /// A value is outside its allowed range.
    #[error("{what} = {value}: {expected}")]
    OutOfRange {
        /// Name of the value.
        what: String,
        /// The offending value as text (with unit where it has one).
        value: String,
        /// The allowed range.
        expected: String,
    },
    /// Two grids that must agree do not.
    #[error("grid mismatch: {left} is {left_n}x{left_n} at {left_spacing_m:e} m, {right} is {right_n}x{right_n} at {right_spacing_m:e} m")]
    GridMismatch {
        /// Name of the first object.
        left: &'static str,
        /// Samples per side of the first.
        left_n: usize,
        /// Spacing of the first, metres.
        left_spacing_m: f64,
        /// Name of the second object.
        right: &'static str,
        /// Samples per side of the second.
        right_n: usize,
        /// Spacing of the second, metres.
        right_spacing_m: f64,
    },
    /// An input array or image has the wrong shape.
    #[error(
        "{what} is {got_rows}x{got_cols}, expected {expected_rows}x{expected_cols} (the grid size)"
    )]
    Shape {
        /// What the array is.
        what: String,
        /// Rows found.
        got_rows: usize,
        /// Columns found.
        got_cols: usize,
        /// Rows expected.
        expected_rows: usize,
        /// Columns expected.
        expected_cols: usize,
    },
    /// Non-finite numbers in input data.
    #[error("{what} contains {count} non-finite values (NaN or infinity)")]
    NonFinite {
        /// What the data is.
        what: String,
        /// How many values are not finite.
        count: usize,
    },
    /// A requested allocation would exceed what is sensible.
    #[error("{what} needs about {needed_mib:.0} MiB, more than the limit of {limit_mib:.0} MiB; reduce n or raise the limit with BEAMWRIGHT_MEMORY_LIMIT_MIB")]
    TooLarge {
        /// What was being allocated.
        what: String,
        /// Estimated memory, MiB.
        needed_mib: f64,
        /// Allowed memory, MiB.
        limit_mib: f64,
    },
    /// A field became unusable (for example zero power where a width is needed).
    #[error("{0}")]
    Physics(String),
    /// Reading or writing a file failed.
    #[error("{}: {source}", path.display())]
    Io {
        /// The file involved.
        path: PathBuf,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
    /// A file has the wrong content.
    #[error("{}: {message}", path.display())]
    File {
        /// The file involved.
        path: PathBuf,
        /// What is wrong.
        message: String,
    },
    /// A layout file is invalid.
    #[error("{}: {}{message}", path.display(), line.map(|l| format!("line {l}: ")).unwrap_or_default())]
    Layout {
        /// The layout file.
        path: PathBuf,
        /// The line, where known.
        line: Option<usize>,
        /// The message, starting with the key path.
        message: String,
    },
    /// A strict run found a probe outside tolerance.
    #[error("{0}")]
    Strict(String),
}

impl Error {
    /// Shorthand for an [`Error::OutOfRange`].
    pub fn out_of_range(
        what: impl Into<String>,
        value: impl ToString,
        expected: impl Into<String>,
    ) -> Self {
        Error::OutOfRange {
            what: what.into(),
            value: echo(&value.to_string()),
            expected: expected.into(),
        }
    }
}

/// A user's value as it may appear in a message: control characters
/// escaped and anything beyond 40 characters cut with "…", so a message
/// stays one short line whatever was written.
pub fn echo(text: &str) -> String {
    shorten_value(text)
}

fn shorten_value(text: &str) -> String {
    const MAX: usize = 40;
    let mut out = String::new();
    for (i, c) in text.chars().enumerate() {
        if i == MAX {
            out.push('…');
            break;
        }
        if c.is_control() {
            out.extend(c.escape_default());
        } else {
            out.push(c);
        }
    }
    out
}

/// Longest layout message, in characters, before [`shorten`] cuts its
/// middle (the file name and line come on top).
pub const MAX_MESSAGE_CHARS: usize = 240;

/// A message made safe to print as one line: control characters escaped,
/// each quoted value (between `"`, `'` or backquotes) cut to 40 characters
/// with "…", and the whole cut in the middle beyond
/// [`MAX_MESSAGE_CHARS`].
pub fn shorten(message: &str) -> String {
    const MAX_QUOTED: usize = 40;
    let mut out = String::with_capacity(message.len().min(4 * MAX_MESSAGE_CHARS));
    let mut quote: Option<char> = None;
    let mut quoted = 0usize;
    for c in message.chars() {
        match quote {
            Some(q) if c == q => {
                quote = None;
                out.push(c);
                continue;
            }
            None if matches!(c, '"' | '`') || (c == '\'' && out.ends_with([' ', '(', ':'])) => {
                quote = Some(c);
                quoted = 0;
                out.push(c);
                continue;
            }
            _ => {}
        }
        if quote.is_some() {
            quoted += 1;
            if quoted == MAX_QUOTED + 1 {
                out.push('…');
            }
            if quoted > MAX_QUOTED {
                continue;
            }
        }
        if c.is_control() {
            out.extend(c.escape_default());
        } else {
            out.push(c);
        }
    }
    let count = out.chars().count();
    if count <= MAX_MESSAGE_CHARS {
        return out;
    }
    let keep = (MAX_MESSAGE_CHARS - 3) / 2;
    let head: String = out.chars().take(keep).collect();
    let tail: String = out.chars().skip(count - keep).collect();
    format!("{head} … {tail}")
}

/// Result alias used throughout the library.
pub type Result<T> = std::result::Result<T, Error>;
