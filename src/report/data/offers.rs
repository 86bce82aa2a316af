//! The options a quotation offers, side by side: what each does to the drivers, the load
//! and the limits, its parts and labour, its total, and the recommendation.

use super::words::*;
use super::*;
use crate::analysis::options::OptionFindings;
use crate::model::ChangeStep;
use crate::results::{hz, level};

/// The options side by side: what each does to the drivers and the load, its verdicts, its
/// parts and labour, and what it costs.
pub(super) fn options(c: &Ctx) -> Option<OptionsData> {
    options_of(c, &c.f.options, c.f.recommended.as_ref())
}

/// Each driver's level after an option, in every cabinet: said once when every cabinet's is
/// the same in words, else cabinet by cabinet.
fn option_levels(c: &Ctx, o: &OptionFindings) -> Vec<String> {
    let plain = c.audience.plain();
    let net = &c.job.network;
    let each = o.each();
    net.drivers
        .iter()
        .filter_map(|d| {
            let per: Vec<(&str, String)> = each
                .iter()
                .filter_map(|(name, g)| g.levels.iter().find(|l| l.driver == d.name).map(|l| (*name, if plain { level_words(l.as_left_db) } else { level(l.as_left_db) })))
                .collect();
            let what = if plain { capitalise(&driver_words(net, &d.name)) } else { d.name.clone() };
            let sep = if plain { ": " } else { " " };
            match per.as_slice() {
                [] => None,
                [(_, w), rest @ ..] if rest.iter().all(|(_, x)| x == w) => Some(format!("{what}{sep}{w}")),
                _ => Some(format!("{what}{sep}{}", per.iter().map(|(n, w)| format!("{n} {w}")).collect::<Vec<_>>().join(", "))),
            }
        })
        .collect()
}

/// The options of `list` side by side; in a pair or set each option holds every cabinet.
pub(super) fn options_of(c: &Ctx, list: &[OptionFindings], recommended: Option<&crate::analysis::options::Recommendation>) -> Option<OptionsData> {
    if list.is_empty() {
        return None;
    }
    let plain = c.audience.plain();
    let currency = c.job.prices.as_ref().map(|p| p.currency.clone()).unwrap_or_default();
    let rows = list
        .iter()
        .map(|o| {
            let levels = option_levels(c, o);
            // The lowest load of any cabinet.
            let low = o.each().into_iter().map(|(_, g)| &g.loads.as_left).min_by(|a, b| a.min_ohm.total_cmp(&b.min_ohm)).unwrap_or(&o.findings.loads.as_left);
            // Three figures kept whole in a column ("5.80" beside "5.78", not "5.8").
            let low_ohm = match low.min_ohm {
                v if (1.0..10.0).contains(&v) => format!("{v:.2} ohm"),
                v if (10.0..100.0).contains(&v) => format!("{v:.1} ohm"),
                v => ohm(v),
            };
            let load = if plain { format!("lowest {low_ohm}") } else { format!("min |Z| {low_ohm}, {}", low.verdict) };
            let names = |l: &[String]| join_and(&l.iter().map(|w| w.split(':').next().unwrap_or("").to_string()).collect::<Vec<_>>());
            let limits = if !o.over.is_empty() {
                format!("past the limit: {}", names(&o.over))
            } else if !o.to_check.is_empty() {
                format!("all within limits; {} to check", names(&o.to_check))
            } else {
                "all within limits".to_string()
            };
            // Within its ratings on music, yet a steady full-level test tone from a smaller
            // amplifier than the speaker suits overheats a part: said here, as the reports
            // after the work say it.
            let p = &o.findings.power;
            let limits = match (p.sine_max_w, &p.sine_limited_by) {
                (Some(w), Some(who)) if w < p.suits_w.unwrap_or(p.job_w) => format!("{limits}; a steady test tone above {} W would overheat {who}", trim_number(w, 2)),
                _ => limits,
            };
            let labour = o.labour_hours.map(|h| format!("{} h", trim_number(h, 3))).unwrap_or_else(|| "-".into());
            let total = match o.total {
                Some(t) => format!("{t} {currency}"),
                None if o.parts.total.is_some() => "not all parts priced".into(),
                None => "no price list".into(),
            };
            let mark = if recommended.is_some_and(|r| r.option == o.name) { " (recommended)" } else { "" };
            let levels = if plain { format!("{}.", levels.join(". ")) } else { levels.join("; ") };
            Row(vec![format!("{}{mark}", o.name), o.say.clone().unwrap_or_default(), levels, load, limits, labour, total])
        })
        .collect();
    let each = list
        .iter()
        .map(|o| OptionPartsData {
            name: o.name.clone(),
            say: o.say.clone(),
            basis: option_basis(c, &o.name),
            results: option_results(c, o),
            parts: parts_to_buy(&o.parts, c.audience.plain()),
            total: match (o.total, o.labour) {
                (Some(t), Some(l)) => Some(format!("Labour {l} {currency}; total with parts {t} {currency}.")),
                (Some(t), None) => Some(format!("Total {t} {currency}.")),
                _ => parts_total(&o.parts),
            },
        })
        .collect();
    // A job of one cabinet whose speaker lists several serials is priced for one of them; a
    // pair's or set's options are priced for every cabinet.
    let serials = c.job.info.serials.len();
    let cabinets = list.first().and_then(|o| o.set.as_ref()).map(|s| s.cabinets.len());
    let per = match cabinets {
        Some(n) => format!(
            " Parts are counted and prices given for {}; labour is for the whole job.",
            if n == 2 { "both cabinets".to_string() } else { format!("all {} cabinets", count_words(n)) }
        ),
        None if serials > 1 => format!(" Prices and labour are for one cabinet; the job lists {} serials.", count_words(serials)),
        None => String::new(),
    };
    Some(OptionsData {
        basis: format!("each option's steps solved as its own as-left scenario against the original design, with its own compensating parts; the drivers' closeness is the RMS over each band of the level against the original design (acoustic where the job gives sensitivities), the verdicts those of the stress, load and substitute checks; prices from the shop's list, labour at the job's hourly rate.{per}"),
        per_cabinet: (!per.is_empty()).then(|| per.trim().to_string()),
        every_option: every_option(c),
        table: Table::new(&["Option", "What it is", "Each driver after the work", "Load", "Limits", "Labour", "Total"], rows),
        each,
        recommendation: recommended.map(|r| r.reason.clone()),
        recommended: recommended.map(|r| r.option.clone()),
    })
}

/// What an option was computed from: the speaker as found and the option's steps.
fn option_basis(c: &Ctx, name: &str) -> String {
    let Some(o) = c.job.options.iter().find(|o| o.name == name) else { return String::new() };
    let steps: Vec<String> = o
        .changes
        .iter()
        .map(|ch| match &ch.step {
            ChangeStep::Replace { target, .. } => format!("replace {target}"),
            ChangeStep::Insert { part, .. } => format!("insert {}", part.name),
            ChangeStep::Add { parts } => format!("add {}", parts.iter().map(|p| p.name.as_str()).collect::<Vec<_>>().join(", ")),
            ChangeStep::Remove { target } => format!("remove {target}"),
        })
        .collect();
    let solved: Vec<String> = o.compensate.iter().map(|e| format!("{} solved for {}", e.part, e.driver)).collect();
    let solved = if solved.is_empty() { String::new() } else { format!("; {}", join_and(&solved)) };
    format!(
        "Computed from the speaker as found ({}) with this option's {} step{}: {}{solved}.",
        match c.job.measured.len() {
            _ if !c.job.read_on_bench() => "no bench readings, so as designed".to_string(),
            1 => "one bench reading".to_string(),
            n => format!("{} bench readings", count_words(n)),
        },
        count_words(steps.len()),
        if steps.len() == 1 { "" } else { "s" },
        join_and(&steps)
    )
}

/// An option's results as sentences: each driver, the load, the limits; in a pair or set, a
/// sentence every cabinet shares said once and the others of their cabinet.
fn option_results(c: &Ctx, o: &OptionFindings) -> Vec<String> {
    let each = o.each();
    let names: Vec<String> = each.iter().map(|(n, _)| n.to_string()).collect();
    let lists: Vec<Vec<String>> = each.iter().map(|(_, g)| cabinet_option_results(c, g)).collect();
    let mut out = if o.set.is_some() { super::merge::merge_sentences(&names, lists) } else { lists.into_iter().next().unwrap_or_default() };
    if o.over.is_empty() && o.to_check.is_empty() {
        out.push("Every part, driver and the load stay within their limits.".into());
    } else {
        out.extend(o.over.iter().map(|w| format!("Over its limit: {w}.")));
        out.extend(o.to_check.iter().map(|w| format!("To check: {w}.")));
    }
    out
}

/// One cabinet's results for an option: each driver, the load, the warnings.
fn cabinet_option_results(c: &Ctx, g: &crate::analysis::Findings) -> Vec<String> {
    let net = &c.job.network;
    let plain = c.audience.plain();
    let mut out: Vec<String> = g.levels.iter().map(|l| format!("{} would play {} over its band.", capitalise(&driver_words(net, &l.driver)), level_words(l.as_left_db))).collect();
    out.push(if plain {
        format!("The lowest impedance the amplifier would see is {}.", ohm(g.loads.as_left.min_ohm))
    } else {
        format!("Load: min |Z| {} at {}, {} ({}).", ohm(g.loads.as_left.min_ohm), hz(Some(g.loads.as_left.min_at_hz)), g.loads.as_left.verdict, g.loads.as_left.reason)
    });
    if !plain {
        out.extend(g.compensation.warnings.iter().map(|w| format!("Warning: {}", w.message)));
    }
    out
}

/// A cabinet's own steps, done whichever option is chosen, in words: the options' own
/// descriptions are the shop's and speak of what every cabinet gets.
pub(super) fn every_option(c: &Ctx) -> Vec<String> {
    let net = &c.job.network;
    let done = c.job.work_done();
    // Before the work the steps are proposed ("to be replaced"), after it done ("replaced").
    let verb = |v: &str| if done { v.to_string() } else { format!("to be {v}") };
    c.job
        .cabinets
        .iter()
        .filter(|cab| !cab.changes.is_empty())
        .map(|cab| {
            let steps: Vec<String> = cab
                .changes
                .iter()
                .map(|ch| match &ch.step {
                    ChangeStep::Replace { target, .. } => match net.part(target) {
                        Some(p) => format!("{target}, {} in {}, {}", with_article(kind_noun(p.kind)), part_place(net, target), verb("replaced")),
                        None => format!("{} {}", driver_words(net, target), verb("replaced")),
                    },
                    ChangeStep::Insert { part, .. } => format!("{} {}", part.name, verb("added")),
                    ChangeStep::Add { parts } => format!("{} {}", join_and(&parts.iter().map(|p| p.name.clone()).collect::<Vec<_>>()), verb("added")),
                    ChangeStep::Remove { target } => format!("{target} {}", verb("removed")),
                })
                .collect();
            format!(
                "Whichever option {}, cabinet {} {} its own work too: {}. Its parts are counted in each option's list.",
                if done { "was chosen" } else { "is chosen" },
                cab.name,
                if done { "had" } else { "gets" },
                join_and(&steps)
            )
        })
        .collect()
}
