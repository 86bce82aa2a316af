//! The parts to buy and their prices: merging, counting across cabinets, the smallest stock
//! rating that meets the part's, unpriced lines said, and totals in exact hundredths (summed
//! here from the list's prices as integers, not by the code under test).

use serde_json::Value;

use crate::util::Cli;

const PRICES: &str = "kind,value,rating,type,unit_price\n\
capacitor,4.7 uF,250 V,film,1.10\n\
capacitor,4.7 uF,400 V,film,1.70\n\
capacitor,4.7 uF,630 V,film,2.90\n\
resistor,1 ohm,5 W,,0.30\n\
resistor,1 ohm,10 W,,0.45\n";

fn job(extra_part_rating: &str, cabinets: &str) -> String {
    format!(
        r#"voicekeep: 1
job: {{ number: T-1, date: 2026-12-02, speaker: {{ rated_impedance: 8 ohm, serials: [A, B] }} }}
amplifier: {{ power: 50 W, into: 8 ohm }}
network:
  input: [IN, COM]
  parts:
    C1: {{ kind: capacitor, between: [IN, H1], value: 4.7 uF, esr: 1 ohm }}
    C3: {{ kind: capacitor, between: [IN, H1], value: 4.7 uF, esr: 1 ohm }}
    L2: {{ kind: inductor, between: [H1, COM], value: 0.3 mH, dcr: 0.3 ohm }}
    L1: {{ kind: inductor, between: [IN, W1], value: 1 mH, dcr: 0.4 ohm }}
  drivers:
    HF: {{ role: tweeter, between: [H1, COM], model: {{ resistance: 6 ohm }} }}
    LF: {{ role: woofer, between: [W1, COM], model: {{ resistance: 6 ohm }} }}
changes:
  - replace: C1
    with: {{ value: 4.7 uF, esr: 0.01 ohm, rating: 250 V, type: polypropylene film }}
  - replace: C3
    with: {{ value: 4.7 uF, esr: 0.01 ohm, rating: 250 V, type: polypropylene film }}
  - add:
      R5: {{ kind: resistor, between: [IN, COM], value: 1 ohm, rating: 4 W }}
      C9: {{ kind: capacitor, between: [W1, COM], value: 4.7 uF, esr: 0.01 ohm, {extra_part_rating}, type: polypropylene film }}
      L9: {{ kind: inductor, between: [W1, COM], value: 2 mH, dcr: 1 ohm }}
{cabinets}
prices: {{ list: prices.csv, currency: EUR }}
analysis:
  sweep: {{ from: 100 Hz, to: 10 kHz, per_octave: 6 }}
"#
    )
}

fn solve(text: &str) -> Value {
    let o = Cli::new().job(text).file("prices.csv", PRICES.as_bytes()).args(["solve", "{job}", "--format", "json"]).run();
    o.code(0);
    serde_json::from_str(&o.stdout).unwrap()
}

fn line<'a>(j: &'a Value, part: &str) -> &'a Value {
    j["parts"].as_array().unwrap().iter().find(|l| l["parts"].as_array().unwrap().iter().any(|p| p == part)).unwrap()
}

#[test]
fn the_same_part_twice_is_one_line_and_the_smallest_adequate_rating_is_priced() {
    let j = solve(&job("rating: 300 V", ""));
    // C1 and C3: the same film capacitor, one line of two.
    let c = line(&j, "C1");
    assert_eq!(c["quantity"], 2);
    assert_eq!(c["parts"], serde_json::json!(["C1", "C3"]));
    assert_eq!(c["unit_price"], "1.10", "250 V stock for a 250 V part");
    assert_eq!(c["price"], "2.20");
    // C9 needs 300 V: 250 V stock will not do, 400 V is the smallest that meets it.
    assert_eq!(line(&j, "C9")["unit_price"], "1.70");
    // R5 needs 4 W: the 5 W stock, not the 10 W.
    assert_eq!(line(&j, "R5")["unit_price"], "0.30");
    // L9 is not in the list: said, not priced, not in the total.
    let l = line(&j, "L9");
    assert!(l.get("price").is_none());
    assert!(l["stock"].as_str().unwrap().starts_with("not in prices.csv"), "{l}");
    assert_eq!(j["parts_unpriced"], 1);
    // 2 x 1.10 + 1.70 + 0.30, in hundredths.
    assert_eq!(j["parts_total"], "4.20");
    assert_eq!(j["currency"], "EUR");
}

#[test]
fn a_pair_counts_every_cabinet_and_a_cabinet_own_part_once() {
    let cabinets = "cabinets:\n  A: {}\n  B:\n    changes:\n      - replace: L2\n        with: { value: 0.3 mH, dcr: 0.2 ohm }";
    let j = solve(&job("rating: 630 V", cabinets));
    assert_eq!(line(&j, "C1")["quantity"], 4, "two in each of two cabinets");
    assert_eq!(line(&j, "R5")["quantity"], 2);
    assert_eq!(line(&j, "L2")["quantity"], 1, "cabinet B only");
    // (4 x 1.10) + (2 x 2.90) + (2 x 0.30) = 4.40 + 5.80 + 0.60 = 10.80; L9 and L2 unpriced.
    let cents = 4 * 110 + 2 * 290 + 2 * 30;
    assert_eq!(j["parts_total"], format!("{}.{:02}", cents / 100, cents % 100));
    assert_eq!(j["parts_unpriced"], 2);
}

#[test]
fn without_a_price_list_nothing_is_priced_and_a_bad_price_is_located() {
    let text = job("rating: 300 V", "").replace("prices: { list: prices.csv, currency: EUR }\n", "");
    let o = Cli::new().job(&text).args(["solve", "{job}", "--format", "json"]).run();
    let j: Value = serde_json::from_str(&o.stdout).unwrap();
    assert!(j["parts"].as_array().unwrap().iter().all(|l| l.get("unit_price").is_none() && l.get("price").is_none()));
    assert!(j.get("parts_total").is_none());
    let o = Cli::new().job(&job("rating: 300 V", "")).file("prices.csv", b"kind,value,rating,type,unit_price\nresistor,1 ohm,5 W,,0.305\n").args(["check", "{job}"]).run();
    o.code(1).stderr_has("prices.csv line 2: unit price \"0.305\" is not a price");
}
