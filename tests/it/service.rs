//! The service record: the largest amplifier power against a bisection over amplifier power
//! on the stress verdicts themselves (an independent loop through `solve`, not the scaling
//! the code uses), and the record's fields in the reports.

use serde_json::Value;

use crate::util::{root, Cli};

fn solve(text: &str) -> Value {
    let o = Cli::new().job(text).args(["solve", "{job}", "--format", "json"]).run();
    o.code(0);
    serde_json::from_str(&o.stdout).unwrap()
}

/// Whether any as-left part or driver verdict is over its limit.
fn any_over(j: &Value) -> bool {
    let over = |k: &str| j[k].as_array().unwrap().iter().any(|r| r["scenario"] == "as_left" && r["verdict"] == "over");
    over("stress") || over("driver_power")
}

/// The two-way demo with R9's rating fixed at the one chosen for it (so the part fitted does
/// not change with the amplifier) and the amplifier's power set to `w`.
fn at_power(text: &str, w: f64) -> String {
    text.replace("power: 60 W", &format!("power: {w} W"))
}

/// The largest power with nothing over, by bisection on the verdicts.
fn bisect(text: &str) -> f64 {
    let (mut lo, mut hi) = (1.0, 20_000.0);
    assert!(!any_over(&solve(&at_power(text, lo))) && any_over(&solve(&at_power(text, hi))), "the bracket holds the limit");
    while hi / lo > 1.002 {
        let mid = (lo * hi).sqrt();
        if any_over(&solve(&at_power(text, mid))) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    (lo * hi).sqrt()
}

#[test]
fn the_largest_amplifier_power_is_where_a_bisection_on_the_verdicts_finds_the_first_over() {
    let text = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    let j = solve(&text);
    let r9 = j["stress"].as_array().unwrap().iter().find(|r| r["scenario"] == "as_left" && r["part"] == "R9").unwrap()["rating_w"].as_f64().unwrap();
    let fixed = text.replace("value: auto, rating: auto", &format!("value: auto, rating: {r9} W"));
    let want = solve(&fixed)["power_range"].clone();
    assert_eq!(want["max_w"], j["power_range"]["max_w"], "the chosen rating is the one fitted");
    let found = bisect(&fixed);
    let max = want["max_w"].as_f64().unwrap();
    assert!((found / max - 1.0).abs() < 0.003, "bisection {found} W against {max} W");
    // A lower rating on the part that limits it lowers the power; on a part far from its
    // limit it changes nothing.
    let limited = want["limited_by"].as_str().unwrap().to_string();
    assert_eq!(limited, "R9");
    let lower = solve(&fixed.replace(&format!("rating: {r9} W"), &format!("rating: {} W", r9 / 2.0)));
    assert!((lower["power_range"]["max_w"].as_f64().unwrap() / (max / 2.0) - 1.0).abs() < 1e-9, "half the rating, half the power: dissipation scales with power");
    // C1's 250 V rating: at 63 V its peak limits first, at the square of the voltage ratio.
    let c1 = solve(&fixed.replacen("rating: 250 V", "rating: 63 V", 1));
    let p = &c1["power_range"];
    assert_eq!(p["limited_by"], "C1", "{p}");
    assert!(p["max_w"].as_f64().unwrap() < max);
    let found = bisect(&fixed.replacen("rating: 250 V", "rating: 63 V", 1));
    assert!((found / p["max_w"].as_f64().unwrap() - 1.0).abs() < 0.003, "bisection {found} W against {p}");
}
