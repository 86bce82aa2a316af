//! Compensation: solve every `value: auto` resistor so its driver plays at the reference
//! scenario's level over the band, round it to a standard series, and weigh the
//! alternatives (an E12 pair, an L-pad at the driver, restoring each lost ESR in place).

use std::cell::RefCell;

use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt};
use nalgebra::{DMatrix, DVector, Dyn, VecStorage, U1};
use num_complex::Complex64;

use crate::analysis::eseries::{best_e12_pair, round_to};
use crate::analysis::{crossing, driver_levels, frequency_order, Band, Scene};
use crate::engine::{self, Circuit, ElementModel, SolveError, Workspace};
use crate::model::{ChangeStep, CompensateEntry, ESeries, Job, Network, Part, PartKind, Patch, Role, Scenario};
use crate::units::ohm;

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

#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum AlternativeKind {
    /// An L-pad at the driver in place of the plan's resistors.
    LPad,
    /// Each replaced capacitor of the driver's section given back, in series, the ESR it lost.
    InPlace,
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Alternative {
    pub kind: AlternativeKind,
    pub driver: String,
    /// The parts it fits, with stock values of the plan's series: (role or the capacitor it
    /// goes with, ohm).
    pub parts: Vec<(String, f64)>,
    pub description: String,
    /// RMS and worst deviation from the reference over the driver's band, with those stock values.
    pub residual_db: f64,
    pub worst_db: f64,
    pub crossover_hz: Option<f64>,
    pub reference_crossover_hz: Option<f64>,
    /// The plan's own figures, for the comparison.
    pub plan_crossover_hz: Option<f64>,
    pub plan_residual_db: f64,
    /// How it compares with the plan, in a sentence.
    pub verdict: String,
    /// Why the plan is what it is, in a sentence.
    pub why_plan: String,
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

/// Levels more than this far below their reference are a fault, not a level difference.
pub const FAULT_DB: f64 = 40.0;

struct Target<'a> {
    entry: &'a CompensateEntry,
    element: usize,
    driver_el: usize,
    placement: Placement,
    band: Vec<usize>,
    reference: Vec<f64>,
    /// With `keep_impedance`, the reference scenario's input impedance over the band.
    reference_z: Option<Vec<Complex64>>,
}

/// The circuit under fit, with its auto resistors set from search parameters.
struct Fitter<'a> {
    circuit: RefCell<Circuit>,
    ws: RefCell<Workspace>,
    freqs: &'a [f64],
    targets: Vec<Target<'a>>,
}

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

fn rms(d: &[f64]) -> f64 {
    (d.iter().map(|x| x * x).sum::<f64>() / d.len().max(1) as f64).sqrt()
}

fn worst(d: &[f64]) -> f64 {
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

/// Levenberg-Marquardt (MINPACK's, from the levenberg-marquardt crate) over the logarithms
/// of the search parameters, for fits of several resistors whose effects are coupled (a
/// series and shunt pair): coordinate descent crawls along such a valley.
struct Joint<'a, 'b> {
    fit: &'b Fitter<'a>,
    x: DVector<f64>,
}

impl LeastSquaresProblem<f64, Dyn, Dyn> for Joint<'_, '_> {
    type ResidualStorage = VecStorage<f64, Dyn, U1>;
    type JacobianStorage = VecStorage<f64, Dyn, Dyn>;
    type ParameterStorage = VecStorage<f64, Dyn, U1>;

    fn set_params(&mut self, x: &DVector<f64>) {
        self.x.copy_from(x);
    }

    fn params(&self) -> DVector<f64> {
        self.x.clone()
    }

    fn residuals(&self) -> Option<DVector<f64>> {
        let p: Vec<f64> = self.x.iter().map(|v| v.exp()).collect();
        self.fit.set_all(&p);
        self.fit.residuals().ok().map(DVector::from_vec)
    }

    fn jacobian(&self) -> Option<DMatrix<f64>> {
        let base = self.residuals()?;
        let mut j = DMatrix::zeros(base.len(), self.x.len());
        for k in 0..self.x.len() {
            let h = 1e-6;
            let mut x = self.x.clone();
            x[k] += h;
            let p: Vec<f64> = x.iter().map(|v| v.exp()).collect();
            self.fit.set_all(&p);
            let r = DVector::from_vec(self.fit.residuals().ok()?);
            j.set_column(k, &((r - &base) / h));
        }
        Some(j)
    }
}

pub fn plan(job: &Job, freqs: &[f64], bands: &[Band], designed: &Scene, found: &Scene, unsolved: &Network) -> Result<Plan, SolveError> {
    let mut warnings = Vec::new();
    let circuit = Circuit::from_network(unsolved, &job.amplifier)?;
    let mut targets = Vec::new();
    for entry in &job.compensate {
        let (Some(element), Some(driver_el), Some(di), Some(part)) =
            (circuit.element(&entry.part), circuit.element(&entry.driver), job.network.drivers.iter().position(|d| d.name == entry.driver), unsolved.part(&entry.part))
        else {
            return Err(SolveError::Internal(format!("compensate entry {} names a part or driver the as-left network lacks", entry.part)));
        };
        let reference_scene = if entry.reference == Scenario::AsFound { found } else { designed };
        let band = bands[di].idx.clone();
        let reference = band.iter().map(|&i| reference_scene.db[di][i]).collect();
        let reference_z = entry.keep_impedance.then(|| band.iter().map(|&i| reference_scene.z[i]).collect());
        targets.push(Target { entry, element, driver_el, placement: Placement::of(unsolved, part, &entry.driver), band, reference, reference_z });
    }
    let fit = Fitter { circuit: RefCell::new(circuit), ws: RefCell::new(Workspace::new(&Circuit::from_network(unsolved, &job.amplifier)?)), freqs, targets };
    // Every auto starts as "none": a wire link in series, nothing fitted as a shunt.
    let n = fit.targets.len();
    fit.set_all(&vec![0.0; n]);
    // Excess level with every auto at "none", to spot drivers a resistor cannot help: that
    // is the loudest a driver can play with passive parts.
    let mut excess = Vec::new();
    for j in 0..n {
        excess.push(mean(&fit.deviations(j)?));
    }
    // Joint least squares: coordinate descent over each part's own range (which includes
    // "none"), then Levenberg-Marquardt where several parts are fitted together.
    let mut exact: Vec<f64> = vec![0.0; n];
    for _round in 0..if n > 1 { 30 } else { 1 } {
        let mut moved: f64 = 0.0;
        for j in 0..n {
            if excess[j] < -0.005 {
                continue;
            }
            let (lo, hi) = fit.targets[j].placement.range();
            let p = minimise(lo, hi, |p| {
                fit.set(j, p);
                fit.sum_sq()
            })?;
            fit.set(j, p);
            moved = moved.max((p - exact[j]).abs() / (1.0 + p.abs()));
            exact[j] = p;
        }
        if moved < 1e-7 {
            break;
        }
    }
    if n > 1 && exact.iter().zip(&excess).all(|(p, e)| *p > 0.0 || *e < -0.005) {
        let before = fit.sum_sq()?;
        let x0 = DVector::from_iterator(n, exact.iter().map(|p| p.max(1e-12).ln()));
        let (solved, _report) = LevenbergMarquardt::new().minimize(Joint { fit: &fit, x: x0 });
        let p: Vec<f64> = solved.x.iter().map(|v| v.exp()).collect();
        fit.set_all(&p);
        if fit.sum_sq()? < before {
            exact = p;
        }
        fit.set_all(&exact);
    }
    fit.set_all(&exact);
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
            Placement::Series if r < SMALLEST_FITTED_OHM => 0.0,
            Placement::Shunt if !r.is_finite() || r > LARGEST_SHUNT_OHM => f64::INFINITY,
            _ => round_to(t.entry.series, r),
        })
        .collect();
    for (t, &r) in fit.targets.iter().zip(&fitted) {
        fit.circuit.borrow_mut().elements[t.element].model = ElementModel::Resistor { r };
    }
    let mut fits = Vec::new();
    for (j, t) in fit.targets.iter().enumerate() {
        let dev = fit.deviations(j)?;
        let Some(d) = job.network.drivers.iter().find(|d| d.name == t.entry.driver) else { continue };
        let Some(part) = unsolved.part(&t.entry.part) else { continue };
        let at_input = t.placement == Placement::Series && part.between.contains(&unsolved.input[0]);
        let cannot_raise = excess[j] < -0.005;
        let pair = if t.placement == Placement::Series && exact_ohm[j] >= SMALLEST_FITTED_OHM && (fitted[j] / exact_ohm[j] - 1.0).abs() > 0.024 {
            let (a, b, parallel, v) = best_e12_pair(exact_ohm[j]);
            fit.circuit.borrow_mut().elements[t.element].model = ElementModel::Resistor { r: v };
            let pd = fit.deviations(j)?;
            fit.circuit.borrow_mut().elements[t.element].model = ElementModel::Resistor { r: fitted[j] };
            Some(Pair { a_ohm: a, b_ohm: b, parallel, value_ohm: v, residual_db: rms(&pd) })
        } else {
            None
        };
        let fault = mean(&dev) < -FAULT_DB;
        if fault {
            warnings.push(Warning {
                subject: t.entry.part.clone(),
                message: format!(
                    "With {} fitted, {} plays more than {} dB below its {} level: that is a fault (a driver shorted or disconnected), not a level to compensate. Check the network's wiring and the driver.",
                    t.entry.part,
                    d.name,
                    FAULT_DB,
                    t.entry.reference.adjective()
                ),
            });
        }
        if cannot_raise {
            warnings.push(Warning {
                subject: t.entry.part.clone(),
                message: format!(
                    "{} plays {:.2} dB below its {} level even with no resistor: a series resistor cannot raise it. Look for a drifted part or a tired driver, or attenuate the other drivers instead.",
                    d.name,
                    -excess[j],
                    t.entry.reference.adjective()
                ),
            });
        }
        if d.role == Role::Woofer {
            warnings.push(Warning {
                subject: t.entry.part.clone(),
                message: format!("{} compensates the woofer {}. The woofer is the level reference in a passive speaker (common practice): attenuate the other drivers instead, or restore the woofer inductor's DCR.", t.entry.part, d.name),
            });
        }
        if t.placement == Placement::Series && !at_input {
            warnings.push(Warning {
                subject: t.entry.part.clone(),
                message: format!("{} is not at the input of {}'s filter (it sits between {} and {}): a resistor inside the filter moves its tuning; see the crossover shift below. The usual place is ahead of the first part (common practice).", t.entry.part, d.name, unsolved.node_label(&part.between[0]), unsolved.node_label(&part.between[1])),
            });
        }
        let placement = match t.placement {
            Placement::Series if at_input => format!("in series at the input of {}'s filter, between node {} and the filter's first part", d.name, unsolved.input[0]),
            Placement::Series => format!("in series between {} and {}", unsolved.node_label(&part.between[0]), unsolved.node_label(&part.between[1])),
            Placement::Shunt => format!("across {} (between {} and {})", d.name, unsolved.node_label(&part.between[0]), unsolved.node_label(&part.between[1])),
        };
        fits.push(Fit {
            part: t.entry.part.clone(),
            driver: t.entry.driver.clone(),
            reference: t.entry.reference,
            band_hz: [freqs[t.band[0]], freqs[*t.band.last().unwrap_or(&t.band[0])]],
            series: t.entry.series,
            shunt: t.placement == Placement::Shunt,
            exact_ohm: exact_ohm[j],
            fitted_ohm: fitted[j],
            residual_db: rms(&dev),
            worst_db: worst(&dev),
            exact_residual_db: rms(&exact_dev[j]),
            excess_db: excess[j],
            cannot_raise,
            fault,
            at_input,
            keeps_impedance: t.entry.keep_impedance,
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
    alternatives(job, freqs, bands, designed, found, unsolved, &mut plan)?;
    Ok(plan)
}

/// Residual (RMS, worst) of a driver against its reference over its band, and its crossover
/// with the neighbouring driver, for a candidate network.
struct Judged {
    rms: f64,
    worst: f64,
    crossover: Option<f64>,
}

fn judge(job: &Job, net: &Network, freqs: &[f64], bands: &[Band], reference: &Scene, driver: usize) -> Result<Judged, SolveError> {
    let db = driver_levels(net, job, freqs)?;
    let k = net.drivers.iter().position(|d| d.name == job.network.drivers[driver].name).unwrap_or(driver);
    let dev: Vec<f64> = bands[driver].idx.iter().map(|&i| db[k][i] - reference.db[driver][i]).collect();
    Ok(Judged { rms: rms(&dev), worst: worst(&dev), crossover: neighbour_crossover(freqs, bands, &db, driver) })
}

/// The crossover of `driver` with its nearest neighbour in frequency (the lower one first).
pub fn neighbour_crossover(freqs: &[f64], bands: &[Band], db: &[Vec<f64>], driver: usize) -> Option<f64> {
    let order = frequency_order(bands);
    let pos = order.iter().position(|&i| i == driver)?;
    let centre = |i: usize| (bands[i].lo_hz * bands[i].hi_hz).sqrt();
    if pos > 0 {
        let lo = order[pos - 1];
        return crossing(freqs, &db[lo], &db[driver], centre(lo), centre(driver));
    }
    let hi = *order.get(pos + 1)?;
    crossing(freqs, &db[driver], &db[hi], centre(driver), centre(hi))
}

fn new_resistor(name: &str, a: &str, b: &str, r: f64) -> Part {
    Part::new(name, PartKind::Resistor, [a.into(), b.into()], r, Default::default())
}

/// A level figure for a sentence: three decimals, never "-0.000".
fn db3(v: f64) -> String {
    let t = format!("{:.3}", v);
    if t == "-0.000" {
        "0.000".into()
    } else {
        t
    }
}

/// How an alternative's crossover compares with the plan's, as a clause.
fn crossover_clause(alt: Option<f64>, plan: Option<f64>, reference: Option<f64>, plan_name: &str) -> String {
    match (alt, plan, reference) {
        (Some(a), Some(f), Some(r)) => {
            let (da, df) = ((a - r).abs(), (f - r).abs());
            if (da - df).abs() < 0.5 {
                format!("both keep the crossover within {:.0} Hz of the original {:.0} Hz", da.max(df).max(1.0), r)
            } else if da < df {
                format!("it keeps the crossover closer to the original {:.0} Hz ({:.0} Hz off, against {:.0} Hz with {plan_name})", r, da, df)
            } else {
                format!("it moves the crossover further from the original {:.0} Hz ({:.0} Hz off, against {:.0} Hz with {plan_name})", r, da, df)
            }
        }
        _ => "neither has a crossover with a neighbouring driver inside the sweep to compare".into(),
    }
}

fn alternatives(job: &Job, freqs: &[f64], bands: &[Band], designed: &Scene, found: &Scene, unsolved: &Network, plan: &mut Plan) -> Result<(), SolveError> {
    // Each alternative replaces the plan's auto parts, so it starts from them at "none".
    let mut drivers: Vec<String> = Vec::new();
    for f in &plan.fits {
        if !drivers.contains(&f.driver) && !f.fault {
            drivers.push(f.driver.clone());
        }
    }
    for driver in drivers {
        let fits: Vec<Fit> = plan.fits.iter().filter(|f| f.driver == driver).cloned().collect();
        // An alternative replaces this driver's auto parts only ("none": a wire link in series,
        // nothing as a shunt); the other drivers keep the plan's.
        let mut bare = plan.network.clone();
        for p in bare.parts.iter_mut() {
            if let Some(f) = fits.iter().find(|f| f.part == p.name) {
                p.value = if f.shunt { f64::INFINITY } else { 0.0 };
            }
        }
        let Some(first) = fits.first() else { continue };
        let Some(di) = job.network.drivers.iter().position(|d| d.name == driver) else { continue };
        let reference = if first.reference == Scenario::AsFound { found } else { designed };
        let ref_x = neighbour_crossover(freqs, bands, &reference.db, di);
        let mine = judge(job, &plan.network, freqs, bands, reference, di)?;
        let plan_parts: Vec<&str> = fits.iter().filter(|f| !f.is_none()).map(|f| f.part.as_str()).collect();
        let plan_name = match plan_parts.as_slice() {
            [] => "the plan".to_string(),
            [one] => one.to_string(),
            many => many.join(" and "),
        };
        for f in fits.iter().filter(|f| !f.at_input && !f.shunt && !f.is_none()) {
            if let (Some(a), Some(r)) = (mine.crossover, ref_x) {
                plan.warnings.push(Warning {
                    subject: f.part.clone(),
                    message: format!("With {} where it is, the crossover of {} moves from {:.0} Hz to {:.0} Hz ({:+.0} Hz).", f.part, driver, r, a, a - r),
                });
            }
        }
        let series = first.series;
        // An L-pad at the driver when more than about 3 dB must go (common practice), unless
        // the plan already is one.
        let excess = fits.iter().map(|f| f.excess_db).fold(f64::NEG_INFINITY, f64::max);
        if excess > 3.0 && !fits.iter().any(|f| f.shunt) {
            let Some(dm) = bare.driver(&driver).map(|d| d.model.clone()) else { continue };
            let zd = bands[di].idx.iter().map(|&i| crate::engine::driver::impedance(&dm, freqs[i]).norm()).sum::<f64>() / bands[di].idx.len().max(1) as f64;
            let a = 10f64.powf(-excess / 20.0);
            let (rs, rp) = (round_to(series, zd * (1.0 - a)), round_to(series, zd * a / (1.0 - a)));
            let mut net = bare.clone();
            let Some(d) = net.drivers.iter_mut().find(|d| d.name == driver) else { continue };
            let (plus, minus) = (d.between[0].clone(), d.between[1].clone());
            let mid = format!("{driver}~pad");
            d.between[0] = mid.clone();
            net.parts.push(new_resistor("Rs-pad", &plus, &mid, rs));
            net.parts.push(new_resistor("Rp-pad", &mid, &minus, rp));
            let j = judge(job, &net, freqs, bands, reference, di)?;
            let closer = j.rms + 0.005 < mine.rms;
            plan.alternatives.push(Alternative {
                kind: AlternativeKind::LPad,
                driver: driver.clone(),
                parts: vec![("series".into(), rs), ("shunt".into(), rp)],
                description: format!(
                    "An L-pad at the driver: {} in series and {} across it ({} values for {:.1} dB into about {}), in place of {plan_name}.",
                    ohm(rs),
                    ohm(rp),
                    series.name(),
                    excess,
                    ohm(zd),
                ),
                residual_db: j.rms,
                worst_db: j.worst,
                crossover_hz: j.crossover,
                reference_crossover_hz: ref_x,
                plan_crossover_hz: mine.crossover,
                plan_residual_db: mine.rms,
                verdict: format!(
                    "It matches the {} level within {} dB RMS against {} dB for {plan_name}; {}.",
                    first.reference.adjective(),
                    db3(j.rms),
                    db3(mine.rms),
                    crossover_clause(j.crossover, mine.crossover, ref_x, &plan_name)
                ),
                why_plan: if closer {
                    format!("The plan fits {plan_name} because the job's changes place it there, with fewer parts. The L-pad comes closer; the choice is the technician's.")
                } else {
                    format!("The plan keeps {plan_name}: it matches at least as closely with fewer parts.")
                },
            });
        }
        // Restoring in place: each replaced capacitor of this driver's own section gets back,
        // in series, the loss it lost, as a stock value.
        let section = unsolved.section(&driver);
        // Two parts in series: they share a node nothing else touches.
        let in_series = |a: &str, b: &str| {
            let (Some(pa), Some(pb)) = (plan.network.part(a), plan.network.part(b)) else { return false };
            pa.between.iter().any(|n| pb.between.contains(n) && plan.network.branches().filter(|(_, bt)| bt.contains(n)).count() == 2)
        };
        let centre = (first.band_hz[0] * first.band_hz[1]).sqrt();
        let mut net = bare.clone();
        let mut parts = Vec::new();
        let mut frequency_dependent = false;
        for c in &job.changes {
            let ChangeStep::Replace { target, with: Patch::Part(_) } = &c.step else { continue };
            if !section.contains(&target.as_str()) || parts.iter().any(|(p, _): &(String, f64)| p == target) {
                continue;
            }
            // A capacitor the job's changes already gave a series resistor is restored already.
            let restored = plan
                .network
                .parts
                .iter()
                .any(|r| r.kind == PartKind::Resistor && unsolved.part(&r.name).is_some() && job.network.part(&r.name).is_none() && in_series(&r.name, target));
            if restored {
                continue;
            }
            let (Some(old), Some(new)) = (reference.network.part(target), net.part(target).cloned()) else { continue };
            if old.kind != PartKind::Capacitor {
                continue;
            }
            frequency_dependent |= old.tan_delta.is_some() || new.tan_delta.is_some();
            let loss = |p: &Part| ElementModel::from_part(p).loss_ohm(centre);
            let lost = loss(old) - loss(&new);
            if lost < SMALLEST_FITTED_OHM {
                continue;
            }
            let stock = round_to(series, lost);
            let node = format!("{target}~esr");
            let a = new.between[0].clone();
            if let Some(p) = net.part_mut(target) {
                p.between[0] = node.clone();
            }
            net.parts.push(new_resistor(&format!("{target}-esr"), &a, &node, stock));
            parts.push((target.clone(), stock));
        }
        // Restoring in place is the plan itself when each of its resistors equals a fitted one
        // already in series with the same capacitor.
        let same_as_plan = parts.len() == fits.iter().filter(|f| !f.is_none()).count()
            && parts.iter().all(|(cap, r)| fits.iter().any(|f| (f.fitted_ohm - r).abs() < 1e-9 && in_series(&f.part, cap)));
        if !parts.is_empty() && !same_as_plan {
            let j = judge(job, &net, freqs, bands, reference, di)?;
            let n = parts.len();
            let closer = j.rms + 0.005 < mine.rms;
            let same = (j.rms - mine.rms).abs() <= 0.005;
            plan.alternatives.push(Alternative {
                kind: AlternativeKind::InPlace,
                driver: driver.clone(),
                parts: parts.clone(),
                description: format!(
                    "Restoring in place: {}, {} the ESR {} lost{} ({} values).",
                    parts.iter().map(|(p, r)| format!("{} in series with {p}", ohm(*r))).collect::<Vec<_>>().join(", "),
                    if n == 1 { "equal to" } else { "each equal to" },
                    if n == 1 { "the new part" } else { "its new part" },
                    if frequency_dependent { format!(" at {}, the band's centre (a tan δ loss changes with frequency)", crate::units::hz(Some(centre))) } else { String::new() },
                    series.name()
                ),
                residual_db: j.rms,
                worst_db: j.worst,
                crossover_hz: j.crossover,
                reference_crossover_hz: ref_x,
                plan_crossover_hz: mine.crossover,
                plan_residual_db: mine.rms,
                verdict: format!(
                    "It {} ({} dB RMS against {} dB for {plan_name}); {}.",
                    if same {
                        format!("matches the {} level as closely as the plan", first.reference.adjective())
                    } else if closer {
                        format!("comes closer to the {} level", first.reference.adjective())
                    } else {
                        format!("is further from the {} level", first.reference.adjective())
                    },
                    db3(j.rms),
                    db3(mine.rms),
                    crossover_clause(j.crossover, mine.crossover, ref_x, &plan_name)
                ),
                why_plan: if closer {
                    format!(
                        "The plan fits {plan_name} because the job's changes place it there: {} against {n} resistor{} to mount, for a level difference under {} dB. Restoring in place comes closer; the choice is the technician's.",
                        if plan_parts.len() == 1 { "one part".to_string() } else { format!("{} parts", plan_parts.len()) },
                        if n == 1 { "" } else { "s" },
                        db3((mine.rms - j.rms).max(0.0))
                    )
                } else {
                    format!("The plan keeps {plan_name}: it matches at least as closely with {}.", if plan_parts.len() <= n { "no more parts" } else { "a simpler board" })
                },
            });
        }
    }
    Ok(())
}
