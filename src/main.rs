//! The `plateau` command line: parse arguments, call the library, print, map errors to exit codes.

use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Parser, Subcommand};

use plateau::pipeline;
use plateau::report::{self, typst};
use plateau::study::Diagnostics;

const EXIT_CODES: &str = "Exit codes:
  0  success
  1  invalid study file, results or template; or a file could not be written
  2  command-line usage error
  3  the typesetter (typst) is missing, has the wrong version, or failed";

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
        /// The study file.
        study: PathBuf,
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
    /// Write the report folder: PDF, Typst source, tables (CSV) and analysis.json.
    #[command(after_help = EXIT_CODES)]
    Report {
        /// The study file.
        study: PathBuf,
        /// Report folder [default: <study stem>-report beside the study file].
        #[arg(short, long, value_name = "DIR")]
        output: Option<PathBuf>,
        /// Folder of templates that override the built-in ones file by file.
        #[arg(long, value_name = "DIR")]
        templates: Option<PathBuf>,
        /// The typst binary [default: $PLATEAU_TYPST, then `typst` on the PATH].
        #[arg(long, value_name = "PATH")]
        typst: Option<PathBuf>,
        /// Write everything except the PDF (no typesetter needed).
        #[arg(long)]
        no_pdf: bool,
    },
    /// Print the JSON Schema of the study file.
    Schema,
}

enum Failure {
    Invalid(Diagnostics),
    Other(String),
    Typesetter(String),
}

impl From<Diagnostics> for Failure {
    fn from(d: Diagnostics) -> Self {
        Failure::Invalid(d)
    }
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    match run(cli.command) {
        Ok(()) => ExitCode::SUCCESS,
        Err(Failure::Invalid(d)) => {
            for diagnostic in &d.0 {
                eprintln!("error: {diagnostic}");
            }
            ExitCode::from(1)
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

fn run(command: Command) -> Result<(), Failure> {
    match command {
        Command::Check { study } => {
            let evaluated = pipeline::evaluate(&study)?;
            let s = &evaluated.study;
            println!("ok  {}: study {} ({})", study.display(), s.info.id, s.info.title);
            println!(
                "ok  design: {} runs ({} two-level, {} nominal), {} estimable contrasts",
                evaluated.design.runs.len(),
                evaluated.design.runs.iter().filter(|r| !r.nominal).count(),
                evaluated.design.nominal_count(),
                evaluated.design.contrasts.len()
            );
            println!(
                "ok  results: {} runs × {} responses",
                evaluated.data.values.len(),
                s.responses.len()
            );
            Ok(())
        }
        Command::Analyze { study, json } => {
            let evaluated = pipeline::evaluate(&study)?;
            if json {
                let text = serde_json::to_string_pretty(&evaluated.analysis)
                    .map_err(|e| Failure::Other(e.to_string()))?;
                println!("{text}");
            } else {
                print!("{}", plateau::analysis::text::tables(&evaluated));
            }
            Ok(())
        }
        Command::Report {
            study,
            output,
            templates,
            typst: typst_path,
            no_pdf,
        } => {
            let evaluated = pipeline::evaluate(&study)?;
            let typst = if no_pdf {
                None
            } else {
                Some(
                    typst::find(typst_path.as_deref())
                        .map_err(|e| Failure::Typesetter(e.to_string()))?,
                )
            };
            let options = report::Options {
                out_dir: output,
                templates,
                typst,
            };
            match report::write(&evaluated, &options) {
                Ok(dir) => {
                    println!("ok  report written to {}", dir.display());
                    Ok(())
                }
                Err(report::ReportError::Typst(e)) => Err(Failure::Typesetter(e.to_string())),
                Err(e) => Err(Failure::Other(e.to_string())),
            }
        }
        Command::Schema => {
            print!("{}", plateau::study::schema::SCHEMA_TEXT);
            Ok(())
        }
    }
}
