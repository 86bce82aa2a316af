//! Merging several cabinets' report data into one: tables gain a Cabinet column unless every
//! cabinet's is the same, a sentence every cabinet says is said once, and lists of steps are
//! merged position by position so the steps keep their order.

use super::{Row, Table};

/// Tables of several cabinets as one: the first cabinet's when all are the same, else each
/// row marked with its cabinet.
pub(super) fn merge_tables(names: &[String], tables: Vec<Table>) -> Table {
    if tables.windows(2).all(|w| w[0].header == w[1].header && rows_eq(&w[0].rows, &w[1].rows)) {
        return tables.into_iter().next().unwrap_or_default();
    }
    let mut header = vec!["Cabinet".to_string()];
    header.extend(tables.iter().find(|t| !t.header.is_empty()).map(|t| t.header.clone()).unwrap_or_default());
    let mut rows = Vec::new();
    for (name, t) in names.iter().zip(tables) {
        for r in t.rows {
            let mut cells = vec![name.clone()];
            cells.extend(r.0);
            rows.push(Row(cells));
        }
    }
    Table { header, rows }
}

fn rows_eq(a: &[Row], b: &[Row]) -> bool {
    a.len() == b.len() && a.iter().zip(b).all(|(x, y)| x.0 == y.0)
}

/// Sentences of several cabinets as one list: those every cabinet says once, in the first
/// cabinet's order; the rest said of their cabinet.
pub(super) fn merge_sentences(names: &[String], lists: Vec<Vec<String>>) -> Vec<String> {
    let shared = |s: &String| lists.iter().all(|l| l.contains(s));
    let mut out: Vec<String> = Vec::new();
    if let Some(first) = lists.first() {
        out.extend(first.iter().filter(|s| shared(s)).cloned());
    }
    for (name, l) in names.iter().zip(&lists) {
        for s in l.iter().filter(|s| !shared(s)) {
            out.push(format!("Cabinet {name}: {s}"));
        }
    }
    out
}

/// Lists of the same steps in several cabinets as one: position by position, a line every
/// cabinet has there said once, the others said of their cabinet, so the steps keep their
/// order.
pub(super) fn merge_in_order(names: &[String], lists: Vec<Vec<String>>) -> Vec<String> {
    let n = lists.iter().map(Vec::len).max().unwrap_or(0);
    let mut out = Vec::new();
    for i in 0..n {
        let at: Vec<Option<&String>> = lists.iter().map(|l| l.get(i)).collect();
        if at.iter().all(|s| s.is_some() && *s == at[0]) {
            out.extend(at[0].cloned());
        } else if let Some(one) = same_step(names, &at) {
            out.push(one);
        } else {
            for (name, s) in names.iter().zip(at) {
                if let Some(s) = s {
                    out.push(format!("Cabinet {name}: {s}"));
                }
            }
        }
    }
    out
}

/// One numbered step every cabinet took, told with each cabinet's own figures ("1. Replaced
/// C1: 3.15 µF in KB-5120, 2.7 µF in KB-5121 (as found) -> 3.3 µF"): the words they share said
/// once, the step keeping its one number. None unless every cabinet has the line and the
/// lines begin with the same step number.
fn same_step(names: &[String], at: &[Option<&String>]) -> Option<String> {
    let lines: Vec<&str> = at.iter().map(|s| s.map(|s| s.as_str())).collect::<Option<Vec<_>>>()?;
    let number = |l: &str| l.split_once(". ").map(|(n, _)| n.to_string()).filter(|n| !n.is_empty() && n.bytes().all(|b| b.is_ascii_digit()));
    let first = number(lines[0])?;
    if lines.iter().any(|l| number(l).as_ref() != Some(&first)) {
        return None;
    }
    // The longest shared beginning and end, cut where a word begins or ends.
    let chars: Vec<Vec<char>> = lines.iter().map(|l| l.chars().collect()).collect();
    let shortest = chars.iter().map(Vec::len).min()?;
    let mut pre = (0..shortest).take_while(|&i| chars.iter().all(|c| c[i] == chars[0][i])).count();
    while pre > 0 && chars[0][pre - 1] != ' ' {
        pre -= 1;
    }
    let mut suf = (0..shortest - pre).take_while(|&i| chars.iter().all(|c| c[c.len() - 1 - i] == chars[0][chars[0].len() - 1 - i])).count();
    while suf > 0 && chars[0][chars[0].len() - suf] != ' ' {
        suf -= 1;
    }
    let prefix: String = chars[0][..pre].iter().collect();
    // The same step names the same part: "1. Replaced C1: ".
    if !prefix.contains(": ") {
        return None;
    }
    // The shared end starts where the figures end: at " (as found)" or " -> ", so a unit
    // stays with its number.
    let tail: String = chars[0][chars[0].len() - suf..].iter().collect();
    let suffix = match [" (", " -> "].iter().filter_map(|m| tail.find(m)).min() {
        Some(i) => tail[i..].to_string(),
        None => String::new(),
    };
    let suf = suffix.chars().count();
    let middles: Vec<String> = names.iter().zip(&chars).map(|(name, c)| format!("{} in {name}", c[pre..c.len() - suf].iter().collect::<String>().trim())).collect();
    Some(format!("{prefix}{}{suffix}", middles.join(", ")))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_step_every_cabinet_took_keeps_its_one_number() {
        let names = vec!["A".to_string(), "B".to_string()];
        let lists = vec![
            vec!["1. Replaced C1: 3.15 µF (as found) -> 3.3 µF".to_string(), "2. Inserted R9".to_string()],
            vec!["1. Replaced C1: 2.7 µF (as found) -> 3.3 µF".to_string(), "2. Inserted R9".to_string(), "3. Replaced R1".to_string()],
        ];
        assert_eq!(merge_in_order(&names, lists), vec!["1. Replaced C1: 3.15 µF in A, 2.7 µF in B (as found) -> 3.3 µF", "2. Inserted R9", "Cabinet B: 3. Replaced R1"]);
        // Lines of different steps are each said of their cabinet.
        let lists = vec![vec!["1. Replaced C1".to_string()], vec!["1. Removed C1".to_string()]];
        assert_eq!(merge_in_order(&names, lists), vec!["Cabinet A: 1. Replaced C1", "Cabinet B: 1. Removed C1"]);
    }
}
