//! A study as committed at a git revision, read into memory with the files it names so the
//! normal pipeline analyses it through [`crate::files::InMemory`], unchanged and without
//! temporary copies.
//!
//! Only read-only git commands are run (`rev-parse`, `cat-file -t`, `show`), each in the
//! repository of the study file. The study file and its results CSV are taken from the same
//! commit, so the old analysis is the one a reviewer approved then.

use std::path::{Component, Path, PathBuf};
use std::process::Command;

use crate::files::InMemory;
use crate::pipeline::{self, Evaluated};
use crate::study::Diagnostics;

/// Why a study could not be read at a revision.
#[derive(Debug, thiserror::Error)]
pub enum DiffError {
    /// git could not be run.
    #[error("cannot run `git` ({cause}); reading a study at a revision needs git on the PATH")]
    GitMissing {
        /// The operating system's reason.
        cause: String,
    },
    /// The study's folder does not exist.
    #[error(
        "cannot find the folder of the study file {path} ({cause}); expected an existing folder inside a git repository"
    )]
    NoFolder {
        /// The study file as given.
        path: String,
        /// The operating system's reason.
        cause: String,
    },
    /// The study is not inside a git repository.
    #[error(
        "{path} is not inside a git repository; --rev needs a study file in a git working tree"
    )]
    NotARepository {
        /// The study file as given.
        path: String,
    },
    /// The revision is not one git knows.
    #[error(
        "unknown revision `{rev}` in the repository {repo}; expected a commit, branch or tag of that repository, or an expression such as HEAD~1"
    )]
    UnknownRevision {
        /// The revision as given.
        rev: String,
        /// The repository root.
        repo: String,
    },
    /// The revision text cannot be a revision (it would be read as an option).
    #[error(
        "`{rev}` is not a revision name; expected a commit, branch, tag or an expression such as HEAD~1"
    )]
    BadRevision {
        /// The revision as given.
        rev: String,
    },
    /// The file is not in the revision (or is a folder there).
    #[error(
        "{file} is not a file in revision `{rev}` ({commit}); expected a file committed at that revision (`git log -- {file}` lists the commits that have it)"
    )]
    NotInRevision {
        /// The file, relative to the repository root.
        file: String,
        /// The revision as given.
        rev: String,
        /// The commit it resolved to (abbreviated).
        commit: String,
    },
    /// A file named by the study lies outside the repository.
    #[error(
        "{file} (named by {study}) is outside the repository {repo}, so its version at `{rev}` cannot be read; expected a results file inside the repository"
    )]
    OutsideRepository {
        /// The file as the study names it.
        file: String,
        /// The study file, relative to the repository root.
        study: String,
        /// The revision as given.
        rev: String,
        /// The repository root.
        repo: String,
    },
    /// The study names its results file by an absolute path.
    #[error(
        "the results file `{file}` of {study} at `{rev}` is an absolute path, so its committed version cannot be read; expected a path relative to the study file"
    )]
    AbsoluteResults {
        /// The file as the study names it.
        file: String,
        /// The study file, relative to the repository root.
        study: String,
        /// The revision as given.
        rev: String,
    },
    /// git answered with an error this module does not expect.
    #[error("`{command}` failed: {stderr}")]
    Git {
        /// The command line.
        command: String,
        /// What git said.
        stderr: String,
    },
}

/// A study file as committed at a revision, with the files it names, held in memory.
#[derive(Debug)]
pub struct Revision {
    /// The revision as given, e.g. `HEAD~1`.
    pub rev: String,
    /// The commit it resolved to (full hash).
    pub commit: String,
    /// The repository root.
    pub repo: PathBuf,
    /// The study file relative to the repository root, `/`-separated.
    pub repo_path: String,
    /// The study file's text at that revision.
    pub text: String,
    /// The results file relative to the repository root, when the study reads one.
    pub data_path: Option<String>,
    /// The committed files, named `REV:path` in messages; give the revision to
    /// [`evaluate_revision`].
    pub files: InMemory,
}

impl Revision {
    /// How the version is named to a reader: `HEAD~1 (3f2a9c1)`.
    pub fn label(&self) -> String {
        format!("{} ({})", self.rev, short(&self.commit))
    }

    /// The study file as git names it: `HEAD~1:examples/hplc-assay/study.yaml`.
    pub fn file(&self) -> String {
        format!("{}:{}", self.rev, self.repo_path)
    }
}

fn short(commit: &str) -> &str {
    commit.get(..7).unwrap_or(commit)
}

fn git(dir: &Path, args: &[&str]) -> Result<std::process::Output, DiffError> {
    Command::new("git")
        .arg("-C")
        .arg(dir)
        .args(args)
        // Read-only: never take the index lock, never page, never ask for credentials.
        .env("GIT_OPTIONAL_LOCKS", "0")
        .env("GIT_TERMINAL_PROMPT", "0")
        .env("GIT_PAGER", "cat")
        .output()
        .map_err(|e| DiffError::GitMissing {
            cause: e.to_string(),
        })
}

fn git_text(dir: &Path, args: &[&str]) -> Result<Option<String>, DiffError> {
    let out = git(dir, args)?;
    Ok(out
        .status
        .success()
        .then(|| String::from_utf8_lossy(&out.stdout).trim().to_string()))
}

/// A path relative to the repository root made of plain names, `/`-separated; `None` when it
/// climbs out of the root.
pub(super) fn normalise(relative: &Path) -> Option<String> {
    let mut parts: Vec<String> = Vec::new();
    for c in relative.components() {
        match c {
            Component::Normal(n) => parts.push(n.to_string_lossy().to_string()),
            Component::CurDir => {}
            Component::ParentDir => {
                parts.pop()?;
            }
            Component::RootDir | Component::Prefix(_) => return None,
        }
    }
    (!parts.is_empty()).then(|| parts.join("/"))
}

/// The bytes of `file` (root-relative) at `commit`.
fn blob(root: &Path, rev: &str, commit: &str, file: &str) -> Result<Vec<u8>, DiffError> {
    let spec = format!("{commit}:{file}");
    let missing = || DiffError::NotInRevision {
        file: file.to_string(),
        rev: rev.to_string(),
        commit: short(commit).to_string(),
    };
    match git_text(root, &["cat-file", "-t", &spec])? {
        Some(kind) if kind == "blob" => {}
        _ => return Err(missing()),
    }
    // Bounded like the files themselves (the results limit, the largest input): the size is
    // asked first so a huge blob is never read into memory.
    let limit = crate::measurements::MAX_RESULTS_BYTES;
    let size = git_text(root, &["cat-file", "-s", &spec])?
        .and_then(|s| s.parse::<u64>().ok())
        .unwrap_or(u64::MAX);
    if size > limit {
        return Err(DiffError::Git {
            command: format!("git cat-file -s {spec}"),
            stderr: format!("the file is {size} bytes; expected at most {limit} bytes"),
        });
    }
    // --no-textconv: the bytes as committed, not a diff driver's rendering of them.
    let out = git(root, &["show", "--no-textconv", &spec])?;
    if !out.status.success() {
        return Err(DiffError::Git {
            command: format!("git show {spec}"),
            stderr: String::from_utf8_lossy(&out.stderr).trim().to_string(),
        });
    }
    Ok(out.stdout)
}

/// Reads the study file `path` as committed at `rev`, with the files it names from the same
/// commit, into memory under their paths relative to the repository root.
///
/// The repository is found with `git rev-parse --show-toplevel` in the study's folder, the
/// revision resolved with `git rev-parse --verify REV^{commit}`, and each file read with
/// `git show COMMIT:<path relative to the root>`. The working file need not exist (a study
/// deleted since). A study that does not load at that revision is still read: the
/// pipeline then reports its problems ([`evaluate_revision`]).
pub fn load_revision(path: &Path, rev: &str) -> Result<Revision, DiffError> {
    if rev.is_empty() || rev.starts_with('-') {
        return Err(DiffError::BadRevision {
            rev: rev.to_string(),
        });
    }
    let shown = path.display().to_string();
    let name = path.file_name().ok_or_else(|| DiffError::NoFolder {
        path: shown.clone(),
        cause: "the path names no file".to_string(),
    })?;
    let parent = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or_else(|| Path::new("."));
    let dir = parent.canonicalize().map_err(|e| DiffError::NoFolder {
        path: shown.clone(),
        cause: e.to_string(),
    })?;
    let top = git_text(&dir, &["rev-parse", "--show-toplevel"])?
        .filter(|t| !t.is_empty())
        .ok_or_else(|| DiffError::NotARepository {
            path: shown.clone(),
        })?;
    let root = PathBuf::from(&top)
        .canonicalize()
        .unwrap_or_else(|_| PathBuf::from(&top));
    let file = dir.join(name);
    // The file itself may be a symbolic link inside the tree; git stores the link, so only the
    // folder is resolved.
    let repo_path = file
        .strip_prefix(&root)
        .ok()
        .and_then(normalise)
        .ok_or_else(|| DiffError::NotARepository {
            path: shown.clone(),
        })?;
    let commit = git_text(
        &root,
        &[
            "rev-parse",
            "--verify",
            "--quiet",
            &format!("{rev}^{{commit}}"),
        ],
    )?
    .filter(|c| !c.is_empty())
    .ok_or_else(|| DiffError::UnknownRevision {
        rev: rev.to_string(),
        repo: root.display().to_string(),
    })?;

    // An absolute path names a file outside the repository, which has no committed version:
    // it is read from the disk, and the check names it if it is not there.
    let mut files = InMemory::labelled(rev).absolute_paths_from_disk();
    let bytes = blob(&root, rev, &commit, &repo_path)?;
    files.insert(&repo_path, bytes.clone());
    let text = String::from_utf8_lossy(&bytes).to_string();

    // The files the study names (results, logo, protocol lock) are read from the same commit.
    // The study is only parsed here, not checked: the check needs those files in place (a
    // logo named by the study was once missing, so the revision failed to load).
    let mut data_path = None;
    if let Ok(parsed) = crate::study::load::parse(
        &crate::study::load::decode(&bytes, &repo_path).unwrap_or_default(),
        &repo_path,
    ) {
        let data = parsed.results.as_ref().and_then(|r| r.file.clone());
        let logo = parsed.report.as_ref().and_then(|r| r.logo.clone());
        // The protocol lock as committed at that revision, so it is checked as it was.
        let lock = parsed.protocol.as_ref().map(|p| p.lock.clone());
        for (file, is_data) in [(data, true), (logo, false), (lock, false)] {
            let Some(file) = file else { continue };
            if Path::new(&file).is_absolute() {
                if is_data {
                    return Err(DiffError::AbsoluteResults {
                        file,
                        study: repo_path,
                        rev: rev.to_string(),
                    });
                }
                continue; // read from the disk (see above)
            }
            let study_dir = Path::new(&repo_path)
                .parent()
                .unwrap_or_else(|| Path::new(""));
            let in_repo =
                normalise(&study_dir.join(&file)).ok_or_else(|| DiffError::OutsideRepository {
                    file: file.clone(),
                    study: repo_path.clone(),
                    rev: rev.to_string(),
                    repo: root.display().to_string(),
                })?;
            let bytes = blob(&root, rev, &commit, &in_repo)?;
            files.insert(&in_repo, bytes);
            if is_data {
                data_path = Some(in_repo);
            }
        }
    }

    Ok(Revision {
        rev: rev.to_string(),
        commit,
        repo: root,
        repo_path,
        text,
        data_path,
        files,
    })
}

/// Runs the pipeline on a study read by [`load_revision`]; its problems name the files as
/// `REV:path`, not the temporary copies.
pub fn evaluate_revision(revision: &Revision) -> Result<Evaluated, Diagnostics> {
    pipeline::evaluate_in(&revision.files, Path::new(&revision.repo_path))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn normalise_removes_dots_and_climbs_within_the_root() {
        assert_eq!(
            normalise(Path::new("studies/a/../data/./results.csv")).as_deref(),
            Some("studies/data/results.csv")
        );
    }

    #[test]
    fn normalise_refuses_a_path_that_leaves_the_root() {
        assert_eq!(normalise(Path::new("a/../../results.csv")), None);
    }

    #[test]
    fn a_revision_that_looks_like_an_option_is_refused() {
        let e = load_revision(Path::new("study.yaml"), "--output=x").unwrap_err();
        assert!(matches!(e, DiffError::BadRevision { .. }), "{e}");
    }

    #[test]
    fn the_label_abbreviates_the_commit() {
        let r = Revision {
            rev: "HEAD~1".into(),
            commit: "3f2a9c1d0e".into(),
            repo: PathBuf::from("/r"),
            repo_path: "s/study.yaml".into(),
            text: String::new(),
            data_path: None,
            files: InMemory::new(),
        };
        assert_eq!(r.label(), "HEAD~1 (3f2a9c1)");
        assert_eq!(r.file(), "HEAD~1:s/study.yaml");
    }
}
