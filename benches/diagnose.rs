//! Criterion benchmark of the diagnosis (`cargo bench --bench diagnose`): 10 parameters of the
//! three-way sample (samples/three-way-mid-table.yaml, as found) estimated from a 1,000-point
//! sweep at its terminals, made here from the same network with two parts drifted (C1 15 %
//! low, L2's DCR doubled), on one core (the fit runs on one thread). Target: under 0.5 s.
//! The fit is checked to find both drifts before it is timed.
//! Measured figures are in DEVELOPERS.md.

use std::path::Path;

use criterion::{criterion_group, criterion_main, Criterion};
use voicekeep::analysis::diagnose::{self, Param};
use voicekeep::model::ImpedanceTable;

fn diagnosis(cr: &mut Criterion) {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let job = voicekeep::job::load(&root.join("samples/three-way-mid-table.yaml")).expect("sample");
    let net = job.as_found();
    let mut drifted = net.clone();
    drifted.part_mut("C1").expect("C1").value *= 0.85;
    drifted.part_mut("L2").expect("L2").dcr *= 2.0;
    let n = 1000;
    let freqs: Vec<f64> = (0..n).map(|k| 20.0 * 1000f64.powf(k as f64 / (n - 1) as f64)).collect();
    let z = voicekeep::analysis::input_impedances(&drifted, &job.amplifier, &freqs).expect("solves");
    let sweep =
        ImpedanceTable { file: "bench.csv".into(), freq_hz: freqs.clone(), ohm: z.iter().map(|z| z.norm()).collect(), phase_deg: z.iter().map(|z| z.arg().to_degrees()).collect() };
    // The suspects a technician would name: the electrolytics' values and ESRs, the
    // inductors' values and L2's DCR.
    let names = ["C1.value", "C1.esr", "C2.value", "C2.esr", "L2.value", "L2.dcr", "C3.value", "C4.value", "C4.esr", "L4.value"];
    let params: Vec<Param> = names.iter().filter_map(|s| s.split_once('.')).map(|(a, b)| Param::new(a, b)).collect();
    let d = diagnose::diagnose(&net, &job.amplifier, &sweep, &params, (20.0, 20_000.0)).expect("fits");
    let got = |p: &str, f: &str| d.estimates.iter().find(|e| e.part == p && e.field == f).map(|e| e.value / e.start).unwrap_or(0.0);
    assert!((got("C1", "value") - 0.85).abs() < 1e-3 && (got("L2", "dcr") - 2.0).abs() < 1e-3, "{}", d.sentence);
    let mut g = cr.benchmark_group("diagnosis");
    g.sample_size(10);
    g.bench_function("three-way sample, 10 parameters, 1000 points", |b| b.iter(|| diagnose::diagnose(&net, &job.amplifier, &sweep, &params, (20.0, 20_000.0)).expect("fits")));
    g.finish();
}

criterion_group!(benches, diagnosis);
criterion_main!(benches);
