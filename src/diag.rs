//! Diagnostics that point into the job file: `job.yaml:14:9: C3.value: message`, a snippet
//! with a caret under the place, and a hint.

use std::fmt;

use crate::job::yaml::Pos;

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

impl fmt::Display for Problems {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let lines: Vec<&str> = self.source.lines().collect();
        for d in &self.list {
            if d.field.is_empty() {
                writeln!(f, "{}:{}:{}: {}", self.file, d.pos.line, d.pos.col, d.message)?;
            } else {
                writeln!(f, "{}:{}:{}: {}: {}", self.file, d.pos.line, d.pos.col, d.field, d.message)?;
            }
            if let Some(line) = d.pos.line.checked_sub(1).and_then(|i| lines.get(i)) {
                let gutter = d.pos.line.to_string();
                writeln!(f, "{} | {}", gutter, line)?;
                let caret_pad: String = line.chars().take(d.pos.col.saturating_sub(1)).map(|c| if c == '\t' { '\t' } else { ' ' }).collect();
                writeln!(f, "{} | {}^", " ".repeat(gutter.len()), caret_pad)?;
            }
            if let Some(h) = &d.hint {
                writeln!(f, "  hint: {}", h)?;
            }
        }
        let n = self.list.len();
        write!(f, "{}: {} problem{} found", self.file, n, if n == 1 { "" } else { "s" })
    }
}

/// The closest candidate to a misspelt name, if one is close enough to be a likely slip.
pub fn suggest<'a>(name: &str, candidates: impl IntoIterator<Item = &'a str>) -> Option<&'a str> {
    let lower = name.to_lowercase();
    candidates
        .into_iter()
        .map(|c| (edit_distance(&lower, &c.to_lowercase()), c))
        .filter(|(d, c)| *d <= (c.chars().count().max(2) / 3).max(1) || (*d <= 2 && c.len() > 3))
        .min_by_key(|(d, _)| *d)
        .map(|(_, c)| c)
}

/// Edits (insert, delete, change, or swap of two neighbours) from `a` to `b`: the optimal
/// string alignment distance, so a transposed pair such as `ers` for `esr` counts as one slip.
fn edit_distance(a: &str, b: &str) -> usize {
    let (a, b): (Vec<char>, Vec<char>) = (a.chars().collect(), b.chars().collect());
    let mut d = vec![vec![0; b.len() + 1]; a.len() + 1];
    for (i, row) in d.iter_mut().enumerate() {
        row[0] = i;
    }
    for (j, cell) in d[0].iter_mut().enumerate() {
        *cell = j;
    }
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let change = usize::from(a[i - 1] != b[j - 1]);
            d[i][j] = (d[i - 1][j - 1] + change).min(d[i - 1][j] + 1).min(d[i][j - 1] + 1);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                d[i][j] = d[i][j].min(d[i - 2][j - 2] + 1);
            }
        }
    }
    d[a.len()][b.len()]
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
