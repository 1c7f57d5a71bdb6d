//! `plateau protocol`: the protocol folder for approval and the lock of its planning content.

use super::Failure;
use super::TypstArgs;
use plateau::report;
use std::path::PathBuf;

#[derive(clap::Args)]
pub struct Args {
    /// The study file (results are not needed).
    study: PathBuf,
    /// Protocol folder [default: <study stem>-protocol beside the study file].
    #[arg(short, long, value_name = "DIR")]
    output: Option<PathBuf>,
    #[command(flatten)]
    typesetter: TypstArgs,
}

pub fn run(args: Args) -> Result<(), Failure> {
    let Args {
        study,
        output,
        typesetter,
    } = args;
    let mut s = plateau::pipeline::load(&study)?;
    // The lock the study names is checked when it exists (the first run writes it).
    if plateau::protocol::lock_path(&s).is_some_and(|p| p.exists()) {
        s.lock = plateau::protocol::read_lock(&plateau::files::Disk, &s)?;
    }
    let design = plateau::design::plan(&s)?;
    let dir = output.unwrap_or_else(|| report::protocol::default_dir(&study));
    let typst = typesetter.find()?;
    let lock = report::protocol::write(&s, &design, &typst, &dir).map_err(Failure::from)?;
    println!(
        "ok  protocol written to {} (planning content SHA-256 {})",
        dir.display(),
        lock.planning_sha256
    );
    if let Some(old) = s
        .lock
        .as_ref()
        .filter(|l| l.planning_sha256 != lock.planning_sha256)
    {
        println!(
            "note: the plan differs from the locked protocol {} in {} field(s): this is a revised protocol, printed without the old number and approval date",
            old.file,
            plateau::protocol::deviations::compare(&old.planning, &s.planning).len()
        );
    }
    if s.protocol.is_none() {
        let base = study.parent().unwrap_or(std::path::Path::new(""));
        let lock_file = dir.join(plateau::protocol::LOCK_FILE);
        let shown = lock_file.strip_prefix(base).unwrap_or(&lock_file);
        println!(
            "hint: once the protocol is approved, name its lock in the study file:\n  protocol: {{ lock: {}, number: ..., approved: YYYY-MM-DD }}",
            shown.display()
        );
    }
    Ok(())
}
