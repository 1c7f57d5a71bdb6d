//! `plateau verify`: runs the published reference cases on this installation and writes a
//! calculation verification record a laboratory can file (installation qualification: tool
//! version, binary checksum, platform; operational qualification: every case's results).
//!
//! The cases live in `verification/cases/*.yaml` and are embedded in the binary, so an
//! installed binary verifies itself; the test suite runs the same files, so the two can never
//! drift apart. Each case holds a complete study, the full citation of where its expected
//! values come from, and the expected values with their tolerances. A case runs through the
//! real pipeline (`pipeline::evaluate` on a study file written to a temporary folder) and is
//! compared in the analysis document (`analysis.json`), so what is verified is what the
//! report prints.

pub mod document;
pub mod quantity;

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};
use serde_json::Value;

// A case file named once: its name and its text, embedded at build time.
macro_rules! case {
    ($name:literal) => {
        (
            $name,
            include_str!(concat!("../../verification/cases/", $name)),
        )
    };
}

/// The reference cases shipped in the binary, as (file name, text).
pub const EMBEDDED: &[(&str, &str)] = &[
    case!("aliased-chain-unresolved.yaml"),
    case!("anova-replicated-2-2.yaml"),
    case!("bhh-pilot-plant.yaml"),
    case!("catalogue-5-factors-v.yaml"),
    case!("catalogue-7-factors-iv.yaml"),
    case!("categorical-factor-and-nominal-runs.yaml"),
    case!("curvature-centre-points.yaml"),
    case!("determinations-run-means.yaml"),
    case!("drift-additive.yaml"),
    case!("drift-error-about-the-line.yaml"),
    case!("drift-relative.yaml"),
    case!("dummies-pb12.yaml"),
    case!("excluded-run-least-squares.yaml"),
    case!("follow-up-fold-over.yaml"),
    case!("fraction-2-3-1.yaml"),
    case!("interaction-verdict.yaml"),
    case!("lenth-dong-bhh-table-5-11.yaml"),
    case!("plackett-burman-12.yaml"),
    case!("precision-negligible-criteria.yaml"),
    case!("routine-risk-normal.yaml"),
    case!("worst-case-uncertainty-ranges.yaml"),
];

/// What went wrong while verifying.
#[derive(Debug, thiserror::Error)]
pub enum VerifyError {
    /// A case file could not be read.
    #[error(
        "reference case {file}: {problem}\nhint: expected `case: {{id, title, kind, source}}`, `study: <a study>` and `expect: [{{quantity, value, tolerance}}]`"
    )]
    Case {
        /// The case file.
        file: String,
        /// What is wrong with it.
        problem: String,
    },
    /// Some checks failed (the record was still produced).
    #[error("{} of {} checks failed:\n{}", failed.len(), total, failed.join("\n"))]
    Failed {
        /// One line per failed check: case id, quantity, expected and computed.
        failed: Vec<String>,
        /// Number of checks.
        total: usize,
    },
    /// The typesetter failed or is missing.
    #[error(transparent)]
    Typst(#[from] crate::report::typst::TypstError),
    /// The record's template failed.
    #[error(transparent)]
    Template(#[from] crate::report::render::TemplateError),
    /// The destination was refused, or could not be written.
    #[error(transparent)]
    Output(#[from] crate::output::OutputError),
    /// A file could not be written.
    #[error("failed to write {path} ({cause})")]
    Write {
        /// The path.
        path: String,
        /// The reason.
        cause: String,
    },
}

impl VerifyError {
    fn write(path: &Path, e: impl std::fmt::Display) -> Self {
        VerifyError::Write {
            path: path.display().to_string(),
            cause: e.to_string(),
        }
    }
}

/// Where a case's expected values come from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum CaseKind {
    /// Printed in a published worked example, table or handbook.
    Published,
    /// Computed by a reference library (scipy, statsmodels, numpy) with a committed script.
    Library,
    /// Worked by hand (with numpy) from a published formula.
    Hand,
}

/// Identification of a case.
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CaseInfo {
    /// Case id (the file stem).
    pub id: String,
    /// What it verifies.
    pub title: String,
    /// Where its values come from.
    pub kind: CaseKind,
    /// Full citation of the published source, or the library, version and command.
    #[serde(default)]
    pub source: String,
}

/// One expected value.
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Expectation {
    /// Path into the analysis document (see [`quantity`]).
    pub quantity: String,
    /// The expected value: a number (compared within the tolerance) or any other JSON value
    /// (compared exactly, numbers inside within the tolerance).
    pub value: Value,
    /// Largest accepted |computed − expected|.
    pub tolerance: f64,
    /// Where the value comes from, or how it follows.
    #[serde(default)]
    pub note: Option<String>,
}

/// A reference case: a study, its source and its expected values.
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CaseFile {
    /// Identification and source.
    pub case: CaseInfo,
    /// The study, exactly as a study file would hold it.
    pub study: Value,
    /// The expected values.
    pub expect: Vec<Expectation>,
}

/// Reads one case file; a case without a source, without checks or with a malformed
/// quantity is an error.
pub fn parse_case(file: &str, text: &str) -> Result<CaseFile, VerifyError> {
    let problem = |p: String| VerifyError::Case {
        file: file.to_string(),
        problem: p,
    };
    let case: CaseFile = serde_saphyr::from_str(text).map_err(|e| problem(e.to_string()))?;
    if case.case.source.trim().is_empty() {
        return Err(problem(format!(
            "case `{}` names no source (expected the full citation, or the reference library with its version and command)",
            case.case.id
        )));
    }
    if case.expect.is_empty() {
        return Err(problem(format!(
            "case `{}` has no expected values",
            case.case.id
        )));
    }
    for e in &case.expect {
        quantity::validate(&e.quantity).map_err(|q| problem(q.to_string()))?;
        if !e.tolerance.is_finite() || e.tolerance < 0.0 {
            return Err(problem(format!(
                "`{}` has tolerance {} (expected a finite number of 0 or more)",
                e.quantity, e.tolerance
            )));
        }
    }
    Ok(case)
}

/// The embedded reference cases.
pub fn embedded_cases() -> Result<Vec<CaseFile>, VerifyError> {
    EMBEDDED
        .iter()
        .map(|(name, text)| parse_case(name, text))
        .collect()
}

/// The outcome of one expected value.
#[derive(Debug, Clone, Serialize)]
pub struct Check {
    /// Case id.
    pub case: String,
    /// The quantity.
    pub quantity: String,
    /// Expected value.
    pub expected: Value,
    /// Computed value (the worst one for a `[*]` quantity); `null` when the analysis has none.
    pub computed: Option<Value>,
    /// computed − expected, for numbers.
    pub difference: Option<f64>,
    /// Accepted |difference|.
    pub tolerance: f64,
    /// Whether the check passed.
    pub pass: bool,
    /// Where the expected value comes from.
    pub note: Option<String>,
}

/// The outcome of one case.
#[derive(Debug, Clone, Serialize)]
pub struct CaseResult {
    /// Case id.
    pub id: String,
    /// Title.
    pub title: String,
    /// Kind of source.
    pub kind: CaseKind,
    /// The source.
    pub source: String,
    /// Whether every check passed (and the study could be analysed).
    pub pass: bool,
    /// Why the study could not be analysed, if it could not.
    pub error: Option<String>,
    /// The checks.
    pub checks: Vec<Check>,
}

/// Platform identification.
#[derive(Debug, Clone, Serialize)]
pub struct Platform {
    /// `std::env::consts::OS`.
    pub os: String,
    /// `std::env::consts::ARCH`.
    pub arch: String,
}

/// Summary counts.
#[derive(Debug, Clone, Serialize)]
pub struct Summary {
    /// Cases run.
    pub cases: usize,
    /// Cases passed.
    pub cases_passed: usize,
    /// Checks made.
    pub checks: usize,
    /// Checks passed.
    pub passed: usize,
    /// Checks failed.
    pub failed: usize,
}

/// The verification record.
#[derive(Debug, Clone, Serialize)]
pub struct VerificationRecord {
    /// Tool name.
    pub tool: String,
    /// Tool version.
    pub version: String,
    /// The running binary, if the operating system names it.
    pub binary: Option<String>,
    /// SHA-256 of the running binary.
    pub binary_sha256: Option<String>,
    /// Operating system and architecture.
    pub platform: Platform,
    /// Version of the typesetter used for the PDF, if any.
    pub typst_version: Option<String>,
    /// Date of the record (YYYY-MM-DD).
    pub date: String,
    /// `given` (--date) or `system clock`.
    pub date_source: String,
    /// Counts.
    pub summary: Summary,
    /// Every case.
    pub cases: Vec<CaseResult>,
}

impl VerificationRecord {
    /// True when every case passed.
    pub fn passed(&self) -> bool {
        self.summary.failed == 0 && self.cases.iter().all(|c| c.pass)
    }

    /// `Ok` when every case passed, else the failed checks (case, quantity, expected,
    /// computed), one per line.
    pub fn outcome(&self) -> Result<(), VerifyError> {
        if self.passed() {
            return Ok(());
        }
        let mut failed = Vec::new();
        for case in &self.cases {
            if let Some(e) = &case.error {
                failed.push(format!(
                    "  {}: the study could not be analysed: {e}",
                    case.id
                ));
            }
            for c in case.checks.iter().filter(|c| !c.pass) {
                failed.push(format!(
                    "  {}: {} expected {} computed {} (tolerance {})",
                    case.id,
                    c.quantity,
                    c.expected,
                    c.computed
                        .as_ref()
                        .map_or_else(|| "(none)".to_string(), Value::to_string),
                    c.tolerance
                ));
            }
        }
        Err(VerifyError::Failed {
            failed,
            total: self.summary.checks,
        })
    }
}

/// What the record says about the installation, besides the case results.
#[derive(Debug, Clone, Default)]
pub struct Options {
    /// The record's date; `None` takes today's date from the system clock.
    pub date: Option<String>,
    /// The typesetter (its version goes into the record; needed for the PDF).
    pub typst: Option<crate::report::typst::Typst>,
}

/// Runs the embedded cases and returns the record (failed checks are in the record; see
/// [`VerificationRecord::outcome`]).
pub fn run(options: &Options) -> Result<VerificationRecord, VerifyError> {
    let cases = embedded_cases()?;
    Ok(run_cases(&cases, options))
}

/// Runs the given cases and returns the record.
pub fn run_cases(cases: &[CaseFile], options: &Options) -> VerificationRecord {
    let results: Vec<CaseResult> = cases.iter().map(run_case).collect();
    let checks: usize = results.iter().map(|c| c.checks.len()).sum();
    let passed: usize = results
        .iter()
        .map(|c| c.checks.iter().filter(|k| k.pass).count())
        .sum();
    let binary = std::env::current_exe().ok();
    // Hashed once per process: several records in one process (tests) share the binary.
    static HASH: std::sync::OnceLock<Option<String>> = std::sync::OnceLock::new();
    let binary_sha256 = HASH
        .get_or_init(|| binary.as_deref().and_then(sha256_of_file))
        .clone();
    let (date, date_source) = match &options.date {
        Some(d) => (d.clone(), "given"),
        None => (today(), "system clock"),
    };
    VerificationRecord {
        tool: "plateau".into(),
        version: env!("CARGO_PKG_VERSION").into(),
        binary_sha256,
        binary: binary.map(|p| p.display().to_string()),
        platform: Platform {
            os: std::env::consts::OS.into(),
            arch: std::env::consts::ARCH.into(),
        },
        typst_version: options.typst.as_ref().map(|t| t.version.clone()),
        date,
        date_source: date_source.into(),
        summary: Summary {
            cases: results.len(),
            cases_passed: results.iter().filter(|c| c.pass).count(),
            checks,
            passed,
            failed: checks - passed,
        },
        cases: results,
    }
}

/// Runs one case: writes its study to a private temporary folder, analyses it with the real
/// pipeline and compares every expected value.
pub fn run_case(case: &CaseFile) -> CaseResult {
    let info = &case.case;
    let mut result = CaseResult {
        id: info.id.clone(),
        title: info.title.clone(),
        kind: info.kind,
        source: info.source.clone(),
        pass: false,
        error: None,
        checks: Vec::new(),
    };
    let document = match analyse(case) {
        Ok(d) => d,
        Err(e) => {
            result.error = Some(e);
            result.checks = case
                .expect
                .iter()
                .map(|e| compare(&info.id, e, &Value::Null))
                .collect();
            return result;
        }
    };
    result.checks = case
        .expect
        .iter()
        .map(|e| compare(&info.id, e, &document))
        .collect();
    result.pass = result.checks.iter().all(|c| c.pass);
    result
}

/// The analysis document of a case's study, analysed in memory: a study file is YAML, and JSON
/// is YAML, so the study is handed over as JSON, byte for byte what the case holds.
fn analyse(case: &CaseFile) -> Result<Value, String> {
    let text = serde_json::to_string_pretty(&case.study).map_err(|e| e.to_string())?;
    let path = PathBuf::from(format!("{}.yaml", safe_name(&case.case.id)));
    let files = crate::files::InMemory::new().with(&path, text);
    let evaluated = crate::pipeline::evaluate_in(&files, &path).map_err(|d| d.to_string())?;
    serde_json::to_value(&evaluated.analysis).map_err(|e| e.to_string())
}

fn safe_name(id: &str) -> String {
    id.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect()
}

/// Compares one expectation with the document.
fn compare(case: &str, e: &Expectation, document: &Value) -> Check {
    let mut check = Check {
        case: case.to_string(),
        quantity: e.quantity.clone(),
        expected: e.value.clone(),
        computed: None,
        difference: None,
        tolerance: e.tolerance,
        pass: false,
        note: e.note.clone(),
    };
    if document.is_null() {
        return check;
    }
    let Ok(values) = quantity::evaluate(&e.quantity, document) else {
        return check;
    };
    // With several values ([*]) every one must pass; the record shows the worst.
    let mut worst: Option<(Option<Value>, Option<f64>, bool)> = None;
    for v in values {
        let (pass, diff) = match &v {
            None => (false, None),
            Some(v) => close(&e.value, v, e.tolerance),
        };
        let worse = match &worst {
            None => true,
            Some((_, d, p)) => {
                (*p && !pass) || (*p == pass && diff.map(f64::abs) > d.map(f64::abs))
            }
        };
        if worse {
            worst = Some((v, diff, pass));
        }
    }
    if let Some((v, d, p)) = worst {
        check.computed = v;
        check.difference = d;
        check.pass = p;
    }
    check
}

/// Whether `computed` matches `expected`: numbers within `tolerance` (the difference is
/// returned for a scalar), lists and objects element by element, anything else exactly.
fn close(expected: &Value, computed: &Value, tolerance: f64) -> (bool, Option<f64>) {
    match (expected, computed) {
        (Value::Number(a), Value::Number(b)) => match (a.as_f64(), b.as_f64()) {
            (Some(a), Some(b)) => {
                let d = b - a;
                (d.is_finite() && d.abs() <= tolerance, Some(d))
            }
            _ => (false, None),
        },
        (Value::Array(a), Value::Array(b)) => (
            a.len() == b.len() && a.iter().zip(b).all(|(x, y)| close(x, y, tolerance).0),
            None,
        ),
        (Value::Object(a), Value::Object(b)) => (
            a.len() == b.len()
                && a.iter()
                    .all(|(k, x)| b.get(k).is_some_and(|y| close(x, y, tolerance).0)),
            None,
        ),
        (a, b) => (a == b, None),
    }
}

fn sha256_of_file(path: &Path) -> Option<String> {
    use sha2::{Digest, Sha256};
    use std::io::Read;
    let mut file = std::fs::File::open(path).ok()?;
    let mut hasher = Sha256::new();
    let mut buf = vec![0u8; 1 << 16];
    loop {
        let n = file.read(&mut buf).ok()?;
        if n == 0 {
            break;
        }
        hasher.update(buf.get(..n)?);
    }
    Some(
        hasher
            .finalize()
            .iter()
            .map(|b| format!("{b:02x}"))
            .collect(),
    )
}

/// Today's date (UTC) from the system clock, as YYYY-MM-DD.
///
/// This is the one place plateau reads the clock: a verification record documents when the
/// installation was checked, so without `--date` it carries the day it was made. Everything
/// else (reports, PDFs) takes its date from the study file so that it is reproducible.
pub fn today() -> String {
    civil_date(jiff::Timestamp::now().as_second().div_euclid(86_400))
}

/// The civil date (`YYYY-MM-DD`, UTC) of a day count since 1970-01-01.
pub fn civil_date(days: i64) -> String {
    jiff::Timestamp::from_second(days.saturating_mul(86_400))
        .map(|t| t.to_zoned(jiff::tz::TimeZone::UTC).date().to_string())
        .unwrap_or_else(|_| "1970-01-01".into())
}

/// Checks a `--date` value: YYYY-MM-DD with a real month and day.
pub fn check_date(date: &str) -> Result<(), String> {
    let parts: Vec<&str> = date.split('-').collect();
    let ok = matches!(parts.as_slice(), [y, m, d] if y.len() == 4 && m.len() == 2 && d.len() == 2)
        && crate::study::check::valid_date(date);
    if ok {
        Ok(())
    } else {
        Err(format!(
            "--date {date} is not a date; expected YYYY-MM-DD, e.g. 2026-03-31"
        ))
    }
}

/// What `plateau verify` does: runs the cases; with `json` prints the record, else writes
/// `out_dir/verification.pdf` (and `.typ`, `.json`); then `Ok` only if every check passed.
/// Returns the text to print on standard output.
pub fn command(
    out_dir: &Path,
    json: bool,
    date: Option<String>,
    typst: Option<crate::report::typst::Typst>,
) -> Result<String, VerifyError> {
    let options = Options { date, typst };
    let record = run(&options)?;
    let text = if json {
        serde_json::to_string_pretty(&record)
            .map_err(|e| VerifyError::write(Path::new("(stdout)"), e))?
            + "\n"
    } else {
        let dir = document::write(&record, out_dir, options.typst.as_ref())?;
        format!(
            "{}  {} of {} checks passed in {} cases; record written to {}\n",
            if record.passed() { "ok" } else { "FAILED" },
            record.summary.passed,
            record.summary.checks,
            record.summary.cases,
            dir.join(document::PDF).display()
        )
    };
    match record.outcome() {
        Ok(()) => Ok(text),
        Err(e) => {
            // The record is evidence either way: print it, then fail.
            print!("{text}");
            Err(e)
        }
    }
}

/// Default output folder of `plateau verify`.
pub fn default_dir() -> PathBuf {
    PathBuf::from("plateau-verification")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn civil_dates_match_known_days() {
        // 1970-01-01 is day 0; 2000-03-01 is day 11017; 2026-11-18 is day 20775
        // (common practice: `date -u -d @$((day*86400)) +%F`).
        assert_eq!(civil_date(0), "1970-01-01");
        assert_eq!(civil_date(11_017), "2000-03-01");
        assert_eq!(civil_date(20_775), "2026-11-18");
    }

    #[test]
    fn dates_are_checked() {
        assert!(check_date("2026-02-28").is_ok());
        assert!(check_date("2026-02-30").is_err());
        assert!(check_date("26-1-1").is_err());
    }

    #[test]
    fn a_number_within_tolerance_passes_and_reports_the_difference() {
        let (pass, d) = close(
            &serde_json::json!(1.0),
            &serde_json::json!(1.0 + 1e-12),
            1e-9,
        );
        assert!(pass);
        assert!(d.is_some_and(|d| d > 0.0));
        assert!(!close(&serde_json::json!(1.0), &serde_json::json!(1.1), 1e-9).0);
    }

    #[test]
    fn a_case_without_a_source_is_refused() {
        let text = "case: {id: x, title: t, kind: hand}\nstudy: {}\nexpect: [{quantity: a, value: 1, tolerance: 0}]\n";
        let e = parse_case("x.yaml", text).unwrap_err().to_string();
        assert!(e.contains("names no source"), "{e}");
    }

    #[test]
    fn every_embedded_case_parses() {
        let cases = embedded_cases().unwrap();
        assert_eq!(cases.len(), EMBEDDED.len());
    }
}
