//! `find`: the jobs of an archive index (`index.json`, written by `batch`) that match a job
//! number, customer, serial, design, fitted part's value or range of dates.

use std::path::{Path, PathBuf};

use super::{out, print_json, Format, PROBLEMS, USAGE};
use crate::index::{self, Index, Query};

pub struct Args {
    pub index: PathBuf,
    pub number: Option<String>,
    pub customer: Option<String>,
    pub serial: Option<String>,
    pub design: Option<String>,
    pub part: Option<String>,
    pub from: Option<String>,
    pub to: Option<String>,
    pub format: Format,
}

/// The index file: the path given, or `index.json` in the folder given.
fn index_path(p: &Path) -> PathBuf {
    if p.is_dir() {
        p.join(index::JSON_NAME)
    } else {
        p.to_path_buf()
    }
}

fn date(flag: &str, v: &Option<String>) -> Result<Option<String>, u8> {
    match v {
        None => Ok(None),
        Some(t) if crate::model::Date::parse_iso(t.trim()).is_some() => Ok(Some(t.trim().to_string())),
        Some(t) => {
            say_err!("voicekeep: {flag} takes a date written 2026-11-28, not \"{t}\"");
            Err(USAGE)
        }
    }
}

pub fn run(a: Args) -> u8 {
    let file = index_path(&a.index);
    let bytes = match crate::files::read_limited(&file, 512 * 1024 * 1024) {
        Ok(b) => b,
        Err(e) => {
            say_err!("voicekeep: cannot read the index {}: {}", file.display(), e.reason);
            say_err!("  hint: name the folder `batch --out` wrote the reports to, or its index.json");
            return PROBLEMS;
        }
    };
    let idx: Index = match serde_json::from_slice(&bytes) {
        Ok(i) => i,
        Err(e) => {
            say_err!("voicekeep: {} is not an index written by `batch`: {e}", file.display());
            say_err!("  hint: run `voicekeep batch JOBS --out REPORTS` to write one");
            return PROBLEMS;
        }
    };
    let part = match a.part.as_deref().map(index::part_query).transpose() {
        Ok(p) => p,
        Err(e) => {
            say_err!("voicekeep: --part: {e}");
            return USAGE;
        }
    };
    let (from, to) = match (date("--from", &a.from), date("--to", &a.to)) {
        (Ok(f), Ok(t)) => (f, t),
        (Err(c), _) | (_, Err(c)) => return c,
    };
    let q = Query { number: a.number, customer: a.customer, serial: a.serial, design: a.design, part, from, to };
    let hits: Vec<&index::Row> = idx.jobs.iter().filter(|r| q.matches(r)).collect();
    match a.format {
        Format::Json => print_json(&serde_json::json!({ "index": file.display().to_string(), "of": idx.jobs.len(), "jobs": hits })),
        Format::Text => {
            let folder = file.parent().unwrap_or(Path::new("."));
            let mut s = String::new();
            for r in &hits {
                let who = if r.customer_reference.is_empty() { r.customer.clone() } else { format!("{} ({})", r.customer, r.customer_reference) };
                let serials = if r.serials.is_empty() { String::new() } else { format!(", serials {}", r.serials.join(", ")) };
                s.push_str(&format!("{}  {}  {who}  {}{serials}\n    {}\n", r.number, r.date, r.speaker, folder.join(&r.report).display()));
            }
            s.push_str(&format!("{} of {} job{} in {}\n", hits.len(), idx.jobs.len(), if idx.jobs.len() == 1 { "" } else { "s" }, file.display()));
            out(&s)
        }
    }
}
