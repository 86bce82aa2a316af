//! Solving: one point at a time ([`Workspace`], [`solve_point`]), a whole sweep four points at
//! a time with the pivoting fallback for the points the plan refuses ([`sweep`]), and the
//! stored solution of a sweep ([`Solution`]).

use num_complex::Complex64;

use super::dense::solve_dense;
use super::{inv, Circuit, Lanes, SolveError};

/// Reusable buffers for solving one point at a time. After a solve it holds that point's
/// node voltages and input current, for a 1 V EMF.
#[derive(Debug, Clone)]
pub struct Workspace {
    pub(crate) lane: Lanes<1>,
    /// Currents of the elements whose impedance is zero at this point (the only currents
    /// that cannot be found from the voltages).
    pub(crate) zero: Vec<(usize, Complex64)>,
    pub(crate) dense: Vec<Complex64>,
    pub(crate) dense_rhs: Vec<Complex64>,
}

impl Workspace {
    pub fn new(c: &Circuit) -> Self {
        Workspace { lane: Lanes::new(c), zero: Vec::new(), dense: Vec::new(), dense_rhs: Vec::new() }
    }

    /// Sets element `k`'s impedance for [`solve_impedances`].
    pub fn set_z(&mut self, k: usize, z: Complex64) {
        self.lane.z[k][0] = z;
    }

    pub(crate) fn z(&self, k: usize) -> Complex64 {
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

/// The whole sweep for one circuit, for a 1 V EMF: node voltages and input current at every
/// frequency, stored flat.
#[derive(Debug, Clone, PartialEq)]
pub struct Solution {
    pub freqs: Vec<f64>,
    pub(crate) nodes: usize,
    pub(crate) v: Vec<Complex64>,
    pub(crate) i_in: Vec<Complex64>,
    /// (point, element, current) for elements of zero impedance.
    pub(crate) zero: Vec<(usize, usize, Complex64)>,
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
    pub(crate) lanes: Lanes<4>,
    pub(crate) one: Workspace,
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
