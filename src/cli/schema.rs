//! `plateau schema`: the JSON Schema of the study file or of analysis.json.

use super::Failure;
use std::path::PathBuf;

#[derive(clap::Args)]
pub struct Args {
    /// Write the schema to FILE (an existing file is left as it is; it must already hold
    /// this schema).
    #[arg(short, long, value_name = "FILE")]
    output: Option<PathBuf>,
    /// The schema of `plateau analyze --json` (analysis.json) instead of the study file's.
    #[arg(long)]
    analysis: bool,
}

pub fn run(args: Args) -> Result<(), Failure> {
    let Args { output, analysis } = args;
    let text = if analysis {
        plateau::study::schema::ANALYSIS_SCHEMA_TEXT
    } else {
        plateau::study::schema::SCHEMA_TEXT
    };
    match output {
        None => print!("{text}"),
        Some(path) => {
            let how = plateau::starter::write_schema(&path, text).map_err(Failure::Other)?;
            println!("ok  {} {}", path.display(), how);
        }
    }
    Ok(())
}
