//! `plateau report`: the report folder of one study, or of many in parallel.

use super::Failure;
use super::TypstArgs;
use plateau::pipeline;
use plateau::report;
use std::path::PathBuf;

#[derive(clap::Args)]
pub struct Args {
    /// Study files, or folders searched recursively for study files.
    #[arg(required = true)]
    studies: Vec<PathBuf>,
    /// Report folder of a single study [default: <study stem>-report beside the study file].
    #[arg(short, long, value_name = "DIR")]
    output: Option<PathBuf>,
    /// Rebuild reports whose inputs are unchanged.
    #[arg(long)]
    force: bool,
    /// Studies processed at the same time [default: the number of cores].
    #[arg(short = 'j', long, value_name = "N")]
    jobs: Option<usize>,
    /// Print only failures and the final count.
    #[arg(short, long)]
    quiet: bool,
    /// Folder of templates that override the built-in ones file by file.
    #[arg(long, value_name = "DIR")]
    templates: Option<PathBuf>,
    #[command(flatten)]
    typesetter: TypstArgs,
    /// Write everything except the PDF (no typesetter needed).
    #[arg(long)]
    no_pdf: bool,
    /// Print one JSON object per study (written, current or failed, with the error).
    #[arg(long)]
    json: bool,
}

pub fn run(args: Args) -> Result<(), Failure> {
    let Args {
        studies,
        output,
        force,
        jobs,
        quiet,
        templates,
        typesetter,
        no_pdf,
        json,
    } = args;
    let mut files = plateau::batch::discover(&studies)?;
    if output.is_none() && files.iter().any(|f| f == std::path::Path::new("-")) {
        return Err(Failure::Usage(
            "a study read from standard input (`-`) needs its report folder named with -o DIR"
                .into(),
        ));
    }
    let mut unique = std::collections::BTreeSet::new();
    files.retain(|f| unique.insert(f.clone()));
    if output.is_none() {
        let clashes = plateau::batch::report_dir_clashes(&files);
        if !clashes.is_empty() {
            let list: Vec<String> = clashes
                .iter()
                .map(|(a, b)| {
                    format!(
                        "{} and {} would both report to {}",
                        a.display(),
                        b.display(),
                        report::default_dir(a).display()
                    )
                })
                .collect();
            return Err(Failure::Other(format!(
                "failed to plan the report folders ({})\nhint: rename one study file of each pair, or report it alone with -o DIR",
                list.join("; ")
            )));
        }
    }
    if files.is_empty() {
        return Err(Failure::Usage(
            "no study files found (a study file is a .yaml file with a top-level `schema:` key)"
                .into(),
        ));
    }
    if output.is_some() && files.len() > 1 {
        return Err(Failure::Usage(
            "-o/--output names the folder of a single study; leave it out for several".into(),
        ));
    }
    let typst = if no_pdf {
        None
    } else {
        Some(typesetter.find()?)
    };
    let options = report::Options {
        out_dir: output,
        templates,
        typst,
    };
    if json {
        let outcomes = if files.len() == 1 {
            vec![report_one(&files[0], &options, force)]
        } else {
            run_batch(&files, &options, force, jobs, true)
        };
        let entries: Vec<serde_json::Value> = files
            .iter()
            .zip(&outcomes)
            .map(|(f, o)| {
                serde_json::json!({
                    "study": f.display().to_string(),
                    "report": o.dir.display().to_string(),
                    "state": match (&o.failure, o.skipped) {
                        (Some(_), _) => "failed",
                        (None, true) => "current",
                        (None, false) => "written",
                    },
                    "error": o.failure.as_ref().map(Failure::first_line),
                })
            })
            .collect();
        let text =
            serde_json::to_string_pretty(&entries).map_err(|e| Failure::Other(e.to_string()))?;
        println!("{text}");
        let typesetter = outcomes
            .iter()
            .any(|o| matches!(o.failure, Some(Failure::Typesetter(_))));
        return match (outcomes.iter().any(|o| o.failure.is_some()), typesetter) {
            (false, _) => Ok(()),
            (true, true) => Err(Failure::Silent(3)),
            (true, false) => Err(Failure::Silent(1)),
        };
    }
    if files.len() == 1 {
        let outcome = report_one(&files[0], &options, force);
        return match outcome.failure {
            Some(f) => Err(f),
            None => {
                if outcome.skipped {
                    println!(
                        "ok  report in {} is current (inputs unchanged; --force rebuilds)",
                        outcome.dir.display()
                    );
                } else {
                    println!("ok  report written to {}", outcome.dir.display());
                }
                Ok(())
            }
        };
    }
    let outcomes = run_batch(&files, &options, force, jobs, quiet);
    let failed = outcomes.iter().filter(|o| o.failure.is_some()).count();
    let skipped = outcomes.iter().filter(|o| o.skipped).count();
    println!(
        "{} studies: {} written, {} current (skipped), {} failed",
        outcomes.len(),
        outcomes.len() - skipped - failed,
        skipped,
        failed
    );
    let typesetter = outcomes
        .iter()
        .any(|o| matches!(o.failure, Some(Failure::Typesetter(_))));
    match (failed, typesetter) {
        (0, _) => Ok(()),
        (_, true) => Err(Failure::Silent(3)),
        _ => Err(Failure::Silent(1)),
    }
}

/// What happened to one study of a batch.
struct Outcome {
    failure: Option<Failure>,
    skipped: bool,
    dir: PathBuf,
}

/// Reports every study, `jobs` at a time; one failure never stops the others. Prints one line
/// per study as it finishes.
fn run_batch(
    files: &[PathBuf],
    options: &report::Options,
    force: bool,
    jobs: Option<usize>,
    quiet: bool,
) -> Vec<Outcome> {
    let done = |file: &PathBuf, outcome: &Outcome| match (&outcome.failure, outcome.skipped) {
        (None, true) if !quiet => println!("current  {}", file.display()),
        (None, false) if !quiet => {
            println!("ok       {} → {}", file.display(), outcome.dir.display())
        }
        (Some(f), _) => eprintln!("failed   {}: {}", file.display(), f.first_line()),
        _ => {}
    };
    plateau::batch::in_parallel(files, jobs, |file| report_one(file, options, force), done)
        .into_iter()
        .zip(files)
        .map(|(o, file)| {
            o.unwrap_or(Outcome {
                failure: Some(Failure::Other("not processed".into())),
                skipped: false,
                dir: report::default_dir(file),
            })
        })
        .collect()
}

/// Reports one study unless its report is current (and `force` is not given).
fn report_one(file: &std::path::Path, options: &report::Options, force: bool) -> Outcome {
    let dir = options
        .out_dir
        .clone()
        .unwrap_or_else(|| report::default_dir(file));
    let fail = |f: Failure| Outcome {
        failure: Some(f),
        skipped: false,
        dir: dir.clone(),
    };
    let evaluated = match pipeline::evaluate(file) {
        Ok(e) => e,
        Err(d) => return fail(Failure::Invalid(d)),
    };
    let version = options
        .typst
        .as_ref()
        .map_or("none", |t| t.version.as_str());
    let templates = options.templates.as_deref();
    match plateau::batch::decide(&evaluated.study, &dir, templates, version, force) {
        plateau::batch::Decision::Write => {}
        plateau::batch::Decision::Current => {
            return Outcome {
                failure: None,
                skipped: true,
                dir,
            };
        }
        plateau::batch::Decision::Edited(files) => {
            return fail(Failure::Other(format!(
                "the report in {} holds edited files ({})\nhint: copy your edits elsewhere, then rebuild with --force",
                dir.display(),
                files.join(", ")
            )));
        }
    }
    match report::write(&evaluated, options) {
        Ok(written) => Outcome {
            failure: None,
            skipped: false,
            dir: written,
        },
        Err(e) => fail(Failure::from(e)),
    }
}
