//! The elimination plan of a circuit and the factorisation that follows it: LDL^T over the
//! entries the plan names, without pivoting, several points side by side ([`Lanes`]).

use num_complex::Complex64;

use super::Circuit;

/// The elimination plan of a circuit, fixed by its topology: which nodes are unknowns, the
/// order they are eliminated in (minimum degree, so a ladder eliminates leaf first and fills
/// nothing), and for each pivot the later unknowns it couples to once fill-in is counted.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Plan {
    /// Unknown position of each node; None for the reference and, when the amplifier has no
    /// output impedance, for the input (its voltage is the EMF).
    pub(crate) slot: Vec<Option<usize>>,
    /// Number of unknowns.
    pub(crate) n: usize,
    /// Where each element's admittance goes in the matrix and the right-hand side.
    pub(crate) stamps: Vec<Stamp>,
    /// Per pivot p, the range of `col`/`row` holding the entries below it.
    pub(crate) col_range: Vec<(usize, usize)>,
    /// Flat index (i * n + p) of each entry below a pivot, and its row i.
    pub(crate) col: Vec<usize>,
    pub(crate) row: Vec<usize>,
    /// The Schur-complement updates in the order the factorisation makes them.
    pub(crate) update: Vec<usize>,
    /// Flat indices of every entry the factorisation touches.
    pub(crate) pattern: Vec<usize>,
    /// Elements with the input node at one end, and +1 when the input is their first node.
    pub(crate) at_input: Vec<(usize, f64)>,
}

/// The entries an element's admittance y adds to: flat matrix indices, and the right-hand side
/// entry it feeds when its other end is the input held at the EMF.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Stamp {
    /// Between two unknowns: +y at (a,a) and (b,b), -y at (max,min).
    Between(usize, usize, usize),
    /// From an unknown to a known node.
    ToKnown(usize, Option<usize>),
    /// Between known nodes (or a node and itself): only the input current sees it.
    Outside,
}

impl Plan {
    pub(crate) fn new(c: &Circuit) -> Plan {
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
            // Every neighbour in the elimination graph is an unknown, so each has its slot.
            let mut below: Vec<usize> = nb.iter().filter_map(|&k| slot[k]).collect();
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
    pub(crate) y: Vec<[Complex64; L]>,
    pub(crate) a: Vec<[Complex64; L]>,
    pub(crate) x: Vec<[Complex64; L]>,
    pub(crate) t: Vec<[Complex64; L]>,
    pub(crate) v: Vec<[Complex64; L]>,
    pub(crate) i_in: [Complex64; L],
}

pub(crate) const C0: Complex64 = Complex64::new(0.0, 0.0);

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

pub(crate) const ZERO_OHM: f64 = 1e-12;

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
pub(crate) fn inv_lanes<const L: usize>(z: &[Complex64; L], ok: &mut [bool; L]) -> [Complex64; L] {
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
pub(crate) const TAU: f64 = 1e-2;
