//! The JSON contract check, in Rust so `cargo test` needs no python3: the same rules as
//! tests/contract/json-contract.py (kept for outside use; a change to one goes to the other),
//! which extends ../shared/checks/json-contract.py with the keys the project's issues added.
//! It checks structure, not values: the keys outside checks read, their shapes, and that
//! every number is finite.

use serde_json::Value;
use std::path::PathBuf;

/// The contract's problems with `solve --format json`'s text: this check's, and where python3
/// is on PATH, the Python copies' too (the project's and, beside the project, the shared one),
/// so the two ports are held to each other. Without python3 the Rust check alone runs.
pub fn problems_in(json: &str) -> Vec<String> {
    let data: Value = match serde_json::from_str(json) {
        Ok(v) => v,
        Err(e) => return vec![format!("not JSON: {e}")],
    };
    let mut out = problems(&data);
    if std::process::Command::new("python3").arg("--version").output().is_ok_and(|o| o.status.success()) {
        let dir = tempfile::tempdir().unwrap();
        let file = dir.path().join("results.json");
        std::fs::write(&file, json).unwrap();
        for script in scripts() {
            let check = std::process::Command::new("python3").arg(&script).arg(&file).output().unwrap();
            if !check.status.success() {
                out.push(format!("{}: {}", script.display(), String::from_utf8_lossy(&check.stdout).trim()));
            }
        }
    }
    out
}

fn scripts() -> Vec<PathBuf> {
    let root = crate::util::root();
    let shared = root.join("../shared/checks/json-contract.py");
    let mut out = vec![root.join("tests/contract/json-contract.py")];
    if shared.exists() {
        out.push(shared);
    }
    out
}

/// Every problem with `solve --format json`'s output, one line each; empty when it holds.
pub fn problems(data: &Value) -> Vec<String> {
    let mut p = check(data);
    // A pair or set holds each cabinet's results, with the same keys, under
    // cabinets.<name>, and how the cabinets match.
    if let Some(cabinets) = data.get("cabinets") {
        match cabinets.as_object() {
            Some(c) if c.len() >= 2 => {
                for (name, cab) in c {
                    p.extend(check(cab).into_iter().map(|x| format!("cabinets.{name}.{x}")));
                }
            }
            _ => p.push("cabinets: want two or more cabinets by name".into()),
        }
        for (i, m) in list(data, "pair_match").iter().enumerate() {
            need(&mut p, m.get("driver").is_some_and(Value::is_string), format!("pair_match[{i}].driver: missing"));
            for key in ["as_found_db", "as_left_db", "tolerance_db"] {
                need(&mut p, finite(m.get(key)), format!("pair_match[{i}].{key}: want a finite number"));
            }
            need(&mut p, one_of(m.get("verdict"), &["ok", "over"]), format!("pair_match[{i}].verdict: want ok or over"));
            let resp = m.get("responsible").and_then(Value::as_array).cloned().unwrap_or_else(|| vec![Value::Null]);
            for (j, r) in resp.iter().enumerate() {
                let ok = r.get("cabinet").is_some_and(Value::is_string) && r.get("part").is_some_and(Value::is_string) && r.get("share_db").is_some_and(is_number);
                need(&mut p, ok, format!("pair_match[{i}].responsible[{j}]: want cabinet, part and share_db"));
            }
        }
        need(&mut p, data.get("pair_match").and_then(Value::as_array).is_some_and(|a| !a.is_empty()), "pair_match: missing or empty".into());
        for (i, c) in list(data, "pair_compensation").iter().enumerate() {
            let ok = c.get("part").is_some_and(Value::is_string) && c.get("exact").is_some_and(Value::is_array) && c.get("fitted").is_some_and(Value::is_array);
            need(&mut p, ok, format!("pair_compensation[{i}]: want part, exact and fitted"));
        }
    }
    p
}

fn need(p: &mut Vec<String>, ok: bool, msg: String) -> bool {
    if !ok {
        p.push(msg);
    }
    ok
}

/// A JSON number (serde_json holds no NaN or infinity, so every number is finite; a string
/// or null is not a number).
fn is_number(v: &Value) -> bool {
    v.is_number()
}

fn finite(v: Option<&Value>) -> bool {
    v.and_then(Value::as_f64).is_some_and(f64::is_finite)
}

fn one_of(v: Option<&Value>, choices: &[&str]) -> bool {
    v.and_then(Value::as_str).is_some_and(|s| choices.contains(&s))
}

fn list<'a>(v: &'a Value, key: &str) -> &'a [Value] {
    v.get(key).and_then(Value::as_array).map(Vec::as_slice).unwrap_or(&[])
}

/// A decimal string with exactly two places, such as 2.40.
fn money(v: Option<&Value>) -> bool {
    let Some(s) = v.and_then(Value::as_str) else { return false };
    let digits = s.replacen('.', "", 1);
    !digits.is_empty() && digits.bytes().all(|b| b.is_ascii_digit()) && s.rsplit('.').next().is_some_and(|d| d.len() == 2)
}

fn finite_list(p: &mut Vec<String>, v: Option<&Value>, n: usize, place: &str) {
    let ok = v.and_then(Value::as_array).is_some_and(|a| a.len() == n);
    if need(p, ok, format!("{place}: want {n} values")) {
        for (i, x) in v.unwrap().as_array().unwrap().iter().enumerate() {
            need(p, finite(Some(x)), format!("{place}[{i}]: {x} is not a finite number"));
        }
    }
}

/// The problems with one cabinet's results (a single job's top level).
fn check(data: &Value) -> Vec<String> {
    let mut p = Vec::new();
    let p = &mut p;
    need(p, data.get("voicekeep").is_some_and(Value::is_string), "voicekeep: the tool's version string is missing".into());
    let freqs = list(data, "frequencies_hz");
    if need(p, !freqs.is_empty(), "frequencies_hz: missing or empty".into()) {
        for (i, f) in freqs.iter().enumerate() {
            need(p, finite(Some(f)), format!("frequencies_hz[{i}]: {f} is not a finite number"));
        }
    }
    let n = freqs.len();
    for name in ["as_designed", "as_found", "as_left"] {
        let s = data.get("scenarios").and_then(|s| s.get(name));
        if !need(p, s.is_some_and(Value::is_object), format!("scenarios.{name}: missing")) {
            continue;
        }
        let s = s.unwrap();
        let drivers = s.get("drivers").and_then(Value::as_object);
        if need(p, drivers.is_some_and(|d| !d.is_empty()), format!("scenarios.{name}.drivers: missing or empty")) {
            for (r, d) in drivers.unwrap() {
                for key in ["db", "phase_deg"] {
                    finite_list(p, d.get(key), n, &format!("scenarios.{name}.drivers.{r}.{key}"));
                }
                // SPL at 2.83 V, 1 m where the job gives the driver's sensitivity or
                // response, with where it came from.
                if d.get("spl_db").is_some() {
                    finite_list(p, d.get("spl_db"), n, &format!("scenarios.{name}.drivers.{r}.spl_db"));
                    need(p, one_of(d.get("spl_source"), &["sensitivity", "response"]), format!("scenarios.{name}.drivers.{r}.spl_source: want sensitivity or response"));
                }
                let wrapped = list(d, "phase_deg").iter().filter_map(Value::as_f64).all(|x| -180.0 < x && x <= 180.0);
                need(p, wrapped, format!("scenarios.{name}.drivers.{r}.phase_deg: not wrapped to (-180, 180]"));
            }
        }
        let imp = s.get("impedance");
        if need(p, imp.is_some_and(Value::is_object), format!("scenarios.{name}.impedance: missing")) {
            for key in ["ohm", "phase_deg"] {
                finite_list(p, imp.unwrap().get(key), n, &format!("scenarios.{name}.impedance.{key}"));
            }
        }
        let load = data.get("load").and_then(|l| l.get(name));
        if need(p, load.is_some_and(Value::is_object), format!("load.{name}: missing")) {
            let load = load.unwrap();
            for key in ["min_ohm", "min_at_hz", "epdr_min_ohm"] {
                if need(p, load.get(key).is_some(), format!("load.{name}.{key}: missing")) {
                    need(p, finite(load.get(key)), format!("load.{name}.{key}: {} is not a finite number", load[key]));
                }
            }
            need(p, load.get("rated_impedance_holds").is_some_and(Value::is_boolean), format!("load.{name}.rated_impedance_holds: want true or false"));
        }
    }
    for (i, lv) in list(data, "levels").iter().enumerate() {
        need(p, lv.get("driver").is_some_and(Value::is_string), format!("levels[{i}].driver: missing"));
        need(p, lv.get("band_hz").and_then(Value::as_array).is_some_and(|b| b.len() == 2), format!("levels[{i}].band_hz: want [low, high]"));
        for key in ["as_designed_db", "as_found_db", "as_left_db"] {
            if need(p, lv.get(key).is_some(), format!("levels[{i}].{key}: missing")) {
                need(p, finite(lv.get(key)), format!("levels[{i}].{key}: {} is not a finite number", lv[key]));
            }
        }
    }
    for (i, c) in list(data, "compensation").iter().enumerate() {
        for key in ["part", "driver", "series"] {
            need(p, c.get(key).is_some_and(Value::is_string), format!("compensation[{i}].{key}: missing"));
        }
        for key in ["exact_ohm", "fitted_ohm", "residual_db"] {
            if need(p, c.get(key).is_some(), format!("compensation[{i}].{key}: missing")) {
                need(p, finite(c.get(key)), format!("compensation[{i}].{key}: {} is not a finite number", c[key]));
            }
        }
    }
    for (i, st) in list(data, "stress").iter().enumerate() {
        for key in ["scenario", "part", "verdict"] {
            need(p, st.get(key).is_some_and(Value::is_string), format!("stress[{i}].{key}: missing"));
        }
        need(p, one_of(st.get("verdict"), &["ok", "check", "over"]), format!("stress[{i}].verdict: want ok, check or over"));
        for key in ["sine_w", "programme_w", "peak_v", "rms_a", "rating_w", "rating_v"] {
            if st.get(key).is_some_and(|v| !v.is_null()) {
                need(p, finite(st.get(key)), format!("stress[{i}].{key}: {} is not a finite number", st[key]));
            }
        }
    }
    // The drive levels the stress figures assume, and shunts best left out.
    let drive = data.get("drive").cloned().unwrap_or(Value::Null);
    for key in ["e_rms_v", "programme_e_rms_v"] {
        if need(p, drive.get(key).is_some(), format!("drive.{key}: missing")) {
            need(p, finite(drive.get(key)), format!("drive.{key}: {} is not a finite number", drive[key]));
        }
    }
    need(p, drive.get("basis").is_some_and(Value::is_string), "drive.basis: missing".into());
    for (i, c) in list(data, "compensation_open").iter().enumerate() {
        for key in ["part", "driver", "reason"] {
            need(p, c.get(key).is_some_and(Value::is_string), format!("compensation_open[{i}].{key}: missing"));
        }
    }
    // The parts to buy, prices as decimal strings (exact hundredths).
    for (i, l) in list(data, "parts").iter().enumerate() {
        need(p, l.get("kind").is_some_and(Value::is_string) && l.get("value").is_some_and(Value::is_string), format!("parts[{i}]: want kind and value"));
        need(p, l.get("quantity").and_then(Value::as_u64).is_some_and(|q| q >= 1), format!("parts[{i}].quantity: want a count"));
        for key in ["unit_price", "price"] {
            if l.get(key).is_some() {
                need(p, money(l.get(key)), format!("parts[{i}].{key}: want a decimal string such as 2.40"));
            }
        }
    }
    if data.get("parts_total").is_some() {
        need(p, money(data.get("parts_total")) && data.get("currency").is_some_and(Value::is_string), "parts_total: want a decimal string with its currency".into());
    }
    // The amplifier power this speaker suits: suits_w at most max_w, and no more than the
    // job's amplifier power while a part or driver is unrated.
    let pr = data.get("power_range");
    let shaped = pr.is_some_and(|r| r.is_object() && ["max_w", "suits_w", "sine_max_w"].iter().all(|k| r.get(k).is_some()) && r.get("basis").is_some_and(Value::is_string));
    need(p, shaped, "power_range: want max_w, suits_w, sine_max_w and basis".into());
    if let Some(pr) = pr.filter(|r| r.is_object()) {
        if let (Some(suits), Some(max)) = (pr.get("suits_w").and_then(Value::as_f64), pr.get("max_w").and_then(Value::as_f64)) {
            need(p, suits <= max * (1.0 + 1e-9), "power_range.suits_w: want at most max_w".into());
            let unrated = pr.get("unrated").is_some_and(|u| match u {
                Value::Array(a) => !a.is_empty(),
                Value::Bool(b) => *b,
                Value::Null => false,
                _ => true,
            });
            if unrated {
                let job = pr.get("job_w").and_then(Value::as_f64).unwrap_or(0.0);
                need(p, suits <= job * (1.0 + 1e-9), "power_range.suits_w: want at most job_w while a part or driver is unrated".into());
            }
        }
        for key in ["max_w", "suits_w", "sine_max_w"] {
            let ok = pr.get(key).is_none_or(|v| v.is_null() || v.as_f64().is_some_and(|x| x > 0.0));
            need(p, ok, format!("power_range.{key}: want a power above 0 W, or null"));
        }
    }
    // The prediction against the sweeps at the terminals.
    if let Some(conf) = data.get("confirmation").and_then(Value::as_object) {
        for (scen, c) in conf {
            need(p, scen == "as_found" || scen == "as_left", format!("confirmation.{scen}: want as_found or as_left"));
            for key in ["z_rms_pct", "z_worst_pct", "worst_hz", "phase_rms_deg"] {
                need(p, finite(c.get(key)), format!("confirmation.{scen}.{key}: want a finite number"));
            }
            need(p, one_of(c.get("verdict"), &["ok", "over"]), format!("confirmation.{scen}.verdict: want ok or over"));
        }
    }
    // The estimates from the as-found sweep.
    if let Some(dg) = data.get("diagnosis").filter(|d| !d.is_null() && d.get("error").is_none()) {
        need(p, finite(dg.get("residual")), "diagnosis.residual: want a finite number".into());
        need(p, dg.get("estimates").and_then(Value::as_array).is_some_and(|e| !e.is_empty()), "diagnosis.estimates: want a list".into());
        for (i, e) in list(dg, "estimates").iter().enumerate() {
            for key in ["part", "field"] {
                need(p, e.get(key).is_some_and(Value::is_string), format!("diagnosis.estimates[{i}].{key}: want a name"));
            }
            for key in ["value", "low", "high"] {
                need(p, e.get(key).and_then(Value::as_f64).is_some_and(|x| x.is_finite() && x > 0.0), format!("diagnosis.estimates[{i}].{key}: want a finite value above 0"));
            }
            need(p, e.get("identifiable").is_some_and(Value::is_boolean), format!("diagnosis.estimates[{i}].identifiable: want true or false"));
            let v: Vec<f64> = ["value", "low", "high"].iter().filter_map(|k| e.get(*k).and_then(Value::as_f64)).collect();
            if let [value, low, high] = v[..] {
                need(p, low <= value && value <= high, format!("diagnosis.estimates[{i}]: want low <= value <= high"));
            }
        }
    }
    // Options, each with the keys of a scenario's results.
    if let Some(opts) = data.get("options").and_then(Value::as_object) {
        for (name, o) in opts {
            for key in ["levels", "stress", "warnings", "parts"] {
                need(p, o.get(key).is_some_and(Value::is_array), format!("options.{name}.{key}: want a list"));
            }
            need(p, o.get("load").is_some_and(|l| l.get("min_ohm").is_some()), format!("options.{name}.load: want the as-left load"));
            if o.get("total").is_some_and(|t| !t.is_null()) {
                need(p, money(o.get("total")), format!("options.{name}.total: want a decimal string"));
            }
            for key in ["over", "to_check"] {
                need(p, o.get(key).is_some_and(Value::is_array), format!("options.{name}.{key}: want a list of verdicts in words"));
            }
            need(p, o.get("verdicts_ok").is_some_and(Value::is_boolean), format!("options.{name}.verdicts_ok: want true or false"));
            // A pair or set job's option holds every cabinet's results and the match.
            if let Some(all) = data.get("cabinets").and_then(Value::as_object) {
                let cabs = o.get("cabinets").and_then(Value::as_object);
                let same = cabs.is_some_and(|c| c.keys().collect::<Vec<_>>() == all.keys().collect::<Vec<_>>());
                need(p, same, format!("options.{name}.cabinets: want every cabinet of the job"));
                for (cab, c) in cabs.into_iter().flatten() {
                    for key in ["levels", "stress"] {
                        need(p, c.get(key).is_some_and(Value::is_array), format!("options.{name}.cabinets.{cab}.{key}: want a list"));
                    }
                    need(p, c.get("load").is_some_and(|l| l.get("min_ohm").is_some()), format!("options.{name}.cabinets.{cab}.load: want the as-left load"));
                }
                need(p, o.get("pair_match").is_some_and(Value::is_array), format!("options.{name}.pair_match: want the match between cabinets"));
            }
        }
        let rec = data.get("recommended").filter(|r| !r.is_null());
        need(p, rec.is_none_or(|r| r.get("option").and_then(Value::as_str).is_some_and(|o| opts.contains_key(o))), "recommended.option: want one of the options".into());
    }
    for (i, x) in list(data, "substitutes").iter().enumerate() {
        need(p, x.get("driver").is_some_and(Value::is_string), format!("substitutes[{i}].driver: missing"));
        for side in ["original", "substitute"] {
            need(p, x.get(side).is_some_and(|s| s.get("re_ohm").is_some()), format!("substitutes[{i}].{side}: want the driver's figures"));
        }
        for (j, c) in list(x, "checks").iter().enumerate() {
            let ok = one_of(c.get("check"), &["fs", "impedance", "power", "load", "level"])
                && one_of(c.get("verdict"), &["ok", "check", "over"])
                && c.get("reason").is_some_and(Value::is_string);
            need(p, ok, format!("substitutes[{i}].checks[{j}]: want check, verdict and reason"));
        }
    }
    std::mem::take(p)
}

/// The check must be able to fail: each rule, broken on purpose in a good job's JSON, is
/// named (the rules as json-contract.py words them).
#[test]
fn the_contract_check_finds_each_kind_of_break() {
    let solve = |sample: &str| -> Value {
        let out = std::process::Command::new(crate::util::bin()).current_dir(crate::util::root()).args(["solve", sample, "--format", "json"]).output().unwrap();
        serde_json::from_slice(&out.stdout).unwrap()
    };
    // A quotation with options, and a pair with priced parts and its match.
    let (quote, pair) = (solve("samples/quote-three-options.yaml"), solve("samples/pair-recap.yaml"));
    assert_eq!(problems(&quote), Vec::<String>::new());
    assert_eq!(problems(&pair), Vec::<String>::new());
    let broken = |good: &Value, f: &dyn Fn(&mut Value), want: &str| {
        let mut v = good.clone();
        f(&mut v);
        let found = problems(&v);
        assert!(found.iter().any(|x| x.contains(want)), "want {want:?} among {found:?}");
    };
    broken(&quote, &|v| v.as_object_mut().unwrap().remove("voicekeep").map(|_| ()).unwrap(), "voicekeep: the tool's version string is missing");
    broken(&quote, &|v| v["frequencies_hz"][0] = Value::String("x".into()), "frequencies_hz[0]");
    broken(&quote, &|v| v["scenarios"]["as_left"]["drivers"]["HF"]["db"].as_array_mut().unwrap().truncate(3), "scenarios.as_left.drivers.HF.db: want");
    broken(&quote, &|v| v["scenarios"]["as_found"]["drivers"]["LF"]["phase_deg"][0] = 270.into(), "phase_deg: not wrapped");
    broken(&quote, &|v| v["load"]["as_left"]["rated_impedance_holds"] = 1.into(), "load.as_left.rated_impedance_holds");
    broken(&quote, &|v| v["levels"][0]["band_hz"] = serde_json::json!([20]), "levels[0].band_hz");
    broken(&quote, &|v| v["stress"][0]["verdict"] = "fine".into(), "stress[0].verdict");
    broken(&quote, &|v| v["drive"].as_object_mut().unwrap().clear(), "drive.e_rms_v: missing");
    broken(&quote, &|v| v["power_range"]["suits_w"] = serde_json::json!(1e9), "power_range.suits_w: want at most max_w");
    broken(&quote, &|v| v["power_range"]["max_w"] = serde_json::json!(0), "power_range.max_w: want a power above 0 W");
    broken(&quote, &|v| v["recommended"]["option"] = "none-such".into(), "recommended.option");
    broken(&quote, &|v| v["options"]["film-only"]["verdicts_ok"] = "yes".into(), "options.film-only.verdicts_ok");
    broken(&quote, &|v| v["options"]["film-only"]["total"] = "12.5".into(), "options.film-only.total");
    broken(&pair, &|v| v["parts"][0]["unit_price"] = "2.4".into(), "parts[0].unit_price");
    broken(&pair, &|v| v["parts"][0]["quantity"] = 0.into(), "parts[0].quantity");
    broken(&pair, &|v| v["pair_match"][0]["verdict"] = "close".into(), "pair_match[0].verdict");
    broken(&pair, &|v| v["cabinets"]["KB-5120"]["load"].as_object_mut().unwrap().clear(), "cabinets.KB-5120.load.as_designed: missing");
    broken(&pair, &|v| v["pair_match"] = serde_json::json!([]), "pair_match: missing or empty");
}
