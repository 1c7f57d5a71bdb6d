//! `plateau follow-up`: a new study file with the fold-over runs that separate alias chains.

use super::Failure;
use plateau::pipeline;
use std::path::PathBuf;

#[derive(clap::Args)]
pub struct Args {
    /// The analysed study file.
    study: PathBuf,
    /// The new study file (never overwritten).
    #[arg(short, long, value_name = "FILE")]
    output: PathBuf,
    /// Free this term (a factor id, or ids joined by × or *) by folding on its first
    /// factor [default: the fold-over the analysis proposes].
    #[arg(long, value_name = "TERM")]
    separate: Option<String>,
}

pub fn run(args: Args) -> Result<(), Failure> {
    let Args {
        study,
        output,
        separate,
    } = args;
    let evaluated = pipeline::evaluate(&study)?;
    let fold = plateau::follow_up::choose(&evaluated, separate.as_deref())
        .map_err(|e| Failure::Other(e.to_string()))?;
    // The first study named relative to the new file's folder when both share one.
    let first = match (study.parent(), output.parent()) {
        (Some(a), Some(b)) if a == b => plateau::follow_up::first_file_name(&evaluated.study),
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
    // Created exclusively: a file of that name (however unlikely) is never overwritten.
    plateau::output::create_new(&staged, text.as_bytes()).map_err(|e| {
        let cause = match e {
            plateau::output::NewFileError::Exists => "it already exists".to_string(),
            plateau::output::NewFileError::Io(e) => e.to_string(),
        };
        Failure::Other(format!("failed to write {} ({cause})", staged.display()))
    })?;
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
