//! `batch`: the evening run. Every job under a folder (and its sub-folders) gets its report in
//! the same place under `--out`; a job whose inputs have not changed since its report was
//! written is skipped (the index's input hash says so) unless `--force`; a YAML file that is
//! not a job is named once and left alone; a broken job is named with its errors and the rest
//! go on. The archive index (`index.csv`, `index.json`) is written beside the reports.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use super::{load, out, read_by, render_to, template_choice, where_written, FAILURE, OK, PROBLEMS};
use crate::index::{self, Index, Row};
use crate::model::{Job, Template};

/// Folders deeper than this under the batch's folder are not searched (a shop's archive is a
/// few levels: year, month, customer).
const MAX_DEPTH: usize = 16;

pub struct Options<'a> {
    pub dir: &'a Path,
    pub out_dir: &'a Path,
    pub template: Option<String>,
    pub force: bool,
    pub quiet: bool,
    pub json: bool,
}

/// Every YAML file under `dir`, as (path, path relative to `dir`), sorted; hidden folders and
/// links to folders are not entered.
fn yaml_files(dir: &Path) -> std::io::Result<Vec<(PathBuf, PathBuf)>> {
    let mut found = Vec::new();
    let mut stack = vec![(dir.to_path_buf(), PathBuf::new(), 0usize)];
    while let Some((abs, rel, depth)) = stack.pop() {
        let entries = match std::fs::read_dir(&abs) {
            Ok(rd) => rd,
            // The top folder must be readable; a sub-folder that is not is passed over.
            Err(e) if depth == 0 => return Err(e),
            Err(_) => continue,
        };
        for e in entries.flatten() {
            let name = e.file_name();
            let Ok(kind) = e.file_type() else { continue };
            let (p, r) = (e.path(), rel.join(&name));
            if kind.is_dir() {
                if !name.to_string_lossy().starts_with('.') && depth < MAX_DEPTH {
                    stack.push((p, r, depth + 1));
                }
            } else if matches!(p.extension().and_then(|x| x.to_str()), Some("yaml") | Some("yml")) {
                found.push((p, r));
            }
        }
    }
    found.sort();
    Ok(found)
}

/// Whether a YAML file is a job: it has a top-level `voicekeep:` or `job:` key (a job that
/// lacks the version key is still a job, and `load` says what it lacks). A shop's settings
/// file and a design from the library have neither.
fn is_job(path: &Path) -> bool {
    let Ok(bytes) = crate::files::read_limited(path, crate::job::MAX_JOB_BYTES) else { return true };
    let text = String::from_utf8_lossy(&bytes);
    text.lines().any(|l| ["voicekeep:", "job:"].iter().any(|k| l.starts_with(k)))
}

/// The index a previous run wrote, by job file; empty when there is none or it cannot be read
/// (then every job is reported again).
fn previous(out_dir: &Path) -> BTreeMap<String, Row> {
    let Ok(bytes) = std::fs::read(out_dir.join(index::JSON_NAME)) else { return BTreeMap::new() };
    match serde_json::from_slice::<Index>(&bytes) {
        Ok(i) => i.jobs.into_iter().map(|r| (r.job_file.clone(), r)).collect(),
        Err(e) => {
            say_err!("voicekeep: the index {} could not be read ({e}); every job is reported again", out_dir.join(index::JSON_NAME).display());
            BTreeMap::new()
        }
    }
}

/// `a/b.yaml` with `/` between folders on every system.
fn slashed(p: &Path) -> String {
    p.components().map(|c| c.as_os_str().to_string_lossy().into_owned()).collect::<Vec<_>>().join("/")
}

enum Done {
    Reported(Row),
    Unchanged(Row),
    Failed(u8),
}

pub fn run(o: Options) -> u8 {
    use rayon::prelude::*;
    if let Some(t) = &o.template {
        if Template::built_in(t).is_none() && !t.ends_with(".typ") {
            say_err!("voicekeep: --template takes customer, archive, sale, quote, invoice or the path of a .typ file, not \"{t}\"");
            return super::USAGE;
        }
    }
    let files = match yaml_files(o.dir) {
        Ok(f) => f,
        Err(e) => {
            say_err!("voicekeep: cannot read folder {}: {e}", o.dir.display());
            return FAILURE;
        }
    };
    let (jobs, others): (Vec<_>, Vec<_>) = files.into_iter().partition(|(p, _)| is_job(p));
    let not_jobs: Vec<String> = others.iter().map(|(_, r)| slashed(r)).collect();
    if !others.is_empty() {
        let names: Vec<String> = others.iter().map(|(_, r)| slashed(r)).collect();
        say_err!(
            "voicekeep: skipped {} YAML file{} that {} not a job (no top-level `voicekeep:` or `job:`): {}",
            names.len(),
            if names.len() == 1 { "" } else { "s" },
            if names.len() == 1 { "is" } else { "are" },
            names.join(", ")
        );
    }
    if jobs.is_empty() {
        say_err!("voicekeep: no job files (*.yaml, *.yml) in {}", o.dir.display());
        return PROBLEMS;
    }
    if let Err(e) = std::fs::create_dir_all(o.out_dir) {
        say_err!("voicekeep: cannot create {}: {e}", o.out_dir.display());
        return FAILURE;
    }
    let bar = indicatif::ProgressBar::new(jobs.len() as u64);
    if o.quiet || !std::io::IsTerminal::is_terminal(&std::io::stderr()) {
        bar.set_draw_target(indicatif::ProgressDrawTarget::hidden());
    }
    // Read every job first: no report may take the place of another's, nor of anything any
    // job of the batch read, nor of the index.
    type Loaded<'p> = Vec<(&'p PathBuf, &'p PathBuf, Result<(Job, Template), u8>)>;
    let loaded: Loaded = jobs.par_iter().map(|(p, r)| (p, r, load(p).and_then(|j| template_choice(o.template.clone(), &j).map(|t| (j, t))))).collect();
    let inputs: Vec<(PathBuf, &Path)> =
        loaded.iter().filter_map(|(p, _, j)| j.as_ref().ok().map(|j| (*p, j))).flat_map(|(p, (j, _))| read_by(p, j).into_iter().map(move |i| (i, p.as_path()))).collect();
    let index_files = [index::CSV_NAME, index::JSON_NAME].map(|n| where_written(&o.out_dir.join(n)));
    if let Some((i, owner)) = inputs.iter().find(|(i, _)| index_files.contains(i)) {
        say_err!("{}: it reads {}, where the batch writes its index", owner.display(), i.display());
        say_err!("  hint: write the reports and the index to another folder with --out");
        return PROBLEMS;
    }
    let before = if o.force { BTreeMap::new() } else { previous(o.out_dir) };
    let mut taken: BTreeMap<PathBuf, &Path> = Default::default();
    type Plan<'j> = Result<(&'j Job, &'j Template, PathBuf, String), u8>;
    let mut planned: Vec<(&PathBuf, String, Plan)> = Vec::new();
    for (p, rel, job) in &loaded {
        let plan = match job {
            Err(c) => Err(*c),
            Ok((job, template)) => {
                let report_rel = rel.with_extension("pdf");
                let target = o.out_dir.join(&report_rel);
                let real = where_written(&target);
                if let Some(first) = taken.get(&real) {
                    say_err!("{}: its report would be {}, as {}'s is", p.display(), target.display(), first.display());
                    say_err!("  hint: give the two job files different names (their names less .yaml or .yml name the reports)");
                    Err(PROBLEMS)
                } else if let Some((_, owner)) = inputs.iter().find(|(i, owner)| *i == real && *owner != p.as_path()) {
                    say_err!("{}: its report would overwrite {}, which {} reads", p.display(), target.display(), owner.display());
                    say_err!("  hint: write the reports to another folder with --out");
                    Err(PROBLEMS)
                } else {
                    taken.insert(real, p.as_path());
                    Ok((job, template, target, slashed(&report_rel)))
                }
            }
        };
        planned.push((p, slashed(rel), plan));
    }
    let one = |(p, rel, plan): &(&PathBuf, String, Plan)| {
        let d = match plan {
            Err(c) => Done::Failed(*c),
            Ok((job, template, target, report_rel)) => {
                let hash = index::input_hash(job, template);
                match before.get(rel) {
                    Some(row) if row.input_sha256 == hash && row.report == *report_rel && target.is_file() => Done::Unchanged(row.clone()),
                    _ => report_one(p, rel, job, template, target, report_rel, hash, o.template.is_some()),
                }
            }
        };
        bar.inc(1);
        ((*p).clone(), rel.clone(), d)
    };
    let done = each_on_its_own_thread(&planned, one);
    bar.finish_and_clear();
    finish(&o, done, &not_jobs)
}

/// Runs `f` on every item, on as many threads as the machine has cores, each taking the next
/// item when it is free; the results in the items' order. The jobs are not rayon tasks: the
/// report engine runs its own work on rayon, and a rayon worker waiting inside one report
/// would take up another job's report on the same stack, and another inside that, until the
/// stack overflowed (a batch of 1,000 jobs did).
fn each_on_its_own_thread<T: Sync, R: Send>(items: &[T], f: impl Fn(&T) -> R + Sync) -> Vec<R> {
    use std::sync::atomic::{AtomicUsize, Ordering};
    let next = AtomicUsize::new(0);
    let slots: Vec<std::sync::Mutex<Option<R>>> = items.iter().map(|_| std::sync::Mutex::new(None)).collect();
    let threads = std::thread::available_parallelism().map(|n| n.get()).unwrap_or(2).min(items.len().max(1));
    std::thread::scope(|s| {
        for _ in 0..threads {
            let work = || loop {
                let i = next.fetch_add(1, Ordering::Relaxed);
                let Some(item) = items.get(i) else { break };
                let r = f(item);
                if let Ok(mut slot) = slots[i].lock() {
                    *slot = Some(r);
                }
            };
            // A report's layout recurses deeply: room as the main thread has.
            if std::thread::Builder::new().stack_size(64 << 20).spawn_scoped(s, work).is_err() {
                work();
            }
        }
    });
    slots.into_iter().filter_map(|m| m.into_inner().ok().flatten()).collect()
}

/// Reports one job and makes its index row.
#[allow(clippy::too_many_arguments)]
fn report_one(path: &Path, rel: &str, job: &Job, template: &Template, target: &Path, report_rel: &str, hash: String, cli_template: bool) -> Done {
    if let Some(parent) = target.parent() {
        if let Err(e) = std::fs::create_dir_all(parent) {
            say_err!("voicekeep: cannot create {}: {e}", parent.display());
            return Done::Failed(FAILURE);
        }
    }
    let arg = match template {
        Template::File { name, .. } if cli_template => Some(name.as_str()),
        _ => None,
    };
    let outcome = match render_to(path, job, template, target, arg) {
        Ok(Some(f)) => f,
        // A shop's template renders in a child process: the figures are solved here for the row.
        Ok(None) => match super::analyse(path, job) {
            Ok(f) => f,
            Err(c) => return Done::Failed(c),
        },
        Err(c) => return Done::Failed(c),
    };
    let json = crate::results::json_outcome(job, &outcome);
    Done::Reported(index::row(rel, report_rel, job, template, &json, hash))
}

/// Writes the index and the summary; the exit code.
fn finish(o: &Options, done: Vec<(PathBuf, String, Done)>, not_jobs: &[String]) -> u8 {
    let mut summary = String::new();
    let mut each = Vec::new();
    let mut rows = Vec::new();
    let (mut reported, mut unchanged, mut failed, mut worst) = (0, 0, 0, OK);
    for (p, _, d) in done {
        let (word, row) = match d {
            Done::Reported(r) => {
                reported += 1;
                ("ok       ", Some(r))
            }
            Done::Unchanged(r) => {
                unchanged += 1;
                ("unchanged", Some(r))
            }
            Done::Failed(c) => {
                failed += 1;
                worst = worst.max(c);
                ("failed   ", None)
            }
        };
        if !o.quiet || row.is_none() {
            summary.push_str(&format!("{word} {}\n", p.display()));
        }
        each.push(serde_json::json!({ "job": p.display().to_string(), "result": word.trim().replace("ok", "reported"), "report": row.as_ref().map(|r| r.report.clone()) }));
        rows.extend(row);
    }
    rows.sort_by(|a, b| a.job_file.cmp(&b.job_file));
    let idx = Index { voicekeep: crate::results::VERSION.to_string(), jobs: rows };
    for (number, files) in index::duplicate_numbers(&idx) {
        say_err!("voicekeep: job number {number} is used by {} jobs: {}", files.len(), files.join(", "));
        say_err!("  hint: give each job its own number; the index and a search by number cannot tell them apart");
        worst = worst.max(PROBLEMS);
    }
    let written = serde_json::to_vec_pretty(&idx).map_err(|e| e.to_string()).and_then(|json| {
        let csv = index::csv_text(&idx)?;
        crate::report::write_atomically(&o.out_dir.join(index::JSON_NAME), &json).map_err(|e| e.to_string())?;
        crate::report::write_atomically(&o.out_dir.join(index::CSV_NAME), &csv).map_err(|e| e.to_string())
    });
    if let Err(e) = written {
        say_err!("voicekeep: cannot write the index in {}: {e}", o.out_dir.display());
        worst = FAILURE;
    }
    let total = reported + unchanged + failed;
    summary.push_str(&format!(
        "{} of {total} jobs reported{}; index of {} jobs in {}\n",
        reported + unchanged,
        if unchanged > 0 { format!(" ({unchanged} unchanged since their reports, not redrawn)") } else { String::new() },
        idx.jobs.len(),
        o.out_dir.join(index::CSV_NAME).display(),
    ));
    let code = if o.json {
        let dups: Vec<serde_json::Value> = index::duplicate_numbers(&idx).into_iter().map(|(n, f)| serde_json::json!({ "number": n, "job_files": f })).collect();
        super::print_json(&serde_json::json!({
            "jobs": each,
            "not_jobs": not_jobs,
            "reported": reported,
            "unchanged": unchanged,
            "failed": failed,
            "duplicate_numbers": dups,
            "index": { "csv": o.out_dir.join(index::CSV_NAME).display().to_string(), "json": o.out_dir.join(index::JSON_NAME).display().to_string(), "jobs": idx.jobs.len() },
        }))
    } else {
        out(&summary)
    };
    if worst != OK {
        worst
    } else {
        code
    }
}
