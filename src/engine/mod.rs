//! The circuit engine: modified nodal analysis over complex numbers at each frequency.
//!
//! Every element of a crossover is a two-terminal impedance, so the matrix holds node
//! voltages plus one branch current for the source (the amplifier's EMF behind its output
//! impedance) and one for each element whose impedance is exactly zero (a resistor being
//! fitted at 0 ohm). Networks here have 3 to 30 nodes, where a dense LU with partial pivoting
//! over a reused buffer needs no dependency and no allocation for the matrix. It has been
//! measured on its own only (`benches/solve.rs`: 1.85 us a point on the three-way reference
//! network against about 4.6 us for ngspice); a comparison with nalgebra, faer or a
//! tree-structured elimination has not been made yet and is the next step for the speed target.

pub mod driver;

use num_complex::Complex64;
use std::f64::consts::PI;
use std::fmt;

use crate::model::{Amplifier, DriverModel, Network, Part, PartKind};

/// What an element of the circuit is, with everything needed for its impedance.
#[derive(Debug, Clone, PartialEq)]
pub enum ElementModel {
    Resistor { r: f64 },
    Capacitor { c: f64, esr: f64, tan_delta: Option<f64> },
    Inductor { l: f64, dcr: f64 },
    Driver(DriverModel),
}

impl ElementModel {
    pub fn from_part(p: &Part) -> Self {
        match p.kind {
            PartKind::Resistor => ElementModel::Resistor { r: p.value },
            PartKind::Capacitor => ElementModel::Capacitor { c: p.value, esr: p.esr, tan_delta: p.tan_delta },
            PartKind::Inductor => ElementModel::Inductor { l: p.value, dcr: p.dcr },
        }
    }

    /// Impedance at frequency `f_hz`.
    pub fn impedance(&self, f_hz: f64) -> Complex64 {
        let w = 2.0 * PI * f_hz;
        match self {
            ElementModel::Resistor { r } => Complex64::new(*r, 0.0),
            ElementModel::Capacitor { c, esr, tan_delta } => {
                let loss = match tan_delta {
                    Some(d) => d / (w * c),
                    None => *esr,
                };
                Complex64::new(loss, -1.0 / (w * c))
            }
            ElementModel::Inductor { l, dcr } => Complex64::new(*dcr, w * l),
            ElementModel::Driver(m) => driver::impedance(m, f_hz),
        }
    }

    /// The resistance in which this element dissipates (for a driver, the real part of its
    /// impedance: the power it takes from the network).
    pub fn loss_ohm(&self, f_hz: f64) -> f64 {
        self.impedance(f_hz).re
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct Element {
    pub name: String,
    pub a: usize,
    pub b: usize,
    pub model: ElementModel,
    pub is_driver: bool,
}

/// A network ready to solve: nodes numbered, node 0 the reference (the amplifier's -).
#[derive(Debug, Clone, PartialEq)]
pub struct Circuit {
    pub nodes: Vec<String>,
    pub input: usize,
    pub source_ohm: f64,
    pub elements: Vec<Element>,
}

#[derive(Debug, Clone, PartialEq)]
pub enum SolveError {
    /// Nodes with no path to the reference; names the nodes and the parts touching them.
    Floating { nodes: Vec<String>, parts: Vec<String> },
    /// The matrix is singular at this frequency (a short across the source, a loop of
    /// zero-impedance parts).
    Singular { f_hz: f64, nodes: Vec<String>, parts: Vec<String> },
}

impl fmt::Display for SolveError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SolveError::Floating { nodes, parts } => write!(
                f,
                "node{} {} ha{} no path to the amplifier's return; parts involved: {}",
                if nodes.len() > 1 { "s" } else { "" },
                nodes.join(", "),
                if nodes.len() > 1 { "ve" } else { "s" },
                parts.join(", ")
            ),
            SolveError::Singular { f_hz, nodes, parts } => write!(
                f,
                "the network cannot be solved at {} Hz: the equations at node{} {} are singular (a short circuit or a loop of zero-impedance parts); parts involved: {}",
                crate::units::trim_number(*f_hz, 4),
                if nodes.len() > 1 { "s" } else { "" },
                nodes.join(", "),
                parts.join(", ")
            ),
        }
    }
}

impl std::error::Error for SolveError {}

impl Circuit {
    pub fn from_network(net: &Network, amp: &Amplifier) -> Result<Circuit, SolveError> {
        let mut nodes = vec![net.input[1].clone(), net.input[0].clone()];
        let index = |name: &str, nodes: &mut Vec<String>| match nodes.iter().position(|n| n == name) {
            Some(i) => i,
            None => {
                nodes.push(name.to_string());
                nodes.len() - 1
            }
        };
        let mut elements = Vec::new();
        for p in &net.parts {
            let a = index(&p.between[0], &mut nodes);
            let b = index(&p.between[1], &mut nodes);
            elements.push(Element { name: p.name.clone(), a, b, model: ElementModel::from_part(p), is_driver: false });
        }
        for d in &net.drivers {
            let a = index(&d.between[0], &mut nodes);
            let b = index(&d.between[1], &mut nodes);
            elements.push(Element { name: d.name.clone(), a, b, model: ElementModel::Driver(d.model.clone()), is_driver: true });
        }
        let c = Circuit { nodes, input: 1, source_ohm: amp.output_ohm, elements };
        c.check_floating()?;
        Ok(c)
    }

    fn check_floating(&self) -> Result<(), SolveError> {
        let mut reached = vec![false; self.nodes.len()];
        reached[0] = true;
        reached[self.input] = true;
        let mut changed = true;
        while changed {
            changed = false;
            for e in &self.elements {
                if reached[e.a] != reached[e.b] {
                    reached[e.a] = true;
                    reached[e.b] = true;
                    changed = true;
                }
            }
        }
        let nodes: Vec<String> = (0..self.nodes.len()).filter(|i| !reached[*i]).map(|i| self.nodes[i].clone()).collect();
        if nodes.is_empty() {
            return Ok(());
        }
        let parts = self.elements.iter().filter(|e| !reached[e.a] || !reached[e.b]).map(|e| e.name.clone()).collect();
        Err(SolveError::Floating { nodes, parts })
    }

    pub fn element(&self, name: &str) -> Option<usize> {
        self.elements.iter().position(|e| e.name == name)
    }

    pub fn size(&self) -> usize {
        self.nodes.len()
    }
}

/// The solution at one frequency, for a source EMF of 1 V.
#[derive(Debug, Clone, PartialEq)]
pub struct Point {
    pub f_hz: f64,
    /// Node voltages, node 0 (the reference) included as 0.
    pub v: Vec<Complex64>,
    /// Current delivered by the amplifier into the input node.
    pub i_in: Complex64,
    /// Current through each element, from its first node to its second.
    pub i_el: Vec<Complex64>,
}

impl Point {
    /// Voltage across the amplifier terminals (the input) over the current into them.
    pub fn input_impedance(&self, c: &Circuit) -> Complex64 {
        (self.v[c.input] - self.v[0]) / self.i_in
    }

    /// Voltage across element `k`, first node minus second.
    pub fn across(&self, c: &Circuit, k: usize) -> Complex64 {
        self.v[c.elements[k].a] - self.v[c.elements[k].b]
    }
}

/// Reusable buffers so a sweep allocates once.
pub struct Workspace {
    n: usize,
    m: Vec<Complex64>,
    rhs: Vec<Complex64>,
    zero_branches: Vec<usize>,
    z: Vec<Complex64>,
}

impl Workspace {
    pub fn new(c: &Circuit) -> Self {
        Workspace { n: 0, m: Vec::new(), rhs: Vec::new(), zero_branches: Vec::new(), z: vec![Complex64::new(0.0, 0.0); c.elements.len()] }
    }
}

const ZERO_OHM: f64 = 1e-12;

/// Solves the circuit at one frequency for a 1 V EMF.
pub fn solve_point(c: &Circuit, f_hz: f64, ws: &mut Workspace) -> Result<Point, SolveError> {
    solve_point_with(c, f_hz, ws, |k, f| c.elements[k].model.impedance(f))
}

/// As [`solve_point`], with element impedances supplied by `z_of` (the Monte Carlo and the
/// compensation search vary values without rebuilding the circuit).
pub fn solve_point_with(c: &Circuit, f_hz: f64, ws: &mut Workspace, z_of: impl Fn(usize, f64) -> Complex64) -> Result<Point, SolveError> {
    let nn = c.nodes.len() - 1; // unknown node voltages (node 0 is the reference)
    ws.zero_branches.clear();
    for k in 0..c.elements.len() {
        ws.z[k] = z_of(k, f_hz);
        if ws.z[k].norm() < ZERO_OHM {
            ws.zero_branches.push(k);
        }
    }
    let n = nn + 1 + ws.zero_branches.len();
    ws.n = n;
    ws.m.clear();
    ws.m.resize(n * n, Complex64::new(0.0, 0.0));
    ws.rhs.clear();
    ws.rhs.resize(n, Complex64::new(0.0, 0.0));
    let idx = |node: usize| if node == 0 { None } else { Some(node - 1) };
    let m = &mut ws.m;
    for (k, e) in c.elements.iter().enumerate() {
        let z = ws.z[k];
        if z.norm() < ZERO_OHM {
            continue;
        }
        let y = z.inv();
        let (a, b) = (idx(e.a), idx(e.b));
        if let Some(a) = a {
            m[a * n + a] += y;
        }
        if let Some(b) = b {
            m[b * n + b] += y;
        }
        if let (Some(a), Some(b)) = (a, b) {
            m[a * n + b] -= y;
            m[b * n + a] -= y;
        }
    }
    // Source branch: V(in) - V(0) + Zs I = E, and I flows into the input node.
    let s = nn;
    let inp = c.input - 1;
    m[inp * n + s] -= Complex64::new(1.0, 0.0);
    m[s * n + inp] += Complex64::new(1.0, 0.0);
    m[s * n + s] += Complex64::new(c.source_ohm, 0.0);
    ws.rhs[s] = Complex64::new(1.0, 0.0);
    for (j, &k) in ws.zero_branches.iter().enumerate() {
        let row = nn + 1 + j;
        let e = &c.elements[k];
        if let Some(a) = idx(e.a) {
            m[a * n + row] += Complex64::new(1.0, 0.0);
            m[row * n + a] += Complex64::new(1.0, 0.0);
        }
        if let Some(b) = idx(e.b) {
            m[b * n + row] -= Complex64::new(1.0, 0.0);
            m[row * n + b] -= Complex64::new(1.0, 0.0);
        }
        m[row * n + row] -= ws.z[k];
    }
    if let Err(row) = lu_solve(m, &mut ws.rhs, n) {
        let node_names: Vec<String> = if row < nn { vec![c.nodes[row + 1].clone()] } else { vec![c.nodes[c.input].clone()] };
        let parts = c.elements.iter().filter(|e| node_names.iter().any(|nm| c.nodes[e.a] == *nm || c.nodes[e.b] == *nm)).map(|e| e.name.clone()).collect();
        return Err(SolveError::Singular { f_hz, nodes: node_names, parts });
    }
    let mut v = Vec::with_capacity(nn + 1);
    v.push(Complex64::new(0.0, 0.0));
    v.extend_from_slice(&ws.rhs[..nn]);
    let i_in = ws.rhs[s];
    let mut i_el = Vec::with_capacity(c.elements.len());
    let mut zb = 0;
    for (k, e) in c.elements.iter().enumerate() {
        if ws.zero_branches.get(zb) == Some(&k) {
            i_el.push(ws.rhs[nn + 1 + zb]);
            zb += 1;
        } else {
            i_el.push((v[e.a] - v[e.b]) / ws.z[k]);
        }
    }
    Ok(Point { f_hz, v, i_in, i_el })
}

/// In-place LU with partial pivoting; the solution replaces `b`. Err(row) when singular.
fn lu_solve(m: &mut [Complex64], b: &mut [Complex64], n: usize) -> Result<(), usize> {
    let scale = m.iter().map(|x| x.norm()).fold(0.0, f64::max).max(1e-300);
    for col in 0..n {
        let (piv, mag) = (col..n).map(|r| (r, m[r * n + col].norm())).fold((col, -1.0), |best, cur| if cur.1 > best.1 { cur } else { best });
        if mag <= scale * 1e-15 {
            return Err(col);
        }
        if piv != col {
            for j in 0..n {
                m.swap(piv * n + j, col * n + j);
            }
            b.swap(piv, col);
        }
        let inv = m[col * n + col].inv();
        for r in col + 1..n {
            let factor = m[r * n + col] * inv;
            if factor.norm_sqr() == 0.0 {
                continue;
            }
            for j in col + 1..n {
                let t = m[col * n + j];
                m[r * n + j] -= factor * t;
            }
            let t = b[col];
            b[r] -= factor * t;
        }
    }
    for col in (0..n).rev() {
        let mut acc = b[col];
        for j in col + 1..n {
            acc -= m[col * n + j] * b[j];
        }
        b[col] = acc / m[col * n + col];
    }
    Ok(())
}

/// The whole sweep for one circuit.
#[derive(Debug, Clone, PartialEq)]
pub struct Solution {
    pub points: Vec<Point>,
}

pub fn solve(c: &Circuit, freqs: &[f64]) -> Result<Solution, SolveError> {
    let mut ws = Workspace::new(c);
    let points = freqs.iter().map(|&f| solve_point(c, f, &mut ws)).collect::<Result<Vec<_>, _>>()?;
    Ok(Solution { points })
}

/// Level in dB and phase in degrees, wrapped to (-180, 180], of a complex ratio.
pub fn db_phase(h: Complex64) -> (f64, f64) {
    (20.0 * h.norm().max(1e-300).log10(), wrap_deg(h.arg().to_degrees()))
}

pub fn wrap_deg(mut d: f64) -> f64 {
    while d > 180.0 {
        d -= 360.0;
    }
    while d <= -180.0 {
        d += 360.0;
    }
    d
}

#[cfg(test)]
mod tests {
    use super::*;

    fn c(v: f64) -> Complex64 {
        Complex64::new(v, 0.0)
    }

    #[test]
    fn lu_solves_a_small_system() {
        let mut m = vec![c(2.0), c(1.0), c(1.0), c(3.0)];
        let mut b = vec![c(3.0), c(5.0)];
        lu_solve(&mut m, &mut b, 2).unwrap();
        assert!((b[0] - c(0.8)).norm() < 1e-12 && (b[1] - c(1.4)).norm() < 1e-12);
    }

    #[test]
    fn lu_reports_singular() {
        let mut m = vec![c(1.0), c(2.0), c(2.0), c(4.0)];
        let mut b = vec![c(1.0), c(1.0)];
        assert!(lu_solve(&mut m, &mut b, 2).is_err());
    }

    #[test]
    fn wraps_phase() {
        assert_eq!(wrap_deg(180.0), 180.0);
        assert_eq!(wrap_deg(-180.0), 180.0);
        assert_eq!(wrap_deg(190.0), -170.0);
    }
}
