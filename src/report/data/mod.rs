//! The data a report template receives (as `/data.json`), built block by block: one small
//! builder per block, every number already formatted in the same digits as `voicekeep
//! solve`. Each report is written for its reader ([`Audience`]): the customer's in plain
//! words, the archive's with every technical figure, the buyer's sale sheet with nothing
//! private. Units print as the trade writes them (Ω, µF).

//!
//! | file | what it holds |
//! | --- | --- |
//! | `mod.rs` | the data's types, [`build`], and the trade's units |
//! | `blocks.rs` | one builder per block of tables: levels, compensation, parts, stress, load, health, tolerance, the record |
//! | `offers.rs` | the options of a quotation side by side, and the recommendation |
//! | `merge.rs` | several cabinets' data as one: tables, sentences, steps |
//! | `set.rs` | the report of a pair or set, and how its cabinets match |
//! | `service.rs` | the service record, photographs, the amplifier power, the sweeps at the terminals, a quotation's terms |
//! | `story.rs` | the prose: what was found and done, and the cautions |
//! | `words.rs` | how a customer reads a driver, a part, a level |

mod blocks;
pub mod invoice;
mod merge;
mod offers;
mod service;
mod set;
mod story;
mod words;

use serde::Serialize;
use sha2::{Digest, Sha256};

use crate::analysis::Findings;
use crate::model::{Block, Job, Part, PartKind, PlotKind, Template};
use crate::results::ohm;
use crate::units::{format_si, trim_number, Quantity};
use blocks::*;
use offers::options;
pub use set::{build_set, PairData};
use story::*;

/// Who a report is for; it decides the words and what is shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Audience {
    /// The speaker's owner: plain language.
    Customer,
    /// The shop's record: every figure, in the trade's terms.
    Archive,
    /// A buyer of the refurbished speaker: what was done, nothing private.
    Sale,
}

impl Audience {
    pub fn of(t: &Template) -> Audience {
        match t {
            Template::Customer => Audience::Customer,
            Template::Sale => Audience::Sale,
            Template::Quote | Template::Invoice => Audience::Customer,
            Template::Archive | Template::File { .. } => Audience::Archive,
        }
    }

    fn plain(self) -> bool {
        self != Audience::Archive
    }
}

#[derive(Debug, Serialize)]
pub struct Date {
    pub year: i32,
    pub month: u8,
    pub day: u8,
    pub text: String,
}

#[derive(Debug, Serialize)]
pub struct BlockData {
    pub kind: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub text: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub plot: Option<String>,
}

#[derive(Debug, Serialize, PartialEq)]
pub struct Row(pub Vec<String>);

/// A table: its header and rows.
#[derive(Debug, Serialize, Default, PartialEq)]
pub struct Table {
    pub header: Vec<String>,
    pub rows: Vec<Row>,
}

impl Table {
    pub(crate) fn new(header: &[&str], rows: Vec<Row>) -> Table {
        Table { header: header.iter().map(|h| h.to_string()).collect(), rows }
    }
}

#[derive(Debug, Serialize)]
pub struct JobHeader {
    pub number: String,
    pub work: String,
    pub technician: String,
    pub shop: Shop,
    /// None on the sale sheet: a buyer never sees the previous owner.
    pub customer: Option<Customer>,
    pub speaker: Speaker,
    /// The shop's bench notes: the archive's only.
    pub notes: Option<String>,
    /// The notes written for the customer; None on the sale sheet (they may speak of the
    /// owner).
    pub customer_notes: Option<String>,
}

#[derive(Debug, Serialize)]
pub struct Shop {
    pub name: String,
    pub address: String,
    pub contact: String,
    /// The logo's place among the report's files (`/inputs/N`), when the shop has one.
    pub logo: Option<String>,
}

#[derive(Debug, Serialize)]
pub struct Customer {
    pub name: String,
    pub reference: String,
}

#[derive(Debug, Serialize)]
pub struct Speaker {
    pub description: String,
    pub serials: Vec<String>,
    pub rated_impedance: String,
}

#[derive(Debug, Serialize)]
pub struct LevelsData {
    pub basis: String,
    pub table: Table,
    pub crossovers: Table,
    /// For the owner, where a driver's averaging band and its working range differ: which
    /// range each figure is taken over, in words.
    pub ranges: Option<String>,
}

#[derive(Debug, Serialize)]
pub struct CompensationData {
    pub basis: String,
    pub table: Table,
    /// Sentences under the table (archive) or in place of it (plain reports).
    pub notes: Vec<String>,
    pub alternatives: Table,
    pub warnings: Vec<String>,
}

#[derive(Debug, Serialize)]
pub struct StressData {
    pub basis: String,
    pub table: Table,
    pub all: Table,
    pub drivers: Table,
    /// Beside the every-scenario table: as found, a load so low that the figures assume an
    /// amplifier no real one is (None when the speaker as found is a load like the design's).
    pub found_note: Option<String>,
}

#[derive(Debug, Serialize)]
pub struct LoadData {
    pub basis: String,
    pub table: Table,
    /// The load in sentences: the verdict and how it compares with the original design.
    pub sentences: Vec<String>,
}

#[derive(Debug, Serialize)]
pub struct ToleranceData {
    pub basis: String,
    pub levels: Table,
    pub ranking: Table,
}

/// A substitute driver against the original, for the `substitute` block.
#[derive(Debug, Serialize, PartialEq)]
pub struct SubstituteData {
    pub driver: String,
    pub heading: String,
    pub table: Table,
    pub checks: Table,
    pub notes: Vec<String>,
    /// The customer's sentence: what was substituted and whether it matches.
    pub sentence: String,
}

#[derive(Debug, Serialize)]
pub struct PlotData {
    pub name: String,
    pub caption: String,
}

/// A drawing of the crossover (`/plots/schematic-NAME.svg`) and the width it is set at:
/// its natural size, so its labels keep their size, within the text width.
#[derive(Debug, Serialize)]
pub struct SchematicData {
    pub name: String,
    pub caption: String,
    pub width_pt: f64,
}

#[derive(Debug, Serialize)]
pub struct Attachment {
    pub name: String,
    pub file: String,
    pub mime: String,
}

#[derive(Debug, Serialize)]
pub struct ReportData {
    pub version: String,
    pub template: String,
    pub audience: Audience,
    pub date: Date,
    pub job: JobHeader,
    pub blocks: Option<Vec<BlockData>>,
    /// The amplifier the figures assume, as a line for the title block.
    pub drive: String,
    pub summary: Vec<String>,
    pub work: Vec<String>,
    pub levels: LevelsData,
    pub compensation: CompensationData,
    pub parts: Table,
    pub drivers: Table,
    pub stress: StressData,
    pub load: LoadData,
    pub health: Table,
    pub tolerance: Option<ToleranceData>,
    pub safety: Vec<String>,
    pub inputs: Table,
    pub attachments: Vec<Attachment>,
    pub plots: Vec<PlotData>,
    /// The drawings of the crossover this template shows, set after the data is built.
    pub schematics: Vec<SchematicData>,
    /// How the cabinets of a pair or set match; None for a job of one cabinet.
    pub pair: Option<PairData>,
    pub substitutes: Vec<SubstituteData>,
    /// The parts to buy for the work done, and their total where a price list priced them.
    pub parts_to_buy: Table,
    /// Whose parts the list counts: every cabinet of a pair or set, or the one network a job
    /// describes (for one cabinet where the job lists several serials).
    pub parts_counted: String,
    pub parts_total: Option<String>,
    /// The options offered before the work, side by side; None when the job has none.
    pub options: Option<OptionsData>,
    /// The service record (dates, complaint, inspection, sign-off); None when the job has
    /// no `service` section.
    pub service: Option<service::ServiceData>,
    /// What is original and what was replaced, with the date.
    pub history: Table,
    /// The largest amplifier power the speaker as left suits, with its assumptions.
    pub power: String,
    /// The photographs this report shows: all in the archive, those marked `customer` in the
    /// customer's report, none on the sale sheet.
    pub photos: Vec<service::PhotoData>,
    /// The sweeps at the terminals: confirmation and diagnosis (None without a sweep).
    pub terminals: Option<service::TerminalsData>,
    /// A quotation's line to sign and what its prices cover.
    pub quote: service::QuoteTerms,
    pub invoice: invoice::InvoiceData,
    /// Whether the job records work done (its `changes`, or a cabinet's where no options are
    /// offered); an inspection or a quotation has none.
    pub worked: bool,
}

/// The options side by side, each one's parts, and the recommendation.
#[derive(Debug, Serialize)]
pub struct OptionsData {
    pub basis: String,
    /// Said where prices are for one cabinet of several.
    pub per_cabinet: Option<String>,
    /// A cabinet's own work, which comes with every option (a part that cabinet alone needs).
    pub every_option: Vec<String>,
    pub table: Table,
    /// Per option: its name, its sentence, its parts and their total.
    pub each: Vec<OptionPartsData>,
    pub recommendation: Option<String>,
    pub recommended: Option<String>,
}

#[derive(Debug, Serialize)]
pub struct OptionPartsData {
    pub name: String,
    pub say: Option<String>,
    /// What it was computed from, in a sentence.
    pub basis: String,
    /// Each driver against the original design, the load and the limits, as sentences.
    pub results: Vec<String>,
    pub parts: Table,
    pub total: Option<String>,
}

/// What every block builder reads.
pub(crate) struct Ctx<'a> {
    pub(crate) job: &'a Job,
    pub(crate) f: &'a Findings,
    pub(crate) audience: Audience,
    /// A quotation, before the work: it speaks of what is proposed.
    pub(crate) quote: bool,
}

pub(crate) fn quantity(kind: PartKind) -> Quantity {
    match kind {
        PartKind::Capacitor => Quantity::Capacitance,
        PartKind::Inductor => Quantity::Inductance,
        PartKind::Resistor => Quantity::Resistance,
    }
}

/// "3.3 uF, ESR 0.9 ohm" - a part's value and loss as a technician writes them.
pub fn part_text(p: &Part) -> String {
    match p.fault {
        Some(crate::model::Fault::Open) => return "open (no continuity)".into(),
        Some(crate::model::Fault::Shorted) => return "shorted".into(),
        None => {}
    }
    // Reports show solved networks: an `auto` resistor at 0 ohm is the fit's wire link.
    let v = if p.kind == PartKind::Resistor && p.auto_value && p.value == 0.0 {
        "not fitted (a wire link)".to_string()
    } else if p.value.is_infinite() {
        "not fitted (open)".to_string()
    } else {
        format_si(p.value, quantity(p.kind), 3)
    };
    match p.kind {
        PartKind::Capacitor => match p.tan_delta {
            Some(d) => format!("{v}, tan δ {}", trim_number(d, 3)),
            None => format!("{v}, ESR {}", ohm(p.esr)),
        },
        PartKind::Inductor => format!("{v}, DCR {}", ohm(p.dcr)),
        PartKind::Resistor => v,
    }
}

pub(crate) fn mime(name: &str) -> &'static str {
    if name.ends_with(".yaml") || name.ends_with(".yml") {
        "application/yaml"
    } else if name.ends_with(".csv") {
        "text/csv"
    } else if name.to_lowercase().ends_with(".jpg") || name.to_lowercase().ends_with(".jpeg") {
        "image/jpeg"
    } else if name.to_lowercase().ends_with(".png") {
        "image/png"
    } else {
        "text/plain"
    }
}

pub(crate) fn sha256(bytes: &[u8]) -> String {
    Sha256::digest(bytes).iter().map(|b| format!("{b:02x}")).collect()
}

fn block_data(b: &Block) -> BlockData {
    let (kind, text, plot) = match b {
        Block::Text(t) => ("text", Some(t.clone()), None),
        Block::Plot(p) => ("plot", None, Some(p.name().to_string())),
        Block::Levels => ("levels", None, None),
        Block::Parts => ("parts", None, None),
        Block::Compensation => ("compensation", None, None),
        Block::Stress => ("stress", None, None),
        Block::Load => ("load", None, None),
        Block::Tolerance => ("tolerance", None, None),
        Block::Health => ("health", None, None),
        Block::Safety => ("safety", None, None),
        Block::Appendix => ("appendix", None, None),
        Block::Pair => ("pair", None, None),
        Block::Substitute => ("substitute", None, None),
        Block::PartsToBuy => ("parts-to-buy", None, None),
        Block::Options => ("options", None, None),
        Block::Option(name) => ("option", Some(name.clone()), None),
        Block::Service => ("service", None, None),
        Block::History => ("history", None, None),
        Block::Power => ("power", None, None),
        Block::Photos => ("photos", None, None),
        Block::Terminals => ("terminals", None, None),
        Block::Schematic => ("schematic", None, None),
    };
    BlockData { kind: kind.into(), text, plot }
}

/// `plots` are the kinds drawn for this report, in order.
pub fn build(job: &Job, f: &Findings, template: &Template, plots: &[PlotKind]) -> ReportData {
    let audience = Audience::of(template);
    let c = Ctx { job, f, audience, quote: *template == Template::Quote };
    let info = &job.info;
    let date = Date { year: info.date.year, month: info.date.month, day: info.date.day, text: info.date.to_string() };
    let mut data = ReportData {
        version: crate::results::VERSION.into(),
        template: template.name().to_string(),
        audience,
        date,
        job: header(&c),
        blocks: job.blocks.as_ref().map(|b| b.iter().map(block_data).collect()),
        drive: drive(&c),
        summary: summary(&c),
        work: work(&c),
        levels: levels(&c),
        compensation: compensation(&c),
        parts: parts(&c),
        drivers: drivers(&c),
        stress: stress(&c),
        load: load(&c),
        health: health(&c),
        tolerance: tolerance(&c),
        safety: safety(&c),
        inputs: inputs(&c),
        attachments: attachments(&c),
        plots: plots
            .iter()
            .map(|k| {
                let caption = crate::report::plots::caption(*k, job.work_done(), job.read_on_bench());
                let acoustic = f.levels.iter().any(|l| l.as_found_acoustic || l.as_left_acoustic);
                PlotData { name: k.name().into(), caption: if acoustic { caption.into() } else { caption.replace(crate::report::captions::ACOUSTIC_CLAUSE, "") } }
            })
            .collect(),
        schematics: Vec::new(),
        pair: None,
        substitutes: substitutes(&c),
        parts_to_buy: parts_to_buy(&f.parts, c.audience.plain()),
        parts_counted: match c.job.info.serials.len() {
            n if n > 1 => format!("counted for one cabinet (the job describes one network; it lists {} serials)", words::count_words(n)),
            _ => "counted for the cabinet".into(),
        },
        parts_total: parts_total(&f.parts),
        options: options(&c),
        service: service::service(&c),
        history: service::history(&c),
        power: service::power(&c),
        photos: service::photos(&c),
        terminals: service::terminals(&c),
        quote: service::quote_terms(&c, &f.parts, &f.options, 1),
        invoice: invoice::invoice(&c, &f.parts, 1),
        worked: job.work_done(),
    };

    if let Some(ch) = &f.chosen {
        data.summary.push(ch.sentence.clone());
    }
    // A quotation before any work, or an inspection with none: the speaker "after the work"
    // is the speaker as it is now.
    // The plain table's "after" average would repeat the "before" one: it goes.
    if !job.work_done() {
        let t = &mut data.levels.table;
        if let Some(at) = t.header.iter().position(|h| h == "After the work (average)") {
            t.header.remove(at);
            t.rows.iter_mut().for_each(|r| drop(r.0.remove(at)));
        }
        for h in &mut t.header {
            *h = h.replace("After the work, largest", "Largest").replace("After the work", "Now, before any work").replace("Before the work", "From the readings");
        }
    }
    // A quotation of one proposal (`changes`, no options): the work is offered, not done.
    if *template == Template::Quote && job.options.is_empty() {
        for w in &mut data.work {
            for (done, offered) in [("Replaced ", "Replace "), ("Fitted ", "Fit "), ("Removed ", "Remove ")] {
                if let Some(rest) = w.strip_prefix(done) {
                    *w = format!("{offered}{rest}");
                }
            }
        }
    }
    trade_units(&mut data);
    data
}

/// Every computed sentence and figure in the trade's units; the job's own words (names,
/// notes, text blocks) stay exactly as written.
pub(super) fn trade_units(d: &mut ReportData) {
    let t = crate::units::trade;
    let table = |tb: &mut Table| {
        for r in &mut tb.rows {
            for cell in &mut r.0 {
                *cell = t(cell);
            }
        }
        for h in &mut tb.header {
            *h = t(h);
        }
    };
    d.drive = t(&d.drive);
    d.power = t(&d.power);
    d.job.speaker.rated_impedance = t(&d.job.speaker.rated_impedance);
    for s in d.summary.iter_mut().chain(&mut d.work).chain(&mut d.safety).chain(&mut d.compensation.notes).chain(&mut d.compensation.warnings).chain(&mut d.load.sentences) {
        *s = t(s);
    }
    for b in [&mut d.levels.basis, &mut d.compensation.basis, &mut d.stress.basis, &mut d.load.basis] {
        *b = t(b);
    }
    if let Some(n) = &mut d.stress.found_note {
        *n = t(n);
    }
    for tb in [
        &mut d.levels.table,
        &mut d.levels.crossovers,
        &mut d.compensation.table,
        &mut d.compensation.alternatives,
        &mut d.parts,
        &mut d.drivers,
        &mut d.stress.table,
        &mut d.stress.all,
        &mut d.stress.drivers,
        &mut d.load.table,
        &mut d.health,
        &mut d.parts_to_buy,
        &mut d.history,
    ] {
        table(tb);
    }
    if let Some(x) = &mut d.terminals {
        x.basis = t(&x.basis);
        table(&mut x.table);
        for s in &mut x.sentences {
            *s = t(s);
        }
        if let Some(g) = &mut x.diagnosis {
            g.basis = t(&g.basis);
            g.sentence = t(&g.sentence);
            table(&mut g.table);
        }
    }
    if let Some(o) = &mut d.options {
        o.basis = t(&o.basis);
        table(&mut o.table);
        if let Some(r) = &mut o.recommendation {
            *r = t(r);
        }
        for e in &mut o.each {
            table(&mut e.parts);
            for r in &mut e.results {
                *r = t(r);
            }
        }
    }
    for x in &mut d.substitutes {
        x.sentence = t(&x.sentence);
        x.heading = t(&x.heading);
        for n in &mut x.notes {
            *n = t(n);
        }
        table(&mut x.table);
        table(&mut x.checks);
    }
    if let Some(p) = &mut d.pair {
        p.basis = t(&p.basis);
        for s in p.sentences.iter_mut().chain(&mut p.compensation_notes).chain(&mut p.compensation_plain) {
            *s = t(s);
        }
        table(&mut p.table);
        table(&mut p.median);
        table(&mut p.compensation);
    }
    if let Some(tol) = &mut d.tolerance {
        tol.basis = t(&tol.basis);
        table(&mut tol.levels);
        table(&mut tol.ranking);
    }
}
