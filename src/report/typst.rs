//! The external typesetter: finding the `typst` binary, checking its version, compiling.
//!
//! typst is run as a separate process so the tool stays small and the PDF comes from the same
//! pinned typesetter a lab can install itself. It always runs sandboxed to the report folder,
//! with no system fonts (the same PDF on every machine), a pinned creation date, and an empty
//! package folder so a template can never download anything.

use std::path::{Path, PathBuf};
use std::process::Command;

/// The typst release plateau is built and tested against.
pub const PINNED_VERSION: &str = "0.15.1";
/// Releases accepted: the same minor version.
pub const ACCEPTED_PREFIX: &str = "0.15.";
/// The environment variable that names the typst binary.
pub const ENV_VAR: &str = "PLATEAU_TYPST";

/// What went wrong with the typesetter.
#[derive(Debug, thiserror::Error)]
pub enum TypstError {
    /// No binary was found.
    #[error(
        "the typesetter `typst` was not found ({searched})\nhint: install it with `cargo install --locked typst-cli@{PINNED_VERSION}`\nhint: or name the binary with --typst PATH or the {ENV_VAR} environment variable\nhint: use --no-pdf to write everything except the PDF"
    )]
    Missing {
        /// Where it was looked for.
        searched: String,
    },
    /// The binary answered with another version.
    #[error(
        "`{binary}` is typst {found}, but plateau needs typst {ACCEPTED_PREFIX}x\nhint: install the pinned release with `cargo install --locked typst-cli@{PINNED_VERSION}`"
    )]
    WrongVersion {
        /// The binary.
        binary: String,
        /// What it reported.
        found: String,
    },
    /// The binary could not be run.
    #[error("cannot run `{binary}`: {cause}")]
    Spawn {
        /// The binary.
        binary: String,
        /// The operating system's reason.
        cause: String,
    },
    /// Compilation failed.
    #[error(
        "typst failed to compile the report (exit code {code})\n--- typst says ---\n{stderr}\n------------------\nhint: if you use --templates, check the template named above"
    )]
    Compile {
        /// typst's exit code.
        code: String,
        /// Its diagnostics.
        stderr: String,
    },
}

/// A typst binary whose version was checked.
#[derive(Debug, Clone)]
pub struct Typst {
    /// Path or name of the binary.
    pub binary: PathBuf,
    /// The version it reported, e.g. `0.15.1`.
    pub version: String,
}

/// Finds typst: the `--typst` option, then `PLATEAU_TYPST`, then `typst` on the PATH.
pub fn find(option: Option<&Path>) -> Result<Typst, TypstError> {
    let (binary, searched) = if let Some(p) = option {
        (p.to_path_buf(), format!("--typst {}", p.display()))
    } else if let Some(p) = std::env::var_os(ENV_VAR).filter(|v| !v.is_empty()) {
        let p = PathBuf::from(p);
        let s = format!("{ENV_VAR}={}", p.display());
        (p, s)
    } else {
        (PathBuf::from("typst"), "searched the PATH".to_string())
    };
    let output = match Command::new(&binary).arg("--version").output() {
        Ok(o) => o,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
            return Err(TypstError::Missing { searched });
        }
        Err(e) => {
            return Err(TypstError::Spawn {
                binary: binary.display().to_string(),
                cause: e.to_string(),
            });
        }
    };
    let text = String::from_utf8_lossy(&output.stdout);
    let version = text
        .split_whitespace()
        .nth(1)
        .unwrap_or_default()
        .to_string();
    if !output.status.success() || !version.starts_with(ACCEPTED_PREFIX) {
        return Err(TypstError::WrongVersion {
            binary: binary.display().to_string(),
            found: if version.is_empty() {
                text.trim().to_string()
            } else {
                version
            },
        });
    }
    Ok(Typst { binary, version })
}

impl Typst {
    /// Compiles `root/input` to `root/output` as PDF/A-2b, sandboxed to `root`.
    pub fn compile(
        &self,
        root: &Path,
        input: &str,
        output: &str,
        creation_timestamp: i64,
        empty_packages: &Path,
    ) -> Result<(), TypstError> {
        let result = Command::new(&self.binary)
            .current_dir(root)
            .env_remove("SOURCE_DATE_EPOCH")
            .env_remove("TYPST_FONT_PATHS")
            .args(["compile", "--root", "."])
            .arg("--ignore-system-fonts")
            .args(["--creation-timestamp", &creation_timestamp.to_string()])
            .args(["--pdf-standard", "a-2b"])
            .args(["--diagnostic-format", "short"])
            .arg("--package-path")
            .arg(empty_packages)
            .arg("--package-cache-path")
            .arg(empty_packages)
            .arg(input)
            .arg(output)
            .output()
            .map_err(|e| TypstError::Spawn {
                binary: self.binary.display().to_string(),
                cause: e.to_string(),
            })?;
        if result.status.success() {
            Ok(())
        } else {
            Err(TypstError::Compile {
                code: result
                    .status
                    .code()
                    .map_or_else(|| "killed by a signal".to_string(), |c| c.to_string()),
                stderr: String::from_utf8_lossy(&result.stderr).trim().to_string(),
            })
        }
    }
}

/// Seconds since 1970-01-01T00:00:00Z of a `YYYY-MM-DD` date at midnight UTC (the pinned PDF
/// creation date). Days from the civil calendar by H. Hinnant's `days_from_civil` algorithm.
pub fn unix_midnight(date: &str) -> Option<i64> {
    let mut parts = date.split('-').map(str::parse::<i64>);
    let (y, m, d) = (
        parts.next()?.ok()?,
        parts.next()?.ok()?,
        parts.next()?.ok()?,
    );
    let y = if m <= 2 { y - 1 } else { y };
    let era = y.div_euclid(400);
    let yoe = y - era * 400;
    let mp = (m + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    Some((era * 146_097 + doe - 719_468) * 86_400)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn midnight_timestamps_match_known_dates() {
        // 2000-01-01T00:00:00Z = 946684800 and 2026-11-18T00:00:00Z = 1794960000
        // (common practice: `date -u -d 2026-11-18 +%s`).
        assert_eq!(unix_midnight("1970-01-01"), Some(0));
        assert_eq!(unix_midnight("2000-01-01"), Some(946_684_800));
        assert_eq!(unix_midnight("2026-11-18"), Some(1_794_960_000));
    }

    #[test]
    fn a_missing_binary_names_the_install_command() {
        let err = find(Some(Path::new("/nonexistent/typst"))).unwrap_err();
        let text = err.to_string();
        assert!(
            text.contains("cargo install --locked typst-cli@0.15.1"),
            "{text}"
        );
    }
}
