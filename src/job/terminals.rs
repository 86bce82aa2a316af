//! The `terminals` section (and a cabinet's own): impedance sweeps at the speaker's terminals,
//! read with the table reader, and the limits of the confirmation.

use crate::job::fields::table_ref;
use crate::job::reader::Ctx;
use crate::job::yaml::Node;
use crate::model::terminals::{TerminalLimits, Terminals};

pub(crate) fn terminals(node: &Node, path: &str, ctx: &mut Ctx) -> Terminals {
    let Some(f) = ctx.fields(node, path, &["as_found", "as_left", "limits", "diagnose"]) else { return Terminals::default() };
    let mut t = Terminals::default();
    for key in ["as_found", "as_left"] {
        let Some(n) = f.get(key) else { continue };
        let table = table_ref(n, &f.at(key), ctx).and_then(|r| ctx.impedance_table(&r));
        if table.is_some() {
            t.places.push((n.pos(), f.at(key)));
        }
        match key {
            "as_found" => t.as_found = table,
            _ => t.as_left = table,
        }
    }
    if let Some(n) = f.get("diagnose") {
        let field = f.at("diagnose");
        match n {
            Node::Seq { items, .. } => {
                for (i, item) in items.iter().enumerate() {
                    let at = format!("{field}[{}]", i + 1);
                    if let Some(name) = ctx.text(item, &at) {
                        t.diagnose.push((name, item.pos(), at));
                    }
                }
            }
            _ => match ctx.text(n, &field).as_deref() {
                Some("all") => t.diagnose_all = true,
                Some(other) => {
                    ctx.error(n.pos(), &field, format!("expected `all` or a list, found \"{other}\""), Some("write `diagnose: [C1, L1.dcr, LF.re]` or `diagnose: all`".into()))
                }
                None => {}
            },
        }
        if t.as_found.is_none() && f.get("as_found").is_none() {
            ctx.error(n.pos(), &field, "a diagnosis needs the sweep as found", Some("name it in `as_found`: the speaker swept at its terminals before the work".into()));
        }
    }
    if let Some(n) = f.get("limits") {
        if let Some(g) = ctx.fields(n, &f.at("limits"), &["z_rms_pct", "z_worst_pct", "phase_rms_deg"]) {
            let mut l = TerminalLimits::default();
            for (key, slot, most) in [("z_rms_pct", &mut l.z_rms_pct, 100.0), ("z_worst_pct", &mut l.z_worst_pct, 100.0), ("phase_rms_deg", &mut l.phase_rms_deg, 90.0)] {
                let Some(n) = g.get(key) else { continue };
                match ctx.bare_number(n, &g.at(key)) {
                    Some(v) if v > 0.0 && v <= most => *slot = v,
                    Some(v) => ctx.error(
                        n.pos(),
                        &g.at(key),
                        format!("{v} is outside what a limit can be (above 0, at most {most})"),
                        Some("write the limit as a plain number: 3 for 3 %, 5 for 5 degrees".into()),
                    ),
                    None => {}
                }
            }
            t.limits = l;
        }
    }
    t
}
