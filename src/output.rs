//! The one writer of every folder and file plateau produces (report, verification record, run
//! sheet, change summary).
//!
//! Its rules, so that no command can lose a file it did not create:
//! - a destination that exists is used only if it is plateau's own earlier output: a folder
//!   holding the [`MARKER`] file and nothing that the marker does not list, or (for a single
//!   file, with `--force`) a regular file whose first bytes are what plateau writes there. An
//!   empty folder is also accepted (nothing in it can be lost). Anything else is refused with a
//!   message naming the path;
//! - everything is assembled in a staging folder beside the destination whose name is unique
//!   to the process and to the call (`.<name>.partial-<pid>-<n>`), created with `create_dir`
//!   so two writers can never share one;
//! - the finished result is renamed into place; an earlier output is moved aside first and
//!   only the files its marker lists are deleted afterwards;
//! - a failure, or SIGINT, SIGTERM or SIGHUP, removes the staging folder and nothing else
//!   (see [`cleanup`]).

pub mod cleanup;

use std::io::Read;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

/// The file in every folder plateau writes that lists the files it wrote there; its presence
/// is how a later run recognises the folder as its own earlier output.
pub const MARKER: &str = ".plateau-output";

const MARKER_HEAD: &str = "# written by plateau: the files below may be replaced by its next run";

/// Largest marker file read (a marker lists a few dozen names).
const MARKER_LIMIT: u64 = 1024 * 1024;

/// Why a destination was refused or could not be written.
#[derive(Debug, thiserror::Error)]
pub enum OutputError {
    /// The destination exists and is not plateau's earlier output.
    #[error("failed to write {path} ({why})\nhint: {hint}")]
    Occupied {
        /// The destination.
        path: String,
        /// What is there.
        why: String,
        /// What would be valid.
        hint: String,
    },
    /// The file system refused.
    #[error("failed to write {path} ({cause})")]
    Write {
        /// The path.
        path: String,
        /// The operating system's reason.
        cause: String,
    },
}

impl OutputError {
    /// A write failure at `path`.
    pub fn write(path: &Path, e: impl std::fmt::Display) -> Self {
        Self::Write {
            path: path.display().to_string(),
            cause: e.to_string(),
        }
    }
}

static COUNTER: AtomicU64 = AtomicU64::new(0);

/// A staging folder this process created; removed when dropped unless it was renamed into place.
#[derive(Debug)]
pub struct Staging {
    path: PathBuf,
    moved: bool,
}

impl Staging {
    /// Creates `.<name>.partial-<pid>-<n>` in `parent`, with `n` the first free number of a
    /// process-wide counter (unique across threads; `create_dir` fails rather than share).
    pub fn new(parent: &Path, name: &str) -> Result<Self, OutputError> {
        cleanup::install();
        sweep_dead(parent, name);
        loop {
            let n = COUNTER.fetch_add(1, Ordering::SeqCst);
            let path = parent.join(format!(".{name}.partial-{}-{n}", std::process::id()));
            match std::fs::create_dir(&path) {
                Ok(()) => {
                    cleanup::register_folder(&path);
                    return Ok(Self { path, moved: false });
                }
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists && n < 1_000_000 => {}
                Err(e) => return Err(OutputError::write(&path, e)),
            }
        }
    }

    /// The folder.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Stops managing the folder: it is no longer removed on drop or on a signal (it was
    /// renamed into place, or now holds an earlier output).
    fn keep(&mut self) {
        self.moved = true;
        cleanup::unregister_folder(&self.path);
    }
}

impl Drop for Staging {
    fn drop(&mut self) {
        if !self.moved {
            let _ = std::fs::remove_dir_all(&self.path);
        }
        cleanup::unregister_folder(&self.path);
    }
}

/// Removes staging folders `.<name>.partial-<pid>-<n>` left by a plateau process that no
/// longer runs (killed with SIGKILL, or the machine stopped). Only where the process table can
/// be read (`/proc`): a folder whose process may still be alive is never touched, so one
/// process never removes another's work.
fn sweep_dead(parent: &Path, name: &str) {
    let proc = Path::new("/proc");
    if !proc.join("self").exists() {
        return;
    }
    let prefix = format!(".{name}.partial-");
    let Ok(entries) = std::fs::read_dir(parent) else {
        return;
    };
    for entry in entries.flatten() {
        let file = entry.file_name().to_string_lossy().to_string();
        let Some(rest) = file.strip_prefix(&prefix) else {
            continue;
        };
        let Some((pid, n)) = rest.split_once('-') else {
            continue;
        };
        let numeric = |s: &str| !s.is_empty() && s.bytes().all(|b| b.is_ascii_digit());
        if !numeric(pid) || !numeric(n) || pid == std::process::id().to_string() {
            continue;
        }
        let is_dir = std::fs::symlink_metadata(entry.path()).is_ok_and(|m| m.is_dir());
        if is_dir && !proc.join(pid).exists() {
            let _ = std::fs::remove_dir_all(entry.path());
        }
    }
}

fn parent_and_name(dest: &Path, fallback: &str) -> (PathBuf, String) {
    let parent = dest
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .map(Path::to_path_buf)
        .unwrap_or_else(|| PathBuf::from("."));
    let name = dest
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| fallback.to_string());
    (parent, name)
}

/// What an existing destination folder is.
enum Existing {
    /// Nothing there (or an empty folder).
    Free,
    /// plateau's earlier output: the files its marker lists.
    Ours(Vec<String>),
}

fn occupied(dest: &Path, why: impl Into<String>) -> OutputError {
    OutputError::Occupied {
        path: dest.display().to_string(),
        why: why.into(),
        hint: "choose a new folder, or move or delete it yourself; plateau replaces only a folder it wrote itself"
            .into(),
    }
}

/// The files a marker lists.
fn read_marker(path: &Path) -> Option<Vec<String>> {
    let meta = std::fs::symlink_metadata(path).ok()?;
    if !meta.is_file() {
        return None;
    }
    let mut text = String::new();
    std::fs::File::open(path)
        .ok()?
        .take(MARKER_LIMIT)
        .read_to_string(&mut text)
        .ok()?;
    let mut lines = text.lines();
    if lines.next() != Some(MARKER_HEAD) {
        return None;
    }
    Some(
        lines
            .filter(|l| !l.is_empty())
            .map(str::to_string)
            .collect(),
    )
}

/// Tells whether `dest` may be written: free, or a folder plateau wrote (named by `what`, e.g.
/// "report folder", in the refusal).
fn inspect_folder(dest: &Path, what: &str) -> Result<Existing, OutputError> {
    let meta = match std::fs::symlink_metadata(dest) {
        Ok(m) => m,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(Existing::Free),
        Err(e) => return Err(OutputError::write(dest, e)),
    };
    if meta.file_type().is_symlink() {
        return Err(occupied(
            dest,
            format!("it is a symbolic link, not a {what} plateau wrote"),
        ));
    }
    if !meta.is_dir() {
        return Err(occupied(
            dest,
            format!("it is a file, not a {what}; plateau never replaces it"),
        ));
    }
    let entries: Vec<String> = std::fs::read_dir(dest)
        .map_err(|e| OutputError::write(dest, e))?
        .map(|e| e.map(|e| e.file_name().to_string_lossy().to_string()))
        .collect::<Result<_, _>>()
        .map_err(|e| OutputError::write(dest, e))?;
    if entries.is_empty() {
        return Ok(Existing::Free);
    }
    let Some(listed) = read_marker(&dest.join(MARKER)) else {
        let older = ["inputs.json", "verification.json"]
            .iter()
            .any(|f| entries.iter().any(|e| e == f));
        let why = if older {
            format!(
                "the folder has no {MARKER} file: it was written by an earlier plateau that did not list its files, or by hand; plateau cannot tell which files are its own"
            )
        } else {
            format!("the folder exists and is not a {what} plateau wrote (it has no {MARKER} file)")
        };
        return Err(occupied(dest, why));
    };
    for entry in &entries {
        let regular = std::fs::symlink_metadata(dest.join(entry)).is_ok_and(|m| m.is_file());
        if entry != MARKER && (!listed.contains(entry) || !regular) {
            return Err(occupied(
                dest,
                format!(
                    "it holds {entry}, which plateau did not write; replacing the {what} would lose it"
                ),
            ));
        }
    }
    Ok(Existing::Ours(listed))
}

/// Tells, before any work, whether [`write_folder`] would accept `dest`.
pub fn check_folder(dest: &Path, what: &str) -> Result<(), OutputError> {
    inspect_folder(dest, what).map(|_| ())
}

/// Writes the folder `dest`: `files` (plain names) into a fresh staging folder, then `finish`
/// (e.g. the typesetter) on that folder, then the marker, then the rename into place. `what`
/// names the folder in messages ("report folder"). Refuses before any work when `dest` is not
/// free or plateau's own; on any error the staging folder is removed and `dest` is untouched.
pub fn write_folder<E: From<OutputError>>(
    dest: &Path,
    what: &str,
    files: &[(String, Vec<u8>)],
    finish: impl FnOnce(&Path) -> Result<(), E>,
) -> Result<(), E> {
    inspect_folder(dest, what)?;
    let (parent, name) = parent_and_name(dest, "output");
    std::fs::create_dir_all(&parent).map_err(|e| OutputError::write(&parent, e))?;
    let mut staging = Staging::new(&parent, &name)?;
    for (file, bytes) in files {
        if file.is_empty() || file.contains(['/', '\\']) || file == ".." || file == MARKER {
            return Err(
                OutputError::write(&staging.path.join(file), "not a plain file name").into(),
            );
        }
        let path = staging.path.join(file);
        std::fs::write(&path, bytes).map_err(|e| OutputError::write(&path, e))?;
    }
    finish(&staging.path)?;
    let mut names: Vec<String> = std::fs::read_dir(&staging.path)
        .map_err(|e| OutputError::write(&staging.path, e))?
        .filter_map(Result::ok)
        .map(|e| e.file_name().to_string_lossy().to_string())
        .collect();
    names.sort();
    let marker = format!("{MARKER_HEAD}\n{}\n", names.join("\n"));
    let marker_path = staging.path.join(MARKER);
    std::fs::write(&marker_path, marker).map_err(|e| OutputError::write(&marker_path, e))?;
    // Inspected again just before the rename: the folder may have changed while typesetting.
    match inspect_folder(dest, what)? {
        Existing::Free => {
            std::fs::rename(&staging.path, dest).map_err(|e| OutputError::write(dest, e))?;
            staging.keep();
        }
        Existing::Ours(listed) => {
            let mut aside = Staging::new(&parent, &format!("{name}.old"))?;
            // `aside` is an empty folder of ours; the earlier output replaces it, and from then
            // on it is never removed whole (not on error, not on a signal).
            std::fs::rename(dest, aside.path()).map_err(|e| OutputError::write(dest, e))?;
            aside.keep();
            if let Err(e) = std::fs::rename(&staging.path, dest) {
                let _ = std::fs::rename(aside.path(), dest);
                return Err(OutputError::write(dest, e).into());
            }
            staging.keep();
            remove_listed(aside.path(), &listed);
            // Removed only when empty: whatever appeared there meanwhile is kept.
            let _ = std::fs::remove_dir(aside.path());
        }
    }
    Ok(())
}

fn remove_listed(dir: &Path, listed: &[String]) {
    for name in listed.iter().map(String::as_str).chain([MARKER]) {
        let path = dir.join(name);
        if std::fs::symlink_metadata(&path).is_ok_and(|m| m.is_file()) {
            let _ = std::fs::remove_file(&path);
        }
    }
}

/// How a single output file is recognised as plateau's own earlier output (for `--force`).
#[derive(Debug, Clone, Copy)]
pub enum Kind {
    /// A PDF: starts with `%PDF-`.
    Pdf,
    /// A CSV run sheet: text whose first line starts with the given header cell.
    Csv(&'static str),
}

impl Kind {
    fn recognises(self, head: &[u8]) -> bool {
        match self {
            Kind::Pdf => head.starts_with(b"%PDF-"),
            Kind::Csv(first) => head
                .strip_prefix(b"\xEF\xBB\xBF".as_slice())
                .unwrap_or(head)
                .starts_with(first.as_bytes()),
        }
    }

    fn describe(self) -> &'static str {
        match self {
            Kind::Pdf => "a PDF",
            Kind::Csv(_) => "a run sheet plateau wrote",
        }
    }
}

/// Tells whether the file `dest` may be written: absent, or (with `force`) a regular file of
/// the given kind.
pub fn check_file(dest: &Path, kind: Kind, force: bool) -> Result<(), OutputError> {
    let refuse = |why: String, hint: &str| OutputError::Occupied {
        path: dest.display().to_string(),
        why,
        hint: hint.to_string(),
    };
    let meta = match std::fs::symlink_metadata(dest) {
        Ok(m) => m,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(()),
        Err(e) => return Err(OutputError::write(dest, e)),
    };
    if !meta.is_file() {
        return Err(refuse(
            "it exists and is not a regular file".into(),
            "name a new file; plateau writes only regular files",
        ));
    }
    if !force {
        return Err(refuse(
            "it already exists".into(),
            "name a new file, or use --force to replace a file plateau wrote",
        ));
    }
    let mut head = Vec::new();
    std::fs::File::open(dest)
        .and_then(|f| f.take(64).read_to_end(&mut head))
        .map_err(|e| OutputError::write(dest, e))?;
    if !kind.recognises(&head) {
        return Err(refuse(
            format!(
                "it exists and is not {}; --force replaces only such a file",
                kind.describe()
            ),
            "name a new file, or move or delete it yourself",
        ));
    }
    Ok(())
}

/// Writes the single file `dest`: `produce` writes it inside a fresh staging folder and
/// returns its path there, which is then renamed onto `dest`. `dest` is checked by
/// [`check_file`] before any work and again before the rename.
pub fn write_file<E: From<OutputError>>(
    dest: &Path,
    kind: Kind,
    force: bool,
    produce: impl FnOnce(&Path) -> Result<PathBuf, E>,
) -> Result<(), E> {
    check_file(dest, kind, force)?;
    let (parent, name) = parent_and_name(dest, "output");
    let staging = Staging::new(&parent, &name)?;
    let made = produce(staging.path())?;
    check_file(dest, kind, force)?;
    std::fs::rename(&made, dest).map_err(|e| OutputError::write(dest, e))?;
    Ok(())
}

/// [`write_file`] with the bytes known in advance.
pub fn write_bytes(dest: &Path, kind: Kind, force: bool, bytes: &[u8]) -> Result<(), OutputError> {
    write_file(dest, kind, force, |dir| {
        let path = dir.join("file");
        std::fs::write(&path, bytes).map_err(|e| OutputError::write(dest, e))?;
        Ok(path)
    })
}

/// Why [`create_new`] wrote nothing.
#[derive(Debug)]
pub enum NewFileError {
    /// A file of that name exists; it is left as it was.
    Exists,
    /// The file could not be created or written (a partly written file is removed again).
    Io(std::io::Error),
}

/// Writes a file that must not exist yet — a starter study, a schema, exported templates:
/// files a person edits afterwards, so never replaced. Created exclusively (`create_new`), so
/// a file that appears meanwhile is not overwritten either; if the write fails, the file this
/// call created is removed, so no half-written file is left behind.
pub fn create_new(dest: &Path, bytes: &[u8]) -> Result<(), NewFileError> {
    let mut file = std::fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(dest)
        .map_err(|e| match e.kind() {
            std::io::ErrorKind::AlreadyExists => NewFileError::Exists,
            _ => NewFileError::Io(e),
        })?;
    std::io::Write::write_all(&mut file, bytes)
        .and_then(|()| file.sync_all())
        .map_err(|e| {
            drop(file);
            let _ = std::fs::remove_file(dest);
            NewFileError::Io(e)
        })
}

/// A CSV cell made safe to open in a spreadsheet: a cell starting with `=`, `+`, `-`, `@`,
/// tab or carriage return would be run as a formula, so it gets a leading apostrophe
/// (common practice; OWASP, "CSV Injection"). A plain number such as `-0.25` or `+1e-3` stays
/// a number.
pub fn spreadsheet_safe(cell: &str) -> std::borrow::Cow<'_, str> {
    let risky = cell.starts_with(['=', '+', '-', '@', '\t', '\r']);
    if risky && !is_plain_number(cell) {
        std::borrow::Cow::Owned(format!("'{cell}"))
    } else {
        std::borrow::Cow::Borrowed(cell)
    }
}

/// The cell as plateau wrote it before [`spreadsheet_safe`] (for reading a run sheet back).
pub fn unneutralised(cell: &str) -> &str {
    match cell.strip_prefix('\'') {
        Some(rest) if rest.starts_with(['=', '+', '-', '@', '\t', '\r']) => rest,
        _ => cell,
    }
}

fn is_plain_number(cell: &str) -> bool {
    cell.bytes()
        .all(|b| b.is_ascii_digit() || matches!(b, b'+' | b'-' | b'.' | b'e' | b'E'))
        && cell.bytes().any(|b| b.is_ascii_digit())
        && cell.parse::<f64>().is_ok_and(f64::is_finite)
}

/// A CSV table (header and rows, LF line ends) with every cell [`spreadsheet_safe`]: the one
/// CSV writer of plateau's tables and run sheets.
pub fn csv_bytes(header: &[String], rows: &[Vec<String>]) -> Vec<u8> {
    let mut w = csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .from_writer(Vec::new());
    let _ = w.write_record(header.iter().map(|c| spreadsheet_safe(c).into_owned()));
    for row in rows {
        let _ = w.write_record(row.iter().map(|c| spreadsheet_safe(c).into_owned()));
    }
    w.into_inner().unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formula_cells_get_an_apostrophe_but_numbers_stay_numbers() {
        // The trigger characters are those listed by OWASP, "CSV Injection" (common practice).
        for cell in ["=1+1", "+A1", "-A1", "@SUM(A1)", "\tx", "\rx", "-", "-inf"] {
            assert_eq!(spreadsheet_safe(cell), format!("'{cell}"), "{cell:?}");
            assert_eq!(unneutralised(&spreadsheet_safe(cell)), cell);
        }
        for cell in ["-0.25", "+1e-3", "12", "lot A", "'quoted"] {
            assert_eq!(spreadsheet_safe(cell), cell);
            assert_eq!(unneutralised(cell), cell);
        }
    }

    #[test]
    fn a_folder_without_the_marker_is_refused_and_kept() {
        let dir = tempfile::tempdir().unwrap();
        let dest = dir.path().join("signed");
        std::fs::create_dir(&dest).unwrap();
        std::fs::write(dest.join("approved.pdf"), "x").unwrap();
        let err = write_folder::<OutputError>(&dest, "report folder", &[], |_| Ok(())).unwrap_err();
        assert!(err.to_string().contains("choose a new folder"), "{err}");
        assert_eq!(std::fs::read(dest.join("approved.pdf")).unwrap(), b"x");
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
    }

    #[test]
    fn an_earlier_output_is_replaced_but_a_foreign_file_in_it_is_refused() {
        let dir = tempfile::tempdir().unwrap();
        let dest = dir.path().join("out");
        let files = vec![("a.txt".to_string(), b"1".to_vec())];
        write_folder::<OutputError>(&dest, "report folder", &files, |_| Ok(())).unwrap();
        let files = vec![("a.txt".to_string(), b"2".to_vec())];
        write_folder::<OutputError>(&dest, "report folder", &files, |_| Ok(())).unwrap();
        assert_eq!(std::fs::read(dest.join("a.txt")).unwrap(), b"2");
        std::fs::write(dest.join("mine.txt"), "keep").unwrap();
        let err =
            write_folder::<OutputError>(&dest, "report folder", &files, |_| Ok(())).unwrap_err();
        assert!(err.to_string().contains("mine.txt"), "{err}");
        assert_eq!(std::fs::read(dest.join("mine.txt")).unwrap(), b"keep");
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
    }

    #[test]
    fn staging_folders_are_unique_per_call() {
        let dir = tempfile::tempdir().unwrap();
        let a = Staging::new(dir.path(), "x").unwrap();
        let b = Staging::new(dir.path(), "x").unwrap();
        assert_ne!(a.path(), b.path());
        drop(a);
        assert!(b.path().is_dir());
    }

    #[test]
    fn create_new_writes_a_new_file_and_never_replaces_one() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("study.yaml");
        create_new(&path, b"first").unwrap();
        assert_eq!(std::fs::read(&path).unwrap(), b"first");
        assert!(matches!(
            create_new(&path, b"second"),
            Err(NewFileError::Exists)
        ));
        assert_eq!(std::fs::read(&path).unwrap(), b"first");
    }

    #[test]
    fn create_new_in_a_missing_folder_is_an_io_error_and_leaves_nothing() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("absent/study.yaml");
        assert!(matches!(create_new(&path, b"x"), Err(NewFileError::Io(_))));
        assert!(!dir.path().join("absent").exists());
    }
}
