//! The command line: the arguments of every command and the dispatch to its module. Each
//! command's module turns its arguments into library calls and prints the answer; the library
//! never prints.

mod analyze;
mod check;
mod design;
mod diff;
mod failure;
mod follow_up;
mod new;
mod power;
mod protocol;
mod report;
mod schema;
mod status;
mod templates;
mod verify;

use clap::{Parser, Subcommand};
use plateau::report::typst;

pub use failure::Failure;

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
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Subcommand)]
pub enum Command {
    /// Check a study file (schema, fields, design, results) without analysing it.
    #[command(after_help = EXIT_CODES)]
    Check(check::Args),
    /// Print the effects and verdicts of a study.
    #[command(after_help = EXIT_CODES)]
    Analyze(analyze::Args),
    /// Before the study: power to detect each declared limit and the minimum detectable effect
    /// of the planned design and of the other designs for the same factors.
    #[command(after_help = EXIT_CODES)]
    Power(power::Args),
    /// Before the study: write the protocol folder for review and approval (protocol.pdf, its
    /// Typst source, the run sheet as CSV) and protocol.lock.json, the lock of the planning
    /// content that the report later compares the study with.
    #[command(after_help = EXIT_CODES)]
    Protocol(protocol::Args),
    /// After the study: write a study file with the fold-over runs that separate its
    /// unresolved alias chains (both blocks in one file, analysed together).
    #[command(name = "follow-up", after_help = EXIT_CODES)]
    FollowUp(follow_up::Args),
    /// Write the report folder: PDF, Typst source, tables (CSV) and analysis.json.
    #[command(after_help = EXIT_CODES)]
    Report(report::Args),
    /// Print the run sheet (CSV, in run order, one empty column per response).
    #[command(after_help = EXIT_CODES)]
    Design(design::Args),
    /// Write a commented starter study file that `plateau check` accepts as it is.
    #[command(after_help = EXIT_CODES)]
    New(new::Args),
    /// List each study's report as current, stale (and why) or missing; exit 1 unless all
    /// are current.
    #[command(after_help = EXIT_CODES)]
    Status(status::Args),
    /// Run the reference cases on this installation and write a calculation verification
    /// record (installation and operational qualification evidence).
    #[command(after_help = EXIT_CODES)]
    Verify(verify::Args),
    /// Show what changed between two versions of a study: the inputs (factors, design,
    /// criteria, results per run) and the outputs (effects, verdicts, conclusion sentences).
    #[command(after_help = EXIT_CODES)]
    Diff(diff::Args),
    /// Work with the report templates.
    Templates(templates::Args),
    /// Print the JSON Schema of the study file (or of analysis.json), or write it to a file.
    Schema(schema::Args),
    /// Print a shell completion script (bash, zsh, fish, elvish or powershell).
    Completions {
        /// The shell.
        shell: clap_complete::Shell,
    },
    /// Print the manual page (roff), e.g. `plateau manual > plateau.1`.
    Manual,
}

/// Runs one command.
pub fn run(command: Command) -> Result<(), Failure> {
    match command {
        Command::Check(args) => check::run(args),
        Command::Analyze(args) => analyze::run(args),
        Command::Power(args) => power::run(args),
        Command::Protocol(args) => protocol::run(args),
        Command::FollowUp(args) => follow_up::run(args),
        Command::Report(args) => report::run(args),
        Command::Design(args) => design::run(args),
        Command::New(args) => new::run(args),
        Command::Status(args) => status::run(args),
        Command::Verify(args) => verify::run(args),
        Command::Diff(args) => diff::run(args),
        Command::Templates(args) => templates::run(args),
        Command::Schema(args) => schema::run(args),
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
    }
}

/// Where typst is and how long one call may take: the same two options on every command that
/// typesets.
#[derive(clap::Args)]
pub struct TypstArgs {
    /// The typst binary [default: $PLATEAU_TYPST, then `typst` on the PATH].
    #[arg(long, value_name = "PATH")]
    typst: Option<std::path::PathBuf>,
    /// Time limit of each typst call, in seconds [default: $PLATEAU_TYPST_TIMEOUT, then 300].
    #[arg(long, value_name = "SECONDS")]
    typst_timeout: Option<u64>,
}

impl TypstArgs {
    /// Finds typst (version-checked) with the time limit asked for.
    fn find(&self) -> Result<typst::Typst, Failure> {
        let limit = typst::timeout(self.typst_timeout).map_err(Failure::Usage)?;
        typst::find_with(self.typst.as_deref(), limit)
            .map_err(|e| Failure::Typesetter(e.to_string()))
    }
}
