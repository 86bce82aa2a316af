//! The options a shop offers before the work, each solved as the job would be if its steps
//! were the work done (the same path: a job whose `changes` and `compensate` are the option's),
//! priced, and weighed: the recommendation is the option that keeps the drivers closest to the
//! original design with no verdict over, unless the job names one.

use crate::analysis::bom::PartsList;
use crate::analysis::pair::{analyse_set, SetFindings};
use crate::analysis::{analyse_with, AnalysisError, Findings, Quiet, Verdict};
use crate::model::{Job, JobOption, Scenario};
use crate::money::Money;

pub use crate::analysis::{Chosen, OptionFindings, Recommendation};

/// The job with an option's steps as its work: they take the place of the job's common
/// `changes`; in a pair or set each cabinet's own steps (a driver replaced in one cabinet)
/// still follow them.
pub fn job_of(job: &Job, o: &JobOption) -> Job {
    let mut j = job.clone();
    j.changes = o.changes.clone();
    j.compensate = o.compensate.clone();
    j.options.clear();
    j.analysis.tolerance = None;
    // The sweeps at the terminals are of the speaker, not of an option: neither confirmed
    // nor diagnosed again for each option.
    j.terminals = Default::default();
    for c in &mut j.cabinets {
        c.terminals = Default::default();
    }
    j
}

/// Each driver's RMS deviation from the original design over its working range (dB;
/// acoustic where known). The working range is the original design's passband, the same for
/// every option whatever bands its own compensating parts were fitted over, so options are
/// ranked on the same ground.
fn driver_scores(f: &Findings) -> Vec<f64> {
    let d = &f.scenes.as_designed;
    d.network
        .drivers
        .iter()
        .enumerate()
        .map(|(di, drv)| (di, crate::analysis::levels::passband(&f.freqs, &d.db[di], drv.role)))
        .filter_map(|(di, band)| {
            let k = f.scenes.as_left.driver_index(&d.network.drivers[di].name)?;
            let (a, b) = match (&d.spl[di], &f.scenes.as_left.spl[k]) {
                (Some(a), Some(b)) => (a, b),
                _ => (&d.db[di], &f.scenes.as_left.db[k]),
            };
            let n = band.idx.len().max(1) as f64;
            Some((band.idx.iter().map(|&i| (b[i] - a[i]).powi(2)).sum::<f64>() / n).sqrt())
        })
        .collect()
}

/// The RMS of the drivers' deviations, over every driver of every cabinet.
fn score(each: &[&Findings]) -> f64 {
    let per: Vec<f64> = each.iter().flat_map(|f| driver_scores(f)).collect();
    (per.iter().map(|x| x * x).sum::<f64>() / per.len().max(1) as f64).sqrt()
}

/// The as-left stress, driver power, load and substitute verdicts that are `v`, each as
/// "what: why". A "check" the original design has as well (the same part's full-level test
/// tone, the design's own impedance dip) is the speaker's, not the option's, and is left out,
/// as is a full-level test tone's caution on a new part (a bench matter, said in the stress
/// table): an option's verdicts are ok when it makes nothing worse for use than the design.
fn verdicts(f: &Findings, v: Verdict) -> Vec<String> {
    let inherited = |scenario_verdict: Option<Verdict>| v == Verdict::Check && scenario_verdict == Some(Verdict::Check);
    let design_part = |part: &str| f.stress.rows.iter().find(|r| r.scenario == Scenario::AsDesigned && r.part == part).map(|r| r.verdict);
    let design_driver = |driver: &str| f.stress.drivers.iter().find(|d| d.scenario == Scenario::AsDesigned && d.driver == driver).map(|d| d.verdict);
    let mut out = Vec::new();
    // A full-level test tone's caution is the bench's, not the option's.
    let counts = |bench_only: bool| !(v == Verdict::Check && bench_only);
    for r in f.stress.rows.iter().filter(|r| r.scenario == Scenario::AsLeft && r.verdict == v && counts(r.bench_only) && !inherited(design_part(&r.part))) {
        out.push(format!("{}: {}", r.part, r.reason));
    }
    for d in f.stress.drivers.iter().filter(|d| d.scenario == Scenario::AsLeft && d.verdict == v && counts(d.bench_only) && !inherited(design_driver(&d.driver))) {
        out.push(format!("{}: {}", d.driver, d.reason));
    }
    if f.loads.as_left.verdict == v && !inherited(Some(f.loads.as_designed.verdict)) {
        out.push(format!("load: {}", f.loads.as_left.reason));
    }
    for s in &f.substitutes {
        for c in s.checks.iter().filter(|c| c.verdict == v) {
            out.push(format!("{} {}: {}", s.driver, c.check, c.reason));
        }
    }
    out
}

/// What is over its limit in a pair or set: each cabinet's, said of its cabinet, and the
/// drivers whose cabinets no longer match.
fn set_verdicts(set: &SetFindings, v: Verdict) -> Vec<String> {
    let mut out = Vec::new();
    for c in &set.cabinets {
        out.extend(verdicts(&c.findings, v).into_iter().map(|w| match w.split_once(": ") {
            Some((what, why)) => format!("{what} in cabinet {}: {why}", c.name),
            None => format!("{w} in cabinet {}", c.name),
        }));
    }
    for m in set.matching.iter().filter(|m| m.verdict == v && v == Verdict::Over) {
        out.push(format!("{} match between cabinets: {:.2} dB apart, over the {} dB tolerance", m.driver, m.as_left_db, crate::units::trim_number(m.tolerance_db, 3)));
    }
    out
}

pub fn analyse(job: &Job) -> Result<Vec<OptionFindings>, AnalysisError> {
    job.options
        .iter()
        .map(|o| {
            let j = job_of(job, o);
            let (f, set, parts, score_db, [over, to_check]) = if job.cabinets.is_empty() {
                let f = analyse_with(&j, &Quiet)?;
                let (parts, score, v) = (f.parts.clone(), score(&[&f]), [verdicts(&f, Verdict::Over), verdicts(&f, Verdict::Check)]);
                (f, None, parts, score, v)
            } else {
                let s = analyse_set(&j, &Quiet)?;
                let score = score(&s.cabinets.iter().map(|c| &c.findings).collect::<Vec<_>>());
                let (parts, v) = (s.parts.clone(), [set_verdicts(&s, Verdict::Over), set_verdicts(&s, Verdict::Check)]);
                match s.cabinets.first().map(|c| c.findings.clone()) {
                    Some(first) => (first, Some(Box::new(s)), parts, score, v),
                    // A set always has a cabinet; were it empty, the job's own steps stand.
                    None => (analyse_with(&j, &Quiet)?, None, parts, score, v),
                }
            };
            let labour = match (o.labour_hours, job.quote.labour_rate) {
                (Some(h), Some(rate)) => rate.for_hours(h),
                _ => None,
            };
            let parts_total = priced_total(&parts);
            let total = match (parts_total, labour, o.labour_hours) {
                (Some(p), Some(l), _) => p.plus(l),
                (Some(p), None, None) => Some(p),
                _ => None,
            };
            Ok(OptionFindings {
                name: o.name.clone(),
                say: o.say.clone(),
                score_db,
                set,
                parts,
                verdicts_ok: over.is_empty() && to_check.is_empty(),
                over,
                to_check,
                labour_hours: o.labour_hours,
                labour,
                total,
                findings: Box::new(f),
            })
        })
        .collect()
}

/// The names in a list of "what: why" verdicts, joined.
fn what_of(list: &[String]) -> String {
    let names: Vec<&str> = list.iter().map(|w| w.split(':').next().unwrap_or("")).collect();
    match names.split_last() {
        Some((last, [])) => last.to_string(),
        Some((last, rest)) => format!("{} and {last}", rest.join(", ")),
        None => String::new(),
    }
}

/// The fewest decimals (two to four) at which every two different `values` print apart.
pub fn distinct_digits(values: &[f64]) -> usize {
    (2..=4).find(|&d| values.iter().enumerate().all(|(i, a)| values[i + 1..].iter().all(|b| (a - b).abs() < 1e-12 || format!("{a:.d$}") != format!("{b:.d$}")))).unwrap_or(4)
}

/// The parts' total when every line is priced.
fn priced_total(p: &PartsList) -> Option<Money> {
    p.total.filter(|_| p.unpriced == 0)
}

pub fn recommend(job: &Job, options: &[OptionFindings]) -> Option<Recommendation> {
    if let Some(name) = &job.quote.recommend {
        let o = options.iter().find(|o| &o.name == name)?;
        return Some(Recommendation {
            option: name.clone(),
            reason: format!("The shop recommends {name}: it keeps the drivers within {:.2} dB RMS of the original design over their working ranges.", o.score_db),
            named: true,
        });
    }
    // The closest of those with every verdict ok; failing that, of those with none over;
    // failing that, of all, and the sentence says which.
    let all_ok: Vec<&OptionFindings> = options.iter().filter(|o| o.verdicts_ok).collect();
    let none_over: Vec<&OptionFindings> = options.iter().filter(|o| o.over.is_empty()).collect();
    let (pool, tier) = if !all_ok.is_empty() {
        (all_ok, 0)
    } else if !none_over.is_empty() {
        (none_over, 1)
    } else {
        (options.iter().collect(), 2)
    };
    let best = pool.iter().min_by(|a, b| a.score_db.total_cmp(&b.score_db))?;
    // Enough decimals that no two different scores print alike.
    let digits = distinct_digits(&options.iter().map(|o| o.score_db).collect::<Vec<_>>());
    let db = |v: f64| format!("{v:.digits$} dB");
    let others: Vec<String> = options.iter().filter(|o| o.name != best.name).map(|o| format!("{} {}", o.name, db(o.score_db))).collect();
    let against = if others.is_empty() { String::new() } else { format!(" (against {})", others.join(", ")) };
    // A closer option set aside for what it leaves over its limit or to check is named.
    let closest = options.iter().min_by(|a, b| a.score_db.total_cmp(&b.score_db))?;
    let aside = if closest.name != best.name && closest.score_db < best.score_db {
        let why = if !closest.over.is_empty() { format!("{} over its limit", what_of(&closest.over)) } else { format!("{} to check", what_of(&closest.to_check)) };
        format!(" {} is closer, {}, but is set aside: it leaves {why}.", closest.name, db(closest.score_db))
    } else {
        String::new()
    };
    let reason = match tier {
        0 => format!(
            "Recommended: {}, which keeps the drivers closest to the original design among the options that push no part or driver past its rating and add no caution the original design did not already carry: {} from it overall across their working ranges{against}.{aside}",
            best.name,
            db(best.score_db)
        ),
        1 => format!(
            "Recommended: {}, which keeps the drivers closest to the original design among the options that push no part or driver past its rating: {} from it overall across their working ranges{against}; no option is free of new cautions, and this one leaves {} to check.{aside}",
            best.name,
            db(best.score_db),
            what_of(&best.to_check)
        ),
        _ => format!(
            "No option keeps every part, driver and load within its limits; {} keeps the drivers closest to the original design: {} from it overall across their working ranges{against}.",
            best.name,
            db(best.score_db)
        ),
    };
    Some(Recommendation { option: best.name.clone(), reason, named: false })
}

/// A step as text without where it was written, to compare steps written in two places.
fn step_text(c: &crate::model::Change) -> String {
    let t = format!("{:?}", c.step);
    // Drop every `pos: Pos { .. }`.
    let mut out = String::with_capacity(t.len());
    let mut rest = t.as_str();
    while let Some(i) = rest.find("pos: Pos {") {
        out.push_str(&rest[..i]);
        rest = rest[i..].split_once('}').map(|(_, r)| r).unwrap_or("");
    }
    out.push_str(rest);
    out
}

impl OptionFindings {
    /// Each cabinet's findings with its name; one cabinet's is named "".
    pub fn each(&self) -> Vec<(&str, &Findings)> {
        match &self.set {
            Some(s) => s.cabinets.iter().map(|c| (c.name.as_str(), &c.findings)).collect(),
            None => vec![("", &*self.findings)],
        }
    }
}

/// Which option the work done is, and how its levels compare with what was quoted; `done` is
/// `cabinets` is each cabinet's findings for the work done, with its name ("" for a job of one cabinet).
pub fn chosen(job: &Job, cabinets: &[(&str, &Findings)], options: &[OptionFindings]) -> Option<Chosen> {
    if job.changes.is_empty() || options.is_empty() {
        return None;
    }
    let done: Vec<String> = job.changes.iter().map(step_text).collect();
    let which = job.options.iter().find(|o| o.changes.iter().map(step_text).collect::<Vec<_>>() == done);
    let Some(o) = which.and_then(|w| options.iter().find(|x| x.name == w.name)) else {
        return Some(Chosen {
            option: None,
            largest_difference_db: None,
            sentence: "The work done is none of the quoted options as written: its figures stand on their own.".into(),
        });
    };
    let quoted = o.each();
    let diff = cabinets
        .iter()
        .filter_map(|(name, f)| quoted.iter().find(|(n, _)| n == name).map(|(_, q)| (f, q)))
        .flat_map(|(f, q)| f.levels.iter().filter_map(|l| q.levels.iter().find(|x| x.driver == l.driver).map(|x| (l.as_left_db - x.as_left_db).abs())))
        .fold(0.0, f64::max);
    let sentence = if diff < 0.05 {
        format!("The work done is the quoted option {}, and it does what the quotation said: every driver within {diff:.2} dB of the quoted figures.", o.name)
    } else {
        format!("The work done is the quoted option {}, but a driver ends {diff:.2} dB from the quoted figures: the readings or the parts fitted differ from those quoted.", o.name)
    };
    Some(Chosen { option: Some(o.name.clone()), largest_difference_db: Some(diff), sentence })
}
