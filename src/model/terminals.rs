//! Impedance sweeps measured at the speaker's terminals, before the work (as found) and after
//! it (as left), and the limits a prediction is confirmed within.

use super::{DriverModel, ImpedanceTable, Network, PartKind, VoiceCoilInductance};
use crate::units::Quantity;

/// How close a prediction must come to a sweep to be confirmed. The defaults are common
/// practice for a sound-card rig with a sense resistor, whose readings are good to a few per
/// cent and a few degrees.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct TerminalLimits {
    pub z_rms_pct: f64,
    pub z_worst_pct: f64,
    pub phase_rms_deg: f64,
}

impl Default for TerminalLimits {
    fn default() -> Self {
        TerminalLimits { z_rms_pct: 3.0, z_worst_pct: 10.0, phase_rms_deg: 5.0 }
    }
}

#[derive(Debug, Clone, PartialEq, Default)]
pub struct Terminals {
    pub as_found: Option<ImpedanceTable>,
    pub as_left: Option<ImpedanceTable>,
    pub limits: TerminalLimits,
    /// Where each sweep is named, and its field, for messages.
    pub places: Vec<(crate::diag::Pos, String)>,
    /// What to estimate from the as-found sweep: `C1` (its value and loss) or `C1.esr`, each
    /// with where it is written; empty with `diagnose_all`.
    pub diagnose: Vec<(String, crate::diag::Pos, String)>,
    pub diagnose_all: bool,
}

impl Terminals {
    pub fn is_empty(&self) -> bool {
        self.as_found.is_none() && self.as_left.is_none()
    }
}

// The parameters a sweep at the terminals can estimate, and the names a job gives them
// (`terminals.diagnose`): read by the job reader and the diagnosis alike.

/// One parameter of the network: a part's `value`, `esr` or `dcr`, or a driver's `re`,
/// `le`, `fs`, `qms`, `qes` or `resistance`.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Param {
    pub part: String,
    pub field: String,
}

impl Param {
    pub fn new(part: &str, field: &str) -> Param {
        Param { part: part.into(), field: field.into() }
    }

    /// The parameter's value in `net`, if it has one that can be fitted (finite, above 0).
    pub fn get(&self, net: &Network) -> Option<f64> {
        let v = if let Some(p) = net.part(&self.part) {
            if p.fault.is_some() {
                return None;
            }
            match (self.field.as_str(), p.kind) {
                ("value", _) => p.value,
                ("esr", PartKind::Capacitor) if p.tan_delta.is_none() => p.esr,
                ("dcr", PartKind::Inductor) => p.dcr,
                _ => return None,
            }
        } else {
            let d = net.driver(&self.part)?;
            match (&d.model, self.field.as_str()) {
                (DriverModel::Resistance(r), "resistance") => *r,
                (DriverModel::VoiceCoil { re, .. }, "re") => *re,
                (DriverModel::VoiceCoil { inductance: VoiceCoilInductance::Simple(le), .. }, "le") => *le,
                (DriverModel::VoiceCoil { resonance: Some(r), .. }, "fs") => r.fs,
                (DriverModel::VoiceCoil { resonance: Some(r), .. }, "qms") => r.qms,
                (DriverModel::VoiceCoil { resonance: Some(r), .. }, "qes") => r.qes,
                _ => return None,
            }
        };
        Some(v)
    }

    pub fn set(&self, net: &mut Network, v: f64) {
        if let Some(p) = net.part_mut(&self.part) {
            match self.field.as_str() {
                "value" => p.value = v,
                "esr" => p.esr = v,
                _ => p.dcr = v,
            }
            return;
        }
        let Some(d) = net.drivers.iter_mut().find(|d| d.name == self.part) else { return };
        match (&mut d.model, self.field.as_str()) {
            (DriverModel::Resistance(r), _) => *r = v,
            (DriverModel::VoiceCoil { re, .. }, "re") => *re = v,
            (DriverModel::VoiceCoil { inductance: VoiceCoilInductance::Simple(le), .. }, "le") => *le = v,
            (DriverModel::VoiceCoil { resonance: Some(r), .. }, "fs") => r.fs = v,
            (DriverModel::VoiceCoil { resonance: Some(r), .. }, "qms") => r.qms = v,
            (DriverModel::VoiceCoil { resonance: Some(r), .. }, "qes") => r.qes = v,
            _ => {}
        }
    }

    /// The unit the value is in, for the tables.
    pub fn quantity(&self, net: &Network) -> Option<Quantity> {
        match self.field.as_str() {
            "esr" | "dcr" | "re" | "resistance" => Some(Quantity::Resistance),
            "le" => Some(Quantity::Inductance),
            "fs" => Some(Quantity::Frequency),
            "qms" | "qes" => None,
            _ => match net.part(&self.part)?.kind {
                PartKind::Capacitor => Some(Quantity::Capacitance),
                PartKind::Inductor => Some(Quantity::Inductance),
                PartKind::Resistor => Some(Quantity::Resistance),
            },
        }
    }

    /// "C1 value", "LF re".
    pub fn name(&self) -> String {
        format!("{} {}", self.part, self.field)
    }
}

/// Every parameter of `net` a sweep could estimate: each part's value and its loss (ESR,
/// DCR), each driver's model parameters.
pub fn all_params(net: &Network) -> Vec<Param> {
    let mut out = Vec::new();
    for p in &net.parts {
        for field in ["value", "esr", "dcr"] {
            let q = Param::new(&p.name, field);
            if q.get(net).is_some_and(|v| v > 0.0) {
                out.push(q);
            }
        }
    }
    for d in &net.drivers {
        for field in ["resistance", "re", "le", "fs", "qms", "qes"] {
            let q = Param::new(&d.name, field);
            if q.get(net).is_some_and(|v| v > 0.0) {
                out.push(q);
            }
        }
    }
    out
}

/// The parameters `C1` (a part's value and its loss; a driver's model parameters) or
/// `C1.esr` (one field) name in `net`; or a message and a hint.
pub fn params_named(net: &Network, name: &str) -> Result<Vec<Param>, (String, String)> {
    let (who, field) = match name.split_once('.') {
        Some((a, b)) => (a, Some(b)),
        None => (name, None),
    };
    if net.part(who).is_none() && net.driver(who).is_none() {
        let mut names: Vec<&str> = net.parts.iter().map(|p| p.name.as_str()).collect();
        names.extend(net.drivers.iter().map(|d| d.name.as_str()));
        let hint = match crate::diag::suggest(who, names.iter().copied()) {
            Some(s) => format!("did you mean `{s}`?"),
            None => format!("name a part or driver of the network: {}", names.join(", ")),
        };
        return Err((format!("there is no part or driver \"{who}\" to estimate"), hint));
    }
    let all: Vec<Param> = all_params(net).into_iter().filter(|p| p.part == who).collect();
    match field {
        None if all.is_empty() => {
            Err((format!("{who} has nothing a sweep can estimate (an open or shorted part, or a driver given as a table)"), "leave it out of `diagnose`".into()))
        }
        None => Ok(all),
        Some(f) => match all.iter().find(|p| p.field == f) {
            Some(p) => Ok(vec![p.clone()]),
            None => {
                let fields: Vec<&str> = all.iter().map(|p| p.field.as_str()).collect();
                Err((
                    format!("{who} has no `{f}` to estimate"),
                    format!("{who}'s fields a sweep can estimate: {}", if fields.is_empty() { "none".into() } else { fields.join(", ") }),
                ))
            }
        },
    }
}

/// What the job's `terminals.diagnose` asks for (every parameter with `all`), each once.
pub fn params_of(net: &Network, t: &crate::model::terminals::Terminals) -> Vec<Param> {
    if t.diagnose_all {
        return all_params(net);
    }
    let mut out: Vec<Param> = Vec::new();
    for (name, _, _) in &t.diagnose {
        for p in params_named(net, name).unwrap_or_default() {
            if !out.contains(&p) {
                out.push(p);
            }
        }
    }
    out
}
