//! The commands on the shipped samples: check, new, solve (text and the JSON contract),
//! compensation against independent solves and analytic values, and the Monte Carlo.

use std::path::PathBuf;
use std::process::Command;

use crate::util::{job_from, root, Cli};
use voicekeep::analysis;
use voicekeep::engine::{self, Circuit};

pub const SAMPLES: [&str; 3] = ["samples/two-way-recap.yaml", "samples/three-way-mid-table.yaml", "samples/repair-like-for-like.yaml"];

#[test]
fn every_sample_passes_check() {
    for s in SAMPLES {
        Cli::new().args(["check", s]).run().code(0).stdout_has("ok");
    }
}

#[test]
fn starter_jobs_pass_check() {
    for ex in ["two-way", "repair"] {
        let o = Cli::new().args(["new", "--example", ex]).run();
        o.code(0);
        Cli::new().job(&o.stdout).args(["check", "{job}"]).run().code(0);
    }
    let o = Cli::new().args(["new"]).run();
    assert!(o.stdout.contains("voicekeep: 1") && o.stdout.contains("# "), "a commented starter");
}

fn contract_script() -> PathBuf {
    // The shared contract when it is beside the checkout (as in CI), else our copy of it.
    let shared = root().join("../shared/checks/json-contract.py");
    if shared.exists() {
        shared
    } else {
        root().join("tests/contract/json-contract.py")
    }
}

fn solve_json(sample: &str) -> serde_json::Value {
    let o = Cli::new().args(["solve", sample, "--format", "json"]).run();
    o.code(0);
    serde_json::from_str(&o.stdout).unwrap()
}

#[test]
fn json_results_keep_the_contract_for_every_sample() {
    for s in SAMPLES {
        let o = Cli::new().args(["solve", s, "--format", "json"]).run();
        o.code(0);
        let file = o.dir.join("results.json");
        std::fs::write(&file, &o.stdout).unwrap();
        let check = Command::new("python3").arg(contract_script()).arg(&file).output().expect("python3 runs the contract check");
        assert!(check.status.success(), "{s}: {}", String::from_utf8_lossy(&check.stdout));
    }
}

#[test]
fn text_output_leads_with_the_plan() {
    let o = Cli::new().args(["solve", "samples/two-way-recap.yaml"]).run();
    o.code(0).stdout_has("COMPENSATION\n  fit R9 = 0.91 ohm (E24");
    let comp = o.stdout.find("COMPENSATION").unwrap();
    assert!(comp < o.stdout.find("LEVELS").unwrap());
}

#[test]
fn compensated_levels_hold_when_the_as_left_network_is_solved_independently() {
    // Build the as-left network by hand from the fitted values and solve it directly.
    for sample in ["samples/two-way-recap.yaml", "samples/three-way-mid-table.yaml"] {
        let job = voicekeep::job::load(&root().join(sample)).unwrap();
        let json = solve_json(sample);
        let mut net = job.as_left_unsolved().unwrap();
        for c in json["compensation"].as_array().unwrap() {
            net.part_mut(c["part"].as_str().unwrap()).unwrap().value = c["fitted_ohm"].as_f64().unwrap();
        }
        let freqs = job.analysis.sweep.frequencies();
        let c = Circuit::from_network(&net, &job.amplifier).unwrap();
        let d = Circuit::from_network(&job.network, &job.amplifier).unwrap();
        let sl = engine::solve(&c, &freqs).unwrap();
        let sd = engine::solve(&d, &freqs).unwrap();
        for comp in json["compensation"].as_array().unwrap() {
            let drv = comp["driver"].as_str().unwrap();
            let band = comp["band_hz"].as_array().unwrap();
            let (lo, hi) = (band[0].as_f64().unwrap(), band[1].as_f64().unwrap());
            let mut diffs = Vec::new();
            for (i, f) in freqs.iter().enumerate() {
                // serde_json's float parsing may be off in the last bit: compare with a margin.
                if *f >= lo * (1.0 - 1e-12) && *f <= hi * (1.0 + 1e-12) {
                    let l = engine::db_phase(sl.across(&c, i, c.element(drv).unwrap())).0;
                    let r = engine::db_phase(sd.across(&d, i, d.element(drv).unwrap())).0;
                    diffs.push(l - r);
                }
            }
            let mean = diffs.iter().sum::<f64>() / diffs.len() as f64;
            assert!(mean.abs() < 0.1, "{sample} {drv}: mean {mean} dB from the original");
            let rms = (diffs.iter().map(|x| x * x).sum::<f64>() / diffs.len() as f64).sqrt();
            assert!((rms - comp["residual_db"].as_f64().unwrap()).abs() < 1e-6, "{sample} {drv}: residual {rms} vs reported");
        }
    }
}

#[test]
fn film_for_electrolytic_swap_is_cured_by_the_esr_drop() {
    // Resistive load: the exact compensation is the ESR lost (analytic), and a drop of about
    // 0.7 ohm ahead of a 4-6 ohm tweeter needs about 0.5-1 ohm (common practice).
    let job = job_from(
        "voicekeep: 1\njob: { number: A, date: 2026-01-01 }\namplifier: { power: 50 W, into: 8 ohm }\nnetwork:\n  input: [IN, COM]\n  parts:\n    C1: { kind: capacitor, between: [IN, H1], value: 2.2 uF, esr: 0.69 ohm }\n    L1: { kind: inductor, between: [IN, W1], value: 1 mH, dcr: 0.3 ohm }\n  drivers:\n    HF: { role: tweeter, between: [H1, COM], model: { resistance: 5 ohm } }\n    LF: { role: woofer, between: [W1, COM], model: { resistance: 6 ohm } }\nchanges:\n  - replace: C1\n    with: { value: 2.2 uF, esr: 0.01 ohm }\n  - insert:\n      R9: { kind: resistor, between: [IN, C1], value: auto }\ncompensate:\n  R9: { driver: HF, band: [5 kHz, 20 kHz] }\nanalysis: { sweep: { from: 20 Hz, to: 20 kHz, per_octave: 12 } }\n",
    );
    let f = analysis::analyse(&job).unwrap();
    let fit = &f.compensation.fits[0];
    assert!((fit.exact_ohm - 0.68).abs() < 1e-4, "exact {}", fit.exact_ohm);
    assert!(fit.exact_residual_db < 1e-4);
    assert_eq!(fit.fitted_ohm, 0.68); // E24 member
    let hf = f.levels.iter().find(|l| l.driver == "HF").unwrap();
    assert!(hf.as_left_db.abs() < 0.1);
    // Without the resistor the film part makes the tweeter louder by 20 log10((5 + 0.69) / (5 + 0.01)) at high frequency.
    assert!(fit.excess_db > 0.3 && fit.excess_db < 20.0 * (5.69f64 / 5.01).log10() + 0.01, "{}", fit.excess_db);
    // The in-place alternative rebuilds the original exactly (constant ESR).
    let alt = f.compensation.alternatives.iter().find(|a| a.kind == "in-place").unwrap();
    assert!(alt.residual_db < 1e-9);
}

#[test]
fn warns_when_a_woofer_is_compensated_or_a_driver_ends_quieter() {
    let job = job_from(
        "voicekeep: 1\njob: { number: A, date: 2026-01-01 }\namplifier: { power: 50 W, into: 8 ohm }\nnetwork:\n  input: [IN, COM]\n  parts:\n    L1: { kind: inductor, between: [IN, W1], value: 1 mH, dcr: 0.3 ohm }\n  drivers:\n    LF: { role: woofer, between: [W1, COM], model: { resistance: 6 ohm } }\nchanges:\n  - replace: L1\n    with: { value: 1 mH, dcr: 0.9 ohm }\n  - insert:\n      R9: { kind: resistor, between: [W1, L1], value: auto }\ncompensate:\n  R9: { driver: LF }\nanalysis: { sweep: { from: 20 Hz, to: 2 kHz, per_octave: 12 } }\n",
    );
    let f = analysis::analyse(&job).unwrap();
    let text: String = f.compensation.warnings.iter().map(|w| w.message.clone()).collect::<Vec<_>>().join("\n");
    assert!(text.contains("The woofer is the level reference"), "{text}");
    assert!(text.contains("a series resistor cannot raise it"), "{text}");
    assert!(text.contains("is not at the input"), "{text}");
    assert!(f.compensation.fits[0].cannot_raise);
}

#[test]
fn monte_carlo_band_of_a_resistive_divider_matches_its_distribution() {
    // Level = 20 log10(Rd / (R1 + Rd)) falls with R1, so its 5 % and 95 % points are the level
    // at R1's 95 % and 5 % points: for R1 uniform over +-t those are R1 (1 +- 0.9 t).
    let yaml = |seed: u32| {
        format!("voicekeep: 1\njob: {{ number: A, date: 2026-01-01 }}\namplifier: {{ power: 10 W, into: 8 ohm }}\nnetwork:\n  input: [IN, COM]\n  parts:\n    R1: {{ kind: resistor, between: [IN, H1], value: 4 ohm, tolerance: 10 % }}\n  drivers:\n    HF: {{ role: tweeter, between: [H1, COM], model: {{ resistance: 4 ohm }} }}\nanalysis:\n  sweep: {{ at: [1 kHz] }}\n  tolerance: {{ runs: 20000, seed: {seed}, distribution: uniform }}\n")
    };
    let f = analysis::analyse(&job_from(&yaml(3))).unwrap();
    let t = f.tolerance.as_ref().unwrap();
    let l = t.levels.iter().find(|l| l.scenario == voicekeep::model::Scenario::AsDesigned).unwrap();
    let level = |r1: f64| 20.0 * (4.0 / (r1 + 4.0)).log10() - 20.0 * 0.5f64.log10();
    assert!((l.p5_db - level(4.0 * 1.09)).abs() < 0.01, "{} vs {}", l.p5_db, level(4.36));
    assert!((l.p95_db - level(4.0 * 0.91)).abs() < 0.01, "{} vs {}", l.p95_db, level(3.64));
    // Same seed, same numbers; another seed, other numbers.
    let again = analysis::analyse(&job_from(&yaml(3))).unwrap();
    assert_eq!(again.tolerance.as_ref().unwrap().levels, t.levels);
    let other = analysis::analyse(&job_from(&yaml(4))).unwrap();
    assert_ne!(other.tolerance.as_ref().unwrap().levels, t.levels);
}

#[test]
fn stress_of_a_resistive_divider_by_hand() {
    // 60 W into 8 ohm: E = sqrt(480) V. R1 2 ohm ahead of a 6 ohm load: I = E / 8,
    // P(R1) = I^2 * 2 = 15 W at every frequency, so sine and programme figures are 15 W.
    let job = job_from("voicekeep: 1\njob: { number: A, date: 2026-01-01 }\namplifier: { power: 60 W, into: 8 ohm }\nnetwork:\n  input: [IN, COM]\n  parts:\n    R1: { kind: resistor, between: [IN, H1], value: 2 ohm, rating: auto }\n  drivers:\n    HF: { role: tweeter, between: [H1, COM], model: { resistance: 6 ohm }, rated_power: 40 W }\nanalysis: { sweep: { from: 20 Hz, to: 20 kHz, per_octave: 3 } }\n");
    let f = analysis::analyse(&job).unwrap();
    let r = f.stress.rows.iter().find(|r| r.part == "R1").unwrap();
    assert!((r.sine_w - 15.0).abs() < 1e-9 && (r.programme_w - 15.0).abs() < 1e-9, "{} {}", r.sine_w, r.programme_w);
    assert_eq!(r.rating_w, Some(50.0)); // smallest stock wattage >= 2 x 15 W
    let d = f.stress.drivers.iter().find(|d| d.driver == "HF").unwrap();
    assert!((d.programme_w - 45.0).abs() < 1e-9); // (E/8)^2 * 6
    assert_eq!(d.verdict, "over");
}

#[test]
fn capacitor_peak_voltage_in_a_first_order_filter() {
    // C1 in series with R: |Vc| = E / sqrt(1 + (w R C)^2), largest at the lowest frequency.
    let job = job_from("voicekeep: 1\njob: { number: A, date: 2026-01-01 }\namplifier: { power: 50 W, into: 8 ohm }\nnetwork:\n  input: [IN, COM]\n  parts:\n    C1: { kind: capacitor, between: [IN, H1], value: 6.6315 uF, rating: 100 V }\n  drivers:\n    HF: { role: tweeter, between: [H1, COM], model: { resistance: 8 ohm } }\nanalysis: { sweep: { at: [1 kHz, 3 kHz, 10 kHz] } }\n");
    let f = analysis::analyse(&job).unwrap();
    let r = f.stress.rows.iter().find(|r| r.part == "C1" && r.scenario == voicekeep::model::Scenario::AsDesigned).unwrap();
    let (e, wrc) = (400f64.sqrt(), 2.0 * std::f64::consts::PI * 1000.0 * 8.0 * 6.6315e-6);
    let want = std::f64::consts::SQRT_2 * e / (1.0 + wrc * wrc).sqrt();
    assert!((r.peak_v.unwrap() - want).abs() < 1e-9, "{:?} vs {want}", r.peak_v);
    assert_eq!(r.peak_at_hz, Some(1000.0));
}

#[test]
fn closed_stdout_is_not_a_crash() {
    let mut child = Command::new(crate::util::bin())
        .args(["solve", "samples/three-way-mid-table.yaml", "--format", "json"])
        .current_dir(root())
        .stdout(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stdout.take());
    let status = child.wait().unwrap();
    assert_eq!(status.code(), Some(0));
}

/// A tweeter on a plain 6 ohm resistance behind a series resistor `r1` (as designed), with
/// `r1` taken out and a fitted R9 put where it was; the woofer on its own branch.
fn pad_job(r1: &str, tweeter_filter: bool) -> String {
    let (hf_node, filter) = if tweeter_filter { ("X1", "    C1: { kind: capacitor, between: [X1, H1], value: 8 uF, esr: 0.01 ohm }\n") } else { ("H1", "") };
    format!(
        "voicekeep: 1\njob: {{ number: A, date: 2026-01-01 }}\namplifier: {{ power: 50 W, into: 8 ohm }}\nnetwork:\n  input: [IN, COM]\n  parts:\n    R1: {{ kind: resistor, between: [IN, {hf_node}], value: {r1} }}\n{filter}    L1: {{ kind: inductor, between: [IN, W1], value: 1.5 mH, dcr: 0.3 ohm }}\n  drivers:\n    HF: {{ role: tweeter, between: [H1, COM], model: {{ resistance: 6 ohm }} }}\n    LF: {{ role: woofer, between: [W1, COM], model: {{ resistance: 6 ohm }} }}\nchanges:\n  - remove: R1\n  - add:\n      R9: {{ kind: resistor, between: [IN, {hf_node}], value: auto }}\ncompensate:\n  R9: {{ driver: HF, band: [5 kHz, 20 kHz] }}\nanalysis: {{ sweep: {{ from: 20 Hz, to: 20 kHz, per_octave: 12 }} }}\n"
    )
}

#[test]
fn an_l_pad_is_offered_past_3_db_with_its_textbook_values_and_residual() {
    // 6.2 ohm ahead of a 6 ohm load takes 20 log10(12.2 / 6) = 6.16 dB, past the 3 dB where an
    // L-pad is also offered (common practice). The textbook L-pad for attenuation a = 6 / 12.2
    // into Z = 6 ohm: Rs = Z (1 - a) = 3.05 -> E24 3.0, Rp = Z a / (1 - a) = 5.81 -> E24 5.6
    // (IEC 60063; geometric midpoint of 5.6 and 6.2 is 5.89).
    let f = analysis::analyse(&job_from(&pad_job("6.2 ohm", false))).unwrap();
    let fit = &f.compensation.fits[0];
    assert!((fit.excess_db - 20.0 * (12.2f64 / 6.0).log10()).abs() < 1e-9, "excess {}", fit.excess_db);
    assert_eq!(fit.fitted_ohm, 6.2);
    let pad = f.compensation.alternatives.iter().find(|a| a.kind == "l-pad").expect("an L-pad alternative");
    assert_eq!(pad.driver, "HF");
    assert_eq!(pad.parts, vec![("series".to_string(), 3.0), ("shunt".to_string(), 5.6)]);
    // Voltage divider: 5.6 || 6 over 3.0 + 5.6 || 6, against the original 6 / 12.2; flat, so
    // the RMS and the worst deviation are the same number.
    let par: f64 = 5.6 * 6.0 / 11.6;
    let want = 20.0 * ((par / (3.0 + par)) / (6.0 / 12.2)).log10();
    assert!((pad.residual_db - want.abs()).abs() < 1e-9, "residual {} vs {want}", pad.residual_db);
    assert!((pad.worst_db - want).abs() < 1e-9, "worst {} vs {want}", pad.worst_db);
    // Under 3 dB there is no L-pad: 1 ohm ahead of 6 ohm is 1.34 dB.
    let f = analysis::analyse(&job_from(&pad_job("1 ohm", false))).unwrap();
    assert!(f.compensation.alternatives.iter().all(|a| a.kind != "l-pad"));
}

#[test]
fn the_l_pad_verdict_compares_crossovers_with_the_input_resistor() {
    // With a high-pass capacitor between R9 and the tweeter, R9 = 6.2 ohm rebuilds the
    // original network exactly, so the input fix keeps the crossover to the hertz; the L-pad
    // changes what the capacitor sees (5.9 ohm instead of 6.2 + 6), so its crossover moves.
    let f = analysis::analyse(&job_from(&pad_job("6.2 ohm", true))).unwrap();
    let pad = f.compensation.alternatives.iter().find(|a| a.kind == "l-pad").expect("an L-pad alternative");
    let (r, fix, alt) = (pad.reference_crossover_hz.unwrap(), pad.input_fix_crossover_hz.unwrap(), pad.crossover_hz.unwrap());
    assert!((fix - r).abs() < 1e-6, "input fix {fix} vs original {r}");
    assert!((alt - r).abs() > 1.0, "the L-pad's crossover {alt} should move from {r}");
    assert!(pad.verdict.starts_with("moves the crossover more"), "{}", pad.verdict);
    assert!(pad.verdict.contains(&format!("{:.0} Hz from the original {:.0} Hz", (alt - r).abs(), r)), "{}", pad.verdict);
}

#[test]
fn part_health_flags_carry_their_level_effect() {
    // Three independent branches on a zero-impedance source, so each reading moves one driver
    // by an amount a divider formula gives at each sweep point.
    let job = job_from(
        "voicekeep: 1\njob: { number: A, date: 2026-01-01 }\namplifier: { power: 50 W, into: 8 ohm }\nnetwork:\n  input: [IN, COM]\n  parts:\n    R1: { kind: resistor, between: [IN, H1], value: 2.2 ohm, tolerance: 5 % }\n    C2: { kind: capacitor, between: [IN, M1], value: 47 uF, esr: 0.3 ohm, rating: 50 V, type: bipolar electrolytic }\n    C4: { kind: capacitor, between: [M1, COM], value: 1 uF, esr: 0.01 ohm, type: polypropylene film }\n    L3: { kind: inductor, between: [IN, W1], value: 2 mH, dcr: 0.4 ohm }\n  drivers:\n    HF: { role: tweeter, between: [H1, COM], model: { resistance: 6 ohm } }\n    MF: { role: midrange, between: [M1, COM], model: { resistance: 8 ohm } }\n    LF: { role: woofer, between: [W1, COM], model: { resistance: 6 ohm } }\nmeasured:\n  R1: { value: 2.6 ohm }\n  C2: { esr: 2.0 ohm, at: 1 kHz }\n  C4: { tan_delta: 0.0004, at: 1 kHz }\n  L3: { dcr: 0.9 ohm }\nanalysis: { sweep: { from: 20 Hz, to: 20 kHz, per_octave: 6 } }\n",
    );
    let f = analysis::analyse(&job).unwrap();
    let freqs = job.analysis.sweep.frequencies();
    let band_mean = |driver: usize, h: &dyn Fn(f64) -> f64| f.bands[driver].idx.iter().map(|&i| h(freqs[i])).sum::<f64>() / f.bands[driver].idx.len() as f64;
    let flag = |part: &str| f.health.iter().find(|h| h.part == part).unwrap_or_else(|| panic!("no flag for {part}: {:?}", f.health));
    let w = |hz: f64| 2.0 * std::f64::consts::PI * hz;

    // R1: +18.2 % against 5 %; the tweeter drops by 20 log10((6 + 2.2) / (6 + 2.6)) at every point.
    let r1 = flag("R1");
    assert!(r1.message.contains("+18.2 %") && r1.message.contains("5 % tolerance"), "{}", r1.message);
    assert_eq!(r1.effect_driver, "HF");
    assert!((r1.effect_db - 20.0 * (8.2f64 / 8.6).log10()).abs() < 1e-9, "{}", r1.effect_db);

    // C2: tan delta = 2 pi 1 kHz 47 uF 2 ohm = 0.591, over twice the 0.10 of a 50 V
    // electrolytic (makers' general specifications, check-values.md); the midrange, with C4
    // across it, is the divider (8 || C4) over C2 + (8 || C4).
    let c2 = flag("C2");
    assert!(c2.message.contains("0.591") && c2.message.contains("aluminium electrolytic"), "{}", c2.message);
    assert_eq!(c2.effect_driver, "MF");
    let mid = |esr: f64| {
        move |hz: f64| {
            let zc = |c: f64, r: f64| num_complex::Complex64::new(r, -1.0 / (w(hz) * c));
            let shunt = (zc(1e-6, 0.01) * 8.0) / (zc(1e-6, 0.01) + 8.0);
            20.0 * (shunt / (zc(47e-6, esr) + shunt)).norm().log10()
        }
    };
    let want = band_mean(1, &mid(2.0)) - band_mean(1, &mid(0.3));
    assert!((c2.effect_db - want).abs() < 1e-9, "{} vs {want}", c2.effect_db);

    // L3: DCR up 125 %; the woofer is 6 / (6 + DCR + j w L).
    let l3 = flag("L3");
    assert!(l3.message.contains("risen 125 %"), "{}", l3.message);
    let lf = |dcr: f64| move |hz: f64| 20.0 * (6.0 / num_complex::Complex64::new(6.0 + dcr, w(hz) * 2e-3)).norm().log10();
    let want = band_mean(2, &lf(0.9)) - band_mean(2, &lf(0.4));
    assert!((l3.effect_db - want).abs() < 1e-9, "{} vs {want}", l3.effect_db);

    // C4 reads 0.0004 against a polypropylene typical of 0.0005: healthy, no flag.
    assert!(f.health.iter().all(|h| h.part != "C4"), "{:?}", f.health);
}

#[test]
fn a_network_that_cannot_be_solved_is_a_job_problem_naming_its_parts() {
    // A 0 ohm part straight across the amplifier (no output impedance): the equations are
    // singular at every frequency. And a driver wired to a node nothing else reaches, which
    // validation catches before the engine would.
    let short = "voicekeep: 1\njob: { number: A, date: 2026-01-01 }\namplifier: { power: 50 W, into: 8 ohm }\nnetwork:\n  input: [IN, COM]\n  parts:\n    R0: { kind: resistor, between: [IN, COM], value: 0 ohm }\n    L1: { kind: inductor, between: [IN, W1], value: 1 mH, dcr: 0.3 ohm }\n  drivers:\n    LF: { role: woofer, between: [W1, COM], model: { resistance: 6 ohm } }\nanalysis: { sweep: { from: 20 Hz, to: 2 kHz, per_octave: 3 } }\n";
    for cmd in ["check", "solve"] {
        let o = Cli::new().job(short).args([cmd, "{job}"]).run();
        o.code(1).stderr_has("the network cannot be solved").stderr_has("singular").stderr_has("R0").stderr_has("hint:");
        assert!(o.stdout.is_empty(), "nothing printed as a result: {}", o.stdout);
    }
    let o = Cli::new().job(short).args(["report", "{job}", "-o", "{dir}/r.pdf"]).run();
    o.code(1).stderr_has("R0");
    assert!(!o.dir.join("r.pdf").exists(), "no report from a network that cannot be solved");

    let floating = short.replace("    R0: { kind: resistor, between: [IN, COM], value: 0 ohm }\n", "").replace("between: [W1, COM], model", "between: [W1, X9], model");
    let o = Cli::new().job(&floating).args(["check", "{job}"]).run();
    o.code(1).stderr_has(":9:5: network.LF: node X9 is touched by LF alone").stderr_has("hint:");
}

#[test]
fn an_input_node_nothing_touches_is_reported_at_the_input_line() {
    let job = "voicekeep: 1\njob: { number: A, date: 2026-01-01 }\namplifier: { power: 50 W, into: 8 ohm }\nnetwork:\n  input: [IN, COM]\n  parts:\n    L1: { kind: inductor, between: [IN, W1], value: 1 mH, dcr: 0.3 ohm }\n  drivers:\n    LF: { role: woofer, between: [W1, GND], model: { resistance: 6 ohm } }\nanalysis: { sweep: { from: 20 Hz, to: 2 kHz, per_octave: 3 } }\n";
    let o = Cli::new().job(job).args(["check", "{job}"]).run();
    o.code(1).stderr_has(":5:3: network.input: input node COM (amplifier -) is not connected to any part or driver");
}

#[test]
fn the_rated_impedance_says_where_it_comes_from() {
    // Without `rated_impedance` the 80 % rule (IEC 60268-5) has to assume one: the amplifier's
    // rated load. The output says so rather than judging silently.
    let job = "voicekeep: 1\njob: { number: A, date: 2026-01-01 }\namplifier: { power: 50 W, into: 8 ohm }\nnetwork:\n  input: [IN, COM]\n  parts:\n    L1: { kind: inductor, between: [IN, W1], value: 1 mH, dcr: 0.3 ohm }\n  drivers:\n    LF: { role: woofer, between: [W1, COM], model: { resistance: 6 ohm } }\nanalysis: { sweep: { from: 20 Hz, to: 2 kHz, per_octave: 3 } }\n";
    let o = Cli::new().job(job).args(["solve", "{job}"]).run();
    o.code(0).stdout_has("rated impedance not given in the job: 8 ohm assumed (the amplifier's rated load)");
    let o = Cli::new().job(job).args(["solve", "{job}", "--format", "json"]).run();
    let v: serde_json::Value = serde_json::from_str(&o.stdout).unwrap();
    assert_eq!(v["load"]["as_left"]["rated_ohm"], 8.0);
    assert!(v["rated_impedance_basis"].as_str().unwrap().contains("8 ohm assumed"));
    let o = Cli::new().args(["solve", "samples/two-way-recap.yaml"]).run();
    o.code(0).stdout_has("rated impedance 8 ohm, from the job");
}
