//! Diagnostics that point into the job file: `job.yaml:14:9: C3.value: message`, a snippet
//! with a caret under the place, and a hint.

use std::fmt;

/// A place in the job file (1-based line and column).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Default)]
pub struct Pos {
    pub line: usize,
    pub col: usize,
}

impl Pos {
    /// The top of the file, where a missing section is reported.
    pub const START: Pos = Pos { line: 1, col: 1 };
}

#[derive(Debug, Clone, PartialEq)]
pub struct Diagnostic {
    pub pos: Pos,
    /// The field path, as the job file names it (`network.parts.C3.value`).
    pub field: String,
    pub message: String,
    pub hint: Option<String>,
}

impl Diagnostic {
    pub fn new(pos: Pos, field: impl Into<String>, message: impl Into<String>) -> Self {
        Diagnostic { pos, field: field.into(), message: message.into(), hint: None }
    }

    pub fn hint(mut self, hint: impl Into<String>) -> Self {
        self.hint = Some(hint.into());
        self
    }

    pub fn with_hint(mut self, hint: Option<String>) -> Self {
        self.hint = hint;
        self
    }
}

/// Every problem found in one file, ready to print.
#[derive(Debug, Clone)]
pub struct Problems {
    pub file: String,
    pub source: String,
    pub list: Vec<Diagnostic>,
}

/// The most problems printed for one file; the rest are counted. Past the first few dozen,
/// one mistake repeated (a file of thousands of unknown keys) is the likelier story.
pub const MAX_SHOWN: usize = 50;

/// The longest line a message prints (a refused value of 19,000 characters is shown by its
/// ends and its length).
pub const MAX_LINE: usize = 300;

impl fmt::Display for Problems {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        use crate::text::{printable, shorten};
        // Everything from the job (keys, node names, file names, values) is printed with its
        // control characters escaped and each line kept readable.
        let say = |s: &str| printable(&shorten(s, MAX_LINE));
        let file = say(&self.file);
        let lines: Vec<&str> = if self.list.is_empty() { Vec::new() } else { self.source.lines().collect() };
        for d in self.list.iter().take(MAX_SHOWN) {
            if d.field.is_empty() {
                writeln!(f, "{}:{}:{}: {}", file, d.pos.line, d.pos.col, say(&d.message))?;
            } else {
                writeln!(f, "{}:{}:{}: {}: {}", file, d.pos.line, d.pos.col, say(&d.field), say(&d.message))?;
            }
            if let Some(line) = d.pos.line.checked_sub(1).and_then(|i| lines.get(i)) {
                let gutter = d.pos.line.to_string();
                // A line of up to 200 characters is shown whole; a longer one around the
                // column only, 100 characters either side. Control characters are escaped,
                // and the caret counts the escapes' width.
                let col = d.pos.col.saturating_sub(1);
                let count = line.chars().count();
                let (start, width) = if count <= 200 { (0, 200) } else { (col.saturating_sub(100), 200) };
                let shown: String = line.chars().skip(start).take(width).collect();
                let (before, after) = (if start > 0 { "..." } else { "" }, if count > start + width { "..." } else { "" });
                writeln!(f, "{} | {before}{}{after}", gutter, printable(&shown))?;
                let upto: String = line.chars().skip(start).take(col.saturating_sub(start)).collect();
                let caret_pad = " ".repeat(before.len() + printable(&upto).chars().count());
                writeln!(f, "{} | {}^", " ".repeat(gutter.len()), caret_pad)?;
            }
            if let Some(h) = &d.hint {
                writeln!(f, "  hint: {}", say(h))?;
            }
        }
        let n = self.list.len();
        if n > MAX_SHOWN {
            writeln!(f, "... and {} more problems not shown; fix these first", n - MAX_SHOWN)?;
        }
        write!(f, "{}: {} problem{} found", file, n, if n == 1 { "" } else { "s" })
    }
}

/// Warnings about one file, printed as problems are (place, snippet, hint) but marked
/// `warning:` and without the closing count: the job is not refused.
pub fn warnings(file: &str, source: &str, list: &[Diagnostic]) -> String {
    let marked = list.iter().map(|d| Diagnostic { message: format!("warning: {}", d.message), ..d.clone() }).collect();
    let text = Problems { file: file.to_string(), source: source.to_string(), list: marked }.to_string();
    match text.rsplit_once('\n') {
        Some((body, _)) => format!("{body}\n"),
        None => String::new(),
    }
}

/// The closest candidate to a misspelt name, if one is close enough to be a likely slip.
/// Distance is strsim's optimal string alignment: insertions, deletions, changes and the swap
/// of two neighbours each count one, so `ers` for `esr` is one slip.
pub fn suggest<'a>(name: &str, candidates: impl IntoIterator<Item = &'a str>) -> Option<&'a str> {
    let lower = name.to_lowercase();
    candidates
        .into_iter()
        .map(|c| (strsim::osa_distance(&lower, &c.to_lowercase()), c))
        .filter(|(d, c)| *d <= (c.chars().count().max(2) / 3).max(1) || (*d <= 2 && c.len() > 3))
        .min_by_key(|(d, _)| *d)
        .map(|(_, c)| c)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn suggests_near_misses_only() {
        assert_eq!(suggest("valu", ["value", "esr", "tolerance"]), Some("value"));
        assert_eq!(suggest("C3", ["C1", "C2", "L1"]), Some("C1"));
        assert_eq!(suggest("tolerence", ["value", "tolerance"]), Some("tolerance"));
        assert_eq!(suggest("frobnicate", ["value", "esr"]), None);
        // A swapped pair is one slip, even in a three-letter name.
        assert_eq!(suggest("ers", ["value", "esr", "tan_delta", "dcr", "at"]), Some("esr"));
        assert_eq!(suggest("dcr", ["value", "esr"]), None);
    }

    #[test]
    fn prints_place_snippet_and_hint() {
        let p = Problems {
            file: "job.yaml".into(),
            source: "a: 1\n  b: 3.3 mH\n".into(),
            list: vec![Diagnostic::new(Pos { line: 2, col: 6 }, "b", "expected a capacitance").hint("use uF")],
        };
        let s = p.to_string();
        assert!(s.starts_with("job.yaml:2:6: b: expected a capacitance\n"));
        assert!(s.contains("2 |   b: 3.3 mH\n  |      ^\n  hint: use uF"));
    }
}
