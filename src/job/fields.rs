//! The field groups the parse and build stages share: a part, the value and loss fields of a
//! part, a reading or a replacement, a driver and its model.

use crate::job::raw::{RawDriver, RawModel, TableRef};
use crate::job::reader::{Ctx, Fields};
use crate::job::yaml::{Key, Node};
use crate::model::{Part, PartKind, PartPatch, Rating, Resonance, Role, VoiceCoilInductance};
use crate::units::Quantity;

pub(crate) const PART_KEYS: &[&str] = &["kind", "between", "value", "esr", "tan_delta", "dcr", "tolerance", "rating", "type", "core"];
pub(crate) const DRIVER_KEYS: &[&str] = &["role", "between", "model", "rated_power", "sensitivity", "response", "polarity", "note"];
pub(crate) const MODEL_KEYS: &[&str] = &["resistance", "re", "le", "leach", "fs", "qms", "qes", "table"];

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
            ctx.error(f.pos, &f.at("value"), format!("missing `value` for {} {}", kind.name(), key.name), None);
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
        for k in ["resistance", "re", "le", "leach", "fs", "qms", "qes"] {
            if let Some(other) = f.get(k) {
                ctx.error(other.pos(), &f.at(k), format!("`{k}` cannot be combined with `table`"), Some("a measured table already holds the whole impedance".into()));
            }
        }
        return table_ref(n, &f.at("table"), ctx).map(RawModel::Table);
    }
    if let Some(n) = f.get("resistance") {
        for k in ["re", "le", "leach", "fs", "qms", "qes"] {
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
    let res: Vec<Option<&Node>> = ["fs", "qms", "qes"].iter().map(|k| f.get(k)).collect();
    let resonance = if res.iter().all(|n| n.is_none()) {
        Some(None)
    } else if res.iter().all(|n| n.is_some()) {
        let fs = ctx.positive(res[0].unwrap_or(re_node), &f.at("fs"), Quantity::Frequency, false);
        let qms = res[1].and_then(|n| ctx.bare_number(n, &f.at("qms")));
        let qes = res[2].and_then(|n| ctx.bare_number(n, &f.at("qes")));
        match (fs, qms, qes) {
            (Some(fs), Some(qms), Some(qes)) if qms > 0.0 && qes > 0.0 => Some(Some(Resonance { fs, qms, qes })),
            (Some(_), Some(_), Some(_)) => {
                ctx.error(f.pos, &f.at("qms"), "qms and qes must be above zero", None);
                None
            }
            _ => None,
        }
    } else {
        let missing: Vec<&str> = ["fs", "qms", "qes"].iter().zip(&res).filter(|(_, n)| n.is_none()).map(|(k, _)| *k).collect();
        ctx.error(
            f.pos,
            path,
            format!("the resonance needs fs, qms and qes together; missing {}", missing.join(", ")),
            Some("leave all three out for a model without resonance".into()),
        );
        None
    };
    Some(RawModel::VoiceCoil { re: re?, inductance: inductance?, resonance: resonance? })
}
