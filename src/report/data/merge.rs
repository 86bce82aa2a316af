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
