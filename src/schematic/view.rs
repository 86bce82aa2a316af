//! From a job's networks to circuits to draw: as designed (with the bench readings beside the
//! parts they flagged, and a failed driver struck through), and as left (replaced, added and
//! removed parts marked).

use super::{Circuit, Elem, Mark, Sym};
use crate::analysis::Findings;
use crate::model::{ChangeStep, Job, Network, PartKind};
use crate::units::{format_si, trade, Quantity};

fn value_text(kind: PartKind, value: f64) -> String {
    let q = match kind {
        PartKind::Resistor => Quantity::Resistance,
        PartKind::Capacitor => Quantity::Capacitance,
        PartKind::Inductor => Quantity::Inductance,
    };
    if kind == PartKind::Resistor && value == 0.0 {
        return "wire link".into();
    }
    trade(&format_si(value, q, 3))
}

/// The circuit of a network, every element kept, each labelled with its value or its role.
pub fn circuit(net: &Network) -> Circuit {
    let mut elems: Vec<Elem> = net
        .parts
        .iter()
        .map(|p| Elem {
            name: p.name.clone(),
            sym: match p.kind {
                PartKind::Resistor => Sym::Resistor,
                PartKind::Capacitor => Sym::Capacitor,
                PartKind::Inductor => Sym::Inductor,
            },
            nodes: p.between.clone(),
            text: vec![value_text(p.kind, p.value)],
            mark: Mark::Kept,
            failed: false,
            plus_at: 0,
        })
        .collect();
    for d in &net.drivers {
        // "other" says nothing beside a driver's own name.
        let mut text = if d.role == crate::model::Role::Other { vec![] } else { vec![d.role.name().to_string()] };
        if d.inverted {
            // Its + terminal is on the second node (the solve inverts its output): the mark
            // stands there, and the label says why.
            text.push("wired inverted".into());
        }
        elems.push(Elem { name: d.name.clone(), sym: Sym::Driver, nodes: d.between.clone(), text, mark: Mark::Kept, failed: false, plus_at: usize::from(d.inverted) });
    }
    Circuit { input: net.input.clone(), elems }
}

/// As designed, with what the bench found: a reading beside each part it flagged, a failed
/// driver or part struck through and said in words.
/// `readings` false leaves the values read out (a set's designed view, where each cabinet
/// read its own).
pub fn designed(job: &Job, f: &Findings, readings: bool) -> Circuit {
    let mut c = circuit(&job.network);
    let found = &f.scenes.as_found.network;
    for e in &mut c.elems {
        if let Some(p) = found.part(&e.name) {
            if let Some(fault) = p.fault {
                e.failed = true;
                e.text.push(format!("measured {}", fault.name()));
            } else if readings && f.health.iter().any(|h| h.part == e.name && !h.ok) {
                e.text.push(format!("measured {}", value_text(p.kind, p.value)));
            }
        }
        if let Some(d) = found.driver(&e.name).or_else(|| job.network.driver(&e.name)) {
            if let Some(fault) = d.fault {
                e.failed = true;
                e.text.push(format!("measured {}", fault.name()));
            } else if d.fault_note.is_some() {
                e.failed = true;
                e.text.push("failed (see notes)".into());
            }
        }
    }
    c
}

/// The names a list of steps replaced (parts given a new value or type, drivers a new model).
fn replaced(changes: &[crate::model::Change]) -> Vec<String> {
    changes
        .iter()
        .filter_map(|ch| match &ch.step {
            ChangeStep::Replace { target, .. } => Some(target.clone()),
            _ => None,
        })
        .collect()
}

/// As left: the network after the work, fitted values in, with each replaced, added and
/// removed part marked and said in its label.
pub fn as_left(job: &Job, f: &Findings) -> Circuit {
    after(job, &job.changes, &f.scenes.as_left.network)
}

/// A network as built: a resistor the fit left out is not there. An open one (a shunt arm
/// fitted at no value) is dropped; a series one fitted at 0 ohm is a wire, so the nodes it
/// joins are one.
pub fn as_built(net: &Network, original: &Network) -> Network {
    let mut net = net.clone();
    let not_fitted = |p: &crate::model::Part| p.kind == PartKind::Resistor && p.auto_value && original.part(&p.name).is_none();
    net.parts.retain(|p| !(not_fitted(p) && p.value.is_infinite()));
    while let Some(i) = net.parts.iter().position(|p| not_fitted(p) && p.value == 0.0) {
        let link = net.parts.remove(i);
        let [keep, gone] = link.between.clone();
        // The node nearer the amplifier keeps its name.
        let (keep, gone) = if net.input.contains(&gone) { (gone, keep) } else { (keep, gone) };
        let rename = |n: &mut String| {
            if *n == gone {
                *n = keep.clone();
            }
        };
        net.parts.iter_mut().for_each(|p| p.between.iter_mut().for_each(rename));
        net.drivers.iter_mut().for_each(|d| d.between.iter_mut().for_each(rename));
        net.input.iter_mut().for_each(rename);
    }
    net
}

/// The network `left` that `changes` made of the job's, marked.
fn after(job: &Job, changes: &[crate::model::Change], left: &Network) -> Circuit {
    let left = &as_built(left, &job.network);
    let mut c = circuit(left);
    let replaced = replaced(changes);
    for e in &mut c.elems {
        let was = job.network.part(&e.name).is_some() || job.network.driver(&e.name).is_some();
        if !was {
            e.mark = Mark::Added;
            e.text.push("added".into());
        } else if replaced.contains(&e.name) {
            e.mark = Mark::Replaced;
            // The new part's type: two options may differ in nothing else.
            if let Some(t) = left.part(&e.name).and_then(|p| p.type_text.clone()) {
                e.text.push(t);
            }
            e.text.push("replaced".into());
        } else if let Some(p) = job.network.part(&e.name) {
            // A part left in place is labelled with its marked value, as in the designed
            // view; its bench reading is the designed view's to show.
            e.text[0] = value_text(p.kind, p.value);
        }
    }
    // Removed parts stay in the drawing where they were, dashed.
    for p in &job.network.parts {
        if left.part(&p.name).is_none() {
            let mut e = circuit(&Network { parts: vec![p.clone()], drivers: vec![], ..job.network.clone() }).elems.remove(0);
            e.mark = Mark::Removed;
            e.text.push("removed".into());
            c.elems.push(e);
        }
    }
    c
}

/// Labels of work proposed, not done: "to be replaced".
fn proposed(c: &mut Circuit) {
    for e in &mut c.elems {
        for t in &mut e.text {
            if ["replaced", "added", "removed"].contains(&t.as_str()) {
                *t = format!("to be {t}");
            }
        }
    }
}

/// The caption's key to the marks the circuit uses (empty when it uses none).
fn key(c: &Circuit, proposal: bool) -> String {
    let keys: Vec<String> = legend(c).iter().map(|k| if proposal { k.replace("part ", "part to be ") } else { k.to_string() }).collect();
    if keys.is_empty() {
        String::new()
    } else {
        format!(" Key: {}.", keys.join("; "))
    }
}

/// A legend for the marks a circuit uses, in words.
pub fn legend(c: &Circuit) -> Vec<&'static str> {
    let mut out = Vec::new();
    let has = |m: Mark| c.elems.iter().any(|e| e.mark == m);
    if has(Mark::Replaced) {
        out.push("heavy lines: part replaced");
    }
    if has(Mark::Added) {
        out.push("heavy lines on grey: part added");
    }
    if has(Mark::Removed) {
        out.push("dashed: part removed");
    }
    if c.elems.iter().any(|e| e.failed) {
        out.push("struck through: found failed");
    }
    out
}

/// One view of the crossover, ready to draw.
pub struct View {
    /// `designed`, `as-left`, or `option-N`: the file is `schematic-NAME.svg`.
    pub name: String,
    pub caption: String,
    pub circuit: Circuit,
}

/// Marks, in each element's label, the parts whose values differ between the cabinets of a
/// set (as found for the designed view, as left for the as-left view).
fn mark_differing(c: &mut Circuit, set: &crate::analysis::pair::SetFindings, found: bool) {
    for e in &mut c.elems {
        let values: Vec<f64> = set
            .cabinets
            .iter()
            .filter_map(|cab| {
                let s = if found { &cab.findings.scenes.as_found } else { &cab.findings.scenes.as_left };
                s.network.part(&e.name).map(|p| p.value)
            })
            .collect();
        if values.windows(2).any(|w| (w[0] - w[1]).abs() > 1e-12 * w[0].abs().max(w[1].abs())) {
            e.text.push("differs by cabinet".into());
        }
    }
}

/// In a set, marks each part that some cabinets' own steps replaced ("replaced in KB-5121").
fn mark_cabinet_steps(c: &mut Circuit, set: &crate::analysis::pair::SetFindings, proposal: bool) {
    for e in c.elems.iter_mut().filter(|e| e.mark == Mark::Kept) {
        let who: Vec<&str> = set.cabinets.iter().filter(|cab| replaced(&cab.job.changes).contains(&e.name)).map(|cab| cab.name.as_str()).collect();
        if !who.is_empty() {
            e.mark = Mark::Replaced;
            let what = if proposal { "to be replaced in" } else { "replaced in" };
            e.text.push(format!("{what} {}", who.join(", ")));
        }
    }
}

/// The views a job can show: as designed (with the bench's readings), as left when work was
/// done, and each option as proposed.
pub fn views(job: &Job, o: &crate::analysis::Outcome, quote: bool) -> Vec<View> {
    use crate::analysis::Outcome;
    let (f, set) = match o {
        Outcome::One(f) => (f.as_ref(), None),
        Outcome::Set(s) => match s.cabinets.first() {
            Some(c) => (&c.findings, Some(s.as_ref())),
            None => return vec![],
        },
    };
    let mut out = Vec::new();
    let mut designed = designed(job, f, set.is_none());
    let mut readings = "what the bench measured beside the parts it flagged; a part or driver found failed struck through".to_string();
    if let Some(s) = set {
        mark_differing(&mut designed, s, true);
        readings = "a part marked \"differs by cabinet\" measured differently in the cabinets; a part or driver found failed struck through".to_string();
    }
    out.push(View {
        name: "designed".into(),
        caption: format!(
            "The crossover as designed, drawn from the job's network: the amplifier's terminals on the left, each driver on the right with its + terminal marked; {readings}."
        ),
        circuit: designed,
    });
    if job.work_done() {
        let mut left = as_left(job, f);
        if let Some(s) = set {
            mark_differing(&mut left, s, false);
            mark_cabinet_steps(&mut left, s, quote);
        }
        if quote {
            // A quotation's steps are proposed, not done.
            proposed(&mut left);
            let key = key(&left, true);
            out.push(View { name: "as-proposed".into(), caption: format!("The crossover as the shop proposes to leave it, with the values it would fit.{key}"), circuit: left });
        } else {
            let key = key(&left, false);
            out.push(View { name: "as-left".into(), caption: format!("The crossover as left after the work, with the values fitted.{key}"), circuit: left });
        }
    }
    let options = match set {
        Some(s) => &s.options,
        None => &f.options,
    };
    for (i, (spec, of)) in job.options.iter().zip(options.iter()).enumerate() {
        let mut c = after(job, &spec.changes, &of.findings.scenes.as_left.network);
        proposed(&mut c);
        if let Some(s) = set {
            mark_cabinet_steps(&mut c, s, true);
        }
        let key = key(&c, true);
        out.push(View { name: format!("option-{}", i + 1), caption: format!("Option {}: the crossover as this option proposes it.{key}", spec.name), circuit: c });
    }
    out
}
