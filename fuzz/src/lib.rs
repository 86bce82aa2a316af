//! What the fuzz targets share: the sample folder's files in memory (so a fuzzed job can name
//! the samples' tables, photographs and price lists), and the checks every output must pass.

use std::path::Path;
use std::sync::OnceLock;

use voicekeep::files::MemFiles;
use voicekeep::job::LoadError;
use voicekeep::model::Job;

/// The files of `samples/`, read once.
pub fn files() -> &'static MemFiles {
    static FILES: OnceLock<MemFiles> = OnceLock::new();
    FILES.get_or_init(|| {
        let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../samples");
        let mut files = MemFiles::new();
        for entry in std::fs::read_dir(&dir).expect("the samples folder") {
            let path = entry.expect("a sample").path();
            if path.is_file() {
                let name = path.file_name().unwrap().to_string_lossy().into_owned();
                files = files.with(&name, std::fs::read(&path).expect("a sample's bytes"));
            }
        }
        files
    })
}

/// A job that names one file beside it, for the targets that fuzz that file: a driver's
/// impedance table, a response table, a price list or the shop's settings file.
pub fn job_naming(kind: &str) -> String {
    let base = "voicekeep: 1\njob: { number: F-1, date: 2026-01-01 }\namplifier: { power: 10 W, into: 8 ohm }\nnetwork:\n  input: [IN, COM]\n  parts:\n    C1: { kind: capacitor, between: [IN, H1], value: 6.8 uF, esr: 0.1 ohm }\n    L1: { kind: inductor, between: [IN, W1], value: 0.47 mH, dcr: 0.2 ohm }\n  drivers:\n    HF: { role: tweeter, between: [H1, COM], model: { resistance: 8 ohm } }\n    LF: { role: woofer, between: [W1, COM], model: { re: 6 ohm, le: 0.5 mH } }\nanalysis: { sweep: { from: 20 Hz, to: 20 kHz, per_octave: 3 } }\n";
    match kind {
        "impedance" => base.replace("model: { resistance: 8 ohm }", "model: { table: fuzzed.csv }"),
        "response" => base.replace("model: { resistance: 8 ohm } }", "model: { resistance: 8 ohm }, response: fuzzed.csv }"),
        "prices" => format!("{base}changes:\n  - replace: C1\n    with: {{ value: 6.8 uF, esr: 0.01 ohm, rating: 250 V }}\nprices: {{ list: fuzzed.csv }}\n"),
        _ => base.replace("job: { number: F-1, date: 2026-01-01 }", "job: { number: F-1, date: 2026-01-01, shop: { settings: fuzzed.yaml } }"),
    }
}

/// Loads the job of [`job_naming`] with `bytes` as its file: a job or located problems.
pub fn load_beside(kind: &str, bytes: &[u8]) -> Option<Job> {
    let name = if kind == "settings" { "fuzzed.yaml" } else { "fuzzed.csv" };
    let files = files().clone().with(name, bytes.to_vec());
    let job = job_naming(kind);
    match voicekeep::job::load_text(job.as_bytes(), "job.yaml", "job.yaml", &files) {
        Ok(job) => Some(job),
        Err(e) => {
            let text = e.to_string();
            assert!(text.starts_with("job.yaml:"), "a message that does not start with its place: {text}");
            assert!(!text.chars().any(|c| c.is_control() && c != '\n'), "a control character in a message: {text:?}");
            None
        }
    }
}

/// Loads fuzzed job text. A refusal must be located: every message line names the file,
/// a line and a column.
pub fn load(data: &[u8]) -> Option<Job> {
    match voicekeep::job::load_text(data, "job.yaml", "job.yaml", files()) {
        Ok(job) => Some(job),
        Err(e) => {
            let text = e.to_string();
            assert!(!text.trim().is_empty(), "a refusal without a message");
            if let LoadError::Problems(p) = &e {
                assert!(!p.list.is_empty(), "a refusal without a problem");
                for d in &p.list {
                    assert!(d.pos.line >= 1 && d.pos.col >= 1, "an unlocated problem: {}", d.message);
                    assert!(!d.message.trim().is_empty(), "a problem without words at {}:{}", d.pos.line, d.pos.col);
                }
                assert!(text.starts_with("job.yaml:"), "a message that does not start with its place: {text}");
            }
            None
        }
    }
}

#[path = "../../tests/it/finite.rs"]
mod finite;
pub use finite::{assert_finite_json, assert_finite_strings, assert_finite_text, writes_non_finite_words};
