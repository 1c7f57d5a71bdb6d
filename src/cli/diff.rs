//! `plateau diff`: what changed between two versions of a study, inputs and outputs.

use super::Failure;
use super::TypstArgs;
use plateau::pipeline;
use std::path::PathBuf;

#[derive(clap::Args)]
pub struct Args {
    /// The old study file (with --rev: the study file, read as committed at REV).
    old: PathBuf,
    /// The new study file [default with --rev: OLD as it is in the working tree].
    new: Option<PathBuf>,
    /// Read OLD as committed at this git revision (a commit, branch, tag or HEAD~1).
    #[arg(long, value_name = "REV")]
    rev: Option<String>,
    /// Print the changes as JSON.
    #[arg(long, conflicts_with = "pdf")]
    json: bool,
    /// Typeset a one-page change summary for the reviewer as PDF (needs -o FILE).
    #[arg(long, requires = "output")]
    pdf: bool,
    /// The PDF file to write (with --pdf; never overwrites without --force).
    #[arg(short, long, value_name = "FILE", requires = "pdf")]
    output: Option<PathBuf>,
    /// Replace an existing PDF.
    #[arg(long)]
    force: bool,
    /// Why the study was changed: printed with the author (the new version's analyst) and
    /// recorded in the change summary, for the re-approval.
    #[arg(long, value_name = "TEXT")]
    reason: Option<String>,
    #[command(flatten)]
    typesetter: TypstArgs,
}

pub fn run(args: Args) -> Result<(), Failure> {
    let Args {
        old,
        new,
        rev,
        json,
        pdf,
        output,
        force,
        reason,
        typesetter,
    } = args;
    if reason.as_deref().is_some_and(|r| r.trim().is_empty()) {
        return Err(Failure::Usage(
            "--reason needs a text: why the study was changed".into(),
        ));
    }
    let new_path = match (&new, &rev) {
        (Some(n), _) => n.clone(),
        (None, Some(_)) => old.clone(),
        (None, None) => {
            return Err(Failure::Usage(
                "name two study files (OLD NEW), or one with --rev REV".into(),
            ));
        }
    };
    if let Some(out) = &output {
        plateau::output::check_file(out, plateau::output::Kind::Pdf, force)
            .map_err(|e| Failure::Other(e.to_string()))?;
    }
    let typesetter = if pdf { Some(typesetter.find()?) } else { None };
    let (old_evaluated, old_label, old_file) = match &rev {
        Some(r) => {
            let revision =
                plateau::diff::load_revision(&old, r).map_err(|e| Failure::Other(e.to_string()))?;
            let evaluated = plateau::diff::evaluate_revision(&revision)?;
            (evaluated, revision.label(), revision.file())
        }
        None => (
            pipeline::evaluate(&old)?,
            old.display().to_string(),
            old.display().to_string(),
        ),
    };
    let new_evaluated = pipeline::evaluate(&new_path)?;
    let new_label = if rev.is_some() && new.is_none() {
        "working copy".to_string()
    } else {
        new_path.display().to_string()
    };
    let mut d = plateau::diff::compare(&old_evaluated, &new_evaluated)
        .with_labels(old_label, new_label)
        .with_files(old_file, new_path.display().to_string());
    if let Some(text) = &reason {
        d = d.with_reason(text.trim(), new_evaluated.study.info.analyst.clone());
    }
    if let Some(t) = typesetter {
        let out = output
            .as_deref()
            .unwrap_or(std::path::Path::new("diff.pdf"));
        plateau::diff::write_pdf(&d, &t, out, force).map_err(Failure::from)?;
        println!("ok  change summary written to {}", out.display());
        if let Some(r) = &d.reason {
            println!(
                "reason for the change: {}\nchanged by: {}",
                r.text, r.author
            );
        }
    } else if json {
        let text = serde_json::to_string_pretty(&d).map_err(|e| Failure::Other(e.to_string()))?;
        println!("{text}");
    } else {
        print!("{}", plateau::diff::text(&d));
    }
    Ok(())
}
