//! Data safety of `run`'s output folder under mistakes and faults: paths
//! that must never be replaced, `--force` limited to a previous run's
//! output, signals, a killed run, two runs at once and a file-size limit.
//! Each test leaves a sentinel file and checks that it survives (the rule
//! "never delete or overwrite what the tool did not write", common
//! practice for command-line tools).

use std::path::Path;
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use crate::cli::{bin, run_in, text, GOOD};

/// A layout that takes long enough (about a second) to be interrupted.
fn slow_layout() -> String {
    GOOD.replace("n = 64", "n = 2048")
        .replace("spacing = \"50 um\"", "spacing = \"4 um\"")
        .replace(
            "[[element]]\nkind = \"probe\"",
            "[[element]]\nkind = \"space\"\nlength = \"10 mm\"\n[[element]]\nkind = \"space\"\nlength = \"10 mm\"\n[[element]]\nkind = \"probe\"\nsave = [\"intensity\", \"phase\", \"field\"]",
        )
}

fn entries(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

fn scratch_left(dir: &Path) -> Vec<String> {
    entries(dir)
        .into_iter()
        .filter(|n| n.contains(".partial-") || n.contains(".old-") || n.ends_with(".lock"))
        .collect()
}

fn refused_with(dir: &Path, args: &[&str], needle: &str) {
    let o = run_in(dir, args);
    let (_, err) = text(&o);
    assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
    assert!(err.contains(needle), "{args:?}: '{needle}' not in {err}");
    assert_eq!(err.lines().count(), 1, "{err}");
}

#[test]
fn dangerous_output_paths_are_refused_even_with_force() {
    let root = tempfile::tempdir().unwrap();
    let work = root.path().join("work");
    std::fs::create_dir(&work).unwrap();
    std::fs::write(root.path().join("sentinel.txt"), "keep").unwrap();
    std::fs::write(work.join("sentinel.txt"), "keep").unwrap();
    std::fs::write(work.join("good.toml"), GOOD).unwrap();
    let run = |out: &str, needle: &str| {
        refused_with(
            &work,
            &["run", "good.toml", "-o", out, "--quiet", "--force"],
            needle,
        )
    };
    run(".", "current folder");
    run("..", "current folder");
    run("./", "current folder");
    run("../work", "current folder");
    run("/", "filesystem root");
    run("sentinel.txt", "existing file");
    // A folder holding the layout, from outside it.
    refused_with(
        root.path(),
        &["run", "work/good.toml", "-o", "work", "--quiet", "--force"],
        "which this run reads",
    );
    // A folder holding an input file the layout names.
    let inputs = root.path().join("inputs");
    std::fs::create_dir(&inputs).unwrap();
    image::GrayImage::from_pixel(64, 64, image::Luma([255u8]))
        .save(inputs.join("m.png"))
        .unwrap();
    let masked = GOOD.replace(
        "[[element]]\nkind = \"probe\"",
        "[[element]]\nkind = \"mask\"\nfile = \"inputs/m.png\"\ntype = \"amplitude\"\n[[element]]\nkind = \"probe\"",
    );
    std::fs::write(root.path().join("masked.toml"), masked).unwrap();
    refused_with(
        root.path(),
        &["run", "masked.toml", "-o", "inputs", "--quiet", "--force"],
        "which this run reads",
    );
    assert!(inputs.join("m.png").exists());
    if let Some(home) = std::env::var_os("HOME") {
        let o = bin()
            .current_dir(&work)
            .args(["run", "good.toml", "-o"])
            .arg(&home)
            .args(["--quiet", "--force"])
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(2), "{:?}", text(&o));
        assert!(text(&o).1.contains("home folder"), "{:?}", text(&o));
    }
    assert_eq!(
        std::fs::read_to_string(work.join("sentinel.txt")).unwrap(),
        "keep"
    );
    assert_eq!(
        std::fs::read_to_string(root.path().join("sentinel.txt")).unwrap(),
        "keep"
    );
    assert!(work.join("good.toml").exists());
    assert_eq!(entries(&work), ["good.toml", "sentinel.txt"]);
}

#[test]
fn force_replaces_only_a_previous_runs_output() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    std::fs::write(d.join("good.toml"), GOOD).unwrap();
    // A user's folder is never replaced.
    std::fs::create_dir(d.join("notes")).unwrap();
    std::fs::write(d.join("notes/lab.txt"), "keep").unwrap();
    refused_with(
        d,
        &["run", "good.toml", "-o", "notes", "--quiet"],
        "--force",
    );
    refused_with(
        d,
        &["run", "good.toml", "-o", "notes", "--quiet", "--force"],
        "not written by beamwright",
    );
    assert_eq!(
        std::fs::read_to_string(d.join("notes/lab.txt")).unwrap(),
        "keep"
    );
    // A run's output is, and an empty folder is used as it is.
    std::fs::create_dir(d.join("empty")).unwrap();
    let o = run_in(d, &["run", "good.toml", "-o", "empty", "--quiet"]);
    assert!(o.status.success(), "{:?}", text(&o));
    let o = run_in(
        d,
        &["run", "good.toml", "-o", "empty", "--quiet", "--force"],
    );
    assert!(o.status.success(), "{:?}", text(&o));
    // Once the user adds a file of their own, it is not.
    std::fs::write(d.join("empty/mine.txt"), "keep").unwrap();
    refused_with(
        d,
        &["run", "good.toml", "-o", "empty", "--quiet", "--force"],
        "'mine.txt'",
    );
    assert_eq!(
        std::fs::read_to_string(d.join("empty/mine.txt")).unwrap(),
        "keep"
    );
    assert!(scratch_left(d).is_empty(), "{:?}", scratch_left(d));
}

/// Starts a slow run into `out` and waits until its staging folder exists.
fn start_slow_run(dir: &Path, out: &str, force: bool) -> Child {
    let mut cmd = bin();
    cmd.current_dir(dir)
        .args(["run", "slow.toml", "-o", out, "--quiet"])
        .stdout(Stdio::null())
        .stderr(Stdio::piped());
    if force {
        cmd.arg("--force");
    }
    let child = cmd.spawn().unwrap();
    let start = Instant::now();
    let staging = format!(".{out}.partial-{}", child.id());
    while !dir.join(&staging).exists() {
        assert!(
            start.elapsed() < Duration::from_secs(60),
            "run never started"
        );
        std::thread::sleep(Duration::from_millis(5));
    }
    child
}

fn signal(child: &Child, name: &str) {
    let ok = Command::new("kill")
        .args([format!("-{name}"), child.id().to_string()])
        .status()
        .unwrap()
        .success();
    assert!(ok);
}

#[cfg(unix)]
#[test]
fn interrupted_runs_leave_no_partial_folder_and_the_old_output_intact() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    std::fs::write(d.join("slow.toml"), slow_layout()).unwrap();
    std::fs::write(d.join("good.toml"), GOOD).unwrap();
    let o = run_in(d, &["run", "good.toml", "-o", "out", "--quiet"]);
    assert!(o.status.success());
    let before = std::fs::read(d.join("out/report.json")).unwrap();
    let listing = entries(&d.join("out"));
    for (sig, code) in [("INT", 130), ("TERM", 143), ("HUP", 129)] {
        let child = start_slow_run(d, "out", true);
        signal(&child, sig);
        let o = child.wait_with_output().unwrap();
        assert_eq!(o.status.code(), Some(code), "{sig}: {:?}", text(&o));
        assert!(text(&o).1.contains("interrupted"), "{sig}: {:?}", text(&o));
        assert!(scratch_left(d).is_empty(), "{sig}: {:?}", scratch_left(d));
        assert_eq!(std::fs::read(d.join("out/report.json")).unwrap(), before);
        assert_eq!(entries(&d.join("out")), listing);
    }
    // A run killed outright leaves its staging folder and lock; the next
    // run into the same parent removes them.
    let mut child = start_slow_run(d, "out", true);
    signal(&child, "KILL");
    let _ = child.wait();
    assert!(!scratch_left(d).is_empty());
    assert_eq!(std::fs::read(d.join("out/report.json")).unwrap(), before);
    let o = run_in(d, &["run", "good.toml", "-o", "other", "--quiet"]);
    assert!(o.status.success());
    assert!(scratch_left(d).is_empty(), "{:?}", scratch_left(d));
}

#[cfg(unix)]
#[test]
fn two_runs_to_one_folder_one_refused_at_once_the_other_complete() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    std::fs::write(d.join("slow.toml"), slow_layout()).unwrap();
    let first = start_slow_run(d, "out", false);
    let t = Instant::now();
    let o = run_in(d, &["run", "slow.toml", "-o", "out", "--quiet", "--force"]);
    assert_eq!(o.status.code(), Some(2), "{:?}", text(&o));
    assert!(
        text(&o).1.contains("another beamwright run"),
        "{:?}",
        text(&o)
    );
    assert!(t.elapsed() < Duration::from_secs(5), "second run waited");
    let o = first.wait_with_output().unwrap();
    assert!(o.status.success(), "{:?}", text(&o));
    let names = entries(&d.join("out"));
    for file in [
        "report.json",
        "end_intensity.png",
        "end_phase.png",
        "end_field.npy",
    ] {
        assert!(names.iter().any(|n| n == file), "{file} missing: {names:?}");
    }
    assert!(scratch_left(d).is_empty(), "{:?}", scratch_left(d));
}

#[cfg(unix)]
#[test]
fn a_folder_filled_during_a_run_is_not_replaced() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    std::fs::write(d.join("slow.toml"), slow_layout()).unwrap();
    let child = start_slow_run(d, "late", false);
    std::fs::create_dir(d.join("late")).unwrap();
    std::fs::write(d.join("late/mine.txt"), "keep").unwrap();
    let o = child.wait_with_output().unwrap();
    assert_eq!(o.status.code(), Some(2), "{:?}", text(&o));
    assert_eq!(
        std::fs::read_to_string(d.join("late/mine.txt")).unwrap(),
        "keep"
    );
    assert_eq!(entries(&d.join("late")), ["mine.txt"]);
    assert!(scratch_left(d).is_empty(), "{:?}", scratch_left(d));
}

#[cfg(unix)]
#[test]
fn file_size_limit_and_full_streams_end_in_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    std::fs::write(d.join("slow.toml"), slow_layout()).unwrap();
    let o = Command::new("sh")
        .current_dir(d)
        .arg("-c")
        .arg(format!(
            "ulimit -f 64; exec '{}' run slow.toml -o out --quiet",
            env!("CARGO_BIN_EXE_beamwright")
        ))
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2), "{:?}", text(&o));
    assert!(text(&o).1.contains("out/"), "{:?}", text(&o));
    assert!(!text(&o).1.contains("partial"), "{:?}", text(&o));
    assert_eq!(entries(d), ["slow.toml"]);
    // A full standard error or output is not a crash.
    let full = || std::fs::OpenOptions::new().write(true).open("/dev/full");
    if let Ok(devfull) = full() {
        let o = bin()
            .current_dir(d)
            .args(["run", "missing.toml"])
            .stderr(devfull)
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(2));
        let o = bin()
            .current_dir(d)
            .args(["check", "slow.toml"])
            .stdout(full().unwrap())
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(2), "{:?}", text(&o));
    }
}
