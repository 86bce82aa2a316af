//! A scenario's network as a SPICE netlist with an AC analysis, so any figure voicekeep prints
//! can be checked in a general-purpose circuit simulator (written for ngspice).
//!
//! Each element is written as SPICE holds it exactly: a capacitor with its ESR in series, an
//! inductor with its DCR, a resistor; a capacitor given by a loss tangent as a capacitance
//! C/(1 + tan²δ) in parallel with a conductance 2πf·C·tanδ/(1 + tan²δ) (a behavioural source
//! of ngspice's `hertz`), which is the same admittance at every frequency; a driver as Re, its
//! voice-coil inductance and Small's motional circuit, Res = Re·Qms/Qes, Lces = Re/(2π·fs·Qes),
//! Cmes = Qes/(2π·fs·Re) (R. H. Small, "Direct-radiator loudspeaker system analysis", JAES
//! 20(5), 1972). A driver given as a measured table, or with Leach's lossy coil, has no
//! element SPICE holds exactly: such a network is refused, naming the driver.

use std::collections::BTreeMap;
use std::fmt::Write;

use crate::model::{Amplifier, DriverModel, Fault, Network, PartKind, Sweep, VoiceCoilInductance};

#[derive(Debug, Clone, PartialEq)]
pub struct Refusal {
    pub what: String,
    pub message: String,
    pub hint: String,
}

/// A SPICE name for a node: the job's name when it is letters, digits and `_`, else `n` and
/// its number; the input's return is ground, `0`.
fn node_names(net: &Network) -> BTreeMap<String, String> {
    let mut all: Vec<&String> = net.parts.iter().flat_map(|p| p.between.iter()).chain(net.drivers.iter().flat_map(|d| d.between.iter())).chain(net.input.iter()).collect();
    all.sort();
    all.dedup();
    let mut out = BTreeMap::new();
    for (i, n) in all.into_iter().enumerate() {
        let name = if *n == net.input[1] {
            "0".to_string()
        } else if n.chars().all(|c| c.is_ascii_alphanumeric() || c == '_') && n != "0" {
            format!("n_{n}")
        } else {
            format!("n{i}")
        };
        out.insert(n.clone(), name);
    }
    out
}

/// An element name: the part's own where SPICE can read it.
fn element(prefix: char, name: &str, suffix: &str) -> String {
    let clean: String = name.chars().map(|c| if c.is_ascii_alphanumeric() { c } else { '_' }).collect();
    format!("{prefix}_{clean}{suffix}")
}

fn num(v: f64) -> String {
    format!("{v:.12e}")
}

/// A part or driver read open (no element) or shorted (a 0 V source) on the bench: written,
/// and true; false when it has no fault.
fn faulted(s: &mut String, fault: Option<Fault>, name: &str, a: &str, b: &str) -> bool {
    match fault {
        Some(Fault::Open) => {
            let _ = writeln!(s, "* {name} reads open: no element");
            true
        }
        Some(Fault::Shorted) => {
            let _ = writeln!(s, "{} {a} {b} DC 0 AC 0", element('V', name, "_short"));
            true
        }
        None => false,
    }
}

/// The netlist of `net` driven by `amp` (AC 1 V: every driver's voltage is its level re the
/// amplifier's EMF), with an AC analysis over `sweep` that writes each driver's voltage and the
/// input impedance to `data_file`.
pub fn spice(title: &str, net: &Network, amp: &Amplifier, sweep: &Sweep, data_file: &str) -> Result<String, Refusal> {
    let nodes = node_names(net);
    let n = |name: &str| nodes.get(name).cloned().unwrap_or_else(|| "0".into());
    let mut s = String::new();
    let _ = writeln!(s, "* voicekeep {} netlist: {title}", crate::results::VERSION);
    let _ = writeln!(s, "* AC 1 V at the amplifier's EMF: each driver's voltage is its level re the EMF; zin is the impedance at the terminals");
    for (job, spice) in &nodes {
        let _ = writeln!(s, "* node {job} = {spice}");
    }
    let input = n(&net.input[0]);
    if amp.output_ohm > 0.0 {
        let _ = writeln!(s, "V_amp n_emf 0 AC 1");
        let _ = writeln!(s, "R_amp n_emf {input} {}", num(amp.output_ohm));
    } else {
        let _ = writeln!(s, "V_amp {input} 0 AC 1");
    }
    for p in &net.parts {
        let (a, b) = (n(&p.between[0]), n(&p.between[1]));
        if faulted(&mut s, p.fault, &p.name, &a, &b) {
            continue;
        }
        if !p.value.is_finite() {
            let _ = writeln!(s, "* {} is not fitted (open): no element", p.name);
            continue;
        }
        let mid = format!("n_{}_x", element('x', &p.name, "").trim_start_matches("x_"));
        match p.kind {
            PartKind::Resistor if p.value == 0.0 => {
                let _ = writeln!(s, "{} {a} {b} DC 0 AC 0", element('V', &p.name, "_link"));
            }
            PartKind::Resistor => {
                let _ = writeln!(s, "{} {a} {b} {}", element('R', &p.name, ""), num(p.value));
            }
            PartKind::Inductor if p.dcr > 0.0 => {
                let _ = writeln!(s, "{} {a} {mid} {}", element('L', &p.name, ""), num(p.value));
                let _ = writeln!(s, "{} {mid} {b} {}", element('R', &p.name, "_dcr"), num(p.dcr));
            }
            PartKind::Inductor => {
                let _ = writeln!(s, "{} {a} {b} {}", element('L', &p.name, ""), num(p.value));
            }
            PartKind::Capacitor => match p.tan_delta {
                Some(d) => {
                    let k = 1.0 + d * d;
                    let _ = writeln!(s, "{} {a} {b} {}", element('C', &p.name, ""), num(p.value / k));
                    let _ = writeln!(s, "{} {a} {b} I=V({a},{b})*2*pi*hertz*{}", element('B', &p.name, "_loss"), num(p.value * d / k));
                }
                None if p.esr > 0.0 => {
                    let _ = writeln!(s, "{} {a} {mid} {}", element('C', &p.name, ""), num(p.value));
                    let _ = writeln!(s, "{} {mid} {b} {}", element('R', &p.name, "_esr"), num(p.esr));
                }
                None => {
                    let _ = writeln!(s, "{} {a} {b} {}", element('C', &p.name, ""), num(p.value));
                }
            },
        }
    }
    for d in &net.drivers {
        let (a, b) = (n(&d.between[0]), n(&d.between[1]));
        if faulted(&mut s, d.fault, &d.name, &a, &b) {
            continue;
        }
        let refuse = |why: &str| Refusal {
            what: d.name.clone(),
            message: format!("driver {} is {why}, which no SPICE element holds exactly", d.name),
            hint: "give it Small's model (re, le, fs, qms, qes) to export this network, or check it in voicekeep alone".into(),
        };
        let (re, inductance, resonance) = match &d.model {
            DriverModel::Resistance(r) => {
                let _ = writeln!(s, "{} {a} {b} {}", element('R', &d.name, "_re"), num(*r));
                continue;
            }
            DriverModel::Table(_) => return Err(refuse("given as a measured impedance table")),
            DriverModel::VoiceCoil { re, inductance, resonance } => (*re, inductance, resonance),
        };
        let le = match inductance {
            VoiceCoilInductance::Leach { .. } => return Err(refuse("given Leach's lossy voice coil (K, n)")),
            VoiceCoilInductance::Simple(le) => Some(*le),
            VoiceCoilInductance::None => None,
        };
        let n1 = format!("n_{}_1", element('x', &d.name, "").trim_start_matches("x_"));
        let n2 = format!("n_{}_2", element('x', &d.name, "").trim_start_matches("x_"));
        let _ = writeln!(s, "{} {a} {n1} {}", element('R', &d.name, "_re"), num(re));
        let after_le = if resonance.is_some() { n2.clone() } else { b.clone() };
        match le {
            Some(le) if le > 0.0 => {
                let _ = writeln!(s, "{} {n1} {after_le} {}", element('L', &d.name, "_le"), num(le));
            }
            _ => {
                let _ = writeln!(s, "{} {n1} {after_le} DC 0 AC 0", element('V', &d.name, "_le0"));
            }
        }
        if let Some(r) = resonance {
            let w = 2.0 * std::f64::consts::PI * r.fs;
            let _ = writeln!(s, "{} {n2} {b} {}", element('R', &d.name, "_es"), num(re * r.qms / r.qes));
            let _ = writeln!(s, "{} {n2} {b} {}", element('L', &d.name, "_ces"), num(re / (w * r.qes)));
            let _ = writeln!(s, "{} {n2} {b} {}", element('C', &d.name, "_mes"), num(r.qes / (w * re)));
        }
    }
    let _ = writeln!(s, ".control");
    let _ = writeln!(s, "set wr_singlescale");
    let _ = writeln!(s, "set wr_vecnames");
    let _ = writeln!(s, "set numdgt=15");
    match sweep {
        Sweep::Log { from, to, per_octave } if per_octave.fract() == 0.0 => {
            let _ = writeln!(s, "ac oct {} {} {}", *per_octave as u64, num(*from), num(*to));
        }
        Sweep::Log { from, to, .. } => {
            let _ = writeln!(s, "ac dec 50 {} {}", num(*from), num(*to));
        }
        Sweep::Points(p) => {
            let (lo, hi) = (p.iter().cloned().fold(f64::INFINITY, f64::min), p.iter().cloned().fold(0.0, f64::max));
            let _ = writeln!(s, "ac dec 50 {} {}", num(lo), num(hi));
        }
    }
    let mut vectors = Vec::new();
    for d in &net.drivers {
        let v = format!("v_{}", element('x', &d.name, "").trim_start_matches("x_"));
        let (a, b) = (n(&d.between[0]), n(&d.between[1]));
        let expr = match (a.as_str(), b.as_str()) {
            (_, "0") => format!("v({a})"),
            ("0", _) => format!("-v({b})"),
            _ => format!("v({a})-v({b})"),
        };
        let _ = writeln!(s, "let {v} = {expr}");
        vectors.push(v);
    }
    let _ = writeln!(s, "let zin = v({input})/(-i(V_amp))");
    let _ = writeln!(s, "wrdata {data_file} {} zin", vectors.join(" "));
    let _ = writeln!(s, "quit");
    let _ = writeln!(s, ".endc");
    let _ = writeln!(s, ".end");
    Ok(s)
}
