//! A small builder over the real `plateau` executable, shared by the integration tests.

use std::path::{Path, PathBuf};
use std::process::Command;

/// The repository root.
pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// A file under `examples/`.
pub fn example(rel: &str) -> PathBuf {
    root().join("examples").join(rel)
}

/// A file under `tests/fixtures/`.
pub fn fixture(rel: &str) -> PathBuf {
    root().join("tests/fixtures").join(rel)
}

/// One invocation being built.
pub struct Invocation {
    cmd: Command,
}

/// Its outcome.
pub struct Run {
    pub code: i32,
    pub stdout: String,
    pub stderr: String,
}

/// `plateau ARGS...`.
pub fn plateau(args: &[&str]) -> Invocation {
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_plateau"));
    cmd.args(args)
        .env("NO_COLOR", "1")
        .env_remove("PLATEAU_TYPST");
    Invocation { cmd }
}

impl Invocation {
    pub fn arg(mut self, a: &str) -> Self {
        self.cmd.arg(a);
        self
    }

    pub fn arg_path(mut self, p: &Path) -> Self {
        self.cmd.arg(p);
        self
    }

    pub fn current_dir(mut self, p: &Path) -> Self {
        self.cmd.current_dir(p);
        self
    }

    pub fn env(mut self, k: &str, v: &str) -> Self {
        self.cmd.env(k, v);
        self
    }

    fn run(mut self) -> Run {
        let out = self.cmd.output().expect("the plateau binary runs");
        Run {
            code: out.status.code().unwrap_or(-1),
            stdout: String::from_utf8_lossy(&out.stdout).to_string(),
            stderr: String::from_utf8_lossy(&out.stderr).to_string(),
        }
    }

    /// Runs and requires exit code 0.
    #[track_caller]
    pub fn ok(self) -> Run {
        self.code(0)
    }

    /// Runs and requires the exit code.
    #[track_caller]
    pub fn code(self, expected: i32) -> Run {
        let run = self.run();
        assert_eq!(
            run.code, expected,
            "exit code {} (expected {expected})\nstdout:\n{}\nstderr:\n{}",
            run.code, run.stdout, run.stderr
        );
        assert!(!run.stderr.contains("panicked"), "{}", run.stderr);
        run
    }
}

/// Parses JSON output.
#[track_caller]
pub fn json_of(text: &str) -> serde_json::Value {
    serde_json::from_str(text).unwrap_or_else(|e| panic!("not JSON ({e}):\n{text}"))
}

/// The typst binary the PDF tests use: $PLATEAU_TYPST or `typst` on the PATH. The PDF tests
/// need it (`bash .ci/ensure-typst` installs it); they fail rather than pass silently without.
#[track_caller]
pub fn typst_binary() -> PathBuf {
    let candidate = std::env::var_os("PLATEAU_TYPST")
        .map(PathBuf::from)
        .unwrap_or_else(|| PathBuf::from("typst"));
    let ok = Command::new(&candidate)
        .arg("--version")
        .output()
        .map(|o| String::from_utf8_lossy(&o.stdout).starts_with("typst 0.15."))
        .unwrap_or(false);
    assert!(
        ok,
        "the PDF tests need typst 0.15.x on the PATH or in PLATEAU_TYPST; run `bash .ci/ensure-typst`"
    );
    candidate
}

/// The text of a PDF (`pdftotext` from poppler-utils, which `.ci/run` installs).
#[track_caller]
pub fn pdf_text(pdf: &Path) -> String {
    let out = Command::new("pdftotext")
        .arg("-layout")
        .arg(pdf)
        .arg("-")
        .output()
        .expect("pdftotext (poppler-utils) is installed; `.ci/run` installs it");
    assert!(
        out.status.success(),
        "pdftotext failed on {}",
        pdf.display()
    );
    String::from_utf8_lossy(&out.stdout).to_string()
}

/// chmod +x.
pub fn make_executable(path: &Path) {
    use std::os::unix::fs::PermissionsExt;
    let mut perms = std::fs::metadata(path).unwrap().permissions();
    perms.set_mode(0o755);
    std::fs::set_permissions(path, perms).unwrap();
}
