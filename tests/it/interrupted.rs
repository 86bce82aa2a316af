//! A report run killed while it writes leaves the previous report whole and no partial file.

use std::io::{BufRead, BufReader};
use std::path::Path;
use std::process::{Command, Stdio};
use std::time::Duration;

use crate::util::{bin, root};

fn listing(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir).unwrap().map(|e| e.unwrap().file_name().to_string_lossy().into_owned()).collect();
    names.sort();
    names
}

fn report(dir: &Path) -> Command {
    let mut c = Command::new(bin());
    c.current_dir(dir).args(["report", "job.yaml", "-o", "job.pdf"]);
    c
}

#[test]
fn sigkill_while_the_pdf_is_written_leaves_the_previous_report_and_nothing_else() {
    let dir = tempfile::tempdir().unwrap();
    let job = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    std::fs::write(dir.path().join("job.yaml"), &job).unwrap();
    let first = report(dir.path()).output().unwrap();
    assert!(first.status.success(), "{}", String::from_utf8_lossy(&first.stderr));
    let before = std::fs::read(dir.path().join("job.pdf")).unwrap();
    let names = listing(dir.path());
    assert_eq!(names, ["job.pdf", "job.yaml"]);

    // The job changed since (another job number), so the new report differs from the old;
    // what it would be, written elsewhere.
    let number = job.lines().find_map(|l| l.trim().strip_prefix("number: ").map(str::to_string)).expect("the sample's job number");
    let changed = job.replacen(&format!("number: {number}"), &format!("number: {number}-2"), 1);
    assert_ne!(changed, job);
    let elsewhere = tempfile::tempdir().unwrap();
    std::fs::write(elsewhere.path().join("job.yaml"), &changed).unwrap();
    assert!(report(elsewhere.path()).output().unwrap().status.success());
    let after = std::fs::read(elsewhere.path().join("job.pdf")).unwrap();
    assert_ne!(after, before);
    std::fs::write(dir.path().join("job.yaml"), &changed).unwrap();

    // Paced writing (the test hook): 16 pieces, 150 ms apart; killed after the third.
    let mut child = report(dir.path()).env("VOICEKEEP_TEST_WRITE_PAUSE_MS", "150").stderr(Stdio::piped()).spawn().unwrap();
    let mut err = BufReader::new(child.stderr.take().unwrap());
    let mut line = String::new();
    loop {
        line.clear();
        assert!(err.read_line(&mut line).unwrap() > 0, "the run ended before it wrote");
        if line.contains("writing the report in pieces") {
            break;
        }
    }
    std::thread::sleep(Duration::from_millis(400));
    assert!(child.try_wait().unwrap().is_none(), "the run finished before it was killed");
    child.kill().unwrap(); // SIGKILL on Unix: no handler, no destructor runs
    let status = child.wait().unwrap();
    assert!(!status.success());
    assert_eq!(std::fs::read(dir.path().join("job.pdf")).unwrap(), before, "the previous report is intact");
    assert_eq!(listing(dir.path()), names, "no partial file is left beside it");

    // Killed at other moments of an unpaced run: the same.
    for ms in [50, 300, 600, 900] {
        let mut child = report(dir.path()).stderr(Stdio::null()).spawn().unwrap();
        std::thread::sleep(Duration::from_millis(ms));
        child.kill().ok();
        child.wait().unwrap();
        let now = std::fs::read(dir.path().join("job.pdf")).unwrap();
        assert!(now == before || now == after, "killed after {ms} ms: the report is the old one or the whole new one");
        // Killed in the instant between linking its staging name and renaming it over the
        // report, a run leaves its staging file (as the README says), which the next run
        // writing that report removes (checked below); nothing else is left.
        let left: Vec<String> = listing(dir.path()).into_iter().filter(|n| !(n.starts_with(".job.pdf.") && n.ends_with(".voicekeep-new"))).collect();
        assert_eq!(left, names, "killed after {ms} ms");
    }

    // And uninterrupted, the paced write completes.
    let done = report(dir.path()).env("VOICEKEEP_TEST_WRITE_PAUSE_MS", "1").output().unwrap();
    assert!(done.status.success(), "{}", String::from_utf8_lossy(&done.stderr));
    assert_eq!(std::fs::read(dir.path().join("job.pdf")).unwrap(), after);
    assert_eq!(listing(dir.path()), names, "a staging file a killed run left is gone after the next run");
}
