//! `plateau analyze`: the effects and verdicts of a study, as tables or JSON.

use super::Failure;
use plateau::pipeline;
use std::path::PathBuf;

#[derive(clap::Args)]
pub struct Args {
    /// The study file.
    study: PathBuf,
    /// Print the analysis document as JSON instead of tables.
    #[arg(long)]
    json: bool,
}

pub fn run(args: Args) -> Result<(), Failure> {
    let Args { study, json } = args;
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
