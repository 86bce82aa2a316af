//! The field groups the parse and build stages share: a part, the value and loss fields of a
//! part, a reading or a replacement, a driver and its model.

use crate::job::raw::{RawDriver, RawModel, TableRef};
use crate::job::reader::{Ctx, Fields};
use crate::job::yaml::{Key, Node};
use crate::model::{Part, PartKind, PartPatch, Rating, Resonance, Role, VoiceCoilInductance};
use crate::units::{trim_number, Quantity};

pub(crate) const PART_KEYS: &[&str] =
    &["kind", "between", "value", "esr", "tan_delta", "dcr", "tolerance", "rating", "type", "core", "section", "markings", "maker", "part_number", "supplier", "lot"];
pub(crate) const DRIVER_KEYS: &[&str] = &["role", "between", "model", "rated_power", "sensitivity", "response", "polarity", "note"];
pub(crate) const MODEL_KEYS: &[&str] = &["resistance", "re", "le", "leach", "fs", "qms", "qes", "qts", "table"];

/// A table file named at `node`.
pub(crate) fn table_ref(node: &Node, path: &str, ctx: &mut Ctx) -> Option<TableRef> {
    let name = ctx.text(node, path)?;
    Some(TableRef { name, pos: node.pos(), field: path.to_string() })
}

pub(crate) fn part(key: &Key, node: &Node, path: &str, ctx: &mut Ctx) -> Option<Part> {
    let f = ctx.fields(node, path, PART_KEYS)?;
    let kind = match ctx.req(&f, "kind", "capacitor, inductor or resistor") {
        Some(n) => ctx.choice(n, &f.at("kind"), &[("capacitor", PartKind::Capacitor), ("inductor", PartKind::Inductor), ("resistor", PartKind::Resistor)]),
        None => None,
    };
    let between = ctx.req(&f, "between", "its two nodes, e.g. [IN, H1]").and_then(|n| ctx.pair_of_nodes(n, &f.at("between")));
    let kind = kind?;
    let patch = part_fields(&f, kind, ctx, true)?;
    if !patch.auto_value && patch.value.is_none() {
        if f.get("value").is_none() {
            ctx.error(
                key.pos,
                &f.at("value"),
                format!("missing `value` for {} {}", kind.name(), key.name),
                Some("give its marked value, such as `value: 3.3 uF`, or `value: auto` for a resistor to fit".into()),
            );
        }
        return None;
    }
    if kind == PartKind::Inductor && f.get("dcr").is_none() {
        ctx.error(
            key.pos,
            &f.at("dcr"),
            format!("inductor {} needs its `dcr` (DC resistance, e.g. 0.35 ohm)", key.name),
            Some("the DCR shapes the level the driver plays at; measure it with an ohmmeter, or write 0 ohm if it is truly negligible".into()),
        );
    }
    let mut part = Part::new(&key.name, kind, between?, 0.0, key.pos);
    part.value = patch.value.unwrap_or(0.0);
    part.auto_value = patch.auto_value;
    part.esr = patch.esr.unwrap_or(0.0);
    part.tan_delta = patch.tan_delta;
    part.dcr = patch.dcr.unwrap_or(0.0);
    part.tolerance = patch.tolerance;
    part.rating = patch.rating.unwrap_or(Rating::None);
    part.type_text = patch.type_text;
    part.section = patch.section;
    part.provenance = patch.provenance;
    Some(part)
}

/// The value and loss fields shared by a part, a bench reading and a replacement.
pub(crate) fn part_fields(f: &Fields, kind: PartKind, ctx: &mut Ctx, allow_auto: bool) -> Option<PartPatch> {
    let q = match kind {
        PartKind::Capacitor => Quantity::Capacitance,
        PartKind::Inductor => Quantity::Inductance,
        PartKind::Resistor => Quantity::Resistance,
    };
    let mut p = PartPatch::default();
    let mut ok = true;
    // The shop's record of the part: where it sits, and where it came from.
    p.section = ctx.opt_text(f, "section");
    p.provenance = crate::model::Provenance {
        maker: ctx.opt_text(f, "maker"),
        part_number: ctx.opt_text(f, "part_number"),
        supplier: ctx.opt_text(f, "supplier"),
        lot: ctx.opt_text(f, "lot"),
        markings: ctx.opt_text(f, "markings"),
    };
    if let Some(n) = f.get("value") {
        if n.as_scalar() == Some("auto") {
            if allow_auto && kind == PartKind::Resistor {
                p.auto_value = true;
            } else {
                ctx.error(
                    n.pos(),
                    &f.at("value"),
                    if kind == PartKind::Resistor { "`auto` is not allowed here".to_string() } else { format!("`auto` is for resistors only; a {} needs its value", kind.name()) },
                    Some("voicekeep solves compensating resistors; give capacitors and inductors their values".into()),
                );
                ok = false;
            }
        } else {
            p.value = ctx.positive(n, &f.at("value"), q, kind == PartKind::Resistor);
            ok &= p.value.is_some();
        }
    }
    for (key, allowed_kind) in [("esr", PartKind::Capacitor), ("tan_delta", PartKind::Capacitor), ("dcr", PartKind::Inductor)] {
        if let Some(n) = f.get(key) {
            if kind != allowed_kind {
                let hint = match kind {
                    PartKind::Capacitor => "a capacitor's loss is `esr` or `tan_delta`",
                    PartKind::Inductor => "an inductor's loss is `dcr`",
                    PartKind::Resistor => "a resistor's value is its resistance; it takes no esr, tan_delta or dcr",
                };
                ctx.error(n.pos(), &f.at(key), format!("{} {} has no `{}`", if kind == PartKind::Inductor { "an" } else { "a" }, kind.name(), key), Some(hint.into()));
                ok = false;
            }
        }
    }
    if f.get("esr").is_some() && f.get("tan_delta").is_some() {
        ctx.error(f.pos, &f.at("tan_delta"), "give either `esr` or `tan_delta`, not both", None);
        ok = false;
    }
    if kind == PartKind::Capacitor {
        p.esr = ctx.opt_positive(f, "esr", Quantity::Resistance, true);
        if let Some(n) = f.get("tan_delta") {
            match ctx.bare_number(n, &f.at("tan_delta")) {
                Some(v) if (0.0..1.0).contains(&v) => p.tan_delta = Some(v),
                Some(v) => {
                    ctx.error(n.pos(), &f.at("tan_delta"), format!("tan_delta {v} is outside 0 to 1"), Some("write the dissipation factor as a number, 0.08 for 8 %".into()))
                }
                None => {}
            }
        }
    }
    if kind == PartKind::Inductor {
        p.dcr = ctx.opt_positive(f, "dcr", Quantity::Resistance, true);
    }
    if let Some(n) = f.get("tolerance") {
        match ctx.positive(n, &f.at("tolerance"), Quantity::Percent, true) {
            Some(t) if t < 1.0 => p.tolerance = Some(t),
            Some(_) => ctx.error(n.pos(), &f.at("tolerance"), "a tolerance of 100 % or more is not a tolerance", None),
            None => {}
        }
    }
    if let Some(n) = f.get("rating") {
        if n.as_scalar() == Some("auto") {
            if kind == PartKind::Resistor {
                p.rating = Some(Rating::Auto);
            } else {
                ctx.error(
                    n.pos(),
                    &f.at("rating"),
                    "`rating: auto` is for resistors (voicekeep picks their wattage)",
                    Some("give a capacitor's voltage rating, e.g. 250 V".into()),
                );
            }
        } else {
            let q = match kind {
                PartKind::Resistor => Some(Quantity::Power),
                PartKind::Capacitor => Some(Quantity::Voltage),
                PartKind::Inductor => Some(Quantity::Current),
            };
            if let Some(q) = q {
                p.rating = ctx.positive(n, &f.at("rating"), q, false).map(Rating::Given);
            }
        }
    }
    p.type_text = ctx.opt_text(f, "type").or_else(|| ctx.opt_text(f, "core"));
    if let Some(n) = f.get("at") {
        p.at_hz = ctx.positive(n, &f.at("at"), Quantity::Frequency, false);
    }
    ok.then_some(p)
}

pub(crate) fn driver(key: &Key, node: &Node, path: &str, ctx: &mut Ctx) -> Option<RawDriver> {
    let f = ctx.fields(node, path, DRIVER_KEYS)?;
    let role = match ctx.req(&f, "role", "tweeter, midrange, woofer, full-range or other") {
        Some(n) => ctx.choice(
            n,
            &f.at("role"),
            &[("tweeter", Role::Tweeter), ("midrange", Role::Midrange), ("woofer", Role::Woofer), ("full-range", Role::FullRange), ("other", Role::Other)],
        ),
        None => None,
    };
    let between = ctx.req(&f, "between", "its + and - nodes").and_then(|n| ctx.pair_of_nodes(n, &f.at("between")));
    let model = match f.get("model") {
        Some(n) => model(n, &f.at("model"), ctx),
        None => {
            ctx.error(
                key.pos,
                &f.at("model"),
                format!("driver {} has no `model`", key.name),
                Some("give { resistance: 8 ohm }, { re: 6.2 ohm, le: 0.5 mH } (with fs, qms, qes for its resonance), or { table: file.csv }".into()),
            );
            None
        }
    };
    let rated_power = ctx.opt_positive(&f, "rated_power", Quantity::Power, false);
    let sensitivity = f.get("sensitivity").and_then(|n| ctx.value(n, &f.at("sensitivity"), Quantity::Decibel));
    let response = f.get("response").and_then(|n| table_ref(n, &f.at("response"), ctx));
    let inverted = match f.get("polarity") {
        Some(n) => ctx.choice(n, &f.at("polarity"), &[("normal", false), ("inverted", true)]).unwrap_or(false),
        None => false,
    };
    let note = ctx.opt_text(&f, "note");
    Some(RawDriver { name: key.name.clone(), role: role?, between: between?, model: model?, rated_power, sensitivity, response, inverted, note, pos: key.pos })
}

pub(crate) fn model(node: &Node, path: &str, ctx: &mut Ctx) -> Option<RawModel> {
    let f = ctx.fields(node, path, MODEL_KEYS)?;
    if let Some(n) = f.get("table") {
        for k in ["resistance", "re", "le", "leach", "fs", "qms", "qes", "qts"] {
            if let Some(other) = f.get(k) {
                ctx.error(other.pos(), &f.at(k), format!("`{k}` cannot be combined with `table`"), Some("a measured table already holds the whole impedance".into()));
            }
        }
        return table_ref(n, &f.at("table"), ctx).map(RawModel::Table);
    }
    if let Some(n) = f.get("resistance") {
        for k in ["re", "le", "leach", "fs", "qms", "qes", "qts"] {
            if let Some(other) = f.get(k) {
                ctx.error(other.pos(), &f.at(k), format!("`{k}` cannot be combined with `resistance`"), Some("use { re: .., le: .. } for a voice-coil model".into()));
            }
        }
        return ctx.positive(n, &f.at("resistance"), Quantity::Resistance, false).map(RawModel::Resistance);
    }
    let Some(re_node) = f.get("re") else {
        ctx.error(f.pos, path, "the model needs `resistance`, `re` or `table`", Some("e.g. { re: 6.2 ohm, le: 0.5 mH }".into()));
        return None;
    };
    let re = ctx.positive(re_node, &f.at("re"), Quantity::Resistance, false);
    let inductance = match (f.get("le"), f.get("leach")) {
        (Some(_), Some(l)) => {
            ctx.error(l.pos(), &f.at("leach"), "give `le` or `leach`, not both", Some("Leach's K (j w)^n replaces the simple Le".into()));
            None
        }
        (Some(n), None) => ctx.positive(n, &f.at("le"), Quantity::Inductance, true).map(VoiceCoilInductance::Simple),
        (None, Some(n)) => {
            let lf = ctx.fields(n, &f.at("leach"), &["k", "n"])?;
            let k = ctx.req(&lf, "k", "K in ohm s^n").and_then(|v| ctx.bare_number(v, &lf.at("k")));
            let e = ctx.req(&lf, "n", "the exponent, 0 to 1").and_then(|v| ctx.bare_number(v, &lf.at("n")));
            match (k, e) {
                (Some(k), Some(e)) if k >= 0.0 && (0.0..=1.0).contains(&e) => Some(VoiceCoilInductance::Leach { k, n: e }),
                (Some(_), Some(_)) => {
                    ctx.error(n.pos(), &f.at("leach"), "Leach's model needs K >= 0 and 0 <= n <= 1", None);
                    None
                }
                _ => None,
            }
        }
        (None, None) => Some(VoiceCoilInductance::None),
    };
    let resonance = resonance(&f, path, re_node, ctx);
    Some(RawModel::VoiceCoil { re: re?, inductance: inductance?, resonance: resonance? })
}

/// Small's resonance from a data sheet: fs with two of Qms, Qes and Qts, the third derived
/// from 1/Qts = 1/Qms + 1/Qes (Small 1972) and said so; all three must agree within 2 %.
/// Some(None) when the model has no resonance; None when what is given cannot be read.
fn resonance(f: &Fields, path: &str, at: &Node, ctx: &mut Ctx) -> Option<Option<Resonance>> {
    let keys = ["fs", "qms", "qes", "qts"];
    let given: Vec<Option<&Node>> = keys.iter().map(|k| f.get(k)).collect();
    if given.iter().all(|n| n.is_none()) {
        return Some(None);
    }
    let qs = given[1..].iter().filter(|n| n.is_some()).count();
    if given[0].is_none() || qs < 2 {
        let missing: Vec<&str> = keys[..3].iter().zip(&given).filter(|(_, n)| n.is_none()).map(|(k, _)| *k).collect();
        ctx.error(
            f.pos,
            path,
            format!("the resonance needs fs and two of qms, qes and qts; missing {}", if given[0].is_none() { "fs".to_string() } else { missing.join(" or ") }),
            Some("leave them all out for a model without resonance; from a data sheet, qts with qes (or qms) will do".into()),
        );
        return None;
    }
    let fs = ctx.positive(given[0].unwrap_or(at), &f.at("fs"), Quantity::Frequency, false);
    let q = |i: usize, ctx: &mut Ctx| given[i].map(|n| (n, ctx.bare_number(n, &f.at(keys[i]))));
    let (qms, qes, qts) = (q(1, ctx), q(2, ctx), q(3, ctx));
    for (k, v) in [("qms", &qms), ("qes", &qes), ("qts", &qts)] {
        if let Some((n, Some(x))) = v {
            if *x <= 0.0 {
                ctx.error(n.pos(), &f.at(k), format!("{k} must be above zero"), None);
                return None;
            }
        }
    }
    let value = |v: &Option<(&Node, Option<f64>)>| v.map(|(_, x)| x);
    let fs = fs?;
    let r = |qms: f64, qes: f64, derived: Option<String>| Some(Some(Resonance { fs, qms, qes, derived }));
    match (value(&qms), value(&qes), value(&qts)) {
        (Some(Some(m)), Some(Some(e)), None) => r(m, e, None),
        (Some(Some(m)), Some(Some(e)), Some(Some(t))) => {
            let implied = m * e / (m + e);
            if (implied / t - 1.0).abs() > 0.02 {
                let n = qts.map(|(n, _)| n).unwrap_or(at);
                ctx.error(
                    n.pos(),
                    &f.at("qts"),
                    format!(
                        "qts {} does not agree with qms {} and qes {}: 1/Qts = 1/Qms + 1/Qes gives {}",
                        trim_number(t, 3),
                        trim_number(m, 3),
                        trim_number(e, 3),
                        trim_number(implied, 3)
                    ),
                    Some("give two of the three; the third is derived".into()),
                );
                return None;
            }
            r(m, e, None)
        }
        (known, other, Some(Some(t))) => {
            // One of qms and qes with qts: the other from 1/Qts = 1/Qms + 1/Qes.
            let (have, have_key, want_key) = match (known, other) {
                (Some(Some(m)), None) => (m, "qms", "qes"),
                (None, Some(Some(e))) => (e, "qes", "qms"),
                _ => return None,
            };
            if have <= t {
                let n = qts.map(|(n, _)| n).unwrap_or(at);
                ctx.error(
                    n.pos(),
                    &f.at("qts"),
                    format!("qts must be below {have_key} ({} against {})", trim_number(t, 3), trim_number(have, 3)),
                    Some("1/Qts = 1/Qms + 1/Qes: the total Q is below each of its parts".into()),
                );
                return None;
            }
            let derived = 1.0 / (1.0 / t - 1.0 / have);
            let note = format!("{want_key} {} derived from qts {} and {have_key} {} (1/Qts = 1/Qms + 1/Qes)", trim_number(derived, 3), trim_number(t, 3), trim_number(have, 3));
            if have_key == "qms" {
                r(have, derived, Some(note))
            } else {
                r(derived, have, Some(note))
            }
        }
        _ => None,
    }
}
