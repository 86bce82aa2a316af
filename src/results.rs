//! The machine-readable results (`solve --format json`) and the terminal tables.
//! The JSON keys listed in the job-format design are a contract outside checks read.

use serde::Serialize;
use serde_json::{json, Map, Value};
use std::fmt::Write;

use crate::analysis::options::{Chosen, OptionFindings, Recommendation};
use crate::analysis::pair::SetFindings;
use crate::analysis::{Findings, Outcome};
use crate::model::{Job, Scenario};
use crate::units::trim_number;

pub const VERSION: &str = env!("CARGO_PKG_VERSION");

fn round(v: f64, places: i32) -> f64 {
    let m = 10f64.powi(places);
    (v * m).round() / m
}

fn to_value<T: Serialize>(t: &T) -> Value {
    serde_json::to_value(t).unwrap_or(Value::Null)
}

/// The full results as JSON. Curves are rounded to 4 decimals (0.0001 dB, 0.0001 degree),
/// well inside the engine's agreement with its references.
pub fn json(job: &Job, f: &Findings) -> Value {
    let mut scenarios = Map::new();
    for s in &f.scenes {
        let mut drivers = Map::new();
        let phases = s.phases_deg(&f.freqs);
        for (i, d) in s.network.drivers.iter().enumerate() {
            let mut entry = json!({
                "db": s.db[i].iter().map(|v| round(*v, 4)).collect::<Vec<_>>(),
                "phase_deg": phases[i].iter().map(|v| round(*v, 4)).collect::<Vec<_>>(),
            });
            // SPL at 1 m for 2.83 V of EMF, where the job gives the driver's sensitivity or
            // response (`spl_source` says which).
            if let (Some(spl), Some((_, source))) = (&s.spl[i], crate::analysis::levels::acoustic_offset(d, &[])) {
                entry["spl_db"] = json!(spl.iter().map(|v| round(*v, 4)).collect::<Vec<_>>());
                entry["spl_source"] = json!(source);
            }
            drivers.insert(d.name.clone(), entry);
        }
        let (ohm, ph): (Vec<f64>, Vec<f64>) = s.z.iter().map(|z| (round(z.norm(), 4), round(crate::engine::wrap_deg(z.arg().to_degrees()), 4))).unzip();
        scenarios.insert(s.scenario.key().into(), json!({ "drivers": drivers, "impedance": { "ohm": ohm, "phase_deg": ph } }));
    }
    let mut load = Map::new();
    for (s, l) in Scenario::ALL.iter().zip(&f.loads) {
        load.insert(s.key().into(), to_value(l));
    }
    let stress: Vec<Value> = f.stress.rows.iter().map(to_value).collect();
    let mut out = json!({
        "voicekeep": VERSION,
        "job": { "number": job.info.number, "date": job.info.date },
        "frequencies_hz": f.freqs.iter().map(|v| round(*v, 6)).collect::<Vec<_>>(),
        "scenarios": scenarios,
        "levels": f.levels.iter().map(to_value).collect::<Vec<_>>(),
        "compensation": f.compensation.fits.iter().filter(|c| c.fitted_ohm.is_finite() && c.exact_ohm.is_finite()).map(to_value).collect::<Vec<_>>(),
        "compensation_open": f.compensation.fits.iter().filter(|c| !c.fitted_ohm.is_finite() || !c.exact_ohm.is_finite()).map(|c| json!({
            "part": c.part, "driver": c.driver, "band_hz": c.band_hz, "residual_db": c.residual_db, "worst_db": c.worst_db,
            "reason": format!("a shunt across {} is best left out (open): any value from {} down takes the level further from the reference", c.driver, crate::units::ohm(crate::analysis::compensate::LARGEST_SHUNT_OHM)),
        })).collect::<Vec<_>>(),
        "alternatives": f.compensation.alternatives.iter().map(to_value).collect::<Vec<_>>(),
        "warnings": f.compensation.warnings.iter().map(to_value).collect::<Vec<_>>(),
        "crossovers": f.crossovers.iter().map(to_value).collect::<Vec<_>>(),
        "corners": f.corners.iter().map(to_value).collect::<Vec<_>>(),
        "stress": stress,
        "driver_power": f.stress.drivers.iter().map(to_value).collect::<Vec<_>>(),
        "drive": {
            "e_rms_v": f.stress.e_rms, "amplifier": f.stress.amplifier,
            "programme": f.stress.programme, "programme_text": f.stress.programme_text,
            "programme_e_rms_v": f.stress.programme_e_rms, "programme_w": f.stress.programme_w,
            "basis": f.stress.basis,
            "grid_hz": { "from": f.grid.freqs.first(), "to": f.grid.freqs.last(), "points": f.grid.freqs.len() },
        },
        "load": load,
        "rated_impedance_basis": job.rated_impedance_basis(),
        "health": f.health.iter().map(to_value).collect::<Vec<_>>(),
        "power_range": to_value(&f.power),
    });
    if !f.confirmation.is_empty() {
        let mut m = Map::new();
        for c in &f.confirmation {
            m.insert(c.scenario.key().into(), to_value(c));
        }
        out["confirmation"] = Value::Object(m);
    }
    match &f.diagnosis {
        Some(Ok(d)) => out["diagnosis"] = to_value(d),
        Some(Err(e)) => out["diagnosis"] = json!({ "error": e }),
        None => {}
    }
    parts_json(&mut out, &f.parts);
    options_json(&mut out, &f.options, &f.recommended, &f.chosen);
    if !f.substitutes.is_empty() {
        out["substitutes"] = json!(f.substitutes.iter().map(to_value).collect::<Vec<_>>());
    }
    if let Some(t) = &f.tolerance {
        out["tolerance"] = json!({ "runs": t.runs, "seed": t.seed, "distribution": t.distribution, "levels": t.levels, "ranking": t.ranking });
    }
    if let Some(a) = &f.acoustic {
        let mut m = Map::new();
        for (s, v) in Scenario::ALL.iter().zip(a) {
            m.insert(s.key().into(), json!(v.iter().map(|x| round(*x, 4)).collect::<Vec<_>>()));
        }
        out["acoustic_sum_db"] = Value::Object(m);
    }
    out
}

/// One option's results from one cabinet's findings.
fn option_findings_json(g: &Findings) -> Value {
    json!({
        "levels": g.levels.iter().map(to_value).collect::<Vec<_>>(),
        "crossovers": g.crossovers.iter().map(to_value).collect::<Vec<_>>(),
        "load": to_value(&g.loads.as_left),
        "stress": g.stress.rows.iter().filter(|r| r.scenario == Scenario::AsLeft).map(to_value).collect::<Vec<_>>(),
        "driver_power": g.stress.drivers.iter().filter(|r| r.scenario == Scenario::AsLeft).map(to_value).collect::<Vec<_>>(),
        "compensation": g.compensation.fits.iter().map(to_value).collect::<Vec<_>>(),
        "warnings": g.compensation.warnings.iter().map(to_value).collect::<Vec<_>>(),
        "substitutes": g.substitutes.iter().map(to_value).collect::<Vec<_>>(),
    })
}

/// `options.<name>`, `option_order`, `recommended` and `chosen`. An option of a pair or set
/// holds its first cabinet's results at its top, as the job's results do, with
/// `cabinets.<name>` and `pair_match`; its parts are the whole job's.
fn options_json(out: &mut Value, list: &[OptionFindings], recommended: &Option<Recommendation>, chosen: &Option<Chosen>) {
    if list.is_empty() {
        return;
    }
    let mut options = Map::new();
    for o in list {
        let mut v = option_findings_json(&o.findings);
        v["say"] = json!(o.say);
        v["score_db"] = json!(o.score_db);
        v["verdicts_ok"] = json!(o.verdicts_ok);
        v["over"] = json!(o.over);
        v["to_check"] = json!(o.to_check);
        v["labour_hours"] = json!(o.labour_hours);
        v["labour"] = to_value(&o.labour);
        v["total"] = to_value(&o.total);
        if let Some(set) = &o.set {
            let mut cabinets = Map::new();
            for c in &set.cabinets {
                cabinets.insert(c.name.clone(), option_findings_json(&c.findings));
            }
            v["cabinet"] = json!(set.cabinets.first().map(|c| c.name.clone()));
            v["cabinets"] = Value::Object(cabinets);
            v["pair_match"] = json!(set.matching.iter().map(to_value).collect::<Vec<_>>());
        }
        parts_json(&mut v, &o.parts);
        options.insert(o.name.clone(), v);
    }
    out["options"] = Value::Object(options);
    out["option_order"] = json!(list.iter().map(|o| o.name.clone()).collect::<Vec<_>>());
    out["recommended"] = to_value(recommended);
    if let Some(c) = chosen {
        out["chosen"] = to_value(c);
    }
}

/// The parts to buy: `parts[]`, with `currency` and `parts_total` when a price list priced them.
fn parts_json(out: &mut Value, p: &crate::analysis::bom::PartsList) {
    out["parts"] = to_value(&p.lines);
    if let Some(t) = p.total {
        out["parts_total"] = json!(t);
        out["currency"] = json!(p.currency);
        out["parts_unpriced"] = json!(p.unpriced);
    }
}

/// The parts list as text lines for the terminal.
pub fn parts_text(s: &mut String, p: &crate::analysis::bom::PartsList) {
    if p.lines.is_empty() {
        return;
    }
    let _ = writeln!(s);
    let _ = writeln!(s, "PARTS TO BUY (the work done)");
    for l in &p.lines {
        let what = [Some(l.value.clone()), l.type_text.clone(), l.rating.clone(), l.tolerance.clone(), l.series.clone()].into_iter().flatten().collect::<Vec<_>>().join(", ");
        let price = match (l.unit_price, l.price) {
            (Some(u), Some(t)) => format!("  {u} each, {t}"),
            _ => String::new(),
        };
        let _ = writeln!(s, "  {:>3} x {:<9} {what} ({}){price}", l.quantity, l.kind, l.parts.join(", "));
        if l.price.is_none() {
            if let Some(why) = &l.stock {
                let _ = writeln!(s, "        {why}");
            }
        }
    }
    if let (Some(t), Some(c)) = (p.total, &p.currency) {
        let _ = writeln!(s, "  total {t} {c}{}", if p.unpriced > 0 { format!(" for the priced lines; {} not priced", p.unpriced) } else { String::new() });
    }
}

/// The results of a job of one cabinet or several.
pub fn json_outcome(job: &Job, o: &Outcome) -> Value {
    match o {
        Outcome::One(f) => json(job, f),
        Outcome::Set(set) => set_json(set),
    }
}

/// A pair's or set's results: `cabinets.<name>` holds what a one-cabinet job's top level
/// holds; the top level repeats the first cabinet's results (named in `cabinet`), so a
/// reader of one-cabinet results reads a pair's too, and adds the match.
pub fn set_json(set: &SetFindings) -> Value {
    let mut cabinets = Map::new();
    for c in &set.cabinets {
        cabinets.insert(c.name.clone(), json(&c.job, &c.findings));
    }
    let first = set.cabinets.first();
    let mut out = first.map(|c| json(&c.job, &c.findings)).unwrap_or_else(|| json!({}));
    out["cabinet"] = json!(first.map(|c| c.name.clone()));
    out["cabinets"] = Value::Object(cabinets);
    out["pair_tolerance_db"] = json!(set.tolerance_db);
    out["pair_match"] = json!(set.matching.iter().map(to_value).collect::<Vec<_>>());
    out["pair_compensation"] = json!(set.compensation.iter().map(to_value).collect::<Vec<_>>());
    // The parts for the whole job, every cabinet's, at the top.
    parts_json(&mut out, &set.parts);
    options_json(&mut out, &set.options, &set.recommended, &set.chosen);
    out
}

/// The terminal tables of a job of one cabinet or several.
pub fn text_outcome(job: &Job, o: &Outcome) -> String {
    match o {
        Outcome::One(f) => text(job, f),
        Outcome::Set(set) => set_text(job, set),
    }
}

fn set_text(job: &Job, set: &SetFindings) -> String {
    let mut s = String::new();
    let names: Vec<&str> = set.cabinets.iter().map(|c| c.name.as_str()).collect();
    let _ = writeln!(s, "voicekeep {VERSION} - job {} ({}), {}: {} cabinets ({})", job.info.number, job.info.date, job.info.speaker_description, names.len(), names.join(", "));
    let _ = writeln!(s);
    pair_text(&mut s, set);
    let mut parts = String::new();
    parts_text(&mut parts, &set.parts);
    s.push_str(&parts.replacen("PARTS TO BUY (the work done)", "PARTS TO BUY (the work done, every cabinet)", 1));
    options_text(&mut s, &set.options, &set.recommended, set.parts.currency.as_ref());
    if let Some(c) = &set.chosen {
        let _ = writeln!(s, "  {}", c.sentence);
    }
    let _ = writeln!(s);
    for c in &set.cabinets {
        let _ = writeln!(s, "==== CABINET {} ====", c.name);
        let body = text(&c.job, &c.findings);
        // The job's heading line was said once above.
        s.push_str(body.split_once('\n').map(|(_, rest)| rest).unwrap_or(""));
        let _ = writeln!(s);
    }
    s
}

/// How the cabinets match, and the compensating values across them.
fn pair_text(s: &mut String, set: &SetFindings) {
    let is_set = set.cabinets.len() > 2;
    let _ = writeln!(s, "{} (band-mean levels between cabinets; tolerance {} dB)", if is_set { "SET MATCH" } else { "PAIR MATCH" }, trim_number(set.tolerance_db, 3));
    let _ = writeln!(s, "  {:<8} {:>10} {:>10}  verdict", "driver", "found", "left");
    for m in &set.matching {
        let _ = writeln!(s, "  {:<8} {:>10} {:>10}  {}", m.driver, format!("{:.2} dB", m.as_found_db), format!("{:.2} dB", m.as_left_db), m.verdict);
    }
    for m in &set.matching {
        let _ = writeln!(s, "  {}", m.sentence(is_set, set.read_on_bench(), set.cabinets.first().is_some_and(|c| c.job.work_done())));
        if let Some(r) = m.responsible_sentence() {
            let _ = writeln!(s, "  {r}");
        }
        for x in &m.from_median {
            let _ = writeln!(s, "    {:<8} from the median: found {}, left {}", x.cabinet, level(x.as_found_db), level(x.as_left_db));
        }
    }
    for c in &set.compensation {
        let exact: Vec<String> = c.exact.iter().map(|x| format!("{} {}", x.cabinet, ohm(x.ohm))).collect();
        let _ = writeln!(s, "  {} exact: {}; {}", c.part, exact.join(", "), c.reason);
    }
    let _ = writeln!(s);
}

pub use crate::units::{hz, ohm};

/// A level difference with its sign, two decimals, never "-0.00".
pub fn db(v: f64) -> String {
    let t = format!("{:+.2} dB", v);
    if t == "-0.00 dB" {
        "+0.00 dB".into()
    } else {
        t
    }
}

/// A driver's level against its reference, as [`db`]; a level more than
/// [`crate::analysis::compensate::FAULT_DB`] down is a fault (the driver shorted or
/// disconnected), never a figure, and one more than that up is a driver that played only
/// through a fault in its reference.
pub fn level(v: f64) -> String {
    let fault = crate::analysis::compensate::FAULT_DB;
    if v < -fault {
        "silent (fault)".into()
    } else if v > fault {
        "back from silent".into()
    } else {
        db(v)
    }
}

/// A deviation with its sign and three decimals, never "-0.000".
pub fn signed_db3(v: f64) -> String {
    let t = format!("{:+.3} dB", v);
    if t == "-0.000 dB" {
        "+0.000 dB".into()
    } else {
        t
    }
}

pub use crate::text::wrap;

/// Plain-text tables for the terminal: the compensation plan first, then levels,
/// crossovers, load, stress, part health and tolerance.
pub fn text(job: &Job, f: &Findings) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "voicekeep {VERSION} - job {} ({}), {}", job.info.number, job.info.date, job.info.speaker_description);
    let _ = writeln!(s, "sweep {} to {}, {} points; amplifier {}", hz(f.freqs.first().copied()), hz(f.freqs.last().copied()), f.freqs.len(), f.stress.amplifier);
    let _ = writeln!(s);
    compensation_text(&mut s, job, f);
    levels_text(&mut s, job, f);
    load_text(&mut s, job, f);
    stress_text(&mut s, job, f);
    health_text(&mut s, job, f);
    substitute_text(&mut s, f);
    parts_text(&mut s, &f.parts);
    options_text(&mut s, &f.options, &f.recommended, f.parts.currency.as_ref());
    for c in &f.confirmation {
        let _ = writeln!(s);
        let _ = writeln!(s, "TERMINALS {} (predicted against {}, {} points, {} to {})", c.scenario.key(), c.file, c.points, hz(Some(c.from_hz)), hz(Some(c.to_hz)));
        let _ = writeln!(
            s,
            "  |Z| RMS {:.2} %, worst {:+.2} % at {}; phase RMS {:.2} deg, worst {:+.2} deg at {}",
            c.z_rms_pct,
            c.z_worst_pct,
            hz(Some(c.worst_hz)),
            c.phase_rms_deg,
            c.phase_worst_deg,
            hz(Some(c.phase_worst_hz))
        );
        let _ = writeln!(s, "  {}: {}", c.verdict, c.reason);
    }
    if let Some(d) = &f.diagnosis {
        let _ = writeln!(s);
        diagnosis_text(&mut s, &f.scenes.as_found.network, d);
    }
    s
}

/// The estimates from the as-found sweep, one line each, and the finding.
pub fn diagnosis_text(s: &mut String, net: &crate::model::Network, d: &Result<crate::analysis::diagnose::Diagnosis, String>) {
    use crate::analysis::diagnose::{field_words, value_text};
    let d = match d {
        Ok(d) => d,
        Err(e) => {
            let _ = writeln!(s, "DIAGNOSIS: not made: {e}");
            return;
        }
    };
    let _ = writeln!(
        s,
        "DIAGNOSIS from {} ({} points, {} to {}); residual {:.2} (|Z| {:.2} % RMS, phase {:.2} deg RMS)",
        d.file,
        d.points,
        hz(Some(d.from_hz)),
        hz(Some(d.to_hz)),
        d.residual,
        d.residual_z_pct,
        d.residual_phase_deg
    );
    for e in &d.estimates {
        let v = |x: f64| value_text(net, &e.part, &e.field, x);
        let what = format!("{} {}", e.part, field_words(&e.field));
        if e.identifiable {
            let _ = writeln!(s, "  {what:<12} {:>12}  95 % {} to {}  (on record {})", v(e.value), v(e.low), v(e.high), v(e.start));
        } else {
            let _ = writeln!(s, "  {what:<12} {:>12}  {}", v(e.value), e.reason);
        }
    }
    let _ = writeln!(s, "  {}", d.sentence);
    let _ = writeln!(s, "  Estimates are never used as bench readings; to use one, write it under `measured` with a note of where it came from.");
}

/// Each option's outcome side by side, and the recommendation; in a pair or set, each
/// cabinet's levels and load.
fn options_text(s: &mut String, list: &[OptionFindings], recommended: &Option<Recommendation>, currency: Option<&String>) {
    if list.is_empty() {
        return;
    }
    let _ = writeln!(s);
    let _ = writeln!(s, "OPTIONS (each solved as its own as-left scenario against as designed)");
    for o in list {
        let price = match (o.total, currency.or(o.parts.currency.as_ref())) {
            (Some(t), Some(c)) => format!("; total {t} {c}"),
            _ => String::new(),
        };
        let each = o.each();
        let _ = write!(s, "  {}: RMS {:.2} dB{price}", o.name, o.score_db);
        for (name, g) in &each {
            let levels: Vec<String> = g.levels.iter().map(|l| format!("{} {}", l.driver, level(l.as_left_db))).collect();
            let who = if name.is_empty() { String::new() } else { format!("cabinet {name}: ") };
            let _ = write!(s, "\n    {who}{}; min |Z| {}, load {}", levels.join(", "), ohm(g.loads.as_left.min_ohm), g.loads.as_left.verdict);
        }
        let _ = writeln!(s);
        for w in &o.over {
            let _ = writeln!(s, "    over: {w}");
        }
        for w in &o.to_check {
            let _ = writeln!(s, "    check: {w}");
        }
    }
    if let Some(r) = recommended {
        let _ = writeln!(s, "  {}", r.reason);
    }
}

/// Each substitute driver against the original, and its checks.
fn substitute_text(s: &mut String, f: &Findings) {
    for x in &f.substitutes {
        let _ = writeln!(s);
        let _ = writeln!(s, "SUBSTITUTE {} (original against substitute)", x.driver);
        for line in substitute_rows(x) {
            let _ = writeln!(s, "  {:<24} {:>16} {:>16}", line[0], line[1], line[2]);
        }
        for note in [&x.original.derived, &x.substitute.derived].into_iter().flatten() {
            let _ = writeln!(s, "  ({note})");
        }
        for c in &x.checks {
            let _ = writeln!(s, "  {:<10} {:<5} {}", c.check, c.verdict, c.reason);
        }
    }
}

/// The comparison of a substitute with the original, row by row: what, original, substitute.
pub fn substitute_rows(x: &crate::analysis::substitute::Substitute) -> Vec<[String; 3]> {
    let opt = |v: Option<f64>, f: &dyn Fn(f64) -> String| v.map(f).unwrap_or_else(|| "not given".into());
    let (a, b) = (&x.original, &x.substitute);
    let xo = x.crossover_hz[0].map(|f| format!("|Z| at {}", hz(Some(f)))).unwrap_or_else(|| "|Z| at the crossover".into());
    vec![
        ["Re".into(), ohm(a.re_ohm), ohm(b.re_ohm)],
        ["fs".into(), opt(a.fs_hz, &|v| hz(Some(v))), opt(b.fs_hz, &|v| hz(Some(v)))],
        ["Qts".into(), opt(a.qts, &|v| trim_number(v, 3)), opt(b.qts, &|v| trim_number(v, 3))],
        [
            "sensitivity (2.83 V, 1 m)".into(),
            opt(a.sensitivity_db, &|v| format!("{} dB SPL", trim_number(v, 3))),
            opt(b.sensitivity_db, &|v| format!("{} dB SPL", trim_number(v, 3))),
        ],
        ["rated power".into(), opt(a.rated_w, &|v| format!("{} W", trim_number(v, 3))), opt(b.rated_w, &|v| format!("{} W", trim_number(v, 3)))],
        [xo, opt(a.z_at_crossover_ohm, &|v| ohm(v)), opt(b.z_at_crossover_ohm, &|v| ohm(v))],
        ["crossover".into(), hz(x.crossover_hz[0]), hz(x.crossover_hz[1])],
    ]
}

/// The compensation plan: each fit, its alternatives and warnings.
fn compensation_text(s: &mut String, _job: &Job, f: &Findings) {
    let _ = writeln!(s, "COMPENSATION");
    if f.compensation.fits.is_empty() {
        let _ = writeln!(s, "  no `value: auto` parts in this job");
    }
    for c in &f.compensation.fits {
        let rating = f
            .stress
            .rows
            .iter()
            .find(|r| r.scenario == Scenario::AsLeft && r.part == c.part)
            .and_then(|r| r.rating_w)
            .map(|w| format!(", {} W", trim_number(w, 3)))
            .unwrap_or_default();
        if c.fault {
            let _ = writeln!(
                s,
                "  {}: FAULT - {} ends more than {} dB below its {} level: a wiring fault, not a level to compensate",
                c.part,
                c.driver,
                crate::analysis::compensate::FAULT_DB,
                c.reference.adjective()
            );
        } else if c.cannot_raise {
            let _ = writeln!(
                s,
                "  {}: none - {} already plays {:.2} dB below its {} level, and a passive part cannot raise it",
                c.part,
                c.driver,
                -c.excess_db,
                c.reference.adjective()
            );
        } else if c.fitted_ohm.is_infinite() {
            let _ = writeln!(s, "  {}: not fitted - a shunt across {} is best left out (open)", c.part, c.driver);
        } else if c.fitted_ohm == 0.0 {
            let _ = writeln!(s, "  {}: none needed - a wire link (exact {} is under {})", c.part, ohm(c.exact_ohm), ohm(crate::analysis::compensate::SMALLEST_FITTED_OHM));
        } else {
            let _ = writeln!(s, "  fit {} = {} ({}{}) {}", c.part, ohm(c.fitted_ohm), c.series.name(), rating, c.placement);
        }
        // Where no resistor can raise the driver, the search's bound is no value to print.
        let exact = if c.cannot_raise {
            "none".to_string()
        } else if c.exact_ohm.is_finite() {
            ohm(c.exact_ohm)
        } else {
            "open".to_string()
        };
        let _ = writeln!(
            s,
            "    exact {exact}; {} matches {} over {}-{} within {:.3} dB RMS (worst {}){}",
            c.driver,
            c.reference.label(),
            hz(Some(c.band_hz[0])),
            hz(Some(c.band_hz[1])),
            c.residual_db,
            signed_db3(c.worst_db),
            if c.keeps_impedance { ", holding the impedance its filter sees" } else { "" }
        );
        if let Some(p) = &c.pair {
            let _ = writeln!(
                s,
                "    closer with stock E12: {} {} {} = {} ({:.3} dB RMS)",
                ohm(p.a_ohm),
                if p.parallel { "parallel with" } else { "in series with" },
                ohm(p.b_ohm),
                ohm(p.value_ohm),
                p.residual_db
            );
        }
    }
    for a in &f.compensation.alternatives {
        let _ = writeln!(s, "  alternative for {}: {}", a.driver, a.description);
        let _ = writeln!(s, "    {} {}", a.verdict, a.why_plan);
    }
    for w in &f.compensation.warnings {
        let _ = writeln!(s, "  warning ({}): {}", w.subject, w.message);
    }
    let _ = writeln!(s);
}

/// The levels table and the crossovers.
fn levels_text(s: &mut String, _job: &Job, f: &Findings) {
    let _ = writeln!(s, "LEVELS (band mean, dB re as designed)");
    let _ = writeln!(s, "  {:<8} {:<10} {:<24} {:>9} {:>9} {:>9}  as left, worst point", "driver", "role", "band", "designed", "found", "left");
    for l in &f.levels {
        let band = format!("{}-{} ({})", hz(Some(l.band_hz[0])), hz(Some(l.band_hz[1])), if l.band_source == crate::analysis::BandSource::Compensate { "fit" } else { "pass" });
        let _ = writeln!(s, "  {:<8} {:<10} {:<24} {:>9} {:>9} {:>9}  {}", l.driver, l.role, band, level(l.as_designed_db), level(l.as_found_db), level(l.as_left_db), l.left_flag);
    }
    let acoustic: Vec<&str> = f.levels.iter().filter(|l| l.as_left_acoustic || l.as_found_acoustic).map(|l| l.driver.as_str()).collect();
    if !acoustic.is_empty() {
        let _ = writeln!(s, "  compared as acoustic output (SPL at 1 m for 2.83 V, from sensitivity or response): {}; others as voltage", acoustic.join(", "));
    }
    if !f.crossovers.is_empty() {
        let _ = writeln!(s);
        let _ = writeln!(s, "CROSSOVERS (where adjacent drivers' levels cross)");
        for c in &f.crossovers {
            let _ = writeln!(s, "  {}/{}: designed {}, found {}, left {}", c.lower, c.upper, hz(c.as_designed_hz), hz(c.as_found_hz), hz(c.as_left_hz));
        }
    }
    let _ = writeln!(s);
}

/// The load in each scenario.
fn load_text(s: &mut String, job: &Job, f: &Findings) {
    let _ = writeln!(s, "LOAD (at the amplifier terminals; {})", job.rated_impedance_basis());
    for (sc, l) in Scenario::ALL.iter().zip(&f.loads) {
        let _ = writeln!(
            s,
            "  {:<12} min |Z| {} at {}, EPDR {} at {}, 80 % rule {}\n  {:<12} {:<5} {}",
            sc.label(),
            ohm(l.min_ohm),
            hz(Some(l.min_at_hz)),
            ohm(l.epdr_min_ohm),
            hz(Some(l.epdr_at_hz)),
            if l.rated_impedance_holds { "holds" } else { "fails" },
            "",
            l.verdict,
            l.reason
        );
    }
    let _ = writeln!(s);
}

/// Stress as left, part by part and driver by driver.
fn stress_text(s: &mut String, job: &Job, f: &Findings) {
    let _ = writeln!(
        s,
        "STRESS as left (sine {}; programme {} at {} W into {} ohm)",
        f.stress.amplifier,
        f.stress.programme_text,
        trim_number(f.stress.programme_w, 3),
        trim_number(job.amplifier.into_ohm, 3)
    );
    for r in f.stress.rows.iter().filter(|r| r.scenario == Scenario::AsLeft) {
        let _ = writeln!(s, "  {:<8} {:<9} {}", r.part, r.shown_verdict(), r.reason);
    }
    for d in f.stress.drivers.iter().filter(|r| r.scenario == Scenario::AsLeft) {
        let _ = writeln!(s, "  {:<8} {:<9} {}", d.driver, d.shown_verdict(), d.reason);
    }
}

/// Part health and the tolerance spread, when the job has them.
fn health_text(s: &mut String, _job: &Job, f: &Findings) {
    if !f.health.is_empty() {
        let _ = writeln!(s);
        let _ = writeln!(s, "PART HEALTH (bench readings)");
        for h in &f.health {
            let _ = writeln!(s, "  {}: {} ({:+.2} dB on {})", h.part, h.message, h.effect_db, h.effect_driver);
        }
    }
    if let Some(t) = &f.tolerance {
        let _ = writeln!(s);
        let _ = writeln!(s, "TOLERANCE ({} runs, seed {}, {} distribution)", t.runs, t.seed, format!("{:?}", t.distribution).to_lowercase());
        for l in t.levels.iter().filter(|l| l.scenario == Scenario::AsLeft) {
            let _ = writeln!(s, "  {:<8} as left: 5-95 % band {:+.2} to {:+.2} dB", l.driver, l.p5_db, l.p95_db);
        }
    }
}

/// A driver's fitted model: each parameter with its interval, Qts, the three-point figures
/// for comparison, and the `model` block to paste into a job.
pub fn driver_fit_text(fit: &crate::analysis::diagnose::DriverFit) -> String {
    use crate::analysis::diagnose::field_words;
    let mut s = String::new();
    let _ = writeln!(s, "DRIVER FIT (Small's model) from {} ({} points); residual {:.2} (1 = a 1 % / 1 degree rig's noise)", fit.file, fit.points, fit.residual);
    for e in &fit.estimates {
        use crate::units::{format_si, Quantity};
        let t = |v: f64| match e.field.as_str() {
            "re" => format_si(v, Quantity::Resistance, 4),
            "le" => format_si(v, Quantity::Inductance, 4),
            "fs" => format_si(v, Quantity::Frequency, 4),
            _ => trim_number(v, 4),
        };
        let what = field_words(&e.field);
        if e.identifiable {
            let _ = writeln!(s, "  {what:<4} {}  (95 % {} to {})", t(e.value), t(e.low), t(e.high));
        } else {
            let _ = writeln!(s, "  {what:<4} {}  {}", t(e.value), e.reason);
        }
    }
    let _ = writeln!(s, "  Qts  {}", trim_number(fit.qts, 4));
    if let Some(tp) = &fit.three_point {
        let _ = writeln!(
            s,
            "  three-point method on the sweep alone (Re {} ohm, its lowest |Z|): fs {} Hz, Qms {}, Qes {}",
            trim_number(tp.re, 4),
            trim_number(tp.fs, 4),
            trim_number(tp.qms, 4),
            trim_number(tp.qes, 4)
        );
    }
    let _ = writeln!(s);
    match (&fit.model_yaml, &fit.advice) {
        (Some(m), _) => {
            let _ = writeln!(s, "{m}");
        }
        (None, Some(a)) => {
            let _ = writeln!(s, "No model block: {a}.");
        }
        (None, None) => {}
    }
    s
}
