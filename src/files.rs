//! Where the study and the files it names are read from.
//!
//! Every stage that reads an input (the study file, its results CSV, its protocol lock, its
//! logo) reads it through [`Files`], so that the same pipeline runs on the working folder
//! ([`Disk`]), on a study as committed at a git revision, on a verification case or on a fuzz
//! input ([`InMemory`]) — without writing temporary copies to feed it. The idea follows the
//! `World` trait of the typst compiler, which gives its pipeline all file access through one
//! interface.

use std::collections::BTreeMap;
use std::path::{Component, Path, PathBuf};

/// Why a file could not be read; [`ReadError::problem`] and [`ReadError::expected`] are the
/// words of the diagnostic that names it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ReadError {
    /// No such file.
    NotFound,
    /// The operating system refused access.
    PermissionDenied,
    /// The path names a folder.
    Folder,
    /// A pipe, socket or device: opening one could block forever.
    NotRegular,
    /// Larger than the limit; the size when known before reading.
    TooLarge {
        /// The size on disk, `None` when the read itself overran the limit.
        size: Option<u64>,
        /// The limit, in bytes.
        limit: u64,
    },
    /// Any other failure, with the operating system's words.
    Other(String),
}

impl ReadError {
    /// What is wrong, lowercase, for a diagnostic.
    pub fn problem(&self) -> String {
        match self {
            ReadError::NotFound => "file not found".into(),
            ReadError::PermissionDenied => "permission denied".into(),
            ReadError::Folder => "is a folder".into(),
            ReadError::NotRegular => "is not a regular file (a pipe, socket or device)".into(),
            ReadError::TooLarge {
                size: Some(size), ..
            } => format!("the file is too large ({size} bytes)"),
            ReadError::TooLarge { size: None, limit } => {
                format!("the file is too large (more than {limit} bytes)")
            }
            ReadError::Other(cause) => format!("cannot read the file ({cause})"),
        }
    }

    /// What would be valid, where there is something to say.
    pub fn expected(&self) -> Option<String> {
        match self {
            ReadError::Folder => Some("expected a study file (.yaml)".into()),
            ReadError::NotRegular => Some("expected a regular file".into()),
            ReadError::TooLarge { limit, .. } => Some(format!("expected at most {limit} bytes")),
            _ => None,
        }
    }

    fn from_io(e: &std::io::Error) -> Self {
        match e.kind() {
            std::io::ErrorKind::NotFound => ReadError::NotFound,
            std::io::ErrorKind::PermissionDenied => ReadError::PermissionDenied,
            _ => ReadError::Other(e.to_string()),
        }
    }
}

/// The study and the files it names.
pub trait Files: Sync {
    /// The whole content of `path`, refused when larger than `limit` bytes before it is read
    /// into memory.
    fn read(&self, path: &Path, limit: u64) -> Result<Vec<u8>, ReadError>;

    /// How `path` is named to the reader in messages (the working file as given, or
    /// `REV:path` for a committed version).
    fn show(&self, path: &Path) -> String {
        path.display().to_string()
    }
}

/// The working folder: files as they are on disk now.
#[derive(Debug, Clone, Copy, Default)]
pub struct Disk;

impl Files for Disk {
    fn read(&self, path: &Path, limit: u64) -> Result<Vec<u8>, ReadError> {
        let meta = std::fs::metadata(path).map_err(|e| ReadError::from_io(&e))?;
        if meta.is_dir() {
            return Err(ReadError::Folder);
        }
        // Only regular files are opened: opening a FIFO blocks until someone writes to it, and
        // a device may never end.
        if !meta.is_file() {
            return Err(ReadError::NotRegular);
        }
        if meta.len() > limit {
            return Err(ReadError::TooLarge {
                size: Some(meta.len()),
                limit,
            });
        }
        // The size in the metadata is not a bound: a file still growing yields more than it
        // reported, so the read itself stops at the limit.
        let file = std::fs::File::open(path).map_err(|e| ReadError::from_io(&e))?;
        let mut bytes = Vec::new();
        std::io::Read::read_to_end(&mut std::io::Read::take(file, limit + 1), &mut bytes)
            .map_err(|e| ReadError::from_io(&e))?;
        if bytes.len() as u64 > limit {
            return Err(ReadError::TooLarge { size: None, limit });
        }
        Ok(bytes)
    }
}

/// Files held in memory, keyed by a path made of plain names (`./` and `name/..` resolved):
/// a verification case, a fuzz input, or a study as committed at a revision.
#[derive(Debug, Clone, Default)]
pub struct InMemory {
    files: BTreeMap<PathBuf, Vec<u8>>,
    label: Option<String>,
    absolute_from_disk: bool,
}

impl InMemory {
    /// No files yet.
    pub fn new() -> Self {
        Self::default()
    }

    /// Files whose messages name them as `LABEL:path` (a git revision names its files so).
    pub fn labelled(label: &str) -> Self {
        Self {
            label: Some(label.to_string()),
            ..Self::default()
        }
    }

    /// Absolute paths are read from the disk: a committed study that names a file by an
    /// absolute path names a file outside the repository, which has no committed version.
    pub fn absolute_paths_from_disk(mut self) -> Self {
        self.absolute_from_disk = true;
        self
    }

    /// Adds (or replaces) a file.
    pub fn insert(&mut self, path: impl AsRef<Path>, bytes: impl Into<Vec<u8>>) {
        self.files.insert(plain(path.as_ref()), bytes.into());
    }

    /// Adds a file, builder style.
    pub fn with(mut self, path: impl AsRef<Path>, bytes: impl Into<Vec<u8>>) -> Self {
        self.insert(path, bytes);
        self
    }
}

impl Files for InMemory {
    fn read(&self, path: &Path, limit: u64) -> Result<Vec<u8>, ReadError> {
        if self.absolute_from_disk && path.is_absolute() {
            return Disk.read(path, limit);
        }
        let bytes = self.files.get(&plain(path)).ok_or(ReadError::NotFound)?;
        if bytes.len() as u64 > limit {
            return Err(ReadError::TooLarge {
                size: Some(bytes.len() as u64),
                limit,
            });
        }
        Ok(bytes.clone())
    }

    fn show(&self, path: &Path) -> String {
        match &self.label {
            Some(label) if !(self.absolute_from_disk && path.is_absolute()) => {
                format!("{label}:{}", plain(path).display())
            }
            _ => path.display().to_string(),
        }
    }
}

/// `path` with `.` dropped and `name/..` resolved lexically (a `..` above the start is kept,
/// so it never names a file it should not).
fn plain(path: &Path) -> PathBuf {
    let mut out: Vec<Component<'_>> = Vec::new();
    for c in path.components() {
        match c {
            Component::CurDir => {}
            Component::ParentDir if matches!(out.last(), Some(Component::Normal(_))) => {
                out.pop();
            }
            other => out.push(other),
        }
    }
    out.iter().collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn memory_files_are_found_by_their_plain_path() {
        let files = InMemory::new().with("case/results.csv", "run,y\n");
        let read = files.read(Path::new("./case/x/../results.csv"), 100);
        assert_eq!(read.as_deref(), Ok(&b"run,y\n"[..]));
    }

    #[test]
    fn a_missing_memory_file_is_not_found() {
        let files = InMemory::new();
        assert_eq!(
            files.read(Path::new("a.csv"), 100),
            Err(ReadError::NotFound)
        );
    }

    #[test]
    fn a_memory_file_over_the_limit_is_refused() {
        let files = InMemory::new().with("a.csv", vec![b'x'; 11]);
        assert_eq!(
            files.read(Path::new("a.csv"), 10),
            Err(ReadError::TooLarge {
                size: Some(11),
                limit: 10
            })
        );
    }

    #[test]
    fn labelled_files_are_shown_with_their_label() {
        let files = InMemory::labelled("HEAD~1").with("examples/s.yaml", "");
        assert_eq!(
            files.show(Path::new("examples/./s.yaml")),
            "HEAD~1:examples/s.yaml"
        );
    }

    #[test]
    fn disk_refuses_a_folder() {
        let dir = tempfile::tempdir().unwrap();
        assert_eq!(Disk.read(dir.path(), 100), Err(ReadError::Folder));
    }

    #[test]
    fn disk_refuses_a_file_over_the_limit_before_reading_it() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("big.csv");
        std::fs::write(&path, vec![b'x'; 20]).unwrap();
        assert_eq!(
            Disk.read(&path, 10),
            Err(ReadError::TooLarge {
                size: Some(20),
                limit: 10
            })
        );
    }

    #[test]
    #[cfg(unix)]
    fn disk_refuses_a_device() {
        assert_eq!(
            Disk.read(Path::new("/dev/zero"), 10),
            Err(ReadError::NotRegular)
        );
    }
}
