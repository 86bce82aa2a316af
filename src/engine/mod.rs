//! The circuit engine: nodal analysis over complex numbers at each frequency.
//!
//! Every element of a crossover is a two-terminal impedance. The topology is fixed for a
//! sweep, so [`Plan`] orders the unknown node voltages once (minimum degree: a ladder or a
//! tree of filter sections eliminates leaf first with no fill-in) and records exactly which
//! entries the factorisation touches. Each point is then an LDL^T factorisation of the
//! complex-symmetric admittance matrix over those entries only, with no pivoting, four
//! points side by side ([`Lanes`]) so the dependent steps of one overlap with the others'.
//! The source is its Norton equivalent, or a fixed input voltage when the amplifier has no
//! output impedance. A pivot under 1/100 of its column (threshold pivoting), or an element of
//! zero impedance, sends that one point to a full modified nodal analysis with a dense
//! partial-pivoting LU, which also names the parts of a network that cannot be solved.
//!
//! Why this and not a library: measured with criterion on the three-way reference network
//! (7 unknowns, 14 elements, an 8 x 8 modified-nodal system; `cargo bench --bench engine`,
//! figures in DEVELOPERS.md), the plan's factorisation costs 0.08 us a point with four lanes
//! and a whole point with its impedances 0.17 us with one lane, while nalgebra's dense LU
//! takes 0.53 us for the assembled system alone (our own dense LU 0.67 us). A dense LU, which
//! is what nalgebra and faer offer for a general matrix, does O(n^3) work where these
//! tree-like networks need O(n); faer was not measured here (the same O(n^3) argument
//! applies to its dense LU). The dense fallback stays our own: it is rare, and it must say
//! which nodes and parts make a system singular.

pub mod driver;

use num_complex::Complex64;
use std::f64::consts::PI;
use std::fmt;

use crate::model::{Amplifier, DriverModel, ImpedanceTable, Network, Part, PartKind};

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

    /// Impedance at frequency `f_hz` (a sweep takes [`Kernel`]s once and evaluates those).
    pub fn impedance(&self, f_hz: f64) -> Complex64 {
        Kernel::of(self).at(f_hz)
    }

    /// The resistance in which this element dissipates (for a driver, the real part of its
    /// impedance: the power it takes from the network).
    pub fn loss_ohm(&self, f_hz: f64) -> f64 {
        self.impedance(f_hz).re
    }
}

/// An element's impedance model with what does not depend on frequency worked out once (a
/// capacitor's 1/C, Small's motional terms), so a sweep evaluating it at every point does
/// little more than multiply. Every impedance in voicekeep comes from here.
#[derive(Debug, Clone, Copy)]
pub enum Kernel<'a> {
    /// r + j w l: a resistor, an inductor with its DCR, a plain resistance, Re + Le.
    Series { r: f64, l: f64 },
    /// ESR (or tan delta / (w C)) - j / (w C).
    Capacitor { esr: f64, inv_c: f64, tan_delta: Option<f64> },
    /// Re, plus j w Le or Leach's K (j w)^n as `leach` = (K, n), plus Small's motional
    /// impedance 1 / (g + j (w cm - lf / w)) as `motional` = (g, cm, lf) = (1/Res, Cmes, 1/Lces).
    VoiceCoil { re: f64, le: f64, leach: Option<(f64, f64)>, motional: Option<(f64, f64, f64)> },
    /// A measured table, interpolated in log frequency.
    Table(&'a ImpedanceTable),
}

impl<'a> Kernel<'a> {
    pub fn of(m: &'a ElementModel) -> Kernel<'a> {
        match m {
            ElementModel::Resistor { r } => Kernel::Series { r: *r, l: 0.0 },
            ElementModel::Inductor { l, dcr } => Kernel::Series { r: *dcr, l: *l },
            ElementModel::Capacitor { c, esr, tan_delta } => Kernel::Capacitor { esr: *esr, inv_c: 1.0 / c, tan_delta: *tan_delta },
            ElementModel::Driver(d) => Kernel::of_driver(d),
        }
    }

    pub fn of_driver(d: &'a DriverModel) -> Kernel<'a> {
        use crate::model::VoiceCoilInductance as Vc;
        match d {
            DriverModel::Resistance(r) => Kernel::Series { r: *r, l: 0.0 },
            DriverModel::VoiceCoil { re, inductance, resonance } => {
                let (le, leach) = match inductance {
                    Vc::None => (0.0, None),
                    Vc::Simple(le) => (*le, None),
                    // Leach, JAES 50(6) 2002: Z = K (j w)^n.
                    Vc::Leach { k, n } => (0.0, Some((*k, *n))),
                };
                // Small, JAES 20(5) 1972: Res = Re Qms/Qes, Lces = Re/(2 pi fs Qes), Cmes = Qes/(2 pi fs Re).
                let motional = resonance.as_ref().map(|r| (r.qes / (re * r.qms), r.qes / (2.0 * PI * r.fs * re), 2.0 * PI * r.fs * r.qes / re));
                match (leach, motional) {
                    (None, None) => Kernel::Series { r: *re, l: le },
                    _ => Kernel::VoiceCoil { re: *re, le, leach, motional },
                }
            }
            DriverModel::Table(t) => Kernel::Table(t),
        }
    }

    /// Impedance at `f_hz`.
    #[inline]
    pub fn at(&self, f_hz: f64) -> Complex64 {
        let w = 2.0 * PI * f_hz;
        match *self {
            Kernel::Series { r, l } => Complex64::new(r, w * l),
            Kernel::Capacitor { esr, inv_c, tan_delta } => {
                let x = inv_c / w;
                Complex64::new(tan_delta.map_or(esr, |d| d * x), -x)
            }
            Kernel::VoiceCoil { re, le, leach, motional } => {
                // K (j w)^n = K w^n (cos(n pi/2) + j sin(n pi/2)).
                let coil = match leach {
                    Some((k, n)) => Complex64::from_polar(k * w.powf(n), n * PI / 2.0),
                    None => Complex64::new(0.0, w * le),
                };
                let zm = match motional {
                    Some((g, cm, lf)) => inv(Complex64::new(g, w * cm - lf / w)),
                    None => C0,
                };
                Complex64::new(re, 0.0) + coil + zm
            }
            Kernel::Table(t) => driver::table_impedance(t, f_hz),
        }
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
    pub plan: Plan,
}

#[derive(Debug, Clone, PartialEq)]
pub enum SolveError {
    /// Nodes with no path to the reference; names the nodes and the parts touching them.
    Floating { nodes: Vec<String>, parts: Vec<String> },
    /// The matrix is singular at this frequency (a short across the source, a loop of
    /// zero-impedance parts).
    Singular { f_hz: f64, nodes: Vec<String>, parts: Vec<String> },
    /// A broken invariant of voicekeep's own, never a problem in the job.
    Internal(String),
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
            SolveError::Internal(m) => write!(f, "internal error: {m}; please report this"),
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
        let mut c = Circuit { nodes, input: 1, source_ohm: amp.output_ohm, elements, plan: Plan::default() };
        c.check_floating()?;
        c.plan = Plan::new(&c);
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

    /// Each element's [`Kernel`], in element order.
    pub fn kernels(&self) -> Vec<Kernel<'_>> {
        self.elements.iter().map(|e| Kernel::of(&e.model)).collect()
    }
}

/// The elimination plan of a circuit, fixed by its topology: which nodes are unknowns, the
/// order they are eliminated in (minimum degree, so a ladder eliminates leaf first and fills
/// nothing), and for each pivot the later unknowns it couples to once fill-in is counted.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Plan {
    /// Unknown position of each node; None for the reference and, when the amplifier has no
    /// output impedance, for the input (its voltage is the EMF).
    slot: Vec<Option<usize>>,
    /// Number of unknowns.
    n: usize,
    /// Where each element's admittance goes in the matrix and the right-hand side.
    stamps: Vec<Stamp>,
    /// Per pivot p, the range of `col`/`row` holding the entries below it.
    col_range: Vec<(usize, usize)>,
    /// Flat index (i * n + p) of each entry below a pivot, and its row i.
    col: Vec<usize>,
    row: Vec<usize>,
    /// The Schur-complement updates in the order the factorisation makes them.
    update: Vec<usize>,
    /// Flat indices of every entry the factorisation touches.
    pattern: Vec<usize>,
    /// Elements with the input node at one end, and +1 when the input is their first node.
    at_input: Vec<(usize, f64)>,
}

/// The entries an element's admittance y adds to: flat matrix indices, and the right-hand side
/// entry it feeds when its other end is the input held at the EMF.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Stamp {
    /// Between two unknowns: +y at (a,a) and (b,b), -y at (max,min).
    Between(usize, usize, usize),
    /// From an unknown to a known node.
    ToKnown(usize, Option<usize>),
    /// Between known nodes (or a node and itself): only the input current sees it.
    Outside,
}

impl Plan {
    fn new(c: &Circuit) -> Plan {
        let fixed_input = c.source_ohm == 0.0;
        let unknown = |node: usize| node != 0 && !(fixed_input && node == c.input);
        let nodes: Vec<usize> = (0..c.nodes.len()).filter(|&k| unknown(k)).collect();
        let mut adj: Vec<std::collections::BTreeSet<usize>> = vec![Default::default(); c.nodes.len()];
        for e in &c.elements {
            if e.a != e.b && unknown(e.a) && unknown(e.b) {
                adj[e.a].insert(e.b);
                adj[e.b].insert(e.a);
            }
        }
        // Greedy minimum degree; ties go to the lower node number so the plan is reproducible.
        let mut left: std::collections::BTreeSet<usize> = nodes.iter().cloned().collect();
        let mut order = Vec::new();
        let mut coupled = Vec::new();
        while let Some(&k) = left.iter().min_by_key(|&&k| (adj[k].len(), k)) {
            left.remove(&k);
            let nb: Vec<usize> = adj[k].iter().cloned().collect();
            for &i in &nb {
                adj[i].remove(&k);
                for &j in &nb {
                    if i != j {
                        adj[i].insert(j);
                    }
                }
            }
            order.push(k);
            coupled.push(nb);
        }
        let n = order.len();
        let mut slot = vec![None; c.nodes.len()];
        for (p, &k) in order.iter().enumerate() {
            slot[k] = Some(p);
        }
        let stamps = c
            .elements
            .iter()
            .map(|e| {
                let feeds = |other: usize, p: usize| (other == c.input && fixed_input).then_some(p);
                match (slot[e.a], slot[e.b]) {
                    _ if e.a == e.b => Stamp::Outside,
                    (Some(a), Some(b)) => Stamp::Between(a * n + a, b * n + b, a.max(b) * n + a.min(b)),
                    (Some(a), None) => Stamp::ToKnown(a * n + a, feeds(e.b, a)),
                    (None, Some(b)) => Stamp::ToKnown(b * n + b, feeds(e.a, b)),
                    (None, None) => Stamp::Outside,
                }
            })
            .collect();
        let (mut col_range, mut col, mut row, mut update, mut pattern) = (Vec::new(), Vec::new(), Vec::new(), Vec::new(), Vec::new());
        for (p, nb) in coupled.iter().enumerate() {
            let mut below: Vec<usize> = nb.iter().map(|&k| slot[k].expect("an unknown")).collect();
            below.sort_unstable();
            col_range.push((col.len(), col.len() + below.len()));
            pattern.push(p * n + p);
            for (x, &i) in below.iter().enumerate() {
                col.push(i * n + p);
                row.push(i);
                for &j in &below[x..] {
                    update.push(j * n + i);
                }
            }
        }
        pattern.extend(&col);
        pattern.extend(&update);
        pattern.sort_unstable();
        pattern.dedup();
        let at_input =
            c.elements.iter().enumerate().filter(|(_, e)| e.a != e.b && (e.a == c.input || e.b == c.input)).map(|(k, e)| (k, if e.a == c.input { 1.0 } else { -1.0 })).collect();
        Plan { slot, n, stamps, col_range, col, row, update, pattern, at_input }
    }
}

/// Buffers for solving `L` points at once with the plan. The lanes are independent
/// factorisations run side by side: within one, every pivot waits for the one before it, so
/// a single point leaves the processor idle between dependent steps; four interleaved points
/// fill those gaps. The sweep and the Monte Carlo use four lanes, a single point one.
#[derive(Debug, Clone)]
pub struct Lanes<const L: usize> {
    /// Element impedances, per element, one per lane; set these before [`Lanes::solve`].
    pub z: Vec<[Complex64; L]>,
    y: Vec<[Complex64; L]>,
    a: Vec<[Complex64; L]>,
    x: Vec<[Complex64; L]>,
    t: Vec<[Complex64; L]>,
    v: Vec<[Complex64; L]>,
    i_in: [Complex64; L],
}

const C0: Complex64 = Complex64::new(0.0, 0.0);

impl<const L: usize> Lanes<L> {
    pub fn new(c: &Circuit) -> Self {
        let n = c.plan.n;
        let e = c.elements.len();
        Lanes { z: vec![[C0; L]; e], y: vec![[C0; L]; e], a: vec![[C0; L]; n * n], x: vec![[C0; L]; n], t: vec![[C0; L]; n], v: vec![[C0; L]; c.nodes.len()], i_in: [C0; L] }
    }

    /// Voltage of node `k` in lane `l` (node 0 is the reference).
    pub fn v(&self, l: usize, k: usize) -> Complex64 {
        self.v[k][l]
    }

    /// Voltage across element `k` in lane `l`, first node minus second.
    pub fn across(&self, c: &Circuit, l: usize, k: usize) -> Complex64 {
        self.v[c.elements[k].a][l] - self.v[c.elements[k].b][l]
    }

    /// Current delivered by the amplifier in lane `l`.
    pub fn i_in(&self, l: usize) -> Complex64 {
        self.i_in[l]
    }

    /// Nodal analysis of every lane in the plan's order without pivoting: an LDL^T
    /// factorisation of the complex-symmetric admittance matrix that touches only the
    /// entries the plan names. A lane comes back false, its results meaningless, when an
    /// element has zero impedance or a pivot is too small to trust; solve that point with
    /// [`solve_impedances`], which falls back to pivoting.
    pub fn solve(&mut self, c: &Circuit) -> [bool; L] {
        let plan = &c.plan;
        let n = plan.n;
        let mut ok = [true; L];
        let (a, x, t) = (&mut self.a, &mut self.x, &mut self.t);
        for &p in &plan.pattern {
            a[p] = [C0; L];
        }
        x.fill([C0; L]);
        for (k, st) in plan.stamps.iter().enumerate() {
            let y = inv_lanes(&self.z[k], &mut ok);
            self.y[k] = y;
            match *st {
                Stamp::Between(aa, bb, ab) => {
                    for l in 0..L {
                        a[aa][l] += y[l];
                        a[bb][l] += y[l];
                        a[ab][l] -= y[l];
                    }
                }
                Stamp::ToKnown(aa, feeds) => {
                    for l in 0..L {
                        a[aa][l] += y[l];
                    }
                    if let Some(r) = feeds {
                        for l in 0..L {
                            x[r][l] += y[l];
                        }
                    }
                }
                Stamp::Outside => {}
            }
        }
        if let Some(i) = plan.slot[c.input] {
            // The source as its Norton equivalent: 1 V behind the output impedance.
            let ys = Complex64::new(1.0 / c.source_ohm, 0.0);
            for l in 0..L {
                a[i * n + i][l] += ys;
                x[i][l] += ys;
            }
        }
        let mut u = 0;
        for (p, &(c0, c1)) in plan.col_range.iter().enumerate() {
            let cols = &plan.col[c0..c1];
            let d = a[p * n + p];
            for l in 0..L {
                let biggest = cols.iter().map(|&ip| a[ip][l].norm_sqr()).fold(0.0, f64::max);
                ok[l] &= d[l].norm_sqr() > TAU * TAU * biggest;
            }
            let dinv = inv_lanes(&d, &mut ok);
            let t = &mut t[..cols.len()];
            for (tx, &ip) in t.iter_mut().zip(cols) {
                *tx = a[ip];
            }
            for (xi, &ip) in cols.iter().enumerate() {
                let mut lv = [C0; L];
                for l in 0..L {
                    lv[l] = t[xi][l] * dinv[l];
                }
                for tw in &t[xi..] {
                    let target = &mut a[plan.update[u]];
                    for l in 0..L {
                        target[l] -= lv[l] * tw[l];
                    }
                    u += 1;
                }
                a[ip] = lv;
            }
            a[p * n + p] = dinv;
        }
        for (p, &(c0, c1)) in plan.col_range.iter().enumerate() {
            let xp = x[p];
            for (&ip, &i) in plan.col[c0..c1].iter().zip(&plan.row[c0..c1]) {
                for l in 0..L {
                    x[i][l] -= a[ip][l] * xp[l];
                }
            }
        }
        for (p, &(c0, c1)) in plan.col_range.iter().enumerate().rev() {
            let mut acc = [C0; L];
            for l in 0..L {
                acc[l] = x[p][l] * a[p * n + p][l];
            }
            for (&ip, &i) in plan.col[c0..c1].iter().zip(&plan.row[c0..c1]) {
                for l in 0..L {
                    acc[l] -= a[ip][l] * x[i][l];
                }
            }
            x[p] = acc;
        }
        for (k, s) in plan.slot.iter().enumerate() {
            self.v[k] = match s {
                Some(p) => x[*p],
                None if k == c.input && k != 0 => [Complex64::new(1.0, 0.0); L],
                None => [C0; L],
            };
        }
        let mut i_in = [C0; L];
        for &(k, sign) in &plan.at_input {
            let e = &c.elements[k];
            for (l, i) in i_in.iter_mut().enumerate() {
                *i += self.y[k][l] * (self.v[e.a][l] - self.v[e.b][l]) * sign;
            }
        }
        self.i_in = i_in;
        ok
    }
}

/// Reusable buffers for solving one point at a time. After a solve it holds that point's
/// node voltages and input current, for a 1 V EMF.
#[derive(Debug, Clone)]
pub struct Workspace {
    lane: Lanes<1>,
    /// Currents of the elements whose impedance is zero at this point (the only currents
    /// that cannot be found from the voltages).
    zero: Vec<(usize, Complex64)>,
    dense: Vec<Complex64>,
    dense_rhs: Vec<Complex64>,
}

impl Workspace {
    pub fn new(c: &Circuit) -> Self {
        Workspace { lane: Lanes::new(c), zero: Vec::new(), dense: Vec::new(), dense_rhs: Vec::new() }
    }

    /// Sets element `k`'s impedance for [`solve_impedances`].
    pub fn set_z(&mut self, k: usize, z: Complex64) {
        self.lane.z[k][0] = z;
    }

    fn z(&self, k: usize) -> Complex64 {
        self.lane.z[k][0]
    }

    /// Voltage of node `k` (0 is the reference).
    pub fn v(&self, k: usize) -> Complex64 {
        self.lane.v(0, k)
    }

    /// Voltage across element `k`, first node minus second.
    pub fn across(&self, c: &Circuit, k: usize) -> Complex64 {
        self.lane.across(c, 0, k)
    }

    /// Current delivered by the amplifier into the input node.
    pub fn i_in(&self) -> Complex64 {
        self.lane.i_in(0)
    }

    /// Current through element `k`, from its first node to its second.
    pub fn current(&self, c: &Circuit, k: usize) -> Complex64 {
        match self.zero.iter().find(|z| z.0 == k) {
            Some(z) => z.1,
            None => self.across(c, k) * inv(self.z(k)),
        }
    }

    /// Voltage across the amplifier terminals over the current into them.
    pub fn input_impedance(&self, c: &Circuit) -> Complex64 {
        self.v(c.input) / self.i_in()
    }
}

const ZERO_OHM: f64 = 1e-12;

/// 1 / z with one division (num-complex's `inv` takes two). An infinite impedance (a part
/// left open) has no admittance.
#[inline]
pub fn inv(z: Complex64) -> Complex64 {
    let m = z.norm_sqr();
    if m.is_infinite() {
        return C0;
    }
    let s = 1.0 / m;
    Complex64::new(z.re * s, -z.im * s)
}

/// 1 / z in every lane, written so the divisions pack into vector instructions; a lane whose
/// z is zero or NaN is marked not ok. An infinite z (a part left open) gives no admittance.
#[inline]
fn inv_lanes<const L: usize>(z: &[Complex64; L], ok: &mut [bool; L]) -> [Complex64; L] {
    let mut m = [0.0; L];
    for l in 0..L {
        m[l] = z[l].norm_sqr();
        ok[l] &= m[l] >= ZERO_OHM * ZERO_OHM && !m[l].is_nan();
    }
    let mut s = [0.0; L];
    for l in 0..L {
        s[l] = 1.0 / m[l];
    }
    let mut y = [C0; L];
    for l in 0..L {
        y[l] = if m[l].is_finite() { Complex64::new(z[l].re * s[l], -z[l].im * s[l]) } else { C0 };
    }
    y
}

/// A pivot smaller than this fraction of the largest entry below it sends the point to the
/// pivoting solver (threshold pivoting; growth per step stays under 1 + 1/TAU).
const TAU: f64 = 1e-2;

/// Solves the circuit at one frequency for a 1 V EMF; the result stays in `ws`.
pub fn solve_point(c: &Circuit, f_hz: f64, ws: &mut Workspace) -> Result<(), SolveError> {
    for (k, e) in c.elements.iter().enumerate() {
        ws.set_z(k, e.model.impedance(f_hz));
    }
    solve_impedances(c, f_hz, ws)
}

/// As [`solve_point`], with the element impedances already set (the Monte Carlo and the
/// compensation search vary values without rebuilding the circuit). `f_hz` only names the
/// frequency in an error.
pub fn solve_impedances(c: &Circuit, f_hz: f64, ws: &mut Workspace) -> Result<(), SolveError> {
    ws.zero.clear();
    if !ws.lane.solve(c)[0] {
        solve_dense(c, f_hz, ws)?;
    }
    Ok(())
}

/// The full modified-nodal system for element impedances `z`: node voltages (node 0 left
/// out), the source's branch current, then one branch current per zero-impedance element.
/// Fills `m` (row-major) and `rhs`; returns the size and the zero-impedance elements.
fn mna(c: &Circuit, z: impl Fn(usize) -> Complex64, m: &mut Vec<Complex64>, rhs: &mut Vec<Complex64>) -> (usize, Vec<usize>) {
    let nn = c.nodes.len() - 1;
    let zero_branches: Vec<usize> = (0..c.elements.len()).filter(|&k| z(k).norm() < ZERO_OHM).collect();
    let n = nn + 1 + zero_branches.len();
    m.clear();
    m.resize(n * n, C0);
    rhs.clear();
    rhs.resize(n, C0);
    let idx = |node: usize| if node == 0 { None } else { Some(node - 1) };
    for (k, e) in c.elements.iter().enumerate() {
        let zk = z(k);
        if zk.norm() < ZERO_OHM {
            continue;
        }
        let y = inv(zk);
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
    let one = Complex64::new(1.0, 0.0);
    m[inp * n + s] -= one;
    m[s * n + inp] += one;
    m[s * n + s] += Complex64::new(c.source_ohm, 0.0);
    rhs[s] = one;
    for (j, &k) in zero_branches.iter().enumerate() {
        let row = nn + 1 + j;
        let e = &c.elements[k];
        if let Some(a) = idx(e.a) {
            m[a * n + row] += one;
            m[row * n + a] += one;
        }
        if let Some(b) = idx(e.b) {
            m[b * n + row] -= one;
            m[row * n + b] -= one;
        }
        m[row * n + row] -= z(k);
    }
    (n, zero_branches)
}

/// The full modified-nodal system of the circuit at `f_hz` (row-major matrix, right-hand
/// side, size), for comparing linear solvers in the benchmarks.
pub fn mna_system(c: &Circuit, f_hz: f64) -> (Vec<Complex64>, Vec<Complex64>, usize) {
    let (mut m, mut rhs) = (Vec::new(), Vec::new());
    let (n, _) = mna(c, |k| c.elements[k].model.impedance(f_hz), &mut m, &mut rhs);
    (m, rhs, n)
}

/// Solves one point with the pivoting solver alone, skipping the plan: the fallback, exposed
/// so benchmarks and tests can compare the two.
pub fn solve_point_pivoting(c: &Circuit, f_hz: f64, ws: &mut Workspace) -> Result<(), SolveError> {
    for (k, e) in c.elements.iter().enumerate() {
        ws.set_z(k, e.model.impedance(f_hz));
    }
    solve_dense(c, f_hz, ws)
}

/// Full modified nodal analysis with partial pivoting: node voltages, the source's branch
/// current and one branch current for each zero-impedance element. The fallback for what
/// the plan cannot take, and the judge of singular networks.
fn solve_dense(c: &Circuit, f_hz: f64, ws: &mut Workspace) -> Result<(), SolveError> {
    let nn = c.nodes.len() - 1; // unknown node voltages (node 0 is the reference)
    let Workspace { lane, dense, dense_rhs, .. } = ws;
    let (n, zero_branches) = mna(c, |k| lane.z[k][0], dense, dense_rhs);
    let s = nn;
    let m = &mut ws.dense;
    if let Err(row) = lu_solve(m, &mut ws.dense_rhs, n) {
        let node_names: Vec<String> = if row < nn { vec![c.nodes[row + 1].clone()] } else { vec![c.nodes[c.input].clone()] };
        let parts = c.elements.iter().filter(|e| node_names.iter().any(|nm| c.nodes[e.a] == *nm || c.nodes[e.b] == *nm)).map(|e| e.name.clone()).collect();
        return Err(SolveError::Singular { f_hz, nodes: node_names, parts });
    }
    ws.lane.v[0] = [C0];
    for k in 0..nn {
        ws.lane.v[k + 1] = [ws.dense_rhs[k]];
    }
    ws.lane.i_in = [ws.dense_rhs[s]];
    ws.zero.clear();
    for (j, &k) in zero_branches.iter().enumerate() {
        ws.zero.push((k, ws.dense_rhs[nn + 1 + j]));
    }
    Ok(())
}

/// In-place LU with partial pivoting of the row-major `n` x `n` matrix `m`; the solution
/// replaces `b`. Err(row) when singular. Public for the benchmarks, which compare it with the
/// plan and with nalgebra.
pub fn lu_solve(m: &mut [Complex64], b: &mut [Complex64], n: usize) -> Result<(), usize> {
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

/// The whole sweep for one circuit, for a 1 V EMF: node voltages and input current at every
/// frequency, stored flat.
#[derive(Debug, Clone, PartialEq)]
pub struct Solution {
    pub freqs: Vec<f64>,
    nodes: usize,
    v: Vec<Complex64>,
    i_in: Vec<Complex64>,
    /// (point, element, current) for elements of zero impedance.
    zero: Vec<(usize, usize, Complex64)>,
}

impl Solution {
    pub fn len(&self) -> usize {
        self.freqs.len()
    }

    pub fn is_empty(&self) -> bool {
        self.freqs.is_empty()
    }

    /// Voltage of node `k` at point `i`.
    pub fn v(&self, i: usize, k: usize) -> Complex64 {
        self.v[i * self.nodes + k]
    }

    /// Voltage across element `k` at point `i`, first node minus second.
    pub fn across(&self, c: &Circuit, i: usize, k: usize) -> Complex64 {
        self.v(i, c.elements[k].a) - self.v(i, c.elements[k].b)
    }

    /// Current through element `k` at point `i`, from its first node to its second.
    pub fn current(&self, c: &Circuit, i: usize, k: usize) -> Complex64 {
        match self.zero.iter().find(|z| z.0 == i && z.1 == k) {
            Some(z) => z.2,
            None => self.across(c, i, k) * inv(c.elements[k].model.impedance(self.freqs[i])),
        }
    }

    /// Current delivered by the amplifier at point `i`.
    pub fn i_in(&self, i: usize) -> Complex64 {
        self.i_in[i]
    }

    /// Voltage across the amplifier terminals over the current into them, at point `i`.
    pub fn input_impedance(&self, c: &Circuit, i: usize) -> Complex64 {
        self.v(i, c.input) / self.i_in[i]
    }
}

/// Buffers for [`sweep`]: four lanes for the plan, one point for the points it refuses.
#[derive(Debug, Clone)]
pub struct Sweeper {
    lanes: Lanes<4>,
    one: Workspace,
}

impl Sweeper {
    pub fn new(c: &Circuit) -> Self {
        Sweeper { lanes: Lanes::new(c), one: Workspace::new(c) }
    }
}

/// A point [`sweep`] has solved: a lane of the plan, or the pivoting fallback.
pub enum Solved<'a> {
    Lane(&'a Lanes<4>, usize),
    One(&'a Workspace),
}

impl Solved<'_> {
    /// Voltage of node `k`.
    pub fn v(&self, k: usize) -> Complex64 {
        match self {
            Solved::Lane(lanes, l) => lanes.v(*l, k),
            Solved::One(ws) => ws.v(k),
        }
    }

    /// Voltage across element `k`, first node minus second.
    pub fn across(&self, c: &Circuit, k: usize) -> Complex64 {
        self.v(c.elements[k].a) - self.v(c.elements[k].b)
    }

    /// Current delivered by the amplifier.
    pub fn i_in(&self) -> Complex64 {
        match self {
            Solved::Lane(lanes, l) => lanes.i_in(*l),
            Solved::One(ws) => ws.i_in(),
        }
    }

    /// Voltage across the amplifier terminals over the current into them.
    pub fn input_impedance(&self, c: &Circuit) -> Complex64 {
        self.v(c.input) / self.i_in()
    }

    /// Calls `f(k, v2, i2, p)` for every element `k` with the squared magnitudes of its
    /// voltage and current and the real power into it (|I|^2 Re Z, which is |V|^2 Re Y).
    #[inline]
    pub fn each_element(&self, c: &Circuit, mut f: impl FnMut(usize, f64, f64, f64)) {
        match self {
            Solved::Lane(lanes, l) => {
                let l = *l;
                for (k, (e, y)) in c.elements.iter().zip(&lanes.y).enumerate() {
                    let v2 = (lanes.v[e.a][l] - lanes.v[e.b][l]).norm_sqr();
                    let y = y[l];
                    f(k, v2, v2 * y.norm_sqr(), v2 * y.re);
                }
            }
            Solved::One(ws) => {
                for k in 0..c.elements.len() {
                    let i2 = ws.current(c, k).norm_sqr();
                    let v2 = ws.across(c, k).norm_sqr();
                    // |I|^2 Re Z, as |V|^2 Re Y where Z may be infinite (a part left open).
                    let power = if ws.z(k).norm_sqr().is_finite() { i2 * ws.z(k).re } else { 0.0 };
                    f(k, v2, i2, power);
                }
            }
        }
    }

    /// Currents of the elements of zero impedance (only the fallback takes those).
    pub fn zero_currents(&self) -> &[(usize, Complex64)] {
        match self {
            Solved::Lane(..) => &[],
            Solved::One(ws) => &ws.zero,
        }
    }
}

/// Solves every point of `freqs`, element `k`'s impedance at point `i` being `z_at(i, k)`:
/// four points at a time through the plan, a refused point alone through the pivoting
/// solver. Each point's result goes to `each` with its index, in order.
pub fn sweep(c: &Circuit, sw: &mut Sweeper, freqs: &[f64], z_at: impl Fn(usize, usize) -> Complex64, mut each: impl FnMut(usize, Result<Solved<'_>, SolveError>)) {
    let ne = c.elements.len();
    for (q, chunk) in freqs.chunks(4).enumerate() {
        for k in 0..ne {
            for l in 0..4 {
                // A short last chunk repeats its last point in the spare lanes.
                sw.lanes.z[k][l] = z_at(4 * q + l.min(chunk.len() - 1), k);
            }
        }
        let ok = sw.lanes.solve(c);
        for (l, &f) in chunk.iter().enumerate() {
            let i = 4 * q + l;
            if ok[l] {
                each(i, Ok(Solved::Lane(&sw.lanes, l)));
                continue;
            }
            for k in 0..ne {
                sw.one.set_z(k, sw.lanes.z[k][l]);
            }
            match solve_impedances(c, f, &mut sw.one) {
                Ok(()) => each(i, Ok(Solved::One(&sw.one))),
                Err(e) => each(i, Err(e)),
            }
        }
    }
}

pub fn solve(c: &Circuit, freqs: &[f64]) -> Result<Solution, SolveError> {
    let nodes = c.nodes.len();
    let mut s = Solution { freqs: freqs.to_vec(), nodes, v: Vec::with_capacity(freqs.len() * nodes), i_in: Vec::with_capacity(freqs.len()), zero: Vec::new() };
    let mut first_error = None;
    let kernels = c.kernels();
    sweep(
        c,
        &mut Sweeper::new(c),
        freqs,
        |i, k| kernels[k].at(freqs[i]),
        |i, point| match point {
            Ok(p) => {
                s.v.extend((0..nodes).map(|k| p.v(k)));
                s.i_in.push(p.i_in());
                s.zero.extend(p.zero_currents().iter().map(|&(k, cur)| (i, k, cur)));
            }
            Err(e) => {
                first_error.get_or_insert(e);
            }
        },
    );
    match first_error {
        Some(e) => Err(e),
        None => Ok(s),
    }
}

/// Level in dB of a complex ratio (10 log10 |h|^2: no square root).
pub fn db(h: Complex64) -> f64 {
    10.0 * h.norm_sqr().max(1e-300).log10()
}

/// Level in dB and phase in degrees, wrapped to (-180, 180], of a complex ratio.
pub fn db_phase(h: Complex64) -> (f64, f64) {
    (db(h), wrap_deg(h.arg().to_degrees()))
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

    /// A circuit from (a, b, model) triples over nodes 0..n, node 1 the input.
    fn circuit(n: usize, source_ohm: f64, parts: &[(usize, usize, ElementModel)]) -> Circuit {
        let elements = parts.iter().enumerate().map(|(k, (a, b, m))| Element { name: format!("X{k}"), a: *a, b: *b, model: m.clone(), is_driver: false }).collect();
        let mut c = Circuit { nodes: (0..n).map(|k| format!("N{k}")).collect(), input: 1, source_ohm, elements, plan: Plan::default() };
        c.check_floating().unwrap();
        c.plan = Plan::new(&c);
        c
    }

    fn r(r: f64) -> ElementModel {
        ElementModel::Resistor { r }
    }
    fn cap(c: f64, esr: f64) -> ElementModel {
        ElementModel::Capacitor { c, esr, tan_delta: None }
    }
    fn ind(l: f64, dcr: f64) -> ElementModel {
        ElementModel::Inductor { l, dcr }
    }

    /// Both solvers at one point: the plan (one lane) and the pivoting LU; true when the
    /// plan took the point.
    fn both(c: &Circuit, f: f64) -> (bool, Lanes<1>, Workspace) {
        let mut planned = Lanes::<1>::new(c);
        let mut dense = Workspace::new(c);
        for (k, e) in c.elements.iter().enumerate() {
            planned.z[k] = [e.model.impedance(f)];
            dense.set_z(k, planned.z[k][0]);
        }
        let took = planned.solve(c)[0];
        solve_dense(c, f, &mut dense).unwrap();
        (took, planned, dense)
    }

    #[test]
    fn planned_and_pivoting_solvers_agree() {
        // A bridged (not series-parallel) network, a third-order ladder and a parallel notch,
        // each with and without output impedance; the pivoting dense LU is the judge.
        let bridge = vec![(1, 2, cap(4.7e-6, 0.02)), (1, 3, r(3.3)), (2, 3, ind(0.2e-3, 0.3)), (2, 0, r(6.0)), (3, 4, ind(1.0e-3, 0.4)), (4, 0, r(8.0)), (3, 0, cap(10e-6, 0.05))];
        let ladder = vec![(1, 2, ind(1.5e-3, 0.5)), (2, 0, cap(22e-6, 0.1)), (2, 3, ind(0.6e-3, 0.3)), (3, 0, r(7.5))];
        let notch = vec![(1, 2, r(1.0)), (2, 3, ind(2e-3, 0.0)), (2, 3, cap(4.7e-6, 0.0)), (3, 0, r(6.0))];
        for (n, parts) in [(5, &bridge), (4, &ladder), (4, &notch)] {
            for zs in [0.0, 0.05] {
                let c = circuit(n, zs, parts);
                for k in 0..200 {
                    let f = 10.0 * 2500f64.powf(k as f64 / 199.0);
                    let (took, p, d) = both(&c, f);
                    if !took {
                        continue;
                    }
                    for node in 0..n {
                        assert!((p.v(0, node) - d.v(node)).norm() <= 1e-10 * d.v(node).norm().max(1e-6), "node {node} at {f} Hz");
                    }
                    assert!((p.i_in(0) / d.i_in() - 1.0).norm() < 1e-10, "input current at {f} Hz");
                }
            }
        }
        // The plan must take the ordinary points itself, or the speed claims are void.
        let c = circuit(5, 0.05, &bridge);
        assert!((0..50).all(|k| both(&c, 20.0 * 1000f64.powf(k as f64 / 49.0)).0));
    }

    #[test]
    fn a_lossless_trap_at_resonance_falls_back_and_still_solves() {
        // Series L-C from node 3 to the reference with no losses: node 2 (between L and C) is
        // eliminated first, and at resonance its pivot vanishes, so the point must go to the
        // pivoting solver.
        let (l, cv): (f64, f64) = (1e-3, 10e-6);
        let f0 = 1.0 / (2.0 * PI * (l * cv).sqrt());
        let c = circuit(4, 0.0, &[(1, 3, r(2.0)), (3, 2, ind(l, 0.0)), (2, 0, cap(cv, 0.0)), (3, 0, r(8.0))]);
        let (took, _, _) = both(&c, f0);
        assert!(!took, "the plan must refuse the vanishing pivot");
        let mut ws = Workspace::new(&c);
        solve_point(&c, f0, &mut ws).unwrap();
        // At resonance the trap shorts node 3: almost nothing reaches the 8 ohm load.
        assert!(ws.v(3).norm() < 1e-6, "{}", ws.v(3));
        assert!((ws.i_in() - Complex64::new(0.5, 0.0)).norm() < 1e-6);
    }

    #[test]
    fn four_lanes_give_each_point_its_own_answer() {
        // Four frequencies side by side, one of them the lossless trap's resonance: that lane
        // alone is refused, and the others match one-lane solves bit for bit.
        let (l, cv): (f64, f64) = (1e-3, 10e-6);
        let f0 = 1.0 / (2.0 * PI * (l * cv).sqrt());
        let c = circuit(4, 0.0, &[(1, 3, r(2.0)), (3, 2, ind(l, 0.0)), (2, 0, cap(cv, 0.0)), (3, 0, r(8.0))]);
        let fs = [100.0, f0, 2000.0, 15_000.0];
        let mut four = Lanes::<4>::new(&c);
        for (k, e) in c.elements.iter().enumerate() {
            for (lane, f) in fs.iter().enumerate() {
                four.z[k][lane] = e.model.impedance(*f);
            }
        }
        assert_eq!(four.solve(&c), [true, false, true, true]);
        for lane in [0, 2, 3] {
            let (took, one, _) = both(&c, fs[lane]);
            assert!(took);
            for node in 0..4 {
                assert_eq!(four.v(lane, node), one.v(0, node));
            }
            assert_eq!(four.i_in(lane), one.i_in(0));
        }
    }

    #[test]
    fn zero_ohm_parts_carry_their_current() {
        // A 0 ohm link in series with 8 ohm: the link's current comes from its branch row.
        let c = circuit(3, 0.0, &[(1, 2, r(0.0)), (2, 0, r(8.0))]);
        let mut ws = Workspace::new(&c);
        solve_point(&c, 1000.0, &mut ws).unwrap();
        assert!((ws.current(&c, 0) - Complex64::new(0.125, 0.0)).norm() < 1e-12);
        assert!((ws.v(2) - Complex64::new(1.0, 0.0)).norm() < 1e-12);
    }

    #[test]
    fn wraps_phase() {
        assert_eq!(wrap_deg(180.0), 180.0);
        assert_eq!(wrap_deg(-180.0), 180.0);
        assert_eq!(wrap_deg(190.0), -170.0);
    }
}
