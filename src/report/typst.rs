//! The external typesetter: finding the `typst` binary, checking its version, compiling.
//!
//! typst is run as a separate process so the tool stays small and the PDF comes from the same
//! pinned typesetter a lab can install itself. It always runs sandboxed to the report folder,
//! with no system fonts (the same PDF on every machine), a pinned creation date, and an empty
//! package folder so a template can never download anything.

use std::io::Read;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::sync::Mutex;
use std::time::Duration;

/// The typst release plateau is built and tested against.
pub const PINNED_VERSION: &str = "0.15.1";
/// Releases accepted: the same minor version.
pub const ACCEPTED_PREFIX: &str = "0.15.";
/// The environment variable that names the typst binary.
pub const ENV_VAR: &str = "PLATEAU_TYPST";
/// The environment variable that sets the time limit of one typst call, in seconds.
pub const TIMEOUT_VAR: &str = "PLATEAU_TYPST_TIMEOUT";
/// The default time limit of one typst call: generous for the largest report accepted (a
/// 2^16-run study typesets in well under a minute in a release build of typst).
pub const DEFAULT_TIMEOUT: Duration = Duration::from_secs(300);
/// Longest time limit accepted (one day).
pub const MAX_TIMEOUT_SECS: u64 = 86_400;
/// Most of typst's diagnostics kept for a message.
const STDERR_LIMIT: u64 = 256 * 1024;

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
    /// A call took longer than the limit and was stopped.
    #[error(
        "typst did not finish within {seconds} s and was stopped ({what})\nhint: raise the limit with --typst-timeout SECONDS or the {TIMEOUT_VAR} environment variable"
    )]
    Timeout {
        /// What was running.
        what: String,
        /// The limit.
        seconds: u64,
    },
    /// typst reported success but left no valid PDF.
    #[error(
        "typst reported success but {path} {why}; nothing was replaced\nhint: check that `{binary}` is the real typst {PINNED_VERSION}"
    )]
    NoPdf {
        /// The binary.
        binary: String,
        /// The file expected.
        path: String,
        /// What is wrong with it.
        why: String,
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
    /// The time limit of each call.
    pub timeout: Duration,
}

/// The time limit of a typst call: the `--typst-timeout` option, then `PLATEAU_TYPST_TIMEOUT`,
/// then [`DEFAULT_TIMEOUT`]. Whole seconds from 1 to one day.
pub fn timeout(option: Option<u64>) -> Result<Duration, String> {
    let (seconds, source) = match option {
        Some(s) => (s.to_string(), "--typst-timeout".to_string()),
        None => match std::env::var(TIMEOUT_VAR) {
            Ok(v) if !v.trim().is_empty() => (v.trim().to_string(), TIMEOUT_VAR.to_string()),
            _ => return Ok(DEFAULT_TIMEOUT),
        },
    };
    match seconds.parse::<u64>() {
        Ok(s) if (1..=MAX_TIMEOUT_SECS).contains(&s) => Ok(Duration::from_secs(s)),
        _ => Err(format!(
            "{source} is `{seconds}`; expected whole seconds from 1 to {MAX_TIMEOUT_SECS}"
        )),
    }
}

/// Versions already checked in this process, by binary: one `--version` call per binary.
static CHECKED: Mutex<Vec<(PathBuf, String)>> = Mutex::new(Vec::new());

/// Finds typst: the `--typst` option, then `PLATEAU_TYPST`, then `typst` on the PATH; checks
/// its version (once per process) with [`DEFAULT_TIMEOUT`] as the limit.
pub fn find(option: Option<&Path>) -> Result<Typst, TypstError> {
    find_with(option, DEFAULT_TIMEOUT)
}

/// [`find`] with a time limit for every call of the binary.
pub fn find_with(option: Option<&Path>, limit: Duration) -> Result<Typst, TypstError> {
    let (binary, searched) = if let Some(p) = option {
        (p.to_path_buf(), format!("--typst {}", p.display()))
    } else if let Some(p) = std::env::var_os(ENV_VAR).filter(|v| !v.is_empty()) {
        let p = PathBuf::from(p);
        let s = format!("{ENV_VAR}={}", p.display());
        (p, s)
    } else {
        (PathBuf::from("typst"), "searched the PATH".to_string())
    };
    // A relative path such as `tools/typst` is made absolute now: typst is compiled with the
    // staging folder as its working directory, where the relative path would name nothing.
    let binary = if binary.components().count() > 1 && binary.is_relative() {
        std::env::current_dir().map_or(binary.clone(), |d| d.join(&binary))
    } else {
        binary
    };
    if let Some(version) = CHECKED
        .lock()
        .ok()
        .and_then(|c| c.iter().find(|(b, _)| *b == binary).map(|(_, v)| v.clone()))
    {
        return Ok(Typst {
            binary,
            version,
            timeout: limit,
        });
    }
    let mut command = Command::new(&binary);
    command.arg("--version");
    let output = match run_limited(&mut command, limit) {
        Ok(Some(o)) => o,
        Ok(None) => {
            return Err(TypstError::Timeout {
                what: format!("`{} --version`", binary.display()),
                seconds: limit.as_secs(),
            });
        }
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
    if let Ok(mut c) = CHECKED.lock() {
        c.push((binary.clone(), version.clone()));
    }
    Ok(Typst {
        binary,
        version,
        timeout: limit,
    })
}

/// Runs `command` in its own process group with stdin closed and stdout/stderr captured
/// (each bounded), killing the whole group when `limit` passes: `Ok(None)` then. The child is
/// registered so an interrupt of plateau stops it too.
fn run_limited(command: &mut Command, limit: Duration) -> std::io::Result<Option<Output>> {
    command
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped());
    #[cfg(unix)]
    {
        use std::os::unix::process::CommandExt;
        command.process_group(0);
    }
    let mut child = command.spawn()?;
    let pid = child.id();
    crate::output::cleanup::register_child(pid);
    let drain = |pipe: Option<Box<dyn Read + Send>>| {
        std::thread::spawn(move || {
            let mut kept = Vec::new();
            if let Some(mut pipe) = pipe {
                let _ = (&mut pipe).take(STDERR_LIMIT).read_to_end(&mut kept);
                let _ = std::io::copy(&mut pipe, &mut std::io::sink());
            }
            kept
        })
    };
    let stdout = drain(
        child
            .stdout
            .take()
            .map(|p| Box::new(p) as Box<dyn Read + Send>),
    );
    let stderr = drain(
        child
            .stderr
            .take()
            .map(|p| Box::new(p) as Box<dyn Read + Send>),
    );
    // A waiter thread reports the exit at once (no polling delay added to every compile);
    // on expiry the whole process group is killed, which ends the wait.
    let (sender, receiver) = std::sync::mpsc::channel();
    let waiter = std::thread::spawn(move || {
        let status = child.wait();
        let _ = sender.send(());
        status
    });
    let finished = receiver.recv_timeout(limit).is_ok() || receiver.try_recv().is_ok();
    if !finished {
        crate::output::cleanup::kill_group(pid);
    }
    let status = match waiter.join() {
        Ok(Ok(status)) => finished.then_some(status),
        Ok(Err(e)) => {
            crate::output::cleanup::unregister_child(pid);
            return Err(e);
        }
        Err(_) => None,
    };
    crate::output::cleanup::unregister_child(pid);
    let stdout = stdout.join().unwrap_or_default();
    let stderr = stderr.join().unwrap_or_default();
    Ok(status.map(|status| Output {
        status,
        stdout,
        stderr,
    }))
}

/// Checks that typst's output is a PDF: a regular, non-empty file starting with `%PDF-`.
fn check_pdf(path: &Path) -> Result<(), String> {
    let meta = std::fs::symlink_metadata(path).map_err(|_| "was not written".to_string())?;
    if !meta.is_file() {
        return Err("is not a regular file".into());
    }
    if meta.len() == 0 {
        return Err("is empty".into());
    }
    let mut head = Vec::new();
    std::fs::File::open(path)
        .and_then(|f| f.take(5).read_to_end(&mut head))
        .map_err(|e| format!("cannot be read ({e})"))?;
    if head != b"%PDF-" {
        return Err("is not a PDF (it does not start with %PDF-)".into());
    }
    Ok(())
}

impl Typst {
    /// Compiles `root/input` to `root/output` as PDF/A-2b, sandboxed to `root`, within the
    /// time limit; succeeds only if `root/output` is then a PDF.
    pub fn compile(
        &self,
        root: &Path,
        input: &str,
        output: &str,
        creation_timestamp: i64,
        empty_packages: &Path,
    ) -> Result<(), TypstError> {
        let mut command = Command::new(&self.binary);
        command
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
            .arg(output);
        let result = run_limited(&mut command, self.timeout)
            .map_err(|e| TypstError::Spawn {
                binary: self.binary.display().to_string(),
                cause: e.to_string(),
            })?
            .ok_or_else(|| TypstError::Timeout {
                what: format!("compiling {input}"),
                seconds: self.timeout.as_secs(),
            })?;
        if result.status.success() {
            check_pdf(&root.join(output)).map_err(|why| TypstError::NoPdf {
                binary: self.binary.display().to_string(),
                path: output.to_string(),
                why,
            })
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

/// The PDF creation timestamp of a study dated `date`: its midnight UTC, or 0 (1970-01-01)
/// for an unreadable date or one before 1970, which typst cannot take (SOURCE_DATE_EPOCH
/// semantics: seconds since 1970, never negative). The date printed in the report is the
/// study's own text either way.
pub fn creation_timestamp(date: &str) -> i64 {
    unix_midnight(date).unwrap_or(0).max(0)
}

/// Seconds since 1970-01-01T00:00:00Z of a `YYYY-MM-DD` date at midnight UTC (the pinned PDF
/// creation date).
pub fn unix_midnight(date: &str) -> Option<i64> {
    let day: jiff::civil::Date = date.parse().ok()?;
    let zoned = day.to_zoned(jiff::tz::TimeZone::UTC).ok()?;
    Some(zoned.timestamp().as_second())
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
        // 1969-12-31 is one day before the epoch (from memory); typst gets 0 instead.
        assert_eq!(unix_midnight("1969-12-31"), Some(-86_400));
        assert_eq!(creation_timestamp("1969-12-31"), 0);
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
