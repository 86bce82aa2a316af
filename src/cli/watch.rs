//! `watch`: reports a job, then again each time the job file or a file it reads is saved,
//! printing a summary each time; for the technician who keeps the PDF open beside the editor.
//! A job that stops checking is said, and the watch goes on until it checks again.

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};
use std::sync::mpsc;
use std::time::Duration;

use notify::{EventKind, RecursiveMode, Watcher};

use super::{out, read_by, report_job, FAILURE, USAGE};
use crate::analysis::Outcome;
use crate::model::Job;

/// How long the files must stay quiet after a save before the job is read again: an editor
/// writes a file in several steps (a temporary file, a rename).
const SETTLE: Duration = Duration::from_millis(200);

/// One line per driver and the power figure: what changed, at a glance.
fn summary(job: &Job, o: &Outcome) -> String {
    let worked = job.work_done();
    let levels = |f: &crate::analysis::Findings| {
        f.levels
            .iter()
            .map(|l| {
                let v = if worked { l.as_left_db } else { l.as_found_db };
                let fault = if worked { l.as_left_fault } else { l.as_found_fault };
                if fault {
                    format!("{} silent (a fault)", l.driver)
                } else {
                    format!("{} {v:+.2} dB", l.driver)
                }
            })
            .collect::<Vec<_>>()
            .join(", ")
    };
    let (each, power) = match o {
        Outcome::One(f) => (levels(f), f.power.suits_w),
        Outcome::Set(s) => (
            s.cabinets.iter().map(|c| format!("{}: {}", c.name, levels(&c.findings))).collect::<Vec<_>>().join("; "),
            s.cabinets.iter().filter_map(|c| c.findings.power.suits_w).reduce(f64::min),
        ),
    };
    let power = power.map(|w| format!("; suits up to {} W", crate::units::trim_number(w, 3))).unwrap_or_default();
    format!("{} against the design{}: {each}{power}", if worked { "as left" } else { "as found" }, if matches!(o, Outcome::Set(_)) { ", by cabinet" } else { "" })
}

pub fn run(path: &Path, output: Option<PathBuf>, template: Option<String>) -> u8 {
    if path.as_os_str() == "-" {
        say_err!("voicekeep: watch reads a job file again each time it is saved, and standard input is read once");
        say_err!("  hint: save the job to a file and watch that");
        return USAGE;
    }
    let (tx, rx) = mpsc::channel();
    let mut watcher = match notify::recommended_watcher(tx) {
        Ok(w) => w,
        Err(e) => {
            say_err!("voicekeep: cannot watch files on this system: {e}");
            return FAILURE;
        }
    };
    let mut folders: BTreeSet<PathBuf> = BTreeSet::new();
    let job_file = std::fs::canonicalize(path).unwrap_or_else(|_| path.to_path_buf());
    let mut watched: BTreeSet<PathBuf> = [job_file.clone()].into();
    // The job's own folder is watched before the first report, so no save is missed.
    let home = job_file.parent().unwrap_or(Path::new(".")).to_path_buf();
    if let Err(e) = watcher.watch(&home, RecursiveMode::NonRecursive) {
        say_err!("voicekeep: cannot watch {}: {e}", home.display());
        return FAILURE;
    }
    folders.insert(home);
    let mut round = 0u64;
    loop {
        round += 1;
        let said = match report_job(path, output.clone(), template.clone()) {
            Ok((job, outcome, target)) => {
                watched = read_by(path, &job).into_iter().chain(std::iter::once(job_file.clone())).collect();
                let said = outcome.map(|o| format!(" ({})", summary(&job, &o))).unwrap_or_default();
                format!("[{round}] wrote {}{said}\n", target.display())
            }
            // The refusal is said; the watch waits for the next save.
            Err(_) => format!("[{round}] not written: the problems are above; watching for the next save\n"),
        };
        // Each folder of a watched file, watched once: an editor replaces a file by renaming
        // a new one over it, which a watch on the file itself would miss.
        for f in &watched {
            let dir = f.parent().unwrap_or(Path::new(".")).to_path_buf();
            if folders.insert(dir.clone()) {
                if let Err(e) = watcher.watch(&dir, RecursiveMode::NonRecursive) {
                    say_err!("voicekeep: cannot watch {}: {e}", dir.display());
                    return FAILURE;
                }
            }
        }
        // Said once every file is watched, so a save made on reading it is not missed.
        out(&said);
        // Wait for a save of a watched file, then for the files to settle.
        let touches = |ev: &notify::Result<notify::Event>| match ev {
            Ok(e) => {
                matches!(e.kind, EventKind::Create(_) | EventKind::Modify(_) | EventKind::Remove(_))
                    && e.paths.iter().any(|p| watched.contains(&std::fs::canonicalize(p).unwrap_or_else(|_| p.clone())))
            }
            Err(_) => false,
        };
        loop {
            match rx.recv() {
                Ok(ev) if touches(&ev) => break,
                Ok(_) => continue,
                Err(_) => return FAILURE,
            }
        }
        while rx.recv_timeout(SETTLE).is_ok() {}
    }
}
