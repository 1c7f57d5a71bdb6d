//! Many studies at once: finding study files in folders, recording what a report was made
//! from, and telling whether a report is current, stale (and why) or missing.
//!
//! A report folder keeps `inputs.json`: the SHA-256 of the study file, its data file, its logo
//! and every template used, with the plateau and typst versions, and the SHA-256 of every file
//! the report wrote. The same record computed now and compared field by field says exactly
//! which input changed, and whether an output was edited after plateau wrote it.
//!
//! Text inputs (study, results, templates) are hashed with CRLF line ends read as LF, so a
//! checkout that converts line ends (git on Windows) does not make every report stale; the
//! provenance printed in the report keeps the exact bytes' SHA-256.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use crate::report::render::BUILT_IN;
use crate::study::load::sha256_hex;
use crate::study::{Diagnostics, Study};

/// The record of what a report was made from.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Inputs {
    /// plateau version.
    pub plateau: String,
    /// typst version, or `none` for a report without PDF.
    pub typst: String,
    /// The study file (name) and its SHA-256.
    pub study: (String, String),
    /// The results file and its SHA-256, if any.
    pub data: Option<(String, String)>,
    /// The logo and its SHA-256, if any.
    pub logo: Option<(String, String)>,
    /// Each template (name, SHA-256, `built-in` or `lab`).
    pub templates: Vec<(String, String, String)>,
    /// Each file the report wrote (name, SHA-256 of its exact bytes), the PDF included.
    #[serde(default)]
    pub outputs: Vec<(String, String)>,
    /// The protocol lock and its SHA-256, if the study names one.
    #[serde(default)]
    pub lock: Option<(String, String)>,
}

/// The templates a report is rendered from (the others make run sheets, diffs and records).
pub const REPORT_TEMPLATES: [&str; 2] = ["report.typ.j2", "section.typ.j2"];

/// Name of the record in the report folder.
pub const RECORD: &str = "inputs.json";

/// Largest input hashed for the record (the results file limit); larger or non-regular files
/// are recorded as unreadable rather than read without end.
const MAX_HASHED_BYTES: u64 = 64 * 1024 * 1024;

/// A regular file opened for a bounded read (one byte past the limit, so a file that grew
/// beyond it is noticed); `None` for a missing, non-regular or too large file.
fn bounded_reader(path: &Path) -> Option<std::io::Take<std::fs::File>> {
    let meta = std::fs::metadata(path).ok()?;
    if !meta.is_file() || meta.len() > MAX_HASHED_BYTES {
        return None;
    }
    let file = std::fs::File::open(path).ok()?;
    Some(std::io::Read::take(file, MAX_HASHED_BYTES + 1))
}

/// SHA-256 of a text file with CRLF line ends read as LF, in a stream and bounded like
/// [`file_hash`].
fn text_hash(path: &Path) -> String {
    use sha2::Digest;
    let unreadable = || "unreadable".to_string();
    let Some(mut reader) = bounded_reader(path) else {
        return unreadable();
    };
    let mut hasher = sha2::Sha256::new();
    let mut buf = vec![0u8; 64 * 1024];
    let mut pending_cr = false;
    let mut total = 0u64;
    loop {
        let n = match std::io::Read::read(&mut reader, &mut buf) {
            Ok(0) => break,
            Ok(n) => n,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => continue,
            Err(_) => return unreadable(),
        };
        total += n as u64;
        let mut out = Vec::with_capacity(n + 1);
        for &b in buf.iter().take(n) {
            if pending_cr && b != b'\n' {
                out.push(b'\r');
            }
            pending_cr = b == b'\r';
            if !pending_cr {
                out.push(b);
            }
        }
        hasher.update(&out);
    }
    if pending_cr {
        hasher.update(b"\r");
    }
    if total > MAX_HASHED_BYTES {
        return unreadable();
    }
    hasher
        .finalize()
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// SHA-256 of bytes with CRLF line ends read as LF (text inputs held in memory).
pub fn text_bytes_hash(bytes: &[u8]) -> String {
    let mut out = Vec::with_capacity(bytes.len());
    let mut i = 0;
    while let Some(&b) = bytes.get(i) {
        if !(b == b'\r' && bytes.get(i + 1) == Some(&b'\n')) {
            out.push(b);
        }
        i += 1;
    }
    sha256_hex(&out)
}

/// SHA-256 of a regular file, read in a stream (never whole into memory) and bounded.
pub fn file_hash(path: &Path) -> String {
    use sha2::Digest;
    let unreadable = || "unreadable".to_string();
    let Some(mut reader) = bounded_reader(path) else {
        return unreadable();
    };
    let mut hasher = sha2::Sha256::new();
    match std::io::copy(&mut reader, &mut hasher) {
        Ok(n) if n <= MAX_HASHED_BYTES => {
            let digest = hasher.finalize();
            digest.iter().map(|b| format!("{b:02x}")).collect()
        }
        _ => unreadable(),
    }
}

/// The inputs of a study as they are now.
pub fn inputs(study: &Study, templates: Option<&Path>, typst_version: Option<&str>) -> Inputs {
    let dir = study.path.parent().unwrap_or_else(|| Path::new("."));
    let name = |p: &str| p.to_string();
    Inputs {
        plateau: env!("CARGO_PKG_VERSION").to_string(),
        typst: typst_version.unwrap_or("none").to_string(),
        study: (
            study
                .path
                .file_name()
                .map_or_else(String::new, |n| n.to_string_lossy().to_string()),
            text_bytes_hash(study.text.as_bytes()),
        ),
        data: study
            .results
            .as_ref()
            .and_then(|r| r.file.as_ref())
            .map(|f| (name(f), text_hash(&dir.join(f)))),
        logo: study.report.logo.as_ref().map(|f| {
            let hash = study
                .logo
                .as_deref()
                .map_or_else(|| file_hash(&dir.join(f)), sha256_hex);
            (name(f), hash)
        }),
        templates: templates_used(templates),
        outputs: Vec::new(),
        lock: study
            .protocol
            .as_ref()
            .map(|p| (p.lock.clone(), text_hash(&dir.join(&p.lock)))),
    }
}

/// The templates a report may use: the two report templates (the lab's copy or the built-in
/// one) and every other `*.j2` file in the lab's folder, since a report template can
/// `{% include %}` or `{% import %}` any of them and a change there changes the report.
fn templates_used(lab: Option<&Path>) -> Vec<(String, String, String)> {
    let mut out: Vec<(String, String, String)> = BUILT_IN
        .iter()
        .filter(|(n, _)| REPORT_TEMPLATES.contains(n))
        .map(|(n, text)| {
            let lab = lab.map(|d| d.join(n)).filter(|p| p.is_file());
            match lab {
                Some(p) => ((*n).to_string(), text_hash(&p), "lab".to_string()),
                None => (
                    (*n).to_string(),
                    sha256_hex(text.as_bytes()),
                    "built-in".to_string(),
                ),
            }
        })
        .collect();
    let Some(dir) = lab else {
        return out;
    };
    let mut others: Vec<String> = std::fs::read_dir(dir)
        .into_iter()
        .flatten()
        .flatten()
        .filter(|e| e.file_type().is_ok_and(|t| t.is_file()))
        .map(|e| e.file_name().to_string_lossy().to_string())
        .filter(|n| n.ends_with(".j2") && !REPORT_TEMPLATES.contains(&n.as_str()))
        .collect();
    others.sort();
    for name in others {
        let hash = text_hash(&dir.join(&name));
        out.push((name, hash, "lab".to_string()));
    }
    out
}

/// What differs between the recorded inputs and the current ones, in words.
pub fn changes(recorded: &Inputs, now: &Inputs) -> Vec<String> {
    let mut out = Vec::new();
    if recorded.plateau != now.plateau {
        out.push(format!("plateau {} → {}", recorded.plateau, now.plateau));
    }
    if recorded.typst != now.typst {
        out.push(format!("typst {} → {}", recorded.typst, now.typst));
    }
    if recorded.study != now.study {
        out.push(format!("study file {} changed", now.study.0));
    }
    if recorded.data != now.data {
        out.push(match (&recorded.data, &now.data) {
            (_, Some((n, _))) => format!("results file {n} changed"),
            (Some((n, _)), None) => format!("results file {n} no longer used"),
            _ => "results changed".to_string(),
        });
    }
    if recorded.logo != now.logo {
        out.push("logo changed".to_string());
    }
    if recorded.lock != now.lock {
        out.push("protocol lock changed".to_string());
    }
    for t in &now.templates {
        if !recorded.templates.contains(t) {
            out.push(format!("template {} changed ({})", t.0, t.2));
        }
    }
    for t in &recorded.templates {
        if !now.templates.iter().any(|n| n.0 == t.0) {
            out.push(format!("template {} no longer used", t.0));
        }
    }
    out
}

/// Where a study's report is.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Status {
    /// Made from exactly the current inputs.
    Current,
    /// Made from other inputs: which ones changed.
    Stale(Vec<String>),
    /// No report (or no record of its inputs).
    Missing,
}

/// The input record of the report in `dir`, if there is a readable one.
pub fn recorded(dir: &Path) -> Option<Inputs> {
    serde_json::from_str(&read_small(&dir.join(RECORD)).ok()?).ok()
}

/// The status of the report in `dir` for `study` as it is now.
pub fn status(
    study: &Study,
    dir: &Path,
    templates: Option<&Path>,
    typst_version: Option<&str>,
) -> Status {
    let Ok(text) = read_small(&dir.join(RECORD)) else {
        return Status::Missing;
    };
    let Ok(recorded) = serde_json::from_str::<Inputs>(&text) else {
        return Status::Stale(vec!["the input record is unreadable".into()]);
    };
    let now = inputs(
        study,
        templates,
        typst_version.or(Some(recorded.typst.as_str())),
    );
    let mut why = changes(&recorded, &now);
    if recorded.typst != "none" && !dir.join("report.pdf").is_file() {
        why.push("report.pdf is missing".into());
    }
    for (file, hash) in &recorded.outputs {
        let path = dir.join(file);
        if !path.is_file() {
            if file != "report.pdf" {
                why.push(format!("{file} is missing"));
            }
        } else if &file_hash(&path) != hash {
            why.push(format!("{file}{EDITED}"));
        }
    }
    if why.is_empty() {
        Status::Current
    } else {
        Status::Stale(why)
    }
}

/// The words after a file name in a [`Status::Stale`] reason for a report file changed since
/// plateau wrote it.
const EDITED: &str = " was changed after plateau wrote it";

/// What `report` does with a study's report folder.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Decision {
    /// Write (or rewrite) the report.
    Write,
    /// Leave it: it was made from exactly the current inputs.
    Current,
    /// Refuse: these files of the report were edited after plateau wrote them, and rewriting
    /// the folder would lose the edits (delete nothing plateau did not write).
    Edited(Vec<String>),
}

/// Whether to write the report of `study` into `dir`: always with `force`; otherwise not when
/// it is current, and never over files edited by hand.
pub fn decide(
    study: &Study,
    dir: &Path,
    templates: Option<&Path>,
    typst_version: &str,
    force: bool,
) -> Decision {
    if force {
        return Decision::Write;
    }
    match status(study, dir, templates, Some(typst_version)) {
        Status::Current => Decision::Current,
        Status::Stale(why) => {
            let edited: Vec<String> = why
                .iter()
                .filter_map(|w| w.strip_suffix(EDITED))
                .map(str::to_string)
                .collect();
            if edited.is_empty() {
                Decision::Write
            } else {
                Decision::Edited(edited)
            }
        }
        Status::Missing => Decision::Write,
    }
}

/// Runs `work` on every item, `jobs` at a time (default: the number of cores), and calls `done`
/// as each item finishes, one call at a time (for a progress line); one item's failure never
/// stops the others. The results are in the order of `items`; `None` only for an item no worker
/// reached, which a panic in `work` would cause.
pub fn in_parallel<T: Sync, R: Send>(
    items: &[T],
    jobs: Option<usize>,
    work: impl Fn(&T) -> R + Sync,
    done: impl Fn(&T, &R) + Sync,
) -> Vec<Option<R>> {
    use std::sync::Mutex;
    use std::sync::atomic::{AtomicUsize, Ordering};
    let workers = jobs
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()))
        .clamp(1, 64)
        .min(items.len());
    let next = AtomicUsize::new(0);
    let slots: Mutex<Vec<Option<R>>> = Mutex::new((0..items.len()).map(|_| None).collect());
    let report = Mutex::new(());
    std::thread::scope(|scope| {
        for _ in 0..workers {
            scope.spawn(|| {
                loop {
                    let i = next.fetch_add(1, Ordering::SeqCst);
                    let Some(item) = items.get(i) else { break };
                    let result = work(item);
                    if let Ok(_guard) = report.lock() {
                        done(item, &result);
                    }
                    if let Ok(mut all) = slots.lock()
                        && let Some(slot) = all.get_mut(i)
                    {
                        *slot = Some(result);
                    }
                }
            });
        }
    });
    slots.into_inner().unwrap_or_default()
}

/// A report folder whose study is gone, emptied or no longer a study file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Orphan {
    /// The report folder.
    pub dir: PathBuf,
    /// The study file its record names.
    pub study: PathBuf,
    /// Why it has no study.
    pub why: String,
}

/// Report folders under `paths` (folders holding an input record) whose recorded study file is
/// missing, empty or no longer a study file.
pub fn orphans(paths: &[PathBuf]) -> Vec<Orphan> {
    let mut dirs = Vec::new();
    for p in paths.iter().filter(|p| p.is_dir()) {
        report_folders(p, &mut dirs);
    }
    let mut out = Vec::new();
    for dir in dirs {
        let Some(record) = recorded(&dir) else {
            continue;
        };
        let study = dir
            .parent()
            .unwrap_or_else(|| Path::new("."))
            .join(&record.study.0);
        let why = if !study.exists() {
            "its study file is gone"
        } else if std::fs::metadata(&study).is_ok_and(|m| m.len() == 0) {
            "its study file is empty"
        } else if !is_study_file(&study) {
            "its study file is no longer a study file (no top-level `schema:` key)"
        } else {
            continue;
        };
        out.push(Orphan {
            dir,
            study,
            why: why.into(),
        });
    }
    out
}

fn report_folders(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    let mut entries: Vec<PathBuf> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
    entries.sort();
    for path in entries {
        let Ok(meta) = std::fs::symlink_metadata(&path) else {
            continue;
        };
        if !meta.is_dir() {
            continue;
        }
        if path.join(RECORD).is_file() {
            out.push(path);
        } else if !skipped(&path) {
            report_folders(&path, out);
        }
    }
}

/// Folders never searched for studies.
fn skipped(dir: &Path) -> bool {
    let name = dir
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    name.starts_with('.') || name == "target" || name.ends_with("-report")
}

/// A small regular text file (a record), read bounded to 1 MiB.
fn read_small(path: &Path) -> std::io::Result<String> {
    let meta = std::fs::metadata(path)?;
    if !meta.is_file() {
        return Err(std::io::Error::other("not a regular file"));
    }
    let mut text = String::new();
    std::io::Read::read_to_string(
        &mut std::io::Read::take(std::fs::File::open(path)?, 1024 * 1024),
        &mut text,
    )?;
    Ok(text)
}

/// True for a YAML file that declares the study-file format (a top-level `schema:` key).
/// Only regular files are opened (a FIFO named `*.yaml` would block the search), and only
/// up to the study-file size limit.
pub fn is_study_file(path: &Path) -> bool {
    let yaml = path.extension().is_some_and(|e| e == "yaml" || e == "yml");
    if !yaml || !std::fs::metadata(path).is_ok_and(|m| m.is_file()) {
        return false;
    }
    let Ok(file) = std::fs::File::open(path) else {
        return false;
    };
    let mut bytes = Vec::new();
    let limit = crate::study::load::MAX_STUDY_BYTES;
    if std::io::Read::read_to_end(&mut std::io::Read::take(file, limit), &mut bytes).is_err() {
        return false;
    }
    String::from_utf8_lossy(&bytes)
        .lines()
        .any(|l| l.starts_with("schema:"))
}

/// Pairs of study files whose default report folders are the same (`study.yaml` and
/// `study.yml` in one folder both report to `study-report/`): reporting both would let one
/// replace the other's report.
pub fn report_dir_clashes(files: &[PathBuf]) -> Vec<(PathBuf, PathBuf)> {
    let mut seen: std::collections::BTreeMap<PathBuf, &PathBuf> = Default::default();
    let mut out = Vec::new();
    for f in files {
        let dir = crate::report::default_dir(f);
        match seen.get(&dir) {
            Some(first) if *first != f => out.push(((*first).clone(), f.clone())),
            Some(_) => {}
            None => {
                seen.insert(dir, f);
            }
        }
    }
    out
}

/// The study files named by `paths`: files as given, folders searched recursively (sorted,
/// report folders and hidden folders skipped).
pub fn discover(paths: &[PathBuf]) -> Result<Vec<PathBuf>, Diagnostics> {
    let mut out = Vec::new();
    for p in paths {
        if p.is_dir() {
            walk(p, &mut out);
        } else {
            out.push(p.clone());
        }
    }
    Ok(out)
}

fn walk(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    let mut entries: Vec<PathBuf> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
    entries.sort();
    for path in entries {
        if path.is_dir() {
            if !skipped(&path) {
                walk(&path, out);
            }
        } else if is_study_file(&path) {
            out.push(path);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_folder_search_finds_study_files_and_skips_report_folders() {
        let dir = tempfile::tempdir().unwrap();
        let root = dir.path();
        std::fs::create_dir_all(root.join("a/b")).unwrap();
        std::fs::create_dir_all(root.join("a/x-report")).unwrap();
        std::fs::write(root.join("a/one.yaml"), "schema: 1\n").unwrap();
        std::fs::write(root.join("a/b/two.yml"), "# c\nschema: 1\n").unwrap();
        std::fs::write(root.join("a/x-report/three.yaml"), "schema: 1\n").unwrap();
        std::fs::write(root.join("a/other.yaml"), "name: not a study\n").unwrap();
        let found = discover(&[root.to_path_buf()]).unwrap();
        let names: Vec<String> = found
            .iter()
            .map(|p| p.file_name().unwrap().to_string_lossy().to_string())
            .collect();
        assert_eq!(names, ["two.yml", "one.yaml"]);
    }
}
