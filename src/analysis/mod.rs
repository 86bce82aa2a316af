//! From the solved scenarios to findings. [`analyse`] solves the three scenes once each
//! ([`scene`]), fits the compensating parts ([`compensate`]) and hands each analysis only
//! what it needs: levels and crossovers ([`levels`]), stress ([`stress`]), load ([`load`]),
//! part health ([`health`]) and the Monte Carlo ([`tolerance`]).

pub mod bom;
pub mod compensate;
pub mod confirm;
pub mod diagnose;
pub mod eseries;
pub mod health;
pub mod levels;
pub mod load;
pub mod logfit;
pub mod options;
pub mod pair;
pub mod power;
pub mod programme;
pub mod scene;
pub mod stress;
pub mod substitute;
pub mod tolerance;

pub use levels::*;
pub use scene::*;

use crate::engine::SolveError;
use crate::model::{Job, Scenario};

/// A verdict on a figure: within its limit, worth a look, or beyond it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Default, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Verdict {
    #[default]
    Ok,
    Check,
    Over,
}

impl Verdict {
    pub fn name(self) -> &'static str {
        match self {
            Verdict::Ok => "ok",
            Verdict::Check => "check",
            Verdict::Over => "over",
        }
    }
}

impl std::fmt::Display for Verdict {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.pad(self.name())
    }
}

/// One thing per scenario, by name: as designed, as found, as left.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Scenes<T> {
    pub as_designed: T,
    pub as_found: T,
    pub as_left: T,
}

impl<T> Scenes<T> {
    pub fn get(&self, s: Scenario) -> &T {
        match s {
            Scenario::AsDesigned => &self.as_designed,
            Scenario::AsFound => &self.as_found,
            Scenario::AsLeft => &self.as_left,
        }
    }

    /// In scenario order.
    pub fn iter(&self) -> impl Iterator<Item = &T> {
        [&self.as_designed, &self.as_found, &self.as_left].into_iter()
    }

    /// (scenario, thing) in scenario order.
    pub fn each(&self) -> impl Iterator<Item = (Scenario, &T)> {
        Scenario::ALL.into_iter().zip(self.iter())
    }

    pub fn map<U>(&self, mut f: impl FnMut(&T) -> U) -> Scenes<U> {
        Scenes { as_designed: f(&self.as_designed), as_found: f(&self.as_found), as_left: f(&self.as_left) }
    }
}

impl<T> std::ops::Index<Scenario> for Scenes<T> {
    type Output = T;
    fn index(&self, s: Scenario) -> &T {
        self.get(s)
    }
}

impl<'a, T> IntoIterator for &'a Scenes<T> {
    type Item = &'a T;
    type IntoIter = std::array::IntoIter<&'a T, 3>;
    fn into_iter(self) -> Self::IntoIter {
        [&self.as_designed, &self.as_found, &self.as_left].into_iter()
    }
}

/// How a long analysis reports its progress. The command line draws a bar; the library
/// itself draws nothing.
pub trait Progress: Sync {
    /// A piece of work of `total` steps begins.
    fn start(&self, _what: &str, _total: u64) {}
    fn advance(&self, _steps: u64) {}
    fn finish(&self) {}
}

/// Progress that goes unreported.
pub struct Quiet;

impl Progress for Quiet {}

/// Every finding for one job.
#[derive(Debug, Clone)]
pub struct Findings {
    pub freqs: Vec<f64>,
    /// The stress figures' own grid (see [`StressGrid`]).
    pub grid: StressGrid,
    pub scenes: Scenes<Scene>,
    pub bands: Vec<Band>,
    pub levels: Vec<LevelRow>,
    pub crossovers: Vec<CrossoverRow>,
    pub corners: Vec<CornerRow>,
    pub compensation: compensate::Plan,
    pub stress: stress::Stress,
    pub loads: Scenes<load::Load>,
    pub health: Vec<health::Flag>,
    pub tolerance: Option<tolerance::Spread>,
    /// Per scenario, the complex acoustic sum in dB SPL at 2.83 V when every driver has a response.
    pub acoustic: Option<Scenes<Vec<f64>>>,
    /// Each driver the steps replace with a different model, against the original.
    pub substitutes: Vec<substitute::Substitute>,
    /// The parts to buy for the work done.
    pub parts: bom::PartsList,
    /// The options offered before the work, each solved as its own as-left scenario, and the
    /// one recommended.
    pub options: Vec<OptionFindings>,
    pub recommended: Option<Recommendation>,
    /// Which option the work done followed, when the job has both.
    pub chosen: Option<Chosen>,
    /// The largest amplifier power the speaker as left suits.
    pub power: power::PowerRange,
    /// The prediction against the sweeps measured at the terminals, as found and as left.
    pub confirmation: Vec<confirm::Confirmation>,
    /// The estimates from the as-found sweep, when the job asks for them (or why there are
    /// none).
    pub diagnosis: Option<Result<diagnose::Diagnosis, String>>,
}

#[derive(Debug)]
pub enum AnalysisError {
    Solve(Scenario, SolveError),
    Step(crate::model::StepError),
}

impl AnalysisError {
    /// The error as a diagnostic at the place in the job file of the first part it names, like
    /// every other problem in a job.
    pub fn diagnostic(&self, job: &Job) -> crate::diag::Diagnostic {
        use crate::diag::{Diagnostic, Pos};
        let hint = "check the `between` nodes of the parts named; a part of 0 ohm across the input shorts the amplifier";
        match self {
            AnalysisError::Solve(s, e) => {
                let parts: &[String] = match e {
                    SolveError::Floating { parts, .. } | SolveError::Singular { parts, .. } => parts,
                    SolveError::Internal(_) => &[],
                    SolveError::IllConditioned { parts, .. } => parts,
                    SolveError::Unreachable { part, .. } => std::slice::from_ref(part),
                };
                let left = job.as_left_unsolved().ok();
                let place = parts.iter().find_map(|p| {
                    let pos = [Some(&job.network), left.as_ref()].into_iter().flatten().find_map(|n| n.part(p).map(|x| x.pos).or_else(|| n.driver(p).map(|d| d.pos)));
                    pos.map(|pos| (pos, p.clone()))
                });
                let (pos, field) = place.map(|(pos, p)| (pos, format!("network.{p}"))).unwrap_or((job.network.input_pos, "network".into()));
                let hint = match e {
                    SolveError::IllConditioned { .. } => "check the values of the two parts named: one far outside its usual range (a micro-ohm link beside a megohm part, a farad capacitor) is usually a slip of prefix or unit",
                    SolveError::Unreachable { .. } => "name in `compensate` the driver whose path the part is in, or move the part (check its `between` nodes)",
                    _ => hint,
                };
                Diagnostic::new(pos, field, format!("{}: {e}", s.label())).hint(hint)
            }
            AnalysisError::Step(e) => Diagnostic::new(if e.pos == Pos::default() { Pos::START } else { e.pos }, format!("changes[{}]", e.number), e.message.clone()),
        }
    }
}

impl std::fmt::Display for AnalysisError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            AnalysisError::Solve(s, e) => write!(f, "{}: {}", s.label(), e),
            AnalysisError::Step(e) => write!(f, "change step {}: {}", e.number, e.message),
        }
    }
}

pub fn analyse(job: &Job) -> Result<Findings, AnalysisError> {
    analyse_with(job, &Quiet)
}

// What the options a shop offers come to: here, beside the findings that hold them, so
// that `options` (which weighs them) and `pair` (whose sets hold them) need not import each
// other.

#[derive(Debug, Clone)]
pub struct OptionFindings {
    pub name: String,
    pub say: Option<String>,
    /// The option's findings; in a pair or set, its first cabinet's.
    pub findings: Box<Findings>,
    /// In a pair or set, every cabinet's findings and how they match.
    pub set: Option<Box<pair::SetFindings>>,
    /// The parts to buy for the whole job (every cabinet's).
    pub parts: bom::PartsList,
    pub labour_hours: Option<f64>,
    /// Labour at the job's hourly rate, in hundredths.
    pub labour: Option<crate::money::Money>,
    /// Parts and labour, when both are known (parts: every line priced).
    pub total: Option<crate::money::Money>,
    /// RMS over the drivers of each driver's RMS deviation from the original design over its
    /// band (dB; acoustic where known).
    pub score_db: f64,
    /// Every stress, driver power, load, substitute (and, in a set, match) verdict is ok, or
    /// "check" where the original design's is too.
    pub verdicts_ok: bool,
    /// The verdicts that are over, in words.
    pub over: Vec<String>,
    /// The verdicts that are "check" (neither ok nor over) where the original design's are
    /// not, in words.
    pub to_check: Vec<String>,
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Recommendation {
    pub option: String,
    /// Why, in one sentence.
    pub reason: String,
    /// The job named it (rather than the rule choosing it).
    pub named: bool,
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

/// What a job's analysis gives: one cabinet's findings, or a pair's or set's.
pub enum Outcome {
    One(Box<Findings>),
    Set(Box<pair::SetFindings>),
}

/// Every finding for a job of one cabinet or several.
pub fn analyse_job(job: &Job, progress: &dyn Progress) -> Result<Outcome, AnalysisError> {
    if job.cabinets.is_empty() {
        analyse_with(job, progress).map(|f| Outcome::One(Box::new(f)))
    } else {
        // A quotation (options, no work done): nothing has been done yet, and each cabinet's
        // own steps belong to every option, so the speaker "now" is as found.
        let quote = job.changes.is_empty() && !job.options.is_empty();
        let now = if quote {
            let mut j = job.clone();
            for c in &mut j.cabinets {
                c.changes.clear();
            }
            j
        } else {
            job.clone()
        };
        let mut s = pair::analyse_set(&now, progress)?;
        if !job.options.is_empty() {
            s.options = options::analyse(job)?;
            s.recommended = options::recommend(job, &s.options);
            let done: Vec<(&str, &Findings)> = s.cabinets.iter().map(|c| (c.name.as_str(), &c.findings)).collect();
            s.chosen = options::chosen(job, &done, &s.options);
        }
        Ok(Outcome::Set(Box::new(s)))
    }
}

/// Every finding for `job`, with the Monte Carlo's progress reported to `progress`.
pub fn analyse_with(job: &Job, progress: &dyn Progress) -> Result<Findings, AnalysisError> {
    let pre = prepare(job)?;
    let plan = plan_of(job, &pre)?;
    let mut f = finish(job, pre, plan, &Default::default(), progress)?;
    if !job.options.is_empty() {
        f.options = options::analyse(job)?;
        f.recommended = options::recommend(job, &f.options);
        f.chosen = options::chosen(job, &[("", &f)], &f.options);
    }
    Ok(f)
}

/// The first stage of an analysis: the sweep and stress grid, the design and as-found scenes,
/// the as-left network with its auto parts unsolved, and each driver's band.
pub struct Prepared {
    pub freqs: Vec<f64>,
    pub grid: StressGrid,
    pub designed: Scene,
    pub found: Scene,
    pub unsolved: crate::model::Network,
    pub bands: Vec<Band>,
}

pub fn prepare(job: &Job) -> Result<Prepared, AnalysisError> {
    let amp = &job.amplifier;
    let freqs = job.analysis.sweep.frequencies();
    let grid = StressGrid::new(job.analysis.programme, &freqs);
    let solve = |scenario, net| Scene::build(scenario, net, amp, &freqs, &grid).map_err(|e| AnalysisError::Solve(scenario, e));
    let designed = solve(Scenario::AsDesigned, job.network.clone())?;
    let found = solve(Scenario::AsFound, job.as_found())?;
    let unsolved = job.as_left_unsolved().map_err(AnalysisError::Step)?;
    // Bands: the compensate entry's band where one names the driver, else the passband.
    let bands: Vec<Band> = job
        .network
        .drivers
        .iter()
        .enumerate()
        .map(|(i, d)| match job.compensate.iter().find(|c| c.driver == d.name).and_then(|c| c.band) {
            Some((lo, hi)) => band_of(&freqs, lo, hi),
            None => passband(&freqs, &designed.db[i], d.role),
        })
        .collect();
    Ok(Prepared { freqs, grid, designed, found, unsolved, bands })
}

/// The compensation plan of a prepared job.
pub fn plan_of(job: &Job, pre: &Prepared) -> Result<compensate::Plan, AnalysisError> {
    let cx = compensate::Context {
        entries: &job.compensate,
        design: &job.network,
        changes: &job.changes,
        amp: &job.amplifier,
        freqs: &pre.freqs,
        bands: &pre.bands,
        designed: &pre.designed,
        found: &pre.found,
        unsolved: &pre.unsolved,
    };
    compensate::plan(&cx).map_err(|e| AnalysisError::Solve(Scenario::AsLeft, e))
}

/// A driver the work leaves measurably off its original level (0.5 dB or more on average over
/// its band, the levels table's "measurable", common practice) that no `compensate` entry
/// names: said, so a job that forgot its compensating resistor does not pass in silence.
fn uncompensated(job: &Job, levels: &[LevelRow]) -> Vec<compensate::Warning> {
    if job.changes.is_empty() {
        return Vec::new();
    }
    levels
        .iter()
        .filter(|l| !l.as_left_fault && l.as_left_db.abs() >= 0.5 && !job.compensate.iter().any(|c| c.driver == l.driver))
        .map(|l| compensate::Warning {
            subject: l.driver.clone(),
            message: format!(
                "{} plays {:.2} dB {} than designed on average over its band after the work, and no `compensate` entry names it: a level difference a listener may notice (0.5 dB or more, common practice)",
                l.driver,
                l.as_left_db.abs(),
                if l.as_left_db > 0.0 { "louder" } else { "quieter" }
            ),
        })
        .collect()
}

/// The rest of the findings, once the plan is known; `floors` raises chosen resistor ratings
/// to a pair's worse cabinet.
pub fn finish(job: &Job, pre: Prepared, plan: compensate::Plan, floors: &std::collections::BTreeMap<String, f64>, progress: &dyn Progress) -> Result<Findings, AnalysisError> {
    let amp = &job.amplifier;
    let Prepared { freqs, grid, designed, found, bands, .. } = pre;
    let left = Scene::build(Scenario::AsLeft, plan.network.clone(), amp, &freqs, &grid).map_err(|e| AnalysisError::Solve(Scenario::AsLeft, e))?;
    let scenes = Scenes { as_designed: designed, as_found: found, as_left: left };
    let drivers = &job.network.drivers;
    let levels = level_rows(drivers, &freqs, &bands, &scenes);
    let crossovers = crossover_rows(drivers, &freqs, &bands, &scenes);
    let corners = corner_rows(&freqs, &scenes);
    let rated = job.rated_impedance_ohm();
    let loads = scenes.map(|s| load::load(&freqs, &s.z, rated, job.info.rated_range));
    let stress = stress::stress(amp, job.analysis.programme, &grid, &scenes.iter().collect::<Vec<_>>(), floors);
    let health = health::flags(&job.measured, amp, &freqs, &bands, &scenes.as_designed);
    let tolerance =
        job.analysis.tolerance.as_ref().map(|t| tolerance::run(t, &freqs, &bands, &scenes, progress)).transpose().map_err(|e| AnalysisError::Solve(Scenario::AsLeft, e))?;
    let acoustic = acoustic_sum(&scenes, &freqs);
    let mut plan = plan;
    plan.warnings.extend(uncompensated(job, &levels));
    let mut findings = Findings {
        freqs,
        grid,
        scenes,
        bands,
        levels,
        crossovers,
        corners,
        compensation: plan,
        stress,
        loads,
        health,
        tolerance,
        acoustic,
        substitutes: Vec::new(),
        parts: bom::PartsList::default(),
        options: Vec::new(),
        recommended: None,
        chosen: None,
        power: power::PowerRange::default(),
        confirmation: Vec::new(),
        diagnosis: None,
    };
    let range = (findings.freqs[0], findings.freqs[findings.freqs.len() - 1]);
    for (scenario, sweep, net) in
        [(Scenario::AsFound, &job.terminals.as_found, &findings.scenes.as_found.network), (Scenario::AsLeft, &job.terminals.as_left, &findings.scenes.as_left.network)]
    {
        if let Some(c) = sweep.as_ref().and_then(|s| confirm::confirm(scenario, net, amp, s, range, job.terminals.limits)) {
            findings.confirmation.push(c);
        }
    }
    if let (Some(sweep), true) = (&job.terminals.as_found, job.terminals.diagnose_all || !job.terminals.diagnose.is_empty()) {
        let net = &findings.scenes.as_found.network;
        let params = diagnose::params_of(net, &job.terminals);
        findings.diagnosis = Some(diagnose::diagnose(net, amp, sweep, &params, range));
    }
    findings.power = power::power_range(amp, &findings);
    findings.substitutes = substitute::check(job, &findings);
    findings.parts = bom::for_work(job, &[(&[], &findings.scenes.as_left.network, &findings.stress)]);
    Ok(findings)
}
