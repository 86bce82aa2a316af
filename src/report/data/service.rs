//! The service record's blocks: intake and closing, the inspection, the history of the parts
//! (what is original and what was replaced) with the condition grade for a buyer, the
//! largest amplifier power the speaker suits, and the technician's sign-off.

use serde::Serialize;

use super::story::with_article;
use super::words::{capitalise, driver_words, join_and, kind_noun, part_place};
use super::{Audience, Ctx, Row, Table};
use crate::model::{ChangeStep, PartKind, Patch};
use crate::units::{ohm, trim_number};

#[derive(Debug, Serialize)]
pub struct ServiceData {
    /// Two columns: what, and the record of it.
    pub record: Table,
    pub inspection: Table,
    /// "11 items: 8 pass, 1 fixed, 2 not checked".
    pub inspection_summary: String,
    /// The shop's condition grade, for a buyer.
    pub condition: Option<String>,
    /// The technician who signs the record.
    pub technician: String,
}

/// The record block, or None when the job has no `service` section.
pub(super) fn service(c: &Ctx) -> Option<ServiceData> {
    let s = &c.job.service;
    if !s.given {
        return None;
    }
    let mut rows: Vec<Row> = Vec::new();
    let mut row = |a: &str, b: String| rows.push(Row(vec![a.to_string(), b]));
    let sale = c.audience == Audience::Sale;
    // A quotation comes before the work: the customer's words, when the speaker came in and
    // the labour proposed; the shop's finding, the warranty, the condition and the
    // inspection are written after the work and stay out of it.
    if c.quote {
        if let Some(a) = s.received {
            row("Came in", a.to_string());
        }
        if let Some(t) = &s.complaint {
            row("What you told us", t.clone());
        }
        if let Some(h) = s.labour_hours {
            row("Labour proposed", format!("{} h{}", trim_number(h, 3), labour_cost(c, h)));
        }
        if rows.is_empty() {
            return None;
        }
        return Some(ServiceData {
            record: Table::new(&["", ""], rows),
            inspection: Table::default(),
            inspection_summary: String::new(),
            condition: None,
            technician: c.job.info.technician.clone(),
        });
    }
    match (s.received, s.returned) {
        (Some(a), Some(b)) => row("In the shop", format!("{a} to {b}")),
        (Some(a), None) => row("Came in", a.to_string()),
        (None, Some(b)) => row("Went back", b.to_string()),
        (None, None) => {}
    }
    // The customer's own words and the shop's finding may speak of the owner: never on the
    // sale sheet.
    if !sale {
        if let Some(t) = &s.complaint {
            row(if c.audience.plain() { "What you told us" } else { "Complaint (customer's words)" }, t.clone());
        }
        if let Some(t) = &s.finding {
            row(if c.audience.plain() { "What we found" } else { "Finding" }, t.clone());
        }
        if let Some(h) = s.labour_hours {
            row("Labour", format!("{} h{}", trim_number(h, 3), labour_cost(c, h)));
        }
        if let Some(t) = &s.warranty {
            row("Warranty", t.clone());
        }
    }
    if let Some(t) = &s.condition {
        row("Condition", t.clone());
    }
    let inspection =
        Table::new(&["Item", "Result", "Note"], s.inspection.iter().map(|i| Row(vec![i.item.clone(), i.result.words().to_string(), i.note.clone().unwrap_or_default()])).collect());
    let count = |r: crate::model::service::InspectionResult| s.inspection.iter().filter(|i| i.result == r).count();
    use crate::model::service::InspectionResult as R;
    let parts: Vec<String> = [R::Pass, R::Fixed, R::Fail, R::NotChecked, R::NoneFitted].iter().filter(|r| count(**r) > 0).map(|r| format!("{} {}", count(*r), r.words())).collect();
    let inspection_summary = if s.inspection.is_empty() { String::new() } else { format!("{} items: {}.", s.inspection.len(), parts.join(", ")) };
    Some(ServiceData { record: Table::new(&["", ""], rows), inspection, inspection_summary, condition: s.condition.clone(), technician: c.job.info.technician.clone() })
}

/// A quotation's closing words: what the customer signs and what the prices cover.
#[derive(Debug, Serialize, Default)]
pub struct QuoteTerms {
    /// The line to sign: an option chosen, or the one proposal agreed (at the prices quoted
    /// only when it has prices).
    pub accept: String,
    /// What the prices cover (or that nothing is priced yet), and how the figures are known.
    pub terms: String,
    /// A single proposal's parts, labour and total, when priced.
    pub total: Option<String>,
}

/// A quotation's terms for the whole job (`cabinets` cabinets, every part counted for each).
pub(crate) fn quote_terms(c: &Ctx, parts: &crate::analysis::bom::PartsList, options: &[crate::analysis::options::OptionFindings], cabinets: usize) -> QuoteTerms {
    let job = c.job;
    let rate = job.quote.labour_rate;
    let currency = parts.currency.clone().or_else(|| job.quote.currency.clone()).map(|c| format!(" {c}")).unwrap_or_default();
    let serials = job.info.serials.len();
    let whole = match cabinets {
        // One cabinet's network for several serials: the prices are for one, as the options
        // table says.
        1 if serials > 1 => format!("one cabinet (the job lists {} serials, each priced alike)", super::words::count_words(serials)),
        1 => "the whole job".to_string(),
        2 => "the whole job, both cabinets".to_string(),
        n => format!("the whole job, all {} cabinets", super::words::count_words(n)),
    };
    // A prediction, said as one: the job records no measurement to come.
    let figures = "figures are calculated from the parts' values and readings: a prediction of the work, not a measurement of it.";
    let cover = |priced: bool, labour: bool| match (priced, labour) {
        (true, true) => format!("Prices are for the parts and labour listed, for {whole}; {figures}"),
        (true, false) => format!("Prices are for the parts listed, for {whole}; labour is not included; {figures}"),
        (false, true) => format!("No part is priced yet (the job names no price list); the shop prices the parts before the work starts. Labour is for {whole}; {figures}"),
        (false, false) => {
            // The parts are still counted: say for how many cabinets.
            let counted = if cabinets > 1 || serials > 1 { format!(" Parts are counted for {whole}.") } else { String::new() };
            format!("Nothing in this quotation is priced yet: the shop gives its prices before the work starts.{counted} The {figures}")
        }
    };
    if !job.options.is_empty() {
        let priced = options.iter().any(|o| o.parts.total.is_some() || o.labour.is_some());
        let labour = options.iter().any(|o| o.labour.is_some());
        return QuoteTerms { accept: "Option chosen:".into(), terms: cover(priced, labour), total: None };
    }
    let hours = job.service.labour_hours;
    let labour = rate.zip(hours).and_then(|(r, h)| r.for_hours(h));
    let total = match (parts.total, labour) {
        (Some(p), Some(l)) if parts.unpriced == 0 => Some(format!(
            "Parts {p}{currency}; labour {} h, {l}{currency}; total {}{currency}.",
            trim_number(hours.unwrap_or(0.0), 3),
            crate::money::Money(p.0.saturating_add(l.0))
        )),
        _ => None,
    };
    let priced = parts.total.is_some();
    QuoteTerms {
        accept: if priced {
            "I accept the work proposed above at the prices quoted.".into()
        } else {
            // A sentence with its verb: what is signed is the work, and a price still to come.
            "I agree to the work proposed above; the shop prices what is not yet priced before the work starts.".into()
        },
        terms: cover(priced, labour.is_some()),
        total,
    }
}

/// " at 44.00 EUR an hour: 66.00 EUR", or nothing without a labour rate.
fn labour_cost(c: &Ctx, h: f64) -> String {
    c.job
        .quote
        .labour_rate
        .and_then(|rate| {
            let m = rate.for_hours(h)?;
            let currency = c.job.prices.as_ref().map(|p| p.currency.clone()).or_else(|| c.job.quote.currency.clone()).map(|c| format!(" {c}")).unwrap_or_default();
            Some(format!(" at {rate}{currency} an hour: {m}{currency}"))
        })
        .unwrap_or_default()
}

#[derive(Debug, Serialize)]
pub struct PhotoData {
    /// The image inside the report's files ("/inputs/3"), the file as named in the job.
    pub file: String,
    pub name: String,
    pub caption: String,
    /// "Before the work" or "After the work".
    pub taken: String,
    pub sha256: String,
}

/// The photographs this report shows, each with its SHA-256 (the attached original's).
pub(super) fn photos(c: &Ctx) -> Vec<PhotoData> {
    let show = |customer: bool| match c.audience {
        Audience::Archive => true,
        Audience::Customer => customer,
        Audience::Sale => false,
    };
    c.job
        .service
        .photos
        .iter()
        .filter(|p| show(p.customer))
        .filter_map(|p| {
            let i = c.job.inputs.iter().position(|f| f.name == p.file)?;
            Some(PhotoData {
                file: format!("/inputs/{i}"),
                name: p.file.clone(),
                caption: p.caption.clone(),
                taken: match p.taken {
                    crate::model::service::Taken::Before => "Before the work".into(),
                    crate::model::service::Taken::After => "After the work".into(),
                },
                sha256: super::sha256(&c.job.inputs[i].bytes),
            })
        })
        .collect()
}

/// What is original and what was replaced, part by part (drivers too), with the date the
/// work was finished; for the buyer and the archive.
pub(super) fn history(c: &Ctx) -> Table {
    let job = c.job;
    let (found, left) = (&c.f.scenes.as_found.network, &c.f.scenes.as_left.network);
    // The work is on record by the report's date.
    let when = job.info.date.to_string();
    let plain = c.audience.plain();
    // The archive keeps where each part came from: a fitted part's maker, part number,
    // supplier and lot, an original's markings.
    let record = c.audience == Audience::Archive;
    let design = &job.network;
    let marks = |name: &str| design.part(name).map(|p| p.provenance.text()).unwrap_or_default();
    let fitted = |name: &str| left.part(name).map(|p| p.provenance.text()).unwrap_or_default();
    let replaced_record = |name: &str| {
        let (a, b) = (fitted(name), marks(name));
        match (a.is_empty(), b.is_empty()) {
            (true, true) => String::new(),
            (false, true) => format!("fitted: {a}"),
            (true, false) => format!("removed: {b}"),
            (false, false) => format!("fitted: {a}; removed: {b}"),
        }
    };
    let mut rows: Vec<Row> = Vec::new();
    let mut push = |mut cells: Vec<String>, extra: String| {
        if record {
            cells.push(extra);
        }
        rows.push(Row(cells));
    };
    let touched = |name: &str| {
        job.changes.iter().any(|ch| match &ch.step {
            ChangeStep::Replace { target, .. } | ChangeStep::Remove { target } => target == name,
            _ => false,
        })
    };
    let what_part = |net: &crate::model::Network, name: &str| match net.part(name) {
        Some(p) => format!("{name}, {} in {}", with_article(kind_noun(p.kind)), part_place(net, name)),
        None => capitalise(&driver_words(net, name)),
    };
    let now_part = |name: &str| match left.part(name) {
        Some(p) if plain => super::words::fitted_words(c, p),
        Some(p) => super::part_text(p),
        None => String::new(),
    };
    for p in &job.network.parts {
        if !touched(&p.name) {
            push(vec![what_part(found, &p.name), "original".into(), String::new()], marks(&p.name));
        }
    }
    for d in &job.network.drivers {
        if !touched(&d.name) {
            push(vec![what_part(found, &d.name), "original".into(), String::new()], String::new());
        }
    }
    for ch in &job.changes {
        match &ch.step {
            ChangeStep::Replace { target, with } => {
                let now = match with {
                    Patch::Driver(p) => p.note.clone().unwrap_or_else(|| "a replacement driver".into()),
                    Patch::Part(_) => now_part(target),
                };
                push(vec![what_part(found, target), format!("replaced {when}"), now], replaced_record(target));
            }
            ChangeStep::Remove { target } => push(vec![what_part(found, target), format!("removed {when}"), String::new()], marks(target)),
            ChangeStep::Insert { part, .. } => push(vec![what_part(left, &part.name), format!("added {when}"), now_part(&part.name)], fitted(&part.name)),
            ChangeStep::Add { parts } => {
                for p in parts {
                    push(vec![what_part(left, &p.name), format!("added {when}"), now_part(&p.name)], fitted(&p.name));
                }
            }
        }
    }
    if record {
        Table::new(&["Part", "State", "Now", "Record"], rows)
    } else {
        Table::new(&["Part", "State", "Now"], rows)
    }
}

/// The amplifier power this speaker suits ([`crate::analysis::power`]), said the same way in
/// every report: the plain reports' sentence opens the archive's too, which adds the
/// definition, the first limit and the steady-tone bench caution.
pub(super) fn power(c: &Ctx) -> String {
    let p = &c.f.power;
    let net = &c.f.scenes.as_left.network;
    // The figure is an amplifier's rating into its rated load: on a speaker of another
    // impedance "into 8 ohm" would read as the speaker's, so the sentence names both.
    let (speaker, into) = match c.job.info.rated_impedance {
        Some(r) if (r - p.into_ohm).abs() > 1e-9 => (format!("This {} ohm speaker", trim_number(r, 3)), format!("by the amplifier's {} ohm rating", trim_number(p.into_ohm, 3))),
        _ => ("This speaker".to_string(), format!("into {} ohm", trim_number(p.into_ohm, 3))),
    };
    // Parts of one kind are named together ("inductors L1 and L2"), drivers after them.
    let mut named: Vec<String> = Vec::new();
    let mut count = 0;
    for kind in [PartKind::Capacitor, PartKind::Inductor, PartKind::Resistor] {
        let mut these: Vec<&str> = p.unrated.iter().filter(|n| net.part(n).is_some_and(|x| x.kind == kind)).map(String::as_str).collect();
        these.sort();
        count += these.len();
        match (these.len(), c.audience.plain()) {
            (0, _) => {}
            (_, false) => named.extend(these.iter().map(|n| n.to_string())),
            (1, true) => named.push(format!("{} {}", kind_noun(kind), these[0])),
            (_, true) => named.push(format!("{}s {}", kind_noun(kind), join_and(&these.iter().map(|n| n.to_string()).collect::<Vec<_>>()))),
        }
    }
    for n in p.unrated.iter().filter(|n| net.part(n).is_none()) {
        named.push(driver_words(net, n));
        count += 1;
    }
    let unrated = match count {
        0 => String::new(),
        1 => format!("{} has no rating on record", capitalise(&named[0])),
        _ => format!("{} have no rating on record", capitalise(&join_and(&named))),
    };
    // The driver makers' ratings come first only where a driver has one on record.
    let rated_driver = net.drivers.iter().any(|d| d.rated_power.is_some());
    let makers = if rated_driver { "the driver makers' ratings come first, and " } else { "" };
    let plain = match p.suits_w {
        Some(w) if p.unrated.is_empty() => format!(
            "{speaker} suits an amplifier of up to {} W per channel {into}: up to that power, every part and driver stays within its rating on music. The ratings are for heat; a driver's cone travel at low frequencies can set a lower limit, and an amplifier driven into clipping can damage the speaker at any power.",
            trim_number(w, 3)
        ),
        Some(w) => format!(
            "{speaker} suits an amplifier of up to {} W per channel {into}, from the ratings on record. {unrated}, so the shop gives no figure above the {} W amplifier it worked these figures out for; {makers}an amplifier driven into clipping can damage the speaker at any power.",
            trim_number(w, 3),
            trim_number(p.job_w, 3)
        ),
        None => format!(
            "No part or driver has a power rating on record, so these figures cannot say what amplifier power this speaker suits; they were worked out for an amplifier of {} W per channel into {} ohm. Ask the shop.",
            trim_number(p.job_w, 3),
            trim_number(p.into_ohm, 3)
        ),
    };
    if c.audience.plain() {
        return plain;
    }
    let mut s = plain;
    if let (Some(max), Some(who), Some(limit)) = (p.max_w, &p.limited_by, &p.limit) {
        s.push_str(&format!(" First limit: {who}, where {limit}, at {} W before rounding.", trim_number(max, 3)));
    }
    s.push_str(&format!(" Definition: {}.", p.basis));
    if let (Some(w), Some(who), Some(hz_at)) = (p.sine_max_w, &p.sine_limited_by, p.sine_at_hz) {
        s.push_str(&format!(
            " Bench caution: a steady full-level tone near {} from an amplifier of more than {} W takes {who} past its rating; keep bench tones low and short.",
            crate::units::hz(Some(hz_at)),
            trim_number(w, 3)
        ));
    }
    s.push_str(&format!(" Load as left: min |Z| {}, {}.", ohm(p.min_ohm), p.load_verdict));
    s
}

/// The sweeps at the terminals: the prediction against each sweep, and the diagnosis from the
/// sweep as found.
#[derive(Debug, Serialize)]
pub struct TerminalsData {
    pub basis: String,
    pub table: Table,
    pub sentences: Vec<String>,
    /// The archive's record of the diagnosis: what it was estimated from, the estimates, and
    /// the finding.
    pub diagnosis: Option<DiagnosisData>,
}

#[derive(Debug, Serialize)]
pub struct DiagnosisData {
    pub basis: String,
    pub table: Table,
    pub sentence: String,
}

pub(super) fn terminals(c: &Ctx) -> Option<TerminalsData> {
    use crate::model::Scenario;
    use crate::units::hz;
    let f = c.f;
    if f.confirmation.is_empty() {
        return None;
    }
    let plain = c.audience.plain();
    let when = |s: Scenario| if s == Scenario::AsLeft { "after the work" } else { "before the work" };
    let mut sentences = Vec::new();
    for k in &f.confirmation {
        if plain {
            // The owner and the buyer hear of the speaker as it left; the record keeps both.
            if k.scenario != Scenario::AsLeft {
                continue;
            }
            sentences.push(if k.verdict == crate::analysis::Verdict::Ok {
                format!(
                    "Measured at its terminals after the work, the speaker matches the calculation: its impedance is within {:.1} % of it on average (the shop's limit is {} %).",
                    k.z_rms_pct,
                    trim_number(k.limits.z_rms_pct, 3)
                )
            } else {
                format!(
                    "Measured at its terminals after the work, the speaker departs from the calculation by up to {:.0} % near {}: the shop checks the work again before the speaker goes back.",
                    k.z_worst_pct.abs(),
                    hz(Some(k.worst_hz))
                )
            });
        } else {
            sentences.push(format!("{}: {}.", capitalise(when(k.scenario)), k.reason));
        }
    }
    let rows = f
        .confirmation
        .iter()
        .map(|k| {
            Row(vec![
                k.scenario.label().into(),
                format!("{} ({} points, {} to {})", k.file, k.points, hz(Some(k.from_hz)), hz(Some(k.to_hz))),
                format!("{:.2} %", k.z_rms_pct),
                format!("{:+.2} % at {}", k.z_worst_pct, hz(Some(k.worst_hz))),
                format!("{:.2}°", k.phase_rms_deg),
                k.verdict.name().into(),
            ])
        })
        .collect();
    let l = f.confirmation[0].limits;
    let diagnosis = match (&f.diagnosis, c.audience) {
        (Some(d), super::Audience::Archive) => Some(diagnosis(c, d)),
        _ => None,
    };
    Some(TerminalsData {
        basis: format!(
            "the input impedance predicted from the parts' values and readings, at each sweep's points inside the analysis sweep, against the sweep measured at the terminals; |Z| errors in per cent of the measured |Z|; limits {} % RMS and {} % at worst for |Z|, {} degrees RMS for phase (common practice for a sound card with a sense resistor, or the job's)",
            trim_number(l.z_rms_pct, 3),
            trim_number(l.z_worst_pct, 3),
            trim_number(l.phase_rms_deg, 3)
        ),
        table: Table::new(&["Scenario", "Sweep", "|Z| RMS error", "|Z| worst error", "Phase RMS error", "Verdict"], rows),
        sentences,
        diagnosis,
    })
}

fn diagnosis(c: &Ctx, d: &Result<crate::analysis::diagnose::Diagnosis, String>) -> DiagnosisData {
    use crate::analysis::diagnose::{field_words, value_text};
    let d = match d {
        Ok(d) => d,
        Err(e) => return DiagnosisData { basis: String::new(), table: Table::new(&[], vec![]), sentence: format!("No diagnosis could be made from the sweep as found: {e}.") },
    };
    let net = &c.f.scenes.as_found.network;
    let rows = d
        .estimates
        .iter()
        .map(|e| {
            let v = |x: f64| value_text(net, &e.part, &e.field, x);
            // An estimate the sweep cannot tell prints no value, as if it were one.
            let (estimate, interval, note) =
                if e.identifiable { (v(e.value), format!("{} to {}", v(e.low), v(e.high)), String::new()) } else { ("-".into(), "-".into(), e.reason.clone()) };
            Row(vec![format!("{} {}", e.part, field_words(&e.field)), v(e.start), estimate, interval, note])
        })
        .collect();
    DiagnosisData {
        basis: format!(
            "{}; residual {:.2} (|Z| {:.2} % RMS, phase {:.2} degrees RMS){}",
            d.basis,
            d.residual,
            d.residual_z_pct,
            d.residual_phase_deg,
            if d.converged { "" } else { "; the fit stopped before it settled" }
        ),
        table: Table::new(&["Parameter", "On record", "Estimated", "95 % interval", "Note"], rows),
        sentence: d.sentence.clone(),
    }
}
