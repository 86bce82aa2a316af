//! Bench readings and what they name: the part or driver a reading or a change step names,
//! what a reading of a part or a driver may give (a driver's fields against its model; open
//! or shorted alone), and the warnings for a reading or a replacement far from the design's
//! value.

use crate::diag::{suggest, Pos};
use crate::job::fields::part_fields;
use crate::job::raw::Entry;
use crate::job::reader::{Ctx, Fields};
use crate::model::*;
use crate::units::{format_si, Quantity};

const READING_PART_KEYS: &[&str] = &["value", "esr", "tan_delta", "dcr", "at", "open", "shorted"];
const READING_DRIVER_KEYS: &[&str] = &["resistance", "re", "le", "fs", "qms", "qes", "at", "open", "shorted", "fault"];

/// A driver reading names fields of the driver's own model; one its model does not have
/// (a resonance reading on a model without one, `re` on a measured table) would otherwise be
/// dropped, so it is refused where it is written.
fn reading_fits_model(f: &Fields, d: &Driver, ctx: &mut Ctx) -> bool {
    let (kind, has): (&str, Vec<&str>) = match &d.model {
        DriverModel::Resistance(_) => ("a plain resistance", vec!["resistance", "re"]),
        DriverModel::VoiceCoil { inductance, resonance, .. } => {
            let leach = matches!(inductance, VoiceCoilInductance::Leach { .. });
            let mut has = vec!["re"];
            if !leach {
                has.push("le");
            }
            if resonance.is_some() {
                has.extend(["fs", "qms", "qes"]);
            }
            let kind = match (leach, resonance.is_some()) {
                (true, true) => "Re with Leach's inductance and a resonance",
                (true, false) => "Re with Leach's inductance and no resonance",
                (false, true) => "Re and Le with a resonance",
                (false, false) => "Re and Le with no resonance",
            };
            (kind, has)
        }
        DriverModel::Table(_) => ("a measured impedance table", vec![]),
    };
    let mut ok = true;
    for key in ["resistance", "re", "le", "fs", "qms", "qes"] {
        let Some(n) = f.get(key) else { continue };
        if has.contains(&key) {
            continue;
        }
        let hint = match (&d.model, key) {
            (DriverModel::Table(_), _) => "a table holds the whole impedance: measure the driver again and `replace` it with the new table".to_string(),
            (DriverModel::Resistance(_), _) => format!("a plain resistance takes `resistance` (or `re`); give {} a voice-coil model to read `{key}`", d.name),
            (_, "resistance") => "for a voice-coil model, read its DC resistance as `re`".to_string(),
            (_, "le") => "Leach's K and n are not read on the bench; `replace` the driver's model if it has changed".to_string(),
            _ => format!("give {}'s model fs, qms and qes in `network.drivers.{}.model` before reading them", d.name, d.name),
        };
        ctx.error(n.pos(), &f.at(key), format!("{}'s model is {kind}: a reading of `{key}` has nothing to apply to", d.name), Some(hint));
        ok = false;
    }
    ok
}

/// The fields a driver's bench reading may give, read against its model.
fn driver_reading(f: &Fields, d: &Driver, ctx: &mut Ctx) -> Option<DriverPatch> {
    let fault_note = ctx.opt_text(f, "fault");
    // A driver read open or shorted: nothing else of it was measured.
    let Ok(fault) = fault_alone(f, "a driver", &["resistance", "re", "le", "fs", "qms", "qes"], ctx) else { return None };
    if fault.is_some() {
        return Some(DriverPatch { fault, fault_note, ..Default::default() });
    }
    if !reading_fits_model(f, d, ctx) {
        return None;
    }
    Some(DriverPatch {
        fault_note,
        resistance: ctx.opt_positive(f, "resistance", Quantity::Resistance, false),
        re: ctx.opt_positive(f, "re", Quantity::Resistance, false),
        le: ctx.opt_positive(f, "le", Quantity::Inductance, true),
        fs: ctx.opt_positive(f, "fs", Quantity::Frequency, false),
        qms: f.get("qms").and_then(|n| ctx.bare_number(n, &f.at("qms"))),
        qes: f.get("qes").and_then(|n| ctx.bare_number(n, &f.at("qes"))),
        ..Default::default()
    })
}

/// The bench readings of `entries` (written under `field`), read against the parts and
/// drivers they name.
pub(super) fn measured(entries: &[Entry], net: &Network, field: &str, ctx: &mut Ctx) -> Vec<Reading> {
    let mut out = Vec::new();
    for e in entries {
        let (k, v) = (e.key, e.node);
        let path = format!("{field}.{}", k.name);
        let patch = match find_target(net, &[], &k.name, k.pos, &path, ctx) {
            Some(Target::Part(p)) => ctx.fields(v, &path, READING_PART_KEYS).and_then(|f| match fault(&f, ctx) {
                Ok(Some(fault)) => Some(Patch::Part(PartPatch { fault: Some(fault), ..Default::default() })),
                Ok(None) => part_fields(&f, p.kind, ctx, false).map(|patch| {
                    far_from_design(p, &patch, &f, ctx);
                    Patch::Part(patch)
                }),
                Err(()) => None,
            }),
            Some(Target::Driver(d)) => ctx.fields(v, &path, READING_DRIVER_KEYS).and_then(|f| driver_reading(&f, d, ctx)).map(Patch::Driver),
            None => None,
        };
        if let Some(patch) = patch {
            out.push(Reading { target: k.name.clone(), patch, pos: k.pos });
        }
    }
    out
}

/// A part's reading of `open: true` or `shorted: true` in place of a value; Err when it is
/// written wrongly (reported).
fn fault(f: &Fields, ctx: &mut Ctx) -> Result<Option<Fault>, ()> {
    fault_alone(f, "a part", &["value", "esr", "tan_delta", "dcr"], ctx)
}

/// `open: true` or `shorted: true`, with none of the `readings` beside it.
fn fault_alone(f: &Fields, what: &str, readings: &[&str], ctx: &mut Ctx) -> Result<Option<Fault>, ()> {
    let mut found = None;
    for (key, fault) in [("open", Fault::Open), ("shorted", Fault::Shorted)] {
        let Some(n) = f.get(key) else { continue };
        match ctx.choice(n, &f.at(key), &[("true", true), ("false", false)]) {
            Some(true) => {
                if found.is_some() {
                    ctx.error(n.pos(), &f.at(key), format!("{what} cannot read both open and shorted"), Some("keep the one the meter showed".into()));
                    return Err(());
                }
                found = Some(fault);
            }
            Some(false) => {}
            None => return Err(()),
        }
    }
    if let Some(fault) = found {
        if let Some(k) = readings.iter().find(|k| f.get(k).is_some()) {
            ctx.error(
                f.get(k).map(|n| n.pos()).unwrap_or(f.pos),
                &f.at(k),
                format!("{what} that reads {} has no `{k}` reading", fault.name()),
                Some(format!("write `{}: true` alone, or the values the meter read", fault.name())),
            );
            return Err(());
        }
    }
    Ok(found)
}

/// Warns of a reading or replacement far from the design's part: a value ten times or a
/// tenth of the design's (a prefix slip: µ for m, k for nothing), and a loss resistance of
/// more than 100 ohm and a hundred times the design's (a part that conducts almost nothing
/// reads `open: true`). A part that really is so far off stays as written.
pub(super) fn far_from_design(p: &Part, patch: &PartPatch, f: &Fields, ctx: &mut Ctx) {
    let quantity = match p.kind {
        PartKind::Capacitor => Quantity::Capacitance,
        PartKind::Inductor => Quantity::Inductance,
        PartKind::Resistor => Quantity::Resistance,
    };
    if let (Some(v), Some(n)) = (patch.value, f.get("value")) {
        let ratio = v / p.value;
        if p.value > 0.0 && p.value.is_finite() && v > 0.0 && !(0.1 * (1.0 + 1e-9)..10.0 * (1.0 - 1e-9)).contains(&ratio) {
            let how = if ratio > 1.0 { format!("{} times", crate::units::trim_number(ratio, 3)) } else { format!("1/{} of", crate::units::trim_number(1.0 / ratio, 3)) };
            ctx.warn(
                n.pos(),
                &f.at("value"),
                format!("{} is {how} the design's {}: a slip of the unit's prefix?", format_si(v, quantity, 3), format_si(p.value, quantity, 3)),
                "check the prefix (u for micro, m for milli); a part that really is this far off stays as written",
            );
        }
    }
    for (key, was, now) in [("esr", p.esr, patch.esr), ("dcr", p.dcr, patch.dcr)] {
        let (Some(v), Some(n)) = (now, f.get(key)) else { continue };
        if v > 100.0 && v > 100.0 * was {
            ctx.warn(
                n.pos(),
                &f.at(key),
                format!(
                    "{} of {} is a part that conducts almost nothing (the design's is {})",
                    key.to_uppercase(),
                    format_si(v, Quantity::Resistance, 3),
                    format_si(was, Quantity::Resistance, 3)
                ),
                "a part the meter shows no continuity through reads `open: true`; otherwise check the prefix",
            );
        }
    }
}

pub(super) enum Target<'a> {
    Part(&'a Part),
    Driver(&'a Driver),
}

/// The part or driver a step or reading names: in the network, or added by an earlier step.
pub(super) fn find_target<'a>(net: &'a Network, added: &'a [Part], key: &str, pos: Pos, path: &str, ctx: &mut Ctx) -> Option<Target<'a>> {
    if let Some(p) = net.part(key).or_else(|| added.iter().find(|p| p.name == key)) {
        return Some(Target::Part(p));
    }
    if let Some(d) = net.driver(key) {
        return Some(Target::Driver(d));
    }
    if ctx.failed.iter().any(|e| e == key) {
        return None;
    }
    let names: Vec<&str> = net.branches().map(|(n, _)| n).chain(added.iter().map(|p| p.name.as_str())).collect();
    let hint = match suggest(key, names.iter().copied()) {
        Some(s) => format!("did you mean `{s}`?"),
        None => format!("the network has: {}", names.join(", ")),
    };
    ctx.error(pos, path, format!("there is no part or driver {key} in the network"), Some(hint));
    None
}
