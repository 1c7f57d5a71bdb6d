//! The JSON Schema check that runs before typed loading.
//!
//! The schema in `schemas/study.schema.json` is the published contract (editors validate against
//! it while the user types); checking it first means the user gets the same verdict from the
//! editor and from plateau. Its raw messages are rewritten into the project's one message style.

use std::sync::OnceLock;

use jsonschema::error::ValidationErrorKind;
use jsonschema::paths::LocationSegment;
use serde_json::Value;

use super::diagnostic::{Diagnostic, Diagnostics, FieldPath, Segment, closest};
use super::locate::Locator;

/// The study-file schema as shipped in `schemas/`.
pub const SCHEMA_TEXT: &str = include_str!("../../schemas/study.schema.json");

/// The schema of the `analysis.json` document (`plateau analyze --json`), as shipped in
/// `schemas/`; its version is the document's `schema_version`.
pub const ANALYSIS_SCHEMA_TEXT: &str = include_str!("../../schemas/analysis.schema.json");

fn schema() -> &'static Value {
    static SCHEMA: OnceLock<Value> = OnceLock::new();
    SCHEMA.get_or_init(|| serde_json::from_str(SCHEMA_TEXT).unwrap_or(Value::Null))
}

fn validator() -> Option<&'static jsonschema::Validator> {
    static VALIDATOR: OnceLock<Option<jsonschema::Validator>> = OnceLock::new();
    VALIDATOR
        .get_or_init(|| jsonschema::validator_for(schema()).ok())
        .as_ref()
}

/// Checks `instance` (the study file read as plain data) against the schema.
pub fn check(instance: &Value, text: &str, file_name: &str) -> Diagnostics {
    let mut out = Diagnostics::default();
    let Some(validator) = validator() else {
        out.push(Diagnostic::field(
            file_name,
            &FieldPath::root(),
            "internal error: the built-in study schema does not compile",
            None,
        ));
        return out;
    };
    // The positions are parsed only when there is an error to place.
    let locator = std::cell::LazyCell::new(|| Locator::new(text));
    let mut seen = std::collections::BTreeSet::new();
    for error in validator.iter_errors(instance) {
        let path = FieldPath(
            error
                .instance_path()
                .segments()
                .map(|s| match s {
                    LocationSegment::Property(p) => Segment::Key(p.to_string()),
                    LocationSegment::Index(i) => Segment::Key(i.to_string()),
                })
                .collect(),
        );
        // Indices and numeric keys look the same in a pointer; decide by the data itself.
        let path = resolve_indices(instance, path);
        let schema_path = error.schema_path().as_str().to_string();
        // A wrong type is said as such even inside a rule: the rule's title is about values.
        let rule = match error.kind() {
            ValidationErrorKind::Type { .. } => None,
            _ => rule_at(&schema_path),
        };
        let described = match rule {
            Some(rule) => vec![(
                ruled(
                    error.kind(),
                    &path,
                    in_context(rule, instance, &path),
                    error.instance(),
                    file_name,
                ),
                None,
            )],
            None => describe(
                error.kind(),
                &path,
                &schema_path,
                error.instance(),
                file_name,
            ),
        };
        for d in described {
            let position = match &d.1 {
                Some(key) => locator.key(&path.0, key),
                None => locator.value(&path.0),
            };
            let d = d.0.at(position);
            // One fault can break a rule twice (`delta` with both `low` and `high`): say it once.
            if seen.insert(d.to_string()) {
                out.push(d);
            }
        }
    }
    out.sorted()
}

/// A rule of the schema: a subschema with a `title` stating the fault it catches and a
/// `description` saying what would be valid (the convention of the schema's `$comment`).
struct Rule {
    title: String,
    description: &'static str,
}

/// A rule whose title speaks of "this design kind" or "this method" names the one the study
/// gives (a schema cannot print a value, the message can): the design's `kind`, or the `method`
/// of the significance criterion the field belongs to.
fn in_context(rule: Rule, document: &Value, path: &FieldPath) -> Rule {
    let mut node = document;
    let mut parent = None;
    for segment in &path.0 {
        parent = Some(node);
        node = match segment {
            Segment::Key(k) => node.get(k.as_str()),
            Segment::Index(i) => node.get(*i),
        }
        .unwrap_or(&Value::Null);
    }
    let named = if rule.title.contains("this design kind") {
        document
            .pointer("/design/kind")
            .and_then(Value::as_str)
            .map(|k| rule.title.replace("this design kind", &format!("kind {k}")))
    } else if rule.title.contains("this method") {
        parent
            .and_then(|p| p.get("method"))
            .and_then(Value::as_str)
            .map(|m| rule.title.replace("this method", &format!("method {m}")))
    } else {
        None
    };
    match named {
        Some(title) => Rule { title, ..rule },
        None => rule,
    }
}

/// The rule holding the failed keyword at `schema_path`, when that subschema is one.
fn rule_at(schema_path: &str) -> Option<Rule> {
    let holder = schema_path.rsplit_once('/')?.0;
    if holder.is_empty() {
        return None; // the root's title names the document, not a rule
    }
    let node = node_at(holder)?;
    Some(Rule {
        title: node.get("title")?.as_str()?.to_string(),
        description: node
            .get("description")
            .and_then(Value::as_str)
            .unwrap_or(""),
    })
}

/// The message for a broken rule: its title is the problem, its description what is valid. A
/// missing field is named as such, with the rule's title as the reason.
fn ruled(
    kind: &ValidationErrorKind,
    path: &FieldPath,
    rule: Rule,
    instance: &Value,
    file: &str,
) -> Diagnostic {
    let expected = expected_text(rule.description);
    match kind {
        ValidationErrorKind::Required { property } => {
            let name = property.as_str().unwrap_or("?");
            Diagnostic::field(
                file,
                &path.key(name),
                format!("missing `{name}`: {}", rule.title),
                expected,
            )
        }
        _ => Diagnostic::field(
            file,
            path,
            format!("{}{}", rule.title, found(instance)),
            expected,
        ),
    }
}

/// What the user wrote, where it helps to see it beside the rule: the items of a short list, a
/// text. Numbers and mappings are left out (the field path already shows where they are).
fn found(instance: &Value) -> String {
    match instance {
        Value::Array(items)
            if items.len() <= 5 && items.iter().all(|v| !v.is_object() && !v.is_array()) =>
        {
            let shown: Vec<String> = items.iter().map(shown).collect();
            let noun = if items.len() == 1 { "item" } else { "items" };
            format!(" (found {} {noun}: {})", items.len(), shown.join(", "))
        }
        Value::Array(items) => format!(" (found {} items)", items.len()),
        Value::String(_) => format!(" (found {})", shown(instance)),
        _ => String::new(),
    }
}

/// A description written for editors ("Both `low` and `high`.") as the message's last line.
fn expected_text(description: &str) -> Option<String> {
    let text = description.trim().trim_end_matches('.');
    let mut chars = text.chars();
    let first = chars.next()?;
    Some(format!(
        "expected {}{}",
        first.to_lowercase(),
        chars.as_str()
    ))
}

fn resolve_indices(instance: &Value, path: FieldPath) -> FieldPath {
    let mut node = Some(instance);
    let mut segments = Vec::with_capacity(path.0.len());
    for segment in path.0 {
        let Segment::Key(key) = segment else {
            segments.push(segment);
            continue;
        };
        match node {
            Some(Value::Array(items)) => {
                let index = key.parse::<usize>().unwrap_or(usize::MAX);
                node = items.get(index);
                segments.push(Segment::Index(index));
            }
            Some(Value::Object(map)) => {
                node = map.get(&key);
                segments.push(Segment::Key(key));
            }
            _ => {
                node = None;
                segments.push(Segment::Key(key));
            }
        }
    }
    FieldPath(segments)
}

/// The property names the schema allows at `schema_path` (which ends in
/// `/additionalProperties`), for suggestions.
fn allowed_properties(schema_path: &str) -> Vec<String> {
    let parent = schema_path.trim_end_matches("/additionalProperties");
    node_at(parent)
        .and_then(|node| node.get("properties"))
        .and_then(Value::as_object)
        .map(|m| m.keys().cloned().collect())
        .unwrap_or_default()
}

/// The schema node at a keyword location (a JSON pointer into the schema that steps through
/// `$ref` without naming its target), following each `$ref` on the way.
fn node_at(schema_path: &str) -> Option<&'static Value> {
    let mut node = schema();
    for raw in schema_path.split('/').skip(1) {
        let key = raw.replace("~1", "/").replace("~0", "~");
        if key == "$ref" {
            continue; // already followed below
        }
        node = match node {
            Value::Array(items) => items.get(key.parse::<usize>().ok()?)?,
            other => other.get(&key)?,
        };
        if let Some(target) = node.get("$ref").and_then(Value::as_str) {
            node = resolve_ref(target).unwrap_or(node);
        }
    }
    Some(node)
}

fn resolve_ref(target: &str) -> Option<&'static Value> {
    let mut node = schema();
    for raw in target.trim_start_matches('#').split('/').skip(1) {
        node = node.get(raw)?;
    }
    Some(node)
}

fn type_name(v: &Value) -> &'static str {
    match v {
        Value::Null => "nothing (null)",
        Value::Bool(_) => "a boolean",
        Value::Number(_) => "a number",
        Value::String(_) => "a string",
        Value::Array(_) => "a list",
        Value::Object(_) => "a mapping",
    }
}

fn shown(v: &Value) -> String {
    match v {
        Value::String(s) => format!("\"{s}\""),
        Value::Array(_) => "a list".to_string(),
        Value::Object(_) => "a mapping".to_string(),
        other => other.to_string(),
    }
}

fn options_text(options: &Value) -> String {
    match options {
        Value::Array(items) => items
            .iter()
            .map(|v| match v {
                Value::String(s) => s.clone(),
                other => other.to_string(),
            })
            .collect::<Vec<_>>()
            .join(", "),
        other => other.to_string(),
    }
}

/// One or more diagnostics for a schema error; the second element names an unknown key whose
/// own position should be reported.
fn describe(
    kind: &ValidationErrorKind,
    path: &FieldPath,
    schema_path: &str,
    instance: &Value,
    file: &str,
) -> Vec<(Diagnostic, Option<String>)> {
    let plain = |problem: String, expected: Option<String>| {
        vec![(Diagnostic::field(file, path, problem, expected), None)]
    };
    match kind {
        ValidationErrorKind::AdditionalProperties { unexpected } => {
            let allowed = allowed_properties(schema_path);
            unexpected
                .iter()
                .map(|name| {
                    let field = path.key(name);
                    let expected = if allowed.is_empty() {
                        // An open mapping whose values failed, e.g. a factor level in an
                        // explicit run; the value check reports it.
                        None
                    } else {
                        let mut text = String::new();
                        if let Some(best) = closest(name, allowed.iter().map(String::as_str)) {
                            text.push_str(&format!("did you mean `{best}`? "));
                        }
                        text.push_str(&format!("valid fields here: {}", allowed.join(", ")));
                        Some(text)
                    };
                    (
                        Diagnostic::field(
                            file,
                            &field,
                            format!("unknown field `{name}`"),
                            expected,
                        ),
                        Some(name.clone()),
                    )
                })
                .collect()
        }
        ValidationErrorKind::Required { property } => {
            let name = property.as_str().unwrap_or("?");
            vec![(
                Diagnostic::field(
                    file,
                    &path.key(name),
                    format!("missing required field `{name}`"),
                    None,
                ),
                None,
            )]
        }
        ValidationErrorKind::Type { kind } => {
            let expected = match kind {
                jsonschema::error::TypeKind::Single(t) => {
                    format!("expected {}", json_type(&t.to_string()))
                }
                jsonschema::error::TypeKind::Multiple(ts) => format!(
                    "expected {}",
                    ts.iter()
                        .map(|t| json_type(&t.to_string()))
                        .collect::<Vec<_>>()
                        .join(" or ")
                ),
            };
            let found = match instance {
                Value::Array(_) | Value::Object(_) | Value::Null => type_name(instance).to_string(),
                other => format!("{} {}", type_name(other), shown(other)),
            };
            let expected = if path.to_string() == "design.runs" {
                "expected a number of runs (fractional-factorial, plackett-burman); only `kind: explicit` takes a list of runs, and a full factorial takes no `runs`".to_string()
            } else if matches!(instance, Value::Bool(_)) && expected.contains("text") {
                format!(
                    "{expected}; YAML reads words such as y, n, yes, no, on, off, true and false as true or false: put the text in quotes"
                )
            } else if path.0.is_empty() {
                "expected a mapping of the study sections (schema, study, factors, design, responses, ...)".to_string()
            } else {
                expected
            };
            plain(format!("wrong type: found {found}"), Some(expected))
        }
        ValidationErrorKind::Enum { options } => plain(
            format!("{} is not a valid value", shown(instance)),
            Some(format!("expected one of {}", options_text(options))),
        ),
        ValidationErrorKind::Constant { expected_value } => plain(
            format!("{} is not a valid value", shown(instance)),
            Some(format!("expected {}", expected_value)),
        ),
        ValidationErrorKind::Minimum { limit } => plain(
            format!("{} is too small", shown(instance)),
            Some(format!("expected at least {limit}")),
        ),
        ValidationErrorKind::ExclusiveMinimum { limit } => plain(
            format!("{} is too small", shown(instance)),
            Some(format!("expected a value greater than {limit}")),
        ),
        ValidationErrorKind::Maximum { limit } => plain(
            format!("{} is too large", shown(instance)),
            Some(format!("expected at most {limit}")),
        ),
        ValidationErrorKind::MinItems { limit } => plain(
            "the list is too short".to_string(),
            Some(format!("expected at least {limit} item(s)")),
        ),
        ValidationErrorKind::MinLength { .. } => plain(
            "the text is empty".to_string(),
            Some("expected a non-empty text".into()),
        ),
        ValidationErrorKind::MaxLength { limit } => plain(
            "the text is too long".to_string(),
            Some(format!("expected at most {limit} characters")),
        ),
        ValidationErrorKind::Pattern { pattern } if pattern.contains("\\u0000-") => {
            // Free text refuses control characters: said as `check` says any unprintable one.
            let ch = instance
                .as_str()
                .and_then(|s| {
                    s.chars()
                        .find(|c| c.is_control() && !"\t\n\r\u{b}\u{c}\u{85}".contains(*c))
                })
                .map_or(0, u32::from);
            plain(
                format!("the character U+{ch:04X} (a control character) cannot be printed in the report"),
                Some("expected characters the report fonts have: Latin, Greek, Cyrillic, Hebrew, Armenian, punctuation, units and mathematical signs; write the text without it".into()),
            )
        }
        ValidationErrorKind::Pattern { pattern } if is_date_pattern(pattern) => plain(
            format!(
                "`{}` is not a calendar date",
                instance.as_str().unwrap_or("")
            ),
            Some(pattern_hint(pattern)),
        ),
        ValidationErrorKind::Pattern { pattern } => plain(
            format!("{} is not in the expected form", shown(instance)),
            Some(pattern_hint(pattern)),
        ),
        ValidationErrorKind::OneOfNotValid { .. }
        | ValidationErrorKind::OneOfMultipleValid { .. }
        | ValidationErrorKind::AnyOf { .. } => {
            let seed = instance.get("seed").filter(|s| s.is_number());
            if schema_path.contains("randomize") && instance == &Value::Bool(true) {
                return plain(
                    "`randomize: true` gives no seed, so the run order could not be reproduced"
                        .into(),
                    Some("expected `randomize: {seed: <number>}` or `randomize: false`".into()),
                );
            }
            if schema_path.contains("randomize") && seed.is_some() {
                // Not the number itself: past 2^53 it has already been rounded on reading.
                return plain(
                    "the seed is not a whole number from 0 to 18446744073709551615 (2^64 − 1)"
                        .into(),
                    Some("expected false or {seed: <non-negative integer>}".into()),
                );
            }
            let expected = if schema_path.contains("randomize") {
                "expected false or {seed: <non-negative integer>}"
            } else if schema_path.contains("results") {
                "expected a number or a list of numbers"
            } else {
                "see the schema for the accepted forms"
            };
            plain(
                format!("{} is not an accepted form", shown(instance)),
                Some(expected.to_string()),
            )
        }
        ValidationErrorKind::MaxItems { limit } => plain(
            "the list is too long".to_string(),
            Some(format!("expected at most {limit} item(s)")),
        ),
        ValidationErrorKind::UniqueItems => plain(
            "the list repeats an item".to_string(),
            Some("expected each item once".into()),
        ),
        ValidationErrorKind::Not { .. } | ValidationErrorKind::FalseSchema => plain(
            format!("{} is not allowed here", shown(instance)),
            Some("see the schema (`plateau schema`) for the accepted forms".into()),
        ),
        other => plain(
            format!("{} is not valid here ({other:?})", shown(instance)),
            None,
        ),
    }
}

fn json_type(t: &str) -> String {
    match t {
        "integer" => "a whole number".into(),
        "number" => "a number".into(),
        "string" => "a text".into(),
        "array" => "a list".into(),
        "object" => "a mapping".into(),
        "boolean" => "true or false".into(),
        other => other.into(),
    }
}

/// The study date's pattern (months 01–12, days within the month's length).
fn is_date_pattern(pattern: &str) -> bool {
    pattern.contains("(0[13578]")
}

fn pattern_hint(pattern: &str) -> String {
    if is_date_pattern(pattern) {
        "expected a date as YYYY-MM-DD, e.g. 2026-11-18".into()
    } else if pattern.contains("[Pp][Nn][Gg]") {
        "expected a file name ending in .png, .jpg, .jpeg or .svg".into()
    } else if pattern.starts_with("^[0-9]+") {
        "expected a section number such as 7.4".into()
    } else if pattern.starts_with("^[A-Za-z]") {
        "expected an identifier: a letter, then letters, digits, `_` or `-` (at most 40)".into()
    } else {
        format!("expected text matching {pattern}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_shipped_schema_compiles() {
        assert!(validator().is_some());
    }

    /// Every subschema with a `default` or `examples`, with its JSON pointer.
    fn annotated(node: &Value, at: String, out: &mut Vec<(String, Value)>) {
        match node {
            Value::Object(map) => {
                if map.contains_key("default") || map.contains_key("examples") {
                    out.push((at.clone(), node.clone()));
                }
                for (k, v) in map {
                    annotated(v, format!("{at}/{k}"), out);
                }
            }
            Value::Array(items) => {
                for (i, v) in items.iter().enumerate() {
                    annotated(v, format!("{at}/{i}"), out);
                }
            }
            _ => {}
        }
    }

    #[test]
    fn every_default_and_example_passes_its_own_subschema() {
        // An editor inserts these values on completion; the schema must not then reject them.
        let root = schema();
        let mut nodes = Vec::new();
        annotated(root, String::new(), &mut nodes);
        assert!(
            nodes.len() >= 20,
            "only {} annotated subschemas",
            nodes.len()
        );
        for (at, node) in nodes {
            let mut sub = node.clone();
            sub["$defs"] = root["$defs"].clone();
            let v = jsonschema::validator_for(&sub).unwrap();
            let values = node
                .get("examples")
                .and_then(Value::as_array)
                .cloned()
                .unwrap_or_default()
                .into_iter()
                .chain(node.get("default").cloned());
            for value in values {
                assert!(v.is_valid(&value), "{at}: {value} breaks its own subschema");
            }
        }
    }

    #[test]
    fn every_property_has_a_description() {
        fn walk(node: &Value, at: &str, out: &mut Vec<String>) {
            match node {
                Value::Object(map) => {
                    if let Some(Value::Object(props)) = map.get("properties") {
                        for (k, v) in props {
                            if v.get("description").is_none() && v.get("title").is_none() {
                                out.push(format!("{at}/properties/{k}"));
                            }
                        }
                    }
                    for (k, v) in map {
                        walk(v, &format!("{at}/{k}"), out);
                    }
                }
                Value::Array(items) => {
                    for (i, v) in items.iter().enumerate() {
                        walk(v, &format!("{at}/{i}"), out);
                    }
                }
                _ => {}
            }
        }
        for text in [SCHEMA_TEXT, ANALYSIS_SCHEMA_TEXT] {
            let mut missing = Vec::new();
            walk(&serde_json::from_str(text).unwrap(), "", &mut missing);
            assert!(
                missing.is_empty(),
                "properties without a description: {missing:?}"
            );
        }
    }

    #[test]
    fn patterns_use_no_syntax_outside_ecma_262() {
        // Inline flags such as (?i), possessive or atomic groups and \A/\z anchors are Rust or
        // PCRE syntax that ECMA-262 validators (ajv, check-jsonschema) refuse (ECMA-262 §22.2).
        for bad in [
            "(?i)", "(?s)", "(?m)", "(?x)", "(?>", "\\A", "\\z", "\\Z", "*+", "++",
        ] {
            assert!(!SCHEMA_TEXT.contains(bad), "the schema uses `{bad}`");
        }
    }

    #[test]
    fn both_schemas_carry_a_versioned_id() {
        for text in [SCHEMA_TEXT, ANALYSIS_SCHEMA_TEXT] {
            let s: Value = serde_json::from_str(text).unwrap();
            let id = s["$id"].as_str().unwrap_or_default();
            assert!(id.contains("/schemas/1/"), "{id}");
        }
    }

    #[test]
    fn a_rule_message_names_the_kind_and_method_of_the_study() {
        let text = "design: {kind: full-factorial, dummies: 2}\nacceptance:\n  - {response: a, significance: {method: lenth, s: 1}}\n";
        let doc = serde_json::json!({
            "design": {"kind": "full-factorial", "dummies": 2},
            "acceptance": [{"response": "a", "significance": {"method": "lenth", "s": 1}}]
        });
        let shown = check(&doc, text, "s.yaml").to_string();
        assert!(
            shown.contains("`dummies` does not apply to kind full-factorial"),
            "{shown}"
        );
        assert!(
            shown.contains("`s` does not apply to method lenth"),
            "{shown}"
        );
        assert!(!shown.contains("this design kind") && !shown.contains("this method"));
    }

    #[test]
    fn allowed_properties_follow_refs_for_suggestions() {
        let names = allowed_properties("/properties/study/additionalProperties");
        assert!(names.contains(&"analyst".to_string()), "{names:?}");
        let names = allowed_properties("/properties/factors/items/additionalProperties");
        assert!(names.contains(&"nominal".to_string()), "{names:?}");
    }
}
