//! Tolerance analysis: a seeded Monte Carlo over every part's tolerance, giving each driver's
//! 5-95 % level band per scenario, and a ranking of the parts that move each level most.
//!
//! Every run draws from its own generator seeded from (seed, run number), so results do not
//! depend on how many threads share the work.

use rayon::prelude::*;

use crate::analysis::{Band, Scene};
use crate::engine::{self, Circuit, ElementModel, Workspace};
use crate::model::{Distribution, Job, Scenario, ToleranceRuns};

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

/// SplitMix64: small, fast and good enough for tolerance draws.
pub struct Rng(u64);

impl Rng {
    pub fn new(seed: u64, stream: u64) -> Self {
        let mut r = Rng(seed ^ stream.wrapping_mul(0x9E37_79B9_7F4A_7C15));
        r.next_u64();
        r
    }
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    /// Standard normal (Box-Muller).
    pub fn normal(&mut self) -> f64 {
        let u1 = self.uniform().max(1e-300);
        let u2 = self.uniform();
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }
}

/// The relative deviation of one part: uniform over +-t, or normal with the tolerance taken as
/// two standard deviations (our choice: about 95 % of parts inside their marked tolerance).
fn draw(rng: &mut Rng, t: f64, dist: Distribution) -> f64 {
    match dist {
        Distribution::Uniform => (2.0 * rng.uniform() - 1.0) * t,
        Distribution::Normal => rng.normal() * t / 2.0,
    }
}

pub fn scaled(model: &ElementModel, factor: f64) -> ElementModel {
    match model {
        ElementModel::Resistor { r } => ElementModel::Resistor { r: r * factor },
        ElementModel::Capacitor { c, esr, tan_delta } => ElementModel::Capacitor { c: c * factor, esr: *esr, tan_delta: *tan_delta },
        ElementModel::Inductor { l, dcr } => ElementModel::Inductor { l: l * factor, dcr: *dcr },
        ElementModel::Driver(d) => ElementModel::Driver(d.clone()),
    }
}

/// Band-mean level of each driver at the chosen points, with element k's value scaled by factors[k].
fn band_levels(c: &Circuit, ws: &mut Workspace, freqs: &[f64], drivers: &[usize], bands: &[Vec<usize>], factors: &[f64], curves: Option<&mut Vec<Vec<f64>>>) -> Vec<f64> {
    let models: Vec<ElementModel> = c.elements.iter().zip(factors).map(|(e, f)| if *f == 1.0 { e.model.clone() } else { scaled(&e.model, *f) }).collect();
    let mut per_point = vec![vec![0.0; freqs.len()]; drivers.len()];
    for (i, f) in freqs.iter().enumerate() {
        let Ok(p) = engine::solve_point_with(c, *f, ws, |k, f| models[k].impedance(f)) else { continue };
        for (j, &k) in drivers.iter().enumerate() {
            per_point[j][i] = 20.0 * p.across(c, k).norm().max(1e-300).log10();
        }
    }
    let means = bands.iter().enumerate().map(|(j, b)| b.iter().map(|i| per_point[j][*i]).sum::<f64>() / b.len().max(1) as f64).collect();
    if let Some(out) = curves {
        *out = per_point;
    }
    means
}

fn percentile(sorted: &[f64], p: f64) -> f64 {
    let x = p * (sorted.len() - 1) as f64;
    let (i, t) = (x.floor() as usize, x.fract());
    if i + 1 < sorted.len() {
        sorted[i] * (1.0 - t) + sorted[i + 1] * t
    } else {
        sorted[i]
    }
}

pub fn run(job: &Job, t: &ToleranceRuns, freqs: &[f64], bands: &[Band], scenes: &[Scene; 3]) -> Spread {
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
    let driver_names: Vec<&str> = job.network.drivers.iter().map(|d| d.name.as_str()).collect();
    let tol_of = |s: &Scene, k: usize| s.network.part(&s.circuit.elements[k].name).and_then(|p| p.tolerance);
    // Every spread is relative to the original design with nominal parts.
    let reference: Vec<f64> = {
        let c = &scenes[0].circuit;
        let mut ws = Workspace::new(c);
        let ds: Vec<usize> = driver_names.iter().map(|n| c.element(n).expect("driver")).collect();
        band_levels(c, &mut ws, &grid, &ds, &grid_bands, &vec![1.0; c.elements.len()], None)
    };
    let progress = progress_bar(t.runs as u64 * 3);
    let mut levels = Vec::new();
    let mut curves = Vec::new();
    for s in scenes {
        let c = &s.circuit;
        let ds: Vec<usize> = driver_names.iter().map(|n| c.element(n).expect("driver")).collect();
        // Parts share their draw across scenarios through their name.
        let part_names: Vec<String> = c.elements.iter().map(|e| e.name.clone()).collect();
        let results: Vec<(Vec<f64>, Vec<Vec<f64>>)> = (0..t.runs)
            .into_par_iter()
            .map_init(
                || Workspace::new(c),
                |ws, run| {
                    let factors: Vec<f64> = (0..c.elements.len())
                        .map(|k| match tol_of(s, k) {
                            Some(tol) => {
                                let mut rng = Rng::new(t.seed ^ hash(&part_names[k]), run as u64);
                                1.0 + draw(&mut rng, tol, t.distribution)
                            }
                            None => 1.0,
                        })
                        .collect();
                    let mut per = Vec::new();
                    let keep = s.scenario == Scenario::AsLeft;
                    let m = band_levels(c, ws, &grid, &ds, &grid_bands, &factors, if keep { Some(&mut per) } else { None });
                    if let Some(p) = &progress {
                        p.inc(1);
                    }
                    (m, per)
                },
            )
            .collect();
        for (j, name) in driver_names.iter().enumerate() {
            let mut v: Vec<f64> = results.iter().map(|r| r.0[j] - reference[j]).collect();
            v.sort_by(|a, b| a.partial_cmp(b).unwrap_or(std::cmp::Ordering::Equal));
            levels.push(LevelSpread { scenario: s.scenario, driver: name.to_string(), p5_db: percentile(&v, 0.05), p50_db: percentile(&v, 0.5), p95_db: percentile(&v, 0.95) });
        }
        if s.scenario == Scenario::AsLeft {
            for (j, name) in driver_names.iter().enumerate() {
                let mut lo = Vec::new();
                let mut hi = Vec::new();
                for gi in 0..grid.len() {
                    let mut v: Vec<f64> = results.iter().map(|r| r.1[j][gi]).collect();
                    v.sort_by(|a, b| a.partial_cmp(b).unwrap_or(std::cmp::Ordering::Equal));
                    lo.push(percentile(&v, 0.05));
                    hi.push(percentile(&v, 0.95));
                }
                curves.push((name.to_string(), lo, hi));
            }
        }
    }
    if let Some(p) = progress {
        p.finish_and_clear();
    }
    // Sensitivity in the as-left network: central difference of +-1 % in each part's value.
    let s = &scenes[2];
    let c = &s.circuit;
    let mut ws = Workspace::new(c);
    let ds: Vec<usize> = driver_names.iter().map(|n| c.element(n).expect("driver")).collect();
    let mut ranking = Vec::new();
    for (k, e) in c.elements.iter().enumerate() {
        if e.is_driver || matches!(e.model, ElementModel::Resistor { r } if r == 0.0) {
            continue;
        }
        let mut f = vec![1.0; c.elements.len()];
        f[k] = 1.01;
        let up = band_levels(c, &mut ws, &grid, &ds, &grid_bands, &f, None);
        f[k] = 0.99;
        let down = band_levels(c, &mut ws, &grid, &ds, &grid_bands, &f, None);
        for (j, name) in driver_names.iter().enumerate() {
            ranking.push(Sensitivity { driver: name.to_string(), part: e.name.clone(), db_per_percent: (up[j] - down[j]) / 2.0 });
        }
    }
    ranking.sort_by(|a, b| a.driver.cmp(&b.driver).then(b.db_per_percent.abs().partial_cmp(&a.db_per_percent.abs()).unwrap_or(std::cmp::Ordering::Equal)));
    Spread { runs: t.runs, seed: t.seed, distribution: t.distribution, levels, ranking, curve_hz: grid, curves }
}

fn hash(s: &str) -> u64 {
    // FNV-1a: stable across platforms and releases, unlike std's hasher.
    s.bytes().fold(0xcbf2_9ce4_8422_2325u64, |h, b| (h ^ b as u64).wrapping_mul(0x0100_0000_01b3))
}

/// A progress bar on a terminal for long runs (hidden when stderr is not a terminal).
fn progress_bar(total: u64) -> Option<indicatif::ProgressBar> {
    use std::io::IsTerminal;
    if !std::io::stderr().is_terminal() || total < 3000 {
        return None;
    }
    let p = indicatif::ProgressBar::new(total);
    p.set_style(indicatif::ProgressStyle::with_template("tolerance runs {bar:40} {pos}/{len} {eta}").unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()));
    Some(p)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rng_is_reproducible_and_uniform() {
        let mut a = Rng::new(1, 7);
        let mut b = Rng::new(1, 7);
        assert_eq!(a.next_u64(), b.next_u64());
        let mut r = Rng::new(3, 0);
        let n = 100_000;
        let mean = (0..n).map(|_| r.uniform()).sum::<f64>() / n as f64;
        assert!((mean - 0.5).abs() < 0.005);
        let mut r = Rng::new(3, 1);
        let var = (0..n).map(|_| r.normal().powi(2)).sum::<f64>() / n as f64;
        assert!((var - 1.0).abs() < 0.02);
    }
}
