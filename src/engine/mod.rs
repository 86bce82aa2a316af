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

mod circuit;
mod dense;
mod kernel;
mod plan;
mod sweep;

pub use circuit::*;
pub use dense::{lu_solve, mna_system, solve_point_pivoting};
pub use kernel::*;
pub use plan::*;
pub use sweep::*;

use num_complex::Complex64;
use std::fmt;

#[derive(Debug, Clone, PartialEq)]
pub enum SolveError {
    /// Nodes with no path to the reference; names the nodes and the parts touching them.
    Floating { nodes: Vec<String>, parts: Vec<String> },
    /// The matrix is singular at this frequency (a short across the source, a loop of
    /// zero-impedance parts).
    Singular { f_hz: f64, nodes: Vec<String>, parts: Vec<String> },
    /// The solution is not accurate: the power the network draws and the power its parts
    /// take differ by `mismatch` (a fraction) at `f_hz`, where sound arithmetic agrees to
    /// about 1e-12. `parts` are the elements of smallest and largest impedance there, whose
    /// ratio `spread` is what rounding cannot carry.
    IllConditioned { f_hz: f64, mismatch: f64, parts: Vec<String>, ohms: Vec<f64> },
    /// A part to fit that cannot move its driver's level: across its whole range it moves
    /// it by only `moved_db`.
    Unreachable { part: String, driver: String, moved_db: f64 },
    /// A broken invariant of voicekeep's own, never a problem in the job.
    Internal(String),
}

/// The largest relative difference between the power a solution draws and the power its
/// parts take that voicekeep accepts. Tellegen's theorem makes the two equal for any exact
/// solution; on the samples they agree to 1e-12 or better, and at 1e-5 every figure printed
/// (four significant digits, levels to 0.01 dB) is still right.
pub const POWER_BALANCE: f64 = 1e-5;

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
            SolveError::IllConditioned { f_hz, mismatch, parts, ohms } => {
                let sized: Vec<String> = parts.iter().zip(ohms).map(|(p, z)| format!("{p} at {}", crate::units::format_si(*z, crate::units::Quantity::Resistance, 2))).collect();
                let spread = ohms.iter().copied().fold(0.0, f64::max) / ohms.iter().copied().fold(f64::INFINITY, f64::min);
                write!(
                    f,
                    "the network is too ill-conditioned to solve accurately at {} Hz: the power it draws and the power its parts take differ by {:.1e} of the whole, where a sound solution agrees to 1e-12; its impedances there span a factor of {:.0e} ({}), more than double-precision arithmetic carries",
                    crate::units::trim_number(*f_hz, 4),
                    mismatch,
                    spread,
                    sized.join(" and ")
                )
            }
            SolveError::Unreachable { part, driver, moved_db } => {
                write!(f, "{part} cannot set {driver}'s level: from none to its largest value it moves {driver}'s band level by {moved_db:.3} dB, so it is not in {driver}'s path")
            }
            SolveError::Internal(m) => write!(f, "internal error: {m}; please report this"),
        }
    }
}

impl std::error::Error for SolveError {}

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
    use super::dense::solve_dense;
    use super::*;
    use std::f64::consts::PI;

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
