//! The alternatives to a compensation plan, weighed against it: an L-pad at the driver when
//! several dB must go, and restoring in place (each replaced capacitor of the driver's own
//! section given back, in series, the ESR it lost), each with stock values, its residual, its
//! crossover and a sentence on why the plan is what it is.

use crate::analysis::compensate::{rms, worst, Context, Fit, Plan, Warning, SMALLEST_FITTED_OHM};
use crate::analysis::eseries::round_to;
use crate::analysis::{crossing, driver_levels, frequency_order, Band, Scene};
use crate::engine::{ElementModel, SolveError};
use crate::model::{ChangeStep, Network, Part, PartKind, Patch, Scenario};
use crate::units::ohm;

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

/// Residual (RMS, worst) of a driver against its reference over its band, and its crossover
/// with the neighbouring driver, for a candidate network.
struct Judged {
    rms: f64,
    worst: f64,
    crossover: Option<f64>,
}

fn judge(cx: &Context, net: &Network, reference: &Scene, driver: usize) -> Result<Judged, SolveError> {
    let (freqs, bands) = (cx.freqs, cx.bands);
    let db = driver_levels(net, cx.amp, freqs)?;
    let name = cx.design.drivers.get(driver).map(|d| d.name.as_str()).unwrap_or_default();
    let k = net.drivers.iter().position(|d| d.name == name).unwrap_or(driver);
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

/// The alternatives to the plan for each driver it compensates, weighed against it.
pub fn weigh(cx: &Context, plan: &mut Plan) -> Result<(), SolveError> {
    let (freqs, bands, designed, found, unsolved) = (cx.freqs, cx.bands, cx.designed, cx.found, cx.unsolved);
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
        let Some(di) = cx.design.drivers.iter().position(|d| d.name == driver) else { continue };
        let reference = if first.reference == Scenario::AsFound { found } else { designed };
        let ref_x = neighbour_crossover(freqs, bands, &reference.db, di);
        let mine = judge(cx, &plan.network, reference, di)?;
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
            let j = judge(cx, &net, reference, di)?;
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
        for c in cx.changes {
            let ChangeStep::Replace { target, with: Patch::Part(_) } = &c.step else { continue };
            if !section.contains(&target.as_str()) || parts.iter().any(|(p, _): &(String, f64)| p == target) {
                continue;
            }
            // A capacitor the job's changes already gave a series resistor is restored already.
            let restored = plan
                .network
                .parts
                .iter()
                .any(|r| r.kind == PartKind::Resistor && unsolved.part(&r.name).is_some() && cx.design.part(&r.name).is_none() && in_series(&r.name, target));
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
            let j = judge(cx, &net, reference, di)?;
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
