//! From the solved scenarios to findings: driver levels, passbands, crossovers, load,
//! compensation, stress, part health and tolerance.

pub mod compensate;
pub mod eseries;
pub mod health;
pub mod load;
pub mod programme;
pub mod stress;
pub mod tolerance;

use num_complex::Complex64;

use crate::engine::{self, Circuit, SolveError, Sweeper};
use crate::model::{Job, Network, Scenario};

/// One scenario, solved over the sweep in a single pass: what the findings need is kept,
/// the node voltages are not (a 100,000-point sweep would hold megabytes of them).
#[derive(Debug, Clone)]
pub struct Scene {
    pub scenario: Scenario,
    pub network: Network,
    pub circuit: Circuit,
    /// Per driver (network order): level in dB re the EMF. The complex voltages behind it
    /// are solved again when asked for ([`Scene::voltages`]): storing them would cost more
    /// in fresh memory than the second solve does where they are needed.
    pub db: Vec<Vec<f64>>,
    /// Input impedance at every sweep point.
    pub z: Vec<Complex64>,
    /// Per circuit element: its largest voltage, current and power over the stress grid.
    pub peaks: Vec<Peaks>,
}

/// An element's extremes over the sweep for a 1 V EMF, each with the sweep index where it
/// first occurs, and its power weighted by the programme spectrum.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Peaks {
    /// Largest |V|^2 across it.
    pub v2: (f64, usize),
    /// Largest |I|^2 through it.
    pub i2: (f64, usize),
    /// Largest real power into it, |I|^2 Re Z.
    pub power: (f64, usize),
    /// Sum over the sweep of the programme weight times the real power.
    pub programme: f64,
}

impl Peaks {
    #[inline]
    fn add(&mut self, i: usize, v2: f64, i2: f64, power: f64, weight: f64) {
        if v2 > self.v2.0 {
            self.v2 = (v2, i);
        }
        if i2 > self.i2.0 {
            self.i2 = (i2, i);
        }
        if power > self.power.0 {
            self.power = (power, i);
        }
        self.programme += weight * power;
    }
}

/// What one pass over the sweep keeps: each driver's level, and as asked its voltage and the
/// input impedance.
struct Pass {
    db: Vec<Vec<f64>>,
    h: Vec<Vec<Complex64>>,
    z: Vec<Complex64>,
}

fn driver_elements(c: &Circuit, network: &Network) -> Result<Vec<usize>, SolveError> {
    network.drivers.iter().map(|d| c.element(&d.name).ok_or_else(|| SolveError::Internal(format!("driver {} is not in its circuit", d.name)))).collect()
}

/// Solves `c` at every frequency of `freqs` once, keeping each driver's level, and with
/// `impedance` the input impedance, with `voltages` each driver's complex voltage.
fn pass(c: &Circuit, network: &Network, freqs: &[f64], impedance: bool, voltages: bool) -> Result<Pass, SolveError> {
    let drivers = driver_elements(c, network)?;
    let per_point = |on: bool| if on { freqs.len() } else { 0 };
    let mut out = Pass {
        db: drivers.iter().map(|_| Vec::with_capacity(freqs.len())).collect(),
        h: drivers.iter().map(|_| Vec::with_capacity(per_point(voltages))).collect(),
        z: Vec::with_capacity(per_point(impedance)),
    };
    let mut first_error = None;
    let kernels = c.kernels();
    engine::sweep(
        c,
        &mut Sweeper::new(c),
        freqs,
        |i, k| kernels[k].at(freqs[i]),
        |_, point| match point {
            Ok(p) => {
                for (j, &k) in drivers.iter().enumerate() {
                    let v = p.across(c, k);
                    out.db[j].push(engine::db(v));
                    if voltages {
                        out.h[j].push(v);
                    }
                }
                if impedance {
                    out.z.push(p.input_impedance(c));
                }
            }
            Err(e) => {
                first_error.get_or_insert(e);
            }
        },
    );
    match first_error {
        Some(e) => Err(e),
        None => Ok(out),
    }
}

/// Each element's peaks over the stress grid `grid`, whose programme weights are `weights`.
fn peaks_pass(c: &Circuit, grid: &[f64], weights: &[f64]) -> Result<Vec<Peaks>, SolveError> {
    let mut peaks = vec![Peaks::default(); c.elements.len()];
    let mut first_error = None;
    let kernels = c.kernels();
    engine::sweep(
        c,
        &mut Sweeper::new(c),
        grid,
        |i, k| kernels[k].at(grid[i]),
        |i, point| match point {
            Ok(p) => {
                let w = weights[i];
                p.each_element(c, |k, v2, i2, power| peaks[k].add(i, v2, i2, power, w));
            }
            Err(e) => {
                first_error.get_or_insert(e);
            }
        },
    );
    match first_error {
        Some(e) => Err(e),
        None => Ok(peaks),
    }
}

/// Each driver's level (dB re the EMF, network order) at every point of `freqs`: for a
/// candidate network that is only compared, not reported.
pub fn driver_levels(network: &Network, job: &Job, freqs: &[f64]) -> Result<Vec<Vec<f64>>, SolveError> {
    let c = Circuit::from_network(network, &job.amplifier)?;
    Ok(pass(&c, network, freqs, false, false)?.db)
}

/// The frequencies the stress figures are worked out on, whatever sweep the job chose for
/// display: the programme's whole band and at least 20 Hz to 20 kHz for the sine search.
#[derive(Debug, Clone, PartialEq)]
pub struct StressGrid {
    pub freqs: Vec<f64>,
    /// The fraction of the programme's power each point stands for.
    pub weights: Vec<f64>,
}

impl StressGrid {
    pub fn new(p: crate::model::Programme, sweep: &[f64]) -> StressGrid {
        let freqs = programme::stress_grid(p, sweep);
        let weights = programme::weights(p, &freqs);
        StressGrid { freqs, weights }
    }
}

impl Scene {
    /// Solves `network` at every frequency of the sweep `freqs`, and for the stress figures
    /// at every point of `grid`.
    pub fn build(scenario: Scenario, network: Network, job: &Job, freqs: &[f64], grid: &StressGrid) -> Result<Scene, SolveError> {
        let circuit = Circuit::from_network(&network, &job.amplifier)?;
        let Pass { db, z, .. } = pass(&circuit, &network, freqs, true, false)?;
        let peaks = peaks_pass(&circuit, &grid.freqs, &grid.weights)?;
        Ok(Scene { scenario, network, circuit, db, z, peaks })
    }

    /// Per driver (network order), the voltage across it per volt of EMF at every point of
    /// `freqs`, the sweep the scene was built on (solved again, to the same values).
    pub fn voltages(&self, freqs: &[f64]) -> Vec<Vec<Complex64>> {
        match pass(&self.circuit, &self.network, freqs, false, true) {
            Ok(p) => p.h,
            // The scene was solved on this sweep, so it solves again; an empty answer is
            // safer than a panic if it ever does not.
            Err(_) => vec![Vec::new(); self.network.drivers.len()],
        }
    }

    pub fn driver_index(&self, name: &str) -> Option<usize> {
        self.network.drivers.iter().position(|d| d.name == name)
    }

    /// Per driver, the phase in degrees, wrapped to (-180, 180], at every point of `freqs`
    /// (the scene's sweep).
    pub fn phases_deg(&self, freqs: &[f64]) -> Vec<Vec<f64>> {
        self.voltages(freqs).iter().map(|h| h.iter().map(|v| engine::wrap_deg(v.arg().to_degrees())).collect()).collect()
    }
}
/// The sweep indices a driver's level is judged over.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Band {
    pub lo_hz: f64,
    pub hi_hz: f64,
    #[serde(skip)]
    pub idx: Vec<usize>,
    /// "compensate" when the band comes from a compensate entry, "passband" otherwise.
    pub source: &'static str,
}

/// Passband: the sweep points where the as-designed level is within 6 dB of its maximum.
pub fn passband(freqs: &[f64], db: &[f64]) -> Band {
    let max = db.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
    let idx: Vec<usize> = (0..db.len()).filter(|i| db[*i] >= max - 6.0).collect();
    Band { lo_hz: freqs[idx[0]], hi_hz: freqs[*idx.last().expect("the maximum is in the band")], idx, source: "passband" }
}

pub fn band_of(freqs: &[f64], lo: f64, hi: f64) -> Band {
    let idx: Vec<usize> = (0..freqs.len()).filter(|i| freqs[*i] >= lo * (1.0 - 1e-9) && freqs[*i] <= hi * (1.0 + 1e-9)).collect();
    let (a, b) = (idx.first().map(|i| freqs[*i]).unwrap_or(lo), idx.last().map(|i| freqs[*i]).unwrap_or(hi));
    Band { lo_hz: a, hi_hz: b, idx, source: "compensate" }
}

pub fn mean_over(db: &[f64], idx: &[usize]) -> f64 {
    idx.iter().map(|i| db[*i]).sum::<f64>() / idx.len().max(1) as f64
}

/// Where the level falls `drop_db` below its maximum, below and above the maximum
/// (None when the sweep ends first). Interpolated in log frequency.
pub fn corners(freqs: &[f64], db: &[f64], drop_db: f64) -> (Option<f64>, Option<f64>) {
    let (imax, max) = db.iter().cloned().enumerate().fold((0, f64::NEG_INFINITY), |b, (i, v)| if v > b.1 { (i, v) } else { b });
    let target = max - drop_db;
    let cross = |i: usize, j: usize| {
        let t = (target - db[i]) / (db[j] - db[i]);
        (freqs[i].ln() + t * (freqs[j].ln() - freqs[i].ln())).exp()
    };
    let lo = (1..=imax).rev().find(|&i| db[i - 1] < target).map(|i| cross(i - 1, i));
    let hi = (imax..freqs.len().saturating_sub(1)).find(|&i| db[i + 1] < target).map(|i| cross(i, i + 1));
    (lo, hi)
}

/// Where two drivers' levels cross between the frequencies `from` and `to`, interpolated in
/// log frequency (the first crossing going up).
pub fn crossing(freqs: &[f64], lower: &[f64], upper: &[f64], from: f64, to: f64) -> Option<f64> {
    let d = |i: usize| lower[i] - upper[i];
    (0..freqs.len().saturating_sub(1)).filter(|&i| freqs[i] >= from && freqs[i + 1] <= to).find(|&i| d(i) >= 0.0 && d(i + 1) < 0.0).map(|i| {
        let t = d(i) / (d(i) - d(i + 1));
        (freqs[i].ln() + t * (freqs[i + 1].ln() - freqs[i].ln())).exp()
    })
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct LevelRow {
    pub driver: String,
    pub role: String,
    pub band_hz: [f64; 2],
    pub band_source: &'static str,
    pub as_designed_db: f64,
    pub as_found_db: f64,
    pub as_left_db: f64,
    /// The change as found -> as left, and a plain-language flag for it.
    pub found_to_left_db: f64,
    /// As left, the largest difference from the original design at any point of the band,
    /// and of the whole passband (which the band may not span).
    pub as_left_worst_db: f64,
    pub passband_hz: [f64; 2],
    pub passband_worst_db: f64,
    pub left_flag: String,
    /// More than [`compensate::FAULT_DB`] below the original design: not a level difference
    /// but a fault (a driver shorted or disconnected).
    pub as_found_fault: bool,
    pub as_left_fault: bool,
}

/// The flag for a level more than [`compensate::FAULT_DB`] below its reference.
pub const FAULT_FLAG: &str = "fault: driver shorted or disconnected";

/// A flag for a level difference from the as-designed voicing. Just-noticeable broadband
/// level change is about 0.4 dB (Ballou, Handbook for Sound Engineers, 3.8.6); the 0.5 dB
/// "measurable" and 1 dB "likely audible" steps are common practice.
pub fn level_flag(db: f64) -> &'static str {
    let a = db.abs();
    if a >= 1.0 {
        "likely audible"
    } else if a >= 0.5 {
        "measurable"
    } else {
        "within 0.5 dB"
    }
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct CrossoverRow {
    pub lower: String,
    pub upper: String,
    pub as_designed_hz: Option<f64>,
    pub as_found_hz: Option<f64>,
    pub as_left_hz: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct CornerRow {
    pub driver: String,
    pub scenario: Scenario,
    pub minus3_hz: [Option<f64>; 2],
    pub minus6_hz: [Option<f64>; 2],
}

/// Every finding for one job.
#[derive(Debug, Clone)]
pub struct Findings {
    pub freqs: Vec<f64>,
    /// The stress figures' own grid (see [`StressGrid`]).
    pub grid: StressGrid,
    pub scenes: [Scene; 3],
    pub bands: Vec<Band>,
    pub levels: Vec<LevelRow>,
    pub crossovers: Vec<CrossoverRow>,
    pub corners: Vec<CornerRow>,
    pub compensation: compensate::Plan,
    pub stress: stress::Stress,
    pub loads: [load::Load; 3],
    pub health: Vec<health::Flag>,
    pub tolerance: Option<tolerance::Spread>,
    /// Per scenario, the complex acoustic sum in dB SPL at 2.83 V when every driver has a response.
    pub acoustic: Option<[Vec<f64>; 3]>,
}

#[derive(Debug)]
pub enum AnalysisError {
    Solve(Scenario, SolveError),
    Step(crate::model::StepError),
}

impl std::fmt::Display for AnalysisError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            AnalysisError::Solve(s, e) => write!(f, "{}: {}", s.label(), e),
            AnalysisError::Step(e) => write!(f, "change step {}: {}", e.number, e.message),
        }
    }
}

/// Drivers in order of rising passband centre, as indices into the network's drivers.
pub fn frequency_order(bands: &[Band]) -> Vec<usize> {
    let mut order: Vec<usize> = (0..bands.len()).collect();
    order.sort_by(|a, b| (bands[*a].lo_hz * bands[*a].hi_hz).partial_cmp(&(bands[*b].lo_hz * bands[*b].hi_hz)).unwrap_or(std::cmp::Ordering::Equal));
    order
}

pub fn analyse(job: &Job) -> Result<Findings, AnalysisError> {
    let freqs = job.analysis.sweep.frequencies();
    let grid = StressGrid::new(job.analysis.programme, &freqs);
    let designed = Scene::build(Scenario::AsDesigned, job.network.clone(), job, &freqs, &grid).map_err(|e| AnalysisError::Solve(Scenario::AsDesigned, e))?;
    let found = Scene::build(Scenario::AsFound, job.as_found(), job, &freqs, &grid).map_err(|e| AnalysisError::Solve(Scenario::AsFound, e))?;
    let unsolved = job.as_left_unsolved().map_err(AnalysisError::Step)?;

    // Bands: the compensate entry's band where one names the driver, else the passband.
    let bands: Vec<Band> = job
        .network
        .drivers
        .iter()
        .enumerate()
        .map(|(i, d)| match job.compensate.iter().find(|c| c.driver == d.name).and_then(|c| c.band) {
            Some((lo, hi)) => band_of(&freqs, lo, hi),
            None => passband(&freqs, &designed.db[i]),
        })
        .collect();

    let plan = compensate::plan(job, &freqs, &bands, &designed, &found, &unsolved).map_err(|e| AnalysisError::Solve(Scenario::AsLeft, e))?;
    let left = Scene::build(Scenario::AsLeft, plan.network.clone(), job, &freqs, &grid).map_err(|e| AnalysisError::Solve(Scenario::AsLeft, e))?;

    let scenes = [designed, found, left];
    let levels = job
        .network
        .drivers
        .iter()
        .enumerate()
        .map(|(i, d)| {
            let b = &bands[i];
            let reference = mean_over(&scenes[0].db[i], &b.idx);
            let rel = |s: &Scene| s.driver_index(&d.name).map(|k| mean_over(&s.db[k], &b.idx) - reference).unwrap_or(0.0);
            let (found_db, left_db) = (rel(&scenes[1]), rel(&scenes[2]));
            // The largest difference at any one point, over the band and over the whole
            // passband (where the original plays within 6 dB of its peak): a band mean can hide
            // a peak at the band's edge.
            let worst_over = |idx: &[usize]| match scenes[2].driver_index(&d.name) {
                Some(k) => idx.iter().map(|&j| scenes[2].db[k][j] - scenes[0].db[i][j]).fold(0.0, |a: f64, v| if v.abs() > a.abs() { v } else { a }),
                None => 0.0,
            };
            let pass = passband(&freqs, &scenes[0].db[i]);
            let (worst_db, passband_worst_db) = (worst_over(&b.idx), worst_over(&pass.idx));
            LevelRow {
                driver: d.name.clone(),
                role: d.role.name().into(),
                band_hz: [b.lo_hz, b.hi_hz],
                band_source: b.source,
                as_designed_db: 0.0,
                as_found_db: found_db,
                as_left_db: left_db,
                found_to_left_db: left_db - found_db,
                as_left_worst_db: worst_db,
                passband_hz: [pass.lo_hz, pass.hi_hz],
                passband_worst_db,
                left_flag: if left_db < -compensate::FAULT_DB { FAULT_FLAG.into() } else { level_flag(left_db).into() },
                as_found_fault: found_db < -compensate::FAULT_DB,
                as_left_fault: left_db < -compensate::FAULT_DB,
            }
        })
        .collect();

    let order = frequency_order(&bands);
    let crossovers = order
        .windows(2)
        .map(|w| {
            let (lo, hi) = (w[0], w[1]);
            let from = (bands[lo].lo_hz * bands[lo].hi_hz).sqrt();
            let to = (bands[hi].lo_hz * bands[hi].hi_hz).sqrt();
            let at = |s: &Scene| crossing(&freqs, &s.db[lo], &s.db[hi], from, to);
            CrossoverRow {
                lower: job.network.drivers[lo].name.clone(),
                upper: job.network.drivers[hi].name.clone(),
                as_designed_hz: at(&scenes[0]),
                as_found_hz: at(&scenes[1]),
                as_left_hz: at(&scenes[2]),
            }
        })
        .collect();
    let sweep = freqs.as_slice();
    let corners_rows = scenes
        .iter()
        .flat_map(|s| {
            s.network.drivers.iter().enumerate().map(move |(i, d)| {
                let (a, b) = corners(sweep, &s.db[i], 3.0);
                let (c, e) = corners(sweep, &s.db[i], 6.0);
                CornerRow { driver: d.name.clone(), scenario: s.scenario, minus3_hz: [a, b], minus6_hz: [c, e] }
            })
        })
        .collect();

    let rated = job.rated_impedance_ohm();
    let loads = [0, 1, 2].map(|i| load::load(&freqs, &scenes[i].z, rated, job.info.rated_range));
    let stress = stress::stress(job, &grid.freqs, &scenes);
    let health = health::flags(job, &freqs, &bands, &scenes[0]);
    let tolerance = job.analysis.tolerance.as_ref().map(|t| tolerance::run(job, t, &freqs, &bands, &scenes));
    let acoustic = acoustic_sum(&scenes, &freqs);

    Ok(Findings { freqs, grid, scenes, bands, levels, crossovers, corners: corners_rows, compensation: plan, stress, loads, health, tolerance, acoustic })
}

/// The complex sum of every driver's measured response (at 2.83 V) scaled by the voltage the
/// network puts across it, with polarity; None unless every driver has a response table.
fn acoustic_sum(scenes: &[Scene; 3], freqs: &[f64]) -> Option<[Vec<f64>; 3]> {
    let one = |s: &Scene| -> Option<Vec<f64>> {
        let tables: Vec<_> = s.network.drivers.iter().map(|d| d.response.as_ref()).collect::<Option<Vec<_>>>()?;
        let h = s.voltages(freqs);
        Some(
            freqs
                .iter()
                .enumerate()
                .map(|(fi, f)| {
                    let mut sum = Complex64::new(0.0, 0.0);
                    for (k, (d, t)) in s.network.drivers.iter().zip(&tables).enumerate() {
                        let (spl, ph) = engine::driver::interp_log(&t.freq_hz, &t.spl_db, &t.phase_deg, *f, false);
                        let sign = if d.inverted { -1.0 } else { 1.0 };
                        sum += Complex64::from_polar(10f64.powf(spl / 20.0), ph.to_radians()) * h[k][fi] * sign;
                    }
                    20.0 * sum.norm().max(1e-12).log10()
                })
                .collect(),
        )
    };
    Some([one(&scenes[0])?, one(&scenes[1])?, one(&scenes[2])?])
}
