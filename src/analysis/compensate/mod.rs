//! Compensation: solve every `value: auto` resistor so its driver plays at the reference
//! scenario's level over the band, round it to a standard series, and weigh the
//! alternatives (an E12 pair, an L-pad at the driver, restoring each lost ESR in place).

pub mod alternatives;

pub use alternatives::{Alternative, AlternativeKind};

use std::cell::RefCell;

use levenberg_marquardt::LevenbergMarquardt;

use crate::analysis::logfit::LogFit;
use num_complex::Complex64;

use crate::analysis::eseries::{best_e12_pair, round_to};
use crate::analysis::{levels, Band, Scene};
use crate::engine::{self, Circuit, ElementModel, SolveError, Workspace};
use crate::model::{Amplifier, Change, CompensateEntry, Driver, ESeries, Network, Part, Role, Scenario};

/// Below this the exact value is no resistor at all (common practice: crossover resistors
/// under 0.1 ohm are not stocked, and wiring is of that order).
pub const SMALLEST_FITTED_OHM: f64 = 0.05;
/// Above this a shunt resistor hardly loads a driver of a few ohms, and is left out
/// (common practice).
pub const LARGEST_SHUNT_OHM: f64 = 1000.0;

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Pair {
    pub a_ohm: f64,
    pub b_ohm: f64,
    pub parallel: bool,
    pub value_ohm: f64,
    pub residual_db: f64,
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Fit {
    pub part: String,
    pub driver: String,
    pub reference: Scenario,
    pub band_hz: [f64; 2],
    pub series: ESeries,
    /// A shunt (to the return, or across its driver) rather than a series part.
    pub shunt: bool,
    /// The exact and fitted values; infinite for a shunt best left out (open). JSON lists
    /// those apart, since they have no finite value.
    pub exact_ohm: f64,
    pub fitted_ohm: f64,
    /// RMS and worst deviation (dB) from the reference over the band, with the fitted value.
    pub residual_db: f64,
    pub worst_db: f64,
    /// RMS residual with the exact value, for comparison.
    pub exact_residual_db: f64,
    /// How much louder than the reference the driver plays with every auto part at "none"
    /// (a wire link in series, nothing fitted as a shunt), in dB.
    pub excess_db: f64,
    pub cannot_raise: bool,
    /// The driver ends more than [`FAULT_DB`] below its reference: a wiring fault.
    pub fault: bool,
    pub at_input: bool,
    /// The fit also held the impedance the filter sees to its reference (`keep_impedance`).
    pub keeps_impedance: bool,
    /// The level held is acoustic output (the reference and the driver now fitted both have a
    /// sensitivity or response), not the voltage across the driver.
    pub acoustic: bool,
    pub pair: Option<Pair>,
    /// Where it goes, in words.
    pub placement: String,
}

impl Fit {
    /// The fit leaves the part out: a wire link in series, nothing across as a shunt.
    pub fn is_none(&self) -> bool {
        self.fitted_ohm == 0.0 || self.fitted_ohm.is_infinite() || self.cannot_raise
    }
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Warning {
    pub subject: String,
    pub message: String,
}

#[derive(Debug, Clone)]
pub struct Plan {
    /// The as-left network with every auto value fitted.
    pub network: Network,
    pub fits: Vec<Fit>,
    pub alternatives: Vec<Alternative>,
    pub warnings: Vec<Warning>,
}

/// How an auto resistor sits: in the signal path, where "none" is a wire link (0 ohm), or
/// from a signal node to the return or straight across its driver, where "none" is no part
/// at all (open). A shunt is never fitted as a short, which would silence its driver.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Placement {
    Series,
    Shunt,
}

impl Placement {
    pub fn of(net: &Network, part: &Part, driver: &str) -> Placement {
        let across_driver = net.driver(driver).is_some_and(|d| {
            let (a, b) = (&part.between, &d.between);
            (a[0] == b[0] && a[1] == b[1]) || (a[0] == b[1] && a[1] == b[0])
        });
        if across_driver || part.between.contains(&net.input[1]) {
            Placement::Shunt
        } else {
            Placement::Series
        }
    }

    /// The resistance for a search parameter: the resistance itself for a series part, the
    /// conductance (1 / R, 0 for open) for a shunt.
    fn ohm(self, p: f64) -> f64 {
        match self {
            Placement::Series => p,
            Placement::Shunt if p <= 0.0 => f64::INFINITY,
            Placement::Shunt => 1.0 / p,
        }
    }

    /// The search range of the parameter: 0 to 1 kohm in series, 0 to 10 S (0.1 ohm) as a
    /// shunt; both ends of each include "none".
    fn range(self) -> (f64, f64) {
        match self {
            Placement::Series => (0.0, 1000.0),
            Placement::Shunt => (0.0, 10.0),
        }
    }
}

pub use crate::analysis::levels::FAULT_DB;

/// The least a part to fit must move its driver's band level across its whole range (none
/// to 1 kohm in series, open to 0.1 ohm as a shunt): below it the part is not in the
/// driver's path.
pub const UNREACHABLE_DB: f64 = 0.1;

struct Target<'a> {
    entry: &'a CompensateEntry,
    element: usize,
    driver_el: usize,
    placement: Placement,
    band: Vec<usize>,
    reference: Vec<f64>,
    /// With `keep_impedance`, the reference scenario's input impedance over the band.
    reference_z: Option<Vec<Complex64>>,
    /// The reference is acoustic output, not voltage.
    acoustic: bool,
}

/// The circuit under fit, with its auto resistors set from search parameters.
struct Fitter<'a> {
    circuit: RefCell<Circuit>,
    ws: RefCell<Workspace>,
    freqs: &'a [f64],
    targets: Vec<Target<'a>>,
}

/// A wire link as the fit's searches see it: 1 micro-ohm.
const FIT_LINK_OHM: f64 = 1e-6;

/// 20 / ln 10: dB per neper, to weigh an impedance's log-ratio (magnitude and phase) in the
/// same units as the level deviations.
const DB_PER_NEPER: f64 = 8.685_889_638_065_037;

impl Fitter<'_> {
    fn set(&self, j: usize, p: f64) {
        let t = &self.targets[j];
        self.circuit.borrow_mut().elements[t.element].model = ElementModel::Resistor { r: t.placement.ohm(p) };
    }

    fn set_all(&self, params: &[f64]) {
        for (j, p) in params.iter().enumerate() {
            self.set(j, *p);
        }
    }

    /// As [`Fitter::set`], for the searches: a wire link (0 ohm) would send every point to
    /// the engine's pivoting solver, a dense LU that took 18 s for twelve parts fitted at
    /// once; while searching, a link is a micro-ohm, the smallest resistance a job may hold,
    /// which moves no level by more than 1e-5 dB. The values found are set exactly after.
    fn search(&self, j: usize, p: f64) {
        let t = &self.targets[j];
        let r = t.placement.ohm(p).max(FIT_LINK_OHM);
        self.circuit.borrow_mut().elements[t.element].model = ElementModel::Resistor { r };
    }

    fn search_all(&self, params: &[f64]) {
        for (j, p) in params.iter().enumerate() {
            self.search(j, *p);
        }
    }

    /// Target `j`'s level deviations (dB) over its band.
    fn deviations(&self, j: usize) -> Result<Vec<f64>, SolveError> {
        let c = self.circuit.borrow();
        let mut ws = self.ws.borrow_mut();
        let t = &self.targets[j];
        t.band
            .iter()
            .zip(&t.reference)
            .map(|(&i, r)| {
                engine::solve_point(&c, self.freqs[i], &mut ws)?;
                Ok(engine::db(ws.across(&c, t.driver_el)) - r)
            })
            .collect()
    }

    /// Every residual of the fit: each target's level deviations, and for a target that
    /// keeps its impedance the log-ratio of the input impedance to its reference (real and
    /// imaginary parts, in dB).
    fn residuals(&self) -> Result<Vec<f64>, SolveError> {
        let c = self.circuit.borrow();
        let mut ws = self.ws.borrow_mut();
        let mut out = Vec::new();
        for t in &self.targets {
            for (n, (&i, r)) in t.band.iter().zip(&t.reference).enumerate() {
                engine::solve_point(&c, self.freqs[i], &mut ws)?;
                out.push(engine::db(ws.across(&c, t.driver_el)) - r);
                if let Some(zr) = &t.reference_z {
                    let ratio = (ws.input_impedance(&c) / zr[n]).ln();
                    out.push(DB_PER_NEPER * ratio.re);
                    out.push(DB_PER_NEPER * ratio.im);
                }
            }
        }
        Ok(out)
    }

    fn sum_sq(&self) -> Result<f64, SolveError> {
        Ok(self.residuals()?.iter().map(|d| d * d).sum())
    }
}

pub(crate) fn rms(d: &[f64]) -> f64 {
    (d.iter().map(|x| x * x).sum::<f64>() / d.len().max(1) as f64).sqrt()
}

pub(crate) fn worst(d: &[f64]) -> f64 {
    d.iter().cloned().fold(0.0, |a: f64, b| if b.abs() > a.abs() { b } else { a })
}

fn mean(d: &[f64]) -> f64 {
    d.iter().sum::<f64>() / d.len().max(1) as f64
}

/// 1-D minimisation of f over [lo, hi] (lo = 0 included exactly): a log grid to find the
/// basin, then golden section inside it. The level error is smooth and single-valleyed for a
/// lone resistor, but the grid keeps it safe when it is not.
fn minimise(lo: f64, hi: f64, mut f: impl FnMut(f64) -> Result<f64, SolveError>) -> Result<f64, SolveError> {
    let mut grid = vec![lo];
    grid.extend((0..=60).map(|k| hi * 1e-6 * 10f64.powf(k as f64 / 10.0)));
    let vals: Vec<f64> = grid.iter().map(|r| f(*r)).collect::<Result<_, _>>()?;
    let best = (0..grid.len()).min_by(|a, b| vals[*a].total_cmp(&vals[*b])).unwrap_or(0);
    let (mut a, mut b) = (grid[best.saturating_sub(1)], grid[(best + 1).min(grid.len() - 1)]);
    let g = (5f64.sqrt() - 1.0) / 2.0;
    let (mut x1, mut x2) = (b - g * (b - a), a + g * (b - a));
    let (mut f1, mut f2) = (f(x1)?, f(x2)?);
    for _ in 0..80 {
        if f1 < f2 {
            b = x2;
            x2 = x1;
            f2 = f1;
            x1 = b - g * (b - a);
            f1 = f(x1)?;
        } else {
            a = x1;
            x1 = x2;
            f1 = f2;
            x2 = a + g * (b - a);
            f2 = f(x2)?;
        }
        if (b - a).abs() < 1e-7 * (1.0 + b.abs()) {
            break;
        }
    }
    let x = (a + b) / 2.0;
    Ok(if f(lo)? <= f(x)? { lo } else { x })
}

/// What the compensation works from: the job's entries, the design's drivers, the change
/// steps and the amplifier, the sweep and bands, and the scenes already solved.
pub struct Context<'a> {
    pub entries: &'a [CompensateEntry],
    /// The original design's network (drivers in network order, parts as designed).
    pub design: &'a Network,
    pub changes: &'a [Change],
    pub amp: &'a Amplifier,
    pub freqs: &'a [f64],
    pub bands: &'a [Band],
    pub designed: &'a Scene,
    pub found: &'a Scene,
    /// The as-left network with its auto parts unsolved.
    pub unsolved: &'a Network,
}

/// What each compensate entry fits: its part's and driver's elements in the circuit, how the
/// part sits, the band, and the reference levels (and impedances) it is held to.
fn targets<'a>(cx: &Context<'a>, circuit: &Circuit) -> Result<Vec<Target<'a>>, SolveError> {
    cx.entries
        .iter()
        .map(|entry| {
            let (Some(element), Some(driver_el), Some(di), Some(part)) =
                (circuit.element(&entry.part), circuit.element(&entry.driver), cx.design.drivers.iter().position(|d| d.name == entry.driver), cx.unsolved.part(&entry.part))
            else {
                return Err(SolveError::Internal(format!("compensate entry {} names a part or driver the as-left network lacks", entry.part)));
            };
            let reference_scene = if entry.reference == Scenario::AsFound { cx.found } else { cx.designed };
            let band = cx.bands[di].idx.clone();
            // Held to the reference's acoustic output where both it and the driver now fitted
            // have a sensitivity or response (a substitute of another sensitivity), else to
            // its voltage: the target voltage is the reference's output less what the driver
            // now fitted makes of a volt.
            let fitted_driver = cx.unsolved.driver(&entry.driver);
            let shift: Option<Vec<f64>> = match (&reference_scene.spl[di], fitted_driver.and_then(|d| levels::acoustic_offset(d, cx.freqs))) {
                (Some(spl), Some((offset, _))) => Some(spl.iter().zip(&offset).map(|(s, o)| s - o).collect()),
                _ => None,
            };
            let reference = band.iter().map(|&i| shift.as_ref().map_or(reference_scene.db[di][i], |s| s[i])).collect();
            let reference_z = entry.keep_impedance.then(|| band.iter().map(|&i| reference_scene.z[i]).collect());
            Ok(Target { entry, element, driver_el, placement: Placement::of(cx.unsolved, part, &entry.driver), band, reference, reference_z, acoustic: shift.is_some() })
        })
        .collect()
}

/// The exact search parameters: coordinate descent over each part's own range (which
/// includes "none"), then Levenberg-Marquardt where several parts are fitted together. A
/// target already too quiet at "none" (`excess` below zero) stays at "none".
fn solve_exact(fit: &Fitter, excess: &[f64]) -> Result<Vec<f64>, SolveError> {
    let n = fit.targets.len();
    let mut exact: Vec<f64> = vec![0.0; n];
    // Rounds of coordinate descent: one for a lone part (its own minimum), up to 30 for two
    // (a series and shunt pair, which Levenberg-Marquardt then finishes). For three or more,
    // three rounds bring each part into its basin and Levenberg-Marquardt does the rest:
    // thirty rounds of whole-range searches took 18 s for twelve parts, and minutes in a set.
    let rounds = match n {
        1 => 1,
        2 => 30,
        _ => 3,
    };
    fit.search_all(&exact);
    for _round in 0..rounds {
        let mut moved: f64 = 0.0;
        for j in 0..n {
            if excess[j] < -0.005 {
                continue;
            }
            let (lo, hi) = fit.targets[j].placement.range();
            let p = minimise(lo, hi, |p| {
                fit.search(j, p);
                fit.sum_sq()
            })?;
            fit.search(j, p);
            moved = moved.max((p - exact[j]).abs() / (1.0 + p.abs()));
            exact[j] = p;
        }
        if moved < 1e-7 {
            break;
        }
    }
    if n > 1 && exact.iter().zip(excess).all(|(p, e)| *p > 0.0 || *e < -0.005) {
        fit.search_all(&exact);
        let before = fit.sum_sq()?;
        // Levenberg-Marquardt over the logarithms of the search parameters, for fits of
        // several resistors whose effects are coupled (a series and shunt pair): coordinate
        // descent crawls along such a valley.
        let x0: Vec<f64> = exact.iter().map(|p| p.max(1e-12).ln()).collect();
        let residuals = |x: &[f64]| {
            let p: Vec<f64> = x.iter().map(|v| v.exp()).collect();
            fit.search_all(&p);
            fit.residuals().ok()
        };
        let (solved, _report) = LevenbergMarquardt::new().minimize(LogFit::new(&residuals, x0, 0.0));
        let p: Vec<f64> = solved.x.iter().map(|v| v.exp()).collect();
        fit.search_all(&p);
        if fit.sum_sq()? < before {
            exact = p;
        }
    }
    fit.set_all(&exact);
    Ok(exact)
}

/// The trade's warnings about one fit: a fault, a driver a resistor cannot raise, a woofer
/// compensated, a series resistor inside its filter.
#[allow(clippy::too_many_arguments)]
fn warnings_for(t: &Target, d: &Driver, part: &Part, unsolved: &Network, fault: bool, excess: f64, at_input: bool, lpad: bool) -> Vec<Warning> {
    let mut out = Vec::new();
    let warn = |message: String| Warning { subject: t.entry.part.clone(), message };
    let level = t.entry.reference.adjective();
    if fault {
        out.push(warn(format!(
            "With {} fitted, {} plays more than {} dB below its {level} level: that is a fault (a driver shorted or disconnected), not a level to compensate. Check the network's wiring and the driver.",
            t.entry.part, d.name, FAULT_DB
        )));
    }
    if excess < -0.005 {
        out.push(warn(format!(
            "{} plays {:.2} dB below its {level} level even with no resistor: a series resistor cannot raise it. Look for a drifted part or a tired driver, or attenuate the other drivers instead.",
            d.name, -excess
        )));
    }
    if d.role == Role::Woofer {
        out.push(warn(format!(
            "{} compensates the woofer {}. The woofer is the level reference in a passive speaker (common practice): attenuate the other drivers instead, or restore the woofer inductor's DCR.",
            t.entry.part, d.name
        )));
    }
    // An L-pad's series arm belongs beside its shunt arm, at the driver, not at the filter's
    // input.
    if t.placement == Placement::Series && !at_input && !lpad {
        out.push(warn(format!(
            "{} is not at the input of {}'s filter (it sits between {} and {}): a resistor inside the filter moves its tuning; see the crossover shift below. The usual place is ahead of the first part (common practice).",
            t.entry.part,
            d.name,
            unsolved.node_label(&part.between[0]),
            unsolved.node_label(&part.between[1])
        )));
    }
    out
}

/// Solves every `value: auto` resistor of the job, rounds it to its series, and weighs the
/// alternatives.
pub fn plan(cx: &Context) -> Result<Plan, SolveError> {
    let (freqs, unsolved) = (cx.freqs, cx.unsolved);
    let circuit = Circuit::from_network(unsolved, cx.amp)?;
    let targets = targets(cx, &circuit)?;
    let ws = Workspace::new(&circuit);
    let fit = Fitter { circuit: RefCell::new(circuit), ws: RefCell::new(ws), freqs, targets };
    // Every auto starts as "none": a wire link in series, nothing fitted as a shunt. The
    // excess level there is the loudest a driver can play with passive parts, which spots
    // drivers a resistor cannot help.
    let n = fit.targets.len();
    fit.set_all(&vec![0.0; n]);
    let excess: Vec<f64> = (0..n).map(|j| fit.deviations(j).map(|d| mean(&d))).collect::<Result<_, _>>()?;
    // A part that cannot move its driver (it sits in another driver's path) would be "fitted"
    // to whatever the flat search ends on: swept across its whole range alone, it must move
    // the driver's band level by a tenth of a dB at least.
    for (j, t) in fit.targets.iter().enumerate() {
        fit.set(j, t.placement.range().1);
        let far = fit.deviations(j).map(|d| mean(&d))?;
        fit.set(j, 0.0);
        if (far - excess[j]).abs() < UNREACHABLE_DB {
            return Err(SolveError::Unreachable { part: t.entry.part.clone(), driver: t.entry.driver.clone(), moved_db: (far - excess[j]).abs() });
        }
    }
    let exact = solve_exact(&fit, &excess)?;
    let exact_ohm: Vec<f64> = fit.targets.iter().zip(&exact).map(|(t, p)| t.placement.ohm(*p)).collect();
    let exact_dev: Vec<Vec<f64>> = (0..n).map(|j| fit.deviations(j)).collect::<Result<_, _>>()?;
    // Round to the series; a series part under the smallest stocked value is a wire link, a
    // shunt above the largest searched (1 kohm, or its exact value out of the series' reach)
    // is left out.
    let fitted: Vec<f64> = fit
        .targets
        .iter()
        .zip(&exact_ohm)
        .map(|(t, &r)| match t.placement {
            // A pair fitted with one value, decided across its cabinets.
            _ if t.entry.common_ohm.is_some() => t.entry.common_ohm.unwrap_or(r),
            Placement::Series if r < SMALLEST_FITTED_OHM => 0.0,
            Placement::Shunt if !r.is_finite() || r > LARGEST_SHUNT_OHM => f64::INFINITY,
            _ => round_to(t.entry.series, r),
        })
        .collect();
    let set = |t: &Target, r: f64| fit.circuit.borrow_mut().elements[t.element].model = ElementModel::Resistor { r };
    for (t, &r) in fit.targets.iter().zip(&fitted) {
        set(t, r);
    }
    let mut fits = Vec::new();
    let mut warnings = Vec::new();
    for (j, t) in fit.targets.iter().enumerate() {
        let dev = fit.deviations(j)?;
        let (Some(d), Some(part)) = (cx.design.drivers.iter().find(|d| d.name == t.entry.driver), unsolved.part(&t.entry.part)) else { continue };
        let at_input = t.placement == Placement::Series && part.between.contains(&unsolved.input[0]);
        // A stock pair is offered only where it is clearly closer (its residual at most three
        // quarters of the single part's, and 0.05 dB less: below that no listener could tell
        // them apart, common practice), and never beside a value common to several cabinets,
        // which every cabinet must share.
        let single = rms(&dev);
        let pair = if t.placement == Placement::Series && t.entry.common_ohm.is_none() && exact_ohm[j] >= SMALLEST_FITTED_OHM && (fitted[j] / exact_ohm[j] - 1.0).abs() > 0.024 {
            let (a, b, parallel, v) = best_e12_pair(exact_ohm[j]);
            set(t, v);
            let pd = fit.deviations(j)?;
            set(t, fitted[j]);
            let residual_db = rms(&pd);
            (residual_db <= 0.75 * single && residual_db <= single - 0.05).then_some(Pair { a_ohm: a, b_ohm: b, parallel, value_ohm: v, residual_db })
        } else {
            None
        };
        let fault = mean(&dev) < -FAULT_DB;
        let lpad = fit.targets.iter().any(|o| o.entry.driver == t.entry.driver && o.placement == Placement::Shunt);
        warnings.extend(warnings_for(t, d, part, unsolved, fault, excess[j], at_input, lpad));
        let (a, b) = (unsolved.node_label(&part.between[0]), unsolved.node_label(&part.between[1]));
        let placement = match t.placement {
            Placement::Series if at_input => format!("in series at the input of {}'s filter, between node {} and the filter's first part", d.name, unsolved.input[0]),
            Placement::Series => format!("in series between {a} and {b}"),
            Placement::Shunt => format!("across {} (between {a} and {b})", d.name),
        };
        let edge = |i: Option<&usize>| i.and_then(|i| freqs.get(*i)).copied().unwrap_or(f64::NAN);
        fits.push(Fit {
            part: t.entry.part.clone(),
            driver: t.entry.driver.clone(),
            reference: t.entry.reference,
            band_hz: [edge(t.band.first()), edge(t.band.last())],
            series: t.entry.series,
            shunt: t.placement == Placement::Shunt,
            exact_ohm: exact_ohm[j],
            fitted_ohm: fitted[j],
            residual_db: rms(&dev),
            worst_db: worst(&dev),
            exact_residual_db: rms(&exact_dev[j]),
            excess_db: excess[j],
            cannot_raise: excess[j] < -0.005,
            fault,
            at_input,
            keeps_impedance: t.entry.keep_impedance,
            acoustic: t.acoustic,
            pair,
            placement,
        });
    }
    let mut network = unsolved.clone();
    for (t, &r) in fit.targets.iter().zip(&fitted) {
        if let Some(p) = network.part_mut(&t.entry.part) {
            p.value = r;
        }
    }
    let mut plan = Plan { network, fits, alternatives: Vec::new(), warnings };
    alternatives::weigh(cx, &mut plan)?;
    Ok(plan)
}
