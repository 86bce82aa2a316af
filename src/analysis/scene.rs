//! A scenario solved: one pass over the display sweep for the drivers' levels and the input
//! impedance, one over the stress grid for each element's peaks; the circuit is built once
//! and kept, so every later question of the scene reuses it.

use num_complex::Complex64;

use crate::analysis::programme;
use crate::engine::{self, Circuit, SolveError, Sweeper};
use crate::model::{Amplifier, Network, Scenario};

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
    /// Per driver, its SPL (dB at 1 m) for 2.83 V of EMF where the job gives its
    /// sensitivity or response: [`crate::analysis::levels::acoustic_offset`] plus `db`.
    pub spl: Vec<Option<Vec<f64>>>,
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

pub(crate) fn driver_elements(c: &Circuit, network: &Network) -> Result<Vec<usize>, SolveError> {
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
                let mut taken = 0.0;
                p.each_element(c, |k, v2, i2, power| {
                    taken += power;
                    peaks[k].add(i, v2, i2, power, w)
                });
                // Tellegen: the power drawn equals the power the parts take, for any exact
                // solution. Where rounding has eaten the answer, the two part.
                // Measured against the source's apparent power (1 V EMF times the current
                // it gives), so a shorted input, which draws next to nothing, is no miss.
                let drawn = (p.v(c.input) * p.i_in().conj()).re;
                let mismatch = (drawn - taken).abs() / drawn.abs().max(taken.abs()).max(p.i_in().norm()).max(1e-300);
                if (mismatch > engine::POWER_BALANCE || mismatch.is_nan()) && first_error.is_none() {
                    first_error = Some(ill_conditioned(c, grid[i], mismatch));
                }
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

/// The finding for a solution that fails the power balance at `f_hz`: the elements of
/// smallest and largest finite, non-zero impedance there.
fn ill_conditioned(c: &Circuit, f_hz: f64, mismatch: f64) -> SolveError {
    let sized: Vec<(f64, &str)> = c.elements.iter().map(|e| (e.model.impedance(f_hz).norm(), e.name.as_str())).filter(|(z, _)| z.is_finite() && *z > 0.0).collect();
    let least = sized.iter().copied().fold((f64::INFINITY, ""), |a, b| if b.0 < a.0 { b } else { a });
    let most = sized.iter().copied().fold((0.0, ""), |a, b| if b.0 > a.0 { b } else { a });
    SolveError::IllConditioned { f_hz, mismatch, parts: vec![least.1.to_string(), most.1.to_string()], ohms: vec![least.0, most.0] }
}

/// Each driver's level (dB re the EMF, network order) at every point of `freqs`: for a
/// candidate network that is only compared, not reported.
pub fn driver_levels(network: &Network, amp: &Amplifier, freqs: &[f64]) -> Result<Vec<Vec<f64>>, SolveError> {
    let c = Circuit::from_network(network, amp)?;
    let mut db = pass(&c, network, freqs, false, false)?.db;
    silence_faulted(network, &mut db);
    Ok(db)
}

/// A driver read open or shorted plays nothing, whatever voltage its terminals see.
fn silence_faulted(network: &Network, db: &mut [Vec<f64>]) {
    for (d, level) in network.drivers.iter().zip(db) {
        if d.fault.is_some() {
            level.iter_mut().for_each(|v| *v = SILENT_DB);
        }
    }
}

/// The impedance at the network's input terminals at each of `freqs` (the amplifier's
/// output impedance is behind them, not part of it).
pub fn input_impedances(network: &Network, amp: &Amplifier, freqs: &[f64]) -> Result<Vec<Complex64>, SolveError> {
    let c = Circuit::from_network(network, amp)?;
    Ok(pass(&c, network, freqs, true, false)?.z)
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

/// The level of a driver that plays nothing (read open or shorted on the bench): far below
/// the fault threshold, finite so every figure stays a number.
pub const SILENT_DB: f64 = -300.0;

impl Scene {
    /// Solves `network` at every frequency of the sweep `freqs`, and for the stress figures
    /// at every point of `grid`.
    pub fn build(scenario: Scenario, network: Network, amp: &Amplifier, freqs: &[f64], grid: &StressGrid) -> Result<Scene, SolveError> {
        let circuit = Circuit::from_network(&network, amp)?;
        let Pass { mut db, z, .. } = pass(&circuit, &network, freqs, true, false)?;
        silence_faulted(&network, &mut db);
        let peaks = peaks_pass(&circuit, &grid.freqs, &grid.weights)?;
        let spl = network
            .drivers
            .iter()
            .zip(&db)
            .map(|(d, level)| crate::analysis::levels::acoustic_offset(d, freqs).map(|(offset, _)| offset.iter().zip(level).map(|(o, l)| o + l).collect()))
            .collect();
        Ok(Scene { scenario, network, circuit, db, spl, z, peaks })
    }

    /// Per driver (network order), the voltage across it per volt of EMF at every point of
    /// `freqs`, the sweep the scene was built on (solved again, to the same values).
    pub fn voltages(&self, freqs: &[f64]) -> Vec<Vec<Complex64>> {
        match pass(&self.circuit, &self.network, freqs, false, true) {
            Ok(mut p) => {
                for (d, h) in self.network.drivers.iter().zip(&mut p.h) {
                    if d.fault.is_some() {
                        h.iter_mut().for_each(|v| *v = Complex64::new(0.0, 0.0));
                    }
                }
                p.h
            }
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
