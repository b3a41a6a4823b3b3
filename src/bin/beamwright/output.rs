//! The output directory of `run`: which paths may be written or replaced,
//! the advisory lock that keeps two runs apart, the staging folder the run
//! writes into, the swap that puts it in place, and cleanup on signals.
//!
//! Rules (README "Output folder"): never delete or overwrite what
//! beamwright did not write. A run writes into a hidden sibling staging
//! folder `.NAME.partial-PID` holding the marker file [`MARKER`], which
//! lists every file the run wrote. `--force` replaces only an existing
//! folder whose marker lists every entry in it. The replacement is an
//! atomic exchange of the two folders (Linux `renameat2`), so a kill at any
//! moment leaves the old output or the new one, complete; elsewhere it is
//! rename-aside, rename-in, delete-aside, and a folder left aside by a
//! killed run is put back by the next run into the same parent.

use std::fs::{File, OpenOptions};
use std::path::{Component, Path, PathBuf};
use std::sync::atomic::AtomicBool;
use std::sync::{Arc, Mutex};

use beamwright::{Error, Result};

/// Name of the marker file in every folder a run writes.
pub const MARKER: &str = ".beamwright-output";
/// First line of the marker file.
const MARKER_HEADER: &str = "beamwright output folder; files written by the run:";

/// Paths to remove if the process is stopped by a signal: the staging
/// folder and the lock file. Emptied once the output is in place.
static CLEANUP: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

/// Installs the signal handlers of the `run` command: SIGINT, SIGTERM and
/// SIGHUP remove the staging folder and the lock file, then exit with
/// 128 + the signal number; SIGXFSZ (file-size limit) is caught so that
/// the write that crossed the limit fails with an error instead of killing
/// the process, and the run ends through the ordinary exit-2 path.
pub fn install_signal_handlers() -> Result<()> {
    use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM, SIGXFSZ};
    let failed = |e: std::io::Error| Error::Physics(format!("cannot install signal handlers: {e}"));
    signal_hook::flag::register(SIGXFSZ, Arc::new(AtomicBool::new(false))).map_err(failed)?;
    let mut signals =
        signal_hook::iterator::Signals::new([SIGINT, SIGTERM, SIGHUP]).map_err(failed)?;
    std::thread::Builder::new()
        .name("signals".into())
        .spawn(move || {
            if let Some(signal) = signals.forever().next() {
                // Waits while the output is being swapped into place, so the
                // swap is never cut in half.
                let paths = CLEANUP.lock().unwrap_or_else(|e| e.into_inner());
                for path in paths.iter() {
                    remove_any(path);
                }
                crate::console::error(&format!(
                    "interrupted by signal {signal}; nothing was written to the output folder"
                ));
                std::process::exit(128 + signal);
            }
        })
        .map_err(|e| Error::Physics(format!("cannot start the signal thread: {e}")))?;
    Ok(())
}

/// Removes a file or a folder, retrying a folder a few times in case the
/// run was still writing into it.
fn remove_any(path: &Path) {
    if path.is_dir() {
        for _ in 0..5 {
            if std::fs::remove_dir_all(path).is_ok() || !path.exists() {
                return;
            }
        }
    } else {
        let _ = std::fs::remove_file(path);
    }
}

fn io_err(path: &Path) -> impl FnOnce(std::io::Error) -> Error + '_ {
    move |source| Error::Io {
        path: path.to_path_buf(),
        source,
    }
}

fn refuse(path: &Path, message: impl Into<String>) -> Error {
    Error::File {
        path: path.to_path_buf(),
        message: message.into(),
    }
}

/// An output folder being written: the lock is held and the staging folder
/// exists until [`OutputDir::commit`] or drop.
pub struct OutputDir {
    /// The folder as the user named it (for messages).
    shown: PathBuf,
    /// Its absolute, symlink-free path.
    target: PathBuf,
    force: bool,
    staging: PathBuf,
    lock: Option<LockFile>,
    committed: bool,
}

impl OutputDir {
    /// Checks that `out` may be written (and, with `force`, replaced),
    /// takes the lock, removes stale staging folders of dead runs in the
    /// same parent, and creates the staging folder.
    ///
    /// `protected` are files the output must not contain (the layout and
    /// its inputs).
    ///
    /// # Errors
    /// [`Error::File`] naming the path and the rule it breaks.
    pub fn prepare(out: &Path, protected: &[PathBuf], force: bool) -> Result<Self> {
        let target = absolute(out)?;
        refuse_dangerous(out, &target, protected)?;
        let (parent, name) = split(&target, out)?;
        std::fs::create_dir_all(&parent).map_err(io_err(&parent))?;
        let lock = LockFile::acquire(&parent, &name, out)?;
        clean_stale(&parent);
        may_replace(out, &target, force)?;
        let staging = parent.join(format!(".{name}.partial-{}", std::process::id()));
        if staging.exists() {
            remove_any(&staging);
        }
        std::fs::create_dir(&staging).map_err(io_err(&staging))?;
        {
            let mut cleanup = CLEANUP.lock().unwrap_or_else(|e| e.into_inner());
            cleanup.push(staging.clone());
            cleanup.push(lock.path.clone());
        }
        write_marker(&staging)?;
        Ok(Self {
            shown: out.to_path_buf(),
            target,
            force,
            staging,
            lock: Some(lock),
            committed: false,
        })
    }

    /// The folder the run writes into.
    pub fn staging(&self) -> &Path {
        &self.staging
    }

    /// `err` with the staging folder's path replaced by the output
    /// folder's, so that messages name the folder the user asked for.
    pub fn user_facing(&self, err: Error) -> Error {
        match err {
            Error::Io { path, source } => match path.strip_prefix(&self.staging) {
                Ok(rest) => Error::Io {
                    path: self.shown.join(rest),
                    source,
                },
                Err(_) => Error::Io { path, source },
            },
            Error::Physics(message) => Error::Physics(message.replace(
                &*self.staging.to_string_lossy(),
                &self.shown.to_string_lossy(),
            )),
            other => other,
        }
    }

    /// Puts the staging folder in place of the output folder. The rule
    /// "may I replace this" is checked again now: a folder created or
    /// filled by someone else while the run was going is not replaced.
    ///
    /// # Errors
    /// [`Error::File`] if the output may no longer be replaced;
    /// [`Error::Io`] if a rename fails. The staging folder is removed then.
    pub fn commit(mut self) -> Result<()> {
        write_marker(&self.staging)?;
        // Holding the cleanup list keeps a signal from interrupting the swap.
        let mut cleanup = CLEANUP.lock().unwrap_or_else(|e| e.into_inner());
        refuse_dangerous(&self.shown, &self.target, &[])?;
        may_replace(&self.shown, &self.target, self.force)?;
        if !self.target.exists() {
            std::fs::rename(&self.staging, &self.target).map_err(io_err(&self.shown))?;
        } else {
            let aside = swap_in(&self.staging, &self.target).map_err(io_err(&self.shown))?;
            // `aside` now holds the previous output; delete it only if it
            // still holds nothing but files a run wrote.
            match foreign_entry(&aside) {
                Ok(None) => remove_any(&aside),
                // An empty folder (remove_dir refuses anything else).
                _ if std::fs::remove_dir(&aside).is_ok() => {}
                _ => crate::console::warning(&format!(
                    "the previous output was kept at {} because it holds files beamwright did not write",
                    aside.display()
                )),
            }
        }
        self.committed = true;
        cleanup.clear();
        Ok(())
    }
}

impl Drop for OutputDir {
    fn drop(&mut self) {
        if !self.committed {
            remove_any(&self.staging);
        }
        let mut cleanup = CLEANUP.lock().unwrap_or_else(|e| e.into_inner());
        cleanup.clear();
        drop(self.lock.take());
    }
}

/// Exchanges `staging` and `target` atomically where the system can, else
/// renames the target aside first. Returns where the old output now is.
fn swap_in(staging: &Path, target: &Path) -> std::io::Result<PathBuf> {
    #[cfg(target_os = "linux")]
    {
        use rustix::fs::{renameat_with, RenameFlags, CWD};
        match renameat_with(CWD, staging, CWD, target, RenameFlags::EXCHANGE) {
            Ok(()) => return Ok(staging.to_path_buf()),
            Err(e) if e == rustix::io::Errno::INVAL || e == rustix::io::Errno::NOSYS => {}
            Err(e) => return Err(e.into()),
        }
    }
    let (parent, name) = (
        target.parent().unwrap_or(Path::new("/")),
        target.file_name().unwrap_or_default().to_string_lossy(),
    );
    let aside = parent.join(format!(".{name}.old-{}", std::process::id()));
    std::fs::rename(target, &aside)?;
    if let Err(e) = std::fs::rename(staging, target) {
        let _ = std::fs::rename(&aside, target);
        return Err(e);
    }
    Ok(aside)
}

/// The absolute path of `out` with symbolic links and `.`/`..` resolved:
/// the longest existing ancestor is canonicalised and the rest appended.
fn absolute(out: &Path) -> Result<PathBuf> {
    let abs = std::path::absolute(out).map_err(io_err(out))?;
    let mut existing = abs.as_path();
    let mut rest = Vec::new();
    while !existing.exists() {
        match (existing.parent(), existing.file_name()) {
            (Some(parent), Some(name)) => {
                rest.push(name.to_os_string());
                existing = parent;
            }
            _ => break,
        }
    }
    let mut resolved = existing.canonicalize().map_err(io_err(out))?;
    for name in rest.iter().rev() {
        resolved.push(name);
    }
    if resolved
        .components()
        .any(|c| matches!(c, Component::ParentDir | Component::CurDir))
    {
        return Err(refuse(out, "the output path goes through a folder that does not exist and then '..'; name the folder directly"));
    }
    Ok(resolved)
}

fn split(target: &Path, shown: &Path) -> Result<(PathBuf, String)> {
    match (target.parent(), target.file_name()) {
        (Some(parent), Some(name)) => {
            Ok((parent.to_path_buf(), name.to_string_lossy().into_owned()))
        }
        _ => Err(refuse(
            shown,
            "refusing to use the filesystem root as the output folder",
        )),
    }
}

/// Output paths that are never used, with or without `--force`.
fn refuse_dangerous(shown: &Path, target: &Path, protected: &[PathBuf]) -> Result<()> {
    if target.parent().is_none() {
        return Err(refuse(
            shown,
            "refusing to use the filesystem root as the output folder",
        ));
    }
    if let Some(home) = std::env::var_os("HOME").and_then(|h| PathBuf::from(h).canonicalize().ok())
    {
        if home == target {
            return Err(refuse(
                shown,
                "refusing to use the home folder as the output folder; name a new folder with -o",
            ));
        }
    }
    if let Ok(cwd) = std::env::current_dir().and_then(|c| c.canonicalize()) {
        if cwd.starts_with(target) {
            return Err(refuse(
                shown,
                "refusing to use the current folder or one that contains it as the output folder; name a new folder with -o",
            ));
        }
    }
    for file in protected {
        if let Ok(file) = absolute(file) {
            if file.starts_with(target) {
                return Err(refuse(
                    shown,
                    format!(
                        "refusing to write the output folder over {}, which this run reads; name a new folder with -o",
                        file.display()
                    ),
                ));
            }
        }
    }
    match std::fs::symlink_metadata(target) {
        Ok(meta) if !meta.is_dir() => Err(refuse(
            shown,
            "is an existing file, not a folder; name a new folder with -o",
        )),
        _ => Ok(()),
    }
}

/// Whether an existing output folder may be replaced: an empty folder
/// always; a non-empty one only with `force` and only if the marker lists
/// everything in it.
fn may_replace(shown: &Path, target: &Path, force: bool) -> Result<()> {
    let mut entries = match std::fs::read_dir(target) {
        Ok(entries) => entries,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(()),
        Err(e) => return Err(io_err(shown)(e)),
    };
    if entries.next().is_none() {
        return Ok(());
    }
    if !force {
        return Err(refuse(
            shown,
            "output folder exists and is not empty; choose another with -o, or replace a previous run's output with --force",
        ));
    }
    match foreign_entry(target).map_err(io_err(shown))? {
        None => Ok(()),
        Some(Foreign::NoMarker) => Err(refuse(
            shown,
            format!("was not written by beamwright (no {MARKER} file); refusing to replace it even with --force"),
        )),
        Some(Foreign::Entry(name)) => Err(refuse(
            shown,
            format!("holds '{name}', which beamwright did not write; refusing to replace it even with --force (move it away first)"),
        )),
    }
}

/// Why a folder is not purely a run's output.
enum Foreign {
    NoMarker,
    Entry(String),
}

/// The first entry of `dir` that its marker does not list, if any.
fn foreign_entry(dir: &Path) -> std::io::Result<Option<Foreign>> {
    let marker = match std::fs::read_to_string(dir.join(MARKER)) {
        Ok(text) if text.starts_with(MARKER_HEADER) => text,
        _ => return Ok(Some(Foreign::NoMarker)),
    };
    let listed: Vec<&str> = marker.lines().skip(1).collect();
    for entry in std::fs::read_dir(dir)? {
        let entry = entry?;
        let name = entry.file_name().to_string_lossy().into_owned();
        if name == MARKER {
            continue;
        }
        if !entry.file_type()?.is_file() || !listed.contains(&name.as_str()) {
            return Ok(Some(Foreign::Entry(name)));
        }
    }
    Ok(None)
}

/// Writes the marker listing every file now in `dir`.
fn write_marker(dir: &Path) -> Result<()> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .map_err(io_err(dir))?
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n != MARKER)
        .collect();
    names.sort();
    let mut text = String::from(MARKER_HEADER);
    text.push('\n');
    for name in names {
        text.push_str(&name);
        text.push('\n');
    }
    let path = dir.join(MARKER);
    std::fs::write(&path, text).map_err(io_err(&path))
}

/// Removes staging folders (`.NAME.partial-PID`) of processes that no
/// longer run, lock files nobody holds, and puts back an output folder a killed run had renamed
/// aside (`.NAME.old-PID`). Only folders holding a marker are touched.
fn clean_stale(parent: &Path) {
    let Ok(entries) = std::fs::read_dir(parent) else {
        return;
    };
    for entry in entries.filter_map(|e| e.ok()) {
        let file_name = entry.file_name().to_string_lossy().into_owned();
        let Some((name, kind, pid)) = parse_scratch_name(&file_name) else {
            continue;
        };
        if kind == "lock" {
            remove_unheld_lock(&entry.path());
            continue;
        }
        if pid == std::process::id() || process_alive(pid) {
            continue;
        }
        let path = entry.path();
        if !path.join(MARKER).is_file() {
            continue;
        }
        let original = parent.join(name);
        if kind == "old" && !original.exists() {
            let _ = std::fs::rename(&path, &original);
        } else {
            remove_any(&path);
        }
    }
}

/// Removes a lock file that no run holds (left by a killed run).
fn remove_unheld_lock(path: &Path) {
    if let Ok(file) = OpenOptions::new().write(true).open(path) {
        if file.try_lock().is_ok() && same_file(&file, path) {
            let _ = std::fs::remove_file(path);
        }
    }
}

/// Splits `.NAME.partial-PID` / `.NAME.old-PID` into its parts, and
/// `.NAME.lock` into `(NAME, "lock", 0)`.
fn parse_scratch_name(file_name: &str) -> Option<(&str, &str, u32)> {
    let rest = file_name.strip_prefix('.')?;
    if let Some(name) = rest.strip_suffix(".lock") {
        return (!name.is_empty()).then_some((name, "lock", 0));
    }
    let (stem, pid) = rest.rsplit_once('-')?;
    let pid: u32 = pid.parse().ok()?;
    let (name, kind) = stem.rsplit_once('.')?;
    (matches!(kind, "partial" | "old") && !name.is_empty()).then_some((name, kind, pid))
}

fn process_alive(pid: u32) -> bool {
    #[cfg(unix)]
    {
        let Some(pid) = i32::try_from(pid)
            .ok()
            .and_then(rustix::process::Pid::from_raw)
        else {
            return false;
        };
        !matches!(
            rustix::process::test_kill_process(pid),
            Err(e) if e == rustix::io::Errno::SRCH
        )
    }
    #[cfg(not(unix))]
    {
        let _ = pid;
        true
    }
}

/// An advisory lock on `.NAME.lock` beside the output folder, held for the
/// whole run and removed at the end.
struct LockFile {
    path: PathBuf,
    _file: File,
}

impl LockFile {
    fn acquire(parent: &Path, name: &str, shown: &Path) -> Result<Self> {
        let path = parent.join(format!(".{name}.lock"));
        loop {
            let file = OpenOptions::new()
                .create(true)
                .truncate(false)
                .write(true)
                .open(&path)
                .map_err(io_err(&path))?;
            match file.try_lock() {
                Ok(()) => {}
                Err(std::fs::TryLockError::WouldBlock) => {
                    return Err(refuse(
                        shown,
                        "another beamwright run is writing this output folder; wait for it to finish or choose another with -o",
                    ))
                }
                Err(std::fs::TryLockError::Error(e)) => return Err(io_err(&path)(e)),
            }
            // The holder before us removes the file as it finishes; if we
            // locked a removed file, try again on the new one.
            if same_file(&file, &path) {
                return Ok(Self { path, _file: file });
            }
        }
    }
}

impl Drop for LockFile {
    fn drop(&mut self) {
        // Removed while still locked, so a waiting run re-opens a new file.
        let _ = std::fs::remove_file(&self.path);
    }
}

fn same_file(file: &File, path: &Path) -> bool {
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        match (file.metadata(), std::fs::metadata(path)) {
            (Ok(a), Ok(b)) => a.dev() == b.dev() && a.ino() == b.ino(),
            _ => false,
        }
    }
    #[cfg(not(unix))]
    {
        let _ = (file, path);
        true
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn scratch_names_parse() {
        assert_eq!(
            parse_scratch_name(".out.partial-123"),
            Some(("out", "partial", 123))
        );
        assert_eq!(parse_scratch_name(".a.b.old-7"), Some(("a.b", "old", 7)));
        assert_eq!(parse_scratch_name(".out.partial-x"), None);
        assert_eq!(parse_scratch_name("out.partial-1"), None);
        assert_eq!(parse_scratch_name(".out.lock"), Some(("out", "lock", 0)));
        assert_eq!(parse_scratch_name("..lock"), None);
        assert_eq!(parse_scratch_name("..partial-1"), None);
    }

    #[test]
    fn marker_guards_foreign_files() {
        let dir = tempfile::tempdir().unwrap();
        let d = dir.path();
        std::fs::write(d.join("report.json"), "{}").unwrap();
        assert!(matches!(foreign_entry(d).unwrap(), Some(Foreign::NoMarker)));
        write_marker(d).unwrap();
        assert!(foreign_entry(d).unwrap().is_none());
        std::fs::write(d.join("notes.txt"), "mine").unwrap();
        assert!(matches!(foreign_entry(d).unwrap(), Some(Foreign::Entry(n)) if n == "notes.txt"));
    }

    #[test]
    fn this_process_is_alive() {
        assert!(process_alive(std::process::id()));
    }
}
