//! `plateau check`: the study file, its design, its results and its protocol lock, without analysing.

use super::Failure;
use plateau::pipeline;
use std::path::PathBuf;

#[derive(clap::Args)]
pub struct Args {
    /// Study files, or folders searched recursively for study files; `-` reads one study
    /// from standard input.
    #[arg(required = true)]
    studies: Vec<PathBuf>,
    /// Print one JSON object per study (ok, errors, warnings) instead of lines.
    #[arg(long)]
    json: bool,
}

pub fn run(args: Args) -> Result<(), Failure> {
    let Args { studies, json } = args;
    let files = plateau::batch::discover(&studies)?;
    if files.is_empty() {
        return Err(Failure::Usage(
            "no study files found (a study file is a .yaml file with a top-level `schema:` key)"
                .into(),
        ));
    }
    let outcomes: Vec<CheckOutcome> = files.iter().map(|f| check_one(f)).collect();
    if json {
        let text =
            serde_json::to_string_pretty(&outcomes).map_err(|e| Failure::Other(e.to_string()))?;
        println!("{text}");
    } else {
        for o in &outcomes {
            for w in &o.warnings {
                eprintln!("warning: {w}");
            }
            for d in &o.errors {
                super::failure::print_error(d);
            }
            for l in &o.lines {
                println!("ok  {l}");
            }
        }
    }
    if outcomes.iter().all(|o| o.ok) {
        Ok(())
    } else {
        Err(Failure::Silent(1))
    }
}

/// What `plateau check` found in one study file.
#[derive(serde::Serialize)]
struct CheckOutcome {
    /// The study file.
    study: String,
    /// No error.
    ok: bool,
    /// The `ok` lines (study, design, results).
    lines: Vec<String>,
    /// Warnings (the design's power).
    warnings: Vec<String>,
    /// Errors with file, line, column, field and what would be valid.
    errors: Vec<plateau::study::Diagnostic>,
}

/// Checks one study: schema, fields, design and results; warnings for a design that cannot
/// detect its limit.
fn check_one(study: &std::path::Path) -> CheckOutcome {
    let mut out = CheckOutcome {
        study: study.display().to_string(),
        ok: false,
        lines: Vec::new(),
        warnings: Vec::new(),
        errors: Vec::new(),
    };
    let (s, design) = match pipeline::plan(study) {
        Ok(x) => x,
        Err(d) => {
            out.errors = d.0;
            return out;
        }
    };
    // Read the results before reporting anything, so a failing file shows only errors.
    let results = match s.results {
        Some(_) => match pipeline::evaluate(study) {
            Ok(e) => Some(e),
            Err(d) => {
                out.errors = d.0;
                return out;
            }
        },
        None => None,
    };
    out.lines.push(format!(
        "{}: study {} ({})",
        study.display(),
        s.info.id,
        s.info.title
    ));
    out.lines.push(format!(
        "design: {} runs ({} two-level, {} nominal), {} estimable contrasts",
        design.runs.len(),
        design.runs.iter().filter(|r| !r.nominal).count(),
        design.nominal_count(),
        design.contrasts.len()
    ));
    if let Ok(p) =
        plateau::analysis::power::analyse(&s, &design, plateau::analysis::power::DEFAULT_TARGET)
    {
        out.warnings = plateau::report::power::warnings(&p);
    }
    if let Some(lock) = &s.lock {
        let deviations = plateau::protocol::deviations::compare(&lock.planning, &s.planning);
        // A justification that names no changed field is likely a typo in its field.
        for j in s.protocol.iter().flat_map(|p| &p.deviations) {
            let plan_field = !j.field.trim().starts_with("results");
            let used = deviations
                .iter()
                .any(|d| plateau::protocol::deviations::covers(&j.field, &d.field));
            if plan_field && !used {
                out.warnings.push(format!(
                    "protocol.deviations: `{}` names no field that changed since the lock; the justification is not shown\nhint: use the field as `check` and the report name it, e.g. factors[temp].delta",
                    j.field
                ));
            }
        }
        out.lines.push(format!(
            "protocol lock {}: its content matches its SHA-256; {}",
            lock.file,
            match deviations.len() {
                0 => "the plan is unchanged since the lock".to_string(),
                1 => "1 field of the plan changed since (a deviation in the report)".to_string(),
                n => format!("{n} fields of the plan changed since (deviations in the report)"),
            }
        ));
        for d in &deviations {
            out.lines
                .push(format!("    {}: {} → {}", d.field, d.protocol, d.study));
        }
    }
    out.lines.push(match results {
        Some(evaluated) => format!(
            "results: {} runs × {} responses",
            evaluated.data.values.len(),
            s.responses.len()
        ),
        None => "no results yet: `plateau design` prints the run sheet to fill in".to_string(),
    });
    out.ok = true;
    out
}
