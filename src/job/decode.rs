//! Validation: the positioned YAML tree becomes the checked [`Job`](crate::model::Job).
//! Every problem found is collected, each with its place, field and a hint, so a technician
//! fixes the whole file in one pass.

use std::path::Path;

use crate::diag::{suggest, Diagnostic};
use crate::job::yaml::{Key, Node, Pos};
use crate::model::*;
use crate::units::{parse_value, Quantity};

pub struct Ctx<'a> {
    pub diags: Vec<Diagnostic>,
    pub base_dir: &'a Path,
    pub inputs: Vec<InputFile>,
    /// References that were declared but could not be read: later mentions of them are not
    /// reported again, so one mistake gives one message.
    pub failed: Vec<String>,
    /// Values already reported (a decimal comma split by YAML): not reported again.
    pub silenced: Vec<Pos>,
}

pub struct Fields<'n> {
    entries: &'n [(Key, Node)],
    pub path: String,
    pub pos: Pos,
}

impl<'n> Fields<'n> {
    pub fn get(&self, key: &str) -> Option<&'n Node> {
        self.entries.iter().find(|(k, _)| k.name == key).map(|(_, v)| v).filter(|v| !v.is_null())
    }

    pub fn key_pos(&self, key: &str) -> Option<Pos> {
        self.entries.iter().find(|(k, _)| k.name == key).map(|(k, _)| k.pos)
    }

    pub fn at(&self, key: &str) -> String {
        if self.path.is_empty() {
            key.to_string()
        } else {
            format!("{}.{}", self.path, key)
        }
    }
}

fn join(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else {
        format!("{path}.{key}")
    }
}

impl<'a> Ctx<'a> {
    pub fn new(base_dir: &'a Path) -> Self {
        Ctx { diags: Vec::new(), base_dir, inputs: Vec::new(), failed: Vec::new(), silenced: Vec::new() }
    }

    pub fn error(&mut self, pos: Pos, field: &str, message: impl Into<String>, hint: Option<String>) {
        self.diags.push(Diagnostic::new(pos, field, message).with_hint(hint));
    }

    /// The node as a mapping whose keys are all in `allowed`; unknown keys are reported with
    /// the nearest allowed key.
    pub fn fields<'n>(&mut self, node: &'n Node, path: &str, allowed: &[&str]) -> Option<Fields<'n>> {
        let Node::Map { entries, pos } = node else {
            self.error(node.pos(), path, format!("expected a mapping of fields, found {}", node.kind_name()), Some(format!("fields here are: {}", allowed.join(", "))));
            return None;
        };
        for (i, (k, _)) in entries.iter().enumerate() {
            // `{ value: 4,7 uF }`: in braces the comma ends the value, leaving `4` and a field
            // `7 uF`. That is one mistake, a decimal comma, and is said once.
            let split = k.name.starts_with(|c: char| c.is_ascii_digit());
            if let (true, Some((pk, Node::Scalar { text, pos: vpos, .. }))) = (split, i.checked_sub(1).map(|j| &entries[j])) {
                if !text.is_empty() && text.trim().chars().all(|c| c.is_ascii_digit()) {
                    let written = format!("{},{}", text.trim(), k.name);
                    self.error(
                        *vpos,
                        &join(path, &pk.name),
                        format!("\"{written}\" has a decimal comma: inside {{ }} the comma ends the value, leaving \"{}\" and a field \"{}\"", text.trim(), k.name),
                        Some(format!("write a decimal point: \"{}\"", written.replacen(',', ".", 1))),
                    );
                    self.silenced.push(*vpos);
                    continue;
                }
            }
            if !allowed.contains(&k.name.as_str()) {
                let hint = match suggest(&k.name, allowed.iter().copied()) {
                    Some(s) => format!("did you mean `{s}`?"),
                    None => format!("fields here are: {}", allowed.join(", ")),
                };
                self.error(k.pos, &join(path, &k.name), format!("unknown field `{}`", k.name), Some(hint));
            }
        }
        Some(Fields { entries, path: path.to_string(), pos: *pos })
    }

    pub fn text(&mut self, node: &Node, path: &str) -> Option<String> {
        match node {
            Node::Scalar { text, .. } => Some(text.clone()),
            _ => {
                self.error(node.pos(), path, format!("expected text, found {}", node.kind_name()), None);
                None
            }
        }
    }

    fn opt_text(&mut self, f: &Fields, key: &str) -> Option<String> {
        f.get(key).and_then(|n| self.text(n, &f.at(key)))
    }

    fn req<'n>(&mut self, f: &Fields<'n>, key: &str, what: &str) -> Option<&'n Node> {
        let n = f.get(key);
        // A misspelt key is already reported with this key as its suggestion: one mistake,
        // one message.
        let misspelt = f.entries.iter().any(|(k, _)| k.name != key && suggest(&k.name, [key]).is_some());
        if n.is_none() && !misspelt {
            self.error(f.pos, &f.at(key), format!("missing `{key}` ({what})"), None);
        }
        n
    }

    pub fn value(&mut self, node: &Node, path: &str, q: Quantity) -> Option<f64> {
        if self.silenced.contains(&node.pos()) {
            return None;
        }
        let text = self.text(node, path)?;
        match parse_value(&text, q) {
            Ok(v) => Some(v),
            Err(e) => {
                self.error(node.pos(), path, e.message, e.hint);
                None
            }
        }
    }

    /// A value that must be above zero (or at least zero with `allow_zero`).
    fn positive(&mut self, node: &Node, path: &str, q: Quantity, allow_zero: bool) -> Option<f64> {
        let v = self.value(node, path, q)?;
        if v < 0.0 || (!allow_zero && v == 0.0) {
            self.error(node.pos(), path, format!("must be {} zero, found \"{}\"", if allow_zero { "at least" } else { "more than" }, node.as_scalar().unwrap_or("")), None);
            return None;
        }
        Some(v)
    }

    fn opt_positive(&mut self, f: &Fields, key: &str, q: Quantity, allow_zero: bool) -> Option<f64> {
        f.get(key).and_then(|n| self.positive(n, &f.at(key), q, allow_zero))
    }

    fn bare_number(&mut self, node: &Node, path: &str) -> Option<f64> {
        let text = self.text(node, path)?;
        match text.trim().parse::<f64>() {
            Ok(v) if v.is_finite() => Some(v),
            _ => {
                self.error(node.pos(), path, format!("expected a plain number, found \"{text}\""), None);
                None
            }
        }
    }

    fn choice<T: Copy>(&mut self, node: &Node, path: &str, options: &[(&str, T)]) -> Option<T> {
        let text = self.text(node, path)?;
        if let Some((_, v)) = options.iter().find(|(k, _)| *k == text) {
            return Some(*v);
        }
        let names: Vec<&str> = options.iter().map(|(k, _)| *k).collect();
        let hint = match suggest(&text, names.iter().copied()) {
            Some(s) => format!("did you mean `{s}`?"),
            None => format!("choose one of: {}", names.join(", ")),
        };
        self.error(node.pos(), path, format!("unknown choice \"{text}\""), Some(hint));
        None
    }

    fn pair_of_nodes(&mut self, node: &Node, path: &str) -> Option<[String; 2]> {
        let items = match node {
            Node::Seq { items, .. } if items.len() == 2 => items,
            _ => {
                self.error(node.pos(), path, "expected two node names, such as [IN, COM]", Some("write the + terminal's node first".into()));
                return None;
            }
        };
        let a = self.text(&items[0], path)?;
        let b = self.text(&items[1], path)?;
        if a == b {
            self.error(node.pos(), path, format!("both terminals are on node {a}: the part would be shorted out"), None);
            return None;
        }
        Some([a, b])
    }

    fn band(&mut self, node: &Node, path: &str) -> Option<(f64, f64)> {
        let items = match node {
            Node::Seq { items, .. } if items.len() == 2 => items,
            _ => {
                self.error(node.pos(), path, "expected two frequencies, such as [3 kHz, 15 kHz]", None);
                return None;
            }
        };
        let lo = self.positive(&items[0], path, Quantity::Frequency, false)?;
        let hi = self.positive(&items[1], path, Quantity::Frequency, false)?;
        if hi <= lo {
            self.error(node.pos(), path, "the upper frequency must be above the lower one", None);
            return None;
        }
        Some((lo, hi))
    }

    /// Reads a file named in the job, relative to the job's folder, and records it.
    fn read_file(&mut self, node: &Node, path: &str) -> Option<(String, String)> {
        let name = self.text(node, path)?;
        let full = self.base_dir.join(&name);
        match std::fs::read(&full) {
            Ok(bytes) => {
                let text = String::from_utf8_lossy(&bytes).into_owned();
                if !self.inputs.iter().any(|f| f.name == name) {
                    self.inputs.push(InputFile { name: name.clone(), bytes });
                }
                Some((name, text))
            }
            Err(e) => {
                self.error(node.pos(), path, format!("cannot read table file \"{}\": {}", full.display(), e), Some("table paths are relative to the job file's folder".into()));
                None
            }
        }
    }

    /// A table of three numeric columns (comma, tab or space separated; `#` comments).
    fn table(&mut self, node: &Node, path: &str, min_rows: usize) -> Option<(String, [Vec<f64>; 3])> {
        let (name, text) = self.read_file(node, path)?;
        let mut cols: [Vec<f64>; 3] = Default::default();
        for (i, line) in text.lines().enumerate() {
            let line = line.split('#').next().unwrap_or("").trim();
            if line.is_empty() {
                continue;
            }
            let cells: Vec<&str> = line.split(|c: char| c == ',' || c == ';' || c.is_whitespace()).filter(|s| !s.is_empty()).collect();
            let nums: Vec<Option<f64>> = cells.iter().map(|c| c.parse::<f64>().ok().filter(|v| v.is_finite())).collect();
            if cols[0].is_empty() && nums.iter().any(|n| n.is_none()) && nums.first().map(|n| n.is_none()).unwrap_or(false) {
                continue; // a header line
            }
            if cells.len() < 3 {
                self.error(node.pos(), path, format!("{name}:{}: expected 3 columns (frequency Hz, magnitude, phase deg), found {}", i + 1, cells.len()), None);
                return None;
            }
            if let Some(bad) = nums.iter().take(3).position(|n| n.is_none()) {
                self.error(
                    node.pos(),
                    path,
                    format!("{name}:{}: \"{}\" is not a number", i + 1, cells[bad]),
                    Some("a header line is allowed only before the first row of numbers".into()),
                );
                return None;
            }
            let f = nums[0].unwrap_or(0.0);
            if let Some(&last) = cols[0].last() {
                if f <= last {
                    self.error(
                        node.pos(),
                        path,
                        format!("{name}:{}: frequency {f} Hz does not rise above the previous row's {last} Hz", i + 1),
                        Some("sort the table by frequency, lowest first, without repeats".into()),
                    );
                    return None;
                }
            }
            if f <= 0.0 {
                self.error(node.pos(), path, format!("{name}:{}: frequency must be above 0 Hz", i + 1), None);
                return None;
            }
            for (c, n) in cols.iter_mut().zip(nums.iter()) {
                c.push(n.unwrap_or(0.0));
            }
        }
        if cols[0].len() < min_rows {
            self.error(node.pos(), path, format!("{name}: {} rows of numbers; at least {min_rows} are needed", cols[0].len()), None);
            return None;
        }
        Some((name, cols))
    }
}

const JOB_KEYS: &[&str] = &["voicekeep", "job", "amplifier", "network", "measured", "changes", "compensate", "analysis", "report"];
const PART_KEYS: &[&str] = &["kind", "between", "value", "esr", "tan_delta", "dcr", "tolerance", "rating", "type", "core"];
const DRIVER_KEYS: &[&str] = &["role", "between", "model", "rated_power", "sensitivity", "response", "polarity", "note"];
const MODEL_KEYS: &[&str] = &["resistance", "re", "le", "leach", "fs", "qms", "qes", "table"];
const READING_PART_KEYS: &[&str] = &["value", "esr", "tan_delta", "dcr", "at"];
const READING_DRIVER_KEYS: &[&str] = &["resistance", "re", "le", "fs", "qms", "qes", "at"];
const REPLACE_PART_KEYS: &[&str] = &["value", "esr", "tan_delta", "dcr", "tolerance", "rating", "type", "core"];
const REPLACE_DRIVER_KEYS: &[&str] = &["model", "sensitivity", "response", "rated_power", "note"];

pub fn decode(root: &Node, ctx: &mut Ctx) -> Option<Job> {
    let mut top = ctx.fields(root, "", JOB_KEYS)?;
    // A missing section is reported at the top of the file.
    top.pos = Pos { line: 1, col: 1 };

    match top.get("voicekeep") {
        None => ctx.error(Pos { line: 1, col: 1 }, "voicekeep", "missing `voicekeep: 1` (the job format version)", Some("add `voicekeep: 1` as the first line".into())),
        Some(n) => {
            if n.as_scalar() != Some("1") {
                ctx.error(
                    n.pos(),
                    "voicekeep",
                    format!("this is job format version \"{}\"; this voicekeep reads version 1", n.as_scalar().unwrap_or("?")),
                    Some("write `voicekeep: 1`, or use the voicekeep release that wrote this file".into()),
                );
            }
        }
    }

    let info = top.get("job").and_then(|n| decode_info(n, ctx)).unwrap_or_default();
    if top.get("job").is_none() {
        ctx.error(top.pos, "job", "missing `job` (number, date, technician, shop, customer, speaker)", Some("`voicekeep new` prints a starter job".into()));
    }
    let amplifier = match ctx.req(&top, "amplifier", "the amplifier the stress figures assume") {
        Some(n) => decode_amplifier(n, ctx),
        None => None,
    };
    let before = ctx.diags.len();
    let network = match ctx.req(&top, "network", "the crossover as designed") {
        Some(n) => decode_network(n, ctx),
        None => None,
    };
    let network_read = ctx.diags.len() == before;
    let analysis = match ctx.req(&top, "analysis", "the sweep") {
        Some(n) => decode_analysis(n, ctx),
        None => None,
    };
    let network = network?;
    let before = ctx.diags.len();
    let measured = top.get("measured").map(|n| decode_measured(n, &network, ctx)).unwrap_or_default();
    let changes = top.get("changes").map(|n| decode_changes(n, &network, ctx)).unwrap_or_default();
    let steps_read = ctx.diags.len() == before;
    let empty = Node::Map { entries: Vec::new(), pos: top.pos };
    let compensate = decode_compensate(top.get("compensate").unwrap_or(&empty), &network, &changes, ctx);
    let (template, blocks) = top.get("report").map(|n| decode_report(n, ctx)).unwrap_or((Template::Customer, None));

    // Every check runs on what could be read, so one pass lists every problem: connections
    // once every part and driver was read, the steps once every step was, the tables and
    // bands once the sweep was.
    if network_read {
        check_connections(&network, if steps_read { Some((&measured, &changes)) } else { None }, ctx);
    }
    if let Some(a) = &analysis {
        check_coverage(&network, &changes, &compensate, &a.sweep, ctx);
    }
    Some(Job { info, amplifier: amplifier?, network, measured, changes, compensate, analysis: analysis?, template, blocks, inputs: std::mem::take(&mut ctx.inputs) })
}

fn decode_info(node: &Node, ctx: &mut Ctx) -> Option<JobInfo> {
    let f = ctx.fields(node, "job", &["number", "date", "work", "technician", "shop", "customer", "speaker", "notes"])?;
    let mut info = JobInfo { rated_range: (20.0, 20_000.0), ..Default::default() };
    if let Some(n) = ctx.req(&f, "number", "the shop's job number") {
        info.number = ctx.text(n, &f.at("number")).unwrap_or_default();
    }
    if let Some(n) = ctx.req(&f, "date", "the report's date, as 2026-11-28") {
        if let Some(t) = ctx.text(n, &f.at("date")) {
            if let Some(d) = Date::parse_iso(&t) {
                info.date = d;
            } else {
                ctx.error(
                    n.pos(),
                    &f.at("date"),
                    format!("expected an ISO date such as 2026-11-28, found \"{t}\""),
                    Some("the report's date comes from here, never from the clock, so reports can be reproduced".into()),
                );
            }
        }
    }
    info.work = ctx.opt_text(&f, "work").unwrap_or_default();
    info.technician = ctx.opt_text(&f, "technician").unwrap_or_default();
    info.notes = ctx.opt_text(&f, "notes").unwrap_or_default();
    if let Some(n) = f.get("shop") {
        if let Some(s) = ctx.fields(n, "job.shop", &["name", "address", "contact"]) {
            info.shop_name = ctx.opt_text(&s, "name").unwrap_or_default();
            info.shop_address = ctx.opt_text(&s, "address").unwrap_or_default();
            info.shop_contact = ctx.opt_text(&s, "contact").unwrap_or_default();
        }
    }
    if let Some(n) = f.get("customer") {
        if let Some(s) = ctx.fields(n, "job.customer", &["name", "reference"]) {
            info.customer_name = ctx.opt_text(&s, "name").unwrap_or_default();
            info.customer_reference = ctx.opt_text(&s, "reference").unwrap_or_default();
        }
    }
    if let Some(n) = f.get("speaker") {
        if let Some(s) = ctx.fields(n, "job.speaker", &["description", "serials", "rated_impedance", "rated_range"]) {
            info.speaker_description = ctx.opt_text(&s, "description").unwrap_or_default();
            if let Some(n) = s.get("serials") {
                match n {
                    Node::Seq { items, .. } => info.serials = items.iter().filter_map(|i| ctx.text(i, &s.at("serials"))).collect(),
                    _ => info.serials = ctx.text(n, &s.at("serials")).into_iter().collect(),
                }
            }
            info.rated_impedance = ctx.opt_positive(&s, "rated_impedance", Quantity::Resistance, false);
            if let Some(n) = s.get("rated_range") {
                if let Some(r) = ctx.band(n, &s.at("rated_range")) {
                    info.rated_range = r;
                }
            }
        }
    }
    Some(info)
}

fn decode_amplifier(node: &Node, ctx: &mut Ctx) -> Option<Amplifier> {
    let f = ctx.fields(node, "amplifier", &["power", "into", "output_impedance", "programme_power"])?;
    let power = ctx.req(&f, "power", "continuous power rating, e.g. 60 W").and_then(|n| ctx.positive(n, &f.at("power"), Quantity::Power, false));
    let into = ctx.req(&f, "into", "the load the power is rated into, e.g. 8 ohm").and_then(|n| ctx.positive(n, &f.at("into"), Quantity::Resistance, false));
    let out = match f.get("output_impedance") {
        Some(n) => ctx.positive(n, &f.at("output_impedance"), Quantity::Resistance, true),
        None => Some(0.0),
    };
    let programme = match f.get("programme_power") {
        Some(n) => match (ctx.positive(n, &f.at("programme_power"), Quantity::Power, false), power) {
            (Some(p), Some(rated)) if p > rated => {
                ctx.error(
                    n.pos(),
                    &f.at("programme_power"),
                    format!(
                        "a programme power of {} is above the amplifier's rated {}",
                        crate::units::format_si(p, Quantity::Power, 3),
                        crate::units::format_si(rated, Quantity::Power, 3)
                    ),
                    Some("the programme's long-term power is a fraction of the rated sine power (one eighth when not given)".into()),
                );
                None
            }
            (p, _) => p.map(Some),
        },
        None => Some(None),
    };
    Some(Amplifier { power_w: power?, into_ohm: into?, output_ohm: out?, programme_w: programme? })
}

fn map_entries<'n>(node: &'n Node, path: &str, ctx: &mut Ctx) -> &'n [(Key, Node)] {
    match node {
        Node::Map { entries, .. } => entries,
        _ => {
            ctx.error(node.pos(), path, format!("expected a mapping keyed by reference (C1, L1, ...), found {}", node.kind_name()), None);
            &[]
        }
    }
}

fn check_reference(ctx: &mut Ctx, key: &Key, path: &str) -> bool {
    let ok =
        !key.name.is_empty() && key.name.chars().all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-') && key.name.chars().next().is_some_and(|c| c.is_ascii_alphabetic());
    if !ok {
        ctx.error(
            key.pos,
            path,
            format!("\"{}\" is not a usable reference", key.name),
            Some("references start with a letter and use letters, digits, _ and -, like C1 or HF".into()),
        );
    }
    ok
}

fn decode_network(node: &Node, ctx: &mut Ctx) -> Option<Network> {
    let f = ctx.fields(node, "network", &["input", "parts", "drivers"])?;
    let input = match ctx.req(&f, "input", "the amplifier's + and - nodes, e.g. [IN, COM]") {
        Some(n) => ctx.pair_of_nodes(n, &f.at("input")),
        None => None,
    };
    let mut parts = Vec::new();
    if let Some(n) = f.get("parts") {
        for (k, v) in map_entries(n, &f.at("parts"), ctx) {
            let path = format!("network.parts.{}", k.name);
            if check_reference(ctx, k, &path) {
                match decode_part(k, v, &path, ctx) {
                    Some(p) => parts.push(p),
                    None => ctx.failed.push(k.name.clone()),
                }
            }
        }
    }
    let mut drivers = Vec::new();
    if let Some(n) = ctx.req(&f, "drivers", "at least one driver") {
        for (k, v) in map_entries(n, &f.at("drivers"), ctx) {
            let path = format!("network.drivers.{}", k.name);
            if !check_reference(ctx, k, &path) {
                continue;
            }
            if parts.iter().any(|p: &Part| p.name == k.name) {
                ctx.error(k.pos, &path, format!("{} is both a part and a driver", k.name), Some("give every part and driver its own reference".into()));
                continue;
            }
            match decode_driver(k, v, &path, ctx) {
                Some(d) => drivers.push(d),
                None => ctx.failed.push(k.name.clone()),
            }
        }
        if drivers.is_empty() && matches!(n, Node::Map { entries, .. } if entries.is_empty()) {
            ctx.error(n.pos(), &f.at("drivers"), "no drivers: the network must drive at least one", None);
        }
    }
    let net = Network { input: input?, input_pos: f.key_pos("input").unwrap_or(f.pos), parts, drivers };
    Some(net)
}

fn decode_part(key: &Key, node: &Node, path: &str, ctx: &mut Ctx) -> Option<Part> {
    let f = ctx.fields(node, path, PART_KEYS)?;
    let kind = match ctx.req(&f, "kind", "capacitor, inductor or resistor") {
        Some(n) => ctx.choice(n, &f.at("kind"), &[("capacitor", PartKind::Capacitor), ("inductor", PartKind::Inductor), ("resistor", PartKind::Resistor)]),
        None => None,
    };
    let between = ctx.req(&f, "between", "its two nodes, e.g. [IN, H1]").and_then(|n| ctx.pair_of_nodes(n, &f.at("between")));
    let kind = kind?;
    let patch = decode_part_fields(&f, kind, ctx, true)?;
    if !patch.auto_value && patch.value.is_none() {
        if f.get("value").is_none() {
            ctx.error(f.pos, &f.at("value"), format!("missing `value` for {} {}", kind.name(), key.name), None);
        }
        return None;
    }
    if kind == PartKind::Inductor && f.get("dcr").is_none() {
        ctx.error(
            key.pos,
            &f.at("dcr"),
            format!("inductor {} needs its `dcr` (DC resistance, e.g. 0.35 ohm)", key.name),
            Some("the DCR shapes the level the driver plays at; measure it with an ohmmeter, or write 0 ohm if it is truly negligible".into()),
        );
    }
    let mut part = Part::new(&key.name, kind, between?, 0.0, key.pos);
    part.value = patch.value.unwrap_or(0.0);
    part.auto_value = patch.auto_value;
    part.esr = patch.esr.unwrap_or(0.0);
    part.tan_delta = patch.tan_delta;
    part.dcr = patch.dcr.unwrap_or(0.0);
    part.tolerance = patch.tolerance;
    part.rating = patch.rating.unwrap_or(Rating::None);
    part.type_text = patch.type_text;
    Some(part)
}

/// The value and loss fields shared by a part, a bench reading and a replacement.
fn decode_part_fields(f: &Fields, kind: PartKind, ctx: &mut Ctx, allow_auto: bool) -> Option<PartPatch> {
    let q = match kind {
        PartKind::Capacitor => Quantity::Capacitance,
        PartKind::Inductor => Quantity::Inductance,
        PartKind::Resistor => Quantity::Resistance,
    };
    let mut p = PartPatch::default();
    let mut ok = true;
    if let Some(n) = f.get("value") {
        if n.as_scalar() == Some("auto") {
            if allow_auto && kind == PartKind::Resistor {
                p.auto_value = true;
            } else {
                ctx.error(
                    n.pos(),
                    &f.at("value"),
                    if kind == PartKind::Resistor { "`auto` is not allowed here".to_string() } else { format!("`auto` is for resistors only; a {} needs its value", kind.name()) },
                    Some("voicekeep solves compensating resistors; give capacitors and inductors their values".into()),
                );
                ok = false;
            }
        } else {
            p.value = ctx.positive(n, &f.at("value"), q, kind == PartKind::Resistor);
            ok &= p.value.is_some();
        }
    }
    for (key, allowed_kind) in [("esr", PartKind::Capacitor), ("tan_delta", PartKind::Capacitor), ("dcr", PartKind::Inductor)] {
        if let Some(n) = f.get(key) {
            if kind != allowed_kind {
                let hint = match kind {
                    PartKind::Capacitor => "a capacitor's loss is `esr` or `tan_delta`",
                    PartKind::Inductor => "an inductor's loss is `dcr`",
                    PartKind::Resistor => "a resistor's value is its resistance; it takes no esr, tan_delta or dcr",
                };
                ctx.error(n.pos(), &f.at(key), format!("{} {} has no `{}`", if kind == PartKind::Inductor { "an" } else { "a" }, kind.name(), key), Some(hint.into()));
                ok = false;
            }
        }
    }
    if f.get("esr").is_some() && f.get("tan_delta").is_some() {
        ctx.error(f.pos, &f.at("tan_delta"), "give either `esr` or `tan_delta`, not both", None);
        ok = false;
    }
    if kind == PartKind::Capacitor {
        p.esr = ctx.opt_positive(f, "esr", Quantity::Resistance, true);
        if let Some(n) = f.get("tan_delta") {
            match ctx.bare_number(n, &f.at("tan_delta")) {
                Some(v) if (0.0..1.0).contains(&v) => p.tan_delta = Some(v),
                Some(v) => {
                    ctx.error(n.pos(), &f.at("tan_delta"), format!("tan_delta {v} is outside 0 to 1"), Some("write the dissipation factor as a number, 0.08 for 8 %".into()))
                }
                None => {}
            }
        }
    }
    if kind == PartKind::Inductor {
        p.dcr = ctx.opt_positive(f, "dcr", Quantity::Resistance, true);
    }
    if let Some(n) = f.get("tolerance") {
        match ctx.positive(n, &f.at("tolerance"), Quantity::Percent, true) {
            Some(t) if t < 1.0 => p.tolerance = Some(t),
            Some(_) => ctx.error(n.pos(), &f.at("tolerance"), "a tolerance of 100 % or more is not a tolerance", None),
            None => {}
        }
    }
    if let Some(n) = f.get("rating") {
        if n.as_scalar() == Some("auto") {
            if kind == PartKind::Resistor {
                p.rating = Some(Rating::Auto);
            } else {
                ctx.error(
                    n.pos(),
                    &f.at("rating"),
                    "`rating: auto` is for resistors (voicekeep picks their wattage)",
                    Some("give a capacitor's voltage rating, e.g. 250 V".into()),
                );
            }
        } else {
            let q = match kind {
                PartKind::Resistor => Some(Quantity::Power),
                PartKind::Capacitor => Some(Quantity::Voltage),
                PartKind::Inductor => Some(Quantity::Current),
            };
            if let Some(q) = q {
                p.rating = ctx.positive(n, &f.at("rating"), q, false).map(Rating::Given);
            }
        }
    }
    p.type_text = ctx.opt_text(f, "type").or_else(|| ctx.opt_text(f, "core"));
    if let Some(n) = f.get("at") {
        p.at_hz = ctx.positive(n, &f.at("at"), Quantity::Frequency, false);
    }
    ok.then_some(p)
}

fn decode_driver(key: &Key, node: &Node, path: &str, ctx: &mut Ctx) -> Option<Driver> {
    let f = ctx.fields(node, path, DRIVER_KEYS)?;
    let role = match ctx.req(&f, "role", "tweeter, midrange, woofer, full-range or other") {
        Some(n) => ctx.choice(
            n,
            &f.at("role"),
            &[("tweeter", Role::Tweeter), ("midrange", Role::Midrange), ("woofer", Role::Woofer), ("full-range", Role::FullRange), ("other", Role::Other)],
        ),
        None => None,
    };
    let between = ctx.req(&f, "between", "its + and - nodes").and_then(|n| ctx.pair_of_nodes(n, &f.at("between")));
    let model = match f.get("model") {
        Some(n) => decode_model(n, &f.at("model"), ctx),
        None => {
            ctx.error(
                key.pos,
                &f.at("model"),
                format!("driver {} has no `model`", key.name),
                Some("give { resistance: 8 ohm }, { re: 6.2 ohm, le: 0.5 mH } (with fs, qms, qes for its resonance), or { table: file.csv }".into()),
            );
            None
        }
    };
    let rated_power = ctx.opt_positive(&f, "rated_power", Quantity::Power, false);
    let sensitivity = f.get("sensitivity").and_then(|n| ctx.value(n, &f.at("sensitivity"), Quantity::Decibel));
    let response = f.get("response").and_then(|n| decode_response(n, &f.at("response"), ctx));
    let inverted = match f.get("polarity") {
        Some(n) => ctx.choice(n, &f.at("polarity"), &[("normal", false), ("inverted", true)]).unwrap_or(false),
        None => false,
    };
    let note = ctx.opt_text(&f, "note");
    Some(Driver { name: key.name.clone(), role: role?, between: between?, model: model?, rated_power, sensitivity, response, inverted, note, pos: key.pos })
}

fn decode_response(node: &Node, path: &str, ctx: &mut Ctx) -> Option<ResponseTable> {
    let (file, [f, spl, ph]) = ctx.table(node, path, 2)?;
    Some(ResponseTable { file, freq_hz: f, spl_db: spl, phase_deg: ph })
}

fn decode_model(node: &Node, path: &str, ctx: &mut Ctx) -> Option<DriverModel> {
    let f = ctx.fields(node, path, MODEL_KEYS)?;
    if let Some(n) = f.get("table") {
        for k in ["resistance", "re", "le", "leach", "fs", "qms", "qes"] {
            if let Some(other) = f.get(k) {
                ctx.error(other.pos(), &f.at(k), format!("`{k}` cannot be combined with `table`"), Some("a measured table already holds the whole impedance".into()));
            }
        }
        let (file, [fr, ohm, ph]) = ctx.table(n, &f.at("table"), 2)?;
        if let Some(i) = ohm.iter().position(|z| *z <= 0.0) {
            ctx.error(n.pos(), &f.at("table"), format!("{file}: row {} has |Z| = {} ohm; impedance magnitudes must be above zero", i + 1, ohm[i]), None);
            return None;
        }
        return Some(DriverModel::Table(ImpedanceTable { file, freq_hz: fr, ohm, phase_deg: ph }));
    }
    if let Some(n) = f.get("resistance") {
        for k in ["re", "le", "leach", "fs", "qms", "qes"] {
            if let Some(other) = f.get(k) {
                ctx.error(other.pos(), &f.at(k), format!("`{k}` cannot be combined with `resistance`"), Some("use { re: .., le: .. } for a voice-coil model".into()));
            }
        }
        return ctx.positive(n, &f.at("resistance"), Quantity::Resistance, false).map(DriverModel::Resistance);
    }
    let Some(re_node) = f.get("re") else {
        ctx.error(f.pos, path, "the model needs `resistance`, `re` or `table`", Some("e.g. { re: 6.2 ohm, le: 0.5 mH }".into()));
        return None;
    };
    let re = ctx.positive(re_node, &f.at("re"), Quantity::Resistance, false);
    let inductance = match (f.get("le"), f.get("leach")) {
        (Some(_), Some(l)) => {
            ctx.error(l.pos(), &f.at("leach"), "give `le` or `leach`, not both", Some("Leach's K (j w)^n replaces the simple Le".into()));
            None
        }
        (Some(n), None) => ctx.positive(n, &f.at("le"), Quantity::Inductance, true).map(VoiceCoilInductance::Simple),
        (None, Some(n)) => {
            let lf = ctx.fields(n, &f.at("leach"), &["k", "n"])?;
            let k = ctx.req(&lf, "k", "K in ohm s^n").and_then(|v| ctx.bare_number(v, &lf.at("k")));
            let e = ctx.req(&lf, "n", "the exponent, 0 to 1").and_then(|v| ctx.bare_number(v, &lf.at("n")));
            match (k, e) {
                (Some(k), Some(e)) if k >= 0.0 && (0.0..=1.0).contains(&e) => Some(VoiceCoilInductance::Leach { k, n: e }),
                (Some(_), Some(_)) => {
                    ctx.error(n.pos(), &f.at("leach"), "Leach's model needs K >= 0 and 0 <= n <= 1", None);
                    None
                }
                _ => None,
            }
        }
        (None, None) => Some(VoiceCoilInductance::None),
    };
    let res: Vec<Option<&Node>> = ["fs", "qms", "qes"].iter().map(|k| f.get(k)).collect();
    let resonance = if res.iter().all(|n| n.is_none()) {
        Some(None)
    } else if res.iter().all(|n| n.is_some()) {
        let fs = ctx.positive(res[0].unwrap_or(re_node), &f.at("fs"), Quantity::Frequency, false);
        let qms = res[1].and_then(|n| ctx.bare_number(n, &f.at("qms")));
        let qes = res[2].and_then(|n| ctx.bare_number(n, &f.at("qes")));
        match (fs, qms, qes) {
            (Some(fs), Some(qms), Some(qes)) if qms > 0.0 && qes > 0.0 => Some(Some(Resonance { fs, qms, qes })),
            (Some(_), Some(_), Some(_)) => {
                ctx.error(f.pos, &f.at("qms"), "qms and qes must be above zero", None);
                None
            }
            _ => None,
        }
    } else {
        let missing: Vec<&str> = ["fs", "qms", "qes"].iter().zip(&res).filter(|(_, n)| n.is_none()).map(|(k, _)| *k).collect();
        ctx.error(
            f.pos,
            path,
            format!("the resonance needs fs, qms and qes together; missing {}", missing.join(", ")),
            Some("leave all three out for a model without resonance".into()),
        );
        None
    };
    Some(DriverModel::VoiceCoil { re: re?, inductance: inductance?, resonance: resonance? })
}

enum Target<'a> {
    Part(&'a Part),
    Driver(&'a Driver),
}

fn find_target<'a>(net: &'a Network, extra: &[String], key: &str, pos: Pos, path: &str, ctx: &mut Ctx) -> Option<Target<'a>> {
    if let Some(p) = net.part(key) {
        return Some(Target::Part(p));
    }
    if let Some(d) = net.driver(key) {
        return Some(Target::Driver(d));
    }
    if extra.iter().any(|e| e == key) || ctx.failed.iter().any(|e| e == key) {
        return None;
    }
    let names: Vec<&str> = net.branches().map(|(n, _)| n).chain(extra.iter().map(|s| s.as_str())).collect();
    let hint = match suggest(key, names.iter().copied()) {
        Some(s) => format!("did you mean `{s}`?"),
        None => format!("the network has: {}", names.join(", ")),
    };
    ctx.error(pos, path, format!("there is no part or driver {key} in the network"), Some(hint));
    None
}

/// A driver reading names fields of the driver's own model; one its model does not have
/// (a resonance reading on a model without one, `re` on a measured table) would otherwise be
/// dropped, so it is refused where it is written.
fn reading_fits_model(f: &Fields, d: &Driver, ctx: &mut Ctx) -> bool {
    let (kind, has): (&str, Vec<&str>) = match &d.model {
        DriverModel::Resistance(_) => ("a plain resistance", vec!["resistance", "re"]),
        DriverModel::VoiceCoil { inductance, resonance, .. } => {
            let leach = matches!(inductance, VoiceCoilInductance::Leach { .. });
            let mut has = vec!["re"];
            if !leach {
                has.push("le");
            }
            if resonance.is_some() {
                has.extend(["fs", "qms", "qes"]);
            }
            let kind = match (leach, resonance.is_some()) {
                (true, true) => "Re with Leach's inductance and a resonance",
                (true, false) => "Re with Leach's inductance and no resonance",
                (false, true) => "Re and Le with a resonance",
                (false, false) => "Re and Le with no resonance",
            };
            (kind, has)
        }
        DriverModel::Table(_) => ("a measured impedance table", vec![]),
    };
    let mut ok = true;
    for key in ["resistance", "re", "le", "fs", "qms", "qes"] {
        let Some(n) = f.get(key) else { continue };
        if has.contains(&key) {
            continue;
        }
        let hint = match (&d.model, key) {
            (DriverModel::Table(_), _) => "a table holds the whole impedance: measure the driver again and `replace` it with the new table".to_string(),
            (DriverModel::Resistance(_), _) => format!("a plain resistance takes `resistance` (or `re`); give {} a voice-coil model to read `{key}`", d.name),
            (_, "resistance") => "for a voice-coil model, read its DC resistance as `re`".to_string(),
            (_, "le") => "Leach's K and n are not read on the bench; `replace` the driver's model if it has changed".to_string(),
            _ => format!("give {}'s model fs, qms and qes in `network.drivers.{}.model` before reading them", d.name, d.name),
        };
        ctx.error(n.pos(), &f.at(key), format!("{}'s model is {kind}: a reading of `{key}` has nothing to apply to", d.name), Some(hint));
        ok = false;
    }
    ok
}

fn decode_measured(node: &Node, net: &Network, ctx: &mut Ctx) -> Vec<Reading> {
    let mut out = Vec::new();
    for (k, v) in map_entries(node, "measured", ctx) {
        let path = format!("measured.{}", k.name);
        match find_target(net, &[], &k.name, k.pos, &path, ctx) {
            Some(Target::Part(p)) => {
                let Some(f) = ctx.fields(v, &path, READING_PART_KEYS) else { continue };
                if let Some(patch) = decode_part_fields(&f, p.kind, ctx, false) {
                    out.push(Reading { target: k.name.clone(), patch: Patch::Part(patch), pos: k.pos });
                }
            }
            Some(Target::Driver(d)) => {
                let Some(f) = ctx.fields(v, &path, READING_DRIVER_KEYS) else { continue };
                if !reading_fits_model(&f, d, ctx) {
                    continue;
                }
                let dp = DriverPatch {
                    resistance: ctx.opt_positive(&f, "resistance", Quantity::Resistance, false),
                    re: ctx.opt_positive(&f, "re", Quantity::Resistance, false),
                    le: ctx.opt_positive(&f, "le", Quantity::Inductance, true),
                    fs: ctx.opt_positive(&f, "fs", Quantity::Frequency, false),
                    qms: f.get("qms").and_then(|n| ctx.bare_number(n, &f.at("qms"))),
                    qes: f.get("qes").and_then(|n| ctx.bare_number(n, &f.at("qes"))),
                    ..Default::default()
                };
                out.push(Reading { target: k.name.clone(), patch: Patch::Driver(dp), pos: k.pos });
            }
            None => {}
        }
    }
    out
}

fn decode_changes(node: &Node, net: &Network, ctx: &mut Ctx) -> Vec<Change> {
    let Node::Seq { items, .. } = node else {
        ctx.error(node.pos(), "changes", format!("expected a list of steps (- replace: C1 ...), found {}", node.kind_name()), None);
        return Vec::new();
    };
    let mut out = Vec::new();
    // Names added by earlier steps, so later steps may refer to them.
    let mut added: Vec<String> = Vec::new();
    for (i, item) in items.iter().enumerate() {
        let number = i + 1;
        let path = format!("changes[{number}]");
        let Some(f) = ctx.fields(item, &path, &["replace", "with", "insert", "remove", "add"]) else { continue };
        let verbs: Vec<&str> = ["replace", "insert", "remove", "add"].into_iter().filter(|k| f.get(k).is_some()).collect();
        if verbs.len() != 1 {
            ctx.error(
                item.pos(),
                &path,
                if verbs.is_empty() { "a step needs one of replace, insert, remove or add".to_string() } else { format!("one step, one action: found {}", verbs.join(" and ")) },
                Some("write each action as its own `- ` item".into()),
            );
            continue;
        }
        let step = match verbs[0] {
            "replace" => {
                let target_node = f.get("replace").unwrap_or(item);
                let Some(target) = ctx.text(target_node, &f.at("replace")) else { continue };
                let Some(with) = ctx.req(&f, "with", "the new part's fields") else { continue };
                let wpath = f.at("with");
                match find_target(net, &added, &target, target_node.pos(), &f.at("replace"), ctx) {
                    Some(Target::Part(p)) => {
                        let Some(wf) = ctx.fields(with, &wpath, REPLACE_PART_KEYS) else { continue };
                        let Some(patch) = decode_part_fields(&wf, p.kind, ctx, true) else { continue };
                        ChangeStep::Replace { target, with: Patch::Part(patch) }
                    }
                    Some(Target::Driver(_)) => {
                        let Some(wf) = ctx.fields(with, &wpath, REPLACE_DRIVER_KEYS) else { continue };
                        let dp = DriverPatch {
                            model: wf.get("model").and_then(|n| decode_model(n, &wf.at("model"), ctx)),
                            sensitivity: wf.get("sensitivity").and_then(|n| ctx.value(n, &wf.at("sensitivity"), Quantity::Decibel)),
                            response: wf.get("response").and_then(|n| decode_response(n, &wf.at("response"), ctx)),
                            rated_power: ctx.opt_positive(&wf, "rated_power", Quantity::Power, false),
                            note: ctx.opt_text(&wf, "note"),
                            ..Default::default()
                        };
                        ChangeStep::Replace { target, with: Patch::Driver(dp) }
                    }
                    None => continue,
                }
            }
            "remove" => {
                let n = f.get("remove").unwrap_or(item);
                let Some(target) = ctx.text(n, &f.at("remove")) else { continue };
                match find_target(net, &added, &target, n.pos(), &f.at("remove"), ctx) {
                    Some(Target::Driver(_)) => {
                        ctx.error(
                            n.pos(),
                            &f.at("remove"),
                            format!("{target} is a driver; `remove` takes parts"),
                            Some("to fit a different driver, use `replace` with a new model".into()),
                        );
                        continue;
                    }
                    _ if net.part(&target).is_none() && !added.contains(&target) => continue,
                    _ => ChangeStep::Remove { target },
                }
            }
            "add" | "insert" => {
                let verb = verbs[0];
                let n = f.get(verb).unwrap_or(item);
                let entries = map_entries(n, &f.at(verb), ctx);
                let mut parts = Vec::new();
                for (k, v) in entries {
                    let ppath = format!("{}.{}", f.at(verb), k.name);
                    if !check_reference(ctx, k, &ppath) {
                        continue;
                    }
                    if net.part(&k.name).is_some() || net.driver(&k.name).is_some() || added.contains(&k.name) {
                        ctx.error(k.pos, &ppath, format!("{} is already in the network", k.name), Some("new parts need new references (R9, C7, ...)".into()));
                        continue;
                    }
                    if let Some(p) = decode_part(k, v, &ppath, ctx) {
                        parts.push((k, p));
                    }
                }
                if verb == "add" {
                    for (_, p) in &parts {
                        added.push(p.name.clone());
                    }
                    ChangeStep::Add { parts: parts.into_iter().map(|(_, p)| p).collect() }
                } else {
                    if parts.len() != 1 {
                        if !entries.is_empty() && parts.len() > 1 {
                            ctx.error(n.pos(), &f.at(verb), "insert one part per step", None);
                        }
                        continue;
                    }
                    let (k, mut part) = parts.pop().expect("one part");
                    // between: [node, part]: the new part goes in series where that part meets the node.
                    let [a, b] = part.between.clone();
                    if ctx.failed.contains(&a) || ctx.failed.contains(&b) {
                        ctx.failed.push(part.name.clone());
                        continue;
                    }
                    let is_ref = |s: &str| net.part(s).is_some() || net.driver(s).is_some() || added.iter().any(|x| x == s);
                    let (node_name, next_to) = match (is_ref(&a), is_ref(&b)) {
                        (false, true) => (a, b),
                        (true, false) => (b, a),
                        _ => {
                            ctx.error(
                                k.pos,
                                &format!("{}.{}.between", f.at(verb), k.name),
                                "insert takes `between: [NODE, PART]`: the node and the part it goes in series with",
                                Some("e.g. between: [IN, C1] puts the new part between node IN and C1; to connect a part between two nodes, use `add`".into()),
                            );
                            // Its later mentions (a compensate entry) would only repeat this.
                            ctx.failed.push(part.name.clone());
                            continue;
                        }
                    };
                    added.push(part.name.clone());
                    part.between = [node_name.clone(), next_to.clone()];
                    ChangeStep::Insert { part, node: node_name, next_to }
                }
            }
            _ => continue,
        };
        let pos = f.key_pos(verbs[0]).unwrap_or(item.pos());
        out.push(Change { number, step, pos });
    }
    out
}

fn decode_compensate(node: &Node, net: &Network, changes: &[Change], ctx: &mut Ctx) -> Vec<CompensateEntry> {
    let mut out = Vec::new();
    let auto_parts: Vec<&Part> = net
        .parts
        .iter()
        .chain(changes.iter().flat_map(|c| match &c.step {
            ChangeStep::Insert { part, .. } => std::slice::from_ref(part).iter().collect::<Vec<_>>(),
            ChangeStep::Add { parts } => parts.iter().collect(),
            _ => Vec::new(),
        }))
        .collect();
    for (k, v) in map_entries(node, "compensate", ctx) {
        let path = format!("compensate.{}", k.name);
        let Some(f) = ctx.fields(v, &path, &["driver", "match", "band", "series", "keep_impedance"]) else { continue };
        let replaced_auto = changes.iter().any(|c| matches!(&c.step, ChangeStep::Replace { target, with: Patch::Part(p) } if target == &k.name && p.auto_value));
        match auto_parts.iter().find(|p| p.name == k.name) {
            Some(p) if p.auto_value || replaced_auto => {}
            Some(_) => {
                ctx.error(
                    k.pos,
                    &path,
                    format!("{} has a fixed value; only `value: auto` parts are solved", k.name),
                    Some(format!("write `value: auto` for {} to have voicekeep solve it", k.name)),
                );
                continue;
            }
            None if ctx.failed.contains(&k.name) => continue,
            None => {
                let names: Vec<&str> = auto_parts.iter().map(|p| p.name.as_str()).collect();
                let hint = suggest(&k.name, names.iter().copied()).map(|s| format!("did you mean `{s}`?"));
                ctx.error(k.pos, &path, format!("there is no part {} in the network or the changes", k.name), hint);
                continue;
            }
        }
        let driver = ctx.req(&f, "driver", "the driver whose level it restores").and_then(|n| {
            let name = ctx.text(n, &f.at("driver"))?;
            if net.driver(&name).is_none() && ctx.failed.contains(&name) {
                // The driver itself could not be read: its own message says so.
                return None;
            }
            if net.driver(&name).is_none() {
                let hint = match suggest(&name, net.drivers.iter().map(|d| d.name.as_str())) {
                    Some(s) => format!("did you mean `{s}`?"),
                    None => format!("the network's drivers are: {}", net.drivers.iter().map(|d| d.name.as_str()).collect::<Vec<_>>().join(", ")),
                };
                ctx.error(n.pos(), &f.at("driver"), format!("there is no driver {name}"), Some(hint));
                return None;
            }
            Some(name)
        });
        let reference = match f.get("match") {
            Some(n) => ctx.choice(n, &f.at("match"), &[("as_designed", Scenario::AsDesigned), ("as_found", Scenario::AsFound)]),
            None => Some(Scenario::AsDesigned),
        };
        let band = f.get("band").and_then(|n| ctx.band(n, &f.at("band")));
        let band_pos = f.get("band").map(|n| n.pos()).unwrap_or(k.pos);
        let series = match f.get("series") {
            Some(n) => ctx.choice(n, &f.at("series"), &[("E6", ESeries::E6), ("E12", ESeries::E12), ("E24", ESeries::E24), ("E48", ESeries::E48), ("E96", ESeries::E96)]),
            None => Some(ESeries::E24),
        };
        let keep_impedance = match f.get("keep_impedance") {
            Some(n) => ctx.choice(n, &f.at("keep_impedance"), &[("true", true), ("false", false)]),
            None => Some(false),
        };
        match (driver, reference, series, keep_impedance) {
            (Some(driver), Some(reference), Some(series), Some(keep_impedance)) => {
                out.push(CompensateEntry { part: k.name.clone(), driver, reference, band, band_pos, series, keep_impedance, pos: k.pos })
            }
            // The entry is there but wrong: its own messages say so, not "no entry" again.
            _ => ctx.failed.push(k.name.clone()),
        }
    }
    // Every auto value needs its entry.
    for p in &auto_parts {
        if p.auto_value && !out.iter().any(|c| c.part == p.name) && !ctx.failed.contains(&p.name) {
            ctx.error(
                p.pos,
                &p.name,
                format!("{} has `value: auto` but no `compensate` entry says what to solve it for", p.name),
                Some(match likely_driver(net, p) {
                    Some(d) => format!("add `{}: {{ driver: {d} }}` under `compensate:` (and `band: [low, high]` to fit over a band of your choosing)", p.name),
                    None => format!("add `{}: {{ driver: NAME }}` under `compensate:`, naming the driver whose level it sets", p.name),
                }),
            );
        }
    }
    for c in changes {
        if let ChangeStep::Replace { target, with: Patch::Part(p) } = &c.step {
            if p.auto_value && !out.iter().any(|e| &e.part == target) && !ctx.failed.contains(target) {
                ctx.error(c.pos, &format!("changes[{}]", c.number), format!("{target} is replaced with `value: auto` but has no `compensate` entry"), None);
            }
        }
    }
    out
}

/// The driver an auto part most likely serves: the one whose section (the parts joined to it
/// without passing the amplifier's terminals) holds the part it is inserted beside, or a
/// node it is added at.
fn likely_driver<'n>(net: &'n Network, p: &Part) -> Option<&'n str> {
    let inputs = [net.input[0].as_str(), net.input[1].as_str()];
    net.drivers.iter().map(|d| d.name.as_str()).find(|d| {
        let section = net.section(d);
        let drv = net.driver(d).map(|x| x.between.clone()).unwrap_or_default();
        p.between.iter().any(|n| {
            n == d
                || section.contains(&n.as_str())
                || (!inputs.contains(&n.as_str()) && (drv.contains(n) || section.iter().any(|s| net.part(s).is_some_and(|q| q.between.contains(n)))))
        })
    })
}

fn decode_analysis(node: &Node, ctx: &mut Ctx) -> Option<Analysis> {
    let f = ctx.fields(node, "analysis", &["sweep", "programme", "tolerance"])?;
    let sweep = match ctx.req(&f, "sweep", "{ from: 10 Hz, to: 40 kHz, per_octave: 24 } or { at: [...] }") {
        Some(n) => decode_sweep(n, ctx),
        None => None,
    };
    let programme = match f.get("programme") {
        Some(n) => ctx.choice(n, &f.at("programme"), &[("pink", Programme::Pink), ("iec-programme", Programme::IecProgramme)]),
        None => Some(Programme::Pink),
    };
    let tolerance = match f.get("tolerance") {
        Some(n) => {
            let tf = ctx.fields(n, &f.at("tolerance"), &["runs", "seed", "distribution"])?;
            let runs = match tf.get("runs") {
                Some(n) => match ctx.bare_number(n, &tf.at("runs")) {
                    Some(r) if (10.0..=1e6).contains(&r) && r.fract() == 0.0 => Some(r as usize),
                    Some(_) => {
                        ctx.error(n.pos(), &tf.at("runs"), "runs must be a whole number from 10 to 1000000", None);
                        None
                    }
                    None => None,
                },
                None => Some(2000),
            };
            let seed = match tf.get("seed") {
                Some(n) => match ctx.bare_number(n, &tf.at("seed")) {
                    Some(s) if s >= 0.0 && s.fract() == 0.0 => Some(s as u64),
                    Some(_) => {
                        ctx.error(n.pos(), &tf.at("seed"), "the seed must be a whole number of zero or more", None);
                        None
                    }
                    None => None,
                },
                None => Some(1),
            };
            let distribution = match tf.get("distribution") {
                Some(n) => ctx.choice(n, &tf.at("distribution"), &[("uniform", Distribution::Uniform), ("normal", Distribution::Normal)]),
                None => Some(Distribution::Uniform),
            };
            match (runs, seed, distribution) {
                (Some(runs), Some(seed), Some(distribution)) => Some(Some(ToleranceRuns { runs, seed, distribution })),
                _ => None,
            }
        }
        None => Some(None),
    };
    Some(Analysis { sweep: sweep?, programme: programme?, tolerance: tolerance? })
}

fn decode_sweep(node: &Node, ctx: &mut Ctx) -> Option<Sweep> {
    let f = ctx.fields(node, "analysis.sweep", &["from", "to", "per_octave", "at"])?;
    if let Some(n) = f.get("at") {
        let Node::Seq { items, .. } = n else {
            ctx.error(n.pos(), &f.at("at"), "expected a list of frequencies, such as [100 Hz, 1 kHz]", None);
            return None;
        };
        let pts: Vec<Option<f64>> = items.iter().map(|i| ctx.positive(i, &f.at("at"), Quantity::Frequency, false)).collect();
        if items.is_empty() {
            ctx.error(n.pos(), &f.at("at"), "the list of frequencies is empty", None);
            return None;
        }
        // Bands, programme slices and crossings all assume rising frequencies: an unsorted
        // or repeated point is refused where it stands rather than quietly reordered.
        let mut ok = true;
        for k in 1..items.len() {
            if let (Some(prev), Some(here)) = (pts[k - 1], pts[k]) {
                if here <= prev {
                    let what = if here == prev { "repeats" } else { "is below" };
                    ctx.error(
                        items[k].pos(),
                        &f.at("at"),
                        format!("{} {what} the point before it ({}): the points must rise", crate::units::hz(Some(here)), crate::units::hz(Some(prev))),
                        Some("list the frequencies lowest first, each once".into()),
                    );
                    ok = false;
                }
            }
        }
        if !ok {
            return None;
        }
        return pts.into_iter().collect::<Option<Vec<f64>>>().map(Sweep::Points);
    }
    let from = ctx.req(&f, "from", "the lowest frequency").and_then(|n| ctx.positive(n, &f.at("from"), Quantity::Frequency, false));
    let to = ctx.req(&f, "to", "the highest frequency").and_then(|n| ctx.positive(n, &f.at("to"), Quantity::Frequency, false));
    let per_octave = match f.get("per_octave") {
        Some(n) => match ctx.bare_number(n, &f.at("per_octave")) {
            Some(v) if (1.0..=10_000.0).contains(&v) => Some(v),
            Some(_) => {
                ctx.error(n.pos(), &f.at("per_octave"), "points per octave must be from 1 to 10000", None);
                None
            }
            None => None,
        },
        None => Some(24.0),
    };
    let (from, to, per_octave) = (from?, to?, per_octave?);
    if to <= from {
        ctx.error(f.pos, &f.at("to"), "the sweep must end above where it starts", None);
        return None;
    }
    let points = (to / from).log2() * per_octave;
    if points > 2e6 {
        ctx.error(f.pos, &f.at("per_octave"), format!("this sweep has {points:.0} points; 2000000 is the most"), None);
        return None;
    }
    Some(Sweep::Log { from, to, per_octave })
}

fn decode_report(node: &Node, ctx: &mut Ctx) -> (Template, Option<Vec<Block>>) {
    let Some(f) = ctx.fields(node, "report", &["template", "blocks"]) else { return (Template::Customer, None) };
    let template = match f.get("template").and_then(|n| ctx.text(n, &f.at("template"))) {
        None => Template::Customer,
        Some(t) => match t.as_str() {
            "customer" => Template::Customer,
            "archive" => Template::Archive,
            "sale" => Template::Sale,
            path if path.ends_with(".typ") => Template::File(ctx.base_dir.join(path)),
            other => {
                let pos = f.get("template").map(|n| n.pos()).unwrap_or(f.pos);
                let hint = suggest(other, ["customer", "archive", "sale"])
                    .map(|s| format!("did you mean `{s}`?"))
                    .unwrap_or_else(|| "choose customer, archive, sale, or the path of a .typ file".into());
                ctx.error(pos, &f.at("template"), format!("unknown template \"{other}\""), Some(hint));
                Template::Customer
            }
        },
    };
    let blocks = f.get("blocks").map(|n| {
        let Node::Seq { items, .. } = n else {
            ctx.error(n.pos(), &f.at("blocks"), "expected a list of blocks", None);
            return Vec::new();
        };
        let names = ["levels", "parts", "compensation", "stress", "load", "tolerance", "health", "safety", "appendix"];
        let mut out = Vec::new();
        for item in items {
            let path = f.at("blocks");
            match item {
                Node::Scalar { text, pos, .. } => {
                    let b = match text.as_str() {
                        "levels" => Block::Levels,
                        "parts" => Block::Parts,
                        "compensation" => Block::Compensation,
                        "stress" => Block::Stress,
                        "load" => Block::Load,
                        "tolerance" => Block::Tolerance,
                        "health" => Block::Health,
                        "safety" => Block::Safety,
                        "appendix" => Block::Appendix,
                        other => {
                            let hint = suggest(other, names.iter().copied())
                                .map(|s| format!("did you mean `{s}`?"))
                                .unwrap_or_else(|| format!("blocks are: {}, `text: ...` and `plot: ...`", names.join(", ")));
                            ctx.error(*pos, &path, format!("unknown block \"{other}\""), Some(hint));
                            continue;
                        }
                    };
                    out.push(b);
                }
                _ => {
                    let Some(bf) = ctx.fields(item, &path, &["text", "plot"]) else { continue };
                    if let Some(t) = bf.get("text") {
                        if let Some(t) = ctx.text(t, &bf.at("text")) {
                            out.push(Block::Text(t));
                        }
                    } else if let Some(p) = bf.get("plot") {
                        let opts: Vec<(&str, PlotKind)> = PlotKind::ALL.iter().map(|k| (k.name(), *k)).collect();
                        if let Some(k) = ctx.choice(p, &bf.at("plot"), &opts) {
                            out.push(Block::Plot(k));
                        }
                    }
                }
            }
        }
        out
    });
    (template, blocks)
}

/// Reports what would stop the engine in the network as designed and as left: a step that
/// cannot apply, a node only one terminal touches (with the node it was likely meant to be),
/// a branch cut off from the input.
fn check_connections(network: &Network, steps: Option<(&[Reading], &[Change])>, ctx: &mut Ctx) {
    let pos_of = |name: &str, net: &Network| net.part(name).map(|p| p.pos).or_else(|| net.driver(name).map(|d| d.pos)).unwrap_or(net.input_pos);
    let mut nodes: Vec<&str> = network.branches().flat_map(|(_, b)| b.iter().map(|s| s.as_str())).collect();
    nodes.sort_unstable();
    nodes.dedup();
    for (name, node, msg) in network.connection_problems() {
        let hint = node
            .as_deref()
            .and_then(|n| suggest(n, nodes.iter().copied().filter(|m| *m != n)))
            .map(|s| format!("did you mean node `{s}`? every node needs two or more terminals"))
            .unwrap_or_else(|| "check the `between` nodes: every node needs two or more terminals".into());
        ctx.error(pos_of(&name, network), &format!("network.{}", if name.is_empty() { "input".to_string() } else { name.clone() }), msg, Some(hint));
    }
    let Some((measured, changes)) = steps else { return };
    match left_unsolved(network, measured, changes) {
        Err(e) => ctx.error(e.pos, &format!("changes[{}]", e.number), e.message, None),
        Ok(left) => {
            if network.connection_problems().is_empty() {
                for (_, _, msg) in left.connection_problems() {
                    let step = changes.last().map(|c| c.pos).unwrap_or(Pos { line: 1, col: 1 });
                    ctx.error(step, "changes", format!("after the changes, {msg}"), Some("a removed part leaves its nodes open; add or insert what replaces it".into()));
                }
            }
        }
    }
}

/// Reports tables that do not cover the sweep and compensate bands the sweep cannot fill.
fn check_coverage(network: &Network, changes: &[Change], compensate: &[CompensateEntry], sweep: &Sweep, ctx: &mut Ctx) {
    // Every measured table, the original drivers' and any replacement's, must cover the
    // sweep: outside its range a table could only be held flat, which would be invented data.
    let freqs = sweep.frequencies();
    let (lo, hi) = (freqs.iter().cloned().fold(f64::INFINITY, f64::min), freqs.iter().cloned().fold(0.0, f64::max));
    let mut covers = |pos: Pos, field: String, file: &str, f: &[f64]| {
        let (tlo, thi) = (f[0], f[f.len() - 1]);
        if lo < tlo * (1.0 - 1e-9) || hi > thi * (1.0 + 1e-9) {
            ctx.error(
                pos,
                &field,
                format!(
                    "{} covers {} to {} but the sweep runs from {} to {}",
                    file,
                    crate::units::hz(Some(tlo)),
                    crate::units::hz(Some(thi)),
                    crate::units::hz(Some(lo)),
                    crate::units::hz(Some(hi))
                ),
                Some("narrow the sweep to the table's range, or measure the driver over the whole sweep".into()),
            );
        }
    };
    for d in &network.drivers {
        if let DriverModel::Table(t) = &d.model {
            covers(d.pos, format!("network.drivers.{}.model.table", d.name), &t.file, &t.freq_hz);
        }
        if let Some(r) = &d.response {
            covers(d.pos, format!("network.drivers.{}.response", d.name), &r.file, &r.freq_hz);
        }
    }
    for c in changes {
        if let ChangeStep::Replace { with: Patch::Driver(p), .. } = &c.step {
            if let Some(DriverModel::Table(t)) = &p.model {
                covers(c.pos, format!("changes[{}].with.model.table", c.number), &t.file, &t.freq_hz);
            }
            if let Some(r) = &p.response {
                covers(c.pos, format!("changes[{}].with.response", c.number), &r.file, &r.freq_hz);
            }
        }
    }
    for c in compensate {
        if let Some((blo, bhi)) = c.band {
            let field = format!("compensate.{}.band", c.part);
            // A band may end between the sweep's last point and where the next would be (a
            // sweep of 20 Hz at 12 per octave ends at 19.3 kHz, short of 20 kHz); beyond that
            // the fit would silently use less of the band than the job asks.
            let n = freqs.len();
            let (step_lo, step_hi) = if n > 1 { (freqs[1] / freqs[0], freqs[n - 1] / freqs[n - 2]) } else { (1.0, 1.0) };
            if blo < lo / step_lo * (1.0 - 1e-9) || bhi > hi * step_hi * (1.0 + 1e-9) {
                ctx.error(
                    c.band_pos,
                    &field,
                    format!(
                        "the band {} to {} reaches outside the sweep ({} to {}); the fit could only use the part inside it",
                        crate::units::hz(Some(blo)),
                        crate::units::hz(Some(bhi)),
                        crate::units::hz(Some(lo)),
                        crate::units::hz(Some(hi))
                    ),
                    Some("narrow the band to the sweep, or widen the sweep".into()),
                );
            } else if !freqs.iter().any(|f| *f >= blo * (1.0 - 1e-9) && *f <= bhi * (1.0 + 1e-9)) {
                ctx.error(c.band_pos, &field, "no sweep point falls in this band", Some("widen the band or add sweep points".into()));
            }
        }
    }
}
