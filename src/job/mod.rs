//! Reading a job file, in two stages as ripgrep reads its flags: [`parse`] turns the
//! positioned YAML tree ([`yaml`]) into the raw job ([`raw`]), reporting problems of shape;
//! [`build`] resolves its names, reads its tables and template through [`Files`] and checks
//! the scenarios ([`checks`]), giving the validated [`Job`]. Every problem of both stages is
//! collected, with its place, so a technician fixes the whole file in one pass.
//!
//! | file | what it holds |
//! | --- | --- |
//! | `yaml.rs` | the YAML tree with every node's line and column |
//! | `reader.rs` | the reading context and its primitives (fields, values, choices) |
//! | `fields.rs` | field groups both stages read: a part, its value fields, a driver, a model |
//! | `raw.rs`, `parse.rs` | the raw job and the parse stage |
//! | `tables.rs` | the tables a job names |
//! | `build.rs`, `checks.rs` | the build stage and the whole-network checks |
//! | `readings.rs` | bench readings of parts and drivers, and values far from the design's |

pub mod build;
pub mod checks;
pub mod design;
pub mod fields;
pub mod parse;
pub mod raw;
pub mod reader;
pub mod readings;
pub mod service;
pub mod tables;
pub mod terminals;
pub mod yaml;

use std::fmt;
use std::path::Path;

use crate::diag::{Diagnostic, Pos, Problems};
use crate::files::{DiskFiles, Files};
use crate::model::{InputFile, Job};

#[derive(Debug)]
pub enum LoadError {
    /// The file could not be read at all.
    Io { file: String, error: String },
    /// The file was read and has problems.
    Problems(Problems),
    /// The job and the design it names both have problems, each told in its own file.
    Several(Vec<Problems>),
}

impl fmt::Display for LoadError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            LoadError::Io { file, error } => write!(f, "{file}: cannot read the job file: {error}"),
            LoadError::Problems(p) => p.fmt(f),
            LoadError::Several(list) => {
                for (i, p) in list.iter().enumerate() {
                    if i > 0 {
                        writeln!(f)?;
                    }
                    p.fmt(f)?;
                }
                Ok(())
            }
        }
    }
}

/// The largest job file voicekeep reads (a large three-way job is about 10 KB).
pub const MAX_JOB_BYTES: usize = 1024 * 1024;

/// Reads and validates the job file at `path`; its tables and template are read from its folder.
pub fn load(path: &Path) -> Result<Job, LoadError> {
    load_allowing(path, false)
}

/// As [`load`]; with `outside` the job may name files outside its folder. The path may be
/// any name the system allows (not UTF-8 too); `-` reads the job from standard input, its
/// tables from the current folder.
pub fn load_allowing(path: &Path, outside: bool) -> Result<Job, LoadError> {
    if path.as_os_str() == "-" {
        let bytes = read_stdin()?;
        return load_text(&bytes, STDIN_NAME, "standard-input.yaml", &DiskFiles::new(Path::new(".")).allowing_outside(outside));
    }
    let files = DiskFiles::beside(path).allowing_outside(outside);
    let name = path.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_else(|| path.display().to_string());
    let display = path.display().to_string();
    // Read by its own path, so a name that is not UTF-8 is found as it is.
    match crate::files::read_limited(path, MAX_JOB_BYTES) {
        Ok(bytes) => load_text(&bytes, &display, &name, &files),
        Err(e) => Err(read_error(e, &display)),
    }
}

/// How a message names a job read from standard input.
pub const STDIN_NAME: &str = "<standard input>";

/// A job file piped in, at most [`MAX_JOB_BYTES`] of it read.
fn read_stdin() -> Result<Vec<u8>, LoadError> {
    use std::io::Read;
    let mut bytes = Vec::new();
    std::io::stdin().lock().take(MAX_JOB_BYTES as u64 + 1).read_to_end(&mut bytes).map_err(|e| LoadError::Io { file: STDIN_NAME.into(), error: e.to_string() })?;
    if bytes.len() > MAX_JOB_BYTES {
        return Err(too_big(STDIN_NAME, None));
    }
    Ok(bytes)
}

/// A job file over the size limit, refused as a problem of the job (exit 1).
fn too_big(display: &str, size: Option<u64>) -> LoadError {
    let size = size.map(|n| format!("{n} bytes")).unwrap_or_else(|| "more than that".into());
    LoadError::Problems(Problems {
        file: display.to_string(),
        source: String::new(),
        list: vec![Diagnostic::new(Pos::START, "", format!("the job file is {size}, above the {} (1 MB) a job file may be", MAX_JOB_BYTES))
            .hint("a job file holds one speaker's network, readings and changes; tables and photographs go in files beside it")],
    })
}

fn read_error(e: crate::files::FileError, display: &str) -> LoadError {
    match e.too_big {
        Some(n) => too_big(display, Some(n)),
        None => LoadError::Io { file: display.to_string(), error: e.reason },
    }
}

/// Reads and validates the job `name` from `files`; `display` names it in messages.
pub fn load_with(files: &dyn Files, name: &str, display: &str) -> Result<Job, LoadError> {
    let bytes = files.read(name, MAX_JOB_BYTES).map_err(|e| read_error(e, display))?;
    load_text(&bytes, display, name, files)
}

/// Validates job text held in memory, reading its tables from `base`. `display` names the
/// file in messages; `name` is how the report's appendix lists it.
pub fn load_bytes(bytes: &[u8], display: &str, name: &str, base: &Path) -> Result<Job, LoadError> {
    load_text(bytes, display, name, &DiskFiles::new(base))
}

/// Validates job text held in memory, reading what it names from `files`.
pub fn load_text(bytes: &[u8], display: &str, name: &str, files: &dyn Files) -> Result<Job, LoadError> {
    let problems = |list: Vec<Diagnostic>, source: &str| LoadError::Problems(Problems { file: display.to_string(), source: source.to_string(), list });
    if bytes.len() > MAX_JOB_BYTES {
        return Err(too_big(display, Some(bytes.len() as u64)));
    }
    let text = match std::str::from_utf8(bytes) {
        Ok(t) => t,
        Err(e) => {
            let line = bytes[..e.valid_up_to()].iter().filter(|b| **b == b'\n').count() + 1;
            return Err(problems(vec![Diagnostic::new(Pos { line, col: 1 }, "", "the file is not UTF-8 text").hint("save the job file as UTF-8")], ""));
        }
    };
    // A byte-order mark, as some editors write, is not part of the first key.
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    // A control character would be read as nothing or, a NUL, end the file for the YAML
    // reader there, silently dropping what follows: refused where it stands.
    if let Some(((line, col), c)) = crate::text::first_forbidden(text) {
        return Err(problems(
            vec![Diagnostic::new(Pos { line, col }, "", format!("the job file holds {}, a character no job file may hold", crate::text::name_of(c)))
                .hint("remove it (a stray control character, often from a copy and paste or a binary file); a NUL would end the file there for a YAML reader, dropping everything after it")],
            text,
        ));
    }
    let mut root = yaml::parse(text).map_err(|e| {
        let hint = if e.message.starts_with("a second YAML document") {
            "remove the `---` line and what follows it, or put it in a job file of its own"
        } else if e.message.starts_with("a YAML tag") {
            "remove the tag and write the value as plain text, as the README's job-file reference shows"
        } else if e.message.starts_with("a YAML directive") {
            "remove the line"
        } else {
            "check indentation (spaces, not tabs), colons and brackets"
        };
        problems(vec![Diagnostic::new(e.pos, "", format!("YAML syntax: {}", e.message)).hint(hint)], text)
    })?;
    let mut ctx = reader::Ctx::new(files);
    ctx.inputs.push(InputFile { name: name.to_string(), bytes: bytes.to_vec() });
    // A design from the shop's library takes the place of the job's network.
    let design = design::splice(&mut root, display, files, &mut ctx.inputs).map_err(LoadError::Problems)?;
    let job = parse::parse(&root, &mut ctx).and_then(|raw| build::build(raw, &mut ctx));
    if !ctx.diags.is_empty() {
        let mut list = ctx.diags;
        list.sort_by_key(|d| (d.pos.line, d.pos.col));
        list.dedup();
        let Some(d) = &design else { return Err(problems(list, text)) };
        return Err(match design::split(list, display, d) {
            (ours, None) => problems(ours, text),
            (ours, Some(theirs)) if ours.is_empty() => LoadError::Problems(theirs),
            (ours, Some(theirs)) => LoadError::Several(vec![Problems { file: display.to_string(), source: text.to_string(), list: ours }, theirs]),
        });
    }
    match job {
        Some(mut job) => {
            job.design = design.map(|d| d.name);
            job.inputs = ctx.inputs;
            job.warnings = ctx.warnings;
            Ok(job)
        }
        None => Err(problems(vec![Diagnostic::new(Pos::START, "", "internal error: the job was refused without a reason; please report this")], text)),
    }
}

/// Reads an impedance table (frequency Hz, |Z| ohm, phase deg) on its own, as a job's tables
/// are read: for fitting a driver from its sweep. Problems come back as located messages.
pub fn read_impedance_table(path: &Path) -> Result<crate::model::ImpedanceTable, String> {
    let dir = path.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new("."));
    let name = path.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default();
    let files = DiskFiles::new(dir);
    let mut ctx = reader::Ctx::new(&files);
    let r = raw::TableRef { name, pos: Pos::START, field: "sweep".into() };
    let t = ctx.impedance_table(&r);
    match t {
        Some(t) if ctx.diags.is_empty() => Ok(t),
        // No job here: a hint about the job's folder would mislead.
        _ => Err(ctx
            .diags
            .iter()
            .map(|d| {
                format!("{}: {}{}", path.display(), d.message, d.hint.as_ref().filter(|h| !h.contains("job file's folder")).map(|h| format!("\n  hint: {h}")).unwrap_or_default())
            })
            .collect::<Vec<_>>()
            .join("\n")),
    }
}
