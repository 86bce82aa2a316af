//! The design library: a job that names a design reads exactly as the same job with the
//! network typed in (the JSON byte for byte), a mistake in the design is told in the design
//! file at its own line, and the design is an input like any other (hashed, attached, and a
//! change to it reports the job again).

use std::path::Path;
use std::process::Command;

use crate::util::{bin, root, Cli};

fn run(dir: &Path, args: &[&str]) -> (i32, String, String) {
    let o = Command::new(bin()).current_dir(dir).args(args).output().unwrap();
    (o.status.code().unwrap_or(-1), String::from_utf8_lossy(&o.stdout).into_owned(), String::from_utf8_lossy(&o.stderr).into_owned())
}

/// A copy of tests/design in a folder of its own.
fn library() -> tempfile::TempDir {
    let d = tempfile::tempdir().unwrap();
    let src = root().join("tests/design");
    std::fs::create_dir_all(d.path().join("designs")).unwrap();
    for sub in ["", "designs"] {
        for e in std::fs::read_dir(src.join(sub)).unwrap().flatten().filter(|e| e.path().is_file()) {
            std::fs::copy(e.path(), d.path().join(sub).join(e.file_name())).unwrap();
        }
    }
    d
}

#[test]
fn a_job_using_a_design_solves_as_the_job_with_the_network_inline() {
    for (sample, by_design) in [("two-way-recap", "two-way-by-design"), ("three-way-mid-table", "three-way-by-design")] {
        let inline = Cli::new().args(["solve", &format!("samples/{sample}.yaml"), "--format", "json"]).run();
        let designed = Cli::new().args(["solve", &format!("tests/design/{by_design}.yaml"), "--format", "json"]).run();
        inline.code(0);
        designed.code(0);
        assert!(inline.stdout == designed.stdout, "{by_design}: the JSON differs from {sample}'s");
    }
}

#[test]
fn a_mistake_in_the_design_is_told_in_the_design_file() {
    let d = library();
    let design = d.path().join("designs/northwater-two-way.yaml");
    let text = std::fs::read_to_string(&design).unwrap();
    let line = text.lines().position(|l| l.contains("value: 0.27 mH")).unwrap() + 1;
    std::fs::write(&design, text.replace("value: 0.27 mH", "value: 0.27 mh")).unwrap();
    let (code, _, err) = run(d.path(), &["check", "two-way-by-design.yaml"]);
    assert_eq!(code, 1, "{err}");
    assert!(err.contains(&format!("designs/northwater-two-way.yaml:{line}:")) && err.contains("network.parts.L2.value") && err.contains("did you mean \"0.27 mH\"?"), "{err}");
    assert!(err.contains("designs/northwater-two-way.yaml: 1 problem found") && !err.contains("two-way-by-design.yaml: 1 problem"), "{err}");
    // A mistake in each: each told in its own file.
    let job = d.path().join("two-way-by-design.yaml");
    let jt = std::fs::read_to_string(&job).unwrap();
    std::fs::write(&job, jt.replace("C1: { value: 2.95 uF", "C1: { value: 2.95 uFF")).unwrap();
    let (_, _, err) = run(d.path(), &["check", "two-way-by-design.yaml"]);
    assert!(err.contains("two-way-by-design.yaml: 1 problem found") && err.contains("designs/northwater-two-way.yaml: 1 problem found"), "{err}");
    // What a design may not hold, at its own key.
    std::fs::write(&job, &jt).unwrap();
    std::fs::write(&design, format!("{text}measured:\n  C1: {{ value: 3 uF }}\n")).unwrap();
    let (_, _, err) = run(d.path(), &["check", "two-way-by-design.yaml"]);
    assert!(err.contains("a design holds `speaker` and `network`, not `measured`"), "{err}");
    // A design not in the library, at the job's `design` line.
    std::fs::write(&job, jt.replace("design: northwater-two-way", "design: northwater-2way")).unwrap();
    let (_, _, err) = run(d.path(), &["check", "two-way-by-design.yaml"]);
    let at = jt.lines().position(|l| l.starts_with("design:")).unwrap() + 1;
    assert!(err.contains(&format!("two-way-by-design.yaml:{at}:9: design: cannot read the design designs/northwater-2way.yaml")), "{err}");
    // A design and a network of the job's own.
    let net = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    let network = &net[net.find("network:").unwrap()..net.find("measured:").unwrap()];
    std::fs::write(&job, format!("{jt}\n{network}")).unwrap();
    let (_, _, err) = run(d.path(), &["check", "two-way-by-design.yaml"]);
    assert!(err.contains("names the design \"northwater-two-way\" and types a network of its own"), "{err}");
}

#[test]
fn the_settings_file_names_the_library_and_the_design_is_an_input() {
    let d = library();
    // The library moved to a folder the shop's settings file names.
    std::fs::rename(d.path().join("designs"), d.path().join("library")).unwrap();
    std::fs::write(d.path().join("shop.yaml"), "designs: library\n").unwrap();
    let job = d.path().join("two-way-by-design.yaml");
    let jt = std::fs::read_to_string(&job).unwrap();
    std::fs::write(&job, jt.replace("contact: bench@northwater.example }", "contact: bench@northwater.example, settings: shop.yaml }")).unwrap();
    let (code, _, err) = run(d.path(), &["report", "two-way-by-design.yaml", "--template", "archive", "-o", "a.pdf"]);
    assert_eq!(code, 0, "{err}");
    // The archive lists the design with its SHA-256 (sha2 over the file as on disk).
    use sha2::Digest;
    let bytes = std::fs::read(d.path().join("library/northwater-two-way.yaml")).unwrap();
    let hash: String = sha2::Sha256::digest(&bytes).iter().map(|b| format!("{b:02x}")).collect();
    let words = crate::util::pdf_words(&d.path().join("a.pdf"));
    assert!(words.contains("library/northwater-two-way.yaml") && words.contains(&hash), "the design is not among the inputs");
    // A batch skips the library (not jobs), names the design in the index, and reports the
    // job again when the design changes.
    let (_, out, err) = run(d.path(), &["batch", ".", "--out", "reports"]);
    assert!(err.contains("skipped 3 YAML files that are not a job") && err.contains("library/northwater-two-way.yaml"), "{err}");
    assert!(out.contains("ok        ./two-way-by-design.yaml"), "{out}");
    let (_, out, _) = run(d.path(), &["find", "reports", "--design", "northwater", "--format", "json"]);
    assert!(out.contains("\"design\": \"northwater-two-way\""), "{out}");
    std::fs::write(d.path().join("library/northwater-two-way.yaml"), String::from_utf8(bytes).unwrap().replace("rated_power: 40 W", "rated_power: 50 W")).unwrap();
    let (_, out, _) = run(d.path(), &["batch", ".", "--out", "reports"]);
    assert!(out.contains("ok        ./two-way-by-design.yaml"), "{out}");
}

#[test]
fn new_starts_a_job_from_a_design() {
    let d = library();
    let (code, starter, err) = run(d.path(), &["new", "--design", "northwater-two-way"]);
    assert_eq!(code, 0, "{err}");
    assert!(starter.contains("design: northwater-two-way") && starter.contains("The design's parts: C1, L2, R1, L1, C2, R2, C3; its drivers: HF, LF."), "{starter}");
    std::fs::write(d.path().join("new.yaml"), &starter).unwrap();
    let (code, out, err) = run(d.path(), &["check", "new.yaml"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("7 parts, 2 drivers"), "{out}");
    let (code, _, err) = run(d.path(), &["new", "--design", "nothing-here"]);
    assert_eq!(code, 2, "{err}");
}
