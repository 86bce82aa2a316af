//! The fallback: a full modified nodal analysis with a dense partial-pivoting LU, for the
//! points the plan refuses (an element of zero impedance, a pivot too small to trust), and
//! the judge of networks that cannot be solved, naming their nodes and parts.

use num_complex::Complex64;

use super::{inv, Circuit, SolveError, Workspace, C0, ZERO_OHM};

/// The full modified-nodal system for element impedances `z`: node voltages (node 0 left
/// out), the source's branch current, then one branch current per zero-impedance element.
/// Fills `m` (row-major) and `rhs`; returns the size and the zero-impedance elements.
pub(crate) fn mna(c: &Circuit, z: impl Fn(usize) -> Complex64, m: &mut Vec<Complex64>, rhs: &mut Vec<Complex64>) -> (usize, Vec<usize>) {
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
pub(crate) fn solve_dense(c: &Circuit, f_hz: f64, ws: &mut Workspace) -> Result<(), SolveError> {
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
