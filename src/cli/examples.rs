//! `new`: a starter job from any shipped sample, the list of samples, and a sample written
//! whole (with the tables, price list, settings and photographs it reads) into a folder.

use std::path::Path;

use super::starter as starter_mod;
use super::{done, out, say_err_lines, starter, FAILURE, USAGE};

/// Every shipped sample job, by the name `new --example` takes, with its text.
pub const SAMPLES: &[(&str, &str)] = &[
    ("two-way-recap", include_str!("../../samples/two-way-recap.yaml")),
    ("repair-like-for-like", include_str!("../../samples/repair-like-for-like.yaml")),
    ("pair-recap", include_str!("../../samples/pair-recap.yaml")),
    ("pair-quote", include_str!("../../samples/pair-quote.yaml")),
    ("quote-three-options", include_str!("../../samples/quote-three-options.yaml")),
    ("substitute-tweeter", include_str!("../../samples/substitute-tweeter.yaml")),
    ("sweep-diagnosis", include_str!("../../samples/sweep-diagnosis.yaml")),
    ("three-way-mid-table", include_str!("../../samples/three-way-mid-table.yaml")),
];

/// The files beside the samples that a sample reads.
const FILES: &[(&str, &[u8])] = &[
    ("harrowby-shop.yaml", include_bytes!("../../samples/harrowby-shop.yaml")),
    ("harrowby-logo.png", include_bytes!("../../samples/harrowby-logo.png")),
    ("photo-before-board.jpg", include_bytes!("../../samples/photo-before-board.jpg")),
    ("photo-after-board.png", include_bytes!("../../samples/photo-after-board.png")),
    ("kestrel-prices.csv", include_bytes!("../../samples/kestrel-prices.csv")),
    ("northwater-prices.csv", include_bytes!("../../samples/northwater-prices.csv")),
    ("hf-spl.csv", include_bytes!("../../samples/hf-spl.csv")),
    ("mf-spl.csv", include_bytes!("../../samples/mf-spl.csv")),
    ("lf-spl.csv", include_bytes!("../../samples/lf-spl.csv")),
    ("mid-impedance.csv", include_bytes!("../../samples/mid-impedance.csv")),
    ("kittering-before.csv", include_bytes!("../../samples/kittering-before.csv")),
    ("kittering-after.csv", include_bytes!("../../samples/kittering-after.csv")),
];

/// The names the first starters answered to, kept.
const ALIASES: &[(&str, &str)] = &[("two-way", "two-way-recap"), ("repair", "repair-like-for-like")];

/// The files a sample reads (named in its text; the settings file's logo with it).
pub fn files_of(text: &str) -> Vec<(&'static str, &'static [u8])> {
    let mut names: Vec<&str> = FILES.iter().map(|(n, _)| *n).filter(|n| text.contains(n)).collect();
    if names.contains(&"harrowby-shop.yaml") {
        names.push("harrowby-logo.png");
    }
    FILES.iter().filter(|(n, _)| names.contains(n)).cloned().collect()
}

/// What a sample is, from its opening comment.
fn about(text: &str) -> String {
    let first: Vec<&str> = text.lines().take_while(|l| l.starts_with('#')).map(|l| l.trim_start_matches('#').trim()).collect();
    let joined = first.join(" ");
    let joined = joined.trim_start_matches("voicekeep job:").trim();
    joined.split(". ").next().unwrap_or(joined).trim_end_matches('.').to_string()
}

pub fn new(example: &str, list: bool, into: Option<&Path>) -> u8 {
    if list {
        let mut s = String::new();
        for (name, text) in SAMPLES {
            let files: Vec<&str> = files_of(text).iter().map(|(n, _)| *n).collect();
            let needs = if files.is_empty() { String::new() } else { format!("\n    reads {} (written with it by --into)", files.join(", ")) };
            s.push_str(&format!("{name}\n    {}{needs}\n", about(text)));
        }
        return out(&s);
    }
    let name = ALIASES.iter().find(|(a, _)| *a == example).map(|(_, n)| *n).unwrap_or(example);
    let Some((name, text)) = SAMPLES.iter().find(|(n, _)| *n == name) else {
        let names: Vec<&str> = SAMPLES.iter().map(|(n, _)| *n).collect();
        say_err!("voicekeep: no example called \"{example}\"; choose one of: {}", names.join(", "));
        say_err!("  hint: `voicekeep new --list` says what each is");
        return USAGE;
    };
    let files = files_of(text);
    match into {
        // The sample whole, as shipped, with every file it reads: it reports as the demo does.
        Some(dir) => {
            if let Err(e) = std::fs::create_dir_all(dir) {
                say_err!("voicekeep: cannot create {}: {e}", dir.display());
                return FAILURE;
            }
            let job = dir.join(format!("{name}.yaml"));
            let mut written = Vec::new();
            for (file, bytes) in std::iter::once((format!("{name}.yaml"), text.as_bytes())).chain(files.iter().map(|(n, b)| (n.to_string(), *b))) {
                let path = dir.join(&file);
                if path.exists() {
                    say_err!("voicekeep: {} is already there; new writes no file over another", path.display());
                    say_err!("  hint: choose an empty folder with --into");
                    return USAGE;
                }
                written.push((path, bytes));
            }
            for (path, bytes) in &written {
                if let Err(e) = crate::report::write_atomically(path, bytes) {
                    say_err!("voicekeep: cannot write {}: {e}", path.display());
                    return FAILURE;
                }
            }
            done(&format!("wrote {} and {} file{} it reads; try `voicekeep report {}`\n", job.display(), files.len(), if files.len() == 1 { "" } else { "s" }, job.display()))
        }
        // A starter prints alone: one that reads files beside it would not check without them
        // (a starter drops the sample's shop, settings and photographs, so the repair prints).
        None if !files_of(&starter(name, text)).is_empty() => {
            let names: Vec<&str> = files_of(&starter(name, text)).iter().map(|(n, _)| *n).collect();
            say_err_lines(&[
                format!("voicekeep: the {name} example reads {} beside it, so it is written into a folder, not printed", names.join(", ")),
                format!("  hint: voicekeep new --example {name} --into FOLDER"),
            ]);
            USAGE
        }
        None => out(&starter(name, text)),
    }
}

/// A starter job that uses a design from the shop's library: the placeholders of the job
/// block (less the speaker's description and rating, which the design gives), the design's
/// name, an amplifier and a sweep, and the readings and changes to fill in, in comments that
/// name the design's parts. `design` is a name (found in `designs/` here) or a design file.
pub fn from_design(design: &str) -> u8 {
    let path = if design.ends_with(".yaml") { std::path::PathBuf::from(design) } else { Path::new(crate::job::design::DEFAULT_FOLDER).join(format!("{design}.yaml")) };
    let name = path.file_stem().map(|s| s.to_string_lossy().into_owned()).unwrap_or_default();
    let text = match crate::files::read_limited(&path, crate::job::MAX_JOB_BYTES) {
        Ok(b) => String::from_utf8_lossy(&b).into_owned(),
        Err(e) => {
            say_err!("voicekeep: cannot read the design {}: {}", path.display(), e.reason);
            say_err!("  hint: run `new` in the jobs' folder, with the designs in `designs/` there, or give the design file's path");
            return USAGE;
        }
    };
    let tree = match crate::job::yaml::parse(&text) {
        Ok(t) => t,
        Err(e) => {
            say_err!("{}:{}:{}: YAML syntax: {}", path.display(), e.pos.line, e.pos.col, e.message);
            return USAGE;
        }
    };
    let names = |key: &str| -> Vec<String> {
        let Some(crate::job::yaml::Node::Map { entries, .. }) = tree.get("network").and_then(|n| n.get(key)) else { return Vec::new() };
        entries.iter().map(|(k, _)| k.name.clone()).collect()
    };
    let rated = tree.get("speaker").and_then(|s| s.get("rated_impedance")).and_then(|n| n.as_scalar()).unwrap_or("8 ohm").to_string();
    let job_block: String = starter_mod::STARTER_JOB
        .lines()
        .filter(|l| !l.trim_start().starts_with("description:") && !l.trim_start().starts_with("rated_impedance:"))
        .map(|l| format!("{l}\n"))
        .collect();
    let parts = names("parts");
    let first = parts.first().cloned().unwrap_or_else(|| "C1".into());
    let folder_note = if path.parent().is_some_and(|p| p.ends_with(crate::job::design::DEFAULT_FOLDER)) {
        String::new()
    } else {
        format!(
            "# The design is read from designs/{name}.yaml beside this job, or from the folder the shop's\n# settings file names (`designs: FOLDER`); {} is not there yet.\n",
            path.display()
        )
    };
    out(&format!(
        "# voicekeep starter job for the design {name}: the network and the speaker's rating come from\n# the design. Fill in the job block, the readings and the work; `voicekeep check` lists every problem.\n{folder_note}voicekeep: 1\ndesign: {name}\n\n{job_block}\namplifier:                          # what the power and load figures assume\n  power: 100 W\n  into: {rated}\n  output_impedance: 0.05 ohm\n\n# The design's parts: {}; its drivers: {}.\n# measured:                         # bench readings of the parts as found, e.g.\n#   {first}: {{ value: ..., at: 1 kHz }}\n# changes:                          # the work, in order, e.g.\n#   - replace: {first}\n#     with: {{ value: ..., rating: ..., type: ... }}\n\nanalysis:\n  sweep: {{ from: 20 Hz, to: 20 kHz, per_octave: 24 }}\n",
        parts.join(", "),
        names("drivers").join(", "),
    ))
}
