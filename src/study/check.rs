//! Semantic checks: the rules the schema cannot express, turning the file model into a `Study`.
//!
//! All problems are collected, not just the first, and each names its field and what would be
//! valid, so a user fixes a file in one pass.

use std::collections::BTreeSet;
use std::path::Path;

use serde_json::Value;

use super::diagnostic::{Diagnostic, Diagnostics, FieldPath, closest};
use super::locate::Locator;
use super::model::{self, DesignKind, LimitUnit, NominalPlacement, PercentOf, StudyFile};
use super::{
    DesignRequest, DesignRules, EffectLimit, ExplicitRun, Factor, Levels, Placement, Response,
    RunId, SignificanceRule, Study, SuitabilityLimit,
};

/// Most factors a study may have (the largest Plackett–Burman design has 47 columns).
pub const MAX_FACTORS: usize = 47;
/// Most factors of a full factorial (2^16 = 65,536 runs).
pub const MAX_FULL_FACTORIAL_FACTORS: usize = 16;
/// Most runs an explicit design may list.
pub const MAX_EXPLICIT_RUNS: usize = 4096;
/// Column names the results CSV reserves.
const RESERVED_IDS: [&str; 3] = ["run", "order", "time"];

struct Checker<'a> {
    file: &'a str,
    locator: Locator<'a>,
    problems: Diagnostics,
}

impl Checker<'_> {
    fn report(&mut self, field: &FieldPath, problem: impl Into<String>, expected: Option<String>) {
        let position = self.locator.value(&field.0);
        self.problems
            .push(Diagnostic::field(self.file, field, problem, expected).at(position));
    }
}

/// Checks a parsed study file and builds the `Study`.
pub fn study(
    rules: DesignRules,
    files: &dyn crate::files::Files,
    path: &Path,
    file_name: &str,
    text: &str,
    sha256: String,
    file: StudyFile,
) -> Result<Study, Diagnostics> {
    let mut c = Checker {
        file: file_name,
        locator: Locator::new(text),
        problems: Diagnostics::default(),
    };
    check_date(&mut c, &file.study.date);
    let factors = factors(&mut c, &file.factors);
    let before = c.problems.0.len();
    let design = design(&mut c, &file.design, &file.factors);
    let factor_ids: Vec<&str> = file.factors.iter().map(|f| f.id.as_str()).collect();
    for p in rules(&design, &factor_ids) {
        c.report(&p.field, p.problem, p.expected);
    }
    let design_ok = c.problems.0.len() == before;
    let responses = responses(&mut c, &file, &design, design_ok);
    let (limits, significance, suitability) = acceptance(&mut c, &file, &responses);
    let excluded = exclusions(&mut c, &file.excluded, &file.responses);
    if let Some(p) = &file.protocol
        && let Some(date) = &p.approved
        && !valid_date(date)
    {
        c.report(
            &FieldPath::of(&["protocol", "approved"]),
            format!("`{date}` is not a calendar date"),
            Some("expected the approval date as YYYY-MM-DD".into()),
        );
    }
    let mut logo_bytes = None;
    if let Some(logo) = file.report.as_ref().and_then(|r| r.logo.as_ref()) {
        let full = path.parent().unwrap_or_else(|| Path::new(".")).join(logo);
        match read_logo(files, &full) {
            Ok(bytes) => logo_bytes = Some(bytes),
            Err(why) => c.report(
                &FieldPath::of(&["report", "logo"]),
                format!("the logo `{logo}` {why}"),
                Some(format!(
                    "expected a PNG, JPEG or SVG image file of at most 2 MiB at {}",
                    files.show(&full)
                )),
            ),
        }
    }
    if file.study.source_reference.is_some()
        && file.study.source != Some(model::SourceKind::Development)
    {
        c.report(
            &FieldPath::of(&["study", "source-reference"]),
            "a source reference is given but the source is not `development`",
            Some("expected `source: development` with it, or remove `source-reference`".into()),
        );
    }
    if let Some(results) = &file.results {
        check_results_spec(&mut c, results);
    }
    check_id_clashes(&mut c, &file);
    let tree = serde_json::to_value(&file).unwrap_or_default();
    check_printable(&mut c, &tree, &FieldPath::root());
    let planning = super::planning::planning_content(&tree);
    if !c.problems.is_empty() {
        return Err(c.problems.sorted());
    }
    let source = file.study.source.unwrap_or(model::SourceKind::Validation);
    let factor_ids: Vec<&str> = file.factors.iter().map(|f| f.id.as_str()).collect();
    let mut figure_interactions = Vec::new();
    let mut problems = Diagnostics::default();
    for (i, t) in file
        .figures
        .iter()
        .flat_map(|f| f.interactions.iter())
        .enumerate()
    {
        let at = FieldPath::of(&["figures", "interactions"]).index(i);
        match parse_term(t, &factor_ids) {
            Ok(mask) if mask.count_ones() == 2 => figure_interactions.push(mask),
            Ok(_) => problems.push(
                Diagnostic::field(
                    file_name,
                    &at,
                    format!("`{t}` is not a two-factor interaction"),
                    Some("expected two factor ids joined by ×, e.g. temp×ph".to_string()),
                )
                .at(Locator::new(text).value(&at.0)),
            ),
            Err(e) => problems.push(
                Diagnostic::field(
                    file_name,
                    &at,
                    e,
                    Some(format!(
                        "expected two factor ids joined by ×, from: {}",
                        factor_ids.join(", ")
                    )),
                )
                .at(Locator::new(text).value(&at.0)),
            ),
        }
    }
    if !problems.is_empty() {
        return Err(problems);
    }
    Ok(Study {
        path: path.to_path_buf(),
        file_name: file_name.to_string(),
        text: text.to_string(),
        sha256,
        info: file.study,
        factors,
        design,
        responses,
        limits,
        significance,
        suitability,
        excluded,
        source,
        report: file.report.unwrap_or_default(),
        figure_interactions,
        results: file.results,
        notes: file.notes,
        protocol: file.protocol,
        planning,
        lock: None,
        logo: logo_bytes,
    })
}

/// True for a calendar date written `YYYY-MM-DD` (years 1900 to 9999).
pub fn valid_date(date: &str) -> bool {
    let shape = date.len() == 10
        && date.char_indices().all(|(i, c)| {
            if i == 4 || i == 7 {
                c == '-'
            } else {
                c.is_ascii_digit()
            }
        });
    shape
        && date
            .parse::<jiff::civil::Date>()
            .is_ok_and(|d| (1900..=9999).contains(&d.year()))
}

fn check_date(c: &mut Checker<'_>, date: &str) {
    let field = FieldPath::of(&["study", "date"]);
    if !valid_date(date) {
        c.report(
            &field,
            format!("`{date}` is not a calendar date"),
            Some("expected a date as YYYY-MM-DD, e.g. 2026-11-18".into()),
        );
    }
}

fn factors(c: &mut Checker<'_>, specs: &[model::FactorSpec]) -> Vec<Factor> {
    let mut out = Vec::new();
    let mut seen = BTreeSet::new();
    if specs.len() > MAX_FACTORS {
        c.report(
            &FieldPath::of(&["factors"]),
            format!("{} factors is more than plateau handles", specs.len()),
            Some(format!("expected at most {MAX_FACTORS} factors")),
        );
    }
    for (i, f) in specs.iter().enumerate() {
        let at = FieldPath::of(&["factors"]).index(i);
        if !seen.insert(f.id.clone()) {
            c.report(
                &at.key("id"),
                format!("duplicate factor id `{}`", f.id),
                Some("expected each factor id once".into()),
            );
        }
        if RESERVED_IDS.contains(&f.id.as_str()) {
            c.report(
                &at.key("id"),
                format!("`{}` is reserved for a results column", f.id),
                Some("expected another id".into()),
            );
        }
        if let Some(levels) = factor_levels(c, f, &at) {
            out.push(Factor {
                id: f.id.clone(),
                name: f.name.clone(),
                unit: f.unit.clone(),
                levels,
                justification: f.justification.clone(),
                routine: f.routine.map(|a| {
                    (
                        a,
                        f.distribution.unwrap_or(model::Distribution::Rectangular),
                    )
                }),
            });
        }
    }
    out
}

fn factor_levels(c: &mut Checker<'_>, f: &model::FactorSpec, at: &FieldPath) -> Option<Levels> {
    if let Some(levels) = &f.levels {
        for (name, present) in [
            ("nominal", f.nominal.is_some()),
            ("delta", f.delta.is_some()),
            ("low", f.low.is_some()),
            ("high", f.high.is_some()),
        ] {
            if present {
                c.report(
                    &at.key(name),
                    format!("a categorical factor (with `levels`) has no `{name}`"),
                    Some("expected either `levels` or numeric `nominal` with `delta` or `low`/`high`".into()),
                );
            }
        }
        return match levels.as_slice() {
            [a, b] if a != b => Some(Levels::Categorical {
                nominal: a.clone(),
                alternative: b.clone(),
            }),
            [a, _] => {
                c.report(
                    &at.key("levels"),
                    format!("both levels are `{a}`"),
                    Some("expected two different level names".into()),
                );
                None
            }
            other => {
                c.report(
                    &at.key("levels"),
                    format!("a categorical factor has {} level(s)", other.len()),
                    Some("expected exactly two levels, the nominal one first".into()),
                );
                None
            }
        };
    }
    let Some(nominal) = f.nominal else {
        c.report(
            &at.key("nominal"),
            "missing required field `nominal`",
            Some("a numeric factor needs `nominal` with `delta` or `low`/`high`; a categorical one needs `levels`".into()),
        );
        return None;
    };
    let (low, high) = match (f.delta, f.low, f.high) {
        (Some(d), None, None) => (tidy(nominal - d), tidy(nominal + d)),
        (None, Some(l), Some(h)) => (l, h),
        (Some(_), _, _) => {
            c.report(
                &at.key("delta"),
                "`delta` and `low`/`high` are both given",
                Some("expected either `delta` or both `low` and `high`".into()),
            );
            return None;
        }
        (None, None, None) => {
            c.report(
                at,
                "the factor has no range",
                Some("expected `delta` or both `low` and `high`".into()),
            );
            return None;
        }
        (None, l, _) => {
            let missing = if l.is_some() { "high" } else { "low" };
            c.report(
                &at.key(missing),
                format!("missing `{missing}`"),
                Some("expected both `low` and `high`".into()),
            );
            return None;
        }
    };
    if low >= high {
        c.report(
            &at.key("low"),
            format!("low ({low}) is not below high ({high})"),
            Some("expected low < high".into()),
        );
        return None;
    }
    if nominal < low || nominal > high {
        c.report(
            &at.key("nominal"),
            format!("nominal ({nominal}) lies outside the range {low} to {high}"),
            Some("expected low ≤ nominal ≤ high".into()),
        );
        return None;
    }
    Some(Levels::Numeric { nominal, low, high })
}

fn design(
    c: &mut Checker<'_>,
    spec: &model::DesignSpec,
    factors: &[model::FactorSpec],
) -> DesignRequest {
    let at = FieldPath::of(&["design"]);
    let seed = match &spec.randomize {
        None | Some(model::RandomizeSpec::Flag(false)) => None,
        Some(model::RandomizeSpec::Flag(true)) => {
            c.report(
                &at.key("randomize"),
                "`randomize: true` gives no seed, so the run order could not be reproduced",
                Some("expected `randomize: {seed: <number>}` or `randomize: false`".into()),
            );
            None
        }
        Some(model::RandomizeSpec::Seeded(s)) => Some(s.seed),
    };
    let nominal_runs = match spec.nominal_runs {
        None | Some(model::NominalRunsSpec::Named(NominalPlacement::Spread)) => Placement::Spread,
        Some(model::NominalRunsSpec::Named(NominalPlacement::First)) => Placement::First,
        Some(model::NominalRunsSpec::Named(NominalPlacement::Last)) => Placement::Last,
        Some(model::NominalRunsSpec::Named(NominalPlacement::Random)) => Placement::Random,
        Some(model::NominalRunsSpec::Every(e)) => Placement::Every(e.every.max(1) as usize),
    };
    if nominal_runs == Placement::Random && seed.is_none() {
        c.report(
            &at.key("nominal-runs"),
            "`nominal-runs: random` needs a randomised run order",
            Some(
                "add `randomize: {seed: <number>}`, or choose spread, first, last or {every: k}"
                    .into(),
            ),
        );
    }
    let k = factors.len();
    let count = match &spec.runs {
        Some(model::RunsSpec::Count(n)) => Some(*n as usize),
        _ => None,
    };
    let mut request = DesignRequest {
        kind: spec.kind,
        explicit_runs: Vec::new(),
        generators: spec.generators.clone(),
        resolution: spec.resolution,
        runs: count,
        dummies: spec.dummies.unwrap_or(0) as usize,
        foldover: spec.foldover.unwrap_or(false),
        alias_order: spec.alias_order.unwrap_or(2),
        allow_nonorthogonal: spec.allow_nonorthogonal.unwrap_or(false),
        center_points: spec.center_points.unwrap_or(0) as usize,
        nominal_runs,
        replicates: spec.replicates.unwrap_or(1) as usize,
        seed,
        drift_correction: spec.drift_correction,
    };
    let kind_name = spec.kind.as_str();
    let not_here = |c: &mut Checker<'_>, name: &str, present: bool, hint: &str| {
        if present {
            c.report(
                &at.key(name),
                format!("`{name}` does not apply to kind {kind_name}"),
                Some(hint.to_string()),
            );
        }
    };
    let is_list = matches!(spec.runs, Some(model::RunsSpec::List(_)));
    if spec.kind != DesignKind::Explicit {
        not_here(
            c,
            "allow-nonorthogonal",
            spec.allow_nonorthogonal.is_some(),
            "only an explicit design can be non-orthogonal",
        );
        if is_list {
            c.report(
                &at.key("runs"),
                format!("a {kind_name} design is generated, so it takes no run list"),
                Some("remove the list, or use `kind: explicit` to give the runs yourself".into()),
            );
        }
    }
    if !matches!(spec.kind, DesignKind::FractionalFactorial) {
        not_here(
            c,
            "generators",
            spec.generators.is_some(),
            "generators belong to kind fractional-factorial",
        );
        not_here(
            c,
            "resolution",
            spec.resolution.is_some(),
            "resolution belongs to kind fractional-factorial",
        );
    }
    if !matches!(spec.kind, DesignKind::PlackettBurman | DesignKind::Youden) {
        not_here(
            c,
            "dummies",
            spec.dummies.is_some(),
            "dummy columns belong to kinds plackett-burman and youden",
        );
    }
    match spec.kind {
        DesignKind::FullFactorial => {
            not_here(
                c,
                "runs",
                count.is_some(),
                "a full factorial of k factors has 2^k runs",
            );
            not_here(
                c,
                "foldover",
                spec.foldover.is_some(),
                "a full factorial has no aliasing to break",
            );
            if k > MAX_FULL_FACTORIAL_FACTORS {
                c.report(
                    &at.key("kind"),
                    format!("a full factorial of {k} factors has too many runs"),
                    Some(format!(
                        "expected at most {MAX_FULL_FACTORIAL_FACTORS} factors for a full factorial; use kind fractional-factorial or plackett-burman"
                    )),
                );
            }
        }
        // The choice of fraction, Plackett–Burman size and Youden arrangement is the design
        // stage's (the design rules the loader is given); here only what the study states.
        DesignKind::FractionalFactorial | DesignKind::PlackettBurman => {}
        DesignKind::Youden => {
            not_here(
                c,
                "runs",
                count.is_some(),
                "the Youden–Steiner design has 8 runs",
            );
        }
        DesignKind::Explicit => {
            not_here(
                c,
                "center-points",
                spec.center_points.is_some(),
                "list every run, nominal runs as rows with each factor at 0",
            );
            not_here(
                c,
                "replicates",
                spec.replicates.is_some(),
                "list every run of an explicit design",
            );
            not_here(
                c,
                "foldover",
                spec.foldover.is_some(),
                "list the mirror-image runs yourself",
            );
            not_here(
                c,
                "runs",
                count.is_some(),
                "expected `runs:` as a list of `{run: ID, <factor id>: -1 | 0 | 1}`",
            );
            request.explicit_runs = explicit_runs(c, spec, factors, &at.key("runs"));
        }
    }
    request
}

fn explicit_runs(
    c: &mut Checker<'_>,
    spec: &model::DesignSpec,
    factors: &[model::FactorSpec],
    at: &FieldPath,
) -> Vec<ExplicitRun> {
    let Some(model::RunsSpec::List(rows)) = &spec.runs else {
        c.report(
            at,
            "an explicit design needs its runs",
            Some("expected `runs:` as a list of `{run: ID, <factor id>: -1 | 0 | 1}`".into()),
        );
        return Vec::new();
    };
    if rows.len() < 2 || rows.len() > MAX_EXPLICIT_RUNS {
        c.report(
            at,
            format!("{} run(s) listed", rows.len()),
            Some(format!("expected between 2 and {MAX_EXPLICIT_RUNS} runs")),
        );
    }
    let ids: Vec<&str> = factors.iter().map(|f| f.id.as_str()).collect();
    let mut seen = BTreeSet::new();
    let mut orders = BTreeSet::new();
    let mut out = Vec::new();
    for (i, row) in rows.iter().enumerate() {
        let here = at.index(i);
        let id = match row.get("run").map(run_id) {
            Some(Ok(id)) => id,
            Some(Err(why)) => {
                c.report(&here.key("run"), why, None);
                continue;
            }
            None => continue, // the schema has reported it
        };
        if !seen.insert(id.clone()) {
            c.report(
                &here.key("run"),
                format!("duplicate run id `{id}`"),
                Some("expected each run id once".into()),
            );
        }
        let order = row.get("order").and_then(Value::as_u64).map(|o| o as usize);
        if let Some(o) = order
            && !orders.insert(o)
        {
            c.report(
                &here.key("order"),
                format!("run order {o} is given twice"),
                Some("expected each position in the run order once".into()),
            );
        }
        for key in row.keys() {
            if key != "run" && key != "order" && key != "block" && !ids.contains(&key.as_str()) {
                let hint = closest(key, ids.iter().copied())
                    .map(|b| format!("did you mean `{b}`? "))
                    .unwrap_or_default();
                c.report(
                    &here.key(key),
                    format!("unknown factor `{key}`"),
                    Some(format!(
                        "{hint}expected one of the factor ids: {}",
                        ids.join(", ")
                    )),
                );
            }
        }
        let mut levels = Vec::with_capacity(factors.len());
        for f in factors {
            match row.get(&f.id).and_then(Value::as_i64) {
                Some(v @ -1..=1) => levels.push(v as i8),
                _ => {
                    c.report(
                        &here,
                        format!("run `{id}` has no level for factor `{}`", f.id),
                        Some("expected every factor at -1, 0 or 1".into()),
                    );
                }
            }
        }
        if levels.len() == factors.len() {
            let zeros = levels.iter().filter(|l| **l == 0).count();
            if zeros != 0 && zeros != levels.len() {
                c.report(
                    &here,
                    format!("run `{id}` mixes nominal (0) and ±1 levels"),
                    Some("expected a two-level run (every factor at -1 or 1) or a nominal run (every factor at 0)".into()),
                );
            }
            let block = match row.get("block") {
                None => 1,
                Some(v) => match v.as_u64() {
                    Some(b @ 1..=2) => b as u8,
                    _ => {
                        c.report(
                            &here.key("block"),
                            format!("block `{v}` of run `{id}`"),
                            Some("expected 1 (the first runs) or 2 (the follow-up runs)".into()),
                        );
                        1
                    }
                },
            };
            out.push(ExplicitRun {
                id,
                order,
                levels,
                block,
            });
        }
    }
    if !orders.is_empty() && orders.len() != rows.len() {
        c.report(
            at,
            "`order` is given for some runs but not for all",
            Some("expected `order` on every run or on none".into()),
        );
    }
    out
}

/// A level computed as nominal ± delta, rounded to 12 significant digits so that binary
/// floating point does not print 3.0 − 0.1 as 2.9000000000000004.
fn tidy(x: f64) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    let digits = 12 - 1 - x.abs().log10().floor() as i32;
    let scale = 10f64.powi(digits.clamp(-300, 300));
    (x * scale).round() / scale
}

/// Refuses any text in the study the report fonts cannot print (CJK, emoji, control
/// characters...), naming the field, so that what `check` accepts `report` typesets.
fn check_printable(c: &mut Checker<'_>, value: &Value, at: &FieldPath) {
    match value {
        Value::String(text) => {
            if let Some(ch) = super::glyphs::first_unprintable(text) {
                let shown = if ch.is_control() {
                    format!("U+{:04X} (a control character)", u32::from(ch))
                } else {
                    format!("`{ch}` (U+{:04X})", u32::from(ch))
                };
                c.report(
                    at,
                    format!("the character {shown} cannot be printed in the report"),
                    Some("expected characters the report fonts have: Latin, Greek, Cyrillic, Hebrew, Armenian, punctuation, units and mathematical signs; write the text without it".into()),
                );
            }
        }
        Value::Array(items) => {
            for (i, item) in items.iter().enumerate() {
                check_printable(c, item, &at.index(i));
            }
        }
        Value::Object(map) => {
            for (key, item) in map {
                check_printable(c, item, &at.key(key));
            }
        }
        _ => {}
    }
}

/// Largest logo accepted (bytes).
pub const MAX_LOGO_BYTES: u64 = 2 * 1024 * 1024;

/// Reads a logo through `files` and checks that it is a regular file of at most
/// [`MAX_LOGO_BYTES`] whose first bytes are a PNG or JPEG signature or SVG markup, the formats
/// typst embeds; `Err` says what is wrong. The bytes read here are the ones the report embeds,
/// so a logo changed between check and typesetting cannot slip through unchecked.
pub fn read_logo(files: &dyn crate::files::Files, path: &Path) -> Result<Vec<u8>, String> {
    use crate::files::ReadError;
    let bytes = files.read(path, MAX_LOGO_BYTES).map_err(|e| match e {
        ReadError::Folder | ReadError::NotRegular => {
            "is not a regular file (a folder, pipe or device)".to_string()
        }
        ReadError::TooLarge {
            size: Some(size), ..
        } => format!("is {size} bytes"),
        ReadError::TooLarge { size: None, limit } => format!("is more than {limit} bytes"),
        _ => "cannot be read".to_string(),
    })?;
    if image_kind(&bytes[..bytes.len().min(512)]).is_none() {
        return Err("is not a PNG, JPEG or SVG image (judged by its first bytes)".into());
    }
    Ok(bytes)
}

/// The image format of a file from its first bytes: PNG (RFC 2083 signature), JPEG (SOI
/// marker FF D8 FF) or SVG (XML or `<svg` text; common practice).
pub fn image_kind(head: &[u8]) -> Option<&'static str> {
    if head.starts_with(b"\x89PNG\r\n\x1a\n") {
        return Some("png");
    }
    if head.starts_with(&[0xFF, 0xD8, 0xFF]) {
        return Some("jpeg");
    }
    let text = String::from_utf8_lossy(head);
    let text = text.trim_start_matches('\u{feff}').trim_start();
    if text.starts_with("<svg")
        || (text.starts_with("<?xml") || text.starts_with("<!--")) && text.contains("<svg")
    {
        return Some("svg");
    }
    None
}

/// The run id of a YAML value in its one canonical form, so that `7`, `7.0`, `"7"` and
/// `" 7 "` are one id (see [`RunId::canonical`]); `Err` says what is wrong with a blank,
/// non-integral, out-of-range or non-scalar id, for a message naming the field.
pub fn run_id(v: &Value) -> Result<RunId, String> {
    match v {
        Value::Number(n) => {
            if let Some(i) = n.as_i64() {
                return Ok(RunId(i.to_string()));
            }
            match n.as_f64() {
                Some(f) if f.abs() < 9.0e15 && f.fract() == 0.0 => {
                    Ok(RunId((f as i64).to_string()))
                }
                Some(f) if f.abs() < 9.0e15 => Err(format!(
                    "run id `{n}` is not a whole number (expected a whole number, or text)"
                )),
                _ => Err(format!(
                    "run id `{n}` is out of range (expected a whole number below 9,000,000,000,000,000, or text)"
                )),
            }
        }
        Value::String(s) if !s.trim().is_empty() => Ok(RunId::canonical(s)),
        Value::String(_) | Value::Null => {
            Err("the run id is blank (expected a whole number, or text)".into())
        }
        _ => Err("the run id is not a number or text (expected a whole number, or text)".into()),
    }
}

fn responses(
    c: &mut Checker<'_>,
    file: &StudyFile,
    design: &DesignRequest,
    design_ok: bool,
) -> Vec<Response> {
    let has_nominal = match design.kind {
        DesignKind::Explicit => design
            .explicit_runs
            .iter()
            .any(|r| r.levels.iter().all(|l| *l == 0)),
        _ => design.center_points > 0,
    };
    let mut seen = BTreeSet::new();
    let mut out = Vec::new();
    for (i, r) in file.responses.iter().enumerate() {
        let at = FieldPath::of(&["responses"]).index(i);
        if !seen.insert(r.id.clone()) {
            c.report(
                &at.key("id"),
                format!("duplicate response id `{}`", r.id),
                Some("expected each response id once".into()),
            );
        }
        if RESERVED_IDS.contains(&r.id.as_str()) {
            c.report(
                &at.key("id"),
                format!("`{}` is reserved for a results column", r.id),
                Some("expected another id".into()),
            );
        }
        let percent_of = match r.percent_of {
            Some(PercentOf::Nominal) if !has_nominal && design_ok => {
                c.report(
                    &at.key("percent-of"),
                    "percent effects against the nominal runs need nominal runs, and the design has none",
                    Some("add `center-points` to the design, or use `percent-of: mean`".into()),
                );
                PercentOf::Mean
            }
            Some(p) => p,
            None if has_nominal => PercentOf::Nominal,
            None => PercentOf::Mean,
        };
        out.push(Response {
            id: r.id.clone(),
            name: r.name.clone(),
            unit: r.unit.clone(),
            percent_of,
            decimals: r.decimals,
            role: r.role.unwrap_or(model::Role::Assay),
            planning: r
                .planning
                .as_ref()
                .map(|p| crate::study::Planning {
                    sd: p.sd.unwrap_or(f64::NAN),
                    df: p.df,
                    level: p.level,
                    source: p.source.clone(),
                })
                .filter(|p| p.sd.is_finite() || p.level.is_some()),
        });
    }
    out
}

type Rules = (
    Vec<EffectLimit>,
    Vec<SignificanceRule>,
    Vec<SuitabilityLimit>,
);

fn acceptance(c: &mut Checker<'_>, file: &StudyFile, responses: &[Response]) -> Rules {
    use model::Method;
    let mut limits = Vec::new();
    let mut significance = Vec::new();
    let mut suitability = Vec::new();
    let ids: Vec<&str> = responses.iter().map(|r| r.id.as_str()).collect();
    let factor_ids: Vec<&str> = file.factors.iter().map(|f| f.id.as_str()).collect();
    for (i, a) in file.acceptance.iter().enumerate() {
        let at = FieldPath::of(&["acceptance"]).index(i);
        let Some(response) = ids.iter().position(|id| *id == a.response) else {
            let hint = closest(&a.response, ids.iter().copied())
                .map(|b| format!("did you mean `{b}`? "))
                .unwrap_or_default();
            c.report(
                &at.key("response"),
                format!("unknown response `{}`", a.response),
                Some(format!(
                    "{hint}expected one of the response ids: {}",
                    ids.join(", ")
                )),
            );
            continue;
        };
        let kinds = [
            a.effect_limit.is_some(),
            a.significance.is_some(),
            a.min.is_some() || a.max.is_some(),
        ]
        .iter()
        .filter(|k| **k)
        .count();
        if kinds == 0 {
            c.report(
                &at,
                "the acceptance rule sets no limit",
                Some("expected `effect-limit: <number>`, `significance: {method: ...}` or `min:`/`max:`".into()),
            );
            continue;
        }
        if kinds > 1 {
            c.report(
                &at,
                "one acceptance entry mixes several rules",
                Some("expected one rule per entry (effect-limit, significance, or min/max); list several entries for one response".into()),
            );
            continue;
        }
        if a.effect_limit.is_none() && (a.unit.is_some() || a.basis.is_some()) {
            let name = if a.unit.is_some() { "unit" } else { "basis" };
            c.report(
                &at.key(name),
                format!("`{name}` belongs to an `effect-limit`"),
                Some("expected it next to `effect-limit`".into()),
            );
        }
        if let Some(limit) = a.effect_limit {
            limits.push(EffectLimit {
                response,
                limit,
                unit: a.unit.unwrap_or(LimitUnit::Percent),
                basis: a.basis.clone(),
            });
        }
        if let (Some(min), Some(max)) = (a.min, a.max)
            && min >= max
        {
            c.report(
                &at.key("min"),
                format!("min ({min}) is not below max ({max})"),
                Some("expected min < max".into()),
            );
        }
        if a.min.is_some() || a.max.is_some() {
            suitability.push(SuitabilityLimit {
                response,
                min: a.min,
                max: a.max,
            });
        }
        let Some(sig) = &a.significance else { continue };
        let here = at.key("significance");
        let method = sig.method;
        let only_for = |c: &mut Checker<'_>, name: &str, present: bool, owner: &str| {
            if present {
                c.report(
                    &here.key(name),
                    format!("`{name}` does not apply to method {}", method.as_str()),
                    Some(format!("`{name}` belongs to method {owner}")),
                );
            }
        };
        if method != Method::Precision {
            only_for(c, "s", sig.s.is_some(), "precision");
            only_for(c, "df", sig.df.is_some(), "precision");
            only_for(c, "source", sig.source.is_some(), "precision");
            only_for(
                c,
                "determinations",
                sig.determinations.is_some(),
                "precision",
            );
        }
        if method != Method::Negligible {
            only_for(c, "terms", sig.terms.is_some(), "negligible");
        }
        if method == Method::Precision {
            for (name, present) in [("s", sig.s.is_some()), ("df", sig.df.is_some())] {
                if !present {
                    c.report(
                        &here.key(name),
                        format!("method precision needs `{name}`"),
                        Some("expected `s` (the standard deviation), `df` (its degrees of freedom) and `source` (where it comes from)".into()),
                    );
                }
            }
        }
        if let Some(df) = sig.df.filter(|df| *df < 1.0) {
            c.report(
                &here.key("df"),
                format!("{df} degrees of freedom are too few for a t quantile"),
                Some(
                    "expected at least 1 (the degrees of freedom of the standard deviation `s`)"
                        .into(),
                ),
            );
        }
        // Run means average the results' determinations: the precision rule's n is that number
        // unless stated, and a different number would judge effects with the wrong SE.
        let results_n = file.results.as_ref().and_then(|r| r.determinations);
        if method == Method::Precision
            && let (Some(stated), Some(measured)) = (sig.determinations, results_n)
            && stated != measured
        {
            c.report(
                &here.key("determinations"),
                format!(
                    "the rule averages {stated} determinations per run, but `results.determinations` is {measured}"
                ),
                Some(format!(
                    "expected {measured} (or leave `determinations` out: it defaults to the results' determinations)"
                )),
            );
        }
        let mut terms = Vec::new();
        if method == Method::Negligible {
            match &sig.terms {
                None => c.report(
                    &here.key("terms"),
                    "method negligible needs the list of terms assumed negligible",
                    Some(
                        "expected e.g. `terms: [temp×ph×flow]` (factor ids joined by × or *)"
                            .into(),
                    ),
                ),
                Some(list) => {
                    for (j, t) in list.iter().enumerate() {
                        match parse_term(t, &factor_ids) {
                            Ok(mask) => terms.push((t.clone(), mask)),
                            Err(e) => c.report(
                                &here.key("terms").index(j),
                                e,
                                Some(format!(
                                    "expected factor ids joined by × or *, from: {}",
                                    factor_ids.join(", ")
                                )),
                            ),
                        }
                    }
                }
            }
        }
        significance.push(SignificanceRule {
            response,
            entry: i,
            method,
            alpha: sig.alpha.unwrap_or(0.05),
            s: sig.s,
            df: sig.df,
            source: sig.source.clone(),
            determinations: sig.determinations.or(results_n).unwrap_or(1) as usize,
            terms,
        });
    }
    (limits, significance, suitability)
}

/// A term written as factor ids joined by `×`, `*` or `x` surrounded by spaces.
pub fn parse_term(text: &str, factor_ids: &[&str]) -> Result<u64, String> {
    let mut mask = 0u64;
    let parts: Vec<&str> = text
        .split(['×', '*'])
        .map(str::trim)
        .filter(|p| !p.is_empty())
        .collect();
    if parts.is_empty() {
        return Err(format!("`{text}` names no factor"));
    }
    for part in parts {
        let Some(i) = factor_ids.iter().position(|f| *f == part) else {
            return Err(format!("`{part}` in `{text}` is not a factor id"));
        };
        let bit = 1u64 << i;
        if mask & bit != 0 {
            return Err(format!("`{part}` appears twice in `{text}`"));
        }
        mask |= bit;
    }
    Ok(mask)
}

fn exclusions(
    c: &mut Checker<'_>,
    specs: &[model::ExclusionSpec],
    responses: &[model::ResponseSpec],
) -> Vec<super::Exclusion> {
    let mut seen = BTreeSet::new();
    let mut out = Vec::new();
    for (i, e) in specs.iter().enumerate() {
        let at = FieldPath::of(&["excluded"]).index(i);
        let run = match run_id(&e.run) {
            Ok(run) => run,
            Err(why) => {
                c.report(&at.key("run"), why, None);
                continue;
            }
        };
        let response = match &e.response {
            None => None,
            Some(id) => match responses.iter().position(|r| &r.id == id) {
                Some(r) => Some(r),
                None => {
                    let ids: Vec<&str> = responses.iter().map(|r| r.id.as_str()).collect();
                    c.report(
                        &at.key("response"),
                        format!("unknown response `{id}`"),
                        Some(format!("expected one of {}", ids.join(", "))),
                    );
                    continue;
                }
            },
        };
        // A run is excluded once for every response, or once per response.
        let twice = !seen.insert((run.clone(), response))
            || (response.is_none() && seen.iter().any(|(r, x)| r == &run && x.is_some()))
            || (response.is_some() && seen.contains(&(run.clone(), None)));
        if twice {
            c.report(
                &at.key("run"),
                format!("run `{run}` is excluded twice"),
                Some(
                    "expected each excluded run once (for every response, or once per response)"
                        .into(),
                ),
            );
            continue;
        }
        out.push(super::Exclusion {
            run,
            reason: e.reason.clone(),
            entry: i,
            response,
        });
    }
    out
}

fn check_results_spec(c: &mut Checker<'_>, results: &model::ResultsSpec) {
    let at = FieldPath::of(&["results"]);
    match (&results.file, &results.runs) {
        (Some(_), Some(_)) => c.report(
            &at,
            "both `file` and `runs` are given",
            Some("expected the results either in a CSV `file` or inline as `runs`".into()),
        ),
        (None, None) => c.report(
            &at,
            "no results are given",
            Some("expected `file: results.csv` or inline `runs: [{run: 1, <response id>: value}, ...]`".into()),
        ),
        _ => {}
    }
}

fn check_id_clashes(c: &mut Checker<'_>, file: &StudyFile) {
    for (i, r) in file.responses.iter().enumerate() {
        if file.factors.iter().any(|f| f.id == r.id) {
            c.report(
                &FieldPath::of(&["responses"]).index(i).key("id"),
                format!("`{}` is already a factor id", r.id),
                Some("expected response ids that differ from the factor ids (they share the results columns)".into()),
            );
        }
    }
}
