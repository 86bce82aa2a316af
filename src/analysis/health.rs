//! Part health from the bench readings: values outside tolerance, capacitor loss above what
//! its type normally shows, inductor DCR risen; each with the size of its effect on the
//! driver's level.

use crate::analysis::{mean_over, Band, Scene};
use crate::engine::{self, Circuit};
use crate::model::{Job, Part, PartKind, Patch};

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Flag {
    pub part: String,
    pub message: String,
    /// The largest change of any driver's band level that this one reading causes (dB).
    pub effect_db: f64,
    pub effect_driver: String,
}

/// Typical upper dissipation factor by capacitor type near 1 kHz. Film figures are the film
/// makers' dielectric guides; electrolytic ones the makers' general specifications at 120 Hz
/// (check-values.md). We flag at twice these (common practice: a margin for the meter).
fn typical_tan_delta(type_text: &str, rating_v: Option<f64>) -> Option<(f64, &'static str)> {
    let t = type_text.to_lowercase();
    if t.contains("polypropylene") || t.contains("pp ") || t == "pp" {
        Some((0.0005, "polypropylene film"))
    } else if t.contains("polyester") || t.contains("pet") || t.contains("mylar") {
        Some((0.008, "polyester film"))
    } else if t.contains("pps") {
        Some((0.002, "PPS film"))
    } else if t.contains("electrolytic") || t.contains("bipolar") || t.contains("np") {
        let v = rating_v.unwrap_or(50.0);
        let table = [(6.3, 0.22), (10.0, 0.19), (16.0, 0.16), (25.0, 0.14), (35.0, 0.12), (50.0, 0.10), (63.0, 0.09), (100.0, 0.08)];
        let d = table.iter().rev().find(|(rv, _)| v >= *rv).map(|(_, d)| *d).unwrap_or(0.22);
        Some((d, "aluminium electrolytic"))
    } else {
        None
    }
}

fn effect(job: &Job, freqs: &[f64], bands: &[Band], designed: &Scene, part: &str, apply: impl Fn(&mut Part)) -> (f64, String) {
    let mut net = job.network.clone();
    if let Some(p) = net.part_mut(part) {
        apply(p);
    }
    let Ok(c) = Circuit::from_network(&net, &job.amplifier) else { return (0.0, String::new()) };
    let mut ws = engine::Workspace::new(&c);
    let mut best = (0.0f64, String::new());
    for (di, d) in job.network.drivers.iter().enumerate() {
        let Some(k) = c.element(&d.name) else { continue };
        let lv: Vec<f64> =
            bands[di].idx.iter().map(|&i| engine::solve_point(&c, freqs[i], &mut ws).map(|()| 10.0 * ws.across(&c, k).norm_sqr().log10()).unwrap_or(f64::NAN)).collect();
        let m = lv.iter().sum::<f64>() / lv.len().max(1) as f64 - mean_over(&designed.db[di], &bands[di].idx);
        if m.is_finite() && m.abs() > best.0.abs() {
            best = (m, d.name.clone());
        }
    }
    best
}

pub fn flags(job: &Job, freqs: &[f64], bands: &[Band], scenes: &[Scene; 3]) -> Vec<Flag> {
    let mut out = Vec::new();
    for r in &job.measured {
        let Patch::Part(m) = &r.patch else { continue };
        let Some(p) = job.network.part(&r.target) else { continue };
        if let (Some(v), Some(t)) = (m.value, p.tolerance) {
            let dev = v / p.value - 1.0;
            if dev.abs() > t {
                let (e, d) = effect(job, freqs, bands, &scenes[0], &p.name, |q| q.value = v);
                out.push(Flag {
                    part: p.name.clone(),
                    message: format!("measures {:+.1} % from nominal, outside its {:.0} % tolerance", dev * 100.0, t * 100.0),
                    effect_db: e,
                    effect_driver: d,
                });
            }
        }
        if p.kind == PartKind::Capacitor {
            let at = m.at_hz.unwrap_or(1000.0);
            let c = m.value.unwrap_or(p.value);
            let td = match (m.tan_delta, m.esr) {
                (Some(d), _) => Some(d),
                (None, Some(esr)) => Some(2.0 * std::f64::consts::PI * at * c * esr),
                _ => None,
            };
            let rating = if let crate::model::Rating::Given(v) = p.rating { Some(v) } else { None };
            if let (Some(td), Some((typ, name))) = (td, p.type_text.as_deref().and_then(|t| typical_tan_delta(t, rating))) {
                if td > 2.0 * typ {
                    let (e, d) = effect(job, freqs, bands, &scenes[0], &p.name, |q| m.apply_reading(q));
                    out.push(Flag {
                        part: p.name.clone(),
                        message: format!(
                            "dissipation factor {:.3} at {} Hz is over twice the {:.4} typical of {}: the capacitor is ageing",
                            td,
                            crate::units::trim_number(at, 3),
                            typ,
                            name
                        ),
                        effect_db: e,
                        effect_driver: d,
                    });
                }
            }
        }
        if p.kind == PartKind::Inductor {
            if let Some(dcr) = m.dcr {
                if p.dcr > 0.0 && dcr > p.dcr * 1.1 {
                    let (e, d) = effect(job, freqs, bands, &scenes[0], &p.name, |q| q.dcr = dcr);
                    out.push(Flag {
                        part: p.name.clone(),
                        message: format!("DCR has risen {:.0} % (from {:.3} to {:.3} ohm): check its joints and windings", (dcr / p.dcr - 1.0) * 100.0, p.dcr, dcr),
                        effect_db: e,
                        effect_driver: d,
                    });
                }
            }
        }
    }
    out
}
