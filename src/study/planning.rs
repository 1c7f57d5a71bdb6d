//! The planning content of a study file — everything that is fixed before the study is run —
//! and the lock of an approved plan as the study names it (`protocol: { lock: ... }`).
//!
//! Both are input: the planning content is a view of the study file, and the lock is a file the
//! study names. Writing a lock and comparing a study with it is the protocol stage's job.

use serde::{Deserialize, Serialize};
use serde_json::Value;

/// Top-level study-file fields that are not part of the plan: they are written during or
/// after the execution.
pub const NOT_PLANNING: [&str; 5] = ["results", "excluded", "notes", "report", "protocol"];

/// A protocol lock: the planning content and its hash.
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct Lock {
    /// Always `plateau protocol lock 1` (the protocol stage's `FORMAT`).
    pub format: String,
    /// The study id the protocol was written for.
    pub study: String,
    /// SHA-256 (lowercase hex) of the canonical JSON text of `planning`.
    pub planning_sha256: String,
    /// The planning content.
    pub planning: Value,
    /// The lock file as named in messages (not stored in the file).
    #[serde(skip)]
    pub file: String,
}

impl Lock {
    /// The lock file's bytes: pretty JSON (its hash is taken over the canonical form, so the
    /// layout does not matter), with a final newline.
    pub fn bytes(&self) -> Vec<u8> {
        let mut text = serde_json::to_string_pretty(self).unwrap_or_default();
        text.push('\n');
        text.into_bytes()
    }
}

/// The planning content of a study-file tree (the serialised study file): the fields that are
/// not in [`NOT_PLANNING`], with `null` members removed so that a field left out and a field
/// written as `null` are one plan.
pub fn planning_content(tree: &Value) -> Value {
    let mut plan = strip_nulls(tree);
    if let Value::Object(map) = &mut plan {
        for key in NOT_PLANNING {
            map.remove(key);
        }
    }
    plan
}

fn strip_nulls(v: &Value) -> Value {
    match v {
        Value::Object(map) => Value::Object(
            map.iter()
                .filter(|(_, v)| !v.is_null())
                .map(|(k, v)| (k.clone(), strip_nulls(v)))
                .collect(),
        ),
        Value::Array(items) => Value::Array(items.iter().map(strip_nulls).collect()),
        other => other.clone(),
    }
}
