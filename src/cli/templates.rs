//! `plateau templates export`: the built-in templates, for a lab to change.

use super::Failure;
use plateau::report;
use std::path::PathBuf;

#[derive(clap::Args)]
pub struct Args {
    #[command(subcommand)]
    action: TemplatesAction,
}

pub fn run(args: Args) -> Result<(), Failure> {
    let Args {
        action: TemplatesAction::Export { dir },
    } = args;
    let written = report::export_templates(&dir).map_err(|e| Failure::Other(e.to_string()))?;
    for path in written {
        println!("ok  wrote {}", path.display());
    }
    Ok(())
}

#[derive(clap::Subcommand)]
enum TemplatesAction {
    /// Write the built-in templates and a README of their variables into DIR (never
    /// overwrites), to be changed and used with `plateau report --templates DIR`.
    Export {
        /// The folder to write to (created if needed).
        dir: PathBuf,
    },
}
