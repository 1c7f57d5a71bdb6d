//! Many studies at once: finding study files in folders, telling from each report's record of
//! inputs ([`crate::report::record`]) whether it is current, stale (and why) or missing, and
//! working through the studies in parallel.

use std::path::{Path, PathBuf};

use crate::report::record::{RECORD, changes, file_hash, inputs, recorded};
use crate::study::{Diagnostics, Study};

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

/// The status of the report in `dir` for `study` as it is now.
pub fn status(
    study: &Study,
    dir: &Path,
    templates: Option<&Path>,
    typst_version: Option<&str>,
) -> Status {
    let recorded = match crate::report::record::read(dir) {
        None => return Status::Missing,
        Some(Err(_)) => return Status::Stale(vec!["the input record is unreadable".into()]),
        Some(Ok(recorded)) => recorded,
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
