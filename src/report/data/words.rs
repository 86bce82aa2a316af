//! How a customer reads the things the findings name: a driver ("the tweeter (HF)"), where a
//! part sits ("the tweeter's filter"), what was fitted ("a 3.3 µF polypropylene film
//! capacitor rated 250 V"), a level, a count, a list.

use super::{quantity, Ctx};
use crate::model::{Network, Part, PartKind, Rating, Role, Scenario};
use crate::units::{format_si, trim_number};

/// A driver as a customer reads it: "the tweeter (HF)".
pub(super) fn driver_words(net: &Network, name: &str) -> String {
    match net.driver(name).map(|d| d.role) {
        Some(Role::Other) | None => format!("driver {name}"),
        Some(r) => format!("the {} ({name})", r.name()),
    }
}

/// Where a part sits, in words a customer reads: the filter of the driver whose section
/// holds it (never node names).
pub(super) fn part_place(net: &Network, part: &str) -> String {
    // The shop's own label for where it sits comes first.
    if let Some(s) = net.part(part).and_then(|p| p.section.clone()) {
        return s;
    }
    let owners: Vec<&str> = net.drivers.iter().filter(|d| net.section(&d.name).contains(&part)).map(|d| d.name.as_str()).collect();
    match owners.as_slice() {
        [one] => match net.driver(one).map(|d| d.role) {
            Some(Role::Other) | None => format!("{one}'s filter"),
            Some(r) => format!("the {}'s filter", r.name()),
        },
        [] => "the crossover's input".into(),
        _ => "the crossover".into(),
    }
}

pub(super) fn kind_noun(kind: PartKind) -> &'static str {
    match kind {
        PartKind::Capacitor => "capacitor",
        PartKind::Inductor => "inductor",
        PartKind::Resistor => "resistor",
    }
}

/// A part's rating as the trade writes it, from the job or as voicekeep chose it.
pub(super) fn rating_text(c: &Ctx, p: &Part) -> Option<String> {
    // A resistor left out (a wire link, or open) carries no rating.
    if p.kind == PartKind::Resistor && (p.value == 0.0 || p.value.is_infinite()) {
        return None;
    }
    match p.rating {
        Rating::Given(v) => Some(match p.kind {
            PartKind::Resistor => format!("{} W", trim_number(v, 3)),
            PartKind::Capacitor => format!("{} V", trim_number(v, 3)),
            PartKind::Inductor => format!("{} A", trim_number(v, 3)),
        }),
        Rating::Auto => c.f.stress.rows.iter().find(|r| r.scenario == Scenario::AsLeft && r.part == p.name).and_then(|r| r.rating_w).map(|w| format!("{} W", trim_number(w, 3))),
        Rating::None => None,
    }
}

/// "a 3.3 uF polypropylene film capacitor rated 250 V": what was fitted, for the customer.
pub(super) fn fitted_words(c: &Ctx, p: &Part) -> String {
    // A resistor the work leaves out is not a part fitted.
    if p.kind == PartKind::Resistor && p.value.is_infinite() {
        return "no resistor (left open)".into();
    }
    if p.kind == PartKind::Resistor && p.value == 0.0 {
        return "a wire link (no resistor)".into();
    }
    let value = format_si(p.value, quantity(p.kind), 3);
    let kind = match (&p.type_text, p.kind) {
        (Some(t), PartKind::Capacitor) if !t.to_lowercase().contains("capacitor") => format!("{t} capacitor"),
        (Some(t), PartKind::Resistor) if !t.to_lowercase().contains("resistor") => format!("{t} resistor"),
        (Some(t), PartKind::Inductor) if !t.to_lowercase().contains("inductor") => format!("{t} inductor"),
        (Some(t), _) => t.clone(),
        (None, k) => kind_noun(k).to_string(),
    };
    let rating = rating_text(c, p).map(|r| format!(" rated {r}")).unwrap_or_default();
    let spoken: f64 = value.split(' ').next().and_then(|n| n.parse().ok()).unwrap_or(1.0);
    format!("{} {value} {kind}{rating}", crate::units::a_or_an(spoken))
}

/// The level line of one driver, in words: louder or quieter, by how much.
pub(super) fn level_words(v: f64) -> String {
    if v < -crate::analysis::compensate::FAULT_DB {
        "silent: a fault (the driver shorted or disconnected)".into()
    } else if v.abs() < 0.005 {
        "as designed, to within 0.01 dB on average".into()
    } else if v > 0.0 {
        format!("{:.2} dB louder than designed", v)
    } else {
        format!("{:.2} dB quieter than designed", -v)
    }
}

/// A small count in words, as prose writes it: "one", "two" ... "nine", then digits.
pub(super) fn count_words(n: usize) -> String {
    ["no", "one", "two", "three", "four", "five", "six", "seven", "eight", "nine"].get(n).map(|w| w.to_string()).unwrap_or_else(|| n.to_string())
}

pub(super) fn capitalise(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(first) => first.to_uppercase().collect::<String>() + c.as_str(),
        None => String::new(),
    }
}

pub(super) fn join_and(items: &[String]) -> String {
    match items {
        [] => String::new(),
        [one] => one.clone(),
        [a, b] => format!("{a} and {b}"),
        [rest @ .., last] => format!("{}, and {last}", rest.join(", ")),
    }
}
