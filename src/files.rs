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
    /// The file's size, when it was refused for being larger than the reader takes.
    pub too_big: Option<u64>,
}

impl FileError {
    pub fn new(file: String, reason: String) -> FileError {
        FileError { file, reason, too_big: None }
    }

    fn too_big(file: String, size: u64, max: usize) -> FileError {
        FileError { file, reason: format!("it is {} bytes, above the {} ({}) voicekeep reads for a file of this kind", size, max, in_mb(max)), too_big: Some(size) }
    }
}

/// A size limit in words: "1 MB", "16 MB".
pub fn in_mb(bytes: usize) -> String {
    format!("{} MB", bytes.div_ceil(1024 * 1024))
}

pub trait Files: Sync {
    /// The bytes of `name`, a path as the job writes it (relative to the job's folder), if
    /// it holds at most `max` bytes: a larger file is refused before it is read.
    fn read(&self, name: &str, max: usize) -> Result<Vec<u8>, FileError>;
}

/// Reads at most `max` bytes of the regular file at `path`, refusing a larger one by its
/// size before reading, and one that grows past it while being read.
pub fn read_limited(path: &Path, max: usize) -> Result<Vec<u8>, FileError> {
    use std::io::Read;
    let fail = |reason: String| FileError::new(path.display().to_string(), reason);
    let meta = std::fs::metadata(path).map_err(|e| fail(e.to_string()))?;
    // Only regular files: a pipe or a device would block the read or never end.
    if !meta.is_file() {
        return Err(fail(if meta.is_dir() { "it is a folder, not a file".into() } else { "it is not a regular file (a pipe, socket or device)".into() }));
    }
    if meta.len() > max as u64 {
        return Err(FileError::too_big(path.display().to_string(), meta.len(), max));
    }
    let file = std::fs::File::open(path).map_err(|e| fail(e.to_string()))?;
    let mut bytes = Vec::with_capacity(meta.len() as usize);
    file.take(max as u64 + 1).read_to_end(&mut bytes).map_err(|e| fail(e.to_string()))?;
    if bytes.len() > max {
        return Err(FileError::too_big(path.display().to_string(), bytes.len() as u64, max));
    }
    Ok(bytes)
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
    fn read(&self, name: &str, max: usize) -> Result<Vec<u8>, FileError> {
        let full = self.path_of(name);
        let fail = |reason: String| FileError::new(full.display().to_string(), reason);
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
        read_limited(&full, max)
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
    fn read(&self, name: &str, max: usize) -> Result<Vec<u8>, FileError> {
        let bytes = self.files.get(name).ok_or_else(|| FileError::new(name.to_string(), "no such file".into()))?;
        if bytes.len() > max {
            return Err(FileError::too_big(name.to_string(), bytes.len() as u64, max));
        }
        Ok(bytes.clone())
    }
}
