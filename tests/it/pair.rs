//! Pairs and sets of cabinets, checked against what is computed without the pair code: each
//! cabinet's network solved by the independent nodal solver (tests/it/nodal.rs), single-cabinet
//! jobs solved on their own, and a brute-force search over the E24 series (IEC 60063).

use crate::nodal::driver_ratio;
use crate::util::job_from;
use voicekeep::analysis::pair::{analyse_set, SetFindings};
use voicekeep::analysis::{analyse, Quiet, Verdict};
use voicekeep::model::Network;

/// A two-way network with a tweeter pad R9 fitted by `compensate`; `cabinets` is the
/// job's cabinets section (or empty), `measured` the top-level readings.
fn job_text(measured: &str, cabinets: &str, pair_tolerance: &str) -> String {
    format!(
        r#"voicekeep: 1
job:
  number: T-1
  date: 2026-12-01
  speaker: {{ description: test pair, serials: [A, B, C], rated_impedance: 8 ohm }}
amplifier: {{ power: 50 W, into: 8 ohm, output_impedance: 0.05 ohm }}
network:
  input: [IN, COM]
  parts:
    C1: {{ kind: capacitor, between: [IN, H1], value: 3.3 uF, esr: 0.9 ohm, tolerance: 10 % }}
    L2: {{ kind: inductor, between: [H1, COM], value: 0.27 mH, dcr: 0.35 ohm }}
    R1: {{ kind: resistor, between: [H1, HT], value: 2R2 }}
    L1: {{ kind: inductor, between: [IN, W1], value: 1.2 mH, dcr: 0.45 ohm }}
    C2: {{ kind: capacitor, between: [W1, COM], value: 10 uF, esr: 0.35 ohm }}
  drivers:
    HF: {{ role: tweeter, between: [HT, COM], model: {{ re: 4.6 ohm, le: 0.04 mH }} }}
    LF: {{ role: woofer, between: [W1, COM], model: {{ re: 6.2 ohm, le: 0.6 mH }} }}
{measured}
changes:
  - replace: C1
    with: {{ value: 3.3 uF, esr: 0.012 ohm }}
  - insert:
      R9: {{ kind: resistor, between: [IN, C1], value: auto }}
{cabinets}
compensate:
  R9: {{ driver: HF, match: as_designed, band: [3 kHz, 15 kHz], series: E24 }}
analysis:
  sweep: {{ from: 100 Hz, to: 20 kHz, per_octave: 12 }}
  programme: pink
  {pair_tolerance}
"#
    )
}

fn set_of(text: &str) -> SetFindings {
    analyse_set(&job_from(text), &Quiet).unwrap_or_else(|e| panic!("{e:?}"))
}

/// The band-mean level of HF over 3-15 kHz at the sweep's points, by the nodal solver.
fn hf_band_mean(net: &Network, freqs: &[f64]) -> f64 {
    let band: Vec<f64> = freqs.iter().copied().filter(|f| (3000.0..=15000.0).contains(f)).collect();
    band.iter().map(|f| 20.0 * driver_ratio(net, 0.05, "HF", *f).norm().log10()).sum::<f64>() / band.len() as f64
}

#[test]
fn one_esr_apart_the_pair_differs_by_that_esr_change_alone_and_names_the_part() {
    // Cabinet B's C1 reads as designed but for its ESR: 3.5 ohm against 0.9 ohm.
    let text = job_text("", "cabinets:\n  A: {}\n  B:\n    measured:\n      C1: { esr: 3.5 ohm }", "");
    let set = set_of(&text);
    let job = job_from(&text);
    let freqs = job.analysis.sweep.frequencies();
    // Independently: the design, and the design with C1's ESR set to 3.5 ohm by hand.
    let design = job.network.clone();
    let mut worn = design.clone();
    worn.parts.iter_mut().find(|p| p.name == "C1").unwrap().esr = 3.5;
    let shift = hf_band_mean(&design, &freqs) - hf_band_mean(&worn, &freqs);
    assert!(shift > 0.3, "the worn ESR must cost the tweeter level: {shift}");
    let hf = set.matching.iter().find(|m| m.driver == "HF").unwrap();
    assert!((hf.as_found_db - shift).abs() < 1e-3, "pair difference {} vs nodal shift {shift}", hf.as_found_db);
    assert_eq!(hf.as_found_cabinets, ["A".to_string(), "B".to_string()], "A is the louder");
    assert_eq!(hf.as_found_verdict, if shift > 0.5 { Verdict::Over } else { Verdict::Ok });
    let top = &hf.responsible[0];
    assert_eq!((top.cabinet.as_str(), top.part.as_str()), ("B", "C1"));
    assert!((top.share_db - shift).abs() < 1e-3, "share {} vs {shift}", top.share_db);
    assert_eq!(hf.responsible.len(), 1, "no other reading: {:?}", hf.responsible);

    // The same by two single-cabinet solves: one job with no readings, one with B's.
    let a = analyse(&job_from(&job_text("", "", ""))).unwrap();
    let b = analyse(&job_from(&job_text("measured:\n  C1: { esr: 3.5 ohm }", "", ""))).unwrap();
    let single = a.levels[0].as_found_db - b.levels[0].as_found_db;
    assert!((hf.as_found_db - single).abs() < 1e-9, "{} vs {single}", hf.as_found_db);
    // And each cabinet's findings are those of its single-cabinet job.
    assert_eq!(set.cabinets[1].findings.levels, b.levels);
}

/// The E24 members (IEC 60063 table, typed here) from 0.1 to 9.1 ohm.
fn e24_ohms() -> Vec<f64> {
    let decade = [1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1];
    [0.1, 1.0].iter().flat_map(|m| decade.iter().map(move |d| d * m)).collect()
}

/// For each E24 value, the worst cabinet's |band-mean deviation| from the design with R9 at
/// that value, by the nodal solver on each cabinet's as-left network.
fn brute_force(set: &SetFindings) -> Vec<(f64, f64)> {
    let freqs = &set.cabinets[0].findings.freqs;
    let design = hf_band_mean(&set.cabinets[0].job.network, freqs);
    e24_ohms()
        .into_iter()
        .map(|v| {
            let worst = set
                .cabinets
                .iter()
                .map(|c| {
                    let mut net = c.findings.scenes.as_left.network.clone();
                    net.parts.iter_mut().find(|p| p.name == "R9").unwrap().value = v;
                    (hf_band_mean(&net, freqs) - design).abs()
                })
                .fold(0.0, f64::max);
            (v, worst)
        })
        .collect()
}

#[test]
fn a_common_value_is_fitted_when_the_exact_values_lie_close_and_two_when_they_do_not() {
    // R1 is kept in both; B's reads 2.21 ohm (close) or 2.6 ohm (far) against A's 2.2 ohm.
    let tol = "pair_tolerance: 0.2 dB";
    for (b_r1, common) in [("2.21 ohm", true), ("2.6 ohm", false)] {
        let cabinets = format!("cabinets:\n  A: {{}}\n  B:\n    measured:\n      R1: {{ value: {b_r1} }}");
        let set = set_of(&job_text("", &cabinets, tol));
        let c = &set.compensation[0];
        let (a, b) = (c.exact[0].ohm, c.exact[1].ohm);
        // Half an E24 step is a ratio of 10^(1/48).
        let half_step = 10f64.powf(1.0 / 48.0);
        assert_eq!((a.max(b) / a.min(b)) < half_step, common, "exact {a} and {b}");
        let brute = brute_force(&set);
        let (best_v, best_worst) = brute.iter().copied().min_by(|x, y| x.1.total_cmp(&y.1)).unwrap();
        assert_eq!(best_worst <= 0.1, common, "brute force best {best_v} leaves {best_worst} dB");
        match c.common_ohm {
            Some(v) => {
                assert!(common, "a common value where none serves");
                assert!((v - best_v).abs() < 1e-9, "common {v} vs brute force {best_v}");
                assert!(c.fitted.iter().all(|f| f.ohm == v));
                // Fitted in both cabinets: each as-left network carries it.
                assert!(set.cabinets.iter().all(|k| k.findings.scenes.as_left.network.part("R9").unwrap().value == v));
            }
            None => {
                assert!(!common, "no common value where one serves: {:?}", c);
                assert_ne!(c.fitted[0].ohm, c.fitted[1].ohm, "two values");
                // Each cabinet's own value is the E24 member nearest its exact one.
                for (f, x) in c.fitted.iter().zip(&c.exact) {
                    let nearest = e24_ohms().into_iter().min_by(|p, q| (p / x.ohm).ln().abs().total_cmp(&(q / x.ohm).ln().abs())).unwrap();
                    assert!((f.ohm - nearest).abs() < 1e-9, "{} fitted {} vs nearest {nearest}", f.cabinet, f.ohm);
                }
            }
        }
    }
}

#[test]
fn in_a_set_of_three_the_odd_cabinet_is_named_against_the_median() {
    let cabinets =
        "cabinets:\n  A:\n    measured:\n      C1: { esr: 1.0 ohm }\n  B:\n    measured:\n      C1: { value: 2.5 uF, esr: 4 ohm }\n  C:\n    measured:\n      C1: { esr: 1.1 ohm }";
    let set = set_of(&job_text("", cabinets, ""));
    let hf = set.matching.iter().find(|m| m.driver == "HF").unwrap();
    assert_eq!(hf.odd_cabinet.as_deref(), Some("B"));
    assert_eq!(hf.from_median.len(), 3);
    // The median of three is the middle cabinet's level: its own deviation is zero.
    let levels: Vec<f64> = set.cabinets.iter().map(|c| c.findings.levels[0].as_found_db).collect();
    let mut sorted = levels.clone();
    sorted.sort_by(f64::total_cmp);
    for (x, l) in hf.from_median.iter().zip(&levels) {
        assert!((x.as_found_db - (l - sorted[1])).abs() < 1e-12);
    }
    assert!(hf.from_median.iter().any(|x| x.as_found_db == 0.0));
    assert_eq!(hf.as_found_cabinets[1], "B", "B is the quietest");
    // The spread is the loudest cabinet (A) less the quietest (B): B's C1 widens it most, and
    // A's own slightly high ESR (it plays a little quieter) narrows it.
    assert_eq!((hf.responsible[0].cabinet.as_str(), hf.responsible[0].part.as_str()), ("B", "C1"), "{:?}", hf.responsible);
    assert!(hf.responsible[0].share_db > 3.0, "{:?}", hf.responsible);
    assert!(hf.responsible.iter().filter(|r| r.cabinet != "B").all(|r| r.share_db < 0.0), "{:?}", hf.responsible);
}

#[test]
fn a_set_whose_cabinets_play_alike_names_no_odd_cabinet() {
    // Three cabinets with the same readings: no loudest, quietest or odd one, and the
    // sentence says they played alike.
    let cabinets = "cabinets:\n  A:\n    measured:\n      C1: { esr: 1.0 ohm }\n  B:\n    measured:\n      C1: { esr: 1.0 ohm }\n  C:\n    measured:\n      C1: { esr: 1.0 ohm }";
    let set = set_of(&job_text("", cabinets, ""));
    for m in &set.matching {
        assert_eq!(m.odd_cabinet, None, "{}", m.driver);
        assert!(m.responsible.is_empty(), "{:?}", m.responsible);
        let s = m.sentence(true, set.read_on_bench(), true);
        assert!(s.contains("as found the cabinets played alike") && !s.contains("loudest") && !s.contains("farthest"), "{s}");
        // With nothing read, the same figures are no finding: the sentence says so.
        let s = m.sentence(true, false, true);
        assert!(s.contains("nothing was read on the bench before the work") && !s.contains("played alike"), "{s}");
        // With no work done, nothing is said "as left".
        let s = m.sentence(true, true, false);
        assert!(s.contains("no work has been done yet") && !s.contains("as left"), "{s}");
    }
}

#[test]
fn rating_auto_takes_the_worse_cabinet() {
    // B's pad resistor reads low, so its R9 is larger and takes more of a 600 W amplifier's
    // programme.
    let text = job_text("", "cabinets:\n  A: {}\n  B:\n    measured:\n      R1: { value: 0.5 ohm }", "")
        .replace("value: auto }", "value: auto, rating: auto }")
        .replace("power: 50 W", "power: 600 W");
    let set = set_of(&text);
    let ratings: Vec<f64> = set
        .cabinets
        .iter()
        .map(|c| c.findings.stress.rows.iter().find(|r| r.part == "R9" && r.scenario == voicekeep::model::Scenario::AsLeft).and_then(|r| r.rating_w).unwrap())
        .collect();
    assert_eq!(ratings[0], ratings[1], "both cabinets get the same rating: {ratings:?}");
    // Alone, the cabinets would choose different ratings; the pair takes the larger.
    let alone: Vec<f64> = set
        .cabinets
        .iter()
        .map(|c| analyse(&c.job).unwrap().stress.rows.iter().find(|r| r.part == "R9" && r.scenario == voicekeep::model::Scenario::AsLeft).and_then(|r| r.rating_w).unwrap())
        .collect();
    assert_ne!(alone[0], alone[1], "the test needs cabinets that differ: {alone:?}");
    assert_eq!(ratings[0], alone[0].max(alone[1]));
}

#[test]
fn a_driver_silenced_by_an_open_part_is_a_fault_not_a_level_difference() {
    // The pair sample with the right cabinet's C1 open (the tweeter's series capacitor): its
    // tweeter plays through nothing but C1's open-circuit leakage, hundreds of dB down. That
    // is no level difference to print; each reader is told it is a fault.
    let sample = std::fs::read_to_string(crate::util::root().join("samples/pair-recap.yaml")).unwrap();
    let job = sample.replacen("      C1: { value: 2.7 uF, esr: 3.4 ohm, at: 1 kHz }", "      C1: { open: true }", 1);
    assert_ne!(job, sample);
    let files: Vec<(String, Vec<u8>)> = ["kestrel-prices.csv", "northwater-prices.csv", "mid-impedance.csv", "lf-spl.csv", "hf-spl.csv", "mf-spl.csv"]
        .iter()
        .filter(|n| job.contains(*n))
        .map(|n| (n.to_string(), std::fs::read(crate::util::root().join("samples").join(n)).unwrap()))
        .collect();
    let with_files = |c: crate::util::Cli| files.iter().fold(c, |c, (n, b)| c.file(n, b));
    let o = with_files(crate::util::Cli::new().job(&job)).args(["solve", "{job}"]).run();
    o.code(0);
    let text = o.stdout.split_whitespace().collect::<Vec<_>>().join(" ");
    assert!(text.contains("HF: as found KB-5121's was all but silent, 222.") && text.contains("a fault (an open part or connection), not a level difference"), "{text}");
    assert!(!text.contains("HF: as found KB-5120 played"), "{text}");
    let r = with_files(crate::util::Cli::new().job(&job)).args(["report", "{job}", "-o", "{dir}/r.pdf"]).run();
    r.code(0);
    let words = crate::util::pdf_words(&r.dir.join("r.pdf"));
    assert!(words.contains("the tweeter (HF) of cabinet KB-5121 was all but silent: a fault traced to C1 in that cabinet, not a level difference"), "{words}");
    assert!(words.contains("KB-5121: silent (a fault)") && !words.contains("differed by 2"), "{words}");
}
