//! What a command-line user expects: every shipped sample as an example (`new --list`,
//! `--example`, `--into`), shell completions and manual pages, `--help` for every command,
//! `--quiet`, and no colour off a terminal or under NO_COLOR.

use crate::util::{bin, root, Cli};

/// The sample jobs on disk (a file with a top-level `voicekeep:` key).
fn sample_jobs() -> Vec<String> {
    let mut out: Vec<String> = std::fs::read_dir(root().join("samples"))
        .unwrap()
        .flatten()
        .map(|e| e.path())
        .filter(|p| p.extension().is_some_and(|x| x == "yaml") && std::fs::read_to_string(p).unwrap().lines().any(|l| l.starts_with("voicekeep:")))
        .map(|p| p.file_stem().unwrap().to_string_lossy().into_owned())
        .collect();
    out.sort();
    out
}

#[test]
fn every_shipped_sample_is_an_example_written_whole_or_printed_as_a_starter() {
    let list = Cli::new().args(["new", "--list"]).run();
    list.code(0);
    let samples = sample_jobs();
    assert!(samples.len() >= 8, "{samples:?}");
    for s in &samples {
        assert!(list.stdout.lines().any(|l| l == s), "{s} is not listed:\n{}", list.stdout);
        // Written whole into a folder, it checks, and each file it reads is the sample's own.
        let dir = tempfile::tempdir().unwrap();
        let into = dir.path().join("ex");
        let o = std::process::Command::new(bin()).args(["new", "--example", s, "--into"]).arg(&into).output().unwrap();
        assert!(o.status.success(), "{s}: {}", String::from_utf8_lossy(&o.stderr));
        let job = into.join(format!("{s}.yaml"));
        assert_eq!(std::fs::read(&job).unwrap(), std::fs::read(root().join(format!("samples/{s}.yaml"))).unwrap());
        let check = std::process::Command::new(bin()).arg("check").arg(&job).output().unwrap();
        assert!(check.status.success(), "{s}: {}", String::from_utf8_lossy(&check.stderr));
        for f in std::fs::read_dir(&into).unwrap().flatten() {
            assert_eq!(std::fs::read(f.path()).unwrap(), std::fs::read(root().join("samples").join(f.file_name())).unwrap(), "{s}: {:?}", f.file_name());
        }
        // Printed, a starter checks on its own; one that would need files beside it is
        // refused with the --into hint, never printed half usable.
        let o = Cli::new().args(["new", "--example", s]).run();
        match o.code {
            0 => {
                Cli::new().job(&o.stdout).args(["check", "{job}"]).run().code(0);
            }
            2 => assert!(o.stderr.contains(&format!("hint: voicekeep new --example {s} --into FOLDER")), "{s}: {}", o.stderr),
            c => panic!("{s}: exit {c}: {}", o.stderr),
        }
    }
    // Writing over a file is refused.
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("pair-recap.yaml"), "mine").unwrap();
    let o = std::process::Command::new(bin()).args(["new", "--example", "pair-recap", "--into"]).arg(dir.path()).output().unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert_eq!(std::fs::read_to_string(dir.path().join("pair-recap.yaml")).unwrap(), "mine");
    Cli::new().args(["new", "--example", "three-ways"]).run().code(2).stderr_has("choose one of:");
}

#[test]
fn completions_and_manual_pages_generate() {
    for shell in ["bash", "zsh", "fish", "elvish", "powershell"] {
        let o = Cli::new().args(["completions", shell]).run();
        o.code(0);
        assert!(o.stdout.contains("voicekeep") && o.stdout.contains("batch") && o.stdout.contains("template"), "{shell}");
    }
    Cli::new().args(["completions", "tcsh"]).run().code(2);
    let o = Cli::new().args(["manual"]).run();
    o.code(0);
    assert!(o.stdout.starts_with(".ie") && o.stdout.contains(".TH voicekeep 1") && o.stdout.contains("netlist"), "{}", &o.stdout[..200.min(o.stdout.len())]);
    let dir = tempfile::tempdir().unwrap();
    let o = std::process::Command::new(bin()).args(["manual", "--out"]).arg(dir.path()).output().unwrap();
    assert!(o.status.success());
    for page in ["voicekeep.1", "voicekeep-report.1", "voicekeep-batch.1", "voicekeep-find.1", "voicekeep-netlist.1", "voicekeep-new.1"] {
        let text = std::fs::read_to_string(dir.path().join(page)).unwrap();
        assert!(text.contains(".TH"), "{page}");
    }
}

#[test]
fn every_command_has_help_and_quiet_says_only_problems() {
    let top = Cli::new().args(["--help"]).run();
    top.code(0);
    let commands: Vec<String> = top
        .stdout
        .lines()
        .skip_while(|l| !l.starts_with("Commands:"))
        .skip(1)
        .take_while(|l| l.starts_with("  "))
        .filter_map(|l| l.split_whitespace().next().map(str::to_string))
        .filter(|c| c != "help")
        .collect();
    assert!(commands.len() >= 13, "{commands:?}");
    for c in &commands {
        let o = std::process::Command::new(bin()).args([c.as_str(), "--help"]).output().unwrap();
        let text = String::from_utf8_lossy(&o.stdout);
        assert!(o.status.success() && text.contains("Usage: voicekeep") && text.contains("--quiet"), "{c}: {text}");
    }
    let o = Cli::new().args(["report", "samples/two-way-recap.yaml", "-o", "{dir}/r.pdf", "--quiet"]).run();
    o.code(0);
    assert!(o.stdout.is_empty() && o.dir.join("r.pdf").exists(), "{}", o.stdout);
    let o = Cli::new().args(["check", "samples/two-way-recap.yaml", "-q"]).run();
    o.code(0);
    assert!(o.stdout.is_empty(), "{}", o.stdout);
}

#[test]
fn no_colour_off_a_terminal_nor_under_no_color() {
    // Off a terminal (as here) no escape sequence is written, in a refusal or in help.
    for env in [None, Some("1")] {
        let mut cmd = std::process::Command::new(bin());
        cmd.current_dir(root()).args(["check", "tests/bad/a-node-typo-gets-the-node-it-meant.yaml"]);
        if let Some(v) = env {
            cmd.env("NO_COLOR", v);
        }
        let o = cmd.output().unwrap();
        assert!(!o.stderr.contains(&0x1b) && !o.stdout.contains(&0x1b), "{:?}", String::from_utf8_lossy(&o.stderr));
    }
    // On a terminal (a pseudo-terminal from util-linux's `script`, part of every Debian
    // system) the place and the hint are coloured, and NO_COLOR takes the colour away.
    let on_terminal = |no_color: Option<&str>| {
        let line = format!("{} check tests/bad/a-node-typo-gets-the-node-it-meant.yaml", bin().display());
        let mut cmd = std::process::Command::new("script");
        cmd.current_dir(root()).args(["-qec", &line, "/dev/null"]).env_remove("NO_COLOR");
        if let Some(v) = no_color {
            cmd.env("NO_COLOR", v);
        }
        cmd.output().expect("script (util-linux) runs the command on a pseudo-terminal").stdout
    };
    let coloured = on_terminal(None);
    assert!(coloured.windows(5).any(|w| w == b"\x1b[36m"), "{}", String::from_utf8_lossy(&coloured));
    let plain = on_terminal(Some("1"));
    assert!(!plain.contains(&0x1b) && String::from_utf8_lossy(&plain).contains("hint: did you mean node `COM`?"), "{}", String::from_utf8_lossy(&plain));
}

/// `watch` reports the job, then again after each save: here a replacement capacitor's value
/// edited from 3.3 to 3.0 uF moves the tweeter's level in the summary, and a broken save is
/// said and waited out. Bounded: each step waits at most 60 s, then the watch is stopped.
#[test]
fn watch_reports_again_after_each_save() {
    use std::io::BufRead;
    let dir = tempfile::tempdir().unwrap();
    let job = dir.path().join("j.yaml");
    let text = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    std::fs::write(&job, &text).unwrap();
    let mut child = std::process::Command::new(bin())
        .current_dir(dir.path())
        .args(["watch", "j.yaml", "-o", "out.pdf"])
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    let (tx, rx) = std::sync::mpsc::channel();
    let stdout = child.stdout.take().unwrap();
    std::thread::spawn(move || {
        for line in std::io::BufReader::new(stdout).lines().map_while(Result::ok) {
            let _ = tx.send(line);
        }
    });
    let next = |want: &str| -> String {
        let line = rx.recv_timeout(std::time::Duration::from_secs(60)).unwrap_or_else(|_| panic!("no line {want:?} within 60 s"));
        assert!(line.starts_with(want), "{line}");
        line
    };
    let first = next("[1] wrote out.pdf");
    assert!(first.contains("HF -0.02 dB"), "{first}");
    assert!(dir.path().join("out.pdf").exists());
    std::fs::write(&job, text.replace("value: 3.3 uF, esr: 0.012 ohm", "value: 3.0 uF, esr: 0.012 ohm")).unwrap();
    let second = next("[2] wrote out.pdf");
    assert!(!second.contains("HF -0.02 dB") && second.contains("HF -"), "{second}");
    std::fs::write(&job, "voicekeep: 1\nnetwork: [\n").unwrap();
    next("[3] not written");
    std::fs::write(&job, &text).unwrap();
    let fourth = next("[4] wrote out.pdf");
    assert!(fourth.contains("HF -0.02 dB"), "{fourth}");
    child.kill().unwrap();
    child.wait().unwrap();
}
