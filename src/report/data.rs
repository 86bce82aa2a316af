//! The data a report template receives (as `/data.json`): every number already formatted, in
//! the same words and digits as `voicekeep solve`, so the PDF and the terminal always agree.

use serde::Serialize;
use sha2::{Digest, Sha256};

use crate::analysis::Findings;
use crate::model::{Block, ChangeStep, Job, Part, PartKind, Patch, Scenario, Template};
use crate::results::{db, hz, ohm};
use crate::units::{format_si, trim_number, Quantity};

#[derive(Debug, Serialize)]
pub struct Date {
    pub year: i32,
    pub month: u8,
    pub day: u8,
    pub text: String,
}

#[derive(Debug, Serialize)]
pub struct BlockData {
    pub kind: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub text: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub plot: Option<String>,
}

#[derive(Debug, Serialize)]
pub struct Row(pub Vec<String>);

#[derive(Debug, Serialize)]
pub struct ReportData {
    pub version: String,
    pub template: String,
    pub date: Date,
    pub job: serde_json::Value,
    pub blocks: Option<Vec<BlockData>>,
    pub amplifier: String,
    pub programme: String,
    pub sweep: String,
    pub summary: Vec<String>,
    pub parts: Vec<Row>,
    pub drivers: Vec<Row>,
    pub changes: Vec<String>,
    pub levels: Vec<Row>,
    pub level_band_note: String,
    pub crossovers: Vec<Row>,
    pub compensation: Vec<Row>,
    pub compensation_notes: Vec<String>,
    pub alternatives: Vec<Row>,
    pub warnings: Vec<String>,
    pub stress: Vec<Row>,
    pub stress_all: Vec<Row>,
    pub driver_power: Vec<Row>,
    pub load: Vec<Row>,
    pub load_verdict: String,
    pub load_change: String,
    pub load_rated: String,
    pub health: Vec<Row>,
    pub tolerance: Option<serde_json::Value>,
    pub safety: Vec<String>,
    pub inputs: Vec<Row>,
    pub attachments: Vec<serde_json::Value>,
    pub plots: Vec<String>,
}

fn quantity(kind: PartKind) -> Quantity {
    match kind {
        PartKind::Capacitor => Quantity::Capacitance,
        PartKind::Inductor => Quantity::Inductance,
        PartKind::Resistor => Quantity::Resistance,
    }
}

/// "3.3 uF, ESR 0.9 ohm" - a part's value and loss as a technician writes them.
pub fn part_text(p: &Part) -> String {
    let v = if p.auto_value && p.value == 0.0 { "auto".to_string() } else { format_si(p.value, quantity(p.kind), 3) };
    match p.kind {
        PartKind::Capacitor => match p.tan_delta {
            Some(d) => format!("{v}, tan d {}", trim_number(d, 3)),
            None => format!("{v}, ESR {}", ohm(p.esr)),
        },
        PartKind::Inductor => format!("{v}, DCR {}", ohm(p.dcr)),
        PartKind::Resistor => v,
    }
}

fn mime(name: &str) -> &'static str {
    if name.ends_with(".yaml") || name.ends_with(".yml") {
        "application/yaml"
    } else if name.ends_with(".csv") {
        "text/csv"
    } else {
        "text/plain"
    }
}

fn sha256(bytes: &[u8]) -> String {
    Sha256::digest(bytes).iter().map(|b| format!("{b:02x}")).collect()
}

fn block_data(b: &Block) -> BlockData {
    let (kind, text, plot) = match b {
        Block::Text(t) => ("text", Some(t.clone()), None),
        Block::Plot(p) => ("plot", None, Some(p.name().to_string())),
        Block::Levels => ("levels", None, None),
        Block::Parts => ("parts", None, None),
        Block::Compensation => ("compensation", None, None),
        Block::Stress => ("stress", None, None),
        Block::Load => ("load", None, None),
        Block::Tolerance => ("tolerance", None, None),
        Block::Health => ("health", None, None),
        Block::Safety => ("safety", None, None),
        Block::Appendix => ("appendix", None, None),
    };
    BlockData { kind: kind.into(), text, plot }
}

/// `plots` names the plots drawn for this report, in order.
pub fn build(job: &Job, f: &Findings, template: &Template, plots: Vec<String>) -> ReportData {
    let date_parts: Vec<i64> = job.info.date.split('-').filter_map(|p| p.parse().ok()).collect();
    let date = Date {
        year: date_parts.first().copied().unwrap_or(2000) as i32,
        month: date_parts.get(1).copied().unwrap_or(1) as u8,
        day: date_parts.get(2).copied().unwrap_or(1) as u8,
        text: job.info.date.clone(),
    };
    let [designed, found, left] = &f.scenes;

    // Parts: every part in any scenario, in the order first seen.
    let mut names: Vec<String> = Vec::new();
    for s in &f.scenes {
        for p in &s.network.parts {
            if !names.contains(&p.name) {
                names.push(p.name.clone());
            }
        }
    }
    let parts = names
        .iter()
        .map(|n| {
            let (d, fo, l) = (designed.network.part(n), found.network.part(n), left.network.part(n));
            let any = d.or(fo).or(l).expect("named part exists");
            let where_ =
                format!("{}, {} - {}", any.kind.name(), crate::analysis::compensate::display_node(&any.between[0]), crate::analysis::compensate::display_node(&any.between[1]));
            let t = |p: Option<&Part>| p.map(part_text).unwrap_or_else(|| "-".into());
            let change = match (fo, l) {
                (None, Some(_)) => "added".to_string(),
                (Some(_), None) => "removed".to_string(),
                (Some(a), Some(b)) if a != b => {
                    if job.changes.iter().any(|c| matches!(&c.step, ChangeStep::Replace { target, .. } if target == n)) {
                        format!("replaced{}", b.type_text.as_ref().map(|t| format!(" ({t})")).unwrap_or_default())
                    } else {
                        "changed".into()
                    }
                }
                _ => {
                    if job.measured.iter().any(|m| &m.target == n) {
                        "measured, kept".into()
                    } else {
                        "kept".into()
                    }
                }
            };
            Row(vec![n.clone(), where_, t(d), t(fo), t(l), change])
        })
        .collect();

    let drivers = left
        .network
        .drivers
        .iter()
        .map(|d| {
            let model = match &d.model {
                crate::model::DriverModel::Resistance(r) => format!("resistance {}", ohm(*r)),
                crate::model::DriverModel::VoiceCoil { re, inductance, resonance } => {
                    let mut s = format!("Re {}", ohm(*re));
                    match inductance {
                        crate::model::VoiceCoilInductance::Simple(le) => s.push_str(&format!(", Le {}", format_si(*le, Quantity::Inductance, 3))),
                        crate::model::VoiceCoilInductance::Leach { k, n } => s.push_str(&format!(", Leach K {} n {}", trim_number(*k, 3), trim_number(*n, 3))),
                        crate::model::VoiceCoilInductance::None => {}
                    }
                    if let Some(r) = resonance {
                        s.push_str(&format!(", fs {}, Qms {}, Qes {}", format_si(r.fs, Quantity::Frequency, 3), trim_number(r.qms, 3), trim_number(r.qes, 3)));
                    }
                    s
                }
                crate::model::DriverModel::Table(t) => format!("measured table {}", t.file),
            };
            Row(vec![
                d.name.clone(),
                d.role.name().into(),
                model,
                d.rated_power.map(|w| format!("{} W", trim_number(w, 3))).unwrap_or_else(|| "-".into()),
                if d.inverted { "inverted".into() } else { "normal".into() },
            ])
        })
        .collect();

    let changes = job
        .changes
        .iter()
        .map(|c| match &c.step {
            ChangeStep::Replace { target, with: Patch::Part(_) } => {
                let (a, b) = (found.network.part(target), left.network.part(target));
                format!("{}. Replaced {}: {} -> {}", c.number, target, a.map(part_text).unwrap_or_default(), b.map(part_text).unwrap_or_default())
            }
            ChangeStep::Replace { target, with: Patch::Driver(p) } => {
                format!("{}. Replaced driver {}{}", c.number, target, p.note.as_ref().map(|n| format!(": {n}")).unwrap_or_default())
            }
            ChangeStep::Insert { part, node, next_to } => {
                format!("{}. Inserted {} ({}) between node {} and {}", c.number, part.name, left.network.part(&part.name).map(part_text).unwrap_or_default(), node, next_to)
            }
            ChangeStep::Remove { target } => format!("{}. Removed {}", c.number, target),
            ChangeStep::Add { parts } => format!(
                "{}. Added {}",
                c.number,
                parts.iter().map(|p| format!("{} ({}, {} - {})", p.name, part_text(p), p.between[0], p.between[1])).collect::<Vec<_>>().join(", ")
            ),
        })
        .collect();

    let levels = f
        .levels
        .iter()
        .map(|l| {
            Row(vec![
                l.driver.clone(),
                l.role.clone(),
                format!("{} - {}", hz(Some(l.band_hz[0])), hz(Some(l.band_hz[1]))),
                db(l.as_designed_db),
                db(l.as_found_db),
                db(l.as_left_db),
                db(l.found_to_left_db),
                l.left_flag.clone(),
            ])
        })
        .collect();
    let crossovers = f.crossovers.iter().map(|c| Row(vec![format!("{} / {}", c.lower, c.upper), hz(c.as_designed_hz), hz(c.as_found_hz), hz(c.as_left_hz)])).collect();

    let rating_of = |part: &str| f.stress.rows.iter().find(|r| r.scenario == Scenario::AsLeft && r.part == part).and_then(|r| r.rating_w.map(|w| (w, r.rating_chosen)));
    let compensation = f
        .compensation
        .fits
        .iter()
        .map(|c| {
            let rating = rating_of(&c.part).map(|(w, chosen)| format!("{} W{}", trim_number(w, 3), if chosen { " (chosen)" } else { "" })).unwrap_or_else(|| "-".into());
            let fitted = if c.cannot_raise || c.fitted_ohm == 0.0 { "none".to_string() } else { ohm(c.fitted_ohm) };
            Row(vec![
                c.part.clone(),
                c.driver.clone(),
                ohm(c.exact_ohm),
                fitted,
                c.series.to_string(),
                format!("{:.3} dB", c.residual_db),
                format!("{:+.3} dB", c.worst_db),
                rating,
            ])
        })
        .collect();
    let mut compensation_notes = Vec::new();
    for c in &f.compensation.fits {
        compensation_notes.push(format!(
            "{} goes {}. It is fitted so {} plays at its {} level over {} - {}.",
            c.part,
            c.placement,
            c.driver,
            c.reference.label(),
            hz(Some(c.band_hz[0])),
            hz(Some(c.band_hz[1]))
        ));
        if let Some(p) = &c.pair {
            compensation_notes.push(format!(
                "Closer with stock E12 parts: {} {} {} = {} ({:.3} dB RMS).",
                ohm(p.a_ohm),
                if p.parallel { "in parallel with" } else { "in series with" },
                ohm(p.b_ohm),
                ohm(p.value_ohm),
                p.residual_db
            ));
        }
    }
    let alternatives = f
        .compensation
        .alternatives
        .iter()
        .map(|a| Row(vec![a.driver.clone(), a.description.clone(), format!("{:.3} dB", a.residual_db), hz(a.crossover_hz), a.verdict.clone()]))
        .collect();
    let warnings = f.compensation.warnings.iter().map(|w| w.message.clone()).collect();

    let stress_row = |r: &crate::analysis::stress::StressRow| {
        let figure = match (r.peak_v, r.rms_a) {
            (Some(v), _) => format!("{} V peak", trim_number(v, 3)),
            (_, Some(a)) => format!("{} A", trim_number(a, 3)),
            _ => "-".into(),
        };
        let rating = r
            .rating_w
            .map(|w| format!("{} W", trim_number(w, 3)))
            .or(r.rating_v.map(|v| format!("{} V", trim_number(v, 3))))
            .or(r.rating_a.map(|a| format!("{} A", trim_number(a, 3))))
            .unwrap_or_else(|| "-".into());
        Row(vec![
            r.scenario.label().into(),
            r.part.clone(),
            format!("{} W", trim_number(r.sine_w, 3)),
            format!("{} W", trim_number(r.programme_w, 3)),
            figure,
            rating,
            r.verdict.into(),
            r.reason.clone(),
        ])
    };
    let stress = f.stress.rows.iter().filter(|r| r.scenario == Scenario::AsLeft).map(stress_row).collect();
    let stress_all = f.stress.rows.iter().map(stress_row).collect();
    let driver_power = f
        .stress
        .drivers
        .iter()
        .filter(|d| d.scenario == Scenario::AsLeft)
        .map(|d| {
            Row(vec![
                d.driver.clone(),
                format!("{} W", trim_number(d.programme_w, 3)),
                format!("{} W near {}", trim_number(d.sine_w, 3), hz(Some(d.sine_at_hz))),
                d.rated_w.map(|w| format!("{} W", trim_number(w, 3))).unwrap_or_else(|| "-".into()),
                d.verdict.into(),
                d.reason.clone(),
            ])
        })
        .collect();
    let load = Scenario::ALL
        .iter()
        .zip(&f.loads)
        .map(|(s, l)| {
            Row(vec![
                s.label().into(),
                format!("{} at {}", ohm(l.min_ohm), hz(Some(l.min_at_hz))),
                format!("{} at {}", ohm(l.epdr_min_ohm), hz(Some(l.epdr_at_hz))),
                if l.rated_impedance_holds { "holds".into() } else { "fails".into() },
                l.verdict.clone(),
            ])
        })
        .collect();
    let (ld, lf, ll) = (&f.loads[0], &f.loads[1], &f.loads[2]);
    let load_change = format!(
        "From as found to as left the lowest impedance moves from {} to {} and the EPDR from {} to {}; the original design presents {} and {}.",
        ohm(lf.min_ohm),
        ohm(ll.min_ohm),
        ohm(lf.epdr_min_ohm),
        ohm(ll.epdr_min_ohm),
        ohm(ld.min_ohm),
        ohm(ld.epdr_min_ohm)
    );
    let health = f.health.iter().map(|h| Row(vec![h.part.clone(), h.message.clone(), format!("{:+.2} dB on {}", h.effect_db, h.effect_driver)])).collect();
    let tolerance = f.tolerance.as_ref().map(|t| {
        serde_json::json!({
            "runs": t.runs, "seed": t.seed, "distribution": format!("{:?}", t.distribution).to_lowercase(),
            "levels": t.levels.iter().map(|l| vec![l.scenario.label().to_string(), l.driver.clone(), db(l.p5_db), db(l.p50_db), db(l.p95_db)]).collect::<Vec<_>>(),
            "ranking": t.ranking.iter().filter(|r| r.db_per_percent.abs() >= 0.001).take(12).map(|r| vec![r.driver.clone(), r.part.clone(), format!("{:+.3} dB/%", r.db_per_percent)]).collect::<Vec<_>>(),
        })
    });

    let summary = summary(job, f);
    let safety = safety(job, f);
    let inputs = job.inputs.iter().map(|i| Row(vec![i.name.clone(), format!("{} bytes", i.bytes.len()), sha256(&i.bytes)])).collect();
    let attachments = job.inputs.iter().enumerate().map(|(i, inp)| serde_json::json!({ "name": inp.name, "file": format!("/inputs/{i}"), "mime": mime(&inp.name) })).collect();
    let sweep = format!("{} to {}, {} points", hz(f.freqs.first().copied()), hz(f.freqs.last().copied()), f.freqs.len());

    let info = &job.info;
    ReportData {
        version: crate::results::VERSION.into(),
        template: match template {
            Template::Customer => "customer".into(),
            Template::Archive => "archive".into(),
            Template::Sale => "sale".into(),
            Template::File(p) => p.display().to_string(),
        },
        date,
        job: serde_json::json!({
            "number": info.number, "work": info.work, "technician": info.technician,
            "shop": { "name": info.shop_name, "address": info.shop_address, "contact": info.shop_contact },
            "customer": { "name": info.customer_name, "reference": info.customer_reference },
            "speaker": { "description": info.speaker_description, "serials": info.serials, "rated_impedance": info.rated_impedance.map(ohm).unwrap_or_else(|| "-".into()) },
            "notes": info.notes,
        }),
        blocks: job.blocks.as_ref().map(|b| b.iter().map(block_data).collect()),
        amplifier: f.stress.amplifier.clone(),
        programme: f.stress.programme_text.into(),
        sweep,
        summary,
        parts,
        drivers,
        changes,
        levels,
        level_band_note: "Levels are the mean over each driver's band, in dB relative to the original design; the band is the fitting band where a compensating resistor names the driver, otherwise where the original design plays within 6 dB of its maximum.".into(),
        crossovers,
        compensation,
        compensation_notes,
        alternatives,
        warnings,
        stress,
        stress_all,
        driver_power,
        load,
        load_verdict: f.loads[2].reason.clone(),
        load_change,
        load_rated: job.rated_impedance_basis(),
        health,
        tolerance,
        safety,
        inputs,
        attachments,
        plots,
    }
}

/// Plain sentences for the customer: what was found, what was done, how it now compares.
fn summary(job: &Job, f: &Findings) -> Vec<String> {
    let mut out = Vec::new();
    let off: Vec<String> = f.levels.iter().filter(|l| l.as_found_db.abs() >= 0.5).map(|l| format!("{} ({}) {}", l.driver, l.role, db(l.as_found_db))).collect();
    if job.measured.is_empty() {
        out.push("No parts were measured before the work, so the as-found figures equal the original design.".into());
    } else if off.is_empty() {
        out.push("As found, every driver played within 0.5 dB of the original design.".into());
    } else {
        out.push(format!("As found, the level differed from the original design by more than 0.5 dB for: {}.", off.join(", ")));
    }
    let mut flagged: Vec<&str> = f.health.iter().map(|h| h.part.as_str()).collect();
    flagged.dedup();
    if !flagged.is_empty() {
        out.push(format!("Bench readings flagged {} part{}: {}.", flagged.len(), if flagged.len() == 1 { "" } else { "s" }, flagged.join(", ")));
    }
    out.push(format!("{} change step{} recorded (listed below).", job.changes.len(), if job.changes.len() == 1 { " was" } else { "s were" }));
    for c in &f.compensation.fits {
        if c.fitted_ohm > 0.0 && !c.cannot_raise {
            out.push(format!("A {} resistor ({}) was fitted ahead of {}'s filter to restore its original level.", ohm(c.fitted_ohm), c.part, c.driver));
        }
    }
    let worst = f.levels.iter().map(|l| l.as_left_db.abs()).fold(0.0, f64::max);
    out.push(format!(
        "As left, every driver is within {:.2} dB of the original design over its band ({}). Level changes below about 0.4 dB are generally not noticed (Ballou, Handbook for Sound Engineers); 3 dB is double the power, not double the loudness.",
        worst,
        crate::analysis::level_flag(worst)
    ));
    out.push(format!("Amplifier load as left: {}.", f.loads[2].reason));
    out
}

/// Cautions suited to what this job does.
fn safety(job: &Job, f: &Findings) -> Vec<String> {
    let mut s = vec!["All figures here are computed from the job's values and models; confirm them by measurement before relying on them.".to_string()];
    let resistors: Vec<&crate::analysis::stress::StressRow> =
        f.stress.rows.iter().filter(|r| r.scenario == Scenario::AsLeft && r.kind == "resistor" && r.programme_w > 0.0).collect();
    if !resistors.is_empty() {
        let hottest = resistors.iter().cloned().max_by(|a, b| a.sine_w.partial_cmp(&b.sine_w).unwrap_or(std::cmp::Ordering::Equal));
        s.push(format!(
            "Crossover resistors get hot. Mount them clear of capacitors, wiring and wadding, with space for air; rate them at least twice their programme dissipation (common practice).{}",
            hottest.map(|h| format!(" With a full-level sine near {}, {} would dissipate {} W.", hz(Some(h.sine_at_hz)), h.part, trim_number(h.sine_w, 3))).unwrap_or_default()
        ));
    }
    if f.stress.rows.iter().any(|r| r.verdict == "over") {
        s.push("At least one part is over its rating at the stated amplifier power: keep the level down until it is replaced with a suitably rated part.".into());
    }
    if job.network.parts.iter().chain(f.scenes[2].network.parts.iter()).any(|p| p.kind == PartKind::Capacitor) {
        s.push("Use only bipolar (non-polar) capacitors in a crossover: a polarised electrolytic fitted there can fail, overheat or vent.".into());
    }
    s.push(format!("The amplifier's load: {}. Follow the amplifier maker's minimum load rating.", f.loads[2].reason));
    s.push("Disconnect the amplifier before working on the crossover, and let large capacitors in the amplifier discharge as its maker describes.".into());
    s.push(
        "Bench tests: start at a low level, keep test tones short, and wear hearing protection near the drivers; a tweeter driven with a full-level sine can fail in seconds."
            .into(),
    );
    s.push("Soldering: work in a ventilated place, extract the fumes, and wash your hands after handling old parts and solder.".into());
    s.push("These notes defer to local electrical codes, to the amplifier's and drivers' makers' ratings, and to qualified service practice.".into());
    s
}
