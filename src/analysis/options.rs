//! The options a shop offers before the work, each solved as the job would be if its steps
//! were the work done (the same path: a job whose `changes` and `compensate` are the option's),
//! priced, and weighed: the recommendation is the option that keeps the drivers closest to the
//! original design with no verdict over, unless the job names one.

use crate::analysis::bom::PartsList;
use crate::analysis::{analyse_with, AnalysisError, Findings, Quiet, Verdict};
use crate::model::{Job, JobOption, Scenario};
use crate::money::Money;

#[derive(Debug, Clone)]
pub struct OptionFindings {
    pub name: String,
    pub say: Option<String>,
    pub findings: Box<Findings>,
    pub labour_hours: Option<f64>,
    /// Labour at the job's hourly rate, in hundredths.
    pub labour: Option<Money>,
    /// Parts and labour, when both are known (parts: every line priced).
    pub total: Option<Money>,
    /// RMS over the drivers of each driver's RMS deviation from the original design over its
    /// band (dB; acoustic where known).
    pub score_db: f64,
    /// No stress, driver power, load or substitute verdict is over.
    pub verdicts_ok: bool,
    /// The verdicts that are over, in words.
    pub over: Vec<String>,
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Recommendation {
    pub option: String,
    /// Why, in one sentence.
    pub reason: String,
    /// The job named it (rather than the rule choosing it).
    pub named: bool,
}

/// The job with an option's steps as its work.
pub fn job_of(job: &Job, o: &JobOption) -> Job {
    let mut j = job.clone();
    j.changes = o.changes.clone();
    j.compensate = o.compensate.clone();
    j.options.clear();
    j.analysis.tolerance = None;
    j
}

fn score(f: &Findings) -> f64 {
    let per: Vec<f64> = f
        .bands
        .iter()
        .enumerate()
        .filter_map(|(di, band)| {
            let d = &f.scenes.as_designed;
            let k = f.scenes.as_left.driver_index(&d.network.drivers[di].name)?;
            let (a, b) = match (&d.spl[di], &f.scenes.as_left.spl[k]) {
                (Some(a), Some(b)) => (a, b),
                _ => (&d.db[di], &f.scenes.as_left.db[k]),
            };
            let n = band.idx.len().max(1) as f64;
            Some((band.idx.iter().map(|&i| (b[i] - a[i]).powi(2)).sum::<f64>() / n).sqrt())
        })
        .collect();
    (per.iter().map(|x| x * x).sum::<f64>() / per.len().max(1) as f64).sqrt()
}

fn over(f: &Findings) -> Vec<String> {
    let mut out = Vec::new();
    for r in f.stress.rows.iter().filter(|r| r.scenario == Scenario::AsLeft && r.verdict == Verdict::Over) {
        out.push(format!("{}: {}", r.part, r.reason));
    }
    for d in f.stress.drivers.iter().filter(|d| d.scenario == Scenario::AsLeft && d.verdict == Verdict::Over) {
        out.push(format!("{}: {}", d.driver, d.reason));
    }
    if f.loads.as_left.verdict == Verdict::Over {
        out.push(format!("load: {}", f.loads.as_left.reason));
    }
    for s in &f.substitutes {
        for c in s.checks.iter().filter(|c| c.verdict == Verdict::Over) {
            out.push(format!("{} {}: {}", s.driver, c.check, c.reason));
        }
    }
    out
}

pub fn analyse(job: &Job) -> Result<Vec<OptionFindings>, AnalysisError> {
    job.options
        .iter()
        .map(|o| {
            let f = analyse_with(&job_of(job, o), &Quiet)?;
            let labour = match (o.labour_hours, job.quote.labour_rate) {
                // Hours to hundredths of an hour, then exact: rate x hours, rounded half up to
                // the hundredth.
                (Some(h), Some(rate)) => {
                    let centi_hours = (h * 100.0).round() as i64;
                    Some(Money((rate.0 * centi_hours + 50).div_euclid(100)))
                }
                _ => None,
            };
            let parts_total = priced_total(&f.parts);
            let total = match (parts_total, labour, o.labour_hours) {
                (Some(p), Some(l), _) => p.plus(l),
                (Some(p), None, None) => Some(p),
                _ => None,
            };
            let over = over(&f);
            Ok(OptionFindings {
                name: o.name.clone(),
                say: o.say.clone(),
                score_db: score(&f),
                verdicts_ok: over.is_empty(),
                over,
                labour_hours: o.labour_hours,
                labour,
                total,
                findings: Box::new(f),
            })
        })
        .collect()
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
            reason: format!("The shop recommends {name}: it keeps every driver within {:.2} dB RMS of the original design over its band.", o.score_db),
            named: true,
        });
    }
    let ok: Vec<&OptionFindings> = options.iter().filter(|o| o.verdicts_ok).collect();
    let pool = if ok.is_empty() { options.iter().collect() } else { ok };
    let best = pool.iter().min_by(|a, b| a.score_db.total_cmp(&b.score_db))?;
    let others: Vec<String> = options.iter().filter(|o| o.name != best.name).map(|o| format!("{} {:.2} dB", o.name, o.score_db)).collect();
    let against = if others.is_empty() { String::new() } else { format!(" (against {})", others.join(", ")) };
    let reason = if options.iter().any(|o| o.verdicts_ok) {
        format!(
            "Recommended: {}, which keeps the drivers closest to the original design, {:.2} dB RMS over their bands{against}, with no part, driver or load over its limit.",
            best.name, best.score_db
        )
    } else {
        format!(
            "No option keeps every part, driver and load within its limits; {} keeps the drivers closest to the original design, {:.2} dB RMS over their bands{against}.",
            best.name, best.score_db
        )
    };
    Some(Recommendation { option: best.name.clone(), reason, named: false })
}

/// The option the work done followed, and whether it did what the quote said.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Chosen {
    /// The option whose steps the job's `changes` are; None when they are none of them.
    pub option: Option<String>,
    /// The largest difference between a driver's level as left and the quoted one (dB).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub largest_difference_db: Option<f64>,
    pub sentence: String,
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

/// Which option the work done is, and how its levels compare with what was quoted.
pub fn chosen(job: &Job, f: &Findings, options: &[OptionFindings]) -> Option<Chosen> {
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
    let diff = f.levels.iter().filter_map(|l| o.findings.levels.iter().find(|q| q.driver == l.driver).map(|q| (l.as_left_db - q.as_left_db).abs())).fold(0.0, f64::max);
    let sentence = if diff < 0.05 {
        format!("The work done is the quoted option {}, and it does what the quotation said: every driver within {diff:.2} dB of the quoted figures.", o.name)
    } else {
        format!("The work done is the quoted option {}, but a driver ends {diff:.2} dB from the quoted figures: the readings or the parts fitted differ from those quoted.", o.name)
    };
    Some(Chosen { option: Some(o.name.clone()), largest_difference_db: Some(diff), sentence })
}
