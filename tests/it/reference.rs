//! The engine against ngspice: six networks (tests/reference/*.yaml, with the SPICE decks
//! and make.py that regenerate the .csv files) covering every part kind, the resistance,
//! Re + Le and Small driver models, output impedance, a notch, a Zobel and an L-pad.

use num_complex::Complex64;
use std::path::Path;
use voicekeep::engine::{self, Circuit};

const NETWORKS: [&str; 6] = ["first-order", "butterworth-esr-dcr", "small-zobel", "lpad-tweeter", "notch-midrange", "three-way"];

fn read_csv(path: &Path) -> (Vec<String>, Vec<Vec<f64>>) {
    let text = std::fs::read_to_string(path).unwrap();
    let mut lines = text.lines().filter(|l| !l.starts_with('#'));
    let header = lines.next().unwrap().split(',').map(String::from).collect();
    let rows = lines.map(|l| l.split(',').map(|c| c.parse().unwrap()).collect()).collect();
    (header, rows)
}

#[test]
fn engine_matches_ngspice_within_a_thousandth_of_a_db() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/reference");
    for name in NETWORKS {
        let job = voicekeep::job::load(&dir.join(format!("{name}.yaml"))).unwrap_or_else(|e| panic!("{e}"));
        let (header, rows) = read_csv(&dir.join(format!("{name}.csv")));
        assert!(rows.len() >= 40, "{name}: want 40+ frequencies");
        let c = Circuit::from_network(&job.network, &job.amplifier).unwrap();
        let freqs: Vec<f64> = rows.iter().map(|r| r[0]).collect();
        let sol = engine::solve(&c, &freqs).unwrap();
        let drivers: Vec<&str> = header[1..header.len() - 2].iter().step_by(2).map(|h| h.trim_end_matches("_re")).collect();
        for (i, row) in rows.iter().enumerate() {
            for (j, d) in drivers.iter().enumerate() {
                let want = Complex64::new(row[1 + 2 * j], row[2 + 2 * j]);
                let got = sol.across(&c, i, c.element(d).unwrap());
                let (gd, gp) = engine::db_phase(got);
                let (wd, wp) = engine::db_phase(want);
                assert!((gd - wd).abs() < 0.001, "{name} {d} at {} Hz: {gd} dB vs ngspice {wd} dB", row[0]);
                let dp = engine::wrap_deg(gp - wp).abs();
                assert!(dp < 0.01, "{name} {d} at {} Hz: phase {gp} vs ngspice {wp}", row[0]);
            }
            let n = row.len();
            let want = Complex64::new(row[n - 2], row[n - 1]);
            let got = sol.input_impedance(&c, i);
            assert!((got.norm() / want.norm() - 1.0).abs() < 1e-4, "{name} Zin at {} Hz: {} vs {}", row[0], got.norm(), want.norm());
            assert!(engine::wrap_deg(got.arg().to_degrees() - want.arg().to_degrees()).abs() < 0.01, "{name} Zin phase at {} Hz", row[0]);
        }
    }
}
