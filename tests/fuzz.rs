//! Seeded fuzzing of layouts (common practice: mutation fuzzing from a
//! corpus of valid inputs). Every bundled layout is mutated — keys deleted,
//! duplicated, swapped or misspelt; values replaced by wrong units, NaN,
//! infinities, huge, zero and negative numbers, wrong types, unicode, long
//! strings, deep nesting and integers at the limits of i64; bytes corrupted
//! — and each mutant goes through the same steps as `beamwright check`, in
//! this process. A second, smaller set of mutants on small grids goes
//! through the `beamwright` binary's `run`.
//!
//! What must hold: no panic; every refusal is one line of at most 300
//! characters that names a key path or a line; every check finishes in
//! under a second; a run exits 0, 1 or 2, writes nothing on exit 2 and
//! never writes NaN or infinity into report.json. The seed is fixed, so a
//! failure reproduces; the mutant's text is printed with it.

use std::path::Path;
use std::time::{Duration, Instant};

use proptest::prelude::Rng;
use proptest::test_runner::{RngAlgorithm, TestRng};

use beamwright::{layout, run, Error};

use crate::cli::{bin, text, GOOD};

/// Values a mutation writes in place of a layout value.
fn hostile_values() -> Vec<String> {
    let mut v: Vec<String> = [
        "\"nan mm\"",
        "\"inf W\"",
        "\"-inf nm\"",
        "\"1e300 mm\"",
        "\"1e-300 m\"",
        "\"0 mm\"",
        "\"-1 mm\"",
        "\"1 furlong\"",
        "\"1 W\"",
        "\"12\"",
        "\"\"",
        "\"µm 3\"",
        "\"ünïcødé 🌈 µm\"",
        "\"1\\u0000 mm\"",
        "\"\\u001b[2J 1 mm\"",
        "0",
        "-1",
        "1",
        "3.5",
        "1e308",
        "-1e308",
        "nan",
        "inf",
        "-inf",
        "9223372036854775807",
        "-9223372036854775808",
        "true",
        "[]",
        "[\"1 mm\"]",
        "[\"1 mm\", \"2 mm\", \"3 mm\"]",
        "{}",
        "{ a = 1 }",
        "1979-05-27",
        "'''multi\nline'''",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    v.push(format!("\"{}\"", "x".repeat(20_000)));
    v.push(format!("\"{} mm\"", "9".repeat(400)));
    v.push(format!("{}1{}", "[".repeat(60), "]".repeat(60)));
    v.push(format!("{}1{}", "{a=".repeat(40), "}".repeat(40)));
    v
}

/// Whole lines a mutation inserts.
const HOSTILE_LINES: &[&str] = &[
    "n = 1000000",
    "n = 16384",
    "n = 3",
    "spacing = \"1 pm\"",
    "spacing = \"1 km\"",
    "width = \"1 mm\"",
    "waist_at = \"1e9 m\"",
    "waist = \"1 um\"",
    "length = \"1 pm\"",
    "length = \"-1 m\"",
    "method = \"fresnel\"",
    "method = \"angular-spectrum\"",
    "charge = -9223372036854775808",
    "l = -9223372036854775808",
    "m = 60",
    "order = 40",
    "caustic = { span = \"1 m\", planes = 401 }",
    "caustic = { span = \"1 mm\", planes = 5, centre_ = 1 }",
    "modes = { basis = \"laguerre-gauss\", order = 40 }",
    "save = [\"intensity\", \"phase\", \"field\", \"profile\", \"intensity-log\"]",
    "strehl = true",
    "[[element]]",
    "[[element]]\nkind = \"space\"\nlength = \"1 m\"",
    "[[element]]\nkind = \"probe\"\nname = \"p\"",
    "[[element]]\nkind = \"probe\"\nname = \"P\"",
    "[[element]]\nkind = \"lens\"\nfocal_length = \"1 um\"",
    "[[element]]\nkind = \"aperture\"\nshape = \"circle\"\nradius = \"1 nm\"",
    "[[element]]\nkind = \"aberration\"\nradius = \"1 mm\"\nzernike = { 4 = \"1e6 wave\" }",
    "[[element]]\nkind = \"tilt\"\nangle = [\"1 rad\", \"0 rad\"]",
    "[source]",
    "[beam]",
    "kind = \"nonesuch\"",
    "title = 5",
];

/// The seed of the fuzzer: same seed, same mutants.
const SEED: u8 = 7;

struct Mutator {
    rng: TestRng,
    values: Vec<String>,
}

impl Mutator {
    fn new() -> Self {
        Self {
            rng: TestRng::from_seed(RngAlgorithm::ChaCha, &[SEED; 32]),
            values: hostile_values(),
        }
    }

    fn below(&mut self, n: usize) -> usize {
        (self.rng.next_u64() % n.max(1) as u64) as usize
    }

    /// One to three mutations of `text`; returns bytes (corruption may make
    /// them invalid UTF-8).
    fn mutate(&mut self, text: &str) -> Vec<u8> {
        let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
        let mut corrupt = false;
        for _ in 0..1 + self.below(3) {
            let n = lines.len().max(1);
            match self.below(9) {
                0 if !lines.is_empty() => {
                    let i = self.below(n);
                    lines.remove(i);
                }
                1 if !lines.is_empty() => {
                    let i = self.below(n);
                    let l = lines[i].clone();
                    lines.insert(i, l);
                }
                2 if lines.len() > 1 => {
                    let (i, j) = (self.below(n), self.below(n));
                    lines.swap(i, j);
                }
                3 | 4 => {
                    // Replace the value of a `key = value` line.
                    let candidates: Vec<usize> = (0..lines.len())
                        .filter(|&i| {
                            lines[i].contains('=') && !lines[i].trim_start().starts_with('#')
                        })
                        .collect();
                    if !candidates.is_empty() {
                        let i = candidates[self.below(candidates.len())];
                        let key = lines[i].split('=').next().unwrap_or("").to_string();
                        let pick = self.below(self.values.len());
                        let v = self.values[pick].clone();
                        lines[i] = format!("{key}= {v}");
                    }
                }
                5 => {
                    // Misspell a key.
                    let candidates: Vec<usize> = (0..lines.len())
                        .filter(|&i| lines[i].contains('='))
                        .collect();
                    if !candidates.is_empty() {
                        let i = candidates[self.below(candidates.len())];
                        let mut chars: Vec<char> = lines[i].chars().collect();
                        let at = self.below(chars.iter().position(|&c| c == '=').unwrap_or(1));
                        chars.insert(at, ['_', 'x', 'é', '0'][self.below(4)]);
                        lines[i] = chars.into_iter().collect();
                    }
                }
                6 | 7 => {
                    let i = self.below(n + 1).min(lines.len());
                    let l = HOSTILE_LINES[self.below(HOSTILE_LINES.len())];
                    lines.insert(i, l.to_string());
                }
                _ => corrupt = true,
            }
        }
        let mut bytes = lines.join("\n").into_bytes();
        bytes.push(b'\n');
        if corrupt && !bytes.is_empty() {
            let at = self.below(bytes.len());
            bytes[at] = [0xff, 0x00, b'"', b'[', b'=', 0xc3][self.below(6)];
        }
        bytes
    }
}

/// The corpus: every bundled layout and a small one.
fn corpus() -> Vec<String> {
    let mut c: Vec<String> = beamwright::examples::ALL
        .iter()
        .map(|e| e.layout.to_string())
        .collect();
    c.push(GOOD.to_string());
    c
}

/// What `beamwright check` does, in this process.
fn check(path: &Path) -> beamwright::Result<()> {
    let plan = layout::load(path)?;
    run::plan_warnings(&plan)?;
    let _ = layout::paraxial::trace(&plan);
    Ok(())
}

/// Top-level key paths a refusal may start with (after the file and line).
const KEY_ROOTS: &[&str] = &[
    "title",
    "beam",
    "grid",
    "source",
    "element",
    "sweep",
    "not valid UTF-8",
    "larger than",
];

fn assert_good_refusal(e: &Error, mutant: &str) {
    let message = e.to_string();
    let shown: String = message.chars().take(400).collect();
    assert!(
        !message.contains('\n') && !message.contains('\r'),
        "refusal spans lines: {shown:?}\nmutant:\n{mutant}"
    );
    assert!(
        message.chars().count() <= 300,
        "refusal of {} characters: {shown:?}\nmutant:\n{mutant}",
        message.chars().count()
    );
    let names_key = match e {
        Error::Layout { line, message, .. } => {
            line.is_some() || KEY_ROOTS.iter().any(|k| message.starts_with(k))
        }
        Error::File { .. } | Error::Io { .. } => true,
        _ => false,
    };
    assert!(
        names_key,
        "refusal names no key or line: {shown:?}\nmutant:\n{mutant}"
    );
}

#[test]
fn mutated_layouts_through_check_never_panic_hang_or_mumble() {
    const CASES: usize = 2400;
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("m.toml");
    let corpus = corpus();
    let mut mutator = Mutator::new();
    let (mut accepted, mut refused) = (0usize, 0usize);
    let mut slowest = Duration::ZERO;
    for case in 0..CASES {
        let bytes = mutator.mutate(&corpus[case % corpus.len()]);
        std::fs::write(&path, &bytes).unwrap();
        let shown = String::from_utf8_lossy(&bytes)
            .lines()
            .map(|l| l.chars().take(120).collect::<String>())
            .collect::<Vec<_>>()
            .join("\n");
        let t = Instant::now();
        let outcome = std::panic::catch_unwind(|| check(&path));
        let took = t.elapsed();
        slowest = slowest.max(took);
        match outcome {
            Err(_) => panic!("case {case}: check panicked on:\n{shown}"),
            Ok(Ok(())) => accepted += 1,
            Ok(Err(e)) => {
                refused += 1;
                assert_good_refusal(&e, &shown);
            }
        }
        assert!(
            took < Duration::from_secs(1),
            "case {case}: check took {took:?} on:\n{shown}"
        );
    }
    eprintln!(
        "fuzz check: {CASES} mutants, {accepted} accepted, {refused} refused, slowest {slowest:?}"
    );
    // The mutants must exercise both paths, or the fuzzer tests nothing.
    assert!(
        accepted > CASES / 40 && refused > CASES / 4,
        "{accepted} / {refused}"
    );
}

/// Shrinks a layout's grid to at most 128 samples per side so that a run
/// takes milliseconds (the spacing is kept).
fn small_grid(text: &str) -> String {
    text.lines()
        .map(|l| match l.trim_start().strip_prefix("n = ") {
            Some(v) if v.trim().parse::<u64>().is_ok_and(|n| n > 128) => "n = 128".to_string(),
            _ => l.to_string(),
        })
        .collect::<Vec<_>>()
        .join("\n")
}

#[test]
fn mutated_layouts_that_pass_check_run_and_report_finite_numbers() {
    const RUNS: usize = 100;
    let corpus: Vec<String> = corpus().iter().map(|t| small_grid(t)).collect();
    let mut mutator = Mutator::new();
    let (mut done, mut codes) = (0usize, [0usize; 3]);
    let mut attempts = 0usize;
    while done < RUNS {
        attempts += 1;
        assert!(attempts < 50 * RUNS, "too few mutants pass check");
        let dir = tempfile::tempdir().unwrap();
        let bytes = mutator.mutate(&corpus[attempts % corpus.len()]);
        let Ok(mutant) = String::from_utf8(bytes) else {
            continue;
        };
        let layout = small_grid(&mutant);
        let path = dir.path().join("m.toml");
        std::fs::write(&path, &layout).unwrap();
        if check(&path).is_err() {
            continue;
        }
        // Layouts that are valid but need large grids after a Fresnel step
        // are kept: the run must refuse them cleanly or complete.
        let o = bin()
            .current_dir(dir.path())
            .args(["run", "m.toml", "-o", "out", "--quiet", "--threads", "1"])
            .output()
            .unwrap();
        let (_, err) = text(&o);
        let code = o.status.code().unwrap_or(-1);
        assert!(
            (0..=2).contains(&code),
            "exit {code}: {err}\nlayout:\n{layout}"
        );
        codes[code as usize] += 1;
        let out = dir.path().join("out");
        if code == 2 {
            let left: Vec<_> = std::fs::read_dir(dir.path())
                .unwrap()
                .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
                .collect();
            assert_eq!(left, ["m.toml"], "{err}\nlayout:\n{layout}");
            assert_eq!(err.lines().count(), 1, "{err}");
        } else {
            let json = std::fs::read_to_string(out.join("report.json")).unwrap();
            assert!(
                !json.contains(": NaN") && !json.contains("Infinity") && !json.contains(": inf"),
                "non-finite number in report.json\nlayout:\n{layout}"
            );
            serde_json::from_str::<serde_json::Value>(&json).expect("valid JSON");
        }
        done += 1;
    }
    eprintln!(
        "fuzz run: {RUNS} runs from {attempts} mutants: exit 0 ×{}, 1 ×{}, 2 ×{}",
        codes[0], codes[1], codes[2]
    );
}
