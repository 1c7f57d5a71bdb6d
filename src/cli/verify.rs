//! `plateau verify`: the calculation verification record of this installation.

use super::Failure;
use super::TypstArgs;
use std::path::PathBuf;

#[derive(clap::Args)]
pub struct Args {
    /// Record folder [default: plateau-verification].
    #[arg(short, long, value_name = "DIR")]
    output: Option<PathBuf>,
    /// Print the record as JSON instead of writing the folder (no typesetter needed).
    #[arg(long)]
    json: bool,
    /// Date of the record, YYYY-MM-DD [default: today, from the system clock].
    #[arg(long, value_name = "YYYY-MM-DD")]
    date: Option<String>,
    #[command(flatten)]
    typesetter: TypstArgs,
}

pub fn run(args: Args) -> Result<(), Failure> {
    let Args {
        output,
        json,
        date,
        typesetter,
    } = args;
    if let Some(d) = &date {
        plateau::verify::check_date(d).map_err(Failure::Usage)?;
    }
    let typst = if json {
        typesetter.find().ok()
    } else {
        Some(typesetter.find()?)
    };
    let dir = output.unwrap_or_else(plateau::verify::default_dir);
    match plateau::verify::command(&dir, json, date, typst) {
        Ok(text) => {
            print!("{text}");
            Ok(())
        }
        Err(e @ plateau::verify::VerifyError::Typst(_)) => Err(Failure::Typesetter(e.to_string())),
        Err(e) => Err(Failure::Other(e.to_string())),
    }
}
