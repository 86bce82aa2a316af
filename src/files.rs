//! The one way voicekeep reads its inputs: the job file, the tables it names and a shop's
//! template all come through [`Files`], as typst reads through its `World`. The real one
//! ([`DiskFiles`]) reads the job's folder; an in-memory one ([`MemFiles`]) serves tests, so
//! every stage after it runs without touching the disk.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// Why a file could not be read, in words for a diagnostic.
#[derive(Debug, Clone, PartialEq)]
pub struct FileError {
    /// The file as a message names it (its full path, for a file on disk).
    pub file: String,
    pub reason: String,
}

pub trait Files: Sync {
    /// The bytes of `name`, a path as the job writes it (relative to the job's folder).
    fn read(&self, name: &str) -> Result<Vec<u8>, FileError>;
}

/// The files of one folder on disk: the job's.
#[derive(Debug, Clone)]
pub struct DiskFiles {
    base: PathBuf,
    /// Whether a job may name files outside its folder (`--allow-outside`).
    outside: bool,
}

impl DiskFiles {
    /// The files of `base`, confined to it: an absolute path, `..` or a link that leads out
    /// is refused.
    pub fn new(base: &Path) -> DiskFiles {
        DiskFiles { base: base.to_path_buf(), outside: false }
    }

    /// The same, reading outside the folder too when `allow` is set.
    pub fn allowing_outside(mut self, allow: bool) -> DiskFiles {
        self.outside = allow;
        self
    }

    /// The folder of the job file at `job`.
    pub fn beside(job: &Path) -> DiskFiles {
        DiskFiles::new(job.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new(".")))
    }

    pub fn path_of(&self, name: &str) -> PathBuf {
        self.base.join(name)
    }
}

impl Files for DiskFiles {
    fn read(&self, name: &str) -> Result<Vec<u8>, FileError> {
        let full = self.path_of(name);
        let fail = |reason: String| FileError { file: full.display().to_string(), reason };
        if !self.outside {
            // Where the path really leads, links followed, against the folder's own place.
            let outside = || {
                fail("it is outside the job's folder (an absolute path, `..` or a link that leads out); voicekeep reads only the files beside the job unless run with --allow-outside".into())
            };
            if Path::new(name).is_absolute() {
                return Err(outside());
            }
            let base = std::fs::canonicalize(&self.base).map_err(|e| fail(e.to_string()))?;
            let real = std::fs::canonicalize(&full).map_err(|e| fail(e.to_string()))?;
            if !real.starts_with(&base) {
                return Err(outside());
            }
        }
        // Only regular files: a pipe or a device would block the read or never end.
        match std::fs::metadata(&full) {
            Ok(m) if !m.is_file() => return Err(fail(if m.is_dir() { "it is a folder, not a file".into() } else { "it is not a regular file (a pipe, socket or device)".into() })),
            Err(e) => return Err(fail(e.to_string())),
            Ok(_) => {}
        }
        std::fs::read(&full).map_err(|e| fail(e.to_string()))
    }
}

/// Files held in memory, by name: for tests, and for anything that has its inputs already.
#[derive(Debug, Clone, Default)]
pub struct MemFiles {
    files: BTreeMap<String, Vec<u8>>,
}

impl MemFiles {
    pub fn new() -> MemFiles {
        MemFiles::default()
    }

    pub fn with(mut self, name: &str, bytes: impl Into<Vec<u8>>) -> MemFiles {
        self.files.insert(name.to_string(), bytes.into());
        self
    }
}

impl Files for MemFiles {
    fn read(&self, name: &str) -> Result<Vec<u8>, FileError> {
        self.files.get(name).cloned().ok_or_else(|| FileError { file: name.to_string(), reason: "no such file".into() })
    }
}
