//! The shop's design library: a model the shop sees again is typed once, as a design file (its
//! `network` and `speaker` description and rating) in a folder, and a job names it with
//! `design: NAME` in place of a network of its own.
//!
//! The design's tree is spliced into the job's before the job is read, so a job using a design
//! is read exactly as the same job with the network typed in. Its nodes keep their places in
//! the design file, shifted by [`DESIGN_LINES`], so a problem found in them is told in the
//! design file at its own line and column; the tables a design names are beside it.

use crate::diag::{Diagnostic, Pos, Problems};
use crate::files::Files;
use crate::job::yaml::{self, Key, Node};
use crate::model::InputFile;

/// Lines of a design file are numbered from here in the spliced tree: no job file has so many.
pub const DESIGN_LINES: usize = 100_000_000;

/// The folder designs live in when the shop's settings file names none.
pub const DEFAULT_FOLDER: &str = "designs";

/// The design a job used: its name, its file (as the job's folder sees it) and text.
pub struct Design {
    pub name: String,
    pub file: String,
    pub text: String,
}

fn shift(node: &mut Node, lines: usize) {
    let moved = |p: &mut Pos| p.line += lines;
    match node {
        Node::Scalar { pos, .. } => moved(pos),
        Node::Seq { items, pos } => {
            moved(pos);
            items.iter_mut().for_each(|n| shift(n, lines));
        }
        Node::Map { entries, pos } => {
            moved(pos);
            for (k, v) in entries {
                moved(&mut k.pos);
                shift(v, lines);
            }
        }
    }
}

/// A design's table names are beside the design: made relative to the job's folder.
fn rebase(node: &mut Node, folder: &str) {
    match node {
        Node::Map { entries, .. } => {
            for (k, v) in entries {
                match v {
                    Node::Scalar { text, .. } if (k.name == "table" || k.name == "response") && !text.starts_with('/') && !folder.is_empty() => *text = format!("{folder}/{text}"),
                    _ => rebase(v, folder),
                }
            }
        }
        Node::Seq { items, .. } => items.iter_mut().for_each(|n| rebase(n, folder)),
        Node::Scalar { .. } => {}
    }
}

/// The designs folder the shop's settings file names (`designs:`), if the job names a
/// settings file that names one.
fn folder_of(root: &Node, files: &dyn Files) -> Option<String> {
    let settings = root.get("job").and_then(|j| j.get("shop")).and_then(|s| s.get("settings")).and_then(Node::as_scalar)?;
    let bytes = files.read(settings, crate::job::tables::MAX_TEXT_FILE_BYTES).ok()?;
    let tree = yaml::parse(std::str::from_utf8(&bytes).ok()?).ok()?;
    let folder = tree.get("designs").and_then(Node::as_scalar)?.trim_end_matches('/');
    let base = std::path::Path::new(settings).parent().map(|p| p.to_string_lossy().into_owned()).unwrap_or_default();
    Some(if base.is_empty() { folder.to_string() } else { format!("{base}/{folder}") })
}

/// Splices the design the job names into its tree; None when it names none. A design that
/// cannot be read, or is not one, is refused at the job's `design` line or in the design file.
pub fn splice(root: &mut Node, display: &str, files: &dyn Files, inputs: &mut Vec<InputFile>) -> Result<Option<Design>, Problems> {
    let Some(named) = root.get("design") else { return Ok(None) };
    let at = named.pos();
    let refuse = |message: String, hint: &str| Problems { file: display.to_string(), source: String::new(), list: vec![Diagnostic::new(at, "design", message).hint(hint)] };
    let Some(name) = named.as_scalar().map(str::trim).filter(|n| !n.is_empty()).map(str::to_string) else {
        return Err(refuse("`design` takes the name of a design in the shop's library".into(), "write `design: NAME`, for NAME.yaml in the designs folder"));
    };
    if name.contains('/') || name.contains('\\') || name.starts_with('.') {
        return Err(refuse(format!("\"{name}\" is a path, not a design's name"), "write the design's name alone; the shop's settings file names the folder (`designs: FOLDER`)"));
    }
    if root.get("network").is_some() {
        return Err(refuse(format!("the job names the design \"{name}\" and types a network of its own"), "remove the job's `network`, or the `design` line"));
    }
    let folder = folder_of(root, files).unwrap_or_else(|| DEFAULT_FOLDER.to_string());
    let file = format!("{folder}/{name}.yaml");
    let bytes = match files.read(&file, crate::job::MAX_JOB_BYTES) {
        Ok(b) => b,
        Err(e) => {
            return Err(refuse(
                format!("cannot read the design {file}: {}", e.reason),
                "a design is NAME.yaml in the folder the shop's settings file names (`designs:`), or in `designs` beside the job",
            ))
        }
    };
    let source = String::from_utf8_lossy(&bytes).into_owned();
    let in_design = |list: Vec<Diagnostic>| Problems { file: format!("{}{file}", prefix(display)), source: source.clone(), list };
    if std::str::from_utf8(&bytes).is_err() {
        return Err(in_design(vec![Diagnostic::new(Pos::START, "", "the design file is not UTF-8 text").hint("save it as UTF-8")]));
    }
    if let Some(((line, col), c)) = crate::text::first_forbidden(&source) {
        return Err(in_design(vec![
            Diagnostic::new(Pos { line, col }, "", format!("the design file holds {}, a character no file may hold", crate::text::name_of(c))).hint("remove it")
        ]));
    }
    let mut tree = yaml::parse(source.trim_start_matches('\u{feff}'))
        .map_err(|e| in_design(vec![Diagnostic::new(e.pos, "", format!("YAML syntax: {}", e.message)).hint("check indentation (spaces, not tabs), colons and brackets")]))?;
    // Only what a design holds: the version, the speaker and the network.
    let mut list = Vec::new();
    if let Node::Map { entries, .. } = &tree {
        for (k, _) in entries {
            if !["speaker", "network"].contains(&k.name.as_str()) {
                list.push(
                    Diagnostic::new(k.pos, k.name.clone(), format!("a design holds `speaker` and `network`, not `{}`", k.name))
                        .hint("readings, changes and the job's own fields belong in the job that names the design"),
                );
            }
        }
    } else {
        list.push(Diagnostic::new(Pos::START, "", "a design is a mapping of `speaker` and `network`").hint("see the README's design library"));
    }
    if tree.get("network").is_none() && list.is_empty() {
        list.push(Diagnostic::new(Pos::START, "network", "the design has no `network`").hint("type the crossover as designed under `network`, as a job would"));
    }
    if let Some(Node::Map { entries, .. }) = tree.get("speaker") {
        for (k, _) in entries {
            if !["description", "rated_impedance", "rated_range"].contains(&k.name.as_str()) {
                list.push(
                    Diagnostic::new(k.pos, format!("speaker.{}", k.name), format!("a design's speaker holds `description`, `rated_impedance` and `rated_range`, not `{}`", k.name))
                        .hint("serials belong to each job"),
                );
            }
        }
    }
    if !list.is_empty() {
        return Err(in_design(list));
    }
    let base = std::path::Path::new(&file).parent().map(|p| p.to_string_lossy().into_owned()).unwrap_or_default();
    rebase(&mut tree, &base);
    shift(&mut tree, DESIGN_LINES);
    // The design's network, and its speaker's fields the job leaves out.
    let Node::Map { entries: design, .. } = tree else { unreachable!("checked above") };
    let Node::Map { entries, .. } = root else { return Ok(None) };
    for (k, v) in design {
        match k.name.as_str() {
            "network" => entries.push((Key { name: "network".into(), pos: k.pos }, v)),
            "speaker" => {
                let Node::Map { entries: from, .. } = v else { continue };
                let Some((_, Node::Map { entries: job, .. })) = entries.iter_mut().find(|(k, _)| k.name == "job") else { continue };
                if !job.iter().any(|(k, _)| k.name == "speaker") {
                    job.push((Key { name: "speaker".into(), pos: k.pos }, Node::Map { entries: Vec::new(), pos: k.pos }));
                }
                if let Some((_, Node::Map { entries: sp, .. })) = job.iter_mut().find(|(k, _)| k.name == "speaker") {
                    for (fk, fv) in from {
                        if !sp.iter().any(|(k, _)| k.name == fk.name) {
                            sp.push((fk, fv));
                        }
                    }
                }
            }
            _ => {}
        }
    }
    entries.retain(|(k, _)| k.name != "design");
    inputs.push(InputFile { name: file.clone(), bytes });
    Ok(Some(Design { name, file, text: source }))
}

/// The job's folder as its display name shows it ("jobs/" for "jobs/a.yaml"), so the design
/// file is named as the user would reach it.
fn prefix(display: &str) -> String {
    match display.rfind('/') {
        Some(i) => display[..=i].to_string(),
        None => String::new(),
    }
}

/// Splits the problems found in a job that used a design: those in the design's nodes are
/// told in the design file, at their own lines.
pub fn split(list: Vec<Diagnostic>, display: &str, design: &Design) -> (Vec<Diagnostic>, Option<Problems>) {
    let (theirs, ours): (Vec<Diagnostic>, Vec<Diagnostic>) = list.into_iter().partition(|d| d.pos.line >= DESIGN_LINES);
    if theirs.is_empty() {
        return (ours, None);
    }
    let mut theirs: Vec<Diagnostic> = theirs.into_iter().map(|d| Diagnostic { pos: Pos { line: d.pos.line - DESIGN_LINES, col: d.pos.col }, ..d }).collect();
    theirs.sort_by_key(|d| (d.pos.line, d.pos.col));
    (ours, Some(Problems { file: format!("{}{}", prefix(display), design.file), source: design.text.clone(), list: theirs }))
}
