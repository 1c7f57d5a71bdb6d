//! The approved protocol: the planning content of a study frozen in a lock file before any
//! result exists, and the comparison of a later study file with it.
//!
//! A regulated study is planned, approved and only then executed; the report must say where the
//! execution departed from the approved plan. The lock holds the canonical planning content
//! (every field of the study file except `results`, `excluded`, `notes`, `report` and
//! `protocol`) and its SHA-256, so that any later edit of the lock itself is detected, and any
//! change of the plan shows up field by field in the report's deviations section.

pub mod deviations;

use std::path::{Path, PathBuf};

use serde_json::Value;

use crate::study::planning::Lock;
use crate::study::{Diagnostics, FieldPath, Study};

/// The `format` of a lock file this version writes and reads.
pub const FORMAT: &str = "plateau protocol lock 1";

/// The name of the lock file in a protocol folder.
pub const LOCK_FILE: &str = "protocol.lock.json";

/// Largest lock file read, in bytes (a lock is a copy of the planning part of a study file).
const MAX_LOCK_BYTES: u64 = 4 * 1024 * 1024;

impl Lock {
    /// The lock of `study`'s current plan.
    pub fn of(study: &Study) -> Lock {
        Lock {
            format: FORMAT.to_string(),
            study: study.info.id.clone(),
            planning_sha256: sha256(&study.planning),
            planning: study.planning.clone(),
            file: LOCK_FILE.to_string(),
        }
    }
}

/// The canonical JSON text of a value: object members sorted by key (byte order), no white
/// space, numbers and strings as `serde_json` writes them. The same plan always gives the same
/// text, whatever the order of fields in the study file (the idea of RFC 8785, simplified:
/// plateau writes and reads both sides).
pub fn canonical(v: &Value) -> String {
    let mut out = String::new();
    write_canonical(v, &mut out);
    out
}

fn write_canonical(v: &Value, out: &mut String) {
    match v {
        Value::Object(map) => {
            let mut keys: Vec<&String> = map.keys().collect();
            keys.sort();
            out.push('{');
            for (i, k) in keys.iter().enumerate() {
                if i > 0 {
                    out.push(',');
                }
                out.push_str(&Value::String((*k).clone()).to_string());
                out.push(':');
                if let Some(item) = map.get(*k) {
                    write_canonical(item, out);
                }
            }
            out.push('}');
        }
        Value::Array(items) => {
            out.push('[');
            for (i, item) in items.iter().enumerate() {
                if i > 0 {
                    out.push(',');
                }
                write_canonical(item, out);
            }
            out.push(']');
        }
        other => out.push_str(&other.to_string()),
    }
}

/// SHA-256 of the canonical text of a plan, lowercase hex.
pub fn sha256(plan: &Value) -> String {
    crate::study::load::sha256_hex(canonical(plan).as_bytes())
}

/// The lock file a study names, resolved against the study file's folder.
pub fn lock_path(study: &Study) -> Option<PathBuf> {
    let spec = study.protocol.as_ref()?;
    Some(
        study
            .path
            .parent()
            .unwrap_or_else(|| Path::new("."))
            .join(&spec.lock),
    )
}

/// Reads the lock the study names (`protocol: { lock: ... }`) and checks it against its own
/// hash; `None` when the study names no protocol.
pub fn read_lock(
    files: &dyn crate::files::Files,
    study: &Study,
) -> Result<Option<Lock>, Diagnostics> {
    let (Some(spec), Some(path)) = (study.protocol.as_ref(), lock_path(study)) else {
        return Ok(None);
    };
    let field = FieldPath::of(&["protocol", "lock"]);
    let shown = files.show(&path);
    let fail = |problem: String, expected: &str| {
        Diagnostics(vec![study.diagnostic(
            &field,
            problem,
            Some(expected.to_string()),
        )])
    };
    let bytes = files.read(&path, MAX_LOCK_BYTES).map_err(|e| {
        let cause = e.problem();
        fail(
            format!("failed to read the protocol lock {shown} ({cause})"),
            "expected the protocol.lock.json written by `plateau protocol` for this study, at a path relative to the study file",
        )
    })?;
    let mut lock: Lock = serde_json::from_slice(&bytes).map_err(|e| {
        fail(
            format!("failed to read the protocol lock {shown} (not a lock file: {e})"),
            "expected the protocol.lock.json written by `plateau protocol`",
        )
    })?;
    if lock.format != FORMAT {
        return Err(fail(
            format!(
                "failed to read the protocol lock {shown} (format `{}`)",
                lock.format
            ),
            &format!("expected a lock of format `{FORMAT}`"),
        ));
    }
    if sha256(&lock.planning) != lock.planning_sha256 {
        return Err(fail(
            format!(
                "the protocol lock {shown} no longer matches its own SHA-256: its planning content was edited after it was written"
            ),
            &format!(
                "expected the lock as `plateau protocol` wrote it: restore it from version control (e.g. `git checkout -- {}`); change the plan in the study file instead, where the report lists each change as a deviation (justified under `protocol: deviations:`)",
                spec.lock
            ),
        ));
    }
    lock.file = spec.lock.clone();
    Ok(Some(lock))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn canonical_text_sorts_keys_and_ignores_layout() {
        // Sorted keys, no white space: the rule of RFC 8785 §3.2.3 (from memory), which makes
        // the hash independent of member order.
        let a: Value =
            serde_json::from_str(r#"{"b": [1, {"y": 2.5, "x": "t"}], "a": null}"#).unwrap();
        assert_eq!(canonical(&a), r#"{"a":null,"b":[1,{"x":"t","y":2.5}]}"#);
        let stripped = crate::study::planning::planning_content(&a);
        assert_eq!(canonical(&stripped), r#"{"b":[1,{"x":"t","y":2.5}]}"#);
    }

    #[test]
    fn the_hash_is_sha256_of_the_canonical_text() {
        // SHA-256 of the two bytes `{}` (FIPS 180-4; value from `printf '{}' | sha256sum`).
        assert_eq!(
            sha256(&serde_json::json!({})),
            "44136fa355b3678a1146ad16f7e8649e94fb4fc21fe77e8310c060f61caaff8a"
        );
    }
}
