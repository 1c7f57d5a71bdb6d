//! The `plateau` command line: parse arguments, call the library, print, map errors to exit codes.

use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Parser, Subcommand};

use plateau::design::sheet;
use plateau::pipeline;
use plateau::report::{self, typst};
use plateau::study::{DesignKind, Diagnostics};

const EXIT_CODES: &str = "Exit codes:
  0  success
  1  invalid study file, results or template; or a file could not be written
  2  command-line usage error
  3  the typesetter (typst) is missing, has the wrong version, failed, took longer than
     its time limit, or wrote no valid PDF";

/// Robustness studies of analytical methods: from one YAML study file to the typeset
/// robustness chapter of a validation report.
#[derive(Parser)]
#[command(name = "plateau", version, about, after_help = EXIT_CODES)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Check a study file (schema, fields, design, results) without analysing it.
    #[command(after_help = EXIT_CODES)]
    Check {
        /// Study files, or folders searched recursively for study files; `-` reads one study
        /// from standard input.
        #[arg(required = true)]
        studies: Vec<PathBuf>,
        /// Print one JSON object per study (ok, errors, warnings) instead of lines.
        #[arg(long)]
        json: bool,
    },
    /// Print the effects and verdicts of a study.
    #[command(after_help = EXIT_CODES)]
    Analyze {
        /// The study file.
        study: PathBuf,
        /// Print the analysis document as JSON instead of tables.
        #[arg(long)]
        json: bool,
    },
    /// Before the study: power to detect each declared limit and the minimum detectable effect
    /// of the planned design and of the other designs for the same factors.
    #[command(after_help = EXIT_CODES)]
    Power {
        /// The study file (results are not needed).
        study: PathBuf,
        /// Print the answer as JSON.
        #[arg(long)]
        json: bool,
        /// The power asked of the design.
        #[arg(long, value_name = "P", default_value_t = plateau::analysis::power::DEFAULT_TARGET)]
        target: f64,
    },
    /// Before the study: write the protocol folder for review and approval (protocol.pdf, its
    /// Typst source, the run sheet as CSV) and protocol.lock.json, the lock of the planning
    /// content that the report later compares the study with.
    #[command(after_help = EXIT_CODES)]
    Protocol {
        /// The study file (results are not needed).
        study: PathBuf,
        /// Protocol folder [default: <study stem>-protocol beside the study file].
        #[arg(short, long, value_name = "DIR")]
        output: Option<PathBuf>,
        /// The typst binary [default: $PLATEAU_TYPST, then `typst` on the PATH].
        #[arg(long, value_name = "PATH")]
        typst: Option<PathBuf>,
        /// Time limit of each typst call, in seconds [default: $PLATEAU_TYPST_TIMEOUT, then 300].
        #[arg(long, value_name = "SECONDS")]
        typst_timeout: Option<u64>,
    },
    /// After the study: write a study file with the fold-over runs that separate its
    /// unresolved alias chains (both blocks in one file, analysed together).
    #[command(name = "follow-up", after_help = EXIT_CODES)]
    FollowUp {
        /// The analysed study file.
        study: PathBuf,
        /// The new study file (never overwritten).
        #[arg(short, long, value_name = "FILE")]
        output: PathBuf,
        /// Free this term (a factor id, or ids joined by × or *) by folding on its first
        /// factor [default: the fold-over the analysis proposes].
        #[arg(long, value_name = "TERM")]
        separate: Option<String>,
    },
    /// Write the report folder: PDF, Typst source, tables (CSV) and analysis.json.
    #[command(after_help = EXIT_CODES)]
    Report {
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
        /// The typst binary [default: $PLATEAU_TYPST, then `typst` on the PATH].
        #[arg(long, value_name = "PATH")]
        typst: Option<PathBuf>,
        /// Time limit of each typst call, in seconds [default: $PLATEAU_TYPST_TIMEOUT, then 300].
        #[arg(long, value_name = "SECONDS")]
        typst_timeout: Option<u64>,
        /// Write everything except the PDF (no typesetter needed).
        #[arg(long)]
        no_pdf: bool,
        /// Print one JSON object per study (written, current or failed, with the error).
        #[arg(long)]
        json: bool,
    },
    /// Print the run sheet (CSV, in run order, one empty column per response).
    #[command(after_help = EXIT_CODES)]
    Design {
        /// The study file.
        study: PathBuf,
        /// Write to FILE instead of standard output (never overwrites without --force).
        #[arg(short, long, value_name = "FILE")]
        output: Option<PathBuf>,
        /// Coded levels (−1, 0, +1) instead of real units.
        #[arg(long)]
        coded: bool,
        /// Typeset a printable run sheet as PDF (needs -o FILE).
        #[arg(long, requires = "output")]
        pdf: bool,
        /// Print the run sheet as JSON (runs in order with their settings) instead of CSV.
        #[arg(long, conflicts_with_all = ["pdf", "output"])]
        json: bool,
        /// Replace an existing output file.
        #[arg(long)]
        force: bool,
        /// The typst binary (with --pdf) [default: $PLATEAU_TYPST, then `typst` on the PATH].
        #[arg(long, value_name = "PATH")]
        typst: Option<PathBuf>,
        /// Time limit of each typst call, in seconds [default: $PLATEAU_TYPST_TIMEOUT, then 300].
        #[arg(long, value_name = "SECONDS")]
        typst_timeout: Option<u64>,
    },
    /// Write a commented starter study file that `plateau check` accepts as it is.
    #[command(after_help = EXIT_CODES)]
    New {
        /// The file to create (never overwritten).
        file: PathBuf,
        /// Design kind.
        #[arg(long, value_enum, default_value = "full-factorial")]
        kind: KindArg,
        /// Number of factors [default: 3, 5 or 7 by kind].
        #[arg(long)]
        factors: Option<usize>,
    },
    /// List each study's report as current, stale (and why) or missing; exit 1 unless all
    /// are current.
    #[command(after_help = EXIT_CODES)]
    Status {
        /// Study files, or folders searched recursively [default: the current folder].
        paths: Vec<PathBuf>,
        /// The template folder the reports are made with.
        #[arg(long, value_name = "DIR")]
        templates: Option<PathBuf>,
        /// The typst binary [default: $PLATEAU_TYPST, then `typst` on the PATH].
        #[arg(long, value_name = "PATH")]
        typst: Option<PathBuf>,
        /// Time limit of each typst call, in seconds [default: $PLATEAU_TYPST_TIMEOUT, then 300].
        #[arg(long, value_name = "SECONDS")]
        typst_timeout: Option<u64>,
        /// Print one JSON object per study, report folder or empty path.
        #[arg(long)]
        json: bool,
    },
    /// Run the reference cases on this installation and write a calculation verification
    /// record (installation and operational qualification evidence).
    #[command(after_help = EXIT_CODES)]
    Verify {
        /// Record folder [default: plateau-verification].
        #[arg(short, long, value_name = "DIR")]
        output: Option<PathBuf>,
        /// Print the record as JSON instead of writing the folder (no typesetter needed).
        #[arg(long)]
        json: bool,
        /// Date of the record, YYYY-MM-DD [default: today, from the system clock].
        #[arg(long, value_name = "YYYY-MM-DD")]
        date: Option<String>,
        /// The typst binary [default: $PLATEAU_TYPST, then `typst` on the PATH].
        #[arg(long, value_name = "PATH")]
        typst: Option<PathBuf>,
        /// Time limit of each typst call, in seconds [default: $PLATEAU_TYPST_TIMEOUT, then 300].
        #[arg(long, value_name = "SECONDS")]
        typst_timeout: Option<u64>,
    },
    /// Show what changed between two versions of a study: the inputs (factors, design,
    /// criteria, results per run) and the outputs (effects, verdicts, conclusion sentences).
    #[command(after_help = EXIT_CODES)]
    Diff {
        /// The old study file (with --rev: the study file, read as committed at REV).
        old: PathBuf,
        /// The new study file [default with --rev: OLD as it is in the working tree].
        new: Option<PathBuf>,
        /// Read OLD as committed at this git revision (a commit, branch, tag or HEAD~1).
        #[arg(long, value_name = "REV")]
        rev: Option<String>,
        /// Print the changes as JSON.
        #[arg(long, conflicts_with = "pdf")]
        json: bool,
        /// Typeset a one-page change summary for the reviewer as PDF (needs -o FILE).
        #[arg(long, requires = "output")]
        pdf: bool,
        /// The PDF file to write (with --pdf; never overwrites without --force).
        #[arg(short, long, value_name = "FILE", requires = "pdf")]
        output: Option<PathBuf>,
        /// Replace an existing PDF.
        #[arg(long)]
        force: bool,
        /// Why the study was changed: printed with the author (the new version's analyst) and
        /// recorded in the change summary, for the re-approval.
        #[arg(long, value_name = "TEXT")]
        reason: Option<String>,
        /// The typst binary (with --pdf) [default: $PLATEAU_TYPST, then `typst` on the PATH].
        #[arg(long, value_name = "PATH")]
        typst: Option<PathBuf>,
        /// Time limit of each typst call, in seconds [default: $PLATEAU_TYPST_TIMEOUT, then 300].
        #[arg(long, value_name = "SECONDS")]
        typst_timeout: Option<u64>,
    },
    /// Work with the report templates.
    Templates {
        #[command(subcommand)]
        action: TemplatesAction,
    },
    /// Print the JSON Schema of the study file (or of analysis.json), or write it to a file.
    Schema {
        /// Write the schema to FILE (an existing file is left as it is; it must already hold
        /// this schema).
        #[arg(short, long, value_name = "FILE")]
        output: Option<PathBuf>,
        /// The schema of `plateau analyze --json` (analysis.json) instead of the study file's.
        #[arg(long)]
        analysis: bool,
    },
    /// Print a shell completion script (bash, zsh, fish, elvish or powershell).
    Completions {
        /// The shell.
        shell: clap_complete::Shell,
    },
    /// Print the manual page (roff), e.g. `plateau manual > plateau.1`.
    Manual,
}

#[derive(Subcommand)]
enum TemplatesAction {
    /// Write the built-in templates and a README of their variables into DIR (never
    /// overwrites), to be changed and used with `plateau report --templates DIR`.
    Export {
        /// The folder to write to (created if needed).
        dir: PathBuf,
    },
}

#[derive(Clone, Copy, clap::ValueEnum)]
enum KindArg {
    FullFactorial,
    FractionalFactorial,
    PlackettBurman,
    Youden,
    Explicit,
}

impl From<KindArg> for DesignKind {
    fn from(k: KindArg) -> Self {
        match k {
            KindArg::FullFactorial => DesignKind::FullFactorial,
            KindArg::FractionalFactorial => DesignKind::FractionalFactorial,
            KindArg::PlackettBurman => DesignKind::PlackettBurman,
            KindArg::Youden => DesignKind::Youden,
            KindArg::Explicit => DesignKind::Explicit,
        }
    }
}

enum Failure {
    Invalid(Diagnostics),
    Usage(String),
    /// Already reported; only the exit code is left.
    Silent(u8),
    Other(String),
    Typesetter(String),
}

impl From<Diagnostics> for Failure {
    fn from(d: Diagnostics) -> Self {
        Failure::Invalid(d)
    }
}

fn main() -> ExitCode {
    // Output into a closed pipe (`plateau design s.yaml | head`) ends the process the usual
    // way, by SIGPIPE, instead of a panic in println! (Rust ignores SIGPIPE by default).
    #[cfg(unix)]
    // SAFETY: restoring the default action of one signal before any thread is started.
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
    let cli = Cli::parse();
    let result = run(cli.command);
    // An interrupt removed the temporary folders under the running command; the clean-up
    // thread ends the process by that signal in a moment, so no error is printed for it.
    while plateau::output::cleanup::is_stopping() {
        std::thread::sleep(std::time::Duration::from_millis(50));
    }
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(Failure::Invalid(d)) => {
            for diagnostic in &d.0 {
                eprintln!("error: {diagnostic}");
            }
            ExitCode::from(1)
        }
        Err(Failure::Silent(code)) => ExitCode::from(code),
        Err(Failure::Usage(message)) => {
            eprintln!("error: {message}");
            ExitCode::from(2)
        }
        Err(Failure::Other(message)) => {
            eprintln!("error: {message}");
            ExitCode::from(1)
        }
        Err(Failure::Typesetter(message)) => {
            eprintln!("error: {message}");
            ExitCode::from(3)
        }
    }
}

/// Finds typst with the time limit of `--typst-timeout` / `PLATEAU_TYPST_TIMEOUT`.
fn find_typst(
    path: Option<&std::path::Path>,
    timeout: Option<u64>,
) -> Result<typst::Typst, Failure> {
    let limit = typst::timeout(timeout).map_err(Failure::Usage)?;
    typst::find_with(path, limit).map_err(|e| Failure::Typesetter(e.to_string()))
}

fn run(command: Command) -> Result<(), Failure> {
    match command {
        Command::Check { studies, json } => {
            let files = plateau::batch::discover(&studies)?;
            if files.is_empty() {
                return Err(Failure::Usage(
                    "no study files found (a study file is a .yaml file with a top-level `schema:` key)".into(),
                ));
            }
            let outcomes: Vec<CheckOutcome> = files.iter().map(|f| check_one(f)).collect();
            if json {
                let text = serde_json::to_string_pretty(&outcomes)
                    .map_err(|e| Failure::Other(e.to_string()))?;
                println!("{text}");
            } else {
                for o in &outcomes {
                    for w in &o.warnings {
                        eprintln!("warning: {w}");
                    }
                    for d in &o.errors {
                        eprintln!("error: {d}");
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
        Command::Protocol {
            study,
            output,
            typst: typst_path,
            typst_timeout,
        } => {
            let mut s = plateau::study::load(&study)?;
            // The lock the study names is checked when it exists (the first run writes it).
            if plateau::protocol::lock_path(&s).is_some_and(|p| p.exists()) {
                s.lock = plateau::protocol::read_lock(&plateau::files::Disk, &s)?;
            }
            let design = plateau::design::plan(&s)?;
            let dir = output.unwrap_or_else(|| report::protocol::default_dir(&study));
            let typst = find_typst(typst_path.as_deref(), typst_timeout)?;
            let lock = report::protocol::write(&s, &design, &typst, &dir).map_err(|e| match e {
                report::ReportError::Typst(e) => Failure::Typesetter(e.to_string()),
                other => Failure::Other(other.to_string()),
            })?;
            println!(
                "ok  protocol written to {} (planning content SHA-256 {})",
                dir.display(),
                lock.planning_sha256
            );
            if let Some(old) = s
                .lock
                .as_ref()
                .filter(|l| l.planning_sha256 != lock.planning_sha256)
            {
                println!(
                    "note: the plan differs from the locked protocol {} in {} field(s): this is a revised protocol, printed without the old number and approval date",
                    old.file,
                    plateau::protocol::deviations::compare(&old.planning, &s.planning).len()
                );
            }
            if s.protocol.is_none() {
                let base = study.parent().unwrap_or(std::path::Path::new(""));
                let lock_file = dir.join(plateau::protocol::LOCK_FILE);
                let shown = lock_file.strip_prefix(base).unwrap_or(&lock_file);
                println!(
                    "hint: once the protocol is approved, name its lock in the study file:\n  protocol: {{ lock: {}, number: ..., approved: YYYY-MM-DD }}",
                    shown.display()
                );
            }
            Ok(())
        }
        Command::Design {
            study,
            output,
            coded,
            pdf,
            json,
            force,
            typst: typst_path,
            typst_timeout,
        } => {
            let (s, design) = pipeline::plan(&study)?;
            let levels = if coded {
                sheet::Levels::Coded
            } else {
                sheet::Levels::Real
            };
            let kind = if pdf {
                plateau::output::Kind::Pdf
            } else {
                plateau::output::Kind::Csv(sheet::FIRST_COLUMN)
            };
            if let Some(out) = &output {
                plateau::output::check_file(out, kind, force)
                    .map_err(|e| Failure::Other(e.to_string()))?;
            }
            if pdf {
                let out = output
                    .as_deref()
                    .unwrap_or(std::path::Path::new("runsheet.pdf"));
                let typst = find_typst(typst_path.as_deref(), typst_timeout)?;
                report::runsheet::write_pdf(&s, &design, levels, &typst, out, force).map_err(
                    |e| match e {
                        report::ReportError::Typst(e) => Failure::Typesetter(e.to_string()),
                        other => Failure::Other(other.to_string()),
                    },
                )?;
                println!("ok  run sheet written to {}", out.display());
                return Ok(());
            }
            if json {
                let text = serde_json::to_string_pretty(&sheet::json(&s, &design, levels))
                    .map_err(|e| Failure::Other(e.to_string()))?;
                println!("{text}");
                return Ok(());
            }
            let text = sheet::csv(&s, &design, levels);
            match output {
                Some(out) => {
                    plateau::output::write_bytes(&out, kind, force, text.as_bytes())
                        .map_err(|e| Failure::Other(e.to_string()))?;
                    eprintln!("ok  run sheet written to {}", out.display());
                }
                None => print!("{text}"),
            }
            Ok(())
        }
        Command::New {
            file,
            kind,
            factors,
        } => {
            let kind = DesignKind::from(kind);
            let n = factors.unwrap_or_else(|| plateau::starter::default_factors(kind));
            let max = plateau::starter::max_factors(kind);
            if n < 2 || n > max {
                return Err(Failure::Usage(format!(
                    "--factors {n} is not available for this kind; expected 2 to {max}"
                )));
            }
            let text = plateau::starter::text(kind, n);
            let mut f = std::fs::OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(&file)
                .map_err(|e| {
                    if e.kind() == std::io::ErrorKind::AlreadyExists {
                        Failure::Other(format!(
                            "{} already exists; plateau new never overwrites a file",
                            file.display()
                        ))
                    } else {
                        Failure::Other(format!("failed to create {} ({e})", file.display()))
                    }
                })?;
            use std::io::Write;
            f.write_all(text.as_bytes())
                .map_err(|e| Failure::Other(format!("failed to write {} ({e})", file.display())))?;
            println!(
                "ok  wrote {}; check it with `plateau check {}`",
                file.display(),
                file.display()
            );
            // The modeline names the schema beside the study; write it so that it resolves.
            let schema = plateau::starter::schema_beside(&file);
            match plateau::starter::write_schema(&schema, plateau::study::schema::SCHEMA_TEXT) {
                Ok(how) => println!(
                    "ok  {} {} (editors validate against it)",
                    schema.display(),
                    how
                ),
                Err(e) => eprintln!("warning: {e}"),
            }
            Ok(())
        }
        Command::Power {
            study,
            json,
            target,
        } => {
            let (s, design) = pipeline::plan(&study)?;
            let p = plateau::analysis::power::analyse(&s, &design, target)
                .map_err(|e| Failure::Usage(format!("--target: {e}")))?;
            if json {
                let text =
                    serde_json::to_string_pretty(&p).map_err(|e| Failure::Other(e.to_string()))?;
                println!("{text}");
            } else {
                print!("{}", plateau::report::power::text(&p));
            }
            Ok(())
        }
        Command::FollowUp {
            study,
            output,
            separate,
        } => {
            let evaluated = pipeline::evaluate(&study)?;
            let fold = plateau::follow_up::choose(&evaluated, separate.as_deref())
                .map_err(|e| Failure::Other(e.to_string()))?;
            // The first study named relative to the new file's folder when both share one.
            let first = match (study.parent(), output.parent()) {
                (Some(a), Some(b)) if a == b => {
                    plateau::follow_up::first_file_name(&evaluated.study)
                }
                _ => study.display().to_string(),
            };
            let text = plateau::follow_up::study_text(&evaluated, &fold, &first)
                .map_err(|e| Failure::Other(e.to_string()))?;
            write_new_study(&output, &text)?;
            println!(
                "wrote {}: fill in block 2's results, then `plateau report {}`",
                output.display(),
                output.display()
            );
            Ok(())
        }
        Command::Completions { shell } => {
            let mut command = <Cli as clap::CommandFactory>::command();
            clap_complete::generate(shell, &mut command, "plateau", &mut std::io::stdout());
            Ok(())
        }
        Command::Manual => {
            let command = <Cli as clap::CommandFactory>::command();
            let mut out = Vec::new();
            clap_mangen::Man::new(command)
                .render(&mut out)
                .map_err(|e| Failure::Other(format!("failed to write the manual ({e})")))?;
            std::io::Write::write_all(&mut std::io::stdout(), &out)
                .map_err(|e| Failure::Other(format!("failed to write the manual ({e})")))?;
            Ok(())
        }
        Command::Analyze { study, json } => {
            let evaluated = pipeline::evaluate(&study)?;
            if json {
                let text = serde_json::to_string_pretty(&evaluated.analysis)
                    .map_err(|e| Failure::Other(e.to_string()))?;
                println!("{text}");
            } else {
                print!("{}", plateau::report::terminal::tables(&evaluated));
            }
            Ok(())
        }
        Command::Report {
            studies,
            output,
            force,
            jobs,
            quiet,
            templates,
            typst: typst_path,
            typst_timeout,
            no_pdf,
            json,
        } => {
            let mut files = plateau::batch::discover(&studies)?;
            if output.is_none() && files.iter().any(|f| f == std::path::Path::new("-")) {
                return Err(Failure::Usage(
                    "a study read from standard input (`-`) needs its report folder named with -o DIR".into(),
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
                    "no study files found (a study file is a .yaml file with a top-level `schema:` key)".into(),
                ));
            }
            if output.is_some() && files.len() > 1 {
                return Err(Failure::Usage(
                    "-o/--output names the folder of a single study; leave it out for several"
                        .into(),
                ));
            }
            let typst = if no_pdf {
                None
            } else {
                Some(find_typst(typst_path.as_deref(), typst_timeout)?)
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
                            "error": o.failure.as_ref().map(first_line),
                        })
                    })
                    .collect();
                let text = serde_json::to_string_pretty(&entries)
                    .map_err(|e| Failure::Other(e.to_string()))?;
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
        Command::Status {
            paths,
            templates,
            typst: typst_path,
            typst_timeout,
            json,
        } => {
            let paths = if paths.is_empty() {
                vec![PathBuf::from(".")]
            } else {
                paths
            };
            let files = plateau::batch::discover(&paths)?;
            let orphans = plateau::batch::orphans(&paths);
            // A path that holds no study (and no report) is a mistake in a CI job, not a pass.
            let empty: Vec<&PathBuf> = paths
                .iter()
                .filter(|p| p.is_dir())
                .filter(|p| !files.iter().any(|f| f.starts_with(p)))
                .filter(|p| !orphans.iter().any(|o| o.dir.starts_with(p)))
                .collect();
            let typst_version = find_typst(typst_path.as_deref(), typst_timeout)
                .ok()
                .map(|t| t.version);
            let mut entries: Vec<StatusEntry> = Vec::new();
            for file in &files {
                let dir = report::default_dir(file);
                // The protocol lock is checked as `report` would check it.
                let loaded = plateau::study::load(file).and_then(|mut s| {
                    s.lock = plateau::protocol::read_lock(&plateau::files::Disk, &s)?;
                    Ok(s)
                });
                let entry = match loaded {
                    Err(d) => StatusEntry::new(
                        file,
                        &dir,
                        "invalid",
                        vec![d.0.first().map(ToString::to_string).unwrap_or_default()],
                    ),
                    Ok(study) => {
                        // A report made with --no-pdf records typst `none`: it is current when
                        // its inputs are, whatever typst is installed now.
                        let no_pdf =
                            plateau::batch::recorded(&dir).is_some_and(|r| r.typst == "none");
                        let version = if no_pdf {
                            Some("none")
                        } else {
                            typst_version.as_deref()
                        };
                        match plateau::batch::status(&study, &dir, templates.as_deref(), version) {
                            plateau::batch::Status::Current => {
                                StatusEntry::new(file, &dir, "current", Vec::new())
                            }
                            plateau::batch::Status::Missing => StatusEntry::new(
                                file,
                                &dir,
                                "missing",
                                vec![format!("no report in {}", dir.display())],
                            ),
                            plateau::batch::Status::Stale(why) => {
                                StatusEntry::new(file, &dir, "stale", why)
                            }
                        }
                    }
                };
                entries.push(entry);
            }
            for o in &orphans {
                entries.push(StatusEntry::new(
                    &o.study,
                    &o.dir,
                    "orphaned",
                    vec![o.why.clone()],
                ));
            }
            for p in &empty {
                entries.push(StatusEntry::new(p, p, "no-study", vec![
                    "no study file (a .yaml file with a top-level `schema:` key) under this folder".into(),
                ]));
            }
            if json {
                let text = serde_json::to_string_pretty(&entries)
                    .map_err(|e| Failure::Other(e.to_string()))?;
                println!("{text}");
            } else {
                for e in &entries {
                    println!("{}", e.line());
                }
            }
            if entries.iter().all(|e| e.state == "current") && !entries.is_empty() {
                Ok(())
            } else {
                Err(Failure::Silent(1))
            }
        }
        Command::Verify {
            output,
            json,
            date,
            typst: typst_path,
            typst_timeout,
        } => {
            if let Some(d) = &date {
                plateau::verify::check_date(d).map_err(Failure::Usage)?;
            }
            let typst = if json {
                find_typst(typst_path.as_deref(), typst_timeout).ok()
            } else {
                Some(find_typst(typst_path.as_deref(), typst_timeout)?)
            };
            let dir = output.unwrap_or_else(plateau::verify::default_dir);
            match plateau::verify::command(&dir, json, date, typst) {
                Ok(text) => {
                    print!("{text}");
                    Ok(())
                }
                Err(e @ plateau::verify::VerifyError::Typst(_)) => {
                    Err(Failure::Typesetter(e.to_string()))
                }
                Err(e) => Err(Failure::Other(e.to_string())),
            }
        }
        Command::Diff {
            old,
            new,
            rev,
            json,
            pdf,
            output,
            force,
            reason,
            typst: typst_path,
            typst_timeout,
        } => {
            if reason.as_deref().is_some_and(|r| r.trim().is_empty()) {
                return Err(Failure::Usage(
                    "--reason needs a text: why the study was changed".into(),
                ));
            }
            let new_path = match (&new, &rev) {
                (Some(n), _) => n.clone(),
                (None, Some(_)) => old.clone(),
                (None, None) => {
                    return Err(Failure::Usage(
                        "name two study files (OLD NEW), or one with --rev REV".into(),
                    ));
                }
            };
            if let Some(out) = &output {
                plateau::output::check_file(out, plateau::output::Kind::Pdf, force)
                    .map_err(|e| Failure::Other(e.to_string()))?;
            }
            let typesetter = if pdf {
                Some(find_typst(typst_path.as_deref(), typst_timeout)?)
            } else {
                None
            };
            let (old_evaluated, old_label, old_file) = match &rev {
                Some(r) => {
                    let revision = plateau::diff::load_revision(&old, r)
                        .map_err(|e| Failure::Other(e.to_string()))?;
                    let evaluated = plateau::diff::evaluate_revision(&revision)?;
                    (evaluated, revision.label(), revision.file())
                }
                None => (
                    pipeline::evaluate(&old)?,
                    old.display().to_string(),
                    old.display().to_string(),
                ),
            };
            let new_evaluated = pipeline::evaluate(&new_path)?;
            let new_label = if rev.is_some() && new.is_none() {
                "working copy".to_string()
            } else {
                new_path.display().to_string()
            };
            let mut d = plateau::diff::compare(&old_evaluated, &new_evaluated)
                .with_labels(old_label, new_label)
                .with_files(old_file, new_path.display().to_string());
            if let Some(text) = &reason {
                d = d.with_reason(text.trim(), new_evaluated.study.info.analyst.clone());
            }
            if let Some(t) = typesetter {
                let out = output
                    .as_deref()
                    .unwrap_or(std::path::Path::new("diff.pdf"));
                plateau::diff::write_pdf(&d, &t, out, force).map_err(|e| match e {
                    report::ReportError::Typst(e) => Failure::Typesetter(e.to_string()),
                    other => Failure::Other(other.to_string()),
                })?;
                println!("ok  change summary written to {}", out.display());
                if let Some(r) = &d.reason {
                    println!(
                        "reason for the change: {}\nchanged by: {}",
                        r.text, r.author
                    );
                }
            } else if json {
                let text =
                    serde_json::to_string_pretty(&d).map_err(|e| Failure::Other(e.to_string()))?;
                println!("{text}");
            } else {
                print!("{}", plateau::diff::text(&d));
            }
            Ok(())
        }
        Command::Templates {
            action: TemplatesAction::Export { dir },
        } => {
            let written =
                report::export_templates(&dir).map_err(|e| Failure::Other(e.to_string()))?;
            for path in written {
                println!("ok  wrote {}", path.display());
            }
            Ok(())
        }
        Command::Schema { output, analysis } => {
            let text = if analysis {
                plateau::study::schema::ANALYSIS_SCHEMA_TEXT
            } else {
                plateau::study::schema::SCHEMA_TEXT
            };
            match output {
                None => print!("{text}"),
                Some(path) => {
                    let how =
                        plateau::starter::write_schema(&path, text).map_err(Failure::Other)?;
                    println!("ok  {} {}", path.display(), how);
                }
            }
            Ok(())
        }
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
    use std::sync::Mutex;
    use std::sync::atomic::{AtomicUsize, Ordering};
    let workers = jobs
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()))
        .clamp(1, 64)
        .min(files.len());
    let next = AtomicUsize::new(0);
    let slots: Mutex<Vec<Option<Outcome>>> = Mutex::new((0..files.len()).map(|_| None).collect());
    let print = Mutex::new(());
    std::thread::scope(|scope| {
        for _ in 0..workers {
            scope.spawn(|| {
                loop {
                    let i = next.fetch_add(1, Ordering::SeqCst);
                    let Some(file) = files.get(i) else { break };
                    let outcome = report_one(file, options, force);
                    if let Ok(_guard) = print.lock() {
                        match (&outcome.failure, outcome.skipped) {
                            (None, true) if !quiet => println!("current  {}", file.display()),
                            (None, false) if !quiet => {
                                println!("ok       {} → {}", file.display(), outcome.dir.display())
                            }
                            (Some(f), _) => {
                                eprintln!("failed   {}: {}", file.display(), first_line(f))
                            }
                            _ => {}
                        }
                    }
                    if let Ok(mut all) = slots.lock()
                        && let Some(slot) = all.get_mut(i)
                    {
                        *slot = Some(outcome);
                    }
                }
            });
        }
    });
    slots
        .into_inner()
        .unwrap_or_default()
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

fn first_line(f: &Failure) -> String {
    match f {
        Failure::Invalid(d) => {
            let more = d.0.len().saturating_sub(1);
            let first = d.0.first().map(ToString::to_string).unwrap_or_default();
            if more > 0 {
                format!("{first} (and {more} more)")
            } else {
                first
            }
        }
        Failure::Usage(m) | Failure::Other(m) | Failure::Typesetter(m) => {
            m.lines().next().unwrap_or_default().to_string()
        }
        Failure::Silent(_) => String::new(),
    }
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
    if !force {
        let version = options
            .typst
            .as_ref()
            .map_or("none", |t| t.version.as_str());
        let now = plateau::batch::status(
            &evaluated.study,
            &dir,
            options.templates.as_deref(),
            Some(version),
        );
        if now == plateau::batch::Status::Current {
            return Outcome {
                failure: None,
                skipped: true,
                dir,
            };
        }
        // A file of the report edited by hand is not what plateau wrote: never replace it
        // silently (delete nothing you did not write).
        if let plateau::batch::Status::Stale(why) = &now {
            let edited: Vec<&String> = why
                .iter()
                .filter(|w| w.ends_with("was changed after plateau wrote it"))
                .collect();
            if !edited.is_empty() {
                return fail(Failure::Other(format!(
                    "the report in {} holds edited files ({})\nhint: copy your edits elsewhere, then rebuild with --force",
                    dir.display(),
                    edited
                        .iter()
                        .map(|w| w.trim_end_matches(" was changed after plateau wrote it"))
                        .collect::<Vec<_>>()
                        .join(", ")
                )));
            }
        }
    }
    match report::write(&evaluated, options) {
        Ok(written) => Outcome {
            failure: None,
            skipped: false,
            dir: written,
        },
        Err(report::ReportError::Typst(e)) => fail(Failure::Typesetter(e.to_string())),
        Err(e) => fail(Failure::Other(e.to_string())),
    }
}

/// Writes a new study file without ever replacing one: staged beside it, checked to plan,
/// then linked into place (which fails if the name exists).
fn write_new_study(output: &std::path::Path, text: &str) -> Result<(), Failure> {
    if output.exists() {
        return Err(Failure::Other(format!(
            "{} already exists\nhint: choose a new file name; plateau never replaces a study file",
            output.display()
        )));
    }
    let dir = output
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(std::path::Path::new("."));
    let staged = dir.join(format!(".plateau-follow-up-{}.yaml", std::process::id()));
    // create_new: a file of that name (however unlikely) is never overwritten.
    std::fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(&staged)
        .and_then(|mut f| std::io::Write::write_all(&mut f, text.as_bytes()))
        .map_err(|e| Failure::Other(format!("failed to write {} ({e})", staged.display())))?;
    let planned = pipeline::plan(&staged);
    let linked = planned
        .as_ref()
        .map_err(|d| {
            Failure::Other(format!(
                "internal error: the follow-up study does not plan:\n{d}"
            ))
        })
        .and_then(|_| {
            std::fs::hard_link(&staged, output)
                .map_err(|e| Failure::Other(format!("failed to write {} ({e})", output.display())))
        });
    let _ = std::fs::remove_file(&staged);
    linked
}

/// One line of `plateau status`.
#[derive(serde::Serialize)]
struct StatusEntry {
    /// The study file (for an orphaned report: the file its record names).
    study: String,
    /// Its report folder.
    report: String,
    /// `current`, `stale`, `missing`, `invalid`, `orphaned` or `no-study`.
    state: &'static str,
    /// Why, when not current.
    reasons: Vec<String>,
}

impl StatusEntry {
    fn new(
        study: &std::path::Path,
        dir: &std::path::Path,
        state: &'static str,
        reasons: Vec<String>,
    ) -> Self {
        StatusEntry {
            study: study.display().to_string(),
            report: dir.display().to_string(),
            state,
            reasons,
        }
    }

    fn line(&self) -> String {
        match self.state {
            "current" => format!("current  {}", self.study),
            "orphaned" => format!(
                "orphaned {}: {} ({})",
                self.report,
                self.reasons.join("; "),
                self.study
            ),
            "no-study" => format!("no-study {}: {}", self.study, self.reasons.join("; ")),
            state => format!("{state:<8} {}: {}", self.study, self.reasons.join("; ")),
        }
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
