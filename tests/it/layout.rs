//! The source's layout, as the project's contributor guide asks: no file over 700 lines, no
//! two modules that name each other (each pair of sibling files imports one way at most), and
//! no arrow from the job reader to the analysis or the reports.

use std::collections::{BTreeMap, BTreeSet};
use std::path::Path;

use crate::util::root;

/// Every source file under src/.
fn rs_files() -> Vec<std::path::PathBuf> {
    let mut out = Vec::new();
    let mut stack = vec![root().join("src")];
    while let Some(dir) = stack.pop() {
        for e in std::fs::read_dir(&dir).unwrap().flatten() {
            let p = e.path();
            if p.is_dir() {
                stack.push(p);
            } else if p.extension().is_some_and(|x| x == "rs") {
                out.push(p);
            }
        }
    }
    out
}

/// Every source file as its module path (`analysis::levels`, `report::data`), with its text.
fn modules() -> BTreeMap<String, String> {
    rs_files().into_iter().map(|p| (module_of(&p), std::fs::read_to_string(&p).unwrap())).collect()
}

fn module_of(p: &Path) -> String {
    let rel = p.strip_prefix(root().join("src")).unwrap().with_extension("");
    let parts: Vec<String> = rel.iter().map(|s| s.to_string_lossy().to_string()).filter(|s| s != "mod" && s != "lib" && s != "main").collect();
    parts.join("::")
}

/// The modules a file names (`crate::a::b::Thing` -> the longest known module, `a::b`), with
/// `super::` read against the file's own place. Comments are skipped.
fn names(module: &str, text: &str, known: &BTreeSet<String>, is_mod_rs: bool) -> BTreeSet<String> {
    let mut out = BTreeSet::new();
    // `super` in a.rs or a/mod.rs of module a::b is a; in a/b.rs (module a::b) it is a.
    let parent: Vec<&str> = {
        let mut p: Vec<&str> = module.split("::").filter(|s| !s.is_empty()).collect();
        if !is_mod_rs || !p.is_empty() {
            p.pop();
        }
        p
    };
    for line in text.lines().map(str::trim_start).filter(|l| !l.starts_with("//")) {
        for (prefix, base) in [("crate::", Vec::new()), ("super::", parent.clone())] {
            for (i, _) in line.match_indices(prefix) {
                let rest = &line[i + prefix.len()..];
                let path: String = rest.chars().take_while(|c| c.is_alphanumeric() || *c == '_' || *c == ':').collect();
                // `use crate::a::{b, c::D}`: each item of the group, one level deep.
                let group: Vec<String> = match rest[path.len()..].strip_prefix('{') {
                    Some(g) => g.split('}').next().unwrap_or("").split(',').map(|x| x.trim().to_string()).collect(),
                    None => vec![String::new()],
                };
                for item in group {
                    let full = format!("{path}{item}");
                    let mut segs: Vec<String> = base.iter().map(|s| s.to_string()).collect();
                    let mut best = None;
                    for seg in full.split("::").filter(|s| !s.is_empty()) {
                        segs.push(seg.trim().to_string());
                        let m = segs.join("::");
                        if known.contains(&m) {
                            best = Some(m);
                        }
                    }
                    if let Some(m) = best.filter(|m| m != module) {
                        out.insert(m);
                    }
                }
            }
        }
    }
    out
}

/// True when `a` is `b`'s parent or an ancestor (a module naming its own children is its
/// structure, not a cycle).
fn ancestor(a: &str, b: &str) -> bool {
    a.is_empty() || b.starts_with(&format!("{a}::"))
}

fn graph() -> BTreeMap<String, BTreeSet<String>> {
    let files = modules();
    let known: BTreeSet<String> = files.keys().cloned().collect();
    let mod_rs: BTreeSet<String> = rs_files().iter().filter(|p| p.file_name().is_some_and(|n| n == "mod.rs")).map(|p| module_of(p)).collect();
    files.iter().map(|(m, t)| (m.clone(), names(m, t, &known, mod_rs.contains(m)))).collect()
}

#[test]
fn no_source_file_runs_past_700_lines() {
    let long: Vec<String> = modules().iter().filter(|(_, t)| t.lines().count() > 700).map(|(m, t)| format!("{m}: {} lines", t.lines().count())).collect();
    assert!(long.is_empty(), "{long:?}");
}

#[test]
fn no_two_modules_import_each_other() {
    let g = graph();
    let mut both = Vec::new();
    for (a, named) in &g {
        for b in named.iter().filter(|b| *b > a) {
            if g.get(b).is_some_and(|n| n.contains(a)) && !ancestor(a, b) && !ancestor(b, a) {
                both.push(format!("{a} <-> {b}"));
            }
        }
    }
    assert!(both.is_empty(), "{both:?}");
    // The checker finds what it looks for, in a path and in a group.
    assert!(g["analysis::compensate"].contains("analysis::levels"), "{:?}", g["analysis::compensate"]);
    assert!(g["analysis::options"].contains("analysis::pair"), "{:?}", g["analysis::options"]);
    let known: BTreeSet<String> = ["analysis", "analysis::levels", "analysis::compensate"].iter().map(|s| s.to_string()).collect();
    let found = names("analysis::levels", "use crate::analysis::{compensate, Scene};\n// crate::x", &known, false);
    assert_eq!(found, ["analysis", "analysis::compensate"].iter().map(|s| s.to_string()).collect());
}

#[test]
fn the_job_reader_names_neither_the_analysis_nor_the_reports() {
    let g = graph();
    for (m, named) in g.iter().filter(|(m, _)| m.starts_with("job")) {
        let wrong: Vec<&String> = named.iter().filter(|n| n.starts_with("analysis") || n.starts_with("report::data") || n.starts_with("results")).collect();
        assert!(wrong.is_empty(), "{m} names {wrong:?}");
    }
}

/// `cargo test` needs nothing outside cargo and a base Debian system: the programs the tests
/// start by name are coreutils' `mkfifo` and bsdutils' `script` (both essential packages), and
/// python3 only in contract.rs and desk.rs, where it runs the outside checks (the Python
/// copy of the contract, the index read by Python's csv module) when it is on PATH. Failed
/// before on the reports' readers (pdftotext, pdfdetach, pdfimages from poppler-utils) and the
/// contract check (python3).
#[test]
fn the_tests_start_no_program_outside_a_base_system() {
    let dir = crate::util::root().join("tests/it");
    let mut found = Vec::new();
    for entry in std::fs::read_dir(&dir).unwrap().flatten() {
        let (path, text) = (entry.path(), std::fs::read_to_string(entry.path()).unwrap());
        let file = path.file_name().unwrap().to_string_lossy().to_string();
        for (i, _) in text.match_indices("Command::new(\"") {
            let name = text[i + 14..].split('"').next().unwrap();
            let allowed = matches!(name, "mkfifo" | "script") || (name == "python3" && (file == "contract.rs" || file == "desk.rs"));
            if !allowed {
                found.push(format!("{file}: {name}"));
            }
        }
    }
    assert!(found.is_empty(), "{found:?}");
}
