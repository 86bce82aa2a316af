//! The archive index a batch writes beside its reports: `index.csv` for a spreadsheet and
//! `index.json` for programs (and for the next run, which skips a job whose inputs hash the
//! same), and the search `find` runs over it.
//!
//! Each row reads its figures from the job's own JSON results (`solve --format json`), so the
//! index can never say other than the report and `solve` do.

use serde::{Deserialize, Serialize};
use serde_json::Value;
use sha2::{Digest, Sha256};

use crate::model::Job;

pub const CSV_NAME: &str = "index.csv";
pub const JSON_NAME: &str = "index.json";

/// One driver's level against the original design (dB; a fault is more than 40 dB down).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Level {
    /// The cabinet of a pair or set; none for a job of one cabinet.
    pub cabinet: Option<String>,
    pub driver: String,
    pub as_found_db: f64,
    pub as_found_fault: bool,
    /// None when no work was done (a quotation or an inspection): there is no "as left".
    pub as_left_db: Option<f64>,
    pub as_left_fault: bool,
}

/// A part the work fitted (a replacement, an inserted or added part), with its value as left.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Fitted {
    pub cabinet: Option<String>,
    pub part: String,
    /// capacitor, inductor or resistor
    pub kind: String,
    /// In SI units (farad, henry, ohm).
    pub value: f64,
    /// The value as printed: "3.3 uF".
    pub text: String,
}

/// One job of the archive.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Row {
    /// The job file, relative to the batch's folder, with `/` between folders.
    pub job_file: String,
    /// The report, relative to the index's folder.
    pub report: String,
    pub template: String,
    pub number: String,
    pub date: String,
    pub customer: String,
    pub customer_reference: String,
    pub speaker: String,
    pub serials: Vec<String>,
    /// The design from the shop's library the job names; none for a network typed inline.
    pub design: Option<String>,
    pub work: String,
    pub levels: Vec<Level>,
    pub fitted: Vec<Fitted>,
    /// The amplifier power the speaker suits (W), as every report states it.
    pub power_suits_w: Option<f64>,
    /// The amplifier-load verdict as left (as found when no work was done).
    pub load_as_left: Option<String>,
    pub warnings: usize,
    /// SHA-256 over the tool's version, the template and every file the job read.
    pub input_sha256: String,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Index {
    pub voicekeep: String,
    pub jobs: Vec<Row>,
}

/// The hash that decides whether a job's report is current: the tool's version, the template
/// (a built-in's name, or a shop's file with its text) and every file the job read (the job
/// file first), each with its name and length so no two lists hash alike.
pub fn input_hash(job: &Job, template: &crate::model::Template) -> String {
    let mut h = Sha256::new();
    let mut put = |b: &[u8]| {
        h.update((b.len() as u64).to_le_bytes());
        h.update(b);
    };
    put(format!("voicekeep {}", crate::results::VERSION).as_bytes());
    put(template.name().as_bytes());
    if let crate::model::Template::File { text, .. } = template {
        put(text.as_bytes());
    }
    for i in &job.inputs {
        put(i.name.as_bytes());
        put(&i.bytes);
    }
    h.finalize().iter().map(|b| format!("{b:02x}")).collect()
}

/// The index row of a job whose report was written: its facts from the job and from its JSON
/// results (`results::json_outcome`).
pub fn row(job_file: &str, report: &str, job: &Job, template: &crate::model::Template, json: &Value, hash: String) -> Row {
    let worked = job.work_done();
    let mut levels = Vec::new();
    let mut fitted = Vec::new();
    let cabinets: Vec<(Option<String>, &Value)> = match json.get("cabinets").and_then(Value::as_object) {
        Some(m) => m.iter().map(|(k, v)| (Some(k.clone()), v)).collect(),
        None => vec![(None, json)],
    };
    for (cabinet, v) in &cabinets {
        for l in v.get("levels").and_then(Value::as_array).into_iter().flatten() {
            let num = |k: &str| l.get(k).and_then(Value::as_f64).unwrap_or(f64::NAN);
            let flag = |k: &str| l.get(k).and_then(Value::as_bool).unwrap_or(false);
            levels.push(Level {
                cabinet: cabinet.clone(),
                driver: l.get("driver").and_then(Value::as_str).unwrap_or_default().to_string(),
                as_found_db: num("as_found_db"),
                as_found_fault: flag("as_found_fault"),
                as_left_db: worked.then(|| num("as_left_db")),
                as_left_fault: worked && flag("as_left_fault"),
            });
        }
        if worked {
            for (part, kind, value, text) in fitted_parts(v) {
                fitted.push(Fitted { cabinet: cabinet.clone(), part, kind, value, text });
            }
        }
    }
    let power = json.get("power_range");
    Row {
        job_file: job_file.to_string(),
        report: report.to_string(),
        template: template.name().to_string(),
        number: job.info.number.clone(),
        date: job.info.date.to_string(),
        customer: job.info.customer_name.clone(),
        customer_reference: job.info.customer_reference.clone(),
        speaker: job.info.speaker_description.clone(),
        serials: job.info.serials.clone(),
        design: job.design.clone(),
        work: job.info.work.clone(),
        levels,
        fitted,
        power_suits_w: power.and_then(|p| p.get("suits_w")).and_then(Value::as_f64),
        load_as_left: json.pointer("/load/as_left/verdict").and_then(Value::as_str).map(str::to_string),
        warnings: json.get("warnings").and_then(Value::as_array).map_or(0, Vec::len),
        input_sha256: hash,
    }
}

/// The parts a cabinet's work fitted, from its JSON parts list (the parts to buy, which every
/// report prints): each part's name, kind and value as left.
fn fitted_parts(json: &Value) -> Vec<(String, String, f64, String)> {
    let mut out = Vec::new();
    for p in json.get("parts").and_then(Value::as_array).into_iter().flatten() {
        let (Some(kind), Some(text)) = (p.get("kind").and_then(Value::as_str), p.get("value").and_then(Value::as_str)) else { continue };
        let Ok((k, value)) = part_query(text) else { continue };
        if k != kind {
            continue;
        }
        for name in p.get("parts").and_then(Value::as_array).into_iter().flatten().filter_map(Value::as_str) {
            out.push((name.to_string(), kind.to_string(), value, text.to_string()));
        }
    }
    out
}

/// A text cell a spreadsheet would run as a formula (`=`, `+`, `-`, `@`, or a tab or carriage
/// return before one) gets a leading apostrophe, the mark spreadsheets read as "text". The
/// JSON index keeps the text exactly.
pub fn inert(s: &str) -> String {
    if s.starts_with(['=', '+', '-', '@', '\t', '\r']) {
        format!("'{s}")
    } else {
        s.to_string()
    }
}

/// The columns of `index.csv`, in order.
pub const CSV_HEADER: [&str; 16] = [
    "number",
    "date",
    "customer",
    "customer_reference",
    "speaker",
    "serials",
    "design",
    "work",
    "levels",
    "fitted",
    "power_suits_w",
    "load_as_left",
    "warnings",
    "report",
    "job_file",
    "input_sha256",
];

/// "HF: -1.22 dB as found, -0.02 dB as left" for each driver (and cabinet), one cell.
fn levels_cell(r: &Row) -> String {
    let one = |v: f64, fault: bool| if fault { "silent (a fault)".to_string() } else { format!("{v:+.2} dB") };
    r.levels
        .iter()
        .map(|l| {
            let who = match &l.cabinet {
                Some(c) => format!("{c} {}", l.driver),
                None => l.driver.clone(),
            };
            match l.as_left_db {
                Some(left) => format!("{who}: {} as found, {} as left", one(l.as_found_db, l.as_found_fault), one(left, l.as_left_fault)),
                None => format!("{who}: {} as found", one(l.as_found_db, l.as_found_fault)),
            }
        })
        .collect::<Vec<_>>()
        .join("; ")
}

fn fitted_cell(r: &Row) -> String {
    r.fitted
        .iter()
        .map(|f| match &f.cabinet {
            Some(c) => format!("{c} {} {}", f.part, f.text),
            None => format!("{} {}", f.part, f.text),
        })
        .collect::<Vec<_>>()
        .join("; ")
}

/// One row's cells as `index.csv` holds them (text cells made inert).
pub fn csv_cells(r: &Row) -> Vec<String> {
    let number = |v: Option<f64>| v.map(|w| crate::units::trim_number(w, 6)).unwrap_or_default();
    vec![
        inert(&r.number),
        inert(&r.date),
        inert(&r.customer),
        inert(&r.customer_reference),
        inert(&r.speaker),
        inert(&r.serials.join("; ")),
        inert(r.design.as_deref().unwrap_or("")),
        inert(&r.work),
        inert(&levels_cell(r)),
        inert(&fitted_cell(r)),
        number(r.power_suits_w),
        inert(r.load_as_left.as_deref().unwrap_or("")),
        r.warnings.to_string(),
        inert(&r.report),
        inert(&r.job_file),
        r.input_sha256.clone(),
    ]
}

/// The CSV text: one header row, RFC 4180 quoting, UTF-8, `\r\n` line ends.
pub fn csv_text(index: &Index) -> Result<Vec<u8>, String> {
    let mut w = csv::WriterBuilder::new().terminator(csv::Terminator::CRLF).from_writer(Vec::new());
    w.write_record(CSV_HEADER).map_err(|e| e.to_string())?;
    for r in &index.jobs {
        w.write_record(csv_cells(r)).map_err(|e| e.to_string())?;
    }
    w.into_inner().map_err(|e| e.to_string())
}

/// Job numbers used by more than one job of the index, each with its job files.
pub fn duplicate_numbers(index: &Index) -> Vec<(String, Vec<String>)> {
    let mut by: std::collections::BTreeMap<&str, Vec<String>> = Default::default();
    for r in &index.jobs {
        by.entry(r.number.as_str()).or_default().push(r.job_file.clone());
    }
    by.into_iter().filter(|(_, v)| v.len() > 1).map(|(k, v)| (k.to_string(), v)).collect()
}

/// What `find` looks for; every field given must match.
#[derive(Debug, Clone, Default)]
pub struct Query {
    pub number: Option<String>,
    pub customer: Option<String>,
    pub serial: Option<String>,
    pub design: Option<String>,
    /// A fitted part's value: its kind ("capacitor", ...) and SI value.
    pub part: Option<(String, f64)>,
    pub from: Option<String>,
    pub to: Option<String>,
}

fn has(hay: &str, needle: &str) -> bool {
    hay.to_lowercase().contains(&needle.to_lowercase())
}

impl Query {
    /// Text is matched without regard to case, as a part of the field (a job number exactly);
    /// a part's value within 1 % (a marked value and its reading differ); dates inclusive.
    pub fn matches(&self, r: &Row) -> bool {
        self.number.as_ref().is_none_or(|n| r.number.eq_ignore_ascii_case(n.trim()))
            && self.customer.as_ref().is_none_or(|c| has(&r.customer, c) || has(&r.customer_reference, c))
            && self.serial.as_ref().is_none_or(|s| r.serials.iter().any(|x| has(x, s)))
            && self.design.as_ref().is_none_or(|d| r.design.as_deref().is_some_and(|x| has(x, d)))
            && self.part.as_ref().is_none_or(|(kind, v)| r.fitted.iter().any(|f| f.kind == *kind && (f.value / v - 1.0).abs() <= 0.01))
            && self.from.as_ref().is_none_or(|d| r.date.as_str() >= d.as_str())
            && self.to.as_ref().is_none_or(|d| r.date.as_str() <= d.as_str())
    }
}

/// Reads a part's value as `find --part` takes it: a capacitance, inductance or resistance
/// with its unit ("3.3 uF", "0.27 mH", "2R2", "0.91 ohm").
pub fn part_query(text: &str) -> Result<(String, f64), String> {
    use crate::units::Quantity;
    for (kind, q) in [("capacitor", Quantity::Capacitance), ("inductor", Quantity::Inductance), ("resistor", Quantity::Resistance)] {
        if let Ok(v) = crate::units::parse_value(text, q) {
            if v > 0.0 {
                return Ok((kind.to_string(), v));
            }
        }
    }
    Err(format!("\"{text}\" is not a part's value: write a capacitance, inductance or resistance with its unit, such as 3.3 uF, 0.27 mH or 2.2 ohm"))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_formula_cell_is_made_inert_and_other_text_is_kept() {
        // The characters OWASP's "CSV Injection" page lists as starting a formula.
        for s in ["=SUM(A1)", "+1", "-2+3", "@cmd", "\t=1", "\r=1"] {
            assert_eq!(inert(s), format!("'{s}"));
        }
        for s in ["J. Reil", "", "1-2", "a=b", "'quoted"] {
            assert_eq!(inert(s), s);
        }
    }

    #[test]
    fn a_part_query_reads_each_kind_by_its_unit() {
        assert_eq!(part_query("3.3 uF").unwrap().0, "capacitor");
        assert!((part_query("3.3 uF").unwrap().1 - 3.3e-6).abs() < 1e-15);
        assert_eq!(part_query("0.27 mH").unwrap().0, "inductor");
        assert_eq!(part_query("2R2").unwrap(), ("resistor".to_string(), 2.2));
        assert!(part_query("3.3").is_err());
        assert!(part_query("12 V").is_err());
    }
}
