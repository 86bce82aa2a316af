//! Analytic checks of the engine and the analysis against textbook formulas.

use voicekeep::analysis;
use voicekeep::engine::{self, Circuit};

use crate::util::job_from;

fn level_at(yaml: &str, driver: &str, f: f64) -> (f64, f64) {
    let job = job_from(yaml);
    let c = Circuit::from_network(&job.network, &job.amplifier).unwrap();
    let s = engine::solve(&c, &[f]).unwrap();
    engine::db_phase(s.across(&c, 0, c.element(driver).unwrap()))
}

fn two_way(c: &str, l: &str, hp_shunt: &str, lp_shunt: &str) -> String {
    format!(
        "voicekeep: 1\njob: {{ number: A, date: 2026-01-01 }}\namplifier: {{ power: 10 W, into: 8 ohm }}\nnetwork:\n  input: [IN, COM]\n  parts:\n    C1: {{ kind: capacitor, between: [IN, H1], value: {c} }}\n    L1: {{ kind: inductor, between: [IN, W1], value: {l}, dcr: 0 ohm }}\n{hp_shunt}{lp_shunt}  drivers:\n    HF: {{ role: tweeter, between: [H1, COM], model: {{ resistance: 8 ohm }} }}\n    LF: {{ role: woofer, between: [W1, COM], model: {{ resistance: 8 ohm }} }}\nanalysis: {{ sweep: {{ at: [3 kHz] }} }}\n"
    )
}

#[test]
fn first_order_filters_at_crossover() {
    // Textbook first order into 8 ohm at 3 kHz (check-values.md [derived]): C 6.6315 uF,
    // L 0.42441 mH; -3.0103 dB, +45 / -45 degrees.
    let y = two_way("6.6315 uF", "0.42441 mH", "", "");
    let (hd, hp) = level_at(&y, "HF", 3000.0);
    let (ld, lp) = level_at(&y, "LF", 3000.0);
    assert!((hd + 3.0103).abs() < 1e-3 && (ld + 3.0103).abs() < 1e-3, "{hd} {ld}");
    assert!((hp - 45.0).abs() < 0.01 && (lp + 45.0).abs() < 0.01, "{hp} {lp}");
}

#[test]
fn butterworth_and_linkwitz_riley_at_crossover() {
    // Second-order Butterworth, 8 ohm, 3 kHz: L 0.60021 mH, C 4.6891 uF; -3.0103 dB, +-90 deg.
    let shunt_l = |v: &str| format!("    L2: {{ kind: inductor, between: [H1, COM], value: {v}, dcr: 0 ohm }}\n");
    let shunt_c = |v: &str| format!("    C2: {{ kind: capacitor, between: [W1, COM], value: {v} }}\n");
    let y = two_way("4.6891 uF", "0.60021 mH", &shunt_l("0.60021 mH"), &shunt_c("4.6891 uF"));
    let (hd, hp) = level_at(&y, "HF", 3000.0);
    let (ld, lp) = level_at(&y, "LF", 3000.0);
    assert!((hd + 3.0103).abs() < 2e-3 && (ld + 3.0103).abs() < 2e-3, "{hd} {ld}");
    assert!((hp - 90.0).abs() < 0.02 && (lp + 90.0).abs() < 0.02, "{hp} {lp}");
    // Linkwitz-Riley: L 0.84883 mH, C 3.3157 uF; -6.0206 dB at f.
    let y = two_way("3.3157 uF", "0.84883 mH", &shunt_l("0.84883 mH"), &shunt_c("3.3157 uF"));
    let (hd, _) = level_at(&y, "HF", 3000.0);
    let (ld, _) = level_at(&y, "LF", 3000.0);
    assert!((hd + 6.0206).abs() < 2e-3 && (ld + 6.0206).abs() < 2e-3, "{hd} {ld}");
}

#[test]
fn series_resistance_ahead_of_a_resistive_load() {
    // A series dR ahead of Re changes the level by 20 log10(Re / (Re + dR)).
    for dr in [0.22, 0.68, 1.5] {
        let y = format!("voicekeep: 1\njob: {{ number: A, date: 2026-01-01 }}\namplifier: {{ power: 10 W, into: 8 ohm }}\nnetwork:\n  input: [IN, COM]\n  parts:\n    R1: {{ kind: resistor, between: [IN, H1], value: {dr} ohm }}\n  drivers:\n    HF: {{ role: tweeter, between: [H1, COM], model: {{ resistance: 5.2 ohm }} }}\nanalysis: {{ sweep: {{ at: [1 kHz] }} }}\n");
        let (d, _) = level_at(&y, "HF", 1000.0);
        assert!((d - 20.0 * (5.2f64 / (5.2 + dr)).log10()).abs() < 1e-9);
    }
}

#[test]
fn energy_balance_at_every_frequency() {
    // Power into the network equals the sum of dissipation in every element (Tellegen).
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    for sample in ["samples/two-way-recap.yaml", "samples/three-way-mid-table.yaml", "samples/repair-like-for-like.yaml"] {
        let job = voicekeep::job::load(&dir.join(sample)).unwrap();
        let f = analysis::analyse(&job).unwrap();
        for s in &f.scenes {
            let sol = engine::solve(&s.circuit, &f.freqs).unwrap();
            for (i, &f_hz) in sol.freqs.iter().enumerate() {
                let vin = sol.v(i, s.circuit.input);
                let pin = (vin * sol.i_in(i).conj()).re;
                let sum: f64 = s.circuit.elements.iter().enumerate().map(|(k, e)| sol.current(&s.circuit, i, k).norm_sqr() * e.model.loss_ohm(f_hz)).sum();
                assert!((pin - sum).abs() <= 1e-9 * pin.abs().max(1e-12), "{sample} {:?} at {f_hz} Hz: {pin} vs {sum}", s.scenario);
            }
        }
    }
}

#[test]
fn scene_peaks_match_the_stored_sweep() {
    // The scene keeps each element's extremes from one pass over the stress grid; worked out
    // again here from the engine's full stored solution (node voltages, currents from V / Z)
    // they agree.
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    for sample in ["samples/two-way-recap.yaml", "samples/three-way-mid-table.yaml", "samples/repair-like-for-like.yaml"] {
        let job = voicekeep::job::load(&dir.join(sample)).unwrap();
        let f = analysis::analyse(&job).unwrap();
        let (grid, w) = (&f.grid.freqs, &f.grid.weights);
        for s in &f.scenes {
            let sol = engine::solve(&s.circuit, grid).unwrap();
            for (k, e) in s.circuit.elements.iter().enumerate() {
                let at = |i: usize| {
                    let (v2, i2) = (sol.across(&s.circuit, i, k).norm_sqr(), sol.current(&s.circuit, i, k).norm_sqr());
                    (v2, i2, i2 * e.model.impedance(grid[i]).re)
                };
                let all: Vec<(f64, f64, f64)> = (0..grid.len()).map(at).collect();
                let max = |g: fn(&(f64, f64, f64)) -> f64| all.iter().map(g).fold(0.0, f64::max);
                let p = &s.peaks[k];
                let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * b.abs().max(1e-15);
                let what = format!("{sample} {:?} {}", s.scenario, e.name);
                assert!(close(p.v2.0, max(|x| x.0)) && close(all[p.v2.1].0, p.v2.0), "{what}: |V|^2");
                assert!(close(p.i2.0, max(|x| x.1)) && close(all[p.i2.1].1, p.i2.0), "{what}: |I|^2");
                assert!(close(p.power.0, max(|x| x.2)) && close(all[p.power.1].2, p.power.0), "{what}: power");
                let prog: f64 = all.iter().zip(w).map(|(x, w)| w * x.2).sum();
                assert!(close(p.programme, prog), "{what}: programme {} vs {prog}", p.programme);
            }
        }
    }
}
