//! The validated job: the network as designed, the bench readings, the change steps, and how
//! each scenario's network is built from them. Everything here is checked; nothing here
//! reads files.

mod driver;
mod network;
mod part;
pub mod service;
mod steps;
pub mod terminals;

pub use driver::*;
pub use network::*;
pub use part::*;
pub use steps::*;

use crate::diag::Pos;

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

#[derive(Debug, Clone, PartialEq)]
pub struct Amplifier {
    pub power_w: f64,
    pub into_ohm: f64,
    pub output_ohm: f64,
    /// The long-term programme power into `into_ohm`, when the job gives one; otherwise
    /// [`Amplifier::DEFAULT_PROGRAMME_FRACTION`] of `power_w`.
    pub programme_w: Option<f64>,
}

/// The range of hearing every band is bounded to: a level above 20 kHz or below 20 Hz is no
/// part of how a speaker sounds.
pub const HEARING_HZ: [f64; 2] = [20.0, 20_000.0];

impl Amplifier {
    /// The programme's share of rated power when the job gives none: one eighth, the level
    /// IEC 60065 4.2.6 sets for an audio amplifier's heating tests (as quoted in the IEEE
    /// EMC-PSTC list's 1996 thread on EN 60065; IEC 62368-1 Annex E keeps it). Noise with a
    /// crest factor near 2 (IEC 60268-7 8.3.2.2 b) reaches an amplifier's peak voltage at about
    /// a quarter of its sine power, so real programme sits lower still.
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

#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub enum ESeries {
    E6,
    E12,
    E24,
    E48,
    E96,
}

impl ESeries {
    pub const ALL: [ESeries; 5] = [ESeries::E6, ESeries::E12, ESeries::E24, ESeries::E48, ESeries::E96];
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
    /// A value the whole pair or set is fitted with, decided across its cabinets; never
    /// written in the job file.
    pub common_ohm: Option<f64>,
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
                // A sweep "to 20 kHz" ends at 20 kHz: the end point is added where the steps
                // fall short of it (20 Hz at 12 per octave steps to 19.3 kHz).
                if out.last().is_some_and(|l| *l < to * (1.0 - 1e-9)) {
                    out.push(*to);
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
    /// How far apart the cabinets of a pair or set may play and still match (dB; 0.5 dB
    /// unless the job says, common practice).
    pub pair_tolerance_db: f64,
}

/// An option offered to the customer before the work: its own steps and compensate
/// entries, solved as an as-left scenario of its own.
#[derive(Debug, Clone, PartialEq)]
pub struct JobOption {
    pub name: String,
    /// The sentence the customer reads.
    pub say: Option<String>,
    pub labour_hours: Option<f64>,
    pub changes: Vec<Change>,
    pub compensate: Vec<CompensateEntry>,
    pub pos: Pos,
}

/// What a quotation needs beyond the options: the hourly rate and the shop's choice.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Quote {
    pub labour_rate: Option<crate::money::Money>,
    pub recommend: Option<String>,
    /// The currency of the hourly rate when no price list gives one (the shop settings').
    pub currency: Option<String>,
    /// The tax an invoice adds, from the shop's settings; None charges none.
    pub tax: Option<service::Tax>,
}

/// One line of a shop's price list: a stock item and its unit price.
#[derive(Debug, Clone, PartialEq)]
pub struct PriceItem {
    /// resistor, capacitor, inductor or driver.
    pub kind: String,
    /// In ohm, farad or henry; for a driver, its name as the list writes it.
    pub value: f64,
    pub value_text: String,
    /// W for a resistor, V for a capacitor, A for an inductor; None when the list leaves it out.
    pub rating: Option<f64>,
    /// The type the item is (film, cement ...), matched against a part's type; None for any.
    pub type_text: Option<String>,
    pub unit_price: crate::money::Money,
    /// Its line in the file, for the record.
    pub line: usize,
}

/// A shop's price list (a CSV of its stock), in one currency.
#[derive(Debug, Clone, PartialEq)]
pub struct PriceList {
    pub file: String,
    pub currency: String,
    pub items: Vec<PriceItem>,
}

/// One cabinet of a pair or set: its own bench readings and the change steps made to it
/// alone (after the job's common ones).
#[derive(Debug, Clone, PartialEq)]
pub struct Cabinet {
    pub name: String,
    pub pos: Pos,
    pub measured: Vec<Reading>,
    pub changes: Vec<Change>,
    /// This cabinet's sweeps at its terminals.
    pub terminals: terminals::Terminals,
}

#[derive(Debug, Clone, PartialEq)]
pub enum Template {
    Customer,
    Archive,
    Sale,
    /// The customer's quotation before the work: the options side by side.
    Quote,
    /// The customer's bill after the work: the parts fitted, the labour and the tax.
    Invoice,
    /// A shop's own template: its file name and text, read when the job was.
    File {
        name: String,
        text: String,
    },
}

impl Template {
    /// The built-in templates' names, as the job and the command line spell them.
    pub const NAMES: [&'static str; 5] = ["customer", "archive", "sale", "quote", "invoice"];

    pub fn built_in(name: &str) -> Option<Template> {
        match name {
            "customer" => Some(Template::Customer),
            "archive" => Some(Template::Archive),
            "sale" => Some(Template::Sale),
            "quote" => Some(Template::Quote),
            "invoice" => Some(Template::Invoice),
            _ => None,
        }
    }

    /// The built-in's name, or the shop template's file name.
    pub fn name(&self) -> &str {
        match self {
            Template::Customer => "customer",
            Template::Archive => "archive",
            Template::Sale => "sale",
            Template::Quote => "quote",
            Template::Invoice => "invoice",
            Template::File { name, .. } => name,
        }
    }
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
    /// How the cabinets of a pair or set match.
    Pair,
    /// Each substitute driver against the original.
    Substitute,
    /// The parts to buy for the work done, priced where the job names a price list.
    PartsToBuy,
    /// The options offered before the work, side by side, with the recommendation.
    Options,
    /// One option's results, by its name.
    Option(String),
    /// The service record: dates, complaint, finding, labour, warranty, inspection.
    Service,
    /// What is original and what was replaced, with the date.
    History,
    /// The largest amplifier power the speaker suits.
    Power,
    /// The photographs, before and after.
    Photos,
    /// The sweeps at the terminals: the prediction confirmed, and the diagnosis.
    Terminals,
    /// The crossover drawn: the views the template shows (see `crate::schematic`).
    Schematic,
    Plot(PlotKind),
}

impl Block {
    /// The named blocks, as `report.blocks` spells them (besides `text:` and `plot:`).
    pub const NAMES: [&'static str; 19] = [
        "levels",
        "parts",
        "compensation",
        "stress",
        "load",
        "tolerance",
        "health",
        "safety",
        "appendix",
        "pair",
        "substitute",
        "parts-to-buy",
        "options",
        "service",
        "history",
        "power",
        "photos",
        "terminals",
        "schematic",
    ];

    pub fn named(name: &str) -> Option<Block> {
        Some(match name {
            "levels" => Block::Levels,
            "parts" => Block::Parts,
            "compensation" => Block::Compensation,
            "stress" => Block::Stress,
            "load" => Block::Load,
            "tolerance" => Block::Tolerance,
            "health" => Block::Health,
            "safety" => Block::Safety,
            "appendix" => Block::Appendix,
            "pair" => Block::Pair,
            "substitute" => Block::Substitute,
            "parts-to-buy" => Block::PartsToBuy,
            "options" => Block::Options,
            "service" => Block::Service,
            "history" => Block::History,
            "power" => Block::Power,
            "photos" => Block::Photos,
            "terminals" => Block::Terminals,
            "schematic" => Block::Schematic,
            _ => return None,
        })
    }

    /// The block's name as the report data gives it to the template.
    pub fn name(&self) -> &'static str {
        match self {
            Block::Text(_) => "text",
            Block::Plot(_) => "plot",
            Block::Option(_) => "option",
            Block::Levels => "levels",
            Block::Parts => "parts",
            Block::Compensation => "compensation",
            Block::Stress => "stress",
            Block::Load => "load",
            Block::Tolerance => "tolerance",
            Block::Health => "health",
            Block::Safety => "safety",
            Block::Appendix => "appendix",
            Block::Pair => "pair",
            Block::Substitute => "substitute",
            Block::PartsToBuy => "parts-to-buy",
            Block::Options => "options",
            Block::Service => "service",
            Block::History => "history",
            Block::Power => "power",
            Block::Photos => "photos",
            Block::Terminals => "terminals",
            Block::Schematic => "schematic",
        }
    }
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
    /// A pair's or set's cabinets against the design, as found, told apart by pattern.
    PairFound,
    /// The same as left.
    PairLeft,
    /// Predicted against measured |Z| at the terminals, for each scenario with a sweep.
    Terminals,
}

impl PlotKind {
    pub const ALL: [PlotKind; 9] = [
        PlotKind::Response,
        PlotKind::Change,
        PlotKind::Impedance,
        PlotKind::Phase,
        PlotKind::Tolerance,
        PlotKind::Acoustic,
        PlotKind::PairFound,
        PlotKind::PairLeft,
        PlotKind::Terminals,
    ];
    pub fn name(self) -> &'static str {
        match self {
            PlotKind::Response => "response",
            PlotKind::Change => "change",
            PlotKind::Impedance => "impedance",
            PlotKind::Phase => "phase",
            PlotKind::Tolerance => "tolerance",
            PlotKind::Acoustic => "acoustic",
            PlotKind::PairFound => "pair-found",
            PlotKind::PairLeft => "pair-left",
            PlotKind::Terminals => "terminals",
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
    /// The shop's logo (a JPEG or PNG file the job read), shown at the head of each report.
    pub shop_logo: Option<String>,
    pub customer_name: String,
    pub customer_reference: String,
    pub speaker_description: String,
    pub serials: Vec<String>,
    pub rated_impedance: Option<f64>,
    /// The range over which the rated impedance is judged (IEC 60268-5 "rated frequency range").
    pub rated_range: (f64, f64),
    /// The shop's own bench notes: the archive's only.
    pub notes: String,
    /// Notes written for the customer: their report and the archive, never the sale sheet.
    pub customer_notes: String,
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
    /// The cabinets of a pair or set, each with its own readings and steps; empty for a job
    /// of one cabinet, whose readings and steps are `measured` and `changes`.
    pub cabinets: Vec<Cabinet>,
    pub compensate: Vec<CompensateEntry>,
    /// The shop's price list, when the job names one.
    pub prices: Option<PriceList>,
    /// The options offered before the work, in the job's order.
    pub options: Vec<JobOption>,
    pub quote: Quote,
    pub analysis: Analysis,
    pub template: Template,
    pub blocks: Option<Vec<Block>>,
    /// The service record's own fields (dates, complaint, inspection, ...); empty when the
    /// job gives none.
    pub service: service::Service,
    /// Impedance sweeps measured at the terminals, as found and as left.
    pub terminals: terminals::Terminals,
    /// The design from the shop's library the job uses (`design:`), by name; None for a
    /// network typed in the job.
    pub design: Option<String>,
    /// The job file first, then every table it read, in order.
    pub inputs: Vec<InputFile>,
    /// What `check` warns of without refusing the job (a character no font of the report
    /// has), each at its place.
    pub warnings: Vec<crate::diag::Diagnostic>,
}

impl Job {
    /// Whether the job records work done: its `changes`, or a cabinet's own where no options
    /// are offered (in a quotation a cabinet's steps count only within its options). An
    /// inspection or a quotation has none.
    /// Whether the bench read anything before the work (a part's reading, a failed driver):
    /// without it the speaker "as found" is the design's own figures, not a finding.
    pub fn read_on_bench(&self) -> bool {
        !self.measured.is_empty() || self.network.drivers.iter().any(|d| d.fault.is_some() || d.fault_note.is_some())
    }

    pub fn work_done(&self) -> bool {
        !self.changes.is_empty() || (self.options.is_empty() && self.cabinets.iter().any(|c| !c.changes.is_empty()))
    }

    /// The job of one cabinet of a set: the common readings and steps, then the cabinet's own.
    pub fn for_cabinet(&self, c: &Cabinet) -> Job {
        let mut job = self.clone();
        job.measured.extend(c.measured.iter().cloned());
        // The cabinet's own steps follow the common ones, and are numbered on from them.
        let common = self.changes.len();
        job.changes.extend(c.changes.iter().cloned().map(|mut ch| {
            ch.number += common;
            ch
        }));
        if !c.terminals.is_empty() {
            job.terminals = terminals::Terminals { limits: self.terminals.limits, ..c.terminals.clone() };
        }
        job.cabinets.clear();
        job
    }

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
