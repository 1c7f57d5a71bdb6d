//! Quantity paths: how a reference case names one number of the analysis document, and how
//! it is looked up there.
//!
//! A path is a chain of field names and selectors, JSON-pointer-like but readable in a table:
//! `responses[0].effects[label=T].effect`. Selectors are `[n]` (the n-th element, from 0),
//! `[field=value]` (the first element whose field equals value; several conditions joined by
//! `&`) and `[*]` (every element: each must match the expected value). A quantity is a path,
//! `abs(path)`, or `path / path` (a ratio, e.g. E_crit/SE to check the t quantile used).

use serde_json::Value;

/// One step of a path.
#[derive(Debug, Clone, PartialEq)]
enum Step {
    Key(String),
    Index(usize),
    Filter(Vec<(String, String)>),
    All,
}

/// A parsed quantity.
#[derive(Debug, Clone, PartialEq)]
enum Expr {
    Path(Vec<Step>),
    Abs(Box<Expr>),
    Ratio(Box<Expr>, Box<Expr>),
}

/// A quantity that cannot be parsed, with what would be valid.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error(
    "quantity `{quantity}`: {problem}; expected e.g. `responses[0].effects[label=T].effect`, `abs(path)` or `path / path`"
)]
pub struct QuantityError {
    /// The quantity as written.
    pub quantity: String,
    /// What is wrong with it.
    pub problem: String,
}

/// Values a quantity yields from a document: one per element a `[*]` selector visits (one
/// value without `[*]`); `None` where the document has nothing (or `null`) at the path.
pub fn evaluate(quantity: &str, document: &Value) -> Result<Vec<Option<Value>>, QuantityError> {
    let expr = parse(quantity)?;
    Ok(eval(&expr, document))
}

/// Checks that a quantity parses, without a document.
pub fn validate(quantity: &str) -> Result<(), QuantityError> {
    parse(quantity).map(|_| ())
}

fn parse(quantity: &str) -> Result<Expr, QuantityError> {
    let err = |problem: &str| QuantityError {
        quantity: quantity.to_string(),
        problem: problem.to_string(),
    };
    let text = quantity.trim();
    if text.is_empty() {
        return Err(err("it is empty"));
    }
    if let Some((a, b)) = split_ratio(text) {
        let num = parse(a).map_err(|e| err(&e.problem))?;
        let den = parse(b).map_err(|e| err(&e.problem))?;
        return Ok(Expr::Ratio(Box::new(num), Box::new(den)));
    }
    if let Some(inner) = text.strip_prefix("abs(").and_then(|r| r.strip_suffix(')')) {
        let e = parse(inner).map_err(|e| err(&e.problem))?;
        return Ok(Expr::Abs(Box::new(e)));
    }
    parse_path(text).map(Expr::Path).map_err(|p| err(&p))
}

/// Splits `a / b` at a top-level ` / ` (outside brackets and parentheses).
fn split_ratio(text: &str) -> Option<(&str, &str)> {
    let mut depth = 0i32;
    for (i, c) in text.char_indices() {
        match c {
            '[' | '(' => depth += 1,
            ']' | ')' => depth -= 1,
            '/' if depth == 0 && text[..i].ends_with(' ') && text[i + 1..].starts_with(' ') => {
                return Some((text[..i].trim(), text[i + 1..].trim()));
            }
            _ => {}
        }
    }
    None
}

fn parse_path(text: &str) -> Result<Vec<Step>, String> {
    let mut steps = Vec::new();
    let mut chars = text.char_indices().peekable();
    let mut key = String::new();
    while let Some((i, c)) = chars.next() {
        match c {
            '.' => {
                if !key.is_empty() {
                    steps.push(Step::Key(std::mem::take(&mut key)));
                } else if !matches!(
                    steps.last(),
                    Some(Step::Index(_) | Step::Filter(_) | Step::All)
                ) {
                    return Err(format!("an empty field name at character {}", i + 1));
                }
            }
            '[' => {
                if !key.is_empty() {
                    steps.push(Step::Key(std::mem::take(&mut key)));
                }
                let mut depth = 1;
                let mut inner = String::new();
                for (_, c) in chars.by_ref() {
                    match c {
                        '[' => depth += 1,
                        ']' => depth -= 1,
                        _ => {}
                    }
                    if depth == 0 {
                        break;
                    }
                    inner.push(c);
                }
                if depth != 0 {
                    return Err("a `[` without its `]`".into());
                }
                steps.push(selector(&inner)?);
            }
            ']' => return Err(format!("a `]` without its `[` at character {}", i + 1)),
            c => key.push(c),
        }
    }
    if !key.is_empty() {
        steps.push(Step::Key(key));
    }
    if steps.is_empty() {
        return Err("no field names".into());
    }
    Ok(steps)
}

fn selector(inner: &str) -> Result<Step, String> {
    let inner = inner.trim();
    if inner == "*" {
        return Ok(Step::All);
    }
    if let Ok(i) = inner.parse::<usize>() {
        return Ok(Step::Index(i));
    }
    let mut conditions = Vec::new();
    for part in inner.split('&') {
        let Some((k, v)) = part.split_once('=') else {
            return Err(format!(
                "the selector `[{inner}]` is neither an index, `*` nor `field=value`"
            ));
        };
        if k.trim().is_empty() {
            return Err(format!("the selector `[{inner}]` names no field"));
        }
        conditions.push((k.trim().to_string(), v.trim().to_string()));
    }
    Ok(Step::Filter(conditions))
}

fn eval(expr: &Expr, doc: &Value) -> Vec<Option<Value>> {
    match expr {
        Expr::Path(steps) => {
            let mut current: Vec<Option<&Value>> = vec![Some(doc)];
            for step in steps {
                current = current.into_iter().flat_map(|v| apply(step, v)).collect();
            }
            current
                .into_iter()
                .map(|v| v.filter(|v| !v.is_null()).cloned())
                .collect()
        }
        Expr::Abs(inner) => eval(inner, doc)
            .into_iter()
            .map(|v| v.and_then(|v| v.as_f64()).map(|x| number(x.abs())))
            .collect(),
        Expr::Ratio(a, b) => {
            let num = eval(a, doc);
            let den = eval(b, doc);
            let d = den.first().cloned().flatten().and_then(|v| v.as_f64());
            num.into_iter()
                .map(|n| match (n.and_then(|v| v.as_f64()), d) {
                    (Some(n), Some(d)) if d != 0.0 => Some(number(n / d)),
                    _ => None,
                })
                .collect()
        }
    }
}

fn number(x: f64) -> Value {
    serde_json::Number::from_f64(x).map_or(Value::Null, Value::Number)
}

fn apply<'a>(step: &Step, value: Option<&'a Value>) -> Vec<Option<&'a Value>> {
    let Some(value) = value else {
        return vec![None];
    };
    match step {
        Step::Key(k) => vec![value.get(k)],
        Step::Index(i) => vec![value.get(*i)],
        Step::All => match value.as_array() {
            Some(items) if !items.is_empty() => items.iter().map(Some).collect(),
            _ => vec![None],
        },
        Step::Filter(conditions) => vec![value.as_array().and_then(|items| {
            items.iter().find(|item| {
                conditions
                    .iter()
                    .all(|(k, v)| item.get(k).is_some_and(|f| matches(f, v)))
            })
        })],
    }
}

/// Whether a field equals the selector text: strings literally, other values as JSON
/// (numbers by value, so `alpha=0.05` finds 0.05).
fn matches(field: &Value, text: &str) -> bool {
    match field {
        Value::String(s) => s == text,
        Value::Number(n) => text.parse::<f64>().ok() == n.as_f64(),
        other => serde_json::from_str::<Value>(text).is_ok_and(|v| &v == other),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    fn doc() -> Value {
        json!({"responses": [{"effects": [
            {"label": "T", "effect": 23.0, "factors": ["T"]},
            {"label": "C", "effect": -5.0, "factors": ["C"]}
        ], "criteria": [{"method": "lenth", "alpha": 0.05, "me": 3.0, "pse": 1.5, "note": null}]}]})
    }

    #[test]
    fn a_label_selector_finds_the_effect() {
        assert_eq!(
            evaluate("responses[0].effects[label=C].effect", &doc()).unwrap(),
            vec![Some(json!(-5.0))]
        );
    }

    #[test]
    fn a_json_selector_matches_a_list_field() {
        let v = evaluate("responses[0].effects[factors=[\"T\"]].effect", &doc()).unwrap();
        assert_eq!(v, vec![Some(json!(23.0))]);
    }

    #[test]
    fn several_conditions_and_numbers_select_by_value() {
        let v = evaluate("responses[0].criteria[method=lenth&alpha=0.05].me", &doc()).unwrap();
        assert_eq!(v, vec![Some(json!(3.0))]);
    }

    #[test]
    fn a_ratio_divides_two_paths() {
        let v = evaluate(
            "responses[0].criteria[0].me / responses[0].criteria[0].pse",
            &doc(),
        )
        .unwrap();
        assert_eq!(v, vec![Some(json!(2.0))]);
    }

    #[test]
    fn star_and_abs_yield_every_element() {
        let v = evaluate("abs(responses[0].effects[*].effect)", &doc()).unwrap();
        assert_eq!(v, vec![Some(json!(23.0)), Some(json!(5.0))]);
    }

    #[test]
    fn a_missing_or_null_field_is_none() {
        assert_eq!(
            evaluate("responses[0].effects[label=X].effect", &doc()).unwrap(),
            vec![None]
        );
        assert_eq!(
            evaluate("responses[0].criteria[0].note", &doc()).unwrap(),
            vec![None]
        );
    }

    #[test]
    fn malformed_paths_are_errors() {
        assert!(evaluate("responses[0.effects", &doc()).is_err());
        assert!(evaluate("responses[x]", &doc()).is_err());
        assert!(evaluate("", &doc()).is_err());
    }
}
