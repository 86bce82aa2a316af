//! Diagnosis from a sweep at the terminals: the values of suspect parts and driver parameters
//! estimated by nonlinear least squares on log |Z| and phase (Levenberg-Marquardt, MINPACK's,
//! from the levenberg-marquardt crate, over the logarithms of the parameters so they stay
//! positive), each with an approximate 95 % interval from the Jacobian at the solution (the
//! covariance (J'J)^-1 scaled by the residual variance) and a judgement of whether the sweep
//! can tell it at all. Also Small's model fitted to a driver's own impedance sweep.

use levenberg_marquardt::LevenbergMarquardt;
use nalgebra::DMatrix;

use crate::analysis::logfit::{jacobian, LogFit};

use crate::analysis::input_impedances;
use crate::model::{Amplifier, DriverModel, ImpedanceTable, Network, Resonance, VoiceCoilInductance};
use crate::units::{format_si, Quantity};

/// The weights of the residuals: a rig good to 1 % in |Z| and 1 degree in phase (common
/// practice for a sound card with a sense resistor). They set how |Z| and phase count
/// against each other; the intervals are scaled by the residual actually found.
pub const Z_SIGMA: f64 = 0.01;
pub const PHASE_SIGMA_DEG: f64 = 1.0;
/// 1.96: the two-sided 95 % point of the normal distribution.
const Z95: f64 = 1.959_964;
/// A fit whose residual is this many times a rig's noise does not describe the sweep.
pub const MISFIT: f64 = 5.0;
/// A weak pull of each logarithm toward its start (this weight per factor of e), so a
/// parameter the sweep cannot see stays where it was rather than wandering off.
const PRIOR: f64 = 0.03;
/// Two estimates correlated beyond this cannot be told apart by the sweep.
pub const CORRELATION_LIMIT: f64 = 0.95;
/// An estimate whose 95 % interval spans more than this factor either way is not a finding.
const SPAN_LIMIT: f64 = 2.0;

pub use crate::model::terminals::{all_params, params_named, params_of, Param};

/// One estimate: the value, its 95 % interval, and whether the sweep can tell it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Estimate {
    pub part: String,
    pub field: String,
    /// What the job holds for it as found (the bench reading, else the design's value).
    pub start: f64,
    pub value: f64,
    pub low: f64,
    pub high: f64,
    pub identifiable: bool,
    /// Why not, when it is not: its effect is below the residual, or it moves with another.
    pub reason: String,
    /// The largest change a 10 % change in it makes at any point of the sweep, in the units
    /// of the residual (1 = 1 % of |Z| or 1 degree).
    pub effect: f64,
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Correlated {
    pub a: String,
    pub b: String,
    pub r: f64,
}

/// The statistics of a fit at its solution, in the logarithms of the parameters.
struct Stats {
    /// RMS of the weighted residuals (1 = the noise of a 1 % / 1 degree rig).
    rms: f64,
    /// Standard deviations of the logarithms (infinite where the data cannot fix one).
    sd: Vec<f64>,
    corr: DMatrix<f64>,
    /// The largest change of any weighted residual a 10 % change in each parameter makes.
    effect: Vec<f64>,
    /// The same for |Z| (per cent) and phase (degrees) apart.
    split: Vec<(f64, f64)>,
}

fn stats(residuals: &[f64], j: &DMatrix<f64>) -> Stats {
    let (m, n) = (residuals.len(), j.ncols());
    let ssr: f64 = residuals.iter().map(|r| r * r).sum();
    let dof = (m.saturating_sub(n)).max(1) as f64;
    let s2 = ssr / dof;
    let jtj = j.transpose() * j;
    // Rows alternate |Z| (in per cent) and phase (in degrees), both in the weights' units.
    let most = |k: usize, phase: usize| j.column(k).iter().skip(phase).step_by(2).fold(0.0f64, |a, v| a.max(v.abs())) * 1.1f64.ln();
    let split: Vec<(f64, f64)> = (0..n).map(|k| (most(k, 0), most(k, 1))).collect();
    let effect: Vec<f64> = split.iter().map(|(z, p)| z.max(*p)).collect();
    // The inverse of J'J, in the columns' own scale so a badly scaled column does not look
    // singular; a pseudo-inverse where it is singular, with infinite spread for the blind.
    let scale: Vec<f64> = (0..n).map(|k| jtj[(k, k)].sqrt()).collect();
    let mut scaled = jtj.clone();
    for a in 0..n {
        for b in 0..n {
            let d = scale[a] * scale[b];
            scaled[(a, b)] = if d > 0.0 {
                jtj[(a, b)] / d
            } else if a == b {
                1.0
            } else {
                0.0
            };
        }
    }
    let inv = scaled.clone().try_inverse().filter(|i| i.iter().all(|v| v.is_finite())).unwrap_or_else(|| scaled.pseudo_inverse(1e-12).unwrap_or_else(|_| DMatrix::zeros(n, n)));
    let mut sd = vec![f64::INFINITY; n];
    let mut corr = DMatrix::zeros(n, n);
    for a in 0..n {
        if scale[a] > 0.0 && inv[(a, a)] > 0.0 {
            sd[a] = (s2 * inv[(a, a)]).sqrt() / scale[a];
        }
        for b in 0..n {
            let d = (inv[(a, a)] * inv[(b, b)]).sqrt();
            corr[(a, b)] = if d > 0.0 { inv[(a, b)] / d } else { 0.0 };
        }
    }
    Stats { rms: (ssr / m.max(1) as f64).sqrt(), sd, corr, effect, split }
}

/// Runs the fit from `start` (the parameters' values) and returns the values at the solution
/// with the data's residuals and Jacobian there.
/// A fit's solution: the logarithms, the data's residuals and Jacobian there, and whether
/// it settled.
type Solution = (Vec<f64>, Vec<f64>, DMatrix<f64>, bool);

fn solve(residuals: &dyn Fn(&[f64]) -> Option<Vec<f64>>, start: &[f64]) -> Result<Solution, String> {
    let x0: Vec<f64> = start.iter().map(|v| v.ln()).collect();
    let problem = LogFit::new(residuals, x0, PRIOR);
    let (done, report) = LevenbergMarquardt::new().with_patience(200).minimize(problem);
    if !report.termination.was_successful() && report.number_of_evaluations == 0 {
        return Err(format!("the fit did not start: {:?}", report.termination));
    }
    let x: Vec<f64> = done.x.iter().copied().collect();
    let r = residuals(&x).ok_or("the network cannot be solved at the fitted values")?;
    let j = jacobian(residuals, &x).ok_or("the network cannot be solved near the fitted values")?;
    Ok((x, r, j, report.termination.was_successful()))
}

/// The weighted residuals of a predicted impedance against a sweep: log |Z| over 1 %, phase
/// over 1 degree, point by point.
fn weigh(pred: impl Iterator<Item = num_complex::Complex64>, sweep: &ImpedanceTable, idx: &[usize]) -> Vec<f64> {
    let mut r = Vec::with_capacity(2 * idx.len());
    for (z, &i) in pred.zip(idx) {
        r.push((z.norm() / sweep.ohm[i]).ln() / Z_SIGMA);
        r.push(crate::engine::wrap_deg(z.arg().to_degrees() - sweep.phase_deg[i]) / PHASE_SIGMA_DEG);
    }
    r
}

/// Estimates, intervals and identifiability from a fit's solution.
fn judge(names: &[Param], start: &[f64], x: &[f64], r: &[f64], j: &DMatrix<f64>) -> (Vec<Estimate>, Vec<Correlated>, f64) {
    let st = stats(r, j);
    let n = names.len();
    let mut correlated = Vec::new();
    for a in 0..n {
        for b in a + 1..n {
            if st.corr[(a, b)].abs() > CORRELATION_LIMIT && st.sd[a].is_finite() && st.sd[b].is_finite() {
                correlated.push(Correlated { a: names[a].name(), b: names[b].name(), r: st.corr[(a, b)] });
            }
        }
    }
    let estimates = (0..n)
        .map(|k| {
            let value = x[k].exp();
            let spread = Z95 * st.sd[k];
            // A spread the data cannot bound is shown as a factor of a million either way (and
            // the estimate is not identifiable), so no infinity reaches a table or the JSON.
            let spread = spread.min(1e6f64.ln());
            let (low, high) = ((x[k] - spread).exp(), (x[k] + spread).exp());
            let partner = correlated.iter().find(|c| c.a == names[k].name() || c.b == names[k].name());
            let reason = if st.effect[k] < st.rms {
                format!(
                    "its effect on the terminal impedance is below the sweep's residual (a 10 % change in it moves |Z| by at most {:.2} % or the phase by {:.2} degrees, against a residual of {:.2}): measure it on the bench",
                    st.split[k].0, st.split[k].1, st.rms
                )
            } else if spread > SPAN_LIMIT.ln() {
                // The interval comes from the full covariance, so it already widens for a
                // parameter that moves with another: a tight one is told apart whatever the
                // correlation, and a wide one names its partner.
                match partner {
                    Some(c) => {
                        let other = if c.a == names[k].name() { &c.b } else { &c.a };
                        format!("it cannot be told apart from {other} (correlation {:+.3}; the sweep fixes it only to within more than a factor of two): measure one of them on the bench", c.r)
                    }
                    None => "the sweep fixes it only to within more than a factor of two: measure it on the bench".to_string(),
                }
            } else {
                String::new()
            };
            Estimate {
                part: names[k].part.clone(),
                field: names[k].field.clone(),
                start: start[k],
                value,
                low,
                high,
                identifiable: reason.is_empty(),
                reason: if reason.is_empty() { String::new() } else { format!("not identifiable from this sweep: {reason}") },
                effect: st.effect[k],
            }
        })
        .collect();
    (estimates, correlated, st.rms)
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Diagnosis {
    pub file: String,
    pub points: usize,
    pub from_hz: f64,
    pub to_hz: f64,
    /// RMS of the weighted residuals at the solution (1 = the noise of a 1 % / 1 degree rig).
    pub residual: f64,
    /// Whether the fit settled (MINPACK's tests on the sums of squares and the step).
    pub converged: bool,
    /// The same residual as RMS |Z| error in per cent and phase error in degrees.
    pub residual_z_pct: f64,
    pub residual_phase_deg: f64,
    pub estimates: Vec<Estimate>,
    pub correlated: Vec<Correlated>,
    /// The finding in a sentence: which part most likely drifted and by how much, or that
    /// the sweep cannot tell.
    pub sentence: String,
    pub basis: String,
}

/// Estimates `params` of `network` (the speaker as found) from `sweep`, at the sweep's points
/// from `lo` to `hi`.
pub fn diagnose(network: &Network, amp: &Amplifier, sweep: &ImpedanceTable, params: &[Param], (lo, hi): (f64, f64)) -> Result<Diagnosis, String> {
    let idx: Vec<usize> = (0..sweep.freq_hz.len()).filter(|&i| sweep.freq_hz[i] >= lo * (1.0 - 1e-9) && sweep.freq_hz[i] <= hi * (1.0 + 1e-9)).collect();
    if idx.len() < 3 {
        return Err(format!("fewer than three of {}'s points fall inside the analysis sweep", sweep.file));
    }
    let params: Vec<Param> = params.iter().filter(|p| p.get(network).is_some_and(|v| v > 0.0)).cloned().collect();
    if params.is_empty() {
        return Err("none of the parameters named can be estimated (each needs a value above zero)".into());
    }
    if 2 * idx.len() <= params.len() {
        return Err(format!("{} points cannot fix {} parameters", idx.len(), params.len()));
    }
    let freqs: Vec<f64> = idx.iter().map(|&i| sweep.freq_hz[i]).collect();
    let start: Vec<f64> = params.iter().map(|p| p.get(network).unwrap_or(1.0)).collect();
    let residuals = |x: &[f64]| -> Option<Vec<f64>> {
        let mut net = network.clone();
        for (p, v) in params.iter().zip(x) {
            p.set(&mut net, v.exp());
        }
        let z = input_impedances(&net, amp, &freqs).ok()?;
        let r = weigh(z.into_iter(), sweep, &idx);
        r.iter().all(|v| v.is_finite()).then_some(r)
    };
    residuals(&start.iter().map(|v| v.ln()).collect::<Vec<_>>()).ok_or("the network as found cannot be solved at the sweep's points")?;
    let (x, r, j, converged) = solve(&residuals, &start)?;
    let (estimates, correlated, rms) = judge(&params, &start, &x, &r, &j);
    let m = idx.len() as f64;
    let zs: f64 = r.iter().step_by(2).map(|v| (v * Z_SIGMA * 100.0).powi(2)).sum::<f64>() / m;
    let ps: f64 = r.iter().skip(1).step_by(2).map(|v| (v * PHASE_SIGMA_DEG).powi(2)).sum::<f64>() / m;
    // A residual far above a rig's noise means the network cannot make this sweep at all:
    // the sweep is of another speaker, or the network is wrong, or more than the suspects
    // has changed. No part is named from such a fit.
    let mut sentence = if rms > MISFIT {
        format!(
            "The sweep does not fit this network (a residual of {rms:.0} times a rig's noise, |Z| off by {:.0} % RMS even at the best values of the suspects): check that the sweep is of this speaker at its terminals and that the network is right, or name more suspects; no part can be named from it.",
            zs.sqrt()
        )
    } else {
        finding(network, &estimates)
    };
    if !converged {
        sentence.push_str(" The fit stopped before it settled: treat these estimates with caution, or name fewer suspects.");
    }
    Ok(Diagnosis {
        file: sweep.file.clone(),
        points: idx.len(),
        from_hz: freqs[0],
        to_hz: freqs[freqs.len() - 1],
        residual: rms,
        converged,
        residual_z_pct: zs.sqrt(),
        residual_phase_deg: ps.sqrt(),
        estimates,
        correlated,
        sentence,
        basis: format!(
            "estimated from the as-found sweep at the terminals ({}, {} points): least squares on log |Z| (weight 1 %) and phase (weight 1 degree) by Levenberg-Marquardt over the logarithms of the parameters, started from the job's values as found; 95 % intervals from the Jacobian at the solution, scaled by the residual; an estimate is not identifiable when a 10 % change moves the fit less than the residual or when its interval (from the full covariance, which widens for a parameter that moves with another) spans more than a factor of two; pairs correlated beyond {CORRELATION_LIMIT} are listed. Estimates are never used as bench readings: write a reading under `measured` to use one",
            sweep.file,
            idx.len()
        ),
    })
}

/// The value with its unit ("3.76 uF"; a Q as a plain number).
pub fn value_text(net: &Network, part: &str, field: &str, v: f64) -> String {
    match Param::new(part, field).quantity(net) {
        Some(q) => format_si(v, q, 3),
        None => crate::units::trim_number(v, 3),
    }
}

/// Which identifiable estimate departs furthest from what the job holds, beyond its own
/// interval; or that none does, or that the sweep can tell none.
fn finding(net: &Network, e: &[Estimate]) -> String {
    let told: Vec<&Estimate> = e.iter().filter(|x| x.identifiable).collect();
    if told.is_empty() {
        return "The sweep cannot tell any of the parameters asked for: measure them on the bench.".into();
    }
    let moved: Vec<&&Estimate> = told.iter().filter(|x| x.start < x.low || x.start > x.high).collect();
    let far = |x: &Estimate| (x.value / x.start).ln().abs();
    let Some(worst) = moved.iter().max_by(|a, b| far(a).total_cmp(&far(b))) else {
        return "Every parameter the sweep can tell agrees with the job's values within its 95 % interval: the sweep shows no drift.".into();
    };
    // The part that moved furthest, with every one of its fields that moved.
    let fields: Vec<String> = moved
        .iter()
        .filter(|x| x.part == worst.part)
        .map(|x| {
            let v = |a: f64| value_text(net, &x.part, &x.field, a);
            format!(
                "its {} estimated at {} (95 % interval {} to {}) against {} on record ({:+.0} %)",
                field_words(&x.field),
                v(x.value),
                v(x.low),
                v(x.high),
                v(x.start),
                100.0 * (x.value / x.start - 1.0)
            )
        })
        .collect();
    let others: Vec<String> = moved.iter().filter(|x| x.part != worst.part).map(|x| format!("{} {}", x.part, field_words(&x.field))).collect();
    let also = if others.is_empty() { String::new() } else { format!(" The sweep also departs from the record in {}.", others.join(", ")) };
    format!("Most likely drifted: {}, {}.{also}", worst.part, fields.join(", and "))
}

pub fn field_words(field: &str) -> &str {
    match field {
        "value" => "value",
        "esr" => "ESR",
        "dcr" => "DCR",
        "re" => "Re",
        "le" => "Le",
        "fs" => "fs",
        "qms" => "Qms",
        "qes" => "Qes",
        other => other,
    }
}

/// Small's model fitted to a driver's own impedance sweep (free air).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct DriverFit {
    pub file: String,
    pub points: usize,
    pub residual: f64,
    /// re, le (or k and n), fs, qms, qes with their intervals.
    pub estimates: Vec<Estimate>,
    pub qts: f64,
    pub correlated: Vec<Correlated>,
    /// The three-point method on the same sweep, for comparison (Thiele and Small): from the
    /// sweep alone (its lowest |Z| as Re, its interpolated peak), sharing
    /// nothing with the fit, so it is an independent check of it.
    pub three_point: Option<ThreePoint>,
    /// The `model` block the job file takes; None when the fit cannot follow the sweep.
    pub model_yaml: Option<String>,
    /// What to do when the fit cannot follow the sweep (its residual above [`MISFIT`]).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub advice: Option<String>,
}

/// The sweep's own DC resistance for the three-point method, without a DC reading: its
/// lowest |Z|, where a driver's impedance comes closest to Re (toward DC below the resonance,
/// or in the trough above it before the coil's inductance lifts it).
pub fn sweep_re(sweep: &ImpedanceTable) -> f64 {
    sweep.ohm.iter().copied().fold(f64::INFINITY, f64::min)
}

#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct ThreePoint {
    pub re: f64,
    pub fs: f64,
    pub qms: f64,
    pub qes: f64,
}

/// The classic three-point method: fs at the impedance peak, r0 = Zmax / Re, f1 and f2 where
/// |Z| = Re sqrt(r0); Qms = fs sqrt(r0) / (f2 - f1), Qes = Qms / (r0 - 1). `re` is the DC
/// resistance (the fit's, or the sweep's lowest |Z| below the peak when none is given).
pub fn three_point(sweep: &ImpedanceTable, re: f64) -> Option<ThreePoint> {
    let (f, z, ph) = (&sweep.freq_hz, &sweep.ohm, &sweep.phase_deg);
    // The resonance is an interior peak of |Z| where the phase turns from inductive to
    // capacitive; the voice coil's inductance makes |Z| rise again towards the top of a
    // sweep, to its last point, which is no resonance. Of the interior peaks, those with the
    // phase crossing within two points either side come first, then the highest.
    let interior = (1..z.len().saturating_sub(1)).filter(|&i| z[i] > z[i - 1] && z[i] >= z[i + 1]);
    let crosses = |i: usize| ph[i.saturating_sub(2)..i + 1].iter().any(|p| *p > 0.0) && ph[i..(i + 3).min(ph.len())].iter().any(|p| *p < 0.0);
    let peak = interior.max_by(|&a, &b| (crosses(a), z[a]).partial_cmp(&(crosses(b), z[b])).unwrap_or(std::cmp::Ordering::Equal))?;
    // The peak refined by a parabola through three points in log frequency.
    let (a, b, c) = (z[peak - 1], z[peak], z[peak + 1]);
    let (la, lb, lc) = (f[peak - 1].ln(), f[peak].ln(), f[peak + 1].ln());
    let denom = (a - 2.0 * b + c) * 0.5;
    let (fs, zmax) = if denom.abs() > 0.0 && (lc - lb - (lb - la)).abs() < 1e-9 * lb.abs().max(1.0) {
        let t = 0.25 * (a - c) / denom;
        ((lb + t * (lc - lb)).exp(), b - 0.25 * (a - c) * t)
    } else {
        (f[peak], b)
    };
    let r0 = zmax / re;
    if r0 <= 1.0 {
        return None;
    }
    let level = re * r0.sqrt();
    let cross = |range: &mut dyn Iterator<Item = usize>| -> Option<f64> {
        for i in range {
            let (j, k) = if i < peak { (i, i + 1) } else { (i - 1, i) };
            let (za, zb) = (z[j], z[k]);
            if (za - level) * (zb - level) <= 0.0 && za != zb {
                let t = (level - za) / (zb - za);
                return Some((f[j].ln() + t * (f[k].ln() - f[j].ln())).exp());
            }
        }
        None
    };
    let f1 = cross(&mut (0..peak).rev())?;
    let f2 = cross(&mut (peak + 1..z.len()))?;
    let qms = fs * r0.sqrt() / (f2 - f1);
    Some(ThreePoint { re, fs, qms, qes: qms / (r0 - 1.0) })
}

/// Fits Small's model (Re, Le or Leach's K and n, fs, Qms, Qes) to a driver's sweep.
pub fn characterise(sweep: &ImpedanceTable, leach: bool) -> Result<DriverFit, String> {
    let n = sweep.freq_hz.len();
    if n < 8 {
        return Err(format!("{} has {n} points; a driver's fit needs at least 8 around its resonance", sweep.file));
    }
    // Starting values from the curve: the three-point figures with Re from the lowest |Z|.
    let re0 = sweep.ohm.iter().copied().fold(f64::INFINITY, f64::min) * 0.97;
    let tp0 = three_point(sweep, re0).ok_or("the sweep has no resonance peak with the curve falling on both sides: sweep from well below to well above fs")?;
    // The coil's inductance from the top of the sweep, above the resonance.
    let (ft, zt) = (sweep.freq_hz[n - 1], sweep.ohm[n - 1]);
    let xl = (zt * zt - re0 * re0).max((0.05 * re0).powi(2)).sqrt();
    let le0 = xl / (2.0 * std::f64::consts::PI * ft);
    let names: Vec<&str> = if leach { vec!["re", "k", "n", "fs", "qms", "qes"] } else { vec!["re", "le", "fs", "qms", "qes"] };
    let start: Vec<f64> = if leach {
        let w = 2.0 * std::f64::consts::PI * ft;
        let nn: f64 = 0.7;
        vec![re0, xl / w.powf(nn), nn, tp0.fs, tp0.qms, tp0.qes]
    } else {
        vec![re0, le0, tp0.fs, tp0.qms, tp0.qes]
    };
    let model = |x: &[f64]| -> DriverModel {
        let v: Vec<f64> = x.iter().map(|a| a.exp()).collect();
        let (inductance, o) = if leach { (VoiceCoilInductance::Leach { k: v[1], n: v[2] }, 3) } else { (VoiceCoilInductance::Simple(v[1]), 2) };
        DriverModel::VoiceCoil { re: v[0], inductance, resonance: Some(Resonance { fs: v[o], qms: v[o + 1], qes: v[o + 2], derived: None }) }
    };
    let idx: Vec<usize> = (0..n).collect();
    let residuals = |x: &[f64]| -> Option<Vec<f64>> {
        let m = model(x);
        let r = weigh(sweep.freq_hz.iter().map(|f| crate::engine::driver::impedance(&m, *f)), sweep, &idx);
        r.iter().all(|v| v.is_finite()).then_some(r)
    };
    let (x, r, j, converged) = solve(&residuals, &start)?;
    if !converged {
        return Err("the fit did not settle: sweep from well below to well above fs, with the driver in free air".into());
    }
    let params: Vec<Param> = names.iter().map(|f| Param::new("driver", f)).collect();
    let (estimates, correlated, rms) = judge(&params, &start, &x, &r, &j);
    let v: Vec<f64> = x.iter().map(|a| a.exp()).collect();
    let o = if leach { 3 } else { 2 };
    let (fs, qms, qes) = (v[o], v[o + 1], v[o + 2]);
    let qts = qms * qes / (qms + qes);
    let coil = if leach {
        format!("leach: {{ k: {}, n: {} }}", crate::units::trim_number(v[1], 4), crate::units::trim_number(v[2], 3))
    } else {
        format!("le: {}", format_si(v[1], Quantity::Inductance, 3))
    };
    let misfit = rms > MISFIT;
    let model_yaml = format!(
        "model: {{ re: {}, {coil}, fs: {}, qms: {}, qes: {} }}   # fitted from {} (Qts {})",
        format_si(v[0], Quantity::Resistance, 4),
        format_si(fs, Quantity::Frequency, 4),
        crate::units::trim_number(qms, 3),
        crate::units::trim_number(qes, 3),
        sweep.file,
        crate::units::trim_number(qts, 3)
    );
    // A fit that cannot follow the sweep gives no model to paste into a job.
    let advice = misfit.then(|| {
        let how = if leach {
            "check the sweep: the driver alone, in free air, swept from well below to well above fs"
        } else {
            "try `--leach` (a voice coil whose inductance falls with frequency, as most woofers' does), and check the sweep: the driver alone, in free air"
        };
        format!("the model cannot follow this sweep (residual {rms:.1}, against about 1 for a good rig's noise), so no model block is given: {how}")
    });
    Ok(DriverFit {
        file: sweep.file.clone(),
        points: n,
        residual: rms,
        estimates,
        qts,
        correlated,
        three_point: three_point(sweep, sweep_re(sweep)),
        model_yaml: (!misfit).then_some(model_yaml),
        advice,
    })
}
