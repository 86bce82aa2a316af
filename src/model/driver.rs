//! Drivers and their impedance models (a plain resistance, a voice coil with Small's
//! resonance, a measured table), and the fields a reading or a replacement changes.

use crate::diag::Pos;

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
    /// How a Q the job did not give was derived from those it did, for the record.
    pub derived: Option<String>,
}

impl Resonance {
    /// The total Q: 1/Qts = 1/Qms + 1/Qes (Small 1972).
    pub fn qts(&self) -> f64 {
        self.qms * self.qes / (self.qms + self.qes)
    }
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
    /// A bench reading of the driver itself: open (no continuity across its voice coil) or
    /// shorted. A faulted driver plays nothing; the network sees it as a break or a link.
    pub fault: Option<super::Fault>,
    /// A fault found on the bench in words ("the voice coil rubs"); it changes no figure.
    pub fault_note: Option<String>,
    pub pos: Pos,
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
    /// Read open or shorted on the bench.
    pub fault: Option<super::Fault>,
    /// A fault in words.
    pub fault_note: Option<String>,
}

impl DriverPatch {
    pub fn apply(&self, d: &mut Driver) {
        if let Some(m) = &self.model {
            d.model = m.clone();
            // A new driver (a replacement) has none of the old one's faults.
            d.fault = None;
            d.fault_note = None;
        }
        if let Some(f) = self.fault {
            d.fault = Some(f);
            d.model = DriverModel::Resistance(match f {
                super::Fault::Open => super::Fault::OPEN_OHM,
                super::Fault::Shorted => super::Fault::SHORT_OHM,
            });
        }
        if let Some(t) = &self.fault_note {
            d.fault_note = Some(t.clone());
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
