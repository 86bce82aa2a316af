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
