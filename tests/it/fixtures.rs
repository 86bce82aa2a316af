//! The bad-job fixtures in tests/bad/: each job file carries, in a comment at its top, the
//! place and words of every problem it must produce (`# error: LINE:COL words | more words`),
//! as typst's own tests mark their expected errors. They run in memory: the job is read
//! through `MemFiles` (with the files of a folder of the same name beside it, if any), and
//! checked the way `voicekeep check` checks it, solving included. The positions were worked
//! out from the text when each fixture was written, not from voicekeep's output.

use std::path::Path;

use voicekeep::files::MemFiles;

struct Expect {
    place: String,
    words: Vec<String>,
}

fn expectations(text: &str) -> Vec<Expect> {
    text.lines()
        .take_while(|l| l.starts_with('#'))
        .filter_map(|l| l.strip_prefix("# error: "))
        .map(|rest| {
            let (place, words) = rest.split_once(' ').unwrap_or((rest, ""));
            Expect { place: format!("job.yaml:{place}:"), words: words.split(" | ").map(|w| w.trim().to_string()).filter(|w| !w.is_empty()).collect() }
        })
        .collect()
}

/// What `check` would print for the job: its problems, or the network's if it cannot be solved.
fn problems(text: &str, files: &MemFiles) -> Option<String> {
    match voicekeep::job::load_text(text.as_bytes(), "job.yaml", "job.yaml", files) {
        Err(e) => Some(e.to_string()),
        Ok(job) => {
            voicekeep::analysis::analyse(&job).err().map(|e| voicekeep::diag::Problems { file: "job.yaml".into(), source: text.into(), list: vec![e.diagnostic(&job)] }.to_string())
        }
    }
}

#[test]
fn every_bad_job_fixture_gives_its_marked_problems() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/bad");
    let mut jobs: Vec<_> = std::fs::read_dir(&dir).unwrap().filter_map(|e| e.ok().map(|e| e.path())).filter(|p| p.extension().is_some_and(|e| e == "yaml")).collect();
    jobs.sort();
    assert!(jobs.len() >= 35, "{} fixtures", jobs.len());
    let mut failures = Vec::new();
    for path in &jobs {
        let text = std::fs::read_to_string(path).unwrap();
        let expect = expectations(&text);
        let name = path.file_name().unwrap().to_string_lossy().into_owned();
        if expect.is_empty() {
            failures.push(format!("{name}: no `# error:` line"));
            continue;
        }
        let mut files = MemFiles::new();
        if let Ok(entries) = std::fs::read_dir(path.with_extension("")) {
            for e in entries.flatten() {
                files = files.with(&e.file_name().to_string_lossy(), std::fs::read(e.path()).unwrap());
            }
        }
        let Some(out) = problems(&text, &files) else {
            failures.push(format!("{name}: the job was accepted"));
            continue;
        };
        for e in &expect {
            if !out.contains(&e.place) {
                failures.push(format!("{name}: no problem at {}\n{out}", e.place));
            }
            for w in &e.words {
                if !out.contains(w.as_str()) {
                    failures.push(format!("{name}: lacks {w:?}\n{out}"));
                }
            }
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n\n"));
}
