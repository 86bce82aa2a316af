//! The report of a pair or set: each cabinet's report data built as for a job of its own,
//! then merged: a table gains a Cabinet column (unless every cabinet's is the same), a
//! sentence every cabinet shares is said once and the others are said of their cabinet; the
//! match between the cabinets comes first.

use serde::Serialize;

use super::merge::{merge_in_order, merge_sentences, merge_tables};
use super::words::{capitalise, driver_words, join_and};
use super::{build, ReportData, Row, Table};
use crate::analysis::pair::{PairMatch, SetFindings};
use crate::analysis::Verdict;
use crate::model::{Job, PlotKind, Template};
use crate::units::{ohm, trim_number};

/// The match between the cabinets, for the `pair` block.
#[derive(Debug, Serialize)]
pub struct PairData {
    /// "pair" or "set".
    pub kind: String,
    pub basis: String,
    pub table: Table,
    /// In a set, each cabinet against the median (archive).
    pub median: Table,
    pub sentences: Vec<String>,
    pub compensation: Table,
    pub compensation_notes: Vec<String>,
    /// The same, in a sentence each, for the owner and the buyer (no table of exact values).
    pub compensation_plain: Vec<String>,
}

/// The report data of a pair or set.
pub fn build_set(job: &Job, set: &SetFindings, template: &Template, plots: &[PlotKind]) -> ReportData {
    let names: Vec<String> = set.cabinets.iter().map(|c| c.name.clone()).collect();
    let mut each: Vec<ReportData> = set.cabinets.iter().map(|c| build(&c.job, &c.findings, template, plots)).collect();
    // The amplifier power the set suits is the least of any cabinet's.
    let least = set
        .cabinets
        .iter()
        .enumerate()
        .min_by(|a, b| a.1.findings.power.max_w.unwrap_or(f64::INFINITY).total_cmp(&b.1.findings.power.max_w.unwrap_or(f64::INFINITY)))
        .map(|(i, _)| i);
    let power = least.map(|i| {
        let p = each[i].power.clone();
        if set.cabinets.len() > 1 && data_plain(template) {
            format!("{p} (This is the {} of the cabinets' figures.)", if set.cabinets.len() == 2 { "lower" } else { "lowest" })
        } else if set.cabinets.len() > 1 {
            format!("{p} (Cabinet {}, the least of the cabinets.)", names[i])
        } else {
            p
        }
    });
    // An owner buys one amplifier for the set: its load is said once, from the cabinet that
    // asks most of the amplifier (the lowest impedance as left), the others' figures beside it.
    let lowest_load = if data_plain(template) && set.cabinets.len() > 1 {
        let key = |c: &crate::analysis::pair::CabinetFindings| c.findings.loads.as_left.min_ohm;
        let i = (0..set.cabinets.len()).min_by(|a, b| key(&set.cabinets[*a]).total_cmp(&key(&set.cabinets[*b]))).unwrap_or(0);
        let others: Vec<String> = set.cabinets.iter().enumerate().filter(|(j, _)| *j != i).map(|(_, c)| ohm(key(c))).collect();
        let mut sentences = each[i].load.sentences.clone();
        if let Some(last) = sentences.last_mut() {
            let whose = if set.cabinets.len() == 2 {
                "the lower of the two cabinets' figures; the other's lowest is"
            } else {
                "the lowest of the cabinets' figures; the others' lowest are"
            };
            last.push_str(&format!(" (This is {whose} {}.)", join_and(&others)));
        }
        Some(sentences)
    } else {
        None
    };
    // The steady-tone caution likewise: said once to the owner, from the cabinet whose part
    // a test tone overheats first.
    if data_plain(template) && set.cabinets.len() > 1 {
        let is_tone = |s: &String| s.starts_with("Test tones:");
        let first = (0..each.len())
            .filter(|i| each[*i].safety.iter().any(is_tone))
            .min_by(|a, b| set.cabinets[*a].findings.power.sine_max_w.unwrap_or(f64::INFINITY).total_cmp(&set.cabinets[*b].findings.power.sine_max_w.unwrap_or(f64::INFINITY)));
        if let Some(i) = first {
            let n = each.iter().filter(|d| d.safety.iter().any(is_tone)).count();
            let mut tone = each[i].safety.iter().find(|s| is_tone(s)).cloned().unwrap_or_default();
            if n > 1 {
                tone = tone.replacen("; keep test tones", &format!(" (the {} of the cabinets' figures); keep test tones", if n == 2 { "lower" } else { "lowest" }), 1);
            }
            let at = each[i].safety.iter().position(is_tone).unwrap_or(0);
            for d in each.iter_mut() {
                d.safety.retain(|s| !is_tone(s));
            }
            for d in each.iter_mut() {
                let at = at.min(d.safety.len());
                d.safety.insert(at, tone.clone());
            }
        }
    }
    let mut data = each.remove(0);
    if let Some(p) = power {
        data.power = p;
    }
    let mut rest = each;
    macro_rules! tables {
        ($($f:ident).+) => {{
            let first = std::mem::take(&mut data.$($f).+);
            let mut all = vec![first];
            all.extend(rest.iter().map(|d| Table { header: d.$($f).+.header.clone(), rows: d.$($f).+.rows.iter().map(|r| Row(r.0.clone())).collect() }));
            data.$($f).+ = merge_tables(&names, all);
        }};
    }
    macro_rules! sentences {
        ($($f:ident).+) => {{
            let mut all = vec![std::mem::take(&mut data.$($f).+)];
            all.extend(rest.iter().map(|d| d.$($f).+.clone()));
            data.$($f).+ = merge_sentences(&names, all);
        }};
    }
    tables!(levels.table);
    tables!(levels.crossovers);
    tables!(compensation.table);
    tables!(compensation.alternatives);
    tables!(parts);
    tables!(drivers);
    tables!(stress.table);
    tables!(stress.all);
    tables!(stress.drivers);
    tables!(load.table);
    tables!(health);
    tables!(history);
    sentences!(summary);
    let mut work = vec![std::mem::take(&mut data.work)];
    work.extend(rest.iter().map(|d| d.work.clone()));
    data.work = merge_in_order(&names, work);
    sentences!(compensation.notes);
    sentences!(compensation.warnings);
    match lowest_load {
        Some(one) => data.load.sentences = one,
        None => sentences!(load.sentences),
    }
    sentences!(safety);
    if let Some(t) = data.tolerance.as_mut() {
        let levels: Vec<Table> = std::iter::once(std::mem::take(&mut t.levels))
            .chain(
                rest.iter().filter_map(|d| d.tolerance.as_ref()).map(|x| Table { header: x.levels.header.clone(), rows: x.levels.rows.iter().map(|r| Row(r.0.clone())).collect() }),
            )
            .collect();
        let ranking: Vec<Table> = std::iter::once(std::mem::take(&mut t.ranking))
            .chain(
                rest.iter()
                    .filter_map(|d| d.tolerance.as_ref())
                    .map(|x| Table { header: x.ranking.header.clone(), rows: x.ranking.rows.iter().map(|r| Row(r.0.clone())).collect() }),
            )
            .collect();
        t.levels = merge_tables(&names, levels);
        t.ranking = merge_tables(&names, ranking);
    }
    // A substitute fitted to every cabinet alike is shown once; one fitted to some cabinets
    // only, or differing, is shown for each cabinet that has it.
    let all_same = rest.iter().all(|d| d.substitutes == data.substitutes);
    if !all_same {
        let mut merged = Vec::new();
        for (name, list) in names.iter().zip(std::iter::once(&mut data.substitutes).chain(rest.iter_mut().map(|d| &mut d.substitutes))) {
            for mut x in list.drain(..) {
                x.heading = format!("{} (cabinet {name})", x.heading);
                merged.push(x);
            }
        }
        data.substitutes = merged;
    }
    let plain = data.audience.plain();
    let pair = pair_data(job, set, plain);
    // The customer reads first whether the pair matches again.
    let mut summary = customer_sentences(job, set, data.template == "quote");
    summary.append(&mut data.summary);
    data.summary = summary;
    data.job.speaker.serials = names.clone();
    data.worked = job.work_done();
    // The parts for every cabinet's work, counted across the set.
    data.parts_to_buy = super::blocks::parts_to_buy(&set.parts, plain);
    data.parts_counted = "counted for every cabinet".into();
    data.parts_total = super::blocks::parts_total(&set.parts);
    for p in &mut data.plots {
        if let Some(k) = PlotKind::ALL.iter().find(|k| k.name() == p.name) {
            p.caption = crate::report::plots::set_caption(*k, data.worked).into();
        }
    }
    data.pair = Some(pair);
    // The options, each solved for every cabinet.
    if let Some(first) = set.cabinets.first() {
        let c = super::Ctx { job: &first.job, f: &first.findings, audience: data.audience, quote: data.template == "quote" };
        data.options = super::offers::options_of(&c, &set.options, set.recommended.as_ref());
        // A cabinet's own work comes with every option: said from the whole job's cabinets.
        if let Some(o) = &mut data.options {
            o.every_option = super::offers::every_option(&super::Ctx { job, ..c });
        }
        data.quote = super::service::quote_terms(&c, &set.parts, &set.options, set.cabinets.len());
        // The invoice is the whole job's: every cabinet's parts, the job's labour.
        let whole = super::Ctx { job, ..c };
        data.invoice = super::invoice::invoice(&whole, &set.parts, set.cabinets.len());
    }
    if let Some(ch) = &set.chosen {
        data.summary.push(ch.sentence.clone());
    }
    super::trade_units(&mut data);
    data
}

/// Whether a template's reader gets plain words.
fn data_plain(template: &Template) -> bool {
    super::Audience::of(template) != super::Audience::Archive
}

/// "the two cabinets" or "the five cabinets".
fn cabinets_words(n: usize) -> String {
    if n == 2 {
        "the two cabinets".into()
    } else {
        format!("the {} cabinets", super::words::count_words(n))
    }
}

/// Whether the cabinets match as left, and what stood out as found, in plain sentences.
fn customer_sentences(job: &Job, set: &SetFindings, quote: bool) -> Vec<String> {
    let net = &job.network;
    let n = set.cabinets.len();
    let tol = trim_number(set.tolerance_db, 3);
    let apart: Vec<&PairMatch> = set.matching.iter().filter(|m| m.verdict != Verdict::Ok).collect();
    let mut out = Vec::new();
    let found_apart: Vec<&PairMatch> = set.matching.iter().filter(|m| m.as_found_verdict != Verdict::Ok).collect();
    if !found_apart.is_empty() {
        let each: Vec<String> = found_apart
            .iter()
            .map(|m| {
                let who = m.odd_cabinet.clone().unwrap_or_else(|| {
                    // In a pair the cabinet whose own readings explain most of the gap.
                    m.responsible.first().map(|r| r.cabinet.clone()).unwrap_or_else(|| m.as_found_cabinets[1].clone())
                });
                // The readings that explain a quarter or more of the difference; "mostly" only
                // when the first explains half or more.
                // They may sit in either of the cabinets that set the difference.
                let parts: Vec<&crate::analysis::pair::Responsible> = m.responsible.iter().filter(|r| r.share_db >= 0.25 * m.as_found_db).collect();
                let all_in_who = parts.iter().all(|r| r.cabinet == who);
                let names: Vec<String> = parts.iter().map(|r| if all_in_who { r.part.clone() } else { format!("{} in cabinet {}", r.part, r.cabinet) }).collect();
                let place = if all_in_who { " in that cabinet" } else { "" };
                let cause = match parts.first() {
                    None => String::new(),
                    Some(r) if r.share_db >= 0.5 * m.as_found_db => format!(", mostly from {}{place}", join_and(&names)),
                    Some(_) => format!(", from {}{place}", join_and(&names)),
                };
                if m.as_found_db > crate::analysis::compensate::FAULT_DB {
                    // Tens of dB is a driver that no longer plays: a fault, not a level.
                    let traced = if names.is_empty() { "a fault (an open part or connection)".to_string() } else { format!("a fault traced to {}{place}", join_and(&names)) };
                    return format!("{} of cabinet {} was all but silent: {traced}, not a level difference", driver_words(net, &m.driver), m.as_found_cabinets[1]);
                }
                format!("{} differed by {:.2} dB between cabinets, cabinet {who} the odd one out{cause}", driver_words(net, &m.driver), m.as_found_db)
            })
            .collect();
        out.push(capitalise(&format!("As they came in, {}.", join_and(&each))));
    }
    // Before any work (a quotation) the match as left is the match as found, said above.
    if job.changes.is_empty() && !job.options.is_empty() {
        if found_apart.is_empty() {
            out.push(format!("As they came in, {} matched: every driver within {tol} dB.", cabinets_words(n)));
        }
        return out;
    }
    if apart.is_empty() {
        let how = if n == 2 { format!("every driver within {tol} dB of its partner in the other cabinet") } else { format!("every driver within {tol} dB of the set's middle") };
        if quote {
            out.push(format!("After the proposed work, {} would match: {how}.", cabinets_words(n)));
        } else {
            // "Now" only where they did not match before; with nothing read before the work,
            // nothing is said of it.
            let unread = !set.read_on_bench();
            if unread {
                out.push(format!("{} match after the work: {how}.", capitalise(&cabinets_words(n))));
            } else if found_apart.is_empty() {
                out.push(format!("{} match after the work as they did before it: {how}.", capitalise(&cabinets_words(n))));
            } else {
                out.push(format!("{} now match: {how}.", capitalise(&cabinets_words(n))));
            }
        }
    } else {
        let each: Vec<String> = apart
            .iter()
            .map(|m| {
                if m.as_left_db > crate::analysis::compensate::FAULT_DB {
                    format!("{} silent in cabinet {} (a fault)", driver_words(net, &m.driver), m.as_left_cabinets[1])
                } else {
                    format!("{} {:.2} dB apart", driver_words(net, &m.driver), m.as_left_db)
                }
            })
            .collect();
        if quote {
            out.push(format!("After the proposed work, {} would still differ by more than {tol} dB: {}.", cabinets_words(n), join_and(&each)));
        } else {
            out.push(format!("{} do not yet match within {tol} dB: {}.", capitalise(&cabinets_words(n)), join_and(&each)));
        }
    }
    out
}

fn pair_data(job: &Job, set: &SetFindings, plain: bool) -> PairData {
    let is_set = set.cabinets.len() > 2;
    let tol = trim_number(set.tolerance_db, 3);
    let net = &job.network;
    let unread = !set.read_on_bench();
    let rows = set
        .matching
        .iter()
        .map(|m| {
            let who = |c: &[String; 2], v: f64| if v < 0.005 { "alike".to_string() } else { format!("{} louder than {}", c[0], c[1]) };
            // Tens of dB is a driver that no longer plays: a fault, not a difference to print.
            let cell = |c: &[String; 2], v: f64| {
                if v > crate::analysis::compensate::FAULT_DB {
                    format!("{}: silent (a fault)", c[1])
                } else {
                    format!("{v:.2} dB ({})", who(c, v))
                }
            };
            Row(vec![
                if plain { capitalise(&driver_words(net, &m.driver)) } else { m.driver.clone() },
                // With nothing read on the bench in any cabinet, "as found" is the design's own
                // figure in each: said so, not printed as a finding of 0.00 dB.
                if unread { "not read on the bench".to_string() } else { cell(&m.as_found_cabinets, m.as_found_db) },
                cell(&m.as_left_cabinets, m.as_left_db),
                if m.verdict == Verdict::Ok { "match".into() } else { "apart".into() },
            ])
        })
        .collect();
    // With no work done there is no "as left": its columns go (they would repeat "as found").
    let worked = job.work_done();
    let drop_left = |mut rows: Vec<Row>, at: usize| {
        if !worked {
            rows.iter_mut().for_each(|r| drop(r.0.remove(at)));
        }
        rows
    };
    let rows = drop_left(rows, 2);
    let header: Vec<&str> = ["Driver", "Difference as found", "Difference as left", "Match"].into_iter().filter(|h| worked || !h.ends_with("as left")).collect();
    let median_rows = set
        .matching
        .iter()
        .flat_map(|m| {
            m.from_median.iter().map(move |x| {
                let found = if unread { "not read on the bench".to_string() } else { crate::results::level(x.as_found_db) };
                Row(vec![m.driver.clone(), x.cabinet.clone(), found, crate::results::level(x.as_left_db)])
            })
        })
        .collect();
    let median_rows = drop_left(median_rows, 3);
    let median_header: Vec<&str> = ["Driver", "Cabinet", "From the median as found", "As left"].into_iter().filter(|h| worked || *h != "As left").collect();
    let mut sentences: Vec<String> = set.matching.iter().map(|m| m.sentence(is_set, !unread, job.work_done())).collect();
    sentences.extend(set.matching.iter().filter_map(|m| m.responsible_sentence()));
    let comp_rows = set
        .compensation
        .iter()
        .map(|c| {
            let exact: Vec<String> = c.exact.iter().map(|x| format!("{}: {}", x.cabinet, ohm(x.ohm))).collect();
            let fitted = match c.common_ohm {
                Some(v) => format!("{} in every cabinet", ohm(v)),
                None => c.fitted.iter().map(|x| format!("{}: {}", x.cabinet, ohm(x.ohm))).collect::<Vec<_>>().join(", "),
            };
            Row(vec![c.part.clone(), c.driver.clone(), exact.join(", "), fitted])
        })
        .collect();
    let spread = if is_set { "each cabinet against the set's median" } else { "the difference between the two cabinets" };
    PairData {
        kind: if is_set { "set" } else { "pair" }.into(),
        basis: format!(
            "each driver's band-mean level in each cabinet, as worked out from that cabinet's readings (as found) and its work (as left); {spread}, against a tolerance of {tol} dB (the job's, or 0.5 dB, common practice); a reading's share is its effect alone on the original design"
        ),
        table: Table::new(&header, rows),
        median: Table::new(&median_header, median_rows),
        sentences,
        compensation: Table::new(&["Part", "Driver", "Exact value", "Fitted"], comp_rows),
        compensation_notes: set.compensation.iter().map(|c| capitalise(&c.reason) + ".").collect(),
        compensation_plain: set.compensation.iter().map(|c| same_part_sentence(job, c, set.cabinets.len())).collect(),
    }
}

/// Whether a compensating part is the same value in every cabinet, in a sentence: the value
/// fitted, never the exact values it was rounded from.
fn same_part_sentence(job: &Job, c: &crate::analysis::pair::PairCompensation, n: usize) -> String {
    let is = if job.work_done() { "is" } else { "would be" };
    let what = format!("{}, the resistor fitted for {}", c.part, driver_words(&job.network, &c.driver));
    match c.common_ohm {
        Some(v) => format!(
            "Yes: {what}, {is} {} in {}, one standard value that suits each of them.",
            ohm(v),
            if n == 2 { "both cabinets".to_string() } else { format!("all {n} cabinets") }
        ),
        None => {
            let each: Vec<String> = c.fitted.iter().map(|x| format!("{} in {}", ohm(x.ohm), x.cabinet)).collect();
            format!("No: {what}, {is} {}, the nearest standard value to what each cabinet needs.", join_and(&each))
        }
    }
}
