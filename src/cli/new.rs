//! `plateau new`: a commented starter study file and the schema beside it.

use super::Failure;
use plateau::study::DesignKind;
use std::path::PathBuf;

#[derive(clap::Args)]
pub struct Args {
    /// The file to create (never overwritten).
    file: PathBuf,
    /// Design kind.
    #[arg(long, value_enum, default_value = "full-factorial")]
    kind: KindArg,
    /// Number of factors [default: 3, 5 or 7 by kind].
    #[arg(long)]
    factors: Option<usize>,
}

pub fn run(args: Args) -> Result<(), Failure> {
    let Args {
        file,
        kind,
        factors,
    } = args;
    let kind = DesignKind::from(kind);
    let n = factors.unwrap_or_else(|| plateau::starter::default_factors(kind));
    let max = plateau::starter::max_factors(kind);
    if n < 2 || n > max {
        return Err(Failure::Usage(format!(
            "--factors {n} is not available for this kind; expected 2 to {max}"
        )));
    }
    let text = plateau::starter::text(kind, n);
    plateau::output::create_new(&file, text.as_bytes()).map_err(|e| match e {
        plateau::output::NewFileError::Exists => Failure::Other(format!(
            "{} already exists; plateau new never overwrites a file",
            file.display()
        )),
        plateau::output::NewFileError::Io(e) => {
            Failure::Other(format!("failed to create {} ({e})", file.display()))
        }
    })?;
    println!(
        "ok  wrote {}; check it with `plateau check {}`",
        file.display(),
        file.display()
    );
    // The modeline names the schema beside the study; write it so that it resolves.
    let schema = plateau::starter::schema_beside(&file);
    match plateau::starter::write_schema(&schema, plateau::study::schema::SCHEMA_TEXT) {
        Ok(how) => println!(
            "ok  {} {} (editors validate against it)",
            schema.display(),
            how
        ),
        Err(e) => eprintln!("warning: {e}"),
    }
    Ok(())
}

#[derive(Clone, Copy, clap::ValueEnum)]
enum KindArg {
    FullFactorial,
    FractionalFactorial,
    PlackettBurman,
    Youden,
    Explicit,
}

impl From<KindArg> for DesignKind {
    fn from(k: KindArg) -> Self {
        match k {
            KindArg::FullFactorial => DesignKind::FullFactorial,
            KindArg::FractionalFactorial => DesignKind::FractionalFactorial,
            KindArg::PlackettBurman => DesignKind::PlackettBurman,
            KindArg::Youden => DesignKind::Youden,
            KindArg::Explicit => DesignKind::Explicit,
        }
    }
}
