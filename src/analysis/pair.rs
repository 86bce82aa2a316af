//! Pairs and sets of cabinets: every cabinet analysed as a job of its own (the common readings
//! and steps, then its own), and how well they match. For each driver, the largest difference
//! between cabinets over its band, as found and as left, against the pair tolerance; the
//! readings that explain an as-found difference, each with its share worked out by applying
//! that one reading to the design; whether one standard value of each compensating resistor
//! serves every cabinet (shops fit the same part to both); and ratings that take the worse
//! cabinet.

use std::collections::BTreeMap;

use crate::analysis::eseries::round_to;
use crate::analysis::health::reading_shift;
use crate::analysis::{driver_levels, finish, mean_over, plan_of, prepare, AnalysisError, Findings, Progress, Verdict};
use crate::model::{Job, Scenario};

/// One cabinet's findings, with the job it was analysed as.
#[derive(Debug, Clone)]
pub struct CabinetFindings {
    pub name: String,
    pub job: Job,
    pub findings: Findings,
}

/// A reading that explains part of an as-found difference between cabinets.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Responsible {
    pub cabinet: String,
    pub part: String,
    /// How much of the difference this reading alone accounts for (dB, positive when it
    /// widens it).
    pub share_db: f64,
}

/// How one driver matches across the cabinets.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct PairMatch {
    pub driver: String,
    /// The largest difference of band-mean level between any two cabinets (dB, 0 or more).
    pub as_found_db: f64,
    pub as_left_db: f64,
    pub tolerance_db: f64,
    /// As left: within the tolerance (ok) or not (over).
    pub verdict: Verdict,
    pub as_found_verdict: Verdict,
    /// The loudest and quietest cabinets, as found and as left.
    pub as_found_cabinets: [String; 2],
    pub as_left_cabinets: [String; 2],
    /// In a set of three or more, the cabinet farthest from the set's median as found.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub odd_cabinet: Option<String>,
    /// In a set of three or more, each cabinet against the set's median, as found and as
    /// left; the verdicts of a set hold every cabinet within the tolerance of its median.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub from_median: Vec<FromMedian>,
    /// The readings that explain the as-found difference, largest share first.
    pub responsible: Vec<Responsible>,
}

/// One cabinet of a set against the set's median level of a driver.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct FromMedian {
    pub cabinet: String,
    pub as_found_db: f64,
    pub as_left_db: f64,
}

/// A value in one cabinet.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct CabinetValue {
    pub cabinet: String,
    pub ohm: f64,
}

/// One compensating resistor across the cabinets.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct PairCompensation {
    pub part: String,
    pub driver: String,
    /// The exact value in every cabinet.
    pub exact: Vec<CabinetValue>,
    /// The one standard value fitted to every cabinet, when one serves.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub common_ohm: Option<f64>,
    /// The value fitted in every cabinet: the common one, or each cabinet's own.
    pub fitted: Vec<CabinetValue>,
    /// With the best single value, the worst cabinet's band-mean deviation from its
    /// reference (dB).
    pub common_worst_db: f64,
    pub reason: String,
}

#[derive(Debug, Clone)]
pub struct SetFindings {
    pub cabinets: Vec<CabinetFindings>,
    pub matching: Vec<PairMatch>,
    pub compensation: Vec<PairCompensation>,
    pub tolerance_db: f64,
    /// The parts to buy for every cabinet's work.
    pub parts: crate::analysis::bom::PartsList,
    /// The options offered before the work, each solved for every cabinet.
    pub options: Vec<crate::analysis::OptionFindings>,
    pub recommended: Option<crate::analysis::Recommendation>,
    pub chosen: Option<crate::analysis::Chosen>,
}

/// The band-mean deviation from its reference of the driver a compensate entry names, in the
/// prepared cabinet `pre`, with that entry's part set to `r_ohm` in `network`.
fn deviation_with(job: &Job, pre: &crate::analysis::Prepared, network: &crate::model::Network, part: &str, r_ohm: f64) -> Option<f64> {
    let entry = job.compensate.iter().find(|e| e.part == part)?;
    let di = job.network.drivers.iter().position(|d| d.name == entry.driver)?;
    let mut net = network.clone();
    net.part_mut(part)?.value = r_ohm;
    let db = driver_levels(&net, &job.amplifier, &pre.freqs).ok()?;
    let k = net.drivers.iter().position(|d| d.name == entry.driver)?;
    let reference = if entry.reference == Scenario::AsFound { &pre.found } else { &pre.designed };
    let band = &pre.bands[di].idx;
    Some(mean_over(&db[k], band) - mean_over(&reference.db[di], band))
}

/// The standard values worth trying as a common one: each cabinet's own rounding and the
/// series' members between the smallest and largest exact value, one step either side.
fn candidates(series: crate::model::ESeries, exacts: &[f64]) -> Vec<f64> {
    let (lo, hi) = exacts.iter().fold((f64::INFINITY, 0.0f64), |(a, b), v| (a.min(*v), b.max(*v)));
    let mut out: Vec<f64> = Vec::new();
    let mut v = round_to(series, lo / 1.15);
    while v <= hi * 1.15 && out.len() < 64 {
        if !out.contains(&v) {
            out.push(v);
        }
        // The next member up: one step of the series' geometric spacing.
        let next = round_to(series, v * 10f64.powf(1.0 / series.decade().len() as f64));
        if next <= v {
            break;
        }
        v = next;
    }
    out
}

pub fn analyse_set(job: &Job, progress: &dyn Progress) -> Result<SetFindings, AnalysisError> {
    let tol = job.analysis.pair_tolerance_db;
    let mut jobs: Vec<Job> = job.cabinets.iter().map(|c| job.for_cabinet(c)).collect();
    let names: Vec<String> = job.cabinets.iter().map(|c| c.name.clone()).collect();
    let mut pres = jobs.iter().map(prepare).collect::<Result<Vec<_>, _>>()?;
    let mut plans = jobs.iter().zip(&pres).map(|(j, p)| plan_of(j, p)).collect::<Result<Vec<_>, _>>()?;

    // One standard value for every cabinet, where one keeps each within half the pair
    // tolerance of its reference (so within the tolerance of each other). Each entry's
    // common value is judged against the cabinets' own plans; a cabinet whose values changed
    // is planned again once, after every entry is decided (planning it again after each
    // entry cost a joint fit per entry and cabinet: minutes for twelve parts in a set).
    let mut compensation = Vec::new();
    let mut stale = vec![false; plans.len()];
    for entry in &job.compensate {
        let fits: Vec<_> = plans.iter().filter_map(|p| p.fits.iter().find(|f| f.part == entry.part)).collect();
        if fits.len() != plans.len() {
            continue;
        }
        let values = |v: &mut dyn Iterator<Item = f64>| -> Vec<CabinetValue> { names.iter().zip(v).map(|(n, ohm)| CabinetValue { cabinet: n.clone(), ohm }).collect() };
        let exact = values(&mut fits.iter().map(|f| f.exact_ohm));
        let own = values(&mut fits.iter().map(|f| f.fitted_ohm));
        let usable = fits.iter().all(|f| f.exact_ohm.is_finite() && !f.is_none());
        let mut best: Option<(f64, f64)> = None;
        if usable {
            for v in candidates(entry.series, &fits.iter().map(|f| f.exact_ohm).collect::<Vec<_>>()) {
                let worst = jobs
                    .iter()
                    .zip(&pres)
                    .zip(&plans)
                    .map(|((j, pre), plan)| deviation_with(j, pre, &plan.network, &entry.part, v).map(f64::abs).unwrap_or(f64::INFINITY))
                    .fold(0.0f64, f64::max);
                if best.is_none_or(|(_, w)| worst < w) {
                    best = Some((v, worst));
                }
            }
        }
        let serves = best.filter(|(_, w)| *w <= tol / 2.0);
        let reason = match (serves, best) {
            (Some((v, w)), _) => format!(
                "one {} {} value, {} ohm, serves every cabinet: each cabinet's band average within {:.2} dB of its reference, inside half the {} dB pair tolerance",
                entry.series.name(),
                entry.part,
                crate::units::trim_number(v, 3),
                w,
                crate::units::trim_number(tol, 3)
            ),
            (None, Some((v, w))) => format!(
                "no single {} value serves every cabinet: the best, {} ohm, leaves one {:.2} dB from its reference, beyond half the {} dB pair tolerance; each cabinet gets its own",
                entry.series.name(),
                crate::units::trim_number(v, 3),
                w,
                crate::units::trim_number(tol, 3)
            ),
            (None, None) => "each cabinet keeps its own value: in at least one the part is not fitted".to_string(),
        };
        if let Some((v, _)) = serves {
            for (k, j) in jobs.iter_mut().enumerate() {
                if let Some(e) = j.compensate.iter_mut().find(|e| e.part == entry.part) {
                    e.common_ohm = Some(v);
                }
                if (own[k].ohm - v).abs() > 1e-12 {
                    stale[k] = true;
                }
            }
        }
        let fitted = match serves {
            Some((v, _)) => names.iter().map(|n| CabinetValue { cabinet: n.clone(), ohm: v }).collect(),
            None => own,
        };
        compensation.push(PairCompensation {
            part: entry.part.clone(),
            driver: entry.driver.clone(),
            exact,
            common_ohm: serves.map(|(v, _)| v),
            fitted,
            common_worst_db: best.map(|(_, w)| w).unwrap_or(f64::NAN),
            reason,
        });
    }

    for (k, j) in jobs.iter().enumerate() {
        if stale[k] {
            plans[k] = plan_of(j, &pres[k])?;
        }
    }

    // Full findings per cabinet; then ratings chosen for `rating: auto` resistors raised to
    // the worse cabinet's, and stress worked out again where that changed them.
    let mut cabinets = Vec::new();
    for ((name, j), (pre, plan)) in names.iter().zip(&jobs).zip(pres.drain(..).zip(plans.drain(..))) {
        cabinets.push(CabinetFindings { name: name.clone(), job: j.clone(), findings: finish(j, pre, plan, &BTreeMap::new(), progress)? });
    }
    let mut floors: BTreeMap<String, f64> = BTreeMap::new();
    for c in &cabinets {
        for r in c.findings.stress.rows.iter().filter(|r| r.scenario == Scenario::AsLeft && r.rating_chosen) {
            if let Some(w) = r.rating_w {
                let e = floors.entry(r.part.clone()).or_insert(0.0);
                *e = e.max(w);
            }
        }
    }
    for c in &mut cabinets {
        let f = &mut c.findings;
        let scenes: Vec<&crate::analysis::Scene> = f.scenes.iter().collect();
        f.stress = crate::analysis::stress::stress(&c.job.amplifier, c.job.analysis.programme, &f.grid, &scenes, &floors);
        f.power = crate::analysis::power::power_range(&c.job.amplifier, f);
    }

    let matching = matching(job, &cabinets, tol);
    let each: Vec<_> = job.cabinets.iter().zip(&cabinets).map(|(own, c)| (own.changes.as_slice(), &c.findings.scenes.as_left.network, &c.findings.stress)).collect();
    let parts = crate::analysis::bom::for_work(job, &each);
    Ok(SetFindings { cabinets, matching, compensation, tolerance_db: tol, parts, options: Vec::new(), recommended: None, chosen: None })
}

/// The median of a few numbers.
fn median(v: &[f64]) -> f64 {
    let mut s = v.to_vec();
    s.sort_by(f64::total_cmp);
    let n = s.len();
    if n == 0 {
        return 0.0;
    }
    if n % 2 == 1 {
        s[n / 2]
    } else {
        (s[n / 2 - 1] + s[n / 2]) / 2.0
    }
}

fn matching(job: &Job, cabinets: &[CabinetFindings], tol: f64) -> Vec<PairMatch> {
    let Some(first) = cabinets.first() else { return Vec::new() };
    let designed = &first.findings.scenes.as_designed;
    let (freqs, bands) = (&first.findings.freqs, &first.findings.bands);
    job.network
        .drivers
        .iter()
        .enumerate()
        .map(|(di, d)| {
            let level = |c: &CabinetFindings, found: bool| c.findings.levels.get(di).map(|l| if found { l.as_found_db } else { l.as_left_db }).unwrap_or(0.0);
            let extremes = |found: bool| {
                let (mut hi, mut lo) = (0, 0);
                for (k, c) in cabinets.iter().enumerate() {
                    if level(c, found) > level(&cabinets[hi], found) {
                        hi = k;
                    }
                    if level(c, found) < level(&cabinets[lo], found) {
                        lo = k;
                    }
                }
                (hi, lo, level(&cabinets[hi], found) - level(&cabinets[lo], found))
            };
            let (fh, fl, found_db) = extremes(true);
            let (lh, ll, left_db) = extremes(false);
            // In a set, the odd cabinet is the one farthest from the median; in a pair the
            // loud cabinet's readings widen the gap and the quiet one's narrow it.
            let found_levels: Vec<f64> = cabinets.iter().map(|c| level(c, true)).collect();
            let m = median(&found_levels);
            // Cabinets that play alike have no odd one.
            let alike = found_db < 0.005;
            let odd = (cabinets.len() > 2 && !alike).then(|| (0..cabinets.len()).max_by(|a, b| (found_levels[*a] - m).abs().total_cmp(&(found_levels[*b] - m).abs())).unwrap_or(0));
            let mut responsible = Vec::new();
            // The difference is the loudest cabinet's level less the quietest's, in a set as in
            // a pair: the loud cabinet's readings widen it and the quiet one's narrow it, so
            // both are weighed (a set's odd cabinet is always one of the two).
            let involved: Vec<(usize, f64)> = if alike { Vec::new() } else { vec![(fh, 1.0), (fl, -1.0)] };
            for (k, sign) in involved {
                let c = &job.cabinets[k];
                for r in &c.measured {
                    let shift = reading_shift(r, &job.amplifier, freqs, bands, designed).get(di).copied().unwrap_or(0.0);
                    if shift.abs() >= 0.005 {
                        responsible.push(Responsible { cabinet: c.name.clone(), part: r.target.clone(), share_db: sign * shift });
                    }
                }
            }
            responsible.sort_by(|a, b| b.share_db.total_cmp(&a.share_db));
            let verdict = |v: f64| if v <= tol + 1e-12 { Verdict::Ok } else { Verdict::Over };
            let left_levels: Vec<f64> = cabinets.iter().map(|c| level(c, false)).collect();
            let ml = median(&left_levels);
            let from_median: Vec<FromMedian> = if cabinets.len() > 2 {
                cabinets.iter().enumerate().map(|(k, c)| FromMedian { cabinet: c.name.clone(), as_found_db: found_levels[k] - m, as_left_db: left_levels[k] - ml }).collect()
            } else {
                Vec::new()
            };
            // A pair matches when its two cabinets are within the tolerance of each other; a
            // set when each cabinet is within it of the set's median.
            let (found_v, left_v) = if from_median.is_empty() {
                (verdict(found_db), verdict(left_db))
            } else {
                let worst = |g: fn(&FromMedian) -> f64| from_median.iter().map(|x| g(x).abs()).fold(0.0, f64::max);
                (verdict(worst(|x| x.as_found_db)), verdict(worst(|x| x.as_left_db)))
            };
            PairMatch {
                driver: d.name.clone(),
                as_found_db: found_db,
                as_left_db: left_db,
                tolerance_db: tol,
                verdict: left_v,
                as_found_verdict: found_v,
                as_found_cabinets: [cabinets[fh].name.clone(), cabinets[fl].name.clone()],
                as_left_cabinets: [cabinets[lh].name.clone(), cabinets[ll].name.clone()],
                odd_cabinet: odd.map(|k| cabinets[k].name.clone()),
                from_median,
                responsible,
            }
        })
        .collect()
}

/// "0.42 dB" - a level difference without sign, two decimals.
fn diff(v: f64) -> String {
    format!("{:.2} dB", v.abs())
}

impl SetFindings {
    /// Whether anything was read on the bench in any cabinet (a part reading or a failed
    /// driver): without, the set "as found" is the design's own figures, not a finding.
    pub fn read_on_bench(&self) -> bool {
        self.cabinets.iter().any(|c| c.job.read_on_bench())
    }
}

impl PairMatch {
    /// What the match of this driver comes to, in one sentence for the technician: `read`,
    /// whether anything was read on the bench before the work; `worked`, whether work was done.
    pub fn sentence(&self, set: bool, read: bool, worked: bool) -> String {
        let t = crate::units::trim_number(self.tolerance_db, 3);
        let [fl, fq] = &self.as_found_cabinets;
        let [ll, lq] = &self.as_left_cabinets;
        let fault = crate::analysis::compensate::FAULT_DB;
        let found = if !read {
            "nothing was read on the bench before the work, so there is no difference as found to tell".to_string()
        } else if self.as_found_db > fault {
            format!("as found {fq}'s was all but silent, {} below {fl}'s: a fault (an open part or connection), not a level difference", diff(self.as_found_db))
        } else if self.as_found_db < 0.005 {
            "as found the cabinets played alike".to_string()
        } else if set {
            match &self.odd_cabinet {
                Some(odd) => format!("as found the set spread {} ({fl} loudest, {fq} quietest), cabinet {odd} farthest from the set's median", diff(self.as_found_db)),
                None => format!("as found the set spread {}", diff(self.as_found_db)),
            }
        } else {
            format!("as found {fl} played {} louder than {fq}", diff(self.as_found_db))
        };
        let left = if self.as_left_db < 0.005 {
            "as left they play alike".to_string()
        } else if self.as_left_db > fault {
            format!("as left {lq}'s is all but silent, {} below {ll}'s: a fault to find before the speakers go back", diff(self.as_left_db))
        } else if set {
            format!("as left the spread is {} ({ll} loudest, {lq} quietest)", diff(self.as_left_db))
        } else {
            format!("as left {ll} plays {} louder than {lq}", diff(self.as_left_db))
        };
        let verdict = match (self.verdict, set) {
            (Verdict::Ok, false) => format!("within the {t} dB pair tolerance"),
            (Verdict::Ok, true) => format!("every cabinet within {t} dB of the set's median"),
            (_, false) => format!("outside the {t} dB pair tolerance"),
            (_, true) => format!("not every cabinet within {t} dB of the set's median"),
        };
        if !worked {
            // No work: there is no "as left", and the verdict is of the speakers as they are.
            return if read {
                format!("{}: {found}; no work has been done yet ({verdict}).", self.driver)
            } else {
                format!("{}: {found}; no work has been done yet.", self.driver)
            };
        }
        format!("{}: {found}; {left}, {verdict}.", self.driver)
    }

    /// The readings behind the as-found difference, as one sentence; None when none counts.
    pub fn responsible_sentence(&self) -> Option<String> {
        if self.responsible.is_empty() || self.as_found_db < 0.005 {
            return None;
        }
        let items: Vec<String> =
            self.responsible.iter().map(|r| format!("{} in cabinet {} ({}{})", r.part, r.cabinet, if r.share_db >= 0.0 { "+" } else { "-" }, diff(r.share_db))).collect();
        Some(format!("{}: the as-found difference comes from {} (each reading applied alone to the design; + widens the difference, - narrows it).", self.driver, items.join(", ")))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn median_of_odd_and_even_counts() {
        assert_eq!(median(&[3.0, 1.0, 2.0]), 2.0);
        assert_eq!(median(&[4.0, 1.0, 2.0, 3.0]), 2.5);
    }

    #[test]
    fn candidates_span_the_exact_values_in_the_series() {
        // IEC 60063 E24 around 0.82-0.95 ohm: 0.75 (one below), 0.82, 0.91, 1.0 (one above).
        let c = candidates(crate::model::ESeries::E24, &[0.84, 0.93]);
        for v in [0.75, 0.82, 0.91, 1.0] {
            assert!(c.contains(&v), "{v} in {c:?}");
        }
    }
}
