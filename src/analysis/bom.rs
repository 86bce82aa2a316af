//! Parts to buy for the work done: one line per distinct part the steps fit (a replacement,
//! an inserted or added part with its solved value and chosen rating, a substitute driver),
//! merged when the same part appears twice, times the cabinets it goes into; priced from the
//! shop's price list where one is given (same kind and value, a type the part's type names,
//! the smallest stock rating that meets the part's), never invented.

use crate::model::{ChangeStep, Job, Part, PartKind, Patch, PriceItem, PriceList, Scenario};
use crate::money::Money;
use crate::units::{format_si, trim_number, Quantity};

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Line {
    pub kind: String,
    pub value: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub series: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub tolerance: Option<String>,
    /// The rating the part needs (W, V or A), or None when nothing asks for one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rating: Option<String>,
    #[serde(rename = "type", skip_serializing_if = "Option::is_none")]
    pub type_text: Option<String>,
    pub quantity: u32,
    /// The parts it is, by reference (R9, C1 ...).
    pub parts: Vec<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub unit_price: Option<Money>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub price: Option<Money>,
    /// The stock item priced, or why the line is not priced.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub stock: Option<String>,
    #[serde(skip)]
    value_si: f64,
    #[serde(skip)]
    rating_si: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Default, serde::Serialize)]
pub struct PartsList {
    pub lines: Vec<Line>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub currency: Option<String>,
    /// The sum of the priced lines; None without a price list.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub total: Option<Money>,
    /// Lines the list could not price.
    pub unpriced: usize,
}

fn kind_name(k: PartKind) -> &'static str {
    match k {
        PartKind::Resistor => "resistor",
        PartKind::Capacitor => "capacitor",
        PartKind::Inductor => "inductor",
    }
}

fn quantity_of(k: PartKind) -> (Quantity, Quantity) {
    match k {
        PartKind::Resistor => (Quantity::Resistance, Quantity::Power),
        PartKind::Capacitor => (Quantity::Capacitance, Quantity::Voltage),
        PartKind::Inductor => (Quantity::Inductance, Quantity::Current),
    }
}

/// A part that is bought: not a resistor the work leaves out (0 ohm, a wire link; or open).
fn bought(p: &Part) -> bool {
    !(p.kind == PartKind::Resistor && (p.value == 0.0 || p.value.is_infinite()))
}

/// The line for one fitted part: its value as left, and the rating it needs (the job's, or
/// the one chosen for `rating: auto`).
fn part_line(p: &Part, series: Option<String>, rating_w: impl Fn(&str) -> Option<f64>) -> Line {
    let (q, rq) = quantity_of(p.kind);
    let rating_si = match p.rating {
        crate::model::Rating::Given(v) => Some(v),
        crate::model::Rating::Auto => rating_w(&p.name),
        crate::model::Rating::None => None,
    };
    Line {
        kind: kind_name(p.kind).into(),
        value: format_si(p.value, q, 3),
        series,
        tolerance: p.tolerance.map(|t| format!("{} %", trim_number(100.0 * t, 3))),
        rating: rating_si.map(|r| format_si(r, rq, 3)),
        type_text: p.type_text.clone(),
        quantity: 1,
        parts: vec![p.name.clone()],
        unit_price: None,
        price: None,
        stock: None,
        value_si: p.value,
        rating_si,
    }
}

/// The lines of the steps `changes` in one cabinet, solved as `left` (the as-left network).
fn lines_of(job: &Job, changes: &[crate::model::Change], left: &crate::model::Network, rating_w: &dyn Fn(&str) -> Option<f64>) -> Vec<Line> {
    let series = |name: &str| job.compensate.iter().find(|e| e.part == name).map(|e| e.series.name().to_string());
    let mut out = Vec::new();
    for c in changes {
        match &c.step {
            ChangeStep::Replace { target, with: Patch::Part(_) } | ChangeStep::Insert { part: Part { name: target, .. }, .. } => {
                if let Some(p) = left.part(target).filter(|p| bought(p)) {
                    out.push(part_line(p, series(target), rating_w));
                }
            }
            ChangeStep::Add { parts } => {
                for p in parts.iter().filter_map(|p| left.part(&p.name)).filter(|p| bought(p)) {
                    out.push(part_line(p, series(&p.name), rating_w));
                }
            }
            ChangeStep::Replace { target, with: Patch::Driver(d) } => {
                let Some(dr) = left.driver(target) else { continue };
                let value = d.note.clone().unwrap_or_else(|| format!("replacement for {target}"));
                out.push(Line {
                    kind: "driver".into(),
                    value,
                    series: None,
                    tolerance: None,
                    rating: dr.rated_power.map(|w| format!("{} W", trim_number(w, 3))),
                    type_text: None,
                    quantity: 1,
                    parts: vec![target.clone()],
                    unit_price: None,
                    price: None,
                    stock: None,
                    value_si: 0.0,
                    rating_si: None,
                });
            }
            ChangeStep::Remove { .. } => {}
        }
    }
    out
}

/// Lines that are the same part merged, their quantities and references added.
fn merge(lines: Vec<Line>) -> Vec<Line> {
    let mut out: Vec<Line> = Vec::new();
    for l in lines {
        let same = |m: &Line| m.kind == l.kind && m.value == l.value && m.series == l.series && m.tolerance == l.tolerance && m.rating == l.rating && m.type_text == l.type_text;
        match out.iter_mut().find(|m| same(m)) {
            Some(m) => {
                m.quantity += l.quantity;
                for p in l.parts {
                    if !m.parts.contains(&p) {
                        m.parts.push(p);
                    }
                }
            }
            None => out.push(l),
        }
    }
    out
}

/// The stock item that prices `line`: same kind and value (a driver: the same name), a type
/// its type names (or a list item of any type), and the smallest rating that meets the line's.
fn stock_for<'a>(list: &'a PriceList, line: &Line) -> Option<&'a PriceItem> {
    let type_fits = |item: &PriceItem| match (&item.type_text, &line.type_text) {
        (None, _) => true,
        (Some(want), Some(has)) => has.to_lowercase().contains(&want.to_lowercase()),
        (Some(_), None) => false,
    };
    let value_fits = |item: &PriceItem| {
        if line.kind == "driver" {
            item.value_text.eq_ignore_ascii_case(&line.value)
        } else {
            (item.value / line.value_si - 1.0).abs() < 1e-6
        }
    };
    let rating_fits = |item: &PriceItem| match (line.rating_si, item.rating) {
        (None, _) => true,
        (Some(need), Some(has)) => has >= need * (1.0 - 1e-9),
        (Some(_), None) => false,
    };
    list.items
        .iter()
        .filter(|i| i.kind == line.kind && value_fits(i) && type_fits(i) && rating_fits(i))
        .min_by(|a, b| a.rating.unwrap_or(0.0).total_cmp(&b.rating.unwrap_or(0.0)).then(a.unit_price.cmp(&b.unit_price)))
}

/// Prices every line it can; the total is the sum of the priced lines.
fn price(lines: &mut [Line], list: Option<&PriceList>) -> (Option<Money>, usize) {
    let Some(list) = list else { return (None, 0) };
    let mut total = Money(0);
    let mut unpriced = 0;
    for l in lines.iter_mut() {
        match stock_for(list, l) {
            Some(item) => {
                l.unit_price = Some(item.unit_price);
                l.price = item.unit_price.times(l.quantity);
                total = l.price.and_then(|p| total.plus(p)).unwrap_or(total);
                let unit = match item.kind.as_str() {
                    "capacitor" => Quantity::Voltage,
                    "inductor" => Quantity::Current,
                    _ => Quantity::Power,
                };
                let rating = item.rating.map(|r| format!(", rated {}", format_si(r, unit, 3))).unwrap_or_default();
                l.stock = Some(format!("{} line {}: {} {}{rating}", list.file, item.line, item.kind, item.value_text));
            }
            None => {
                unpriced += 1;
                l.stock = Some(format!("not in {}: no {} of this value{}", list.file, l.kind, if l.rating.is_some() { ", type and rating" } else { " and type" }));
            }
        }
    }
    (Some(total), unpriced)
}

/// The parts to buy for a job's work done. `cabinets` holds, per cabinet, its own steps and
/// its as-left network and chosen ratings; a job of one cabinet has one.
pub fn for_work(job: &Job, cabinets: &[(&[crate::model::Change], &crate::model::Network, &crate::analysis::stress::Stress)]) -> PartsList {
    let mut lines = Vec::new();
    for (own, left, stress) in cabinets {
        let rating_w = |part: &str| stress.rows.iter().find(|r| r.scenario == Scenario::AsLeft && r.part == part).and_then(|r| r.rating_w);
        let steps: Vec<crate::model::Change> = job.changes.iter().chain(own.iter()).cloned().collect();
        lines.extend(lines_of(job, &steps, left, &rating_w));
    }
    let mut lines = merge(lines);
    let (total, unpriced) = price(&mut lines, job.prices.as_ref());
    PartsList { lines, currency: job.prices.as_ref().map(|p| p.currency.clone()), total, unpriced }
}
