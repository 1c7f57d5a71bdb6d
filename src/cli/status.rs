//! `plateau status`: each report current, stale, missing, invalid or orphaned (a CI gate).

use super::Failure;
use super::TypstArgs;
use plateau::report;
use std::path::PathBuf;

#[derive(clap::Args)]
pub struct Args {
    /// Study files, or folders searched recursively [default: the current folder].
    paths: Vec<PathBuf>,
    /// The template folder the reports are made with.
    #[arg(long, value_name = "DIR")]
    templates: Option<PathBuf>,
    #[command(flatten)]
    typesetter: TypstArgs,
    /// Print one JSON object per study, report folder or empty path.
    #[arg(long)]
    json: bool,
}

pub fn run(args: Args) -> Result<(), Failure> {
    let Args {
        paths,
        templates,
        typesetter,
        json,
    } = args;
    let paths = if paths.is_empty() {
        vec![PathBuf::from(".")]
    } else {
        paths
    };
    let files = plateau::batch::discover(&paths)?;
    let orphans = plateau::batch::orphans(&paths);
    // A path that holds no study (and no report) is a mistake in a CI job, not a pass.
    let empty: Vec<&PathBuf> = paths
        .iter()
        .filter(|p| p.is_dir())
        .filter(|p| !files.iter().any(|f| f.starts_with(p)))
        .filter(|p| !orphans.iter().any(|o| o.dir.starts_with(p)))
        .collect();
    let typst_version = typesetter.find().ok().map(|t| t.version);
    let mut entries: Vec<StatusEntry> = Vec::new();
    for file in &files {
        let dir = report::default_dir(file);
        // The protocol lock is checked as `report` would check it.
        let loaded = plateau::pipeline::load(file).and_then(|mut s| {
            s.lock = plateau::protocol::read_lock(&plateau::files::Disk, &s)?;
            Ok(s)
        });
        let entry = match loaded {
            Err(d) => StatusEntry::new(
                file,
                &dir,
                "invalid",
                vec![d.0.first().map(ToString::to_string).unwrap_or_default()],
            ),
            Ok(study) => {
                // A report made with --no-pdf records typst `none`: it is current when
                // its inputs are, whatever typst is installed now.
                let no_pdf =
                    plateau::report::record::recorded(&dir).is_some_and(|r| r.typst == "none");
                let version = if no_pdf {
                    Some("none")
                } else {
                    typst_version.as_deref()
                };
                match plateau::batch::status(&study, &dir, templates.as_deref(), version) {
                    plateau::batch::Status::Current => {
                        StatusEntry::new(file, &dir, "current", Vec::new())
                    }
                    plateau::batch::Status::Missing => StatusEntry::new(
                        file,
                        &dir,
                        "missing",
                        vec![format!("no report in {}", dir.display())],
                    ),
                    plateau::batch::Status::Stale(why) => {
                        StatusEntry::new(file, &dir, "stale", why)
                    }
                }
            }
        };
        entries.push(entry);
    }
    for o in &orphans {
        entries.push(StatusEntry::new(
            &o.study,
            &o.dir,
            "orphaned",
            vec![o.why.clone()],
        ));
    }
    for p in &empty {
        entries.push(StatusEntry::new(
            p,
            p,
            "no-study",
            vec![
                "no study file (a .yaml file with a top-level `schema:` key) under this folder"
                    .into(),
            ],
        ));
    }
    if json {
        let text =
            serde_json::to_string_pretty(&entries).map_err(|e| Failure::Other(e.to_string()))?;
        println!("{text}");
    } else {
        for e in &entries {
            println!("{}", e.line());
        }
    }
    if entries.iter().all(|e| e.state == "current") && !entries.is_empty() {
        Ok(())
    } else {
        Err(Failure::Silent(1))
    }
}

/// One line of `plateau status`.
#[derive(serde::Serialize)]
struct StatusEntry {
    /// The study file (for an orphaned report: the file its record names).
    study: String,
    /// Its report folder.
    report: String,
    /// `current`, `stale`, `missing`, `invalid`, `orphaned` or `no-study`.
    state: &'static str,
    /// Why, when not current.
    reasons: Vec<String>,
}

impl StatusEntry {
    fn new(
        study: &std::path::Path,
        dir: &std::path::Path,
        state: &'static str,
        reasons: Vec<String>,
    ) -> Self {
        StatusEntry {
            study: study.display().to_string(),
            report: dir.display().to_string(),
            state,
            reasons,
        }
    }

    fn line(&self) -> String {
        match self.state {
            "current" => format!("current  {}", self.study),
            "orphaned" => format!(
                "orphaned {}: {} ({})",
                self.report,
                self.reasons.join("; "),
                self.study
            ),
            "no-study" => format!("no-study {}: {}", self.study, self.reasons.join("; ")),
            state => format!("{state:<8} {}: {}", self.study, self.reasons.join("; ")),
        }
    }
}
