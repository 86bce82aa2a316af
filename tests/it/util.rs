//! A small builder for CLI cases (after just's tests/test.rs): write a job, run the binary,
//! check the exit code and what it printed; on failure, dump the command and its output.

use std::path::{Path, PathBuf};
use std::process::Command;

pub fn bin() -> PathBuf {
    PathBuf::from(env!("CARGO_BIN_EXE_voicekeep"))
}

pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// A report's words (tests/it/pdf.rs), on one line with single spaces.
pub fn pdf_words(pdf: &Path) -> String {
    crate::pdf::Pdf::open(pdf).words()
}

pub fn job_from(yaml: &str) -> voicekeep::model::Job {
    voicekeep::job::load_bytes(yaml.as_bytes(), "t.yaml", "t.yaml", Path::new(".")).unwrap_or_else(|e| panic!("{e}"))
}

pub struct Cli {
    dir: tempdir::Dir,
    args: Vec<String>,
    files: Vec<(String, Vec<u8>)>,
}

pub struct Output {
    pub code: i32,
    pub stdout: String,
    pub stderr: String,
    pub dir: PathBuf,
    pub cmd: String,
}

impl Cli {
    pub fn new() -> Self {
        Cli { dir: tempdir::Dir::new(), args: Vec::new(), files: Vec::new() }
    }

    /// Writes `job.yaml` into the case's folder; `{job}` in arguments names it.
    pub fn job(self, text: &str) -> Self {
        self.file("job.yaml", text.as_bytes())
    }

    pub fn file(mut self, name: &str, bytes: &[u8]) -> Self {
        self.files.push((name.into(), bytes.to_vec()));
        self
    }

    pub fn args<const N: usize>(mut self, a: [&str; N]) -> Self {
        self.args.extend(a.iter().map(|s| s.to_string()));
        self
    }

    pub fn run(self) -> Output {
        for (n, b) in &self.files {
            std::fs::write(self.dir.path().join(n), b).unwrap();
        }
        let args: Vec<String> = self
            .args
            .iter()
            .map(|a| a.replace("{job}", &self.dir.path().join("job.yaml").display().to_string()).replace("{dir}", &self.dir.path().display().to_string()))
            .collect();
        let o = Command::new(bin()).args(&args).current_dir(root()).output().unwrap();
        let dir = self.dir.keep();
        Output {
            code: o.status.code().unwrap_or(-1),
            stdout: String::from_utf8_lossy(&o.stdout).into(),
            stderr: String::from_utf8_lossy(&o.stderr).into(),
            dir,
            cmd: format!("voicekeep {}", args.join(" ")),
        }
    }
}

impl Output {
    fn dump(&self) -> String {
        format!("command: {}\nexit: {}\n--- stdout\n{}\n--- stderr\n{}", self.cmd, self.code, self.stdout, self.stderr)
    }
    pub fn code(&self, want: i32) -> &Self {
        assert_eq!(self.code, want, "{}", self.dump());
        self
    }
    pub fn stderr_has(&self, s: &str) -> &Self {
        assert!(self.stderr.contains(s), "stderr lacks {s:?}\n{}", self.dump());
        self
    }
    /// As [`Output::stdout_has`], with runs of whitespace (a wrapped line) read as one space.
    pub fn stdout_says(&self, s: &str) -> &Self {
        let flat = self.stdout.split_whitespace().collect::<Vec<_>>().join(" ");
        assert!(flat.contains(s), "stdout lacks {s:?}\n{}", self.dump());
        self
    }
    pub fn stdout_has(&self, s: &str) -> &Self {
        assert!(self.stdout.contains(s), "stdout lacks {s:?}\n{}", self.dump());
        self
    }
}

/// Temporary folders removed at the end of the test unless kept.
pub mod tempdir {
    use std::path::{Path, PathBuf};
    use std::sync::atomic::{AtomicUsize, Ordering};

    static N: AtomicUsize = AtomicUsize::new(0);

    pub struct Dir(PathBuf, bool);

    impl Dir {
        pub fn new() -> Self {
            let p = std::env::temp_dir().join(format!("voicekeep-test-{}-{}", std::process::id(), N.fetch_add(1, Ordering::SeqCst)));
            std::fs::create_dir_all(&p).unwrap();
            Dir(p, false)
        }
        pub fn path(&self) -> &Path {
            &self.0
        }
        pub fn keep(mut self) -> PathBuf {
            self.1 = true;
            self.0.clone()
        }
    }

    impl Drop for Dir {
        fn drop(&mut self) {
            if !self.1 {
                let _ = std::fs::remove_dir_all(&self.0);
            }
        }
    }
}
