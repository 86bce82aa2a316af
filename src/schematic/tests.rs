//! The drawing checked from its geometry: every layout rule, and the netlist read back from
//! the drawing against the circuit, for hand-made ladders, bridged networks and a few hundred
//! seeded random ones.

use super::geometry::{crossings, verify};
use super::layout::layout;
use super::*;
use proptest::prelude::*;

fn el(name: &str, sym: Sym, a: &str, b: &str) -> Elem {
    Elem { name: name.into(), sym, nodes: [a.into(), b.into()], text: vec!["4.7 µF".into()], mark: Mark::Kept, failed: false, plus_at: 0 }
}

fn circuit(elems: Vec<Elem>) -> Circuit {
    Circuit { input: ["IN".into(), "COM".into()], elems }
}

/// A second-order two-way with a Zobel on the woofer and an L-pad on the tweeter.
fn two_way() -> Circuit {
    use Sym::*;
    circuit(vec![
        el("C1", Capacitor, "IN", "H1"),
        el("L1", Inductor, "H1", "COM"),
        el("R1", Resistor, "H1", "H2"),
        el("R2", Resistor, "H2", "COM"),
        el("L2", Inductor, "IN", "W1"),
        el("C2", Capacitor, "W1", "COM"),
        el("R3", Resistor, "W1", "Z1"),
        el("C3", Capacitor, "Z1", "COM"),
        el("HF", Driver, "H2", "COM"),
        el("LF", Driver, "W1", "COM"),
    ])
}

#[test]
fn a_two_way_is_drawn_as_ladders_without_a_crossing_and_reads_back_as_its_netlist() {
    let c = two_way();
    let d = layout(&c);
    assert_eq!(d.method, Method::Ladder);
    assert_eq!(verify(&d, &c), Vec::<String>::new());
    assert!(crossings(&d.wires).is_empty(), "{:?}", crossings(&d.wires));
}

#[test]
fn a_bridged_network_is_drawn_on_rails_and_reads_back_as_its_netlist() {
    use Sym::*;
    // A Wheatstone bridge between the input and a driver: no ladder.
    let c =
        circuit(vec![el("R1", Resistor, "IN", "A"), el("R2", Resistor, "IN", "B"), el("R3", Resistor, "A", "COM"), el("C1", Capacitor, "B", "COM"), el("D1", Driver, "A", "B")]);
    let d = layout(&c);
    assert_eq!(d.method, Method::Rails);
    assert_eq!(verify(&d, &c), Vec::<String>::new());
}

/// A random ladder: a tree of series parts (some doubled in parallel) from the input, shunt
/// chains of one to three parts to the return, and drivers on tree nodes.
fn ladder_strategy() -> impl Strategy<Value = Circuit> {
    (proptest::collection::vec((0usize..100, 0usize..6, 1usize..4), 1..14), proptest::collection::vec(0usize..100, 1..4)).prop_map(|(steps, drivers)| {
        let syms = [Sym::Resistor, Sym::Capacitor, Sym::Inductor];
        let mut tree = vec!["IN".to_string()];
        let mut elems = Vec::new();
        let mut n = 0;
        for (pick, what, len) in steps {
            let at = tree[pick % tree.len()].clone();
            let name = format!("X{}", elems.len());
            match what {
                0..=2 => {
                    n += 1;
                    let to = format!("N{n}");
                    elems.push(el(&name, syms[what % 3], &at, &to));
                    tree.push(to);
                }
                3 if elems.iter().any(|e: &Elem| e.nodes[1].starts_with('N')) => {
                    let e = elems.iter().find(|e: &&Elem| e.nodes[1].starts_with('N')).unwrap().clone();
                    elems.push(el(&name, Sym::Capacitor, &e.nodes[0], &e.nodes[1]));
                }
                _ => {
                    let mut from = at;
                    for k in 0..len {
                        let to = if k + 1 == len {
                            "COM".to_string()
                        } else {
                            n += 1;
                            format!("S{n}")
                        };
                        elems.push(el(&format!("{name}{k}"), syms[(k + what) % 3], &from, &to));
                        from = to;
                    }
                }
            }
        }
        for (k, d) in drivers.into_iter().enumerate() {
            elems.push(el(&format!("D{k}"), Sym::Driver, &tree[d % tree.len()], "COM"));
        }
        circuit(elems)
    })
}

/// A random network of any shape: parts and drivers between random nodes.
fn any_strategy() -> impl Strategy<Value = Circuit> {
    (2usize..7, proptest::collection::vec((0usize..9, 0usize..9, 0usize..4), 2..16)).prop_map(|(nodes, pairs)| {
        let name = |i: usize| match i % (nodes + 2) {
            0 => "IN".to_string(),
            1 => "COM".to_string(),
            k => format!("N{k}"),
        };
        let syms = [Sym::Resistor, Sym::Capacitor, Sym::Inductor, Sym::Driver];
        let elems = pairs
            .into_iter()
            .enumerate()
            .filter_map(|(i, (a, b, s))| {
                let (a, b) = (name(a), name(b));
                (a != b).then(|| el(&format!("E{i}"), syms[s], &a, &b))
            })
            .collect();
        circuit(elems)
    })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 300, ..ProptestConfig::default() })]

    #[test]
    fn every_random_ladder_is_drawn_as_a_ladder_and_reads_back_as_its_netlist(c in ladder_strategy()) {
        let d = layout(&c);
        prop_assert_eq!(d.method, Method::Ladder);
        prop_assert_eq!(verify(&d, &c), Vec::<String>::new());
    }

    #[test]
    fn every_random_network_reads_back_as_its_netlist(c in any_strategy()) {
        let d = layout(&c);
        prop_assert_eq!(verify(&d, &c), Vec::<String>::new());
    }
}

/// The checker itself: a drawing with a wire moved, a dot dropped or a label pushed onto a
/// wire is caught.
#[test]
fn the_checker_finds_a_broken_joint_a_missing_dot_and_a_label_on_a_wire() {
    let c = two_way();
    let good = layout(&c);
    let mut moved = good.clone();
    let w = moved.wires.iter().position(|w| w.a.y == w.b.y).unwrap();
    moved.wires[w].b.x += 3;
    assert!(!verify(&moved, &c).is_empty());
    let mut no_dot = good.clone();
    no_dot.dots.pop();
    assert!(verify(&no_dot, &c).iter().any(|p| p.contains("no junction dot")));
    let mut on_wire = good.clone();
    let y = on_wire.wires[0].a.y;
    on_wire.texts[0].rect = Rect { x0: on_wire.wires[0].a.x, y0: y - 4, x1: on_wire.wires[0].a.x + 20, y1: y + 8 };
    assert!(verify(&on_wire, &c).iter().any(|p| p.contains("sits on wire")));
    // Two parts swapped in the drawing: the geometry no longer reads as the circuit.
    let mut swapped = good.clone();
    let (a, b) = (swapped.symbols[0].elem, swapped.symbols[1].elem);
    swapped.symbols[0].elem = b;
    swapped.symbols[1].elem = a;
    assert!(verify(&swapped, &c).iter().any(|p| p.contains("netlist")));
}
