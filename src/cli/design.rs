//! `plateau design`: the run sheet as CSV, JSON or a typeset PDF.

use super::Failure;
use super::TypstArgs;
use plateau::design::sheet;
use plateau::pipeline;
use plateau::report;
use std::path::PathBuf;

#[derive(clap::Args)]
pub struct Args {
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
    #[command(flatten)]
    typesetter: TypstArgs,
}

pub fn run(args: Args) -> Result<(), Failure> {
    let Args {
        study,
        output,
        coded,
        pdf,
        json,
        force,
        typesetter,
    } = args;
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
        plateau::output::check_file(out, kind, force).map_err(|e| Failure::Other(e.to_string()))?;
    }
    if pdf {
        let out = output
            .as_deref()
            .unwrap_or(std::path::Path::new("runsheet.pdf"));
        let typst = typesetter.find()?;
        report::runsheet::write_pdf(&s, &design, levels, &typst, out, force)
            .map_err(Failure::from)?;
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
