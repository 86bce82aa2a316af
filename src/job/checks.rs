//! The checks that need the whole network: what would stop the engine (a step that cannot
//! apply, a node only one terminal touches, a branch cut off from the input), tables that do
//! not cover the sweep, and compensate bands the sweep cannot fill.

use crate::diag::{suggest, Pos};
use crate::job::reader::Ctx;
use crate::model::*;

/// Reports what would stop the engine in the network as designed and as left: a step that
/// cannot apply, a node only one terminal touches (with the node it was likely meant to be),
/// a branch cut off from the input.
pub(crate) fn connections(network: &Network, steps: Option<(&[Reading], &[Change])>, ctx: &mut Ctx) {
    let pos_of = |name: &str, net: &Network| net.part(name).map(|p| p.pos).or_else(|| net.driver(name).map(|d| d.pos)).unwrap_or(net.input_pos);
    let mut nodes: Vec<&str> = network.branches().flat_map(|(_, b)| b.iter().map(|s| s.as_str())).collect();
    nodes.sort_unstable();
    nodes.dedup();
    for (name, node, msg) in network.connection_problems() {
        let hint = node
            .as_deref()
            .and_then(|n| suggest(n, nodes.iter().copied().filter(|m| *m != n)))
            .map(|s| format!("did you mean node `{s}`? every node needs two or more terminals"))
            .unwrap_or_else(|| "check the `between` nodes: every node needs two or more terminals".into());
        ctx.error(pos_of(&name, network), &format!("network.{}", if name.is_empty() { "input".to_string() } else { name.clone() }), msg, Some(hint));
    }
    let Some((measured, changes)) = steps else { return };
    steps_apply(network, measured, changes, changes.len(), "changes", ctx);
}

/// Reports a step of a cabinet that cannot apply, or a network its steps leave open:
/// `changes` are the job's `common` steps, then the cabinet's own (written under `field`).
pub(crate) fn cabinet_steps(network: &Network, measured: &[Reading], changes: &[Change], common: usize, field: &str, ctx: &mut Ctx) {
    steps_apply(network, measured, changes, common, field, ctx);
}

fn steps_apply(network: &Network, measured: &[Reading], changes: &[Change], common: usize, field: &str, ctx: &mut Ctx) {
    match left_unsolved(network, measured, changes) {
        Err(e) if e.number > common => ctx.error(e.pos, &format!("{field}[{}]", e.number - common), e.message, None),
        Err(e) => ctx.error(e.pos, &format!("changes[{}]", e.number), e.message, None),
        Ok(left) => {
            if network.connection_problems().is_empty() {
                for (_, _, msg) in left.connection_problems() {
                    let step = changes.last().map(|c| c.pos).unwrap_or(Pos { line: 1, col: 1 });
                    ctx.error(step, field, format!("after the changes, {msg}"), Some("a removed part leaves its nodes open; add or insert what replaces it".into()));
                }
            }
        }
    }
}

/// Reports tables that do not cover the sweep and compensate bands the sweep cannot fill.
pub(crate) fn coverage(network: &Network, changes: &[Change], compensate: &[CompensateEntry], sweep: &Sweep, ctx: &mut Ctx) {
    // Every measured table, the original drivers' and any replacement's, must cover the
    // sweep: outside its range a table could only be held flat, which would be invented data.
    let freqs = sweep.frequencies();
    let (lo, hi) = (freqs.iter().cloned().fold(f64::INFINITY, f64::min), freqs.iter().cloned().fold(0.0, f64::max));
    let mut covers = |pos: Pos, field: String, file: &str, f: &[f64]| {
        let (tlo, thi) = (f[0], f[f.len() - 1]);
        if lo < tlo * (1.0 - 1e-9) || hi > thi * (1.0 + 1e-9) {
            ctx.error(
                pos,
                &field,
                format!(
                    "{} covers {} to {} but the sweep runs from {} to {}",
                    file,
                    crate::units::hz(Some(tlo)),
                    crate::units::hz(Some(thi)),
                    crate::units::hz(Some(lo)),
                    crate::units::hz(Some(hi))
                ),
                Some("narrow the sweep to the table's range, or measure the driver over the whole sweep".into()),
            );
        }
    };
    for d in &network.drivers {
        if let DriverModel::Table(t) = &d.model {
            covers(d.pos, format!("network.drivers.{}.model.table", d.name), &t.file, &t.freq_hz);
        }
        if let Some(r) = &d.response {
            covers(d.pos, format!("network.drivers.{}.response", d.name), &r.file, &r.freq_hz);
        }
    }
    for c in changes {
        if let ChangeStep::Replace { with: Patch::Driver(p), .. } = &c.step {
            if let Some(DriverModel::Table(t)) = &p.model {
                covers(c.pos, format!("changes[{}].with.model.table", c.number), &t.file, &t.freq_hz);
            }
            if let Some(r) = &p.response {
                covers(c.pos, format!("changes[{}].with.response", c.number), &r.file, &r.freq_hz);
            }
        }
    }
    for c in compensate {
        if let Some((blo, bhi)) = c.band {
            let field = format!("compensate.{}.band", c.part);
            // A band may end between the sweep's last point and where the next would be (a
            // sweep of 20 Hz at 12 per octave ends at 19.3 kHz, short of 20 kHz); beyond that
            // the fit would silently use less of the band than the job asks.
            // Levels are judged where a listener hears them: every band lies within 20 Hz to
            // 20 kHz (the passbands voicekeep finds are bounded the same way).
            let [hear_lo, hear_hi] = crate::model::HEARING_HZ;
            if blo < hear_lo * (1.0 - 1e-9) || bhi > hear_hi * (1.0 + 1e-9) {
                ctx.error(
                    c.band_pos,
                    &field,
                    format!(
                        "the band {} to {} reaches beyond hearing (20 Hz to 20 kHz), where no level difference is heard",
                        crate::units::hz(Some(blo)),
                        crate::units::hz(Some(bhi))
                    ),
                    Some(format!("end the band within 20 Hz to 20 kHz, such as [{}, {}]", crate::units::hz(Some(blo.max(hear_lo))), crate::units::hz(Some(bhi.min(hear_hi))))),
                );
                continue;
            }
            let n = freqs.len();
            let (step_lo, step_hi) = if n > 1 { (freqs[1] / freqs[0], freqs[n - 1] / freqs[n - 2]) } else { (1.0, 1.0) };
            if blo < lo / step_lo * (1.0 - 1e-9) || bhi > hi * step_hi * (1.0 + 1e-9) {
                ctx.error(
                    c.band_pos,
                    &field,
                    format!(
                        "the band {} to {} reaches outside the sweep ({} to {}); the fit could only use the part inside it",
                        crate::units::hz(Some(blo)),
                        crate::units::hz(Some(bhi)),
                        crate::units::hz(Some(lo)),
                        crate::units::hz(Some(hi))
                    ),
                    Some("narrow the band to the sweep, or widen the sweep".into()),
                );
            } else if !freqs.iter().any(|f| *f >= blo * (1.0 - 1e-9) && *f <= bhi * (1.0 + 1e-9)) {
                ctx.error(c.band_pos, &field, "no sweep point falls in this band", Some("widen the band or add sweep points".into()));
            }
        }
    }
}
