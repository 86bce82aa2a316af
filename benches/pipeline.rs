//! Criterion benchmarks of the work around the engine (`cargo bench --bench pipeline`): every
//! finding of the three-way reference job at about 100,000 points (the in-process part of
//! what `benches/ngspice.sh` times as a whole process); the Monte Carlo of the three-way
//! sample; the demo's job-to-PDF time; and a pair job beside one of its cabinets alone. For the one-core Monte Carlo figure run
//! `RAYON_NUM_THREADS=1 cargo bench --bench pipeline`. Measured figures are in DEVELOPERS.md.

use std::path::Path;

use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use voicekeep::analysis::{self, tolerance};
use voicekeep::model::{Distribution, Sweep, ToleranceRuns};

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

fn findings(cr: &mut Criterion) {
    let mut job = voicekeep::job::load(&root().join("tests/reference/three-way.yaml")).expect("reference job");
    // The same sweep as benches/ngspice.sh: 10,000 points an octave, 20 Hz to 20 kHz.
    job.analysis.sweep = Sweep::Log { from: 20.0, to: 20_000.0, per_octave: 10_000.0 };
    let n = job.analysis.sweep.frequencies().len();
    let mut g = cr.benchmark_group("findings");
    g.sample_size(20);
    g.throughput(Throughput::Elements(3 * n as u64));
    g.bench_function(format!("three-way reference, {n} points x 3 scenarios"), |b| b.iter(|| analysis::analyse(&job).expect("analyse")));
    g.finish();
}

fn monte_carlo(cr: &mut Criterion) {
    let sample = voicekeep::job::load(&root().join("samples/three-way-mid-table.yaml")).expect("sample");
    let f = analysis::analyse(&sample).expect("analyse");
    let freqs: Vec<f64> = (0..200).map(|k| 20.0 * 1000f64.powf(k as f64 / 199.0)).collect();
    let runs = ToleranceRuns { runs: 10_000, seed: 1, distribution: Distribution::Uniform };
    let mut g = cr.benchmark_group("monte carlo");
    g.sample_size(10);
    g.bench_function(format!("three-way sample, 10000 runs x 200 points x 3 scenarios, {} threads", rayon::current_num_threads()), |b| {
        b.iter(|| tolerance::run(&runs, &freqs, &f.bands, &f.scenes, &voicekeep::analysis::Quiet))
    });
    g.finish();
}

fn report(cr: &mut Criterion) {
    let demo = voicekeep::job::load(&root().join("samples/two-way-recap.yaml")).expect("demo");
    let mut g = cr.benchmark_group("report");
    g.sample_size(10);
    g.bench_function("two-way demo, job to PDF (customer template)", |b| {
        b.iter(|| {
            let o = analysis::analyse_job(&demo, &analysis::Quiet).expect("analyse");
            voicekeep::report::render_outcome(&demo, &o, &demo.template).expect("render")
        })
    });
    g.finish();
}

/// A pair job against one of its cabinets as a job of its own, solve and customer report
/// each, side by side: the target is no more than twice the single cabinet's time.
fn pair(cr: &mut Criterion) {
    let job = voicekeep::job::load(&root().join("samples/pair-recap.yaml")).expect("pair sample");
    let single = job.for_cabinet(&job.cabinets[0]);
    let mut g = cr.benchmark_group("pair");
    g.sample_size(10);
    g.bench_function("one cabinet of the pair sample, solve and PDF", |b| {
        b.iter(|| {
            let o = analysis::analyse_job(&single, &analysis::Quiet).expect("analyse");
            voicekeep::report::render_outcome(&single, &o, &single.template).expect("render")
        })
    });
    g.bench_function("the pair sample, two cabinets, solve and PDF", |b| {
        b.iter(|| {
            let o = analysis::analyse_job(&job, &analysis::Quiet).expect("analyse");
            voicekeep::report::render_outcome(&job, &o, &job.template).expect("render")
        })
    });
    g.finish();
}

criterion_group!(benches, findings, monte_carlo, report, pair);
criterion_main!(benches);
