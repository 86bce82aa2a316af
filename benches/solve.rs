//! Benchmarks (`cargo bench`; a plain timing binary, best of several runs): the engine's
//! sweep over 100,000 log-spaced points on the three-way reference network; one point
//! through the plan (one and four lanes) and through the pivoting LU of the full system (the
//! measurement behind the engine's choice of solver); the Monte Carlo of the three-way
//! sample; and the demo's job-to-PDF time. Targets and measured figures are in
//! DEVELOPERS.md; `benches/ngspice.sh` times whole processes beside ngspice. For the
//! one-core Monte Carlo figure run `RAYON_NUM_THREADS=1 cargo bench`.

use std::path::Path;
use std::time::Instant;

use voicekeep::analysis::{self, tolerance};
use voicekeep::engine::{self, Circuit, Lanes, Workspace};
use voicekeep::model::{Distribution, ToleranceRuns};

/// The shortest of `n` timed runs, in seconds.
fn best_of<T>(n: usize, mut f: impl FnMut() -> T) -> f64 {
    (0..n)
        .map(|_| {
            let t = Instant::now();
            std::hint::black_box(f());
            t.elapsed().as_secs_f64()
        })
        .fold(f64::INFINITY, f64::min)
}

fn main() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let job = voicekeep::job::load(&root.join("tests/reference/three-way.yaml")).expect("reference job");
    let c = Circuit::from_network(&job.network, &job.amplifier).expect("circuit");
    let n = 100_000;
    let freqs: Vec<f64> = (0..n).map(|k| 20.0 * 1000f64.powf(k as f64 / (n - 1) as f64)).collect();
    let t = best_of(9, || engine::solve(&c, &freqs).expect("solves"));
    println!("solve, three-way reference network, {n} points: {:.1} ms ({:.3} us a point)", t * 1e3, t * 1e6 / n as f64);

    // One point at 1 kHz, many times over: the linear algebra and the models' impedances.
    let reps = 200_000;
    let mut ws = Workspace::new(&c);
    let t = best_of(5, || (0..reps).for_each(|_| engine::solve_point(&c, 1000.0, &mut ws).expect("solves")));
    println!("  one point through the plan, one lane: {:.3} us", t * 1e6 / reps as f64);
    let mut lanes = Lanes::<4>::new(&c);
    for (k, e) in c.elements.iter().enumerate() {
        lanes.z[k] = [0.0, 1.0, 2.0, 3.0].map(|d| e.model.impedance(1000.0 + d));
    }
    let t = best_of(5, || {
        (0..reps / 4).for_each(|_| {
            std::hint::black_box(lanes.solve(&c));
        })
    });
    println!("  the plan's factorisation, four lanes, impedances given: {:.3} us a point", t * 1e6 / reps as f64);
    let t = best_of(5, || (0..reps).for_each(|_| engine::solve_point_pivoting(&c, 1000.0, &mut ws).expect("solves")));
    println!("  one point through the dense pivoting LU of the full system: {:.3} us", t * 1e6 / reps as f64);

    let sample = voicekeep::job::load(&root.join("samples/three-way-mid-table.yaml")).expect("sample");
    let f = analysis::analyse(&sample).expect("analyse");
    let freqs: Vec<f64> = (0..200).map(|k| 20.0 * 1000f64.powf(k as f64 / 199.0)).collect();
    let runs = ToleranceRuns { runs: 10_000, seed: 1, distribution: Distribution::Uniform };
    let t = best_of(3, || tolerance::run(&sample, &runs, &freqs, &f.bands, &f.scenes));
    println!("Monte Carlo, three-way sample, 10000 runs x 200 points x 3 scenarios, {} threads: {:.3} s ({:.3} s per scenario)", rayon::current_num_threads(), t, t / 3.0);

    let demo = voicekeep::job::load(&root.join("samples/two-way-recap.yaml")).expect("demo");
    let t = best_of(3, || {
        let f = analysis::analyse(&demo).expect("analyse");
        voicekeep::report::render(&demo, &f, &demo.template).expect("render")
    });
    println!("job to PDF, two-way demo (customer template, fonts included): {:.3} s", t);
}
