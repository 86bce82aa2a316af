//! Criterion benchmark of the crossover drawing (`cargo bench --bench schematic`): laying out
//! and writing as SVG a 40-part and a 200-part network, each once as ladders (a signal tree
//! with shunt chains and drivers) and once on rails (a network with a bridge, which is no
//! ladder). Targets: 40 parts under 50 ms, 200 parts under 1 s. Each drawing is checked to
//! read back as its netlist before it is timed. Measured figures are in DEVELOPERS.md.

use std::hint::black_box;

use criterion::{criterion_group, criterion_main, Criterion};
use voicekeep::schematic::{geometry, layout::layout, svg, Circuit, Elem, Mark, Method, Sym};

fn el(name: String, sym: Sym, a: String, b: String) -> Elem {
    Elem { name, sym, nodes: [a, b], text: vec!["4.7 µF".into(), "replaced".into()], mark: Mark::Kept, failed: false, plus_at: 0 }
}

/// `parts` parts as ladders: each driver's path a chain of series parts, a shunt part at
/// every node, a Zobel (two parts) across every driver.
fn ladders(parts: usize) -> Circuit {
    let syms = [Sym::Capacitor, Sym::Inductor, Sym::Resistor];
    let mut elems = Vec::new();
    let mut d = 0;
    while elems.len() < parts {
        let mut at = "IN".to_string();
        for k in 0..6 {
            if elems.len() + 2 > parts {
                break;
            }
            let to = format!("D{d}N{k}");
            elems.push(el(format!("S{}", elems.len()), syms[k % 3], at.clone(), to.clone()));
            elems.push(el(format!("P{}", elems.len()), syms[(k + 1) % 3], to.clone(), "COM".into()));
            at = to;
        }
        elems.push(el(format!("LS{d}"), Sym::Driver, at, "COM".into()));
        d += 1;
    }
    Circuit { input: ["IN".into(), "COM".into()], elems }
}

/// The same with a bridge between the first two drivers' paths, which makes it no ladder.
fn bridged(parts: usize) -> Circuit {
    let mut c = ladders(parts - 1);
    c.elems.push(el("BR".into(), Sym::Resistor, "D0N2".into(), "D1N2".into()));
    c
}

fn draw(cr: &mut Criterion) {
    let mut g = cr.benchmark_group("schematic");
    for n in [40, 200] {
        for (name, c, method) in [("ladders", ladders(n), Method::Ladder), ("rails", bridged(n), Method::Rails)] {
            let d = layout(&c);
            assert_eq!(d.method, method);
            assert!(geometry::verify(&d, &c).is_empty(), "{name} {n}: {:?}", geometry::verify(&d, &c));
            g.bench_function(format!("{name}-{n}-parts"), |b| {
                b.iter(|| {
                    let d = layout(black_box(&c));
                    svg::render(&d, &c)
                })
            });
        }
    }
    g.finish();
}

criterion_group!(benches, draw);
criterion_main!(benches);
