//! Shell completions (clap_complete) and manual pages (clap_mangen), generated on request from
//! the same definitions `--help` prints.

use std::path::Path;

use super::{done, out, Cli, FAILURE};
use crate::report;

pub fn completions(shell: clap_complete::Shell) -> u8 {
    let mut buf = Vec::new();
    clap_complete::generate(shell, &mut <Cli as clap::CommandFactory>::command(), "voicekeep", &mut buf);
    out(&String::from_utf8_lossy(&buf))
}

/// The manual pages (roff, by clap_mangen): voicekeep.1 to standard output, or it and one page
/// per command (voicekeep-report.1, ...) into a folder.
pub fn manual(dir: Option<&Path>) -> u8 {
    let cmd = <Cli as clap::CommandFactory>::command();
    let page = |c: clap::Command| {
        let mut buf = Vec::new();
        clap_mangen::Man::new(c).render(&mut buf).map(|_| buf)
    };
    let Some(dir) = dir else {
        return match page(cmd) {
            Ok(b) => out(&String::from_utf8_lossy(&b)),
            Err(e) => {
                say_err!("voicekeep: cannot write the manual: {e}");
                FAILURE
            }
        };
    };
    if let Err(e) = std::fs::create_dir_all(dir) {
        say_err!("voicekeep: cannot create {}: {e}", dir.display());
        return FAILURE;
    }
    let mut pages = vec![("voicekeep.1".to_string(), cmd.clone())];
    pages
        .extend(cmd.get_subcommands().filter(|c| c.get_name() != "help").map(|c| (format!("voicekeep-{}.1", c.get_name()), c.clone().name(format!("voicekeep-{}", c.get_name())))));
    let mut said = String::new();
    for (name, c) in pages {
        let file = dir.join(&name);
        match page(c).map_err(|e| e.to_string()).and_then(|b| report::write_atomically(&file, &b).map_err(|e| e.to_string())) {
            Ok(()) => said.push_str(&format!("wrote {}\n", file.display())),
            Err(e) => {
                say_err!("voicekeep: cannot write {}: {e}", file.display());
                return FAILURE;
            }
        }
    }
    done(&said)
}
