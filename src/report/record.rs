//! The record of what a report was made from: `inputs.json` in every report folder.
//!
//! It holds the SHA-256 of the study file, its data file, its logo, its protocol lock and every
//! template used, with the plateau and typst versions, and the SHA-256 of every file the report
//! wrote. The same record computed now and compared field by field says exactly which input
//! changed, and whether an output was edited after plateau wrote it. The report writes it;
//! `report` on many studies and `status` read it back (batch).
//!
//! Text inputs (study, results, templates) are hashed with CRLF line ends read as LF, so a
//! checkout that converts line ends (git on Windows) does not make every report stale; the
//! provenance printed in the report keeps the exact bytes' SHA-256.

use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::report::render::BUILT_IN;
use crate::study::Study;
use crate::study::load::sha256_hex;

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

/// The input record of the report in `dir`, if there is a readable one.
pub fn recorded(dir: &Path) -> Option<Inputs> {
    read(dir)?.ok()
}

/// The input record of the report in `dir`: `None` when there is no record file, an error when
/// there is one that is not a record.
pub fn read(dir: &Path) -> Option<Result<Inputs, serde_json::Error>> {
    let text = read_small(&dir.join(RECORD)).ok()?;
    Some(serde_json::from_str(&text))
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
