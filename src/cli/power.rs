//! `plateau power`: before the study, the power of the planned design and of its alternatives.

use super::Failure;
use plateau::pipeline;
use std::path::PathBuf;

#[derive(clap::Args)]
pub struct Args {
    /// The study file (results are not needed).
    study: PathBuf,
    /// Print the answer as JSON.
    #[arg(long)]
    json: bool,
    /// The power asked of the design.
    #[arg(long, value_name = "P", default_value_t = plateau::analysis::power::DEFAULT_TARGET)]
    target: f64,
}

pub fn run(args: Args) -> Result<(), Failure> {
    let Args {
        study,
        json,
        target,
    } = args;
    let (s, design) = pipeline::plan(&study)?;
    let p = plateau::analysis::power::analyse(&s, &design, target)
        .map_err(|e| Failure::Usage(format!("--target: {e}")))?;
    if json {
        let text = serde_json::to_string_pretty(&p).map_err(|e| Failure::Other(e.to_string()))?;
        println!("{text}");
    } else {
        print!("{}", plateau::report::power::text(&p));
    }
    Ok(())
}
