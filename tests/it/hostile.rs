//! Hostile input: jobs no honest mistake would make, each of which must exit 1 within a
//! second with a located, readable message and no panic; paths that leave the job's folder;
//! a report that would overwrite its own inputs.

use std::time::{Duration, Instant};

use crate::util::{root, Cli};

/// A small two-way job the hostile cases damage (hostile2.rs too).
pub const BASE: &str = "voicekeep: 1
job: { number: H-1, date: 2026-01-01 }
amplifier: { power: 10 W, into: 8 ohm }
network:
  input: [IN, COM]
  parts:
    C1: { kind: capacitor, between: [IN, H1], value: 6.8 uF, esr: 0.1 ohm }
    L1: { kind: inductor, between: [IN, W1], value: 0.47 mH, dcr: 0.2 ohm }
  drivers:
    HF: { role: tweeter, between: [H1, COM], model: { resistance: 8 ohm } }
    LF: { role: woofer, between: [W1, COM], model: { re: 6 ohm, le: 0.5 mH } }
analysis: { sweep: { from: 20 Hz, to: 20 kHz, per_octave: 6 } }
";

/// [`BASE`] with its first `old` replaced by `new`.
pub fn with(old: &str, new: &str) -> String {
    assert!(BASE.contains(old), "{old}");
    BASE.replacen(old, new, 1)
}

/// Each hostile job (with the table beside it, for some), and words its message must hold.
type Case = (&'static str, Vec<u8>, Option<Vec<u8>>, &'static str);

fn corpus() -> Vec<Case> {
    let s = |t: String| t.into_bytes();
    let deep = format!("{}extra: {}1{}\n", BASE, "[".repeat(40), "]".repeat(40));
    let jobs: Vec<(&'static str, Vec<u8>, &'static str)> = vec![
        ("empty file", Vec::new(), "missing `voicekeep: 1`"),
        ("binary junk", (0u8..=255).cycle().take(4096).collect(), "not UTF-8"),
        ("truncated YAML", BASE.as_bytes()[..BASE.len() / 2].to_vec(), "job.yaml:"),
        ("only a scalar", b"hello".to_vec(), "job.yaml:"),
        ("a list at the top", b"- a\n- b\n".to_vec(), "job.yaml:"),
        ("tabs for indentation", s(BASE.replace("  input", "\tinput")), "YAML syntax"),
        ("alias", s(format!("{BASE}x: &a [1, 2]\ny: *a\n")), "aliases"),
        ("alias bomb", s(format!("{BASE}a: &a [x, x, x, x, x, x, x, x, x]\nb: &b [*a, *a, *a, *a, *a, *a, *a, *a, *a]\nc: &c [*b, *b, *b, *b, *b, *b, *b, *b, *b]\nd: [*c, *c, *c, *c, *c, *c, *c, *c, *c]\n")), "aliases"),
        ("deep nesting", s(deep), "nest deeper"),
        ("duplicate key", s(format!("{BASE}analysis: {{}}\n")), "twice"),
        ("huge capacitor", s(with("value: 6.8 uF", "value: 1e30 F")), "not a plausible value for a capacitance"),
        ("tiny capacitor", s(with("value: 6.8 uF", "value: 1e-20 F")), "from 1 pF to 1 F"),
        ("tiny voice coil", s(with("re: 6 ohm", "re: 1e-15 ohm")), "not a plausible value for a resistance"),
        ("huge inductor", s(with("value: 0.47 mH", "value: 5000 H")), "from 1 nH to 10 H"),
        ("10 MHz sweep", s(with("to: 20 kHz", "to: 10 MHz")), "not a plausible value for a frequency"),
        ("NaN value", s(with("value: 6.8 uF", "value: NaN uF")), "network.parts.C1.value"),
        ("infinite value", s(with("value: 6.8 uF", "value: inf uF")), "network.parts.C1.value"),
        ("negative inductance", s(with("value: 0.47 mH", "value: -0.47 mH")), "network.parts.L1.value"),
        ("zero capacitance", s(with("value: 6.8 uF", "value: 0 uF")), "network.parts.C1.value"),
        ("absurd amplifier", s(with("power: 10 W", "power: 1e12 W")), "not a plausible value for a power"),
        ("number as a part", s(with("C1: { kind: capacitor, between: [IN, H1], value: 6.8 uF, esr: 0.1 ohm }", "C1: 42")), "network.parts.C1"),
        ("list as a value", s(with("value: 6.8 uF", "value: [6.8 uF]")), "network.parts.C1.value"),
        ("map as a date", s(with("date: 2026-01-01", "date: { y: 2026 }")), "job.date"),
        ("wrong type for parts", s(with("  parts:\n", "  parts: [a, b]\n  old_parts:\n")), "network.parts"),
        ("control characters in a reference", s(with("C1:", "C\u{7}1:")), "U+0007 (BEL)"),
        ("unicode reference", s(with("C1:", "Ç1:")), "not a usable reference"),
        ("unknown top-level key", s(format!("{BASE}netwrok: {{}}\n")), "netwrok"),
        ("a node of one terminal only", s(with("between: [IN, W1]", "between: [IN, W9]")), "node W9 is touched by L1 alone"),
        ("a second YAML document", s(format!("{BASE}---\nchanges: []\n")), "a second YAML document"),
        ("a sweep of points and a range", s(with("per_octave: 6 }", "per_octave: 6, at: [1 kHz] }")), "`from` would be ignored"),
        ("a wire link across the terminals", s(with("L1: { kind: inductor", "R0: { kind: resistor, between: [COM, IN], value: 0 ohm }\n    L1: { kind: inductor")), "would short the amplifier"),
        ("a part shorted on itself", s(with("between: [IN, H1]", "between: [IN, IN]")), "shorted out"),
        ("a driver floating", s(with("between: [W1, COM], model", "between: [X1, X2], model")), "touched by"),
        ("no drivers", s(with("    HF: { role: tweeter, between: [H1, COM], model: { resistance: 8 ohm } }\n    LF: { role: woofer, between: [W1, COM], model: { re: 6 ohm, le: 0.5 mH } }\n", "    {}\n")), "job.yaml:"),
        ("remove a part twice", s(format!("{BASE}changes:\n  - remove: C1\n  - remove: C1\n")), "changes[2]"),
        ("replace a missing part", s(format!("{BASE}changes:\n  - replace: C9\n    with: {{ value: 1 uF }}\n")), "C9"),
        ("self-referencing insert", s(format!("{BASE}changes:\n  - insert:\n      C1: {{ kind: capacitor, between: [IN, H1], value: 1 uF }}\n")), "changes[1]"),
        ("sweep of one point", s(with("from: 20 Hz, to: 20 kHz", "from: 1 kHz, to: 1 kHz")), "analysis.sweep"),
        ("text of 30000 characters", s(with("number: H-1", &format!("number: H-1, work: \"{}\"", "x".repeat(30_000)))), "above the 20000 a field may hold"),
        ("a job of 2 MB", s(format!("{BASE}# {}\n", "x".repeat(2 * 1024 * 1024))), "above the 1048576 (1 MB) a job file may be"),
        ("a 20 MB string", s(with("number: H-1", &format!("number: H-1, work: \"{}\"", "x".repeat(20 * 1024 * 1024)))), "above the 1048576 (1 MB)"),
        ("a bad date", s(with("date: 2026-01-01", "date: 2026-02-30")), "job.date"),
        ("a wrong version", s(with("voicekeep: 1", "voicekeep: 99")), "voicekeep"),
        ("40 drivers", s(with("  drivers:\n", &format!("  drivers:\n{}", (0..40).map(|i| format!("    D{i}: {{ role: woofer, between: [W1, COM], model: {{ resistance: 8 ohm }} }}\n")).collect::<String>()))), "42 drivers, above the 32"),
        ("600 nodes", s(with("  parts:\n", &format!("  parts:\n{}", (0..300).map(|i| format!("    R{i}: {{ kind: resistor, between: [A{i}, B{i}], value: 1 ohm }}\n")).collect::<String>()))), "nodes, above the 500 a network may join"),
        ("250 change steps", s(format!("{BASE}changes:\n{}", "  - replace: C1\n    with: { value: 6.8 uF }\n".repeat(250))), "250 steps, above the 200"),
        ("14 parts to fit", s(format!("{}compensate:\n{}", with("  parts:\n", &format!("  parts:\n{}", (0..14).map(|i| format!("    A{i}: {{ kind: resistor, between: [IN, H1], value: auto }}\n")).collect::<String>())), (0..14).map(|i| format!("  A{i}: {{ driver: HF }}\n")).collect::<String>())), "14 parts to fit, above the 12"),
        ("20 options", s(format!("{BASE}options:\n{}", (0..20).map(|i| format!("  o{i}: {{ changes: [] }}\n")).collect::<String>())), "20 options, above the 12"),
        ("20 cabinets", s(format!("{BASE}cabinets:\n{}", (0..20).map(|i| format!("  S{i}: {{}}\n")).collect::<String>())), "20 cabinets, above the 16"),
        ("a seed beyond 2^53", s(with("per_octave: 6 } }", "per_octave: 6 }, tolerance: { runs: 10, seed: 9007199254740993 } }")), "from 0 to 9007199254740992 (2^53)"),
        ("600 parts", s(with("  parts:\n", &format!("  parts:\n{}", (0..600).map(|i| format!("    R{i}: {{ kind: resistor, between: [IN, H1], value: 1 ohm }}\n")).collect::<String>()))), "above the 500 a network may have"),
    ];
    let mut v: Vec<Case> = jobs.into_iter().map(|(n, j, w)| (n, j, None, w)).collect();
    // Tables: NaN, empty, duplicated and unsorted frequencies, binary junk.
    let job = with("model: { resistance: 8 ohm }", "model: { table: mid.csv }").into_bytes();
    for (name, table, words) in [
        ("table with NaN", b"20,8,0\n200,NaN,0\n2000,8,0\n20000,8,0\n".to_vec(), "mid.csv"),
        ("empty table", Vec::new(), "mid.csv"),
        ("duplicated frequencies", b"20,8,0\n20,8,0\n2000,8,0\n20000,8,0\n".to_vec(), "mid.csv"),
        ("unsorted frequencies", b"2000,8,0\n20,8,0\n20000,8,0\n".to_vec(), "mid.csv"),
        ("binary table", (0u8..=255).collect(), "mid.csv"),
        ("a table of 200,000 rows", (0..200_000).map(|i| format!("{},8,0\n", 20.0 + i as f64 * 0.1)).collect::<String>().into_bytes(), "mid.csv"),
        ("a |Z| of 1e-200 ohm", b"20,8,0\n200,1e-200,0\n2000,8,0\n20000,8,0\n".to_vec(), "not a plausible impedance"),
        ("a phase of 500 degrees", b"20,8,0\n200,8,500\n2000,8,0\n20000,8,0\n".to_vec(), "within -180 to +180 deg"),
        ("a row at 10 MHz", b"20,8,0\n200,8,0\n2000,8,0\n1e7,8,0\n".to_vec(), "not a plausible frequency"),
    ] {
        v.push((name, job.clone(), Some(table), words));
    }
    v
}

#[test]
fn every_hostile_job_exits_1_quickly_with_a_located_message_and_no_panic() {
    let corpus = corpus();
    assert!(corpus.len() >= 40, "{} hostile jobs", corpus.len());
    let mut wrong = Vec::new();
    for (name, job, table, words) in &corpus {
        let mut cli = Cli::new().file("job.yaml", job);
        if let Some(t) = table {
            cli = cli.file("mid.csv", t);
        }
        let started = Instant::now();
        let o = cli.args(["check", "{job}"]).run();
        let took = started.elapsed();
        let located = o.stderr.contains("job.yaml:") || o.stderr.contains("mid.csv");
        // Readable: no message echoes a whole long line (a 30,000-character one, say).
        let readable = o.stderr.lines().all(|l| l.chars().count() <= 400);
        if took >= Duration::from_secs(1) || o.stderr.contains("panicked") || o.code != 1 || !o.stderr.contains(words) || !located || !readable {
            wrong.push(format!("{name} ({took:?}, exit {}): want \"{words}\", got: {}", o.code, o.stderr.lines().next().unwrap_or("")));
        }
    }
    assert!(wrong.is_empty(), "{}", wrong.join("\n"));
}

#[test]
fn a_table_outside_the_jobs_folder_is_refused_unless_allowed() {
    let dir = tempfile::tempdir().unwrap();
    let (inner, outer) = (dir.path().join("jobs"), dir.path().join("elsewhere"));
    std::fs::create_dir_all(&inner).unwrap();
    std::fs::create_dir_all(&outer).unwrap();
    let table = "20,8,0\n200,8,0\n2000,8,0\n20000,8,0\n";
    std::fs::write(outer.join("mid.csv"), table).unwrap();
    #[cfg(unix)]
    std::os::unix::fs::symlink(outer.join("mid.csv"), inner.join("link.csv")).unwrap();
    let abs = outer.join("mid.csv").display().to_string();
    for (how, name) in [("absolute", abs.as_str()), ("parent", "../elsewhere/mid.csv"), ("symlink", "link.csv")] {
        let job = inner.join(format!("{how}.yaml"));
        std::fs::write(&job, with("model: { resistance: 8 ohm }", &format!("model: {{ table: \"{name}\" }}"))).unwrap();
        let run = |extra: &[&str]| {
            let mut c = std::process::Command::new(env!("CARGO_BIN_EXE_voicekeep"));
            c.args(extra).arg("check").arg(&job);
            c.output().unwrap()
        };
        let o = run(&[]);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(1), "{how}: {err}");
        assert!(err.contains("outside the job's folder") && err.contains("--allow-outside") && err.contains("network.drivers.HF.model.table"), "{how}: {err}");
        let o = run(&["--allow-outside"]);
        assert_eq!(o.status.code(), Some(0), "{how} allowed: {}", String::from_utf8_lossy(&o.stderr));
    }
    // A file beside the job is read as always.
    std::fs::write(inner.join("mid.csv"), table).unwrap();
    let job = inner.join("beside.yaml");
    std::fs::write(&job, with("model: { resistance: 8 ohm }", "model: { table: mid.csv }")).unwrap();
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_voicekeep")).arg("check").arg(&job).output().unwrap();
    assert_eq!(o.status.code(), Some(0));
}

#[test]
fn a_report_never_overwrites_the_job_or_its_inputs() {
    let text = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    for target in ["{job}", "{dir}/job.yaml"] {
        let o = Cli::new().job(&text).args(["report", "{job}", "-o", target]).run();
        o.code(1).stderr_has("would overwrite").stderr_has("hint:");
        assert_eq!(std::fs::read_to_string(o.dir.join("job.yaml")).unwrap(), text, "the job is untouched");
    }
    let job = with("model: { resistance: 8 ohm }", "model: { table: mid.csv }");
    let o = Cli::new().job(&job).file("mid.csv", b"20,8,0\n200,8,0\n2000,8,0\n20000,8,0\n").args(["report", "{job}", "-o", "{dir}/mid.csv"]).run();
    o.code(1).stderr_has("would overwrite");
    assert_eq!(std::fs::read(o.dir.join("mid.csv")).unwrap(), b"20,8,0\n200,8,0\n2000,8,0\n20000,8,0\n");
}

#[test]
fn an_ill_conditioned_network_is_refused_and_explained_and_a_sound_one_beside_it_solved() {
    // A micro-ohm link feeding a 10 Mohm load: the current through the link is the difference
    // of two voltages equal to 1 part in 1e13, which double precision (about 1e-16) holds to
    // only 3 digits. Tellegen's theorem (power drawn = power taken, for any exact solution)
    // shows it.
    let net = |link: &str, load: &str| {
        format!(
            "voicekeep: 1\njob: {{ number: I-1, date: 2026-01-01 }}\namplifier: {{ power: 10 W, into: 8 ohm }}\nnetwork:\n  input: [IN, COM]\n  parts:\n    R1: {{ kind: resistor, between: [IN, A], value: {link} }}\n  drivers:\n    HF: {{ role: tweeter, between: [A, COM], model: {{ resistance: {load} }} }}\nanalysis: {{ sweep: {{ from: 20 Hz, to: 20 kHz, per_octave: 3 }} }}\n"
        )
    };
    for command in ["solve", "report"] {
        let o = Cli::new().job(&net("1 uohm", "10 Mohm")).args([command, "{job}"]).run();
        o.code(1)
            .stderr_has("job.yaml:7:5: network.R1")
            .stderr_has("too ill-conditioned to solve accurately")
            .stderr_has("R1 at 1 uohm and HF at 10 Mohm")
            .stderr_has("slip of prefix");
        assert!(!o.dir.join("job.pdf").exists(), "{command} wrote a report");
    }
    // A milliohm link into the same load: conditioned well enough, and right. The input
    // impedance is the series sum, 10 Mohm + 1 mohm, by Ohm's law.
    let o = Cli::new().job(&net("1 mohm", "10 Mohm")).args(["solve", "{job}", "--format", "json"]).run();
    o.code(0);
    let v: serde_json::Value = serde_json::from_str(&o.stdout).unwrap();
    for z in v["scenarios"]["as_designed"]["impedance"]["ohm"].as_array().unwrap() {
        let z = z.as_f64().unwrap();
        assert!((z - (10e6 + 1e-3)).abs() <= 1e-5 * 10e6, "|Z| {z}");
    }
    // The same link into a driver of 8 ohm: the samples' kind of network.
    Cli::new().job(&net("1 uohm", "8 ohm")).args(["solve", "{job}"]).run().code(0);
}

#[test]
fn near_misses_at_the_edges_of_the_plausible_ranges_solve_to_finite_results() {
    // Each value at an end of its range is accepted, and what `solve` prints keeps the JSON
    // contract, whose check asserts every number finite.
    let cases = [
        ("a 1 F capacitor", "value: 6.8 uF", "value: 1 F"),
        ("a 1 pF capacitor", "value: 6.8 uF", "value: 1 pF"),
        ("a 10 H inductor", "value: 0.47 mH", "value: 10 H"),
        ("a 1 nH inductor", "value: 0.47 mH", "value: 1 nH"),
        ("no ESR", "esr: 0.1 ohm", "esr: 0 ohm"),
        ("a micro-ohm DCR", "dcr: 0.2 ohm", "dcr: 1 uohm"),
        ("a 10 Mohm driver", "resistance: 8 ohm", "resistance: 10 Mohm"),
        ("a 0.1 Hz to 1 MHz sweep", "from: 20 Hz, to: 20 kHz, per_octave: 6", "from: 0.1 Hz, to: 1 MHz, per_octave: 1"),
        ("a 100 kW amplifier", "power: 10 W", "power: 100 kW"),
        ("a 1 mW amplifier", "power: 10 W", "power: 1 mW"),
    ];
    let mut wrong = Vec::new();
    for (name, old, new) in cases {
        let o = Cli::new().job(&with(old, new)).args(["solve", "{job}", "--format", "json"]).run();
        if o.code != 0 {
            wrong.push(format!("{name}: exit {}: {}", o.code, o.stderr.lines().next().unwrap_or("")));
            continue;
        }
        for p in crate::contract::problems_in(&o.stdout) {
            wrong.push(format!("{name}: {p}"));
        }
    }
    assert!(wrong.is_empty(), "{}", wrong.join("\n"));
}

#[test]
#[cfg(unix)]
fn a_pipe_for_a_table_is_refused_not_waited_on_and_a_bom_is_no_part_of_a_file() {
    let dir = tempfile::tempdir().unwrap();
    let made = std::process::Command::new("mkfifo").arg(dir.path().join("mid.csv")).status().expect("mkfifo (coreutils)");
    assert!(made.success());
    std::fs::write(dir.path().join("job.yaml"), with("model: { resistance: 8 ohm }", "model: { table: mid.csv }")).unwrap();
    let started = Instant::now();
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_voicekeep")).arg("check").arg(dir.path().join("job.yaml")).output().unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(started.elapsed() < Duration::from_secs(5), "waited on the pipe");
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("not a regular file") && err.contains("network.drivers.HF.model.table"), "{err}");
    // A byte-order mark before the job and before a table: read as the text after it.
    let bom = |t: &str| [b"\xef\xbb\xbf".as_slice(), t.as_bytes()].concat();
    let o = Cli::new()
        .file("job.yaml", &bom(&with("model: { resistance: 8 ohm }", "model: { table: mid.csv }")))
        .file("mid.csv", &bom("frequency,ohm,phase\n20,8,0\n200,8,0\n2000,8,0\n20000,8,0\n"))
        .args(["check", "{job}"])
        .run();
    o.code(0);
    // A table whose first row is numbers keeps that row after a byte-order mark.
    let o = Cli::new()
        .file("job.yaml", with("model: { resistance: 8 ohm }", "model: { table: mid.csv }").as_bytes())
        .file("mid.csv", &bom("20,8,0\n20000,8,0\n"))
        .args(["check", "{job}"])
        .run();
    o.code(0);
}

#[test]
#[cfg(unix)]
fn a_report_never_takes_the_place_of_a_device_or_a_folder() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("job.yaml"), BASE).unwrap();
    std::fs::create_dir(dir.path().join("out.pdf")).unwrap();
    // A pipe stands for a device here: a test must not risk /dev/null itself.
    assert!(std::process::Command::new("mkfifo").arg(dir.path().join("pipe.pdf")).status().unwrap().success());
    for target in [dir.path().join("out.pdf"), dir.path().join("pipe.pdf")] {
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_voicekeep")).arg("report").arg(dir.path().join("job.yaml")).arg("-o").arg(&target).output().unwrap();
        let err = String::from_utf8_lossy(&o.stderr);
        assert_ne!(o.status.code(), Some(0), "{}: {err}", target.display());
        assert!(err.contains("not a regular file"), "{}: {err}", target.display());
    }
    assert!(dir.path().join("out.pdf").is_dir());
    use std::os::unix::fs::FileTypeExt;
    assert!(std::fs::metadata(dir.path().join("pipe.pdf")).unwrap().file_type().is_fifo(), "the pipe is still a pipe");
}

#[test]
fn batch_and_plot_never_write_over_each_others_reports_or_any_jobs_inputs() {
    let run = |dir: &std::path::Path, args: &[&str]| {
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_voicekeep")).current_dir(dir).args(args).output().unwrap();
        (o.status.code(), String::from_utf8_lossy(&o.stdout).into_owned(), String::from_utf8_lossy(&o.stderr).into_owned())
    };
    // Two jobs whose names would give the same report: the second in order is refused.
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("good.yaml"), BASE).unwrap();
    std::fs::write(dir.path().join("good.yml"), BASE.replace("number: H-1", "number: H-2")).unwrap();
    std::fs::write(dir.path().join("good.pdf.yaml"), BASE.replace("number: H-1", "number: H-3")).unwrap();
    let (code, out, err) = run(dir.path(), &["batch", ".", "--out", "."]);
    assert_eq!(code, Some(1), "{out}{err}");
    assert!(err.contains("good.yml: its report would be ./good.pdf, as ./good.yaml's is"), "{err}");
    assert!(out.contains("2 of 3 jobs reported"), "{out}");
    let words = crate::util::pdf_words(&dir.path().join("good.pdf"));
    assert!(words.contains("H-1") && !words.contains("H-2"), "good.pdf is good.yaml's");
    assert!(dir.path().join("good.pdf.pdf").exists(), "good.pdf.yaml's report is named as `report` names it");

    // A job whose table is named like another job's report.
    let dir = tempfile::tempdir().unwrap();
    let table = "20,8,0\n200,8,0\n2000,8,0\n20000,8,0\n";
    std::fs::write(dir.path().join("b.pdf"), table).unwrap();
    std::fs::write(dir.path().join("a.yaml"), with("model: { resistance: 8 ohm }", "model: { table: b.pdf }")).unwrap();
    std::fs::write(dir.path().join("b.yaml"), BASE).unwrap();
    let (code, _, err) = run(dir.path(), &["batch", ".", "--out", "."]);
    assert_eq!(code, Some(1), "{err}");
    assert!(err.contains("b.yaml: its report would overwrite ./b.pdf, which ./a.yaml reads"), "{err}");
    assert_eq!(std::fs::read_to_string(dir.path().join("b.pdf")).unwrap(), table, "the table is untouched");

    // A plot named like the job's own table.
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("j-response.svg"), table).unwrap();
    std::fs::write(dir.path().join("j.yaml"), with("model: { resistance: 8 ohm }", "model: { table: j-response.svg }")).unwrap();
    let (code, _, err) = run(dir.path(), &["plot", "j.yaml", "--out", "."]);
    assert_eq!(code, Some(1), "{err}");
    assert!(err.contains("the plot would overwrite ./j-response.svg, one of the job's own inputs"), "{err}");
    assert_eq!(std::fs::read_to_string(dir.path().join("j-response.svg")).unwrap(), table);

    // The hint for a report that would overwrite an input names a file that is not one.
    std::fs::write(dir.path().join("j.pdf"), table).unwrap();
    std::fs::write(dir.path().join("j.yaml"), with("model: { resistance: 8 ohm }", "model: { table: j.pdf }")).unwrap();
    let (code, _, err) = run(dir.path(), &["report", "j.yaml"]);
    assert_eq!(code, Some(1), "{err}");
    assert!(err.contains("such as -o j-report.pdf"), "{err}");
}

#[test]
fn a_part_to_fit_that_is_not_in_its_drivers_path_is_refused_not_fitted() {
    // The two-way sample's R9 sits at the input of the tweeter's filter; told to restore the
    // woofer with it, the fit's search is flat (the woofer's level hangs only on the
    // amplifier's 0.05 ohm output impedance) and once "fitted" 27 ohm, dropping the tweeter
    // 13.5 dB. Across R9's whole range the woofer moves 0.05 dB: refused, at R9's line.
    let job = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap().replacen("  R9: { driver: HF", "  R9: { driver: LF", 1);
    let line = 1 + job.lines().position(|l| l.trim_start().starts_with("R9: { kind: resistor")).unwrap();
    for command in ["check", "solve"] {
        let o = Cli::new().job(&job).args([command, "{job}"]).run();
        o.code(1)
            .stderr_has(&format!("job.yaml:{line}:7: network.R9: as left: R9 cannot set LF's level"))
            .stderr_has("so it is not in LF's path")
            .stderr_has("hint: name in `compensate` the driver");
    }
    // Its own driver, as the sample has it: fitted.
    Cli::new().args(["check", "samples/two-way-recap.yaml"]).run().code(0);
}
