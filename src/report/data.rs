//! The data a report template receives (as `/data.json`), built block by block: one small
//! builder per block, every number already formatted in the same digits as `voicekeep
//! solve`. Each report is written for its reader ([`Audience`]): the customer's in plain
//! words, the archive's with every technical figure, the buyer's sale sheet with nothing
//! private. Units print as the trade writes them (Ω, µF).

use serde::Serialize;
use sha2::{Digest, Sha256};

use crate::analysis::stress::StressRow;
use crate::analysis::Findings;
use crate::model::{Block, ChangeStep, Job, Network, Part, PartKind, Patch, PlotKind, Rating, Role, Scenario, Template};
use crate::results::{db, hz, ohm};
use crate::units::{format_si, trim_number, Quantity};

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

#[derive(Debug, Serialize)]
pub struct Row(pub Vec<String>);

/// A table: its header and rows.
#[derive(Debug, Serialize, Default)]
pub struct Table {
    pub header: Vec<String>,
    pub rows: Vec<Row>,
}

impl Table {
    fn new(header: &[&str], rows: Vec<Row>) -> Table {
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
    /// The bench notes; None on the sale sheet (they may speak of the owner).
    pub notes: Option<String>,
}

#[derive(Debug, Serialize)]
pub struct Shop {
    pub name: String,
    pub address: String,
    pub contact: String,
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

#[derive(Debug, Serialize)]
pub struct PlotData {
    pub name: String,
    pub caption: String,
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
}

/// What every block builder reads.
struct Ctx<'a> {
    job: &'a Job,
    f: &'a Findings,
    audience: Audience,
}

fn quantity(kind: PartKind) -> Quantity {
    match kind {
        PartKind::Capacitor => Quantity::Capacitance,
        PartKind::Inductor => Quantity::Inductance,
        PartKind::Resistor => Quantity::Resistance,
    }
}

/// "3.3 uF, ESR 0.9 ohm" - a part's value and loss as a technician writes them.
pub fn part_text(p: &Part) -> String {
    let v = if p.auto_value && p.value == 0.0 {
        "auto".to_string()
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

fn mime(name: &str) -> &'static str {
    if name.ends_with(".yaml") || name.ends_with(".yml") {
        "application/yaml"
    } else if name.ends_with(".csv") {
        "text/csv"
    } else {
        "text/plain"
    }
}

fn sha256(bytes: &[u8]) -> String {
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
    };
    BlockData { kind: kind.into(), text, plot }
}

/// A driver as a customer reads it: "the tweeter (HF)".
fn driver_words(net: &Network, name: &str) -> String {
    match net.driver(name).map(|d| d.role) {
        Some(Role::Other) | None => format!("driver {name}"),
        Some(r) => format!("the {} ({name})", r.name()),
    }
}

/// Where a part sits, in words a customer reads: the filter of the driver whose section
/// holds it (never node names).
fn part_place(net: &Network, part: &str) -> String {
    let owners: Vec<&str> = net.drivers.iter().filter(|d| net.section(&d.name).contains(&part)).map(|d| d.name.as_str()).collect();
    match owners.as_slice() {
        [one] => match net.driver(one).map(|d| d.role) {
            Some(Role::Other) | None => format!("{one}'s filter"),
            Some(r) => format!("the {}'s filter", r.name()),
        },
        [] => "the crossover's input".into(),
        _ => "the crossover".into(),
    }
}

fn kind_noun(kind: PartKind) -> &'static str {
    match kind {
        PartKind::Capacitor => "capacitor",
        PartKind::Inductor => "inductor",
        PartKind::Resistor => "resistor",
    }
}

/// A part's rating as the trade writes it, from the job or as voicekeep chose it.
fn rating_text(c: &Ctx, p: &Part) -> Option<String> {
    match p.rating {
        Rating::Given(v) => Some(match p.kind {
            PartKind::Resistor => format!("{} W", trim_number(v, 3)),
            PartKind::Capacitor => format!("{} V", trim_number(v, 3)),
            PartKind::Inductor => format!("{} A", trim_number(v, 3)),
        }),
        Rating::Auto => c.f.stress.rows.iter().find(|r| r.scenario == Scenario::AsLeft && r.part == p.name).and_then(|r| r.rating_w).map(|w| format!("{} W", trim_number(w, 3))),
        Rating::None => None,
    }
}

/// "a 3.3 uF polypropylene film capacitor rated 250 V": what was fitted, for the customer.
fn fitted_words(c: &Ctx, p: &Part) -> String {
    let value = format_si(p.value, quantity(p.kind), 3);
    let kind = match (&p.type_text, p.kind) {
        (Some(t), PartKind::Capacitor) if !t.to_lowercase().contains("capacitor") => format!("{t} capacitor"),
        (Some(t), PartKind::Resistor) if !t.to_lowercase().contains("resistor") => format!("{t} resistor"),
        (Some(t), PartKind::Inductor) if !t.to_lowercase().contains("inductor") => format!("{t} inductor"),
        (Some(t), _) => t.clone(),
        (None, k) => kind_noun(k).to_string(),
    };
    let rating = rating_text(c, p).map(|r| format!(" rated {r}")).unwrap_or_default();
    let spoken: f64 = value.split(' ').next().and_then(|n| n.parse().ok()).unwrap_or(1.0);
    format!("{} {value} {kind}{rating}", crate::units::a_or_an(spoken))
}

/// `plots` are the kinds drawn for this report, in order.
pub fn build(job: &Job, f: &Findings, template: &Template, plots: &[PlotKind]) -> ReportData {
    let audience = Audience::of(template);
    let c = Ctx { job, f, audience };
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
        plots: plots.iter().map(|k| PlotData { name: k.name().into(), caption: crate::report::plots::caption(*k).into() }).collect(),
    };
    trade_units(&mut data);
    data
}

/// Every computed sentence and figure in the trade's units; the job's own words (names,
/// notes, text blocks) stay exactly as written.
fn trade_units(d: &mut ReportData) {
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
    d.job.speaker.rated_impedance = t(&d.job.speaker.rated_impedance);
    for s in d.summary.iter_mut().chain(&mut d.work).chain(&mut d.safety).chain(&mut d.compensation.notes).chain(&mut d.compensation.warnings).chain(&mut d.load.sentences) {
        *s = t(s);
    }
    for b in [&mut d.levels.basis, &mut d.compensation.basis, &mut d.stress.basis, &mut d.load.basis] {
        *b = t(b);
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
    ] {
        table(tb);
    }
    if let Some(tol) = &mut d.tolerance {
        tol.basis = t(&tol.basis);
        table(&mut tol.levels);
        table(&mut tol.ranking);
    }
}

fn header(c: &Ctx) -> JobHeader {
    let info = &c.job.info;
    let sale = c.audience == Audience::Sale;
    JobHeader {
        number: info.number.clone(),
        work: info.work.clone(),
        technician: info.technician.clone(),
        shop: Shop { name: info.shop_name.clone(), address: info.shop_address.clone(), contact: info.shop_contact.clone() },
        customer: if sale || (info.customer_name.is_empty() && info.customer_reference.is_empty()) {
            None
        } else {
            Some(Customer { name: info.customer_name.clone(), reference: info.customer_reference.clone() })
        },
        speaker: Speaker {
            description: info.speaker_description.clone(),
            serials: info.serials.clone(),
            rated_impedance: info.rated_impedance.map(ohm).unwrap_or_else(|| "not given".into()),
        },
        notes: if sale || info.notes.is_empty() { None } else { Some(info.notes.clone()) },
    }
}

/// The amplifier the figures assume: never worded as a specification of the speaker.
fn drive(c: &Ctx) -> String {
    let a = &c.job.amplifier;
    let (p, r) = (trim_number(a.power_w, 3), trim_number(a.into_ohm, 3));
    match c.audience {
        Audience::Archive => format!("sine {}; programme {} W", c.f.stress.amplifier, trim_number(c.f.stress.programme_w, 3)),
        Audience::Customer => format!("worked out for an amplifier of {p} W into {r} ohm"),
        Audience::Sale => format!("the shop's figures assume an amplifier of {p} W into {r} ohm"),
    }
}

/// The level line of one driver, in words: louder or quieter, by how much.
fn level_words(v: f64) -> String {
    if v.abs() < 0.005 {
        "exactly as designed".into()
    } else if v > 0.0 {
        format!("{:.2} dB louder than designed", v)
    } else {
        format!("{:.2} dB quieter than designed", -v)
    }
}

/// A small count in words, as prose writes it: "one", "two" ... "nine", then digits.
fn count_words(n: usize) -> String {
    ["no", "one", "two", "three", "four", "five", "six", "seven", "eight", "nine"].get(n).map(|w| w.to_string()).unwrap_or_else(|| n.to_string())
}

fn summary(c: &Ctx) -> Vec<String> {
    let (job, f) = (c.job, c.f);
    let net = &job.network;
    let plain = c.audience.plain();
    let mut out = Vec::new();
    let off: Vec<&crate::analysis::LevelRow> = f.levels.iter().filter(|l| l.as_found_db.abs() >= 0.5).collect();
    if job.measured.is_empty() {
        out.push("No parts were measured before the work, so the figures before the work are those of the original design.".into());
    } else if off.is_empty() {
        out.push("Before the work, as worked out from the parts' readings, every driver was within 0.5 dB of the original design.".into());
    } else {
        let each: Vec<String> = off
            .iter()
            .map(|l| {
                if l.as_found_fault {
                    format!("{} was silent, a fault", driver_words(net, &l.driver))
                } else {
                    format!("{} was {}", driver_words(net, &l.driver), level_words(l.as_found_db))
                }
            })
            .collect();
        out.push(format!("Before the work, as worked out from the parts' readings, {}.", join_and(&each)));
    }
    let (ld, lf, ll) = (&f.loads.as_designed, &f.loads.as_found, &f.loads.as_left);
    if lf.verdict == crate::analysis::Verdict::Over && ll.verdict != crate::analysis::Verdict::Over {
        out.push(format!(
            "As it came in, the speaker presented only {} to the amplifier at {} (the original design: {}), close to a short circuit: the amplifier that drove it should be checked.",
            ohm(lf.min_ohm),
            hz(Some(lf.min_at_hz)),
            ohm(ld.min_ohm)
        ));
    }
    let flagged: Vec<&str> = f.health.iter().filter(|h| !h.ok).map(|h| h.part.as_str()).collect();
    if !flagged.is_empty() {
        let words: Vec<String> = flagged
            .iter()
            .map(|p| match net.part(p) {
                Some(part) if plain => format!("{p}, a {} in {}", kind_noun(part.kind), part_place(net, p)),
                _ => p.to_string(),
            })
            .collect();
        let n = flagged.len();
        out.push(format!("The bench readings found {} worn or faulty part{}: {}.", count_words(n), if n == 1 { "" } else { "s" }, join_and(&words)));
    }
    if c.audience == Audience::Archive {
        let n = job.changes.len();
        out.push(capitalise(&format!("{} change step{} {} recorded (listed below).", count_words(n), if n == 1 { "" } else { "s" }, if n == 1 { "was" } else { "were" })));
    }
    let faults: Vec<String> = f.levels.iter().filter(|l| l.as_left_fault).map(|l| driver_words(net, &l.driver)).collect();
    let fine: Vec<&crate::analysis::LevelRow> = f.levels.iter().filter(|l| !l.as_left_fault).collect();
    // The worst point over each driver's whole passband, not a band mean, which can hide a
    // peak at the band's edge.
    let worst = fine.iter().map(|l| l.passband_worst_db.abs()).fold(0.0, f64::max);
    if !fine.is_empty() {
        let every = if faults.is_empty() { "every driver" } else { "every other driver" };
        let what = match (crate::analysis::level_flag(worst), plain) {
            ("within 0.5 dB", true) => "a difference too small to hear (level changes below about 0.4 dB generally go unnoticed)".to_string(),
            ("within 0.5 dB", false) => "within 0.5 dB; level changes below about 0.4 dB generally go unnoticed (Ballou, Handbook for Sound Engineers, 3.8.6)".to_string(),
            ("measurable", _) => "a measurable difference, though hard to hear".to_string(),
            (_, true) => "a difference likely to be heard".to_string(),
            (other, false) => format!("{other}; 3 dB is double the power, not double the loudness"),
        };
        out.push(format!("After the work, {every} is calculated to play within {worst:.2} dB of the original design at every frequency of its working range: {what}."));
    }
    if !faults.is_empty() {
        out.push(format!(
            "After the work, {} plays more than {} dB below the original design: that is a fault (a driver shorted or disconnected), not a level difference. Do not use the speaker until it is found.",
            join_and(&faults),
            crate::analysis::compensate::FAULT_DB
        ));
    }
    out
}

fn capitalise(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(first) => first.to_uppercase().collect::<String>() + c.as_str(),
        None => String::new(),
    }
}

fn join_and(items: &[String]) -> String {
    match items {
        [] => String::new(),
        [one] => one.clone(),
        [a, b] => format!("{a} and {b}"),
        [rest @ .., last] => format!("{}, and {last}", rest.join(", ")),
    }
}

/// The work done, one line per change step: for the customer what was fitted, its type and
/// rating; for the archive the values before and after.
fn work(c: &Ctx) -> Vec<String> {
    let (found, left) = (&c.f.scenes.as_found, &c.f.scenes.as_left);
    let (net_found, net_left) = (&found.network, &left.network);
    c.job
        .changes
        .iter()
        .map(|ch| match (&ch.step, c.audience.plain()) {
            (ChangeStep::Replace { target, with: Patch::Part(_) }, true) => {
                let (Some(old), Some(new)) = (net_found.part(target), net_left.part(target)) else { return format!("Replaced {target}.") };
                let was = old.type_text.as_ref().map(|t| format!(" (was {})", with_article(t))).unwrap_or_default();
                format!("Replaced {target}, a {} in {}, with {}{was}.", kind_noun(old.kind), part_place(net_left, target), fitted_words(c, new))
            }
            (ChangeStep::Replace { target, with: Patch::Part(_) }, false) => {
                let (a, b) = (net_found.part(target), net_left.part(target));
                let extra = b.map(|p| [p.type_text.clone(), rating_text(c, p)].into_iter().flatten().collect::<Vec<_>>().join(", ")).filter(|s| !s.is_empty());
                format!(
                    "{}. Replaced {}: {} (as found) -> {}{}",
                    ch.number,
                    target,
                    a.map(part_text).unwrap_or_default(),
                    b.map(part_text).unwrap_or_default(),
                    extra.map(|e| format!("; {e}")).unwrap_or_default()
                )
            }
            (ChangeStep::Replace { target, with: Patch::Driver(p) }, plain) => {
                let note = p.note.as_ref().map(|n| format!(": {n}")).unwrap_or_default();
                if plain {
                    format!("Replaced {}{note}.", driver_words(net_left, target))
                } else {
                    format!("{}. Replaced driver {target}{note}", ch.number)
                }
            }
            (ChangeStep::Insert { part, node, next_to }, plain) => added_line(c, ch.number, part, plain, Some((node, next_to))),
            (ChangeStep::Add { parts }, plain) => parts.iter().map(|p| added_line(c, ch.number, p, plain, None)).collect::<Vec<_>>().join(" "),
            (ChangeStep::Remove { target }, true) => match net_found.part(target) {
                Some(p) => format!("Removed {target}, a {} in {}.", kind_noun(p.kind), part_place(net_found, target)),
                None => format!("Removed {target}."),
            },
            (ChangeStep::Remove { target }, false) => format!("{}. Removed {}", ch.number, target),
        })
        .collect()
}

fn with_article(t: &str) -> String {
    if t.starts_with(['a', 'e', 'i', 'o', 'u', 'A', 'E', 'I', 'O', 'U']) {
        format!("an {t}")
    } else {
        format!("a {t}")
    }
}

fn added_line(c: &Ctx, number: usize, part: &Part, plain: bool, insert: Option<(&String, &String)>) -> String {
    let net_left = &c.f.scenes.as_left.network;
    let fitted = net_left.part(&part.name).unwrap_or(part);
    let fit = c.f.compensation.fits.iter().find(|f| f.part == part.name);
    if plain {
        if fit.is_some_and(|f| f.is_none()) {
            return format!("{} was planned in {} but was not needed: the level matched without it.", part.name, part_place(net_left, &part.name));
        }
        let why = fit.map(|f| format!(" to bring {} back to its original level", driver_words(net_left, &f.driver))).unwrap_or_default();
        return format!("Fitted {}, {}, in {}{why}.", part.name, fitted_words(c, fitted), part_place(net_left, &part.name));
    }
    match insert {
        Some((node, next_to)) => format!(
            "{number}. Inserted {} ({}{}) in series between node {node} and {next_to}",
            part.name,
            part_text(fitted),
            rating_text(c, fitted).map(|r| format!(", {r}")).unwrap_or_default()
        ),
        None => format!("{number}. Added {} ({}, {} - {})", part.name, part_text(fitted), net_left.node_label(&part.between[0]), net_left.node_label(&part.between[1])),
    }
}

fn levels(c: &Ctx) -> LevelsData {
    let f = c.f;
    let net = &c.job.network;
    let basis = format!(
        "the network solved as designed, as found and as left over {}. Levels are the mean over each driver's band, in dB relative to the original design; the band is the fitting band where a compensating resistor names the driver, otherwise where the original design plays within 6 dB of its maximum.",
        sweep_text(f)
    );
    let table = if c.audience.plain() {
        let rows = f
            .levels
            .iter()
            .map(|l| {
                let meaning = if l.as_left_fault {
                    "a fault: driver shorted or disconnected".to_string()
                } else {
                    match crate::analysis::level_flag(l.passband_worst_db) {
                        "within 0.5 dB" => "too small to hear".into(),
                        "measurable" => "measurable, hard to hear".into(),
                        other => other.into(),
                    }
                };
                let before = if l.as_found_fault { "silent: a fault".to_string() } else { db(l.as_found_db) };
                Row(vec![
                    driver_words(net, &l.driver),
                    before,
                    db(l.as_left_db),
                    format!("{} ({} to {})", db(l.passband_worst_db), hz(Some(l.passband_hz[0])), hz(Some(l.passband_hz[1]))),
                    meaning,
                ])
            })
            .collect();
        Table::new(&["Driver", "Before the work (average)", "After the work (average)", "After the work, largest difference", "What that means"], rows)
    } else {
        let rows = f
            .levels
            .iter()
            .map(|l| {
                Row(vec![
                    l.driver.clone(),
                    l.role.clone(),
                    format!("{} - {}", hz(Some(l.band_hz[0])), hz(Some(l.band_hz[1]))),
                    db(l.as_designed_db),
                    db(l.as_found_db),
                    db(l.as_left_db),
                    db(l.found_to_left_db),
                    format!("{} ({} - {})", db(l.passband_worst_db), hz(Some(l.passband_hz[0])), hz(Some(l.passband_hz[1]))),
                    l.left_flag.clone(),
                ])
            })
            .collect();
        Table::new(&["Driver", "Role", "Band", "As designed", "As found", "As left", "Found → left", "As left, worst in passband", "As left vs design"], rows)
    };
    let crossovers = if c.audience.plain() {
        Table::default()
    } else {
        Table::new(
            &["Electrical crossover (driver voltages cross)", "As designed", "As found", "As left"],
            f.crossovers.iter().map(|x| Row(vec![format!("{} / {}", x.lower, x.upper), hz(x.as_designed_hz), hz(x.as_found_hz), hz(x.as_left_hz)])).collect(),
        )
    };
    LevelsData { basis, table, crossovers }
}

fn sweep_text(f: &Findings) -> String {
    format!("{} to {}, {} points", hz(f.freqs.first().copied()), hz(f.freqs.last().copied()), f.freqs.len())
}

fn compensation(c: &Ctx) -> CompensationData {
    let f = c.f;
    let net = &f.scenes.as_left.network;
    let rating_of = |part: &str| f.stress.rows.iter().find(|r| r.scenario == Scenario::AsLeft && r.part == part).and_then(|r| r.rating_w.map(|w| (w, r.rating_chosen)));
    let basis = format!(
        "least-squares level match in dB over each band against the reference scenario, rounded to the named IEC 60063 series (nearest in the geometric sense); ratings at least twice the programme dissipation at {} W (common practice)",
        trim_number(f.stress.programme_w, 3)
    );
    let mut notes = Vec::new();
    if c.audience.plain() {
        let mut explained = false;
        for fit in &f.compensation.fits {
            let who = driver_words(net, &fit.driver);
            let place = part_place(net, &fit.part);
            if fit.fault {
                notes.push(format!("{} could not be fitted: {who} plays far below its design whatever its value, which is a fault in the wiring or the driver.", fit.part));
            } else if fit.cannot_raise {
                notes.push(format!("{} was not fitted: {who} already plays {:.2} dB below its original level, and a resistor can only make it quieter.", fit.part, -fit.excess_db));
            } else if fit.is_none() {
                notes.push(format!("{} was not needed: {who} matches its original level without it.", fit.part));
            } else {
                let rating = rating_of(&fit.part).map(|(w, _)| format!(", rated {} W,", trim_number(w, 3))).unwrap_or_default();
                let how = if fit.shunt { format!("across {who}") } else { format!("in {place}") };
                let why = if explained { "" } else { ": the new parts lose less energy than the old ones did" };
                explained = true;
                notes.push(format!(
                    "Without {}, {who} would have played {:.2} dB louder than designed{why}. {}, {} {} resistor{rating} {how}, brings it back to within {:.2} dB of the original at every frequency of its band.",
                    fit.part,
                    fit.excess_db.max(0.0),
                    fit.part,
                    crate::units::a_or_an(fit.fitted_ohm),
                    ohm(fit.fitted_ohm),
                    fit.worst_db.abs()
                ));
            }
        }
        return CompensationData { basis, table: Table::default(), notes, alternatives: Table::default(), warnings: Vec::new() };
    }
    let rows = f
        .compensation
        .fits
        .iter()
        .map(|fit| {
            let rating = rating_of(&fit.part).map(|(w, chosen)| format!("{} W{}", trim_number(w, 3), if chosen { " (chosen)" } else { "" })).unwrap_or_else(|| "-".into());
            let fitted = if fit.fault {
                "fault".to_string()
            } else if fit.fitted_ohm.is_infinite() {
                "none (open)".to_string()
            } else if fit.is_none() {
                "none".to_string()
            } else {
                ohm(fit.fitted_ohm)
            };
            Row(vec![
                fit.part.clone(),
                fit.driver.clone(),
                if fit.exact_ohm.is_finite() { ohm(fit.exact_ohm) } else { "open".into() },
                fitted,
                fit.series.name().to_string(),
                format!("{:.3} dB", fit.residual_db),
                crate::results::signed_db3(fit.worst_db),
                rating,
            ])
        })
        .collect();
    for fit in &f.compensation.fits {
        notes.push(format!(
            "{} goes {}. It is fitted so {} plays at its {} level over {} - {}{}.",
            fit.part,
            fit.placement,
            fit.driver,
            fit.reference.adjective(),
            hz(Some(fit.band_hz[0])),
            hz(Some(fit.band_hz[1])),
            if fit.keeps_impedance { ", holding the impedance its filter sees to the reference's" } else { "" }
        ));
        if let Some(p) = &fit.pair {
            notes.push(format!(
                "Closer with stock E12 parts: {} {} {} = {} ({:.3} dB RMS).",
                ohm(p.a_ohm),
                if p.parallel { "in parallel with" } else { "in series with" },
                ohm(p.b_ohm),
                ohm(p.value_ohm),
                p.residual_db
            ));
        }
    }
    let alternatives = Table::new(
        &["Driver", "Alternative", "Residual RMS", "Crossover", "Against the plan"],
        f.compensation
            .alternatives
            .iter()
            .map(|a| Row(vec![a.driver.clone(), a.description.clone(), format!("{:.3} dB", a.residual_db), hz(a.crossover_hz), format!("{} {}", a.verdict, a.why_plan)]))
            .collect(),
    );
    let warnings = f.compensation.warnings.iter().map(|w| w.message.clone()).collect();
    CompensationData { basis, table: Table::new(&["Part", "Driver", "Exact", "Fitted", "Series", "Residual RMS", "Worst", "Rating"], rows), notes, alternatives, warnings }
}

fn parts(c: &Ctx) -> Table {
    let f = c.f;
    let (designed, found, left) = (&f.scenes.as_designed, &f.scenes.as_found, &f.scenes.as_left);
    // Every part in any scenario, in the order first seen.
    let mut names: Vec<&str> = Vec::new();
    for s in &f.scenes {
        for p in &s.network.parts {
            if !names.contains(&p.name.as_str()) {
                names.push(&p.name);
            }
        }
    }
    let rows = names
        .iter()
        .filter_map(|n| {
            let (d, fo, l) = (designed.network.part(n), found.network.part(n), left.network.part(n));
            let any = d.or(fo).or(l)?;
            // Nodes voicekeep made up exist only as left, where their labels are.
            let where_ = format!("{}, {} - {}", any.kind.name(), left.network.node_label(&any.between[0]), left.network.node_label(&any.between[1]));
            let t = |p: Option<&Part>| p.map(part_text).unwrap_or_else(|| "-".into());
            let change = match (fo, l) {
                (None, Some(_)) => "added".to_string(),
                (Some(_), None) => "removed".to_string(),
                (Some(a), Some(b)) if a != b => {
                    if c.job.changes.iter().any(|ch| matches!(&ch.step, ChangeStep::Replace { target, .. } if target == n)) {
                        format!("replaced{}", b.type_text.as_ref().map(|t| format!(" ({t})")).unwrap_or_default())
                    } else {
                        "changed".into()
                    }
                }
                _ if c.job.measured.iter().any(|m| m.target == *n) => "measured, kept".into(),
                _ => "kept".into(),
            };
            // A part the bench did not read is nominal as found: said so, not shown as a reading.
            let measured = c.job.measured.iter().any(|m| m.target == *n);
            let found_text = match (d, fo) {
                (Some(a), Some(b)) if a == b && !measured => "not measured (nominal)".to_string(),
                _ => t(fo),
            };
            let spec = l
                .or(fo)
                .map(|p| {
                    [p.type_text.clone(), rating_text(c, p), p.tolerance.map(|t| format!("{} %", trim_number(t * 100.0, 3)))].into_iter().flatten().collect::<Vec<_>>().join(", ")
                })
                .unwrap_or_default();
            Some(Row(vec![n.to_string(), where_, t(d), found_text, t(l), if spec.is_empty() { "-".into() } else { spec }, change]))
        })
        .collect();
    Table::new(&["Ref", "Kind and place", "As designed", "As found", "As left", "As left: type, rating, tolerance", "Change"], rows)
}

fn drivers(c: &Ctx) -> Table {
    use crate::model::{DriverModel, VoiceCoilInductance};
    let rows =
        c.f.scenes
            .as_left
            .network
            .drivers
            .iter()
            .map(|d| {
                let model = match &d.model {
                    DriverModel::Resistance(r) => format!("resistance {}", ohm(*r)),
                    DriverModel::VoiceCoil { re, inductance, resonance } => {
                        let mut s = format!("Re {}", ohm(*re));
                        match inductance {
                            VoiceCoilInductance::Simple(le) => s.push_str(&format!(", Le {}", format_si(*le, Quantity::Inductance, 3))),
                            VoiceCoilInductance::Leach { k, n } => s.push_str(&format!(", Leach K {} n {}", trim_number(*k, 3), trim_number(*n, 3))),
                            VoiceCoilInductance::None => {}
                        }
                        if let Some(r) = resonance {
                            s.push_str(&format!(", fs {}, Qms {}, Qes {}", format_si(r.fs, Quantity::Frequency, 3), trim_number(r.qms, 3), trim_number(r.qes, 3)));
                        }
                        s
                    }
                    DriverModel::Table(t) => format!("measured table {}", t.file),
                };
                Row(vec![
                    d.name.clone(),
                    d.role.name().into(),
                    model,
                    d.rated_power.map(|w| format!("{} W", trim_number(w, 3))).unwrap_or_else(|| "-".into()),
                    if d.inverted { "inverted".into() } else { "normal".into() },
                ])
            })
            .collect();
    Table::new(&["Driver", "Role", "Model as left", "Rated power", "Polarity"], rows)
}

fn stress_row(r: &StressRow) -> Row {
    let figure = match (r.peak_v, r.rms_a) {
        (Some(v), _) => format!("{} V peak", trim_number(v, 3)),
        (_, Some(a)) => format!("{} A RMS", trim_number(a, 3)),
        _ => "-".into(),
    };
    let rating = r
        .rating_w
        .map(|w| format!("{} W", trim_number(w, 3)))
        .or(r.rating_v.map(|v| format!("{} V", trim_number(v, 3))))
        .or(r.rating_a.map(|a| format!("{} A", trim_number(a, 3))))
        .unwrap_or_else(|| "-".into());
    Row(vec![
        r.scenario.label().into(),
        r.part.clone(),
        format!("{} W", trim_number(r.sine_w, 3)),
        format!("{} W", trim_number(r.programme_w, 3)),
        figure,
        rating,
        r.verdict.name().into(),
        r.reason.clone(),
    ])
}

fn stress(c: &Ctx) -> StressData {
    let f = c.f;
    let header = ["Scenario", "Part", "Sine", "Programme", "Peak V / RMS A", "Rating", "Verdict", "Reason"];
    let drivers = f
        .stress
        .drivers
        .iter()
        .filter(|d| d.scenario == Scenario::AsLeft)
        .map(|d| {
            Row(vec![
                d.driver.clone(),
                format!("{} W", trim_number(d.programme_w, 3)),
                format!("{} W near {}", trim_number(d.sine_w, 3), hz(Some(d.sine_at_hz))),
                d.rated_w.map(|w| format!("{} W", trim_number(w, 3))).unwrap_or_else(|| "-".into()),
                d.verdict.name().into(),
                d.reason.clone(),
            ])
        })
        .collect();
    StressData {
        basis: format!("{} Dissipation is in each part's own resistance (resistor value, capacitor ESR, inductor DCR).", f.stress.basis),
        table: Table::new(&header, f.stress.rows.iter().filter(|r| r.scenario == Scenario::AsLeft).map(stress_row).collect()),
        all: Table::new(&header, f.stress.rows.iter().map(stress_row).collect()),
        drivers: Table::new(&["Driver", "Programme", "Sine (worst)", "Rated", "Verdict", "Reason"], drivers),
    }
}

fn load(c: &Ctx) -> LoadData {
    let (job, f) = (c.job, c.f);
    let basis = format!(
        "input impedance at the amplifier terminals over {}; EPDR after Howard (Stereophile, 2007), closed form for a class-B stage; the rated-impedance rule of IEC 60268-5 (lowest |Z| at least 80 % of rated); {}",
        sweep_text(f),
        job.rated_impedance_basis()
    );
    let (ld, lf, ll) = (&f.loads.as_designed, &f.loads.as_found, &f.loads.as_left);
    if c.audience.plain() {
        let r = job.rated_impedance_ohm();
        let same = (ll.min_ohm - ld.min_ohm).abs() < 0.05 * ld.min_ohm;
        let compare = if same { "about the same as in the original design".to_string() } else { format!("against {} in the original design", ohm(ld.min_ohm)) };
        let advice = match amplifier_rating(ll.min_ohm) {
            Some(x) => format!("an amplifier its maker rates for {} speakers or lower", ohm(x)),
            None => "very few amplifiers".to_string(),
        };
        let verdict = if ll.verdict == crate::analysis::Verdict::Over {
            "too low for most amplifiers: check the amplifier maker's minimum load before use.".to_string()
        } else if !ll.rated_impedance_holds {
            format!("below the 80 % of its rated {} that IEC 60268-5 allows, so use {advice}, or keep the volume moderate.", ohm(r))
        } else if ll.demanding {
            format!("a demanding load at high volume; use {advice}.")
        } else {
            format!("a normal load for {advice}.")
        };
        let sentence = format!("The lowest impedance the speaker presents to the amplifier is {} (at {}), {compare}: {verdict}", ohm(ll.min_ohm), hz(Some(ll.min_at_hz)));
        return LoadData { basis, table: Table::default(), sentences: vec![sentence] };
    }
    let rows = Scenario::ALL
        .iter()
        .zip(&f.loads)
        .map(|(s, l)| {
            Row(vec![
                s.label().into(),
                format!("{} at {}", ohm(l.min_ohm), hz(Some(l.min_at_hz))),
                format!("{} at {}", ohm(l.epdr_min_ohm), hz(Some(l.epdr_at_hz))),
                if l.rated_impedance_holds { "holds".into() } else { "fails".into() },
                l.verdict.name().into(),
            ])
        })
        .collect();
    let change = format!(
        "From as found to as left the lowest impedance moves from {} to {} and the EPDR from {} to {}; the original design presents {} and {}.",
        ohm(lf.min_ohm),
        ohm(ll.min_ohm),
        ohm(lf.epdr_min_ohm),
        ohm(ll.epdr_min_ohm),
        ohm(ld.min_ohm),
        ohm(ld.epdr_min_ohm)
    );
    let mut verdict = ll.reason.clone();
    if let Some(first) = verdict.get(..1) {
        verdict = first.to_uppercase() + &verdict[1..];
    }
    LoadData { basis, table: Table::new(&["Scenario", "Lowest |Z|", "Lowest EPDR", "80 % rule", "Verdict"], rows), sentences: vec![format!("As left: {verdict}."), change] }
}

fn health(c: &Ctx) -> Table {
    Table::new(
        &["Part", "What the reading shows", "Effect of the whole reading"],
        c.f.health
            .iter()
            .map(|h| Row(vec![h.part.clone(), h.message.clone(), if h.effect_driver.is_empty() { "-".into() } else { format!("{} on {}", db(h.effect_db), h.effect_driver) }]))
            .collect(),
    )
}

fn tolerance(c: &Ctx) -> Option<ToleranceData> {
    let t = c.f.tolerance.as_ref()?;
    let dist = match t.distribution {
        crate::model::Distribution::Uniform => "a uniform distribution over each part's marked tolerance",
        crate::model::Distribution::Normal => "a normal distribution with the marked tolerance as two standard deviations",
    };
    Some(ToleranceData {
        basis: format!("{} Monte Carlo runs, seed {}, {dist}; levels relative to the original design's nominal", t.runs, t.seed),
        levels: Table::new(
            &["Scenario", "Driver", "5 %", "median", "95 %"],
            t.levels.iter().map(|l| Row(vec![l.scenario.label().to_string(), l.driver.clone(), db(l.p5_db), db(l.p50_db), db(l.p95_db)])).collect(),
        ),
        ranking: Table::new(
            &["Driver", "Part", "Level change per 1 % of value"],
            t.ranking
                .iter()
                .filter(|r| r.db_per_percent.abs() >= 0.001)
                .take(12)
                .map(|r| Row(vec![r.driver.clone(), r.part.clone(), format!("{:+.3} dB/%", r.db_per_percent)]))
                .collect(),
        ),
    })
}

/// The parts and drivers over their rating as left, by name.
fn over_as_left(f: &Findings) -> Vec<String> {
    let parts = f.stress.rows.iter().filter(|r| r.scenario == Scenario::AsLeft && r.verdict == crate::analysis::Verdict::Over).map(|r| r.part.clone());
    let drivers = f.stress.drivers.iter().filter(|d| d.scenario == Scenario::AsLeft && d.verdict == crate::analysis::Verdict::Over).map(|d| d.driver.clone());
    parts.chain(drivers).collect()
}

/// Cautions for this report's reader: the customer and the buyer need the amplifier, the
/// load and listening levels; the archive keeps every caution of the bench as well.
/// The nominal load an amplifier should be rated for to drive a speaker whose impedance
/// falls to `min_ohm`: the highest of 8, 6, 4 and 2 ohm whose 80 % floor (IEC 60268-5) the
/// dip stays above; None when it falls below even 2 ohm's.
fn amplifier_rating(min_ohm: f64) -> Option<f64> {
    [8.0, 6.0, 4.0, 2.0].into_iter().find(|r| min_ohm >= crate::analysis::load::rated_floor(*r))
}

fn safety(c: &Ctx) -> Vec<String> {
    let (job, f) = (c.job, c.f);
    let a = &job.amplifier;
    let mut s = Vec::new();
    let over = over_as_left(f);
    if c.audience.plain() {
        s.push("These figures are calculated from the parts' values and readings; the shop confirms them by measurement.".to_string());
        s.push(format!(
            "Amplifier: use one of up to {} W into {} ohm, the power these figures assume. A more powerful amplifier, or one driven into clipping, can damage the drivers and the crossover; turn the volume down if the sound hardens or distorts.",
            trim_number(a.power_w, 3),
            trim_number(a.into_ohm, 3)
        ));
        s.push(match amplifier_rating(f.loads.as_left.min_ohm) {
            Some(r) => format!("Load: use an amplifier its maker rates for {} speakers or lower.", ohm(r)),
            None => "Load: the speaker's impedance falls too low for most amplifiers; ask the shop before use.".to_string(),
        });
        if !over.is_empty() {
            s.push(format!(
                "{} would run above {} rating at that amplifier's full power: keep the volume moderate until the shop fits a higher-rated part.",
                join_and(&over),
                if over.len() == 1 { "its" } else { "their" }
            ));
        }
        s.push("Listening levels: long sessions at high volume damage hearing for good; keep levels moderate and take breaks.".into());
        s.push("Follow local electrical codes, the amplifier's and the speaker's makers' ratings, and qualified service practice.".into());
        return s;
    }
    s.push("All figures here are computed from the job's values and models; confirm them by measurement before relying on them.".to_string());
    let as_left = |r: &&StressRow| r.scenario == Scenario::AsLeft && r.kind == PartKind::Resistor && r.programme_w > 0.0;
    let resistors: Vec<&StressRow> = f.stress.rows.iter().filter(as_left).collect();
    if !resistors.is_empty() {
        s.push("Crossover resistors get hot. Mount them clear of capacitors, wiring and wadding, with space for air; rate them at least twice their programme dissipation (common practice).".into());
        let tone: Vec<String> = resistors
            .iter()
            .filter(|r| r.rating_w.is_some_and(|w| r.sine_w > w))
            .map(|r| {
                format!(
                    "{} ({} W near {} in {} {} W part)",
                    r.part,
                    trim_number(r.sine_w, 3),
                    hz(Some(r.sine_at_hz)),
                    crate::units::a_or_an(r.rating_w.unwrap_or(0.0)),
                    trim_number(r.rating_w.unwrap_or(0.0), 3)
                )
            })
            .collect();
        if !tone.is_empty() {
            s.push(format!(
                "A full-level test tone would overheat {}: ratings chosen here cover programme, not a sustained sine, so keep bench tones low and short.",
                join_and(&tone)
            ));
        }
    }
    if !over.is_empty() {
        s.push(format!(
            "As left, {} {} over {} rating at the stated amplifier power: keep the level down until {} replaced with a suitably rated part.",
            join_and(&over),
            if over.len() == 1 { "is" } else { "are" },
            if over.len() == 1 { "its" } else { "their" },
            if over.len() == 1 { "it is" } else { "they are" }
        ));
    }
    if f.scenes.as_left.network.parts.iter().any(|p| p.kind == PartKind::Capacitor) {
        s.push("Use only non-polarised capacitors in a crossover (film, or bipolar electrolytic): a polarised electrolytic fitted there can fail, overheat or vent.".into());
    }
    s.push("The amplifier's load is given in the load section above; follow the amplifier maker's minimum load rating.".into());
    s.push("Disconnect the amplifier before working on the crossover, and let large capacitors in the amplifier discharge as its maker describes.".into());
    s.push(
        "Bench tests: start at a low level, keep test tones short, and wear hearing protection near the drivers; a tweeter driven with a full-level sine can fail in seconds."
            .into(),
    );
    s.push("Soldering: work in a ventilated place, extract the fumes, and wash your hands after handling old parts and solder.".into());
    s.push("These notes defer to local electrical codes, to the amplifier's and drivers' makers' ratings, and to qualified service practice.".into());
    s
}

fn inputs(c: &Ctx) -> Table {
    Table::new(&["File", "Size", "SHA-256"], c.job.inputs.iter().map(|i| Row(vec![i.name.clone(), format!("{} bytes", i.bytes.len()), sha256(&i.bytes)])).collect())
}

/// The files attached inside the PDF. The sale sheet carries none of them: the job file
/// names the previous owner.
fn attachments(c: &Ctx) -> Vec<Attachment> {
    if c.audience == Audience::Sale {
        return Vec::new();
    }
    c.job.inputs.iter().enumerate().map(|(i, inp)| Attachment { name: inp.name.clone(), file: format!("/inputs/{i}"), mime: mime(&inp.name).into() }).collect()
}
