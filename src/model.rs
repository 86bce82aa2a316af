//! The validated job: the network as designed, the bench readings, the change steps, and how
//! each scenario's network is built from them. Everything here is checked; nothing here
//! reads files.

use std::collections::BTreeMap;

use crate::job::yaml::Pos;

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Scenario {
    AsDesigned,
    AsFound,
    AsLeft,
}

impl Scenario {
    pub const ALL: [Scenario; 3] = [Scenario::AsDesigned, Scenario::AsFound, Scenario::AsLeft];

    pub fn key(self) -> &'static str {
        match self {
            Scenario::AsDesigned => "as_designed",
            Scenario::AsFound => "as_found",
            Scenario::AsLeft => "as_left",
        }
    }

    /// The scenario as an adjective: "the as-designed level".
    pub fn adjective(self) -> &'static str {
        match self {
            Scenario::AsDesigned => "as-designed",
            Scenario::AsFound => "as-found",
            Scenario::AsLeft => "as-left",
        }
    }

    pub fn label(self) -> &'static str {
        match self {
            Scenario::AsDesigned => "as designed",
            Scenario::AsFound => "as found",
            Scenario::AsLeft => "as left",
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PartKind {
    Resistor,
    Capacitor,
    Inductor,
}

impl PartKind {
    pub fn name(self) -> &'static str {
        match self {
            PartKind::Resistor => "resistor",
            PartKind::Capacitor => "capacitor",
            PartKind::Inductor => "inductor",
        }
    }
}

/// A part's power or voltage rating as written in the job.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Rating {
    None,
    /// Watts for a resistor, volts for a capacitor.
    Given(f64),
    /// Chosen by voicekeep from the stress figures.
    Auto,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Part {
    pub name: String,
    pub kind: PartKind,
    pub between: [String; 2],
    /// ohm, farad or henry. For an `auto` part, the value being tried or the solved value.
    pub value: f64,
    pub auto_value: bool,
    /// Capacitor: constant ESR in ohm.
    pub esr: f64,
    /// Capacitor: constant dissipation factor; when set, ESR(f) = tan_delta / (2 pi f C).
    pub tan_delta: Option<f64>,
    /// Inductor: DC resistance in ohm.
    pub dcr: f64,
    /// Fraction (0.05 for 5 %).
    pub tolerance: Option<f64>,
    pub rating: Rating,
    /// Free text: electrolytic, polypropylene film, air core ...
    pub type_text: Option<String>,
    pub pos: Pos,
}

impl Part {
    /// A part with no loss, tolerance, rating or type yet.
    pub fn new(name: &str, kind: PartKind, between: [String; 2], value: f64, pos: Pos) -> Part {
        Part { name: name.into(), kind, between, value, auto_value: false, esr: 0.0, tan_delta: None, dcr: 0.0, tolerance: None, rating: Rating::None, type_text: None, pos }
    }

    /// The part's own loss resistance at frequency `f_hz` (a resistor's value, a capacitor's
    /// ESR, an inductor's DCR).
    pub fn loss_ohm(&self, f_hz: f64) -> f64 {
        match self.kind {
            PartKind::Resistor => self.value,
            PartKind::Capacitor => match self.tan_delta {
                Some(d) => d / (2.0 * std::f64::consts::PI * f_hz * self.value),
                None => self.esr,
            },
            PartKind::Inductor => self.dcr,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Role {
    Tweeter,
    Midrange,
    Woofer,
    FullRange,
    Other,
}

impl Role {
    pub fn name(self) -> &'static str {
        match self {
            Role::Tweeter => "tweeter",
            Role::Midrange => "midrange",
            Role::Woofer => "woofer",
            Role::FullRange => "full-range",
            Role::Other => "other",
        }
    }
}

#[derive(Debug, Clone, PartialEq)]
pub enum VoiceCoilInductance {
    None,
    /// Le in henry.
    Simple(f64),
    /// Leach's lossy inductance K (j w)^n, K in ohm s^n.
    Leach {
        k: f64,
        n: f64,
    },
}

#[derive(Debug, Clone, PartialEq)]
pub struct Resonance {
    pub fs: f64,
    pub qms: f64,
    pub qes: f64,
}

/// A measured impedance curve: frequency (Hz, rising), |Z| (ohm), phase (degrees).
#[derive(Debug, Clone, PartialEq)]
pub struct ImpedanceTable {
    pub file: String,
    pub freq_hz: Vec<f64>,
    pub ohm: Vec<f64>,
    pub phase_deg: Vec<f64>,
}

#[derive(Debug, Clone, PartialEq)]
pub enum DriverModel {
    Resistance(f64),
    VoiceCoil { re: f64, inductance: VoiceCoilInductance, resonance: Option<Resonance> },
    Table(ImpedanceTable),
}

impl DriverModel {
    /// The resistance a technician would quote for this driver (Re, or the table's lowest |Z|).
    pub fn nominal_ohm(&self) -> f64 {
        match self {
            DriverModel::Resistance(r) => *r,
            DriverModel::VoiceCoil { re, .. } => *re,
            DriverModel::Table(t) => t.ohm.iter().cloned().fold(f64::INFINITY, f64::min),
        }
    }
}

/// A measured acoustic response at 2.83 V, 1 m: frequency (Hz), SPL (dB), phase (degrees).
#[derive(Debug, Clone, PartialEq)]
pub struct ResponseTable {
    pub file: String,
    pub freq_hz: Vec<f64>,
    pub spl_db: Vec<f64>,
    pub phase_deg: Vec<f64>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Driver {
    pub name: String,
    pub role: Role,
    pub between: [String; 2],
    pub model: DriverModel,
    pub rated_power: Option<f64>,
    pub sensitivity: Option<f64>,
    pub response: Option<ResponseTable>,
    pub inverted: bool,
    pub note: Option<String>,
    pub pos: Pos,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Network {
    pub input: [String; 2],
    /// Where `input` is written in the job file.
    pub input_pos: Pos,
    pub parts: Vec<Part>,
    pub drivers: Vec<Driver>,
}

impl Network {
    pub fn part(&self, name: &str) -> Option<&Part> {
        self.parts.iter().find(|p| p.name == name)
    }

    pub fn part_mut(&mut self, name: &str) -> Option<&mut Part> {
        self.parts.iter_mut().find(|p| p.name == name)
    }

    pub fn driver(&self, name: &str) -> Option<&Driver> {
        self.drivers.iter().find(|d| d.name == name)
    }

    /// Every terminal pair in the network, parts then drivers.
    pub fn branches(&self) -> impl Iterator<Item = (&str, &[String; 2])> {
        self.parts.iter().map(|p| (p.name.as_str(), &p.between)).chain(self.drivers.iter().map(|d| (d.name.as_str(), &d.between)))
    }

    /// The nodes reached from `start` through branches, never passing through a node of
    /// `stop` (which are reached, not crossed). The one flood fill every connectivity
    /// question uses.
    pub fn reach<'a>(&'a self, start: &[&'a str], stop: &[&str]) -> Vec<&'a str> {
        let mut reached: Vec<&str> = start.to_vec();
        let mut changed = true;
        while changed {
            changed = false;
            for (_, [a, b]) in self.branches() {
                let (ra, rb) = (reached.contains(&a.as_str()), reached.contains(&b.as_str()));
                let crosses = |n: &str| !stop.contains(&n);
                if ra && !rb && crosses(a) {
                    reached.push(b);
                    changed = true;
                } else if rb && !ra && crosses(b) {
                    reached.push(a);
                    changed = true;
                }
            }
        }
        reached
    }

    /// The parts of a driver's own section: those joined to it without passing through the
    /// amplifier's terminals. In a parallel crossover that is the driver's filter; in a
    /// series crossover, everything.
    pub fn section(&self, driver: &str) -> Vec<&str> {
        let Some(d) = self.driver(driver) else { return Vec::new() };
        let stop = [self.input[0].as_str(), self.input[1].as_str()];
        let starts: Vec<&str> = d.between.iter().map(|s| s.as_str()).collect();
        let nodes = self.reach(&starts, &stop);
        let inner = |n: &String| nodes.contains(&n.as_str()) && !stop.contains(&n.as_str());
        self.parts.iter().filter(|p| inner(&p.between[0]) || inner(&p.between[1])).map(|p| p.name.as_str()).collect()
    }

    /// Connection problems: nodes only one terminal touches, and branches not reachable from
    /// the input. Each entry names the branch it concerns.
    /// Each problem is (the branch it concerns, the node it concerns, the message).
    pub fn connection_problems(&self) -> Vec<(String, Option<String>, String)> {
        let mut problems = Vec::new();
        let mut touches: BTreeMap<&str, Vec<&str>> = BTreeMap::new();
        for (name, [a, b]) in self.branches() {
            touches.entry(a).or_default().push(name);
            touches.entry(b).or_default().push(name);
        }
        for (node, names) in &touches {
            let is_input = *node == self.input[0] || *node == self.input[1];
            if names.len() == 1 && !is_input {
                problems.push((names[0].to_string(), Some(node.to_string()), format!("node {} is touched by {} alone, so no current can flow through it", node, names[0])));
            }
        }
        for (i, n) in self.input.iter().enumerate() {
            if !touches.contains_key(n.as_str()) {
                problems.push((
                    String::new(),
                    Some(n.clone()),
                    format!("input node {} ({}) is not connected to any part or driver", n, if i == 0 { "amplifier +" } else { "amplifier -" }),
                ));
            }
        }
        let reached = self.reach(&[self.input[0].as_str(), self.input[1].as_str()], &[]);
        for (name, [a, _]) in self.branches() {
            if !reached.contains(&a.as_str()) {
                problems.push((name.to_string(), None, format!("{} is not connected to the input ({} / {})", name, self.input[0], self.input[1])));
            }
        }
        problems
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct Amplifier {
    pub power_w: f64,
    pub into_ohm: f64,
    pub output_ohm: f64,
    /// The long-term programme power into `into_ohm`, when the job gives one; otherwise
    /// [`Amplifier::DEFAULT_PROGRAMME_FRACTION`] of `power_w`.
    pub programme_w: Option<f64>,
}

impl Amplifier {
    /// The programme's share of rated power when the job gives none: one eighth, the level
    /// IEC 62368-1 uses for audio amplifiers in normal operation with pink noise (recalled
    /// from memory, not checked against the standard's text). Noise peaks 1.8 to 4 times its
    /// RMS, so an amplifier cannot deliver noise at its full sine power unclipped.
    pub const DEFAULT_PROGRAMME_FRACTION: f64 = 1.0 / 8.0;

    /// The sine drive level: E_rms = sqrt(power x into), the bench-tone worst case.
    pub fn e_rms(&self) -> f64 {
        (self.power_w * self.into_ohm).sqrt()
    }

    /// The programme's long-term power into the rated load.
    pub fn programme_power_w(&self) -> f64 {
        self.programme_w.unwrap_or(self.power_w * Self::DEFAULT_PROGRAMME_FRACTION)
    }

    /// The programme's RMS EMF: sqrt(programme power x into).
    pub fn programme_e_rms(&self) -> f64 {
        (self.programme_power_w() * self.into_ohm).sqrt()
    }
}

/// A bench reading or a replacement's fields: only what is given changes.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PartPatch {
    pub value: Option<f64>,
    pub auto_value: bool,
    pub esr: Option<f64>,
    pub tan_delta: Option<f64>,
    pub dcr: Option<f64>,
    pub tolerance: Option<f64>,
    pub rating: Option<Rating>,
    pub type_text: Option<String>,
    pub at_hz: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Default)]
pub struct DriverPatch {
    pub model: Option<DriverModel>,
    /// Measured fields applied to the existing model (re, le, fs, qms, qes, resistance).
    pub re: Option<f64>,
    pub le: Option<f64>,
    pub fs: Option<f64>,
    pub qms: Option<f64>,
    pub qes: Option<f64>,
    pub resistance: Option<f64>,
    pub sensitivity: Option<f64>,
    pub response: Option<ResponseTable>,
    pub rated_power: Option<f64>,
    pub note: Option<String>,
}

impl DriverPatch {
    pub fn apply(&self, d: &mut Driver) {
        if let Some(m) = &self.model {
            d.model = m.clone();
        }
        match &mut d.model {
            DriverModel::Resistance(r) => {
                if let Some(v) = self.resistance.or(self.re) {
                    *r = v;
                }
            }
            DriverModel::VoiceCoil { re, inductance, resonance } => {
                if let Some(v) = self.re {
                    *re = v;
                }
                if let Some(v) = self.le {
                    *inductance = VoiceCoilInductance::Simple(v);
                }
                if let Some(r) = resonance {
                    r.fs = self.fs.unwrap_or(r.fs);
                    r.qms = self.qms.unwrap_or(r.qms);
                    r.qes = self.qes.unwrap_or(r.qes);
                }
            }
            DriverModel::Table(_) => {}
        }
        if let Some(v) = self.sensitivity {
            d.sensitivity = Some(v);
        }
        if let Some(v) = &self.response {
            d.response = Some(v.clone());
        }
        if let Some(v) = self.rated_power {
            d.rated_power = Some(v);
        }
        if let Some(v) = &self.note {
            d.note = Some(v.clone());
        }
    }
}

#[derive(Debug, Clone, PartialEq)]
pub enum Patch {
    Part(PartPatch),
    Driver(DriverPatch),
}

#[derive(Debug, Clone, PartialEq)]
pub struct Reading {
    pub target: String,
    pub patch: Patch,
    pub pos: Pos,
}

#[derive(Debug, Clone, PartialEq)]
pub enum ChangeStep {
    Replace {
        target: String,
        with: Patch,
    },
    /// A new part in series where part `next_to` meets `node`.
    Insert {
        part: Part,
        node: String,
        next_to: String,
    },
    Remove {
        target: String,
    },
    Add {
        parts: Vec<Part>,
    },
}

#[derive(Debug, Clone, PartialEq)]
pub struct Change {
    /// 1-based position in the `changes` list, for messages.
    pub number: usize,
    pub step: ChangeStep,
    pub pos: Pos,
}

impl PartPatch {
    /// Applies a bench reading: only the measured fields change.
    pub fn apply_reading(&self, p: &mut Part) {
        if let Some(v) = self.value {
            p.value = v;
        }
        if let Some(v) = self.esr {
            p.esr = v;
            p.tan_delta = None;
        }
        if let Some(v) = self.tan_delta {
            p.tan_delta = Some(v);
        }
        if let Some(v) = self.dcr {
            p.dcr = v;
        }
    }

    /// Applies a replacement: a new part has the nominal design values, so fields left out
    /// come from the part as designed (`designed`; the part being replaced when it was added
    /// by a change step), never from its measured drift. A capacitor's loss belongs to the new
    /// part (0 when not given).
    pub fn apply_replacement(&self, p: &mut Part, designed: Option<&Part>) {
        if let Some(d) = designed.filter(|d| d.kind == p.kind) {
            p.value = d.value;
            p.dcr = d.dcr;
            p.tolerance = d.tolerance;
            p.rating = d.rating;
            p.type_text = d.type_text.clone();
        }
        if let Some(v) = self.value {
            p.value = v;
        }
        p.auto_value = self.auto_value;
        if p.kind == PartKind::Capacitor {
            p.esr = self.esr.unwrap_or(0.0);
            p.tan_delta = self.tan_delta;
        }
        if let Some(v) = self.dcr {
            p.dcr = v;
        }
        if let Some(v) = self.tolerance {
            p.tolerance = Some(v);
        }
        if let Some(v) = self.rating {
            p.rating = v;
        }
        if let Some(v) = &self.type_text {
            p.type_text = Some(v.clone());
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub enum ESeries {
    E6,
    E12,
    E24,
    E48,
    E96,
}

#[derive(Debug, Clone, PartialEq)]
pub struct CompensateEntry {
    pub part: String,
    pub driver: String,
    pub reference: Scenario,
    pub band: Option<(f64, f64)>,
    /// Where the band is written (the entry's key when it has none).
    pub band_pos: Pos,
    pub series: ESeries,
    /// Hold the impedance the driver's filter sees to the reference's as well as the level
    /// (a series and shunt pair fitted as an L-pad).
    pub keep_impedance: bool,
    pub pos: Pos,
}

#[derive(Debug, Clone, PartialEq)]
pub enum Sweep {
    Log { from: f64, to: f64, per_octave: f64 },
    Points(Vec<f64>),
}

impl Sweep {
    pub fn frequencies(&self) -> Vec<f64> {
        match self {
            Sweep::Points(p) => p.clone(),
            Sweep::Log { from, to, per_octave } => {
                let mut out = Vec::new();
                let mut k = 0u32;
                loop {
                    let f = from * 2f64.powf(k as f64 / per_octave);
                    if f > to * (1.0 + 1e-9) {
                        break;
                    }
                    out.push(f);
                    k += 1;
                }
                out
            }
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Programme {
    Pink,
    IecProgramme,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Distribution {
    Uniform,
    Normal,
}

#[derive(Debug, Clone, PartialEq)]
pub struct ToleranceRuns {
    pub runs: usize,
    pub seed: u64,
    pub distribution: Distribution,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Analysis {
    pub sweep: Sweep,
    pub programme: Programme,
    pub tolerance: Option<ToleranceRuns>,
}

#[derive(Debug, Clone, PartialEq)]
pub enum Template {
    Customer,
    Archive,
    Sale,
    File(std::path::PathBuf),
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Block {
    Text(String),
    Levels,
    Parts,
    Compensation,
    Stress,
    Load,
    Tolerance,
    Health,
    Safety,
    Appendix,
    Plot(PlotKind),
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PlotKind {
    Response,
    Change,
    Impedance,
    Phase,
    Tolerance,
    Acoustic,
}

impl PlotKind {
    pub const ALL: [PlotKind; 6] = [PlotKind::Response, PlotKind::Change, PlotKind::Impedance, PlotKind::Phase, PlotKind::Tolerance, PlotKind::Acoustic];
    pub fn name(self) -> &'static str {
        match self {
            PlotKind::Response => "response",
            PlotKind::Change => "change",
            PlotKind::Impedance => "impedance",
            PlotKind::Phase => "phase",
            PlotKind::Tolerance => "tolerance",
            PlotKind::Acoustic => "acoustic",
        }
    }
}

/// A calendar date, checked when the job is read (the report's date: never the clock).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Default)]
pub struct Date {
    pub year: i32,
    pub month: u8,
    pub day: u8,
}

impl Date {
    /// An ISO date, `2026-11-28`; None unless it is a real day of the Gregorian calendar.
    pub fn parse_iso(t: &str) -> Option<Date> {
        let parts: Vec<&str> = t.split('-').collect();
        if parts.len() != 3 || parts[0].len() != 4 || parts[1].len() != 2 || parts[2].len() != 2 || !t.bytes().all(|b| b.is_ascii_digit() || b == b'-') {
            return None;
        }
        let (Ok(y), Ok(m), Ok(d)) = (parts[0].parse::<i32>(), parts[1].parse::<u8>(), parts[2].parse::<u8>()) else { return None };
        let leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
        let days = [31, if leap { 29 } else { 28 }, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31];
        ((1..=12).contains(&m) && d >= 1 && d <= days[(m - 1) as usize]).then_some(Date { year: y, month: m, day: d })
    }
}

impl std::fmt::Display for Date {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{:04}-{:02}-{:02}", self.year, self.month, self.day)
    }
}

impl serde::Serialize for Date {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(self)
    }
}

#[derive(Debug, Clone, PartialEq, Default, serde::Serialize)]
pub struct JobInfo {
    pub number: String,
    pub date: Date,
    pub work: String,
    pub technician: String,
    pub shop_name: String,
    pub shop_address: String,
    pub shop_contact: String,
    pub customer_name: String,
    pub customer_reference: String,
    pub speaker_description: String,
    pub serials: Vec<String>,
    pub rated_impedance: Option<f64>,
    /// The range over which the rated impedance is judged (IEC 60268-5 "rated frequency range").
    pub rated_range: (f64, f64),
    pub notes: String,
}

/// A file the job read, for the report's appendix and attachments.
#[derive(Debug, Clone, PartialEq)]
pub struct InputFile {
    pub name: String,
    pub bytes: Vec<u8>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Job {
    pub info: JobInfo,
    pub amplifier: Amplifier,
    pub network: Network,
    pub measured: Vec<Reading>,
    pub changes: Vec<Change>,
    pub compensate: Vec<CompensateEntry>,
    pub analysis: Analysis,
    pub template: Template,
    pub blocks: Option<Vec<Block>>,
    /// The job file first, then every table it read, in order.
    pub inputs: Vec<InputFile>,
}

/// Why a change step could not be applied.
#[derive(Debug, Clone, PartialEq)]
pub struct StepError {
    pub number: usize,
    pub pos: Pos,
    pub message: String,
}

impl Job {
    /// The network with every bench reading applied.
    pub fn as_found(&self) -> Network {
        found(&self.network, &self.measured)
    }

    /// The as-found network with every change step applied; `auto` values are left as they
    /// are (the compensation step solves them).
    pub fn as_left_unsolved(&self) -> Result<Network, StepError> {
        left_unsolved(&self.network, &self.measured, &self.changes)
    }

    /// The rated impedance the IEC 60268-5 rule is judged against: the speaker's, or the
    /// amplifier's rated load when the job gives none.
    pub fn rated_impedance_ohm(&self) -> f64 {
        self.info.rated_impedance.unwrap_or(self.amplifier.into_ohm)
    }

    /// Where the rated impedance comes from, in words: the job, or (when the job gives none)
    /// the amplifier's rated load, which is an assumption and is said to be one.
    pub fn rated_impedance_basis(&self) -> String {
        let r = crate::units::trim_number(self.rated_impedance_ohm(), 3);
        match self.info.rated_impedance {
            Some(_) => format!("rated impedance {r} ohm, from the job"),
            None => format!("rated impedance not given in the job: {r} ohm assumed (the amplifier's rated load); add `rated_impedance` from the speaker's plate"),
        }
    }

    pub fn driver_names(&self) -> Vec<&str> {
        self.network.drivers.iter().map(|d| d.name.as_str()).collect()
    }
}

/// The network as designed with every bench reading applied.
pub fn found(designed: &Network, measured: &[Reading]) -> Network {
    let mut net = designed.clone();
    for r in measured {
        match &r.patch {
            Patch::Part(p) => {
                if let Some(part) = net.part_mut(&r.target) {
                    p.apply_reading(part);
                }
            }
            Patch::Driver(p) => {
                if let Some(d) = net.drivers.iter_mut().find(|d| d.name == r.target) {
                    p.apply(d);
                }
            }
        }
    }
    net
}

/// The as-found network with the change steps applied in order (`auto` values unsolved).
pub fn left_unsolved(designed: &Network, measured: &[Reading], changes: &[Change]) -> Result<Network, StepError> {
    let mut net = found(designed, measured);
    for c in changes {
        apply_step(&mut net, c, designed)?;
    }
    Ok(net)
}

fn apply_step(net: &mut Network, c: &Change, designed: &Network) -> Result<(), StepError> {
    let err = |message: String| StepError { number: c.number, pos: c.pos, message };
    match &c.step {
        ChangeStep::Replace { target, with } => match with {
            Patch::Part(p) => {
                let part = net.part_mut(target).ok_or_else(|| err(format!("replace: there is no part {target} at this point (was it removed by an earlier step?)")))?;
                p.apply_replacement(part, designed.part(target));
            }
            Patch::Driver(p) => {
                let d = net.drivers.iter_mut().find(|d| &d.name == target).ok_or_else(|| err(format!("replace: there is no driver {target}")))?;
                p.apply(d);
            }
        },
        ChangeStep::Remove { target } => {
            let before = net.parts.len();
            net.parts.retain(|p| &p.name != target);
            if net.parts.len() == before {
                return Err(err(format!("remove: there is no part {target} at this point")));
            }
        }
        ChangeStep::Add { parts } => {
            for p in parts {
                if net.part(&p.name).is_some() || net.driver(&p.name).is_some() {
                    return Err(err(format!("add: {} is already in the network; choose a new reference", p.name)));
                }
                net.parts.push(p.clone());
            }
        }
        ChangeStep::Insert { part, node, next_to } => {
            if net.part(&part.name).is_some() || net.driver(&part.name).is_some() {
                return Err(err(format!("insert: {} is already in the network; choose a new reference", part.name)));
            }
            let new_node = format!("{}~{}", part.name, node);
            let target = match net.parts.iter_mut().find(|p| &p.name == next_to) {
                Some(p) => &mut p.between,
                None => match net.drivers.iter_mut().find(|d| &d.name == next_to) {
                    Some(d) => &mut d.between,
                    None => return Err(err(format!("insert: there is no part or driver {next_to} to insert beside"))),
                },
            };
            let Some(slot) = target.iter_mut().find(|n| *n == node) else {
                return Err(err(format!("insert: {next_to} does not touch node {node} (it sits between {} and {})", target[0], target[1])));
            };
            *slot = new_node.clone();
            let mut p = part.clone();
            p.between = [node.clone(), new_node];
            net.parts.push(p);
        }
    }
    Ok(())
}
