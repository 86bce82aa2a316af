//! Regression goldens: `solve --format json` of every sample and every reference network,
//! kept in tests/golden/ so a change meant to leave behaviour alone (a refactor) can prove it
//! did. These check the code against its own earlier output, not against the world: the
//! outside references are in reference.rs, analytic.rs and the unit tests. The Monte Carlo's
//! figures (`tolerance`) are left out: they depend on the random generator, not the method.
//! Set VOICEKEEP_BLESS=1 to write the goldens again after a change that is meant to move them.

use serde_json::Value;

use crate::util::{root, Cli};

const JOBS: [&str; 14] = [
    "samples/quote-three-options.yaml",
    "samples/sweep-diagnosis.yaml",
    "samples/pair-quote.yaml",
    "samples/substitute-tweeter.yaml",
    "samples/two-way-recap.yaml",
    "samples/pair-recap.yaml",
    "samples/three-way-mid-table.yaml",
    "samples/repair-like-for-like.yaml",
    "tests/reference/first-order.yaml",
    "tests/reference/butterworth-esr-dcr.yaml",
    "tests/reference/small-zobel.yaml",
    "tests/reference/lpad-tweeter.yaml",
    "tests/reference/notch-midrange.yaml",
    "tests/reference/three-way.yaml",
];

/// Every difference between two JSON values beyond `rel` relative, by path.
fn differences(path: &str, a: &Value, b: &Value, rel: f64, out: &mut Vec<String>) {
    match (a, b) {
        (Value::Object(x), Value::Object(y)) => {
            let (kx, ky): (Vec<&String>, Vec<&String>) = (x.keys().collect(), y.keys().collect());
            if kx != ky {
                out.push(format!("{path}: keys {kx:?} against {ky:?}"));
                return;
            }
            for (k, v) in x {
                if k != "tolerance" && k != "voicekeep" {
                    differences(&format!("{path}.{k}"), v, &y[k], rel, out);
                }
            }
        }
        (Value::Array(x), Value::Array(y)) if x.len() == y.len() => {
            for (i, (p, q)) in x.iter().zip(y).enumerate() {
                differences(&format!("{path}[{i}]"), p, q, rel, out);
            }
        }
        (Value::Number(p), Value::Number(q)) => {
            let (p, q) = (p.as_f64().unwrap_or(f64::NAN), q.as_f64().unwrap_or(f64::NAN));
            if (p - q).abs() > rel * p.abs().max(q.abs()) {
                out.push(format!("{path}: {p} against {q}"));
            }
        }
        _ if a == b => {}
        _ => out.push(format!("{path}: {a} against {b}")),
    }
}

#[test]
fn regression_golden_json_of_every_sample_and_reference_network() {
    let bless = std::env::var_os("VOICEKEEP_BLESS").is_some();
    for job in JOBS {
        let o = Cli::new().args(["solve", job, "--format", "json"]).run();
        o.code(0);
        let name = std::path::Path::new(job).file_stem().unwrap().to_string_lossy().into_owned();
        let file = root().join("tests/golden").join(format!("{name}.json"));
        if bless {
            std::fs::write(&file, &o.stdout).unwrap();
            continue;
        }
        let want: Value = serde_json::from_str(&std::fs::read_to_string(&file).unwrap_or_else(|e| panic!("{}: {e}", file.display()))).unwrap();
        let got: Value = serde_json::from_str(&o.stdout).unwrap();
        let mut diffs = Vec::new();
        differences("", &got, &want, 1e-12, &mut diffs);
        assert!(diffs.is_empty(), "{job}: {} differences from the golden, first: {:?}", diffs.len(), &diffs[..diffs.len().min(8)]);
    }
}
