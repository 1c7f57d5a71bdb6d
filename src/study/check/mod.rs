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
    locator: Locator,
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
                .at(c.locator.value(&at.0)),
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
                .at(c.locator.value(&at.0)),
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
        locator: c.locator,
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

mod design;
mod factors;
mod logo;
mod responses;
mod runs;

use design::design;
use factors::factors;
pub use logo::{MAX_LOGO_BYTES, image_kind, read_logo};
pub use responses::parse_term;
use responses::{acceptance, responses};
pub use runs::run_id;
use runs::{check_id_clashes, check_printable, check_results_spec, exclusions};
