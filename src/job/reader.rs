//! The reading context and its primitives: mappings with checked field names, text, values
//! with units, choices, node pairs and bands. Every problem goes into the context's list with
//! its place, field and a hint; the parse and build stages both read through these.

use crate::diag::{suggest, Diagnostic, Pos};
use crate::files::Files;
use crate::job::yaml::{Key, Node};
use crate::model::InputFile;
use crate::units::{parse_value, Quantity};

/// The longest text a field may hold (notes, sentences, names): a few pages.
/// The words `voicekeep new` puts where a shop writes its own (the starter's `job:` block);
/// `check` warns of any left in.
pub const PLACEHOLDERS: [&str; 12] = [
    "JOB-0001",
    "what was done, in a line",
    "your name",
    "your shop's name",
    "street, town",
    "phone or e-mail",
    "the customer's name",
    "their reference for the speaker",
    "the speaker, in a line",
    "serial of each cabinet",
    "Bench notes, the shop's own: printed in the archive only.",
    "Notes for the customer: printed in their report and the archive, never on the sale sheet.",
];

pub const MAX_TEXT_CHARS: usize = 20_000;

/// The most characters of text a whole job may hold, every field together: what the
/// reports print stays a few dozen pages, however the text is spread over fields.
pub const MAX_JOB_TEXT_CHARS: usize = 200_000;

/// The most line breaks the text of a whole job may hold (a line break prints as a line,
/// so 20,000 blank lines in one note made a report of thousands of pages).
pub const MAX_JOB_TEXT_LINES: usize = 2_000;

/// The most code points one user-perceived character (a grapheme cluster: a letter and its
/// marks) may have: a starter and the 30 non-starters of Unicode's stream-safe text format
/// (UAX #15). One of 20,000 could not be typeset.
pub const MAX_GRAPHEME_CHARS: usize = 31;

/// The code points of the longest grapheme cluster in `text`.
fn longest_grapheme(text: &str) -> usize {
    use unicode_segmentation::UnicodeSegmentation;
    text.graphemes(true).map(|g| g.chars().count()).max().unwrap_or(0)
}

pub struct Ctx<'a> {
    pub diags: Vec<Diagnostic>,
    /// Where the job's tables and template are read from.
    pub files: &'a dyn Files,
    /// Every file read, in order, for the report's record.
    pub inputs: Vec<InputFile>,
    /// References that were declared but could not be read: later mentions of them are not
    /// reported again, so one mistake gives one message.
    pub failed: Vec<String>,
    /// Values already reported (a decimal comma split by YAML): not reported again.
    pub silenced: Vec<Pos>,
    /// What is warned of without refusing the job.
    pub warnings: Vec<Diagnostic>,
    /// The characters and line breaks of text read so far, against the job's budget.
    text_chars: usize,
    text_lines: usize,
}

pub struct Fields<'n> {
    entries: &'n [(Key, Node)],
    pub path: String,
    pub pos: Pos,
}

impl<'n> Fields<'n> {
    pub fn get(&self, key: &str) -> Option<&'n Node> {
        self.entries.iter().find(|(k, _)| k.name == key).map(|(_, v)| v).filter(|v| !v.is_null())
    }

    pub fn key_pos(&self, key: &str) -> Option<Pos> {
        self.entries.iter().find(|(k, _)| k.name == key).map(|(k, _)| k.pos)
    }

    pub fn at(&self, key: &str) -> String {
        if self.path.is_empty() {
            key.to_string()
        } else {
            format!("{}.{}", self.path, key)
        }
    }
}

fn join(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else {
        format!("{path}.{key}")
    }
}

impl<'a> Ctx<'a> {
    pub fn new(files: &'a dyn Files) -> Self {
        Ctx { diags: Vec::new(), files, inputs: Vec::new(), failed: Vec::new(), silenced: Vec::new(), warnings: Vec::new(), text_chars: 0, text_lines: 0 }
    }

    pub fn error(&mut self, pos: Pos, field: &str, message: impl Into<String>, hint: Option<String>) {
        self.diags.push(Diagnostic::new(pos, field, message).with_hint(hint));
    }

    /// The node as a mapping whose keys are all in `allowed`; unknown keys are reported with
    /// the nearest allowed key.
    pub fn fields<'n>(&mut self, node: &'n Node, path: &str, allowed: &[&str]) -> Option<Fields<'n>> {
        let Node::Map { entries, pos } = node else {
            self.error(node.pos(), path, format!("expected a mapping of fields, found {}", node.kind_name()), Some(format!("fields here are: {}", allowed.join(", "))));
            return None;
        };
        for (i, (k, _)) in entries.iter().enumerate() {
            // `{ value: 4,7 uF }`: in braces the comma ends the value, leaving `4` and a field
            // `7 uF`. That is one mistake, a decimal comma, and is said once.
            let split = k.name.starts_with(|c: char| c.is_ascii_digit());
            if let (true, Some((pk, Node::Scalar { text, pos: vpos, .. }))) = (split, i.checked_sub(1).map(|j| &entries[j])) {
                if !text.is_empty() && text.trim().chars().all(|c| c.is_ascii_digit()) {
                    let written = format!("{},{}", text.trim(), k.name);
                    self.error(
                        *vpos,
                        &join(path, &pk.name),
                        format!("\"{written}\" has a decimal comma: inside {{ }} the comma ends the value, leaving \"{}\" and a field \"{}\"", text.trim(), k.name),
                        Some(format!("write a decimal point: \"{}\"", written.replacen(',', ".", 1))),
                    );
                    self.silenced.push(*vpos);
                    continue;
                }
            }
            if !allowed.contains(&k.name.as_str()) {
                let hint = match suggest(&k.name, allowed.iter().copied()) {
                    Some(s) => format!("did you mean `{s}`?"),
                    None => format!("fields here are: {}", allowed.join(", ")),
                };
                self.error(k.pos, &join(path, &k.name), format!("unknown field `{}`", k.name), Some(hint));
            }
        }
        Some(Fields { entries, path: path.to_string(), pos: *pos })
    }

    pub fn text(&mut self, node: &Node, path: &str) -> Option<String> {
        match node {
            Node::Scalar { text, .. } if text.chars().count() > MAX_TEXT_CHARS => {
                self.error(
                    node.pos(),
                    path,
                    format!("this text is {} characters long, above the {MAX_TEXT_CHARS} a field may hold", text.chars().count()),
                    Some("keep long notes in a file of the shop's own; a report field holds a few pages at most".into()),
                );
                None
            }
            Node::Scalar { text, .. } if longest_grapheme(text) > MAX_GRAPHEME_CHARS => {
                self.error(
                    node.pos(),
                    path,
                    format!(
                        "this text holds one character built of {} code points (a letter and its marks), above the {MAX_GRAPHEME_CHARS} any script needs",
                        longest_grapheme(text)
                    ),
                    Some("Unicode's stream-safe text format (UAX #15) allows 30 marks on a letter; remove the stray marks".into()),
                );
                None
            }
            Node::Scalar { text, .. } => {
                let (chars, lines) = (text.chars().count(), text.matches('\n').count());
                let within = self.text_chars <= MAX_JOB_TEXT_CHARS && self.text_lines <= MAX_JOB_TEXT_LINES;
                self.text_chars += chars;
                self.text_lines += lines;
                if within && (self.text_chars > MAX_JOB_TEXT_CHARS || self.text_lines > MAX_JOB_TEXT_LINES) {
                    let what = if self.text_lines > MAX_JOB_TEXT_LINES { format!("{MAX_JOB_TEXT_LINES} line breaks") } else { format!("{MAX_JOB_TEXT_CHARS} characters") };
                    self.error(
                        node.pos(),
                        path,
                        format!("with this field the job's text (every note, sentence and name together) runs past the {what} a job may hold"),
                        Some("a report prints a few dozen pages at most: keep long notes in a file of the shop's own, and blank lines out of notes".into()),
                    );
                    return None;
                }
                // A starter's placeholder left in would print on the customer's report.
                if PLACEHOLDERS.contains(&text.trim()) {
                    let d = Diagnostic::new(node.pos(), path, format!("\"{}\" is the starter job's placeholder, and would print in the report as it is", text.trim()))
                        .hint("write the job's own words here");
                    if !self.warnings.contains(&d) {
                        self.warnings.push(d);
                    }
                }
                // A character no font of the report has prints as a stand-in: said here, at
                // the field, rather than found as an empty box on paper.
                if let Some(c) = crate::report::fonts::first_uncovered(text) {
                    let d = Diagnostic::new(
                        node.pos(),
                        path,
                        format!(
                            "{} has no glyph in any font voicekeep sets reports in; the report prints {} in its place",
                            crate::text::name_of(c),
                            crate::report::fonts::STAND_IN
                        ),
                    )
                    .hint("the README lists the scripts the shipped fonts cover; write the text in one of them, or leave it as it is");
                    if !self.warnings.contains(&d) {
                        self.warnings.push(d);
                    }
                }
                Some(text.clone())
            }
            _ => {
                self.error(node.pos(), path, format!("expected text, found {}", node.kind_name()), None);
                None
            }
        }
    }

    /// A warning: the job is read as written, and `check` says what looks wrong.
    pub(crate) fn warn(&mut self, pos: Pos, path: &str, message: String, hint: &str) {
        let d = Diagnostic::new(pos, path, message).hint(hint);
        if !self.warnings.contains(&d) {
            self.warnings.push(d);
        }
    }

    pub(crate) fn opt_text(&mut self, f: &Fields, key: &str) -> Option<String> {
        f.get(key).and_then(|n| self.text(n, &f.at(key)))
    }

    pub(crate) fn req<'n>(&mut self, f: &Fields<'n>, key: &str, what: &str) -> Option<&'n Node> {
        let n = f.get(key);
        // A misspelt key is already reported with this key as its suggestion: one mistake,
        // one message.
        let misspelt = f.entries.iter().any(|(k, _)| k.name != key && suggest(&k.name, [key]).is_some());
        if n.is_none() && !misspelt {
            self.error(f.pos, &f.at(key), format!("missing `{key}` ({what})"), None);
        }
        n
    }

    pub fn value(&mut self, node: &Node, path: &str, q: Quantity) -> Option<f64> {
        if self.silenced.contains(&node.pos()) {
            return None;
        }
        let text = self.text(node, path)?;
        match parse_value(&text, q) {
            Ok(v) if !v.is_finite() => {
                self.error(node.pos(), path, format!("\"{text}\" is not a finite number"), Some(format!("write {} such as {}", q.noun(), q.example())));
                None
            }
            Ok(v) => {
                // Zero and negatives are judged by the field; a size outside what can be
                // physical is refused here, with the range.
                let (lo, hi, words) = q.plausible();
                let size = if q == Quantity::Decibel { v } else { v.abs() };
                if (size != 0.0 || q == Quantity::Decibel) && (size < lo || size > hi) {
                    self.error(
                        node.pos(),
                        path,
                        format!("\"{text}\" is not a plausible value for {}: voicekeep takes {words}", q.noun()),
                        Some(format!("check the unit and its prefix (for example {})", q.example())),
                    );
                    return None;
                }
                Some(v)
            }
            Err(e) => {
                self.error(node.pos(), path, e.message, e.hint);
                None
            }
        }
    }

    /// A value that must be above zero (or at least zero with `allow_zero`).
    pub(crate) fn positive(&mut self, node: &Node, path: &str, q: Quantity, allow_zero: bool) -> Option<f64> {
        let v = self.value(node, path, q)?;
        if v < 0.0 || (!allow_zero && v == 0.0) {
            self.error(node.pos(), path, format!("must be {} zero, found \"{}\"", if allow_zero { "at least" } else { "more than" }, node.as_scalar().unwrap_or("")), None);
            return None;
        }
        Some(v)
    }

    pub(crate) fn opt_positive(&mut self, f: &Fields, key: &str, q: Quantity, allow_zero: bool) -> Option<f64> {
        f.get(key).and_then(|n| self.positive(n, &f.at(key), q, allow_zero))
    }

    pub(crate) fn bare_number(&mut self, node: &Node, path: &str) -> Option<f64> {
        let text = self.text(node, path)?;
        match text.trim().parse::<f64>() {
            Ok(v) if v.is_finite() => Some(v),
            _ => {
                self.error(node.pos(), path, format!("expected a plain number, found \"{text}\""), None);
                None
            }
        }
    }

    pub(crate) fn choice<T: Copy>(&mut self, node: &Node, path: &str, options: &[(&str, T)]) -> Option<T> {
        let text = self.text(node, path)?;
        if let Some((_, v)) = options.iter().find(|(k, _)| *k == text) {
            return Some(*v);
        }
        let names: Vec<&str> = options.iter().map(|(k, _)| *k).collect();
        let hint = match suggest(&text, names.iter().copied()) {
            Some(s) => format!("did you mean `{s}`?"),
            None => format!("choose one of: {}", names.join(", ")),
        };
        self.error(node.pos(), path, format!("unknown choice \"{text}\""), Some(hint));
        None
    }

    pub(crate) fn pair_of_nodes(&mut self, node: &Node, path: &str) -> Option<[String; 2]> {
        let items = match node {
            Node::Seq { items, .. } if items.len() == 2 => items,
            _ => {
                self.error(node.pos(), path, "expected two node names, such as [IN, COM]", Some("write the + terminal's node first".into()));
                return None;
            }
        };
        let a = self.text(&items[0], path)?;
        let b = self.text(&items[1], path)?;
        if a == b {
            self.error(node.pos(), path, format!("both terminals are on node {a}: the part would be shorted out"), None);
            return None;
        }
        Some([a, b])
    }

    pub(crate) fn band(&mut self, node: &Node, path: &str) -> Option<(f64, f64)> {
        let items = match node {
            Node::Seq { items, .. } if items.len() == 2 => items,
            _ => {
                self.error(node.pos(), path, "expected two frequencies, such as [3 kHz, 15 kHz]", None);
                return None;
            }
        };
        let lo = self.positive(&items[0], path, Quantity::Frequency, false)?;
        let hi = self.positive(&items[1], path, Quantity::Frequency, false)?;
        if hi <= lo {
            self.error(node.pos(), path, "the upper frequency must be above the lower one", None);
            return None;
        }
        Some((lo, hi))
    }
}

pub(crate) fn map_entries<'n>(node: &'n Node, path: &str, ctx: &mut Ctx) -> &'n [(Key, Node)] {
    match node {
        Node::Map { entries, .. } => entries,
        _ => {
            ctx.error(node.pos(), path, format!("expected a mapping keyed by reference (C1, L1, ...), found {}", node.kind_name()), None);
            &[]
        }
    }
}

pub(crate) fn check_reference(ctx: &mut Ctx, key: &Key, path: &str) -> bool {
    let ok =
        !key.name.is_empty() && key.name.chars().all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-') && key.name.chars().next().is_some_and(|c| c.is_ascii_alphabetic());
    if !ok {
        ctx.error(
            key.pos,
            path,
            format!("\"{}\" is not a usable reference", key.name),
            Some("references start with a letter and use letters, digits, _ and -, like C1 or HF".into()),
        );
    }
    ok
}
