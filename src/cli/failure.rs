//! Why a command failed, and the exit code and message that say so.

use std::io::IsTerminal;

use plateau::report::ReportError;
use plateau::study::{Diagnostic, Diagnostics};

/// A failed command. Each kind has its exit code (the `Exit codes` list of `--help`).
pub enum Failure {
    /// The study file, its results or a template is invalid (exit 1).
    Invalid(Diagnostics),
    /// The command line asks for something impossible (exit 2).
    Usage(String),
    /// Already reported; only the exit code is left.
    Silent(u8),
    /// A file could not be read or written, or another refusal (exit 1).
    Other(String),
    /// The typesetter is missing, of the wrong version, failed or timed out (exit 3).
    Typesetter(String),
}

impl Failure {
    /// The process exit code.
    pub fn code(&self) -> u8 {
        match self {
            Failure::Invalid(_) | Failure::Other(_) => 1,
            Failure::Usage(_) => 2,
            Failure::Typesetter(_) => 3,
            Failure::Silent(code) => *code,
        }
    }

    /// Prints the failure on standard error: one `error:` line per problem, and below a
    /// diagnostic the study line it points into, underlined (coloured on a terminal).
    pub fn print(&self) {
        match self {
            Failure::Invalid(d) => d.0.iter().for_each(print_error),
            Failure::Usage(message) | Failure::Other(message) | Failure::Typesetter(message) => {
                eprintln!("error: {message}");
            }
            Failure::Silent(_) => {}
        }
    }

    /// The first line of the message, for one line per study of a batch.
    pub fn first_line(&self) -> String {
        match self {
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
}

impl From<Diagnostics> for Failure {
    fn from(d: Diagnostics) -> Self {
        Failure::Invalid(d)
    }
}

/// A typesetter failure keeps its own exit code; any other report error is a write failure.
impl From<ReportError> for Failure {
    fn from(e: ReportError) -> Self {
        match e {
            ReportError::Typst(e) => Failure::Typesetter(e.to_string()),
            other => Failure::Other(other.to_string()),
        }
    }
}

/// Prints one diagnostic as an `error:` line (the one-line form editors and scripts parse) and,
/// below it, the line of the study file it points into with the field underlined, coloured
/// when standard error is a terminal.
pub fn print_error(diagnostic: &Diagnostic) {
    eprintln!(
        "error: {}",
        diagnostic.render(std::io::stderr().is_terminal())
    );
}
