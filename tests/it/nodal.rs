//! An independent nodal solver for the tests: textbook element impedances (a capacitor's ESR
//! or tan delta, an inductor's DCR, Small's driver model, a measured table interpolated in
//! log frequency) stamped into a dense complex admittance matrix and solved by Gauss-Jordan
//! elimination with partial pivoting. It shares no code with voicekeep's engine, so a level it
//! agrees with was not checked against itself.

use num_complex::Complex64 as C;
use std::f64::consts::PI;
use voicekeep::model::{DriverModel, Network, PartKind, VoiceCoilInductance};

fn part_z(kind: PartKind, value: f64, esr: f64, tan_delta: Option<f64>, dcr: f64, w: f64) -> C {
    match kind {
        PartKind::Resistor => C::new(value, 0.0),
        PartKind::Inductor => C::new(dcr, w * value),
        PartKind::Capacitor => {
            let x = 1.0 / (w * value);
            C::new(tan_delta.map(|d| d * x).unwrap_or(esr), -x)
        }
    }
}

fn driver_z(m: &DriverModel, f: f64) -> C {
    let w = 2.0 * PI * f;
    match m {
        DriverModel::Resistance(r) => C::new(*r, 0.0),
        DriverModel::VoiceCoil { re, inductance, resonance } => {
            let coil = match inductance {
                VoiceCoilInductance::None => C::new(0.0, 0.0),
                VoiceCoilInductance::Simple(le) => C::new(0.0, w * le),
                VoiceCoilInductance::Leach { k, n } => C::new(0.0, w).powf(*n) * k,
            };
            // Small 1972: Res || Lces || Cmes with Res = Re Qms/Qes, Lces = Re/(w_s Qes),
            // Cmes = Qes/(w_s Re).
            let motional = resonance.as_ref().map(|r| {
                let ws = 2.0 * PI * r.fs;
                let (res, lces, cmes) = (re * r.qms / r.qes, re / (ws * r.qes), r.qes / (ws * re));
                1.0 / (C::new(1.0 / res, 0.0) + 1.0 / C::new(0.0, w * lces) + C::new(0.0, w * cmes))
            });
            C::new(*re, 0.0) + coil + motional.unwrap_or_default()
        }
        DriverModel::Table(t) => {
            let i = t.freq_hz.iter().position(|x| *x >= f).unwrap_or(t.freq_hz.len() - 1).max(1);
            let (f0, f1) = (t.freq_hz[i - 1], t.freq_hz[i]);
            let s = ((f / f0).ln() / (f1 / f0).ln()).clamp(0.0, 1.0);
            let mag = (t.ohm[i - 1].ln() * (1.0 - s) + t.ohm[i].ln() * s).exp();
            let ph = t.phase_deg[i - 1] * (1.0 - s) + t.phase_deg[i] * s;
            C::from_polar(mag, ph.to_radians())
        }
    }
}

/// The voltage across `driver` per volt of EMF behind `source_ohm`, at `f` Hz.
pub fn driver_ratio(net: &Network, source_ohm: f64, driver: &str, f: f64) -> C {
    let w = 2.0 * PI * f;
    let mut names: Vec<String> = vec![net.input[1].clone()];
    let mut branches: Vec<(usize, usize, C)> = Vec::new();
    fn id(n: &str, names: &mut Vec<String>) -> usize {
        match names.iter().position(|x| x == n) {
            Some(i) => i,
            None => {
                names.push(n.to_string());
                names.len() - 1
            }
        }
    }
    let src = id(&net.input[0], &mut names);
    for p in &net.parts {
        let (a, b) = (id(&p.between[0], &mut names), id(&p.between[1], &mut names));
        branches.push((a, b, part_z(p.kind, p.value, p.esr, p.tan_delta, p.dcr, w)));
    }
    let mut target = (0, 0);
    for d in &net.drivers {
        let (a, b) = (id(&d.between[0], &mut names), id(&d.between[1], &mut names));
        if d.name == driver {
            target = (a, b);
        }
        branches.push((a, b, driver_z(&d.model, f)));
    }
    // The EMF node behind the output impedance; with none, the input node is the EMF.
    let (n, e) = if source_ohm > 0.0 { (names.len() + 1, names.len()) } else { (names.len(), src) };
    if source_ohm > 0.0 {
        branches.push((e, src, C::new(source_ohm, 0.0)));
    }
    let mut m = vec![vec![C::new(0.0, 0.0); n + 1]; n];
    for (a, b, z) in branches {
        let y = 1.0 / z;
        for (i, j, s) in [(a, a, 1.0), (b, b, 1.0), (a, b, -1.0), (b, a, -1.0)] {
            m[i][j] += y * s;
        }
    }
    // Node 0 is the reference; the EMF node is held at 1 V.
    for row in m.iter_mut() {
        row[0] = C::new(0.0, 0.0);
    }
    m[0] = vec![C::new(0.0, 0.0); n + 1];
    m[0][0] = C::new(1.0, 0.0);
    m[e] = vec![C::new(0.0, 0.0); n + 1];
    m[e][e] = C::new(1.0, 0.0);
    m[e][n] = C::new(1.0, 0.0);
    let v = gauss_jordan(m);
    v[target.0] - v[target.1]
}

fn gauss_jordan(mut m: Vec<Vec<C>>) -> Vec<C> {
    let n = m.len();
    for col in 0..n {
        let piv = (col..n).max_by(|a, b| m[*a][col].norm().total_cmp(&m[*b][col].norm())).unwrap();
        m.swap(col, piv);
        let p = m[col][col];
        for x in m[col].iter_mut() {
            *x /= p;
        }
        let pivot_row = m[col].clone();
        for (r, row) in m.iter_mut().enumerate() {
            if r != col {
                let k = row[col];
                if k.norm() > 0.0 {
                    for (x, p) in row.iter_mut().zip(&pivot_row) {
                        *x -= k * p;
                    }
                }
            }
        }
    }
    m.iter().map(|row| row[n]).collect()
}
