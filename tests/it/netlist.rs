//! `netlist` against ngspice: each case's SPICE deck as voicekeep writes it is the one committed
//! in tests/netlist (so ngspice's committed solution, CASE.txt, is of this very deck), and that
//! solution agrees with voicekeep's engine on the same scenario within 1e-6 dB. make.sh there
//! regenerates the decks and ngspice's solutions.

use std::path::Path;

use num_complex::Complex64;
use voicekeep::engine::{self, Circuit};

use crate::util::{root, Cli};

const CASES: [(&str, &str); 6] = [
    ("samples/two-way-recap.yaml", "as-designed"),
    ("samples/two-way-recap.yaml", "as-found"),
    ("samples/two-way-recap.yaml", "as-left"),
    ("samples/substitute-tweeter.yaml", "as-found"),
    ("samples/substitute-tweeter.yaml", "as-left"),
    ("tests/netlist/film-loss.yaml", "as-left"),
];

/// ngspice's `wrdata` table: a header row of vector names, then frequency and each vector's
/// real and imaginary parts per row.
fn read_wrdata(path: &Path) -> (Vec<String>, Vec<Vec<f64>>) {
    let text = std::fs::read_to_string(path).unwrap();
    let mut lines = text.lines();
    let header: Vec<String> = lines.next().unwrap().split_whitespace().map(String::from).collect();
    let rows = lines.map(|l| l.split_whitespace().map(|c| c.parse().unwrap()).collect()).collect();
    (header, rows)
}

#[test]
fn each_netlist_solved_by_ngspice_agrees_with_the_engine() {
    let dir = root().join("tests/netlist");
    for (job_file, scenario) in CASES {
        let stem = Path::new(job_file).file_stem().unwrap().to_string_lossy().into_owned();
        let case = format!("{stem}-{scenario}");
        // The deck voicekeep writes today is the one ngspice solved.
        let o = Cli::new().args(["netlist", job_file, "--scenario", scenario]).run();
        o.code(0);
        let committed = std::fs::read_to_string(dir.join(format!("{case}.cir"))).unwrap();
        assert_eq!(o.stdout, committed, "{case}: the netlist changed; rerun tests/netlist/make.sh");

        // The engine on the same scenario's network (with the fitted values), at ngspice's
        // own frequencies.
        let job = voicekeep::job::load(&root().join(job_file)).unwrap_or_else(|e| panic!("{e}"));
        let out = voicekeep::analysis::analyse_job(&job, &voicekeep::analysis::Quiet).unwrap();
        let voicekeep::analysis::Outcome::One(f) = out else { panic!("{case}: one cabinet") };
        let s = voicekeep::model::Scenario::ALL.into_iter().find(|s| s.key() == scenario.replace('-', "_")).unwrap();
        let net = &f.scenes[s].network;
        let c = Circuit::from_network(net, &job.amplifier).unwrap();
        let (header, rows) = read_wrdata(&dir.join(format!("{case}.txt")));
        assert!(rows.len() > 200, "{case}");
        let freqs: Vec<f64> = rows.iter().map(|r| r[0]).collect();
        let sol = engine::solve(&c, &freqs).unwrap();
        let mut checked = 0;
        for d in &net.drivers {
            let Some(col) = header.iter().position(|h| *h == format!("v_{}", d.name)) else { panic!("{case}: no v_{}", d.name) };
            let Some(k) = c.element(&d.name) else {
                // A driver read open has no element in either.
                assert!(d.fault.is_some(), "{case}: {}", d.name);
                continue;
            };
            for (i, row) in rows.iter().enumerate() {
                let want = Complex64::new(row[col], row[col + 1]);
                let got = sol.across(&c, i, k);
                let (gd, gp) = engine::db_phase(got);
                let (wd, wp) = engine::db_phase(want);
                assert!((gd - wd).abs() < 1e-6, "{case} {} at {} Hz: {gd} dB, ngspice {wd} dB", d.name, row[0]);
                assert!(engine::wrap_deg(gp - wp).abs() < 1e-5, "{case} {} at {} Hz: {gp} deg, ngspice {wp} deg", d.name, row[0]);
                checked += 1;
            }
        }
        let zc = header.iter().position(|h| h == "zin").unwrap();
        for (i, row) in rows.iter().enumerate() {
            let want = Complex64::new(row[zc], row[zc + 1]);
            let got = sol.input_impedance(&c, i);
            assert!((got / want - 1.0).norm() < 1e-7, "{case} impedance at {} Hz: {got} against ngspice {want}", row[0]);
        }
        assert!(checked > 200, "{case}: {checked} points");
    }
}

#[test]
fn a_driver_spice_cannot_hold_is_refused_by_name() {
    // The three-way sample's midrange is a measured table; the repair sample's woofer has
    // Leach's lossy coil.
    Cli::new().args(["netlist", "samples/three-way-mid-table.yaml"]).run().code(1).stderr_has("driver MF is given as a measured impedance table").stderr_has("hint:");
    Cli::new().args(["netlist", "samples/repair-like-for-like.yaml"]).run().code(1).stderr_has("Leach's lossy voice coil");
    Cli::new().args(["netlist", "samples/two-way-recap.yaml", "--scenario", "as-built"]).run().code(2);
    Cli::new().args(["netlist", "samples/pair-recap.yaml"]).run().code(2).stderr_has("--cabinet (KB-5120, KB-5121)");
    Cli::new().args(["netlist", "samples/pair-recap.yaml", "--cabinet", "KB-5121"]).run().code(0).stdout_has("cabinet KB-5121");
}
