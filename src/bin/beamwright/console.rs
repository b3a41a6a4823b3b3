//! Writing to the terminal without ever panicking: a closed or full
//! standard stream is not a reason to crash (`println!` would). Errors and
//! warnings go to standard error as one line each, with control characters
//! escaped so that a value from a layout cannot move the cursor or split
//! the line.

use std::io::Write;

/// Longest error line printed, in characters; longer ones are shortened in
/// the middle.
pub const MAX_ERROR_CHARS: usize = 300;

/// Prints `beamwright: MESSAGE` to standard error as one safe line.
pub fn error(message: &str) {
    let line = format!("beamwright: {}\n", one_line(message, MAX_ERROR_CHARS));
    let _ = std::io::stderr().write_all(line.as_bytes());
}

/// Prints `beamwright: warning: MESSAGE` to standard error.
pub fn warning(message: &str) {
    error(&format!("warning: {message}"));
}

/// Writes `text` to standard output. A closed pipe (`| head`) is not an
/// error; anything else (a full disk) is returned.
pub fn out(text: &str) -> std::io::Result<()> {
    let mut stdout = std::io::stdout().lock();
    match stdout
        .write_all(text.as_bytes())
        .and_then(|()| stdout.flush())
    {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => Err(e),
        _ => Ok(()),
    }
}

/// `message` with control characters escaped and, beyond `max` characters,
/// its middle replaced by " … ".
pub fn one_line(message: &str, max: usize) -> String {
    let mut escaped = String::with_capacity(message.len());
    for c in message.chars() {
        if c.is_control() {
            escaped.extend(c.escape_default());
        } else {
            escaped.push(c);
        }
    }
    let count = escaped.chars().count();
    if count <= max {
        return escaped;
    }
    let keep = max.saturating_sub(3) / 2;
    let head: String = escaped.chars().take(keep).collect();
    let tail: String = escaped.chars().skip(count - keep).collect();
    format!("{head} … {tail}")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn control_characters_are_escaped_and_long_lines_shortened() {
        assert_eq!(one_line("a\nb\u{1b}[2J", 300), "a\\nb\\u{1b}[2J");
        let long = "x".repeat(1000);
        let short = one_line(&long, 300);
        assert!(short.chars().count() <= 300, "{}", short.chars().count());
        assert!(short.contains(" … "));
        assert_eq!(one_line("plain", 300), "plain");
    }
}
