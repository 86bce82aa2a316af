//! The crossover drawn from the job: every sample, every job under tests/ and every reference
//! network draws in every view, and the netlist read back from each drawing's geometry alone
//! (terminals touching wire ends, wire ends meeting, dots at joints, crossings joining
//! nothing) is the job's own network, compared by part name and terminal. The network's
//! side is built here from the job's parts and drivers, not through the drawing's code.

use std::collections::BTreeSet;
use std::path::PathBuf;

use voicekeep::analysis::{analyse_job, Outcome, Quiet};
use voicekeep::model::Network;
use voicekeep::schematic::{geometry, layout::layout, view, Circuit, Mark};

use crate::util::{root, Cli};

/// Every job file under samples/ and tests/ (a shop settings file is not a job).
fn jobs() -> Vec<PathBuf> {
    let mut out = crate::reader::jobs();
    for dir in ["tests/sweeps", "tests/golden"] {
        if let Ok(entries) = std::fs::read_dir(root().join(dir)) {
            let mut more: Vec<PathBuf> = entries.flatten().map(|e| e.path()).filter(|p| p.extension().is_some_and(|x| x == "yaml")).collect();
            more.sort();
            out.extend(more.into_iter().filter(|p| std::fs::read_to_string(p).unwrap().lines().any(|l| l.starts_with("voicekeep:"))));
        }
    }
    out
}

type Named = BTreeSet<BTreeSet<(String, usize)>>;

/// A network's nodes as sets of (part or driver name, terminal), the input as "amplifier".
fn network_nets(net: &Network, extra: &[voicekeep::model::Part]) -> Named {
    let mut nodes: std::collections::BTreeMap<String, BTreeSet<(String, usize)>> = Default::default();
    for (name, between) in net.parts.iter().chain(extra).map(|p| (&p.name, &p.between)).chain(net.drivers.iter().map(|d| (&d.name, &d.between))) {
        for (k, n) in between.iter().enumerate() {
            nodes.entry(n.clone()).or_default().insert((name.clone(), k));
        }
    }
    for (k, n) in net.input.iter().enumerate() {
        nodes.entry(n.clone()).or_default().insert(("amplifier".into(), k));
    }
    nodes.into_values().collect()
}

/// The as-left network as built: a resistor added by the fit (`auto`) and fitted at no value
/// is not there: open (infinite) it joins nothing, at 0 ohm its two nodes are one.
fn not_fitted_left_out(net: &Network, original: &Network) -> Network {
    let mut net = net.clone();
    let added_auto = |p: &voicekeep::model::Part| p.auto_value && original.part(&p.name).is_none();
    net.parts.retain(|p| !added_auto(p) || p.value.is_finite());
    let links: Vec<[String; 2]> = net.parts.iter().filter(|p| added_auto(p) && p.value == 0.0).map(|p| p.between.clone()).collect();
    net.parts.retain(|p| !(added_auto(p) && p.value == 0.0));
    for [a, b] in links {
        // Either name may stand for the joined node: the comparison is of sets of terminals.
        for n in net.parts.iter_mut().flat_map(|p| p.between.iter_mut()).chain(net.drivers.iter_mut().flat_map(|d| d.between.iter_mut())).chain(net.input.iter_mut()) {
            if *n == b {
                *n = a.clone();
            }
        }
    }
    net
}

/// The nets the drawing's geometry shows, by name.
fn drawn_nets(c: &Circuit) -> (Named, Vec<String>) {
    let d = layout(c);
    let problems = geometry::problems(&d, c);
    let nets = geometry::netlist(&d, c.elems.len())
        .into_iter()
        .map(|net| net.into_iter().map(|(e, k)| (c.elems.get(e).map(|el| el.name.clone()).unwrap_or_else(|| "amplifier".into()), k)).collect())
        .collect();
    (nets, problems)
}

#[test]
fn every_job_draws_in_every_view_and_the_drawing_reads_back_as_the_network() {
    let mut bad = Vec::new();
    let list = jobs();
    assert!(list.len() >= 15, "the jobs under samples/ and tests/: {}", list.len());
    for path in &list {
        let name = path.strip_prefix(root()).unwrap_or(path).display().to_string();
        let job = voicekeep::job::load(path).unwrap_or_else(|e| panic!("{name}: {e}"));
        let o = analyse_job(&job, &Quiet).unwrap_or_else(|e| panic!("{name}: {e:?}"));
        let f = match &o {
            Outcome::One(f) => f.as_ref(),
            Outcome::Set(s) => &s.cabinets[0].findings,
        };
        for quote in [false, true] {
            for v in view::views(&job, &o, quote) {
                let (nets, problems) = drawn_nets(&v.circuit);
                for p in problems {
                    bad.push(format!("{name} {}: {p}", v.name));
                }
                // The network the view is of, from the job's own model.
                let want = match v.name.as_str() {
                    "designed" => network_nets(&job.network, &[]),
                    "as-left" | "as-proposed" => {
                        let left = &not_fitted_left_out(&f.scenes.as_left.network, &job.network);
                        let removed: Vec<_> = job.network.parts.iter().filter(|p| left.part(&p.name).is_none()).cloned().collect();
                        network_nets(left, &removed)
                    }
                    _ => continue,
                };
                if nets != want {
                    bad.push(format!("{name} {}: the drawing reads as {nets:?}, the network is {want:?}", v.name));
                }
            }
        }
    }
    assert!(bad.is_empty(), "{}", bad.join("\n"));
}

/// The two-way sample replaces C1 and C2 and inserts R9 (samples/two-way-recap.yaml's
/// `changes`): the as-left view marks exactly those, and the designed view the parts whose
/// readings the bench flagged.
#[test]
fn the_as_left_view_marks_what_the_job_replaced_and_added() {
    let job = voicekeep::job::load(&root().join("samples/two-way-recap.yaml")).unwrap();
    let o = analyse_job(&job, &Quiet).unwrap();
    let views = view::views(&job, &o, false);
    let left = views.iter().find(|v| v.name == "as-left").expect("an as-left view");
    let marked = |m: Mark| -> Vec<&str> { left.circuit.elems.iter().filter(|e| e.mark == m).map(|e| e.name.as_str()).collect() };
    assert_eq!(marked(Mark::Replaced), vec!["C1", "C2"]);
    assert_eq!(marked(Mark::Added), vec!["R9"]);
    assert!(marked(Mark::Removed).is_empty());
    assert!(left.caption.contains("heavy lines: part replaced") && left.caption.contains("part added"), "{}", left.caption);
    // C1 was measured 2.95 uF against 3.3 uF designed (the sample's `measured`): flagged.
    let designed = views.iter().find(|v| v.name == "designed").unwrap();
    let c1 = designed.circuit.elems.iter().find(|e| e.name == "C1").unwrap();
    assert!(c1.text.iter().any(|t| t.starts_with("measured 2.95")), "{:?}", c1.text);
    // A quotation proposes: nothing "replaced", all "to be replaced".
    let quote = view::views(&job, &o, true);
    let proposed = quote.iter().find(|v| v.name == "as-proposed").unwrap();
    assert!(proposed.circuit.elems.iter().all(|e| !e.text.iter().any(|t| t == "replaced" || t == "added")));
    assert!(proposed.caption.contains("to be replaced"), "{}", proposed.caption);
}

/// A blown tweeter is struck through in the designed view and said in its label.
#[test]
fn a_failed_driver_is_struck_through() {
    let job = voicekeep::job::load(&root().join("tests/reader/blown-tweeter.yaml")).unwrap();
    let o = analyse_job(&job, &Quiet).unwrap();
    let designed = view::views(&job, &o, false).into_iter().find(|v| v.name == "designed").unwrap();
    let hf = designed.circuit.elems.iter().find(|e| e.name == "HF").unwrap();
    assert!(hf.failed && hf.text.iter().any(|t| t.contains("open")), "{hf:?}");
}

/// In a pair, a part one cabinet's own steps replaced is marked in the as-left view with the
/// cabinet's name (samples/pair-recap.yaml: R1 replaced in KB-5121 alone); a part left in
/// place is labelled with its marked value, not a reading (L1 is 1.2 mH in the job, read
/// 1.19 mH in two-way-recap).
#[test]
fn the_as_left_view_names_a_cabinets_own_replacement_and_labels_kept_parts_by_their_marked_value() {
    let job = voicekeep::job::load(&root().join("samples/pair-recap.yaml")).unwrap();
    let o = analyse_job(&job, &Quiet).unwrap();
    let left = view::views(&job, &o, false).into_iter().find(|v| v.name == "as-left").unwrap();
    let r1 = left.circuit.elems.iter().find(|e| e.name == "R1").unwrap();
    assert!(r1.mark == Mark::Replaced && r1.text.iter().any(|t| t == "replaced in KB-5121"), "{r1:?}");
    let job = voicekeep::job::load(&root().join("samples/two-way-recap.yaml")).unwrap();
    let o = analyse_job(&job, &Quiet).unwrap();
    let left = view::views(&job, &o, false).into_iter().find(|v| v.name == "as-left").unwrap();
    let l1 = left.circuit.elems.iter().find(|e| e.name == "L1").unwrap();
    assert_eq!(l1.text[0], "1.2 mH");
    // An inverted driver's + mark stands at its second node.
    let job = voicekeep::job::load(&root().join("samples/three-way-mid-table.yaml")).unwrap();
    let c = view::circuit(&job.network);
    let mf = c.elems.iter().find(|e| e.name == "MF").unwrap();
    assert_eq!(mf.plus_at, 1);
}

#[test]
fn check_draws_the_network_as_typed_beside_the_job_and_plot_writes_every_view() {
    let text = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    let o = Cli::new().job(&text).args(["check", "{job}", "--draw"]).run();
    o.code(0);
    let svg = std::fs::read_dir(&o.dir).unwrap().flatten().map(|e| e.path()).find(|p| p.to_string_lossy().ends_with("-schematic.svg")).expect("a drawing beside the job");
    let svg = std::fs::read_to_string(svg).unwrap();
    for part in ["C1", "C2", "L1", "L2", "R1", "HF", "LF"] {
        assert!(svg.contains(&format!(">{part}</text>")), "{part} labelled");
    }
    // A slip in typing (L2 to the tweeter's terminal instead of H1) draws differently: the
    // drawing is how the technician sees it before anything is solved.
    let slip = text.replace("between: [H1, COM], value: 0.27 mH", "between: [HT, COM], value: 0.27 mH");
    assert_ne!(slip, text);
    let o = Cli::new().job(&slip).args(["check", "{job}", "--draw"]).run();
    o.code(0);
    let slipped = std::fs::read_to_string(o.dir.join("job-schematic.svg")).unwrap();
    assert_ne!(slipped, svg);
    let p = Cli::new().args(["plot", "samples/two-way-recap.yaml", "--out", "{dir}/p"]).run();
    p.code(0);
    for v in ["designed", "as-left"] {
        assert!(p.dir.join(format!("p/two-way-recap-schematic-{v}.svg")).exists(), "{v}");
    }
}
