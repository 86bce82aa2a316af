//! Part health from the bench readings: values outside tolerance (the job's, or the usual one
//! for the part's type), parts that read open or shorted, a capacitor's ESR risen or its loss
//! above what its type allows at the frequency its makers state it, inductor DCR risen. One
//! entry for every part read (healthy ones too), with the effect of that part's whole
//! reading on the driver it moves most.

use crate::analysis::{driver_levels, mean_over, Band, Scene};
use crate::model::{Amplifier, Part, PartKind, PartPatch, Patch, Rating, Reading};
use crate::units::{format_si, hz, ohm, trim_number, Quantity};

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Flag {
    pub part: String,
    /// The reading shows nothing wrong: within tolerance and its type's limits.
    pub ok: bool,
    /// Each thing the reading shows, as a sentence; together they are one reading.
    pub findings: Vec<String>,
    /// The findings joined, for one line of text.
    pub message: String,
    /// The largest change of any driver's band level that this part's whole reading causes
    /// on the original design (dB).
    pub effect_db: f64,
    pub effect_driver: String,
}

/// A capacitor type's loss limit: the largest dissipation factor its makers allow, the
/// frequency they state it at, and the type's usual capacitance tolerance.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TypeLimits {
    pub name: &'static str,
    pub tan_delta: f64,
    pub at_hz: f64,
    pub tolerance: f64,
}

/// Loss limits by capacitor type. Films: the film makers' dielectric guides, stated at 1 kHz.
/// Aluminium electrolytics: the makers' general specifications by rated voltage, stated at
/// 120 Hz as IEC 60384-4 has it (the standard's clause recalled from memory). Usual
/// tolerances (common practice): electrolytics 20 %, polyester 10 %, polypropylene and PPS 5 %.
pub fn type_limits(type_text: &str, rating_v: Option<f64>) -> Option<TypeLimits> {
    let t = type_text.to_lowercase();
    let film = |name, tan_delta, tolerance| Some(TypeLimits { name, tan_delta, at_hz: 1000.0, tolerance });
    if t.contains("polypropylene") || t.split_whitespace().any(|w| w == "pp") {
        film("polypropylene film", 0.0005, 0.05)
    } else if t.contains("polyester") || t.contains("pet") || t.contains("mylar") {
        film("polyester film", 0.008, 0.10)
    } else if t.contains("pps") {
        film("PPS film", 0.002, 0.05)
    } else if t.contains("electrolytic") || t.contains("bipolar") || t.split_whitespace().any(|w| w == "np") {
        let v = rating_v.unwrap_or(50.0);
        let table = [(6.3, 0.22), (10.0, 0.19), (16.0, 0.16), (25.0, 0.14), (35.0, 0.12), (50.0, 0.10), (63.0, 0.09), (100.0, 0.08)];
        let d = table.iter().rev().find(|(rv, _)| v >= *rv).map(|(_, d)| *d).unwrap_or(0.22);
        Some(TypeLimits { name: "aluminium electrolytic", tan_delta: d, at_hz: 120.0, tolerance: 0.20 })
    } else {
        None
    }
}

/// The tolerance a reading is judged against, and where it comes from.
fn tolerance_of(p: &Part) -> (f64, String) {
    if let Some(t) = p.tolerance {
        return (t, format!("its {} % tolerance", trim_number(t * 100.0, 3)));
    }
    let rating = if let Rating::Given(v) = p.rating { Some(v) } else { None };
    let usual = match p.kind {
        PartKind::Capacitor => p
            .type_text
            .as_deref()
            .and_then(|t| type_limits(t, rating))
            .map(|l| (l.tolerance, format!("the {} % usual for {}", trim_number(l.tolerance * 100.0, 3), article(l.name)))),
        _ => None,
    };
    usual.unwrap_or_else(|| {
        let t = match p.kind {
            PartKind::Capacitor => 0.10,
            PartKind::Inductor | PartKind::Resistor => 0.05,
        };
        (
            t,
            format!(
                "the {} % usual for {} {} (no tolerance in the job; common practice)",
                trim_number(t * 100.0, 3),
                if p.kind == PartKind::Inductor { "an" } else { "a" },
                p.kind.name()
            ),
        )
    })
}

fn article(name: &str) -> String {
    if name.starts_with(['a', 'e', 'i', 'o', 'u']) {
        format!("an {name}")
    } else {
        format!("a {name}")
    }
}

fn quantity(kind: PartKind) -> Quantity {
    match kind {
        PartKind::Capacitor => Quantity::Capacitance,
        PartKind::Inductor => Quantity::Inductance,
        PartKind::Resistor => Quantity::Resistance,
    }
}

/// A value reading far from nominal, in words: a factor of ten either way is not drift.
fn gross(p: &Part, v: f64) -> Option<String> {
    let ratio = v / p.value;
    let read = format!("reads {} against {} nominal", format_si(v, quantity(p.kind), 3), format_si(p.value, quantity(p.kind), 3));
    match p.kind {
        PartKind::Resistor if ratio > 10.0 => Some(format!("{read}: it is open or burnt out and must be replaced")),
        PartKind::Resistor if ratio < 0.1 => Some(format!("{read}: it is shorted (or the reading was taken across a short) and must be replaced")),
        PartKind::Capacitor if ratio < 0.1 => Some(format!("{read}: it has lost nearly all its capacitance (open or dried out) and must be replaced")),
        PartKind::Capacitor if ratio > 10.0 => Some(format!("{read}: the reading is implausible for this part; measure it again out of circuit")),
        PartKind::Inductor if ratio < 0.1 => Some(format!("{read}: it has shorted turns and must be replaced")),
        PartKind::Inductor if ratio > 10.0 => Some(format!("{read}: the reading is implausible for this part; measure it again out of circuit")),
        _ => None,
    }
}

/// The change of each driver's band level when `apply` is made to the original design; the
/// largest, with its driver.
/// Each driver's band-level change (network order) when `reading` alone is applied to the
/// original design: what that one reading does, whatever else was read.
pub fn reading_shift(reading: &Reading, amp: &Amplifier, freqs: &[f64], bands: &[Band], designed: &Scene) -> Vec<f64> {
    let net = crate::model::found(&designed.network, std::slice::from_ref(reading));
    let Ok(db) = driver_levels(&net, amp, freqs) else { return vec![0.0; designed.network.drivers.len()] };
    (0..designed.network.drivers.len()).map(|di| mean_over(&db[di], &bands[di].idx) - mean_over(&designed.db[di], &bands[di].idx)).collect()
}

/// The largest of a reading's shifts, with its driver.
fn effect(reading: &Reading, amp: &Amplifier, freqs: &[f64], bands: &[Band], designed: &Scene) -> (f64, String) {
    let mut best = (0.0f64, String::new());
    for (m, d) in reading_shift(reading, amp, freqs, bands, designed).into_iter().zip(&designed.network.drivers) {
        if m.is_finite() && m.abs() > best.0.abs() {
            best = (m, d.name.clone());
        }
    }
    best
}

/// What one part's reading shows, as sentences.
fn findings(p: &Part, m: &PartPatch) -> Vec<String> {
    let mut out = Vec::new();
    // Open or shorted on the meter: said in words, not as a value's drift.
    match m.fault {
        Some(crate::model::Fault::Open) => return vec!["it reads open (no continuity across it) and must be replaced".into()],
        Some(crate::model::Fault::Shorted) => return vec!["it reads shorted (no resistance across it) and must be replaced".into()],
        None => {}
    }
    if let Some(v) = m.value {
        if let Some(g) = gross(p, v) {
            out.push(g);
        } else {
            let dev = v / p.value - 1.0;
            let (t, from) = tolerance_of(p);
            if dev.abs() > t {
                out.push(format!("measures {:+.1} % from nominal, outside {from}", dev * 100.0));
            }
        }
    }
    if p.kind == PartKind::Capacitor {
        let c = m.value.unwrap_or(p.value);
        let rating = if let Rating::Given(v) = p.rating { Some(v) } else { None };
        if let Some(l) = p.type_text.as_deref().and_then(|t| type_limits(t, rating)) {
            // The reading at the frequency the limit is stated at, by the job's loss model: a
            // constant ESR gives tan d = 2 pi f C ESR, a constant tan d is the same everywhere.
            let at_limit = match (m.tan_delta, m.esr) {
                (Some(d), _) => Some((d, format!("a constant dissipation factor of {}", trim_number(d, 3)))),
                (None, Some(esr)) => Some((
                    2.0 * std::f64::consts::PI * l.at_hz * c * esr,
                    format!("ESR {}{} taken as constant, as the job's loss model has it", ohm(esr), m.at_hz.map(|f| format!(" read at {}", hz(Some(f)))).unwrap_or_default()),
                )),
                _ => None,
            };
            // An ESR well above the design's, even inside the type's limit, is the part ageing
            // (common practice: half as much again).
            if let (Some(esr), None, true) = (m.esr, m.tan_delta, p.tan_delta.is_none() && p.esr > 0.0) {
                if esr > 1.5 * p.esr {
                    out.push(format!("its ESR has risen {:.0} % (from {} to {})", (esr / p.esr - 1.0) * 100.0, ohm(p.esr), ohm(esr)));
                }
            }
            // Twice the limit is flagged: a margin for the meter (common practice).
            if let Some((td, how)) = at_limit {
                if td > 2.0 * l.tan_delta {
                    out.push(format!(
                        "its dissipation factor at {} is {} ({how}), over twice the {} makers allow for {} there: the capacitor is ageing",
                        hz(Some(l.at_hz)),
                        trim_number(td, 3),
                        trim_number(l.tan_delta, 3),
                        article(l.name)
                    ));
                }
            }
        }
    }
    if p.kind == PartKind::Inductor {
        if let Some(dcr) = m.dcr {
            if p.dcr > 0.0 && dcr > 10.0 * p.dcr.max(0.05) {
                out.push(format!("its DCR reads {} against {} nominal: the winding is open or a joint has failed", ohm(dcr), ohm(p.dcr)));
            } else if p.dcr > 0.0 && dcr > p.dcr * 1.1 {
                out.push(format!("its DCR has risen {:.0} % (from {} to {}): check its joints and windings", (dcr / p.dcr - 1.0) * 100.0, ohm(p.dcr), ohm(dcr)));
            }
        }
    }
    out
}

/// One entry per part read on the bench, judged against the design (`designed`, solved).
pub fn flags(measured: &[Reading], amp: &Amplifier, freqs: &[f64], bands: &[Band], designed: &Scene) -> Vec<Flag> {
    let mut out = Vec::new();
    for r in measured {
        let Patch::Part(m) = &r.patch else { continue };
        let Some(p) = designed.network.part(&r.target) else { continue };
        let found = findings(p, m);
        let ok = found.is_empty();
        let (effect_db, effect_driver) = effect(r, amp, freqs, bands, designed);
        let mut message = if ok { "within its tolerance and its type's limits".to_string() } else { found.join("; ") };
        if let Some(first) = message.get(..1) {
            message = first.to_uppercase() + &message[1..];
        }
        message.push('.');
        out.push(Flag { part: p.name.clone(), ok, findings: found, message, effect_db, effect_driver });
    }
    out
}
