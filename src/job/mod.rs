//! Reading a job file: YAML with positions ([`yaml`]), then validation into the model
//! ([`decode`]), collecting every problem with its place.

pub mod decode;
pub mod yaml;

use std::fmt;
use std::path::Path;

use crate::diag::{Diagnostic, Problems};
use crate::model::{InputFile, Job};

#[derive(Debug)]
pub enum LoadError {
    /// The file could not be read at all.
    Io { file: String, error: std::io::Error },
    /// The file was read and has problems.
    Problems(Problems),
}

impl fmt::Display for LoadError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            LoadError::Io { file, error } => write!(f, "{file}: cannot read the job file: {error}"),
            LoadError::Problems(p) => p.fmt(f),
        }
    }
}

/// Reads and validates the job file at `path`; tables are read relative to its folder.
pub fn load(path: &Path) -> Result<Job, LoadError> {
    let file = path.display().to_string();
    let bytes = std::fs::read(path).map_err(|error| LoadError::Io { file: file.clone(), error })?;
    let base = path.parent().unwrap_or(Path::new("."));
    let name = path.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_else(|| file.clone());
    load_bytes(&bytes, &file, &name, base)
}

/// Validates job text held in memory. `display` names the file in messages; `name` is how
/// the report's appendix lists it.
pub fn load_bytes(bytes: &[u8], display: &str, name: &str, base: &Path) -> Result<Job, LoadError> {
    let problems = |list: Vec<Diagnostic>, source: &str| LoadError::Problems(Problems { file: display.to_string(), source: source.to_string(), list });
    let text = match std::str::from_utf8(bytes) {
        Ok(t) => t,
        Err(e) => {
            let line = bytes[..e.valid_up_to()].iter().filter(|b| **b == b'\n').count() + 1;
            return Err(problems(vec![Diagnostic::new(yaml::Pos { line, col: 1 }, "", "the file is not UTF-8 text").hint("save the job file as UTF-8")], ""));
        }
    };
    let root = yaml::parse(text)
        .map_err(|e| problems(vec![Diagnostic::new(e.pos, "", format!("YAML syntax: {}", e.message)).hint("check indentation (spaces, not tabs), colons and brackets")], text))?;
    let mut ctx = decode::Ctx::new(base);
    ctx.inputs.push(InputFile { name: name.to_string(), bytes: bytes.to_vec() });
    let job = decode::decode(&root, &mut ctx);
    if !ctx.diags.is_empty() {
        let mut list = ctx.diags;
        list.sort_by_key(|d| (d.pos.line, d.pos.col));
        list.dedup();
        return Err(problems(list, text));
    }
    match job {
        Some(job) => Ok(job),
        None => Err(problems(vec![Diagnostic::new(yaml::Pos { line: 1, col: 1 }, "", "internal error: the job was refused without a reason; please report this")], text)),
    }
}
