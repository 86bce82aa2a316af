//! Compensation: solve every `value: auto` resistor so its driver plays at the reference
//! scenario's level over the band, round it to a standard series, and weigh the
//! alternatives (an E12 pair, an L-pad at the driver, restoring each lost ESR in place).

use crate::analysis::eseries::{best_e12_pair, round_to};
use crate::analysis::{crossing, driver_levels, frequency_order, Band, Scene};
use crate::engine::{self, Circuit, ElementModel, SolveError, Workspace};
use crate::model::{ChangeStep, CompensateEntry, ESeries, Job, Network, Part, PartKind, Patch, Role, Scenario};

/// Below this the exact value is no resistor at all (common practice: crossover resistors
/// under 0.1 ohm are not stocked, and wiring is of that order).
pub const SMALLEST_FITTED_OHM: f64 = 0.05;

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
    pub series: &'static str,
    pub exact_ohm: f64,
    pub fitted_ohm: f64,
    /// RMS and worst deviation (dB) from the reference over the band, with the fitted value.
    pub residual_db: f64,
    pub worst_db: f64,
    /// RMS residual with the exact value, for comparison.
    pub exact_residual_db: f64,
    /// How much louder than the reference the driver plays with no resistor (dB).
    pub excess_db: f64,
    pub cannot_raise: bool,
    pub at_input: bool,
    pub pair: Option<Pair>,
    /// Where it goes, in words.
    pub placement: String,
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Alternative {
    /// "l-pad" or "in-place".
    pub kind: &'static str,
    pub driver: String,
    pub parts: Vec<(String, f64)>,
    pub description: String,
    pub residual_db: f64,
    pub worst_db: f64,
    pub crossover_hz: Option<f64>,
    pub reference_crossover_hz: Option<f64>,
    pub input_fix_crossover_hz: Option<f64>,
    pub input_fix_residual_db: f64,
    pub verdict: String,
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

struct Target<'a> {
    entry: &'a CompensateEntry,
    element: usize,
    driver_el: usize,
    band: Vec<usize>,
    reference: Vec<f64>,
}

fn level_db(c: &Circuit, ws: &mut Workspace, f: f64, driver_el: usize) -> Result<f64, SolveError> {
    engine::solve_point(c, f, ws)?;
    Ok(engine::db(ws.across(c, driver_el)))
}

fn deviations(c: &Circuit, ws: &mut Workspace, freqs: &[f64], t: &Target) -> Result<Vec<f64>, SolveError> {
    t.band.iter().zip(&t.reference).map(|(&i, r)| Ok(level_db(c, ws, freqs[i], t.driver_el)? - r)).collect()
}

fn sum_sq(c: &Circuit, ws: &mut Workspace, freqs: &[f64], targets: &[Target]) -> Result<f64, SolveError> {
    let mut s = 0.0;
    for t in targets {
        s += deviations(c, ws, freqs, t)?.iter().map(|d| d * d).sum::<f64>();
    }
    Ok(s)
}

fn set_r(c: &mut Circuit, k: usize, r: f64) {
    c.elements[k].model = ElementModel::Resistor { r };
}

fn rms(d: &[f64]) -> f64 {
    (d.iter().map(|x| x * x).sum::<f64>() / d.len().max(1) as f64).sqrt()
}

fn worst(d: &[f64]) -> f64 {
    d.iter().cloned().fold(0.0, |a: f64, b| if b.abs() > a.abs() { b } else { a })
}

/// 1-D minimisation of f over [0, 1000] ohm: a log grid to find the basin, then golden
/// section inside it. The level error is smooth and single-valleyed in R for a series
/// resistor, but the grid keeps it safe when it is not.
fn minimise(mut f: impl FnMut(f64) -> Result<f64, SolveError>) -> Result<f64, SolveError> {
    let mut grid = vec![0.0];
    grid.extend((0..=60).map(|k| 1e-3 * 10f64.powf(k as f64 / 10.0)));
    let vals: Vec<f64> = grid.iter().map(|r| f(*r)).collect::<Result<_, _>>()?;
    let best = (0..grid.len()).min_by(|a, b| vals[*a].partial_cmp(&vals[*b]).unwrap_or(std::cmp::Ordering::Equal)).unwrap_or(0);
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
    Ok(if f(0.0)? <= f(x)? { 0.0 } else { x })
}

pub fn plan(job: &Job, freqs: &[f64], bands: &[Band], designed: &Scene, found: &Scene, unsolved: &Network) -> Result<Plan, SolveError> {
    let mut warnings = Vec::new();
    let mut circuit = Circuit::from_network(unsolved, &job.amplifier)?;
    let mut ws = Workspace::new(&circuit);
    let autos: Vec<&Part> = unsolved.parts.iter().filter(|p| p.auto_value).collect();
    let mut targets = Vec::new();
    for entry in &job.compensate {
        let Some(element) = circuit.element(&entry.part) else { continue };
        let di = job.network.drivers.iter().position(|d| d.name == entry.driver).expect("validated driver");
        let reference_scene = if entry.reference == Scenario::AsFound { found } else { designed };
        let band = bands[di].idx.clone();
        let reference = band.iter().map(|&i| reference_scene.db[di][i]).collect();
        let driver_el = circuit.element(&entry.driver).expect("driver element");
        targets.push(Target { entry, element, driver_el, band, reference });
    }
    // Autos without an entry cannot occur (validation); start every auto at 0 ohm.
    for p in &autos {
        if let Some(k) = circuit.element(&p.name) {
            set_r(&mut circuit, k, 0.0);
        }
    }
    // Excess level at R = 0 for each target, to spot drivers a resistor cannot help.
    let mut excess = Vec::new();
    for t in &targets {
        let d = deviations(&circuit, &mut ws, freqs, t)?;
        excess.push(d.iter().sum::<f64>() / d.len().max(1) as f64);
    }
    // Joint least squares by coordinate descent; one pass suffices for one auto part.
    let mut exact: Vec<f64> = vec![0.0; targets.len()];
    for _round in 0..if targets.len() > 1 { 30 } else { 1 } {
        let mut moved: f64 = 0.0;
        for (j, t) in targets.iter().enumerate() {
            if excess[j] < -0.005 {
                continue;
            }
            let k = t.element;
            let r = minimise(|r| {
                set_r(&mut circuit, k, r);
                sum_sq(&circuit, &mut ws, freqs, &targets)
            })?;
            set_r(&mut circuit, k, r);
            moved = moved.max((r - exact[j]).abs());
            exact[j] = r;
        }
        if moved < 1e-6 {
            break;
        }
    }
    let exact_dev: Vec<Vec<f64>> = targets.iter().map(|t| deviations(&circuit, &mut ws, freqs, t)).collect::<Result<_, _>>()?;
    let fitted: Vec<f64> = targets.iter().zip(&exact).map(|(t, &r)| if r < SMALLEST_FITTED_OHM { 0.0 } else { round_to(t.entry.series, r) }).collect();
    for (t, &r) in targets.iter().zip(&fitted) {
        set_r(&mut circuit, t.element, r);
    }
    let mut fits = Vec::new();
    for (j, t) in targets.iter().enumerate() {
        let dev = deviations(&circuit, &mut ws, freqs, t)?;
        let d = &job.network.drivers[job.network.drivers.iter().position(|d| d.name == t.entry.driver).unwrap_or(0)];
        let part = unsolved.part(&t.entry.part).expect("auto part");
        let at_input = part.between.contains(&unsolved.input[0]);
        let cannot_raise = excess[j] < -0.005;
        let pair = if exact[j] >= SMALLEST_FITTED_OHM && (fitted[j] / exact[j] - 1.0).abs() > 0.024 {
            let (a, b, parallel, v) = best_e12_pair(exact[j]);
            set_r(&mut circuit, t.element, v);
            let pd = deviations(&circuit, &mut ws, freqs, t)?;
            set_r(&mut circuit, t.element, fitted[j]);
            Some(Pair { a_ohm: a, b_ohm: b, parallel, value_ohm: v, residual_db: rms(&pd) })
        } else {
            None
        };
        if cannot_raise {
            warnings.push(Warning {
                subject: t.entry.part.clone(),
                message: format!(
                    "{} plays {:.2} dB below its {} level even with no resistor: a series resistor cannot raise it. Look for a drifted part or a tired driver, or attenuate the other drivers instead.",
                    d.name,
                    -excess[j],
                    t.entry.reference.label()
                ),
            });
        }
        if d.role == Role::Woofer {
            warnings.push(Warning {
                subject: t.entry.part.clone(),
                message: format!("{} compensates the woofer {}. The woofer is the level reference in a passive speaker (common practice): attenuate the other drivers instead, or restore the woofer inductor's DCR.", t.entry.part, d.name),
            });
        }
        if !at_input {
            warnings.push(Warning {
                subject: t.entry.part.clone(),
                message: format!("{} is not at the input of {}'s filter (it sits between {} and {}): a resistor inside the filter moves its tuning; see the crossover shift below. The usual place is ahead of the first part (common practice).", t.entry.part, d.name, part.between[0], part.between[1]),
            });
        }
        let placement = if at_input {
            format!("in series at the input of {}'s filter, between node {} and the filter's first part", d.name, unsolved.input[0])
        } else {
            format!("between {} and {}", display_node(&part.between[0]), display_node(&part.between[1]))
        };
        fits.push(Fit {
            part: t.entry.part.clone(),
            driver: t.entry.driver.clone(),
            reference: t.entry.reference,
            band_hz: [freqs[t.band[0]], freqs[*t.band.last().unwrap_or(&t.band[0])]],
            series: t.entry.series.name(),
            exact_ohm: exact[j],
            fitted_ohm: fitted[j],
            residual_db: rms(&dev),
            worst_db: worst(&dev),
            exact_residual_db: rms(&exact_dev[j]),
            excess_db: excess[j],
            cannot_raise,
            at_input,
            pair,
            placement,
        });
    }
    let mut network = unsolved.clone();
    for (t, &r) in targets.iter().zip(&fitted) {
        if let Some(p) = network.part_mut(&t.entry.part) {
            p.value = r;
        }
    }
    let mut plan = Plan { network, fits, alternatives: Vec::new(), warnings };
    alternatives(job, freqs, bands, designed, found, unsolved, &mut plan)?;
    Ok(plan)
}

/// Inserted nodes are named `R9~IN`; show them as "R9's far side".
pub fn display_node(n: &str) -> String {
    match n.split_once('~') {
        Some((part, _)) => format!("{part}'s far side"),
        None => n.to_string(),
    }
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

fn shift_text(alt: Option<f64>, fix: Option<f64>, reference: Option<f64>) -> String {
    match (alt, fix, reference) {
        (Some(a), Some(f), Some(r)) => {
            let (da, df) = ((a - r).abs(), (f - r).abs());
            if (da - df).abs() < 0.5 {
                format!("both keep the crossover within {:.0} Hz of the original {:.0} Hz", da.max(df).max(1.0), r)
            } else if da < df {
                format!("keeps the crossover better: {:.0} Hz from the original {:.0} Hz against {:.0} Hz for the input resistor", da, r, df)
            } else {
                format!("moves the crossover more: {:.0} Hz from the original {:.0} Hz against {:.0} Hz for the input resistor", da, r, df)
            }
        }
        _ => "no crossover with a neighbouring driver inside the sweep to compare".into(),
    }
}

fn alternatives(job: &Job, freqs: &[f64], bands: &[Band], designed: &Scene, found: &Scene, unsolved: &Network, plan: &mut Plan) -> Result<(), SolveError> {
    let mut zeroed = unsolved.clone();
    for p in zeroed.parts.iter_mut().filter(|p| p.auto_value) {
        p.value = 0.0;
    }
    for fit in plan.fits.clone() {
        let di = job.network.drivers.iter().position(|d| d.name == fit.driver).expect("driver");
        let reference = if fit.reference == Scenario::AsFound { found } else { designed };
        let ref_x = neighbour_crossover(freqs, bands, &reference.db, di);
        let fix = judge(job, &plan.network, freqs, bands, reference, di)?;
        if !fit.at_input {
            if let (Some(a), Some(r)) = (fix.crossover, ref_x) {
                plan.warnings.push(Warning {
                    subject: fit.part.clone(),
                    message: format!("With {} where it is, the crossover of {} moves from {:.0} Hz to {:.0} Hz ({:+.0} Hz).", fit.part, fit.driver, r, a, a - r),
                });
            }
        }
        // An L-pad at the driver when more than about 3 dB must go (common practice).
        if fit.excess_db > 3.0 {
            let dm = &zeroed.drivers.iter().find(|d| d.name == fit.driver).expect("driver").model;
            let zd = bands[di].idx.iter().map(|&i| crate::engine::driver::impedance(dm, freqs[i]).norm()).sum::<f64>() / bands[di].idx.len().max(1) as f64;
            let a = 10f64.powf(-fit.excess_db / 20.0);
            let series = ESeries::E24;
            let (rs, rp) = (round_to(series, zd * (1.0 - a)), round_to(series, zd * a / (1.0 - a)));
            let mut net = zeroed.clone();
            let d = net.drivers.iter_mut().find(|d| d.name == fit.driver).expect("driver");
            let plus = d.between[0].clone();
            let minus = d.between[1].clone();
            let mid = format!("{}~pad", fit.driver);
            d.between[0] = mid.clone();
            net.parts.push(new_resistor("Rs-pad", &plus, &mid, rs));
            net.parts.push(new_resistor("Rp-pad", &mid, &minus, rp));
            let j = judge(job, &net, freqs, bands, reference, di)?;
            plan.alternatives.push(Alternative {
                kind: "l-pad",
                driver: fit.driver.clone(),
                parts: vec![("series".into(), rs), ("shunt".into(), rp)],
                description: format!(
                    "an L-pad at {}: {} ohm in series and {} ohm across the driver (for {:.1} dB into about {:.1} ohm), in place of {}",
                    fit.driver,
                    crate::units::trim_number(rs, 3),
                    crate::units::trim_number(rp, 3),
                    fit.excess_db,
                    zd,
                    fit.part
                ),
                residual_db: j.rms,
                worst_db: j.worst,
                crossover_hz: j.crossover,
                reference_crossover_hz: ref_x,
                input_fix_crossover_hz: fix.crossover,
                input_fix_residual_db: fix.rms,
                verdict: shift_text(j.crossover, fix.crossover, ref_x),
            });
        }
        // Restoring in place: each replaced capacitor gets back, in series, the loss it lost.
        let mut net = zeroed.clone();
        let mut parts = Vec::new();
        let centre = (fit.band_hz[0] * fit.band_hz[1]).sqrt();
        for c in &job.changes {
            let ChangeStep::Replace { target, with: Patch::Part(_) } = &c.step else { continue };
            let (Some(old), Some(new)) = (reference.network.part(target), net.part(target).cloned()) else { continue };
            if old.kind != PartKind::Capacitor {
                continue;
            }
            let lost = old.loss_ohm(centre) - new.loss_ohm(centre);
            if lost <= 1e-6 {
                continue;
            }
            let name = format!("{target}-esr");
            let node = format!("{target}~esr");
            let a = new.between[0].clone();
            if let Some(p) = net.part_mut(target) {
                p.between[0] = node.clone();
            }
            net.parts.push(new_resistor(&name, &a, &node, lost));
            parts.push((target.clone(), lost));
        }
        if !parts.is_empty() {
            let j = judge(job, &net, freqs, bands, reference, di)?;
            let better = if (j.rms - fix.rms).abs() < 0.005 {
                "matches the original as closely as the input resistor".to_string()
            } else if j.rms < fix.rms {
                format!("is closer to the original: {:.3} dB RMS against {:.3} dB", j.rms, fix.rms)
            } else {
                format!("is further from the original: {:.3} dB RMS against {:.3} dB", j.rms, fix.rms)
            };
            plan.alternatives.push(Alternative {
                kind: "in-place",
                driver: fit.driver.clone(),
                parts: parts.clone(),
                description: format!(
                    "restoring in place: {} (exact values; rebuilds the original network when ESR is constant)",
                    parts.iter().map(|(p, r)| format!("{} ohm in series with {p}", crate::units::trim_number(*r, 3))).collect::<Vec<_>>().join(", ")
                ),
                residual_db: j.rms,
                worst_db: j.worst,
                crossover_hz: j.crossover,
                reference_crossover_hz: ref_x,
                input_fix_crossover_hz: fix.crossover,
                input_fix_residual_db: fix.rms,
                verdict: format!("{better}; {}", shift_text(j.crossover, fix.crossover, ref_x)),
            });
        }
    }
    Ok(())
}
