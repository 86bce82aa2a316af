//! Crossover parts: capacitors, inductors and resistors with their losses, tolerances and
//! ratings, and the fields a bench reading or a replacement changes.

use crate::diag::Pos;

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

/// A bench reading that found a part open or shorted rather than a value.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Fault {
    Open,
    Shorted,
}

impl Fault {
    /// An open part is solved as one whose series loss is this large (ohm), a shorted one as
    /// a link of [`Fault::SHORT_OHM`]: finite, so no figure becomes infinite or undefined.
    pub const OPEN_OHM: f64 = 1e12;
    pub const SHORT_OHM: f64 = 1e-3;

    pub fn name(self) -> &'static str {
        match self {
            Fault::Open => "open",
            Fault::Shorted => "shorted",
        }
    }
}

/// Where a part came from, as the shop records it: for a fitted part its maker, part
/// number, supplier and lot or date code; for an original part its markings.
#[derive(Debug, Clone, PartialEq, Default, serde::Serialize)]
pub struct Provenance {
    #[serde(skip_serializing_if = "Option::is_none")]
    pub maker: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub part_number: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub supplier: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub lot: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub markings: Option<String>,
}

impl Provenance {
    pub fn is_empty(&self) -> bool {
        *self == Provenance::default()
    }

    /// "maker Ardent, part no. MKP-33, from Lindell Supply, lot 2641", or "".
    pub fn text(&self) -> String {
        let mut out = Vec::new();
        if let Some(m) = &self.maker {
            out.push(format!("maker {m}"));
        }
        if let Some(p) = &self.part_number {
            out.push(format!("part no. {p}"));
        }
        if let Some(s) = &self.supplier {
            out.push(format!("from {s}"));
        }
        if let Some(l) = &self.lot {
            out.push(format!("lot {l}"));
        }
        if let Some(m) = &self.markings {
            out.push(format!("marked \"{m}\""));
        }
        out.join(", ")
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
    /// Open or shorted, as a bench reading found it.
    pub fault: Option<Fault>,
    /// Where it sits, in the shop's words ("tweeter filter, second section"), used in place
    /// of node names.
    pub section: Option<String>,
    pub provenance: Provenance,
    pub pos: Pos,
}

impl Part {
    /// A part with no loss, tolerance, rating or type yet.
    pub fn new(name: &str, kind: PartKind, between: [String; 2], value: f64, pos: Pos) -> Part {
        Part {
            name: name.into(),
            kind,
            between,
            value,
            auto_value: false,
            esr: 0.0,
            tan_delta: None,
            dcr: 0.0,
            tolerance: None,
            rating: Rating::None,
            type_text: None,
            fault: None,
            section: None,
            provenance: Provenance::default(),
            pos,
        }
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
    /// A reading of open or shorted in place of a value.
    pub fault: Option<Fault>,
    pub section: Option<String>,
    pub provenance: Provenance,
}

impl PartPatch {
    /// Applies a bench reading: only the measured fields change.
    pub fn apply_reading(&self, p: &mut Part) {
        if let Some(f) = self.fault {
            p.fault = Some(f);
            match (f, p.kind) {
                (Fault::Open, PartKind::Resistor) => p.value = Fault::OPEN_OHM,
                (Fault::Open, PartKind::Capacitor) => {
                    p.esr = Fault::OPEN_OHM;
                    p.tan_delta = None;
                }
                (Fault::Open, PartKind::Inductor) => p.dcr = Fault::OPEN_OHM,
                (Fault::Shorted, PartKind::Resistor) => p.value = Fault::SHORT_OHM,
                // A short across a capacitor: a reactance far below a milliohm in the audio
                // band, in series with the short's resistance.
                (Fault::Shorted, PartKind::Capacitor) => {
                    p.value = 1e3;
                    p.esr = Fault::SHORT_OHM;
                    p.tan_delta = None;
                }
                (Fault::Shorted, PartKind::Inductor) => {
                    p.value = 1e-12;
                    p.dcr = Fault::SHORT_OHM;
                }
            }
            return;
        }
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
        // A new part: not the old one's fault, its own provenance, the same place.
        p.fault = None;
        p.provenance = self.provenance.clone();
        if let Some(s) = &self.section {
            p.section = Some(s.clone());
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
            // A part of another type has that type's tolerance, not the old part's (a film
            // in place of an electrolytic is not a 10 % part).
            if p.type_text.as_deref() != Some(v.as_str()) && self.tolerance.is_none() {
                p.tolerance = None;
            }
            p.type_text = Some(v.clone());
        }
    }
}
