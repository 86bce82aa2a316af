//! `check --format json`: the verdict for other programs: `ok`, the job's size, and each
//! problem and warning with its file, line, column, field, message and hint.

use std::path::Path;

use serde_json::{json, Value};

use super::{print_json, FAILURE, OK, OUTSIDE, PROBLEMS};
use crate::diag::{Diagnostic, Problems};
use crate::job::LoadError;

fn each(file: &str, list: &[Diagnostic]) -> Vec<Value> {
    list.iter().map(|d| json!({ "file": file, "line": d.pos.line, "column": d.pos.col, "field": d.field, "message": d.message, "hint": d.hint })).collect()
}

fn all(p: &[Problems]) -> Vec<Value> {
    p.iter().flat_map(|p| each(&p.file, &p.list)).collect()
}

pub fn run(path: &Path) -> u8 {
    let file = path.display().to_string();
    let refused = |problems: Vec<Value>| {
        let code = print_json(&json!({ "file": file, "ok": false, "problems": problems, "warnings": [] }));
        if code == OK {
            PROBLEMS
        } else {
            code
        }
    };
    let job = match crate::job::load_allowing(path, OUTSIDE.load(std::sync::atomic::Ordering::Relaxed)) {
        Ok(j) => j,
        Err(LoadError::Problems(p)) => return refused(all(&[p])),
        Err(LoadError::Several(list)) => return refused(all(&list)),
        Err(LoadError::Io { file, error }) => {
            print_json(&json!({ "file": file, "ok": false, "problems": [{ "file": file, "message": format!("cannot read the job file: {error}") }], "warnings": [] }));
            return FAILURE;
        }
    };
    let warnings = each(&file, &job.warnings);
    match crate::analysis::analyse_job(&job, &crate::analysis::Quiet) {
        Ok(_) => print_json(&json!({
            "file": file,
            "ok": true,
            "parts": job.network.parts.len(),
            "drivers": job.network.drivers.len(),
            "change_steps": job.changes.len(),
            "cabinets": job.cabinets.len(),
            "design": job.design,
            "problems": [],
            "warnings": warnings,
        })),
        Err(e) => {
            let code = print_json(&json!({ "file": file, "ok": false, "problems": each(&file, &[e.diagnostic(&job)]), "warnings": warnings }));
            if code == OK {
                PROBLEMS
            } else {
                code
            }
        }
    }
}
