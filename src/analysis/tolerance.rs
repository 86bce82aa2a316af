//! Tolerance analysis: a seeded Monte Carlo over every part's tolerance, giving each driver's
//! 5-95 % level band per scenario, and a ranking of the parts that move each level most.
//!
//! Every run draws from its own generator seeded from (seed, run number), so results do not
//! depend on how many threads share the work.

use num_complex::Complex64;
use rayon::prelude::*;

use rand::Rng;
use rand_distr::{Distribution as _, StandardNormal};
use rand_pcg::Pcg64;

use crate::analysis::{driver_elements, Band, Progress, Scene, Scenes};
use crate::engine::{self, Circuit, ElementModel, SolveError, Sweeper};
use crate::model::{Distribution, Scenario, ToleranceRuns};

/// At most this many sweep points take part in the Monte Carlo.
pub const MAX_POINTS: usize = 200;

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct LevelSpread {
    pub scenario: Scenario,
    pub driver: String,
    pub p5_db: f64,
    pub p50_db: f64,
    pub p95_db: f64,
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Sensitivity {
    pub driver: String,
    pub part: String,
    /// Change of the driver's band level for a +1 % change of the part's value.
    pub db_per_percent: f64,
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Spread {
    pub runs: usize,
    pub seed: u64,
    pub distribution: Distribution,
    pub levels: Vec<LevelSpread>,
    pub ranking: Vec<Sensitivity>,
    /// As left, per driver: the frequencies used and the 5 % and 95 % level curves (dB re EMF).
    pub curve_hz: Vec<f64>,
    pub curves: Vec<(String, Vec<f64>, Vec<f64>)>,
}

/// The generator of one part's draws in one run: PCG (rand_pcg's Pcg64, whose output its
/// makers document as reproducible across platforms and releases), its state from the job's
/// seed and the part's name, its stream the run's number. So a part keeps its draw across
/// scenarios, and no result depends on how many threads share the runs.
fn generator(seed: u64, part: u64, run: usize) -> Pcg64 {
    Pcg64::new(((seed as u128) << 64) | part as u128, run as u128)
}

/// The relative deviation of one part: uniform over +-t, or normal with the tolerance taken as
/// two standard deviations (our choice: about 95 % of parts inside their marked tolerance).
fn draw(rng: &mut Pcg64, t: f64, dist: Distribution) -> f64 {
    match dist {
        Distribution::Uniform => (2.0 * rng.random::<f64>() - 1.0) * t,
        Distribution::Normal => {
            let z: f64 = StandardNormal.sample(rng);
            z * t / 2.0
        }
    }
}

/// How a part's impedance depends on its value, at each frequency of the grid: z = a + b g,
/// where g is the value's factor (resistor, inductor) or its inverse (capacitor; an ESR from
/// tan delta scales with the reactance, so it sits in b too). A driver is all a.
struct Basis {
    freqs: Vec<f64>,
    a: Vec<Complex64>,
    b: Vec<Complex64>,
    inverse: Vec<bool>,
    elements: usize,
}

impl Basis {
    fn new(c: &Circuit, freqs: &[f64]) -> Basis {
        let kernels = c.kernels();
        let mut a = Vec::with_capacity(freqs.len() * c.elements.len());
        let mut b = Vec::with_capacity(freqs.len() * c.elements.len());
        for &f in freqs {
            for (e, kernel) in c.elements.iter().zip(&kernels) {
                let z = kernel.at(f);
                // The part of z that does not scale with the value: ESR, DCR, all of a driver.
                let fixed = match &e.model {
                    ElementModel::Resistor { .. } | ElementModel::Capacitor { tan_delta: Some(_), .. } => Complex64::new(0.0, 0.0),
                    ElementModel::Capacitor { esr, tan_delta: None, .. } => Complex64::new(*esr, 0.0),
                    ElementModel::Inductor { dcr, .. } => Complex64::new(*dcr, 0.0),
                    ElementModel::Driver(_) => z,
                };
                a.push(fixed);
                b.push(z - fixed);
            }
        }
        let inverse = c.elements.iter().map(|e| matches!(e.model, ElementModel::Capacitor { .. })).collect();
        Basis { freqs: freqs.to_vec(), a, b, inverse, elements: c.elements.len() }
    }

    /// The multiplier of b for each element when element k's value is scaled by factors[k].
    fn gains(&self, factors: &[f64]) -> Vec<f64> {
        factors.iter().zip(&self.inverse).map(|(f, inv)| if *inv { 1.0 / f } else { *f }).collect()
    }
}

/// Band-mean level (dB re EMF) of each driver, with element k's value scaled by factors[k].
/// With `curves`, also each driver's |V|^2 at every grid point (driver-major), left squared
/// because only its order statistics are needed and dB keeps order.
fn band_levels(c: &Circuit, ws: &mut Sweeper, basis: &Basis, drivers: &[usize], bands: &[Vec<usize>], factors: &[f64], curves: Option<&mut [f64]>) -> Vec<f64> {
    let g = basis.gains(factors);
    let ne = basis.elements;
    let freqs = &basis.freqs;
    let mut power = vec![vec![f64::NAN; freqs.len()]; drivers.len()];
    // A point that cannot be solved stays NaN and its run drops out of the quantiles.
    engine::sweep(
        c,
        ws,
        freqs,
        |i, k| basis.a[i * ne + k] + basis.b[i * ne + k] * g[k],
        |i, point| {
            if let Ok(p) = point {
                for (j, &k) in drivers.iter().enumerate() {
                    power[j][i] = p.across(c, k).norm_sqr().max(1e-300);
                }
            }
        },
    );
    if let Some(out) = curves {
        for (j, p) in power.iter().enumerate() {
            out[j * freqs.len()..(j + 1) * freqs.len()].copy_from_slice(p);
        }
    }
    // The mean of 10 log10 |V|^2 over the band, taking one logarithm per eight points.
    bands
        .iter()
        .enumerate()
        .map(|(j, b)| {
            let ln_sum: f64 = b.chunks(8).map(|ch| ch.iter().map(|i| power[j][*i]).product::<f64>().ln()).sum();
            10.0 / std::f64::consts::LN_10 * ln_sum / b.len().max(1) as f64
        })
        .collect()
}

/// The p-quantile of `values` (linear between order statistics, as numpy's default), with
/// `map` applied to the two order statistics before they are blended: `map` must keep order
/// (10 log10 of |V|^2 does). Runs whose solve failed (NaN) take no part.
fn quantile(values: &[f64], p: f64, map: impl Fn(f64) -> f64) -> f64 {
    let mut v: Vec<f64> = values.iter().cloned().filter(|x| x.is_finite()).collect();
    if v.is_empty() {
        return f64::NAN;
    }
    let x = p * (v.len() - 1) as f64;
    let (i, t) = (x.floor() as usize, x.fract());
    let (_, lo, rest) = v.select_nth_unstable_by(i, f64::total_cmp);
    let lo = map(*lo);
    match rest.iter().cloned().min_by(f64::total_cmp) {
        Some(hi) if t > 0.0 => lo * (1.0 - t) + map(hi) * t,
        _ => lo,
    }
}

/// The runs whose curves draw the plot's 5-95 % band (the band levels use every run): the
/// quantiles of 10,000 draws are within a few hundredths of a dB of the whole's, and the
/// memory stays at a few tens of MB however many runs are asked for.
pub const CURVE_RUNS: usize = 10_000;

pub fn run(t: &ToleranceRuns, freqs: &[f64], bands: &[Band], scenes: &Scenes<Scene>, progress: &dyn Progress) -> Result<Spread, SolveError> {
    // A subset of the sweep, evenly spread in index (so in log frequency for a log sweep).
    let step = freqs.len().div_ceil(MAX_POINTS).max(1);
    let pick: Vec<usize> = (0..freqs.len()).step_by(step).collect();
    let grid: Vec<f64> = pick.iter().map(|i| freqs[*i]).collect();
    let grid_bands: Vec<Vec<usize>> = bands
        .iter()
        .map(|b| {
            let inside: Vec<usize> = (0..grid.len()).filter(|g| grid[*g] >= b.lo_hz * (1.0 - 1e-9) && grid[*g] <= b.hi_hz * (1.0 + 1e-9)).collect();
            if inside.is_empty() {
                let mid = (b.lo_hz * b.hi_hz).sqrt();
                vec![(0..grid.len()).min_by(|a, c| (grid[*a] / mid).ln().abs().partial_cmp(&(grid[*c] / mid).ln().abs()).unwrap_or(std::cmp::Ordering::Equal)).unwrap_or(0)]
            } else {
                inside
            }
        })
        .collect();
    let driver_names: Vec<&str> = scenes.as_designed.network.drivers.iter().map(|d| d.name.as_str()).collect();
    let tol_of = |s: &Scene, k: usize| s.network.part(&s.circuit.elements[k].name).and_then(|p| p.tolerance);
    // Every spread is relative to the original design with nominal parts.
    let reference: Vec<f64> = {
        let c = &scenes.as_designed.circuit;
        let mut ws = Sweeper::new(c);
        let ds = driver_elements(c, &scenes.as_designed.network)?;
        band_levels(c, &mut ws, &Basis::new(c, &grid), &ds, &grid_bands, &vec![1.0; c.elements.len()], None)
    };
    progress.start("tolerance runs", t.runs as u64 * 3);
    let mut levels = Vec::new();
    let mut curves = Vec::new();
    let per_run = driver_names.len() * grid.len();
    for s in scenes {
        let c = &s.circuit;
        let basis = Basis::new(c, &grid);
        let ds = driver_elements(c, &scenes.as_designed.network)?;
        // Parts share their draw across scenarios through their name.
        let streams: Vec<Option<(u64, f64)>> = (0..c.elements.len()).map(|k| tol_of(s, k).map(|tol| (hash(&c.elements[k].name), tol))).collect();
        let keep = s.scenario == Scenario::AsLeft;
        // The curves' band is drawn from the first runs only, so memory does not grow with
        // the runs; the band levels use every run.
        let curve_runs = t.runs.min(CURVE_RUNS);
        let mut kept = if keep { vec![0.0; curve_runs * per_run] } else { Vec::new() };
        let mut means = vec![0.0; t.runs * ds.len()];
        let work = |ws: &mut Sweeper, run: usize, mean: &mut [f64], curve: Option<&mut [f64]>| {
            let factors: Vec<f64> = streams
                .iter()
                .map(|st| match st {
                    Some((part, tol)) => 1.0 + draw(&mut generator(t.seed, *part, run), *tol, t.distribution),
                    None => 1.0,
                })
                .collect();
            mean.copy_from_slice(&band_levels(c, ws, &basis, &ds, &grid_bands, &factors, curve));
            progress.advance(1);
        };
        if keep {
            let (first, rest) = means.split_at_mut(curve_runs * ds.len());
            first.par_chunks_mut(ds.len()).zip(kept.par_chunks_mut(per_run)).enumerate().for_each_init(|| Sweeper::new(c), |ws, (run, (m, k))| work(ws, run, m, Some(k)));
            rest.par_chunks_mut(ds.len()).enumerate().for_each_init(|| Sweeper::new(c), |ws, (run, m)| work(ws, curve_runs + run, m, None));
        } else {
            means.par_chunks_mut(ds.len()).enumerate().for_each_init(|| Sweeper::new(c), |ws, (run, m)| work(ws, run, m, None));
        }
        for (j, name) in driver_names.iter().enumerate() {
            let v: Vec<f64> = means.chunks(ds.len()).map(|m| m[j] - reference[j]).collect();
            let q = |p| quantile(&v, p, |x| x);
            levels.push(LevelSpread { scenario: s.scenario, driver: name.to_string(), p5_db: q(0.05), p50_db: q(0.5), p95_db: q(0.95) });
        }
        if keep {
            let db = |p2: f64| 10.0 * p2.log10();
            for (j, name) in driver_names.iter().enumerate() {
                let mut lo = Vec::new();
                let mut hi = Vec::new();
                for gi in 0..grid.len() {
                    let v: Vec<f64> = kept.chunks(per_run).map(|r| r[j * grid.len() + gi]).collect();
                    lo.push(quantile(&v, 0.05, db));
                    hi.push(quantile(&v, 0.95, db));
                }
                curves.push((name.to_string(), lo, hi));
            }
        }
    }
    progress.finish();
    // Sensitivity in the as-left network: central difference of +-1 % in each part's value.
    let s = &scenes.as_left;
    let c = &s.circuit;
    let basis = Basis::new(c, &grid);
    let mut ws = Sweeper::new(c);
    let ds = driver_elements(c, &scenes.as_designed.network)?;
    let mut ranking = Vec::new();
    for (k, e) in c.elements.iter().enumerate() {
        if e.is_driver || matches!(e.model, ElementModel::Resistor { r } if r == 0.0) {
            continue;
        }
        let mut f = vec![1.0; c.elements.len()];
        f[k] = 1.01;
        let up = band_levels(c, &mut ws, &basis, &ds, &grid_bands, &f, None);
        f[k] = 0.99;
        let down = band_levels(c, &mut ws, &basis, &ds, &grid_bands, &f, None);
        for (j, name) in driver_names.iter().enumerate() {
            ranking.push(Sensitivity { driver: name.to_string(), part: e.name.clone(), db_per_percent: (up[j] - down[j]) / 2.0 });
        }
    }
    ranking.sort_by(|a, b| a.driver.cmp(&b.driver).then(b.db_per_percent.abs().partial_cmp(&a.db_per_percent.abs()).unwrap_or(std::cmp::Ordering::Equal)));
    Ok(Spread { runs: t.runs, seed: t.seed, distribution: t.distribution, levels, ranking, curve_hz: grid, curves })
}

fn hash(s: &str) -> u64 {
    // FNV-1a: stable across platforms and releases, unlike std's hasher.
    s.bytes().fold(0xcbf2_9ce4_8422_2325u64, |h, b| (h ^ b as u64).wrapping_mul(0x0100_0000_01b3))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn draws_have_the_moments_of_their_distributions() {
        // Uniform over +-t: mean 0, variance t^2 / 3; normal with t as two sigma: variance
        // t^2 / 4 (the definitions of the two distributions).
        let n = 100_000;
        let (t, name) = (0.1, hash("C1"));
        let uni: Vec<f64> = (0..n).map(|run| draw(&mut generator(3, name, run), t, Distribution::Uniform)).collect();
        let mean = uni.iter().sum::<f64>() / n as f64;
        let var = uni.iter().map(|x| x * x).sum::<f64>() / n as f64;
        assert!(mean.abs() < 0.001 && (var / (t * t / 3.0) - 1.0).abs() < 0.02, "{mean} {var}");
        assert!(uni.iter().all(|x| x.abs() <= t));
        let nor: Vec<f64> = (0..n).map(|run| draw(&mut generator(3, name, run), t, Distribution::Normal)).collect();
        let var = nor.iter().map(|x| x * x).sum::<f64>() / n as f64;
        assert!((var / (t * t / 4.0) - 1.0).abs() < 0.02, "{var}");
    }
}
