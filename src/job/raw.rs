//! The job file as read, before cross-references are resolved: typed values with their
//! places wherever a value's meaning is its own (a part's value, a sweep, a band), and the
//! positioned YAML node wherever it depends on something elsewhere in the file (a reading's
//! `value` is a capacitance or an inductance according to the part it names). The parse
//! stage makes these and reports only problems of shape; the build stage resolves them.

use crate::diag::Pos;
use crate::job::yaml::{Key, Node};
use crate::model::{Amplifier, Analysis, Block, CompensateEntry, JobInfo, Part, Resonance, Role, VoiceCoilInductance};

/// A table file the job names, and where.
#[derive(Debug, Clone, PartialEq)]
pub struct TableRef {
    /// The path as written (relative to the job's folder).
    pub name: String,
    pub pos: Pos,
    /// The field path for messages (`network.drivers.MF.model.table`).
    pub field: String,
}

/// A driver model as written; a table is named, not yet read.
#[derive(Debug, Clone, PartialEq)]
pub enum RawModel {
    Resistance(f64),
    VoiceCoil { re: f64, inductance: VoiceCoilInductance, resonance: Option<Resonance> },
    Table(TableRef),
}

#[derive(Debug, Clone, PartialEq)]
pub struct RawDriver {
    pub name: String,
    pub pos: Pos,
    pub role: Role,
    pub between: [String; 2],
    pub model: RawModel,
    pub rated_power: Option<f64>,
    pub sensitivity: Option<f64>,
    pub response: Option<TableRef>,
    pub inverted: bool,
    pub note: Option<String>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct RawNetwork {
    pub input: [String; 2],
    pub input_pos: Pos,
    pub parts: Vec<Part>,
    pub drivers: Vec<RawDriver>,
}

/// A mapping whose fields are read against what its key names (a reading, a replacement).
#[derive(Debug, Clone, Copy)]
pub struct Entry<'n> {
    pub key: &'n Key,
    pub node: &'n Node,
}

#[derive(Debug, Clone)]
pub enum RawStep<'n> {
    /// `replace: TARGET` with the `with` mapping, read against the target's kind.
    Replace {
        target: String,
        target_pos: Pos,
        with: &'n Node,
        with_path: String,
    },
    Remove {
        target: String,
        target_pos: Pos,
    },
    Add {
        parts: Vec<Part>,
    },
    /// `insert:` one part whose `between` is a node and a part or driver, in either order.
    Insert {
        part: Box<Part>,
    },
}

#[derive(Debug, Clone)]
pub struct RawChange<'n> {
    /// 1-based position in the list, for messages.
    pub number: usize,
    pub pos: Pos,
    pub step: RawStep<'n>,
}

#[derive(Debug, Clone)]
pub struct RawCompensate {
    /// The entry as read; `part` and `driver` still to be found in the network.
    pub entry: CompensateEntry,
    pub driver_pos: Pos,
}

/// The template as written: a built-in's name, or a shop template's path and where.
#[derive(Debug, Clone, PartialEq)]
pub enum RawTemplate {
    Customer,
    Archive,
    Sale,
    Quote,
    Invoice,
    File { name: String, pos: Pos },
}

/// One cabinet of a pair or set as written: its readings and its own steps.
pub struct RawCabinet<'n> {
    pub name: String,
    pub pos: Pos,
    pub measured: Vec<Entry<'n>>,
    pub changes: Vec<RawChange<'n>>,
    pub terminals: crate::model::terminals::Terminals,
}

/// An option as written: its words, labour, and its own steps and compensate entries.
pub struct RawOption<'n> {
    pub name: String,
    pub pos: Pos,
    pub say: Option<String>,
    pub labour_hours: Option<f64>,
    pub changes: Vec<RawChange<'n>>,
    pub compensate: Vec<RawCompensate>,
}

pub struct RawJob<'n> {
    pub info: Option<JobInfo>,
    pub amplifier: Option<Amplifier>,
    pub network: Option<RawNetwork>,
    /// Whether every part and driver of the network was read (connection checks need all).
    pub network_whole: bool,
    pub measured: Vec<Entry<'n>>,
    pub changes: Vec<RawChange<'n>>,
    pub cabinets: Vec<RawCabinet<'n>>,
    pub compensate: Vec<RawCompensate>,
    /// The price list file and its currency.
    pub prices: Option<(TableRef, String)>,
    pub options: Vec<RawOption<'n>>,
    pub quote: crate::model::Quote,
    pub quote_recommend_pos: Option<Pos>,
    pub analysis: Option<Analysis>,
    pub template: RawTemplate,
    pub blocks: Option<Vec<Block>>,
    pub service: crate::model::service::Service,
    pub terminals: crate::model::terminals::Terminals,
    /// The shop settings file `job.shop.settings` names.
    pub shop_settings: Option<TableRef>,
    /// The logo `job.shop.logo` names (the settings file's `logo` when the job names none).
    pub shop_logo: Option<TableRef>,
}
