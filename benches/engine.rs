//! Criterion benchmarks of the circuit engine (`cargo bench --bench engine`): the sweep of
//! the three-way reference network at 100,000 log-spaced points, and one point solved four
//! ways on the same network, the measurement behind the engine's choice of solver:
//!
//! - the elimination plan with one lane and with four lanes (the engine's own path);
//! - the full modified-nodal system with our dense partial-pivoting LU (the fallback);
//! - the same system with nalgebra's LU (a general-purpose dense solver from crates.io).
//!
//! Measured figures are in DEVELOPERS.md; `benches/ngspice.sh` times whole processes
//! beside ngspice.

use std::hint::black_box;
use std::path::Path;

use criterion::{criterion_group, criterion_main, BatchSize, Criterion, Throughput};
use nalgebra::{DMatrix, DVector};
use voicekeep::engine::{self, Circuit, Lanes, Workspace};

fn reference() -> Circuit {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let job = voicekeep::job::load(&root.join("tests/reference/three-way.yaml")).expect("reference job");
    Circuit::from_network(&job.network, &job.amplifier).expect("circuit")
}

fn sweep(cr: &mut Criterion) {
    let c = reference();
    let n = 100_000;
    let freqs: Vec<f64> = (0..n).map(|k| 20.0 * 1000f64.powf(k as f64 / (n - 1) as f64)).collect();
    let mut g = cr.benchmark_group("sweep");
    g.throughput(Throughput::Elements(n as u64));
    g.sample_size(20);
    g.bench_function("three-way reference, 100000 points", |b| b.iter(|| engine::solve(&c, black_box(&freqs)).expect("solves")));
    g.finish();
}

fn one_point(cr: &mut Criterion) {
    let c = reference();
    let f = 1000.0;
    let mut g = cr.benchmark_group("one point, 1 kHz");

    let mut ws = Workspace::new(&c);
    g.bench_function("plan, one lane, with impedances", |b| b.iter(|| engine::solve_point(&c, black_box(f), &mut ws).expect("solves")));

    let mut lanes = Lanes::<4>::new(&c);
    for (k, e) in c.elements.iter().enumerate() {
        lanes.z[k] = [0.0, 1.0, 2.0, 3.0].map(|d| e.model.impedance(f + d));
    }
    g.throughput(Throughput::Elements(4));
    g.bench_function("plan, four lanes, impedances given (per 4 points)", |b| b.iter(|| black_box(lanes.solve(&c))));
    g.throughput(Throughput::Elements(1));

    g.bench_function("dense pivoting LU of the full system, with impedances", |b| b.iter(|| engine::solve_point_pivoting(&c, black_box(f), &mut ws).expect("solves")));

    // The assembled system alone, factorised and solved by each dense solver.
    let (m, rhs, n) = engine::mna_system(&c, f);
    g.bench_function("dense LU (ours), system given", |b| {
        b.iter_batched(
            || (m.clone(), rhs.clone()),
            |(mut m, mut x)| {
                engine::lu_solve(&mut m, &mut x, n).expect("regular");
                x
            },
            BatchSize::SmallInput,
        )
    });
    let nm = DMatrix::from_row_slice(n, n, &m);
    let nb = DVector::from_column_slice(&rhs);
    g.bench_function("dense LU (nalgebra), system given", |b| b.iter_batched(|| nm.clone(), |m| m.lu().solve(&nb).expect("regular"), BatchSize::SmallInput));
    g.finish();

    // The three agree (a check, not a timing): the same node voltages to 1e-12.
    let mut ours = (m.clone(), rhs.clone());
    engine::lu_solve(&mut ours.0, &mut ours.1, n).expect("regular");
    let theirs = nm.lu().solve(&nb).expect("regular");
    engine::solve_point(&c, f, &mut ws).expect("solves");
    for k in 1..c.nodes.len() {
        let (a, b, p) = (ours.1[k - 1], theirs[k - 1], ws.v(k));
        assert!((a - b).norm() < 1e-12 * a.norm().max(1.0) && (a - p).norm() < 1e-12 * a.norm().max(1.0), "node {k}: {a} {b} {p}");
    }
}

criterion_group!(benches, sweep, one_point);
criterion_main!(benches);
