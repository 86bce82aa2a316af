//! The finiteness checks every output must pass, shared by the property tests (`props.rs`)
//! and the fuzz targets (`fuzz/`, which include this file).

use serde_json::Value;

/// Keys whose value may be null in the results: the fields the analysis declares optional
/// (`Option` in src/analysis and src/model, and the corners and confirmation the results
/// leave empty), each meaning "none". A null anywhere else is a number that was NaN or
/// infinite before serde_json wrote it.
const MAY_BE_NULL: &[&str] = &[
    "acoustic",
    "address",
    "as_designed_hz",
    "as_found",
    "as_found_hz",
    "as_left",
    "as_left_hz",
    "at_hz",
    "band",
    "blocks",
    "chosen",
    "common_ohm",
    "complaint",
    "condition",
    "confirmation",
    "contact",
    "crossover_hz",
    "currency",
    "dcr",
    "derived",
    "diagnosis",
    "esr",
    "fault",
    "finding",
    "fs",
    "fs_hz",
    "labour",
    "labour_hours",
    "labour_rate",
    "largest_difference_db",
    "le",
    "limit",
    "limited_by",
    "logo",
    "lot",
    "maker",
    "markings",
    "max_w",
    "suits_w",
    "minus3_hz",
    "minus6_hz",
    "model",
    "name",
    "note",
    "odd_cabinet",
    "option",
    "pair",
    "part_number",
    "peak_at_hz",
    "peak_v",
    "plan_crossover_hz",
    "price",
    "prices",
    "programme_w",
    "qes",
    "qms",
    "qts",
    "rated_impedance",
    "rated_power",
    "rated_w",
    "rating",
    "rating_a",
    "rating_v",
    "rating_w",
    "re",
    "received",
    "recommend",
    "recommended",
    "reference_crossover_hz",
    "resistance",
    "response",
    "returned",
    "rms_a",
    "rms_at_hz",
    "say",
    "section",
    "sensitivity",
    "sensitivity_db",
    "series",
    "set",
    "shop_logo",
    "shortfall_db",
    "sine_limited_by",
    "sine_max_w",
    "stock",
    "supplier",
    "tan_delta",
    "three_point",
    "tolerance",
    "total",
    "type_text",
    "unit_price",
    "value",
    "warranty",
    "z_at_crossover_ohm",
];

/// The words Rust prints for a non-finite number.
const NON_FINITE: [&str; 3] = ["NaN", "inf", "Infinity"];

/// True when `input` itself holds one of the words a non-finite number prints as (a note
/// that says "inf"): the outputs may then quote it, and their words prove nothing.
pub fn writes_non_finite_words(input: &[u8]) -> bool {
    String::from_utf8_lossy(input).split(|c: char| !c.is_ascii_alphanumeric()).any(|w| NON_FINITE.contains(&w))
}

/// Panics on a null where a number belongs (see [`MAY_BE_NULL`]), and with `words` on a
/// string that prints a non-finite number.
pub fn assert_finite_json(v: &Value, path: &str, words: bool) {
    match v {
        Value::Null => {
            let key = path.rsplit('.').next().unwrap_or("").split('[').next().unwrap_or("");
            assert!(MAY_BE_NULL.contains(&key), "null (a NaN or infinity) at {path}");
        }
        Value::Array(items) => items.iter().enumerate().for_each(|(i, x)| assert_finite_json(x, &format!("{path}[{i}]"), words)),
        Value::Object(map) => map.iter().for_each(|(k, x)| assert_finite_json(x, &format!("{path}.{k}"), words)),
        Value::String(s) if words => assert_finite_text(s, path),
        _ => {}
    }
}

/// Panics on a string anywhere in `v` that prints a non-finite number: for data made only of
/// text and optional parts (the report's), where a null is just "none".
pub fn assert_finite_strings(v: &Value, path: &str) {
    match v {
        Value::Array(items) => items.iter().enumerate().for_each(|(i, x)| assert_finite_strings(x, &format!("{path}[{i}]"))),
        Value::Object(map) => map.iter().for_each(|(k, x)| assert_finite_strings(x, &format!("{path}.{k}"))),
        Value::String(s) => assert_finite_text(s, path),
        _ => {}
    }
}

/// Panics when text shows a non-finite number as Rust prints one (`NaN`, `inf`, `-inf`).
pub fn assert_finite_text(text: &str, place: &str) {
    for word in text.split(|c: char| !c.is_ascii_alphanumeric()) {
        assert!(!NON_FINITE.contains(&word), "a non-finite number printed in {place}: {}", excerpt(text, word));
    }
}

fn excerpt(text: &str, word: &str) -> String {
    let at = text.find(word).unwrap_or(0);
    let start = text[..at].char_indices().rev().nth(60).map(|(i, _)| i).unwrap_or(0);
    text[start..].chars().take(140).collect()
}
