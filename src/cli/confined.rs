//! Drawing a report with a shop's own template in a child process with limits: at most
//! [`SECONDS`] seconds and, on Linux, [`MEMORY`] bytes of address space.

use std::io::Read;
use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use super::{CONFINED, FAILURE, OK, OUTSIDE, PROBLEMS};

/// The longest a report with a shop's template may take to draw.
pub const SECONDS: u64 = 20;
/// The most address space the drawing may use (the built-in templates need a few hundred MB).
pub const MEMORY: u64 = 1024 * 1024 * 1024;

/// In the child: the limit on its own address space.
pub fn limit_memory() {
    #[cfg(target_os = "linux")]
    {
        use rustix::process::{setrlimit, Resource, Rlimit};
        let _ = setrlimit(Resource::As, Rlimit { current: Some(MEMORY), maximum: Some(MEMORY) });
    }
}

/// In the parent: runs `voicekeep report` for the job in a child and waits for it, within
/// the limits; its messages are passed on, and a child stopped is said in words.
pub fn render(path: &Path, template: &str, template_arg: Option<&str>, target: &Path) -> Result<(), u8> {
    let exe = match std::env::current_exe() {
        Ok(e) => e,
        Err(e) => {
            say_err!("voicekeep: cannot start the template's drawing: {e}");
            return Err(FAILURE);
        }
    };
    let mut cmd = Command::new(exe);
    if OUTSIDE.load(std::sync::atomic::Ordering::Relaxed) {
        cmd.arg("--allow-outside");
    }
    cmd.arg("report").arg(path).arg("-o").arg(target);
    if let Some(t) = template_arg {
        cmd.arg("--template").arg(t);
    }
    cmd.env(CONFINED, "1").stdin(Stdio::null()).stdout(Stdio::null()).stderr(Stdio::piped());
    let mut child = match cmd.spawn() {
        Ok(c) => c,
        Err(e) => {
            say_err!("voicekeep: cannot start the template's drawing: {e}");
            return Err(FAILURE);
        }
    };
    let mut stderr = child.stderr.take();
    let reader = std::thread::spawn(move || {
        let mut text = String::new();
        if let Some(s) = stderr.as_mut() {
            let _ = s.take(1 << 20).read_to_string(&mut text);
        }
        text
    });
    let start = Instant::now();
    let status = loop {
        match child.try_wait() {
            Ok(Some(status)) => break Some(status),
            Ok(None) if start.elapsed() >= Duration::from_secs(SECONDS) => {
                let _ = child.kill();
                let _ = child.wait();
                break None;
            }
            Ok(None) => std::thread::sleep(Duration::from_millis(10)),
            Err(_) => break None,
        }
    };
    let said = reader.join().unwrap_or_default();
    let shown = crate::text::printable(template);
    match status.and_then(|s| s.code().map(|c| (c, s))) {
        Some((c, _)) => {
            eprint!("{}", crate::text::printable(&said));
            if c == OK as i32 {
                Ok(())
            } else {
                Err(c.clamp(1, 255) as u8)
            }
        }
        None if status.is_none() => {
            say_err!("{}: the template {shown} ran for more than {SECONDS} s and was stopped; no report was written", path.display());
            say_err!("  hint: look for a loop in the template that does not end, or one that makes thousands of pages");
            Err(PROBLEMS)
        }
        None => {
            say_err!("{}: the template {shown} used more than {} MB of memory and was stopped; no report was written", path.display(), MEMORY / (1024 * 1024));
            say_err!("  hint: look for a loop in the template that builds very large content or thousands of pages");
            Err(PROBLEMS)
        }
    }
}
