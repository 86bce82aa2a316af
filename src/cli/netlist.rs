//! `netlist`: a scenario's network, with the fitted values, as a SPICE deck for ngspice.

use std::path::{Path, PathBuf};

use super::{analyse, done, load, out, FAILURE, PROBLEMS, USAGE};
use crate::analysis::Outcome;
use crate::model::Scenario;

pub fn run(path: &Path, scenario: &str, cabinet: Option<String>, output: Option<PathBuf>) -> u8 {
    let Some(s) = Scenario::ALL.iter().copied().find(|s| s.key() == scenario.replace('-', "_")) else {
        say_err!("voicekeep: --scenario takes as-designed, as-found or as-left, not \"{scenario}\"");
        return USAGE;
    };
    let job = match load(path) {
        Ok(j) => j,
        Err(c) => return c,
    };
    let o = match analyse(path, &job) {
        Ok(o) => o,
        Err(c) => return c,
    };
    let f = match (&o, &cabinet) {
        (Outcome::One(f), None) => f.as_ref(),
        (Outcome::One(_), Some(c)) => {
            say_err!("{}: --cabinet {c}, but this job is of one cabinet", path.display());
            return USAGE;
        }
        (Outcome::Set(set), c) => {
            let names: Vec<&str> = set.cabinets.iter().map(|c| c.name.as_str()).collect();
            match c.as_deref().and_then(|c| set.cabinets.iter().find(|x| x.name == c)) {
                Some(x) => &x.findings,
                None => {
                    say_err!("{}: a pair's or set's netlist is one cabinet's: name it with --cabinet ({})", path.display(), names.join(", "));
                    return USAGE;
                }
            }
        }
    };
    let stem = if path.as_os_str() == "-" { "standard-input".into() } else { path.file_stem().map(|s| s.to_string_lossy().into_owned()).unwrap_or_else(|| "job".into()) };
    let tag = format!("{stem}{}-{}", cabinet.as_deref().map(|c| format!("-{c}")).unwrap_or_default(), s.key().replace('_', "-"));
    let title = format!("job {} ({}), {}{}", job.info.number, stem, s.label(), cabinet.as_deref().map(|c| format!(", cabinet {c}")).unwrap_or_default());
    let deck = match crate::netlist::spice(&title, &f.scenes[s].network, &job.amplifier, &job.analysis.sweep, &format!("{tag}.txt")) {
        Ok(d) => d,
        Err(r) => {
            say_err!("{}: {}", path.display(), r.message);
            say_err!("  hint: {}", r.hint);
            return PROBLEMS;
        }
    };
    match output {
        None => out(&deck),
        Some(file) => {
            if super::read_by(path, &job).contains(&super::where_written(&file)) {
                say_err!("{}: the netlist would overwrite {}, one of the job's own inputs", path.display(), file.display());
                return PROBLEMS;
            }
            match crate::report::write_atomically(&file, deck.as_bytes()) {
                Ok(()) => done(&format!("wrote {}\n", file.display())),
                Err(e) => {
                    say_err!("voicekeep: cannot write {}: {e}", file.display());
                    FAILURE
                }
            }
        }
    }
}
