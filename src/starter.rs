//! `plateau new`: a commented starter study that `plateau check` accepts as it is, so a new user
//! edits a valid file instead of starting from a blank page.

use std::path::{Path, PathBuf};

use crate::study::DesignKind;

/// File name of the study schema that the starter's modeline names, beside the study, so that
/// an editor finds it without a network.
pub const SCHEMA_FILE: &str = "study.schema.json";

/// Where the modeline of a starter study at `study` points: [`SCHEMA_FILE`] in its folder.
pub fn schema_beside(study: &Path) -> PathBuf {
    match study.parent().filter(|p| !p.as_os_str().is_empty()) {
        Some(dir) => dir.join(SCHEMA_FILE),
        None => PathBuf::from(SCHEMA_FILE),
    }
}

/// What [`write_schema`] did.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SchemaWrite {
    /// The file was created.
    Written,
    /// The file already held exactly this schema (line ends aside) and was left alone.
    AlreadyCurrent,
}

impl std::fmt::Display for SchemaWrite {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            SchemaWrite::Written => "written",
            SchemaWrite::AlreadyCurrent => "already holds this schema",
        })
    }
}

/// Writes a schema file without ever replacing a different one: a schema someone edited, or
/// one of another plateau version that other studies still name, is kept, and the message says
/// how to proceed. The file is created exclusively, so two runs cannot interleave.
pub fn write_schema(path: &Path, text: &str) -> Result<SchemaWrite, String> {
    use crate::output::{NewFileError, create_new};
    match create_new(path, text.as_bytes()) {
        Ok(()) => Ok(SchemaWrite::Written),
        Err(NewFileError::Exists) => {
            let existing = std::fs::read_to_string(path)
                .map_err(|e| format!("failed to read {} ({e})", path.display()))?;
            if existing.replace("\r\n", "\n") == text.replace("\r\n", "\n") {
                Ok(SchemaWrite::AlreadyCurrent)
            } else {
                Err(format!(
                    "failed to write {} (a different file of that name exists and is kept; expected a new file name, or remove the old file first)",
                    path.display()
                ))
            }
        }
        Err(NewFileError::Io(e)) => Err(format!("failed to write {} ({e})", path.display())),
    }
}

/// Typical HPLC operating parameters used as placeholders (ranges: common practice, see
/// METHODS.md "Typical ranges"): id, name, unit, nominal, delta.
const PLACEHOLDERS: &[(&str, &str, &str, f64, f64)] = &[
    ("temp", "Column temperature", "°C", 35.0, 2.0),
    ("ph", "Mobile-phase pH", "", 3.0, 0.1),
    ("flow", "Flow rate", "mL/min", 1.0, 0.1),
    (
        "organic",
        "Organic modifier in mobile phase",
        "% v/v",
        40.0,
        1.0,
    ),
    ("wavelength", "Detection wavelength", "nm", 254.0, 2.0),
    ("buffer", "Buffer concentration", "mmol/L", 25.0, 2.5),
    ("injvol", "Injection volume", "µL", 10.0, 1.0),
    ("gradient", "Gradient time", "min", 20.0, 1.0),
    ("equil", "Equilibration time", "min", 5.0, 1.0),
    ("sonic", "Sonication time of the sample", "min", 15.0, 3.0),
    ("dilution", "Dilution volume", "mL", 50.0, 0.5),
];

/// Default number of factors for a kind.
pub fn default_factors(kind: DesignKind) -> usize {
    match kind {
        DesignKind::FullFactorial | DesignKind::Explicit => 3,
        DesignKind::FractionalFactorial => 5,
        DesignKind::PlackettBurman | DesignKind::Youden => 7,
    }
}

/// Largest number of placeholder factors available.
pub fn max_factors(kind: DesignKind) -> usize {
    match kind {
        DesignKind::Youden => 7,
        DesignKind::Explicit => 3,
        _ => PLACEHOLDERS.len(),
    }
}

/// The starter study text.
pub fn text(kind: DesignKind, factors: usize) -> String {
    let mut out = String::new();
    out.push_str(&format!("# yaml-language-server: $schema={SCHEMA_FILE}\n"));
    out.push_str(
        "# A starter robustness study written by `plateau new`. Replace every placeholder.\n",
    );
    out.push_str(&format!("# Editors validate against {SCHEMA_FILE} beside this file (`plateau schema -o {SCHEMA_FILE}` writes it when missing).\n"));
    out.push_str("schema: 1\n");
    out.push_str("study:\n  id: RS-0000-000          # your protocol number\n");
    out.push_str("  title: Robustness of the assay method (placeholder)\n");
    out.push_str("  method: METHOD-ID version 1\n  analyst: A. Analyst\n  date: 2026-01-01\n");
    out.push_str("  objective: Show that the result tolerates the expected drift of the operating parameters.\n");
    out.push_str("factors:                  # numeric: nominal with delta (or low/high); categorical: levels\n");
    for (id, name, unit, nominal, delta) in PLACEHOLDERS.iter().take(factors) {
        out.push_str(&format!("  - id: {id}\n    name: {name}\n"));
        if !unit.is_empty() {
            out.push_str(&format!("    unit: \"{unit}\"\n"));
        }
        out.push_str(&format!("    nominal: {nominal}\n    delta: {delta}\n"));
    }
    out.push_str("design:\n");
    match kind {
        DesignKind::FullFactorial => {
            out.push_str("  kind: full-factorial\n  center-points: 3          # nominal runs: curvature, drift, pure error\n");
        }
        DesignKind::FractionalFactorial => {
            out.push_str("  kind: fractional-factorial\n  resolution: 4             # or generators: [\"E = ABCD\"]\n  center-points: 3\n");
        }
        DesignKind::PlackettBurman => {
            out.push_str("  kind: plackett-burman\n  dummies: 3                # unassigned columns estimate the error\n  center-points: 3\n");
        }
        DesignKind::Youden => {
            out.push_str("  kind: youden              # 7 columns in 8 runs (Youden & Steiner 1975)\n  center-points: 2\n");
        }
        DesignKind::Explicit => {
            out.push_str("  kind: explicit            # a design planned elsewhere, in coded levels\n  runs:\n");
            for (run, levels) in [
                (1, [-1, -1, 1]),
                (2, [1, -1, -1]),
                (3, [-1, 1, -1]),
                (4, [1, 1, 1]),
                (5, [0, 0, 0]),
            ] {
                out.push_str(&format!(
                    "    - {{ run: {run}, temp: {}, ph: {}, flow: {} }}\n",
                    levels[0], levels[1], levels[2]
                ));
            }
        }
    }
    if kind != DesignKind::Explicit {
        out.push_str(
            "  randomize: { seed: 12345 }  # a fixed seed gives the same run order every time\n",
        );
    }
    out.push_str("responses:\n  - id: assay\n    name: Assay\n    unit: \"% label claim\"\n");
    out.push_str("acceptance:                # declare the criterion before the data are seen\n");
    out.push_str("  - response: assay\n    effect-limit: 2.0\n    basis: \"repeatability limit r = 2.8 s_r (placeholder, state yours)\"\n");
    out.push_str(
        "# results:                 # add after the runs: `plateau design` prints the run sheet\n",
    );
    out.push_str("#   file: results.csv\n");
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_schema_goes_beside_the_study() {
        assert_eq!(
            schema_beside(Path::new("study.yaml")),
            PathBuf::from(SCHEMA_FILE)
        );
        assert_eq!(
            schema_beside(Path::new("lab/s1/study.yaml")),
            Path::new("lab/s1").join(SCHEMA_FILE)
        );
    }

    #[test]
    fn the_modeline_names_the_schema_file_written_beside_the_study() {
        let text = text(DesignKind::FullFactorial, 3);
        assert_eq!(
            text.lines().next(),
            Some(format!("# yaml-language-server: $schema={SCHEMA_FILE}").as_str())
        );
    }
}
