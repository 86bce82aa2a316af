//! Reading a drawing back: the netlist its geometry shows, and the rules a readable
//! schematic keeps. A wire joins another only where their ends meet; a symbol joins a wire
//! only at a terminal; three or more ends meeting carry a junction dot, and a dot stands
//! nowhere else, so a crossing (wires passing, no end there) joins nothing and is drawn as a
//! hop. Nothing here asks the layout what it meant: it reads points and segments.

use super::{Circuit, Drawing, Placed, Rect, Seg, P};
use std::collections::{BTreeMap, BTreeSet};

/// Whether `q` lies on `s` and is not one of its ends.
pub fn strictly_inside(s: &Seg, q: P) -> bool {
    if s.a.x == s.b.x {
        q.x == s.a.x && q.y > s.a.y.min(s.b.y) && q.y < s.a.y.max(s.b.y)
    } else if s.a.y == s.b.y {
        q.y == s.a.y && q.x > s.a.x.min(s.b.x) && q.x < s.a.x.max(s.b.x)
    } else {
        false
    }
}

/// How many wire ends and terminals meet at each point.
fn meetings(wires: &[Seg], symbols: &[Placed], inputs: &[P; 2]) -> BTreeMap<P, usize> {
    let mut m: BTreeMap<P, usize> = BTreeMap::new();
    for q in wires.iter().flat_map(|w| [w.a, w.b]).chain(symbols.iter().flat_map(|s| s.t)).chain(inputs.iter().copied()) {
        *m.entry(q).or_default() += 1;
    }
    m
}

/// The points that need a junction dot: where three or more wire ends and terminals meet.
pub fn joints(wires: &[Seg], symbols: &[Placed], inputs: &[P; 2]) -> Vec<P> {
    meetings(wires, symbols, inputs).into_iter().filter(|(_, n)| *n >= 3).map(|(q, _)| q).collect()
}

/// Where a horizontal and a vertical wire cross with no end at the crossing.
pub fn crossings(wires: &[Seg]) -> Vec<P> {
    let mut out = Vec::new();
    for h in wires.iter().filter(|w| w.a.y == w.b.y && w.a.x != w.b.x) {
        for v in wires.iter().filter(|w| w.a.x == w.b.x && w.a.y != w.b.y) {
            let q = P { x: v.a.x, y: h.a.y };
            if strictly_inside(h, q) && strictly_inside(v, q) {
                out.push(q);
            }
        }
    }
    out
}

/// Whether a (horizontal or vertical) segment passes through the open interior of `r`.
fn enters(s: &Seg, r: &Rect) -> bool {
    let (x0, x1) = (s.a.x.min(s.b.x), s.a.x.max(s.b.x));
    let (y0, y1) = (s.a.y.min(s.b.y), s.a.y.max(s.b.y));
    if x0 == x1 {
        r.x0 < x0 && x0 < r.x1 && y0 < r.y1 && y1 > r.y0
    } else {
        r.y0 < y0 && y0 < r.y1 && x0 < r.x1 && x1 > r.x0
    }
}

/// Whether a segment touches the closed rectangle `r` at all.
fn touches(s: &Seg, r: &Rect) -> bool {
    let (x0, x1) = (s.a.x.min(s.b.x), s.a.x.max(s.b.x));
    let (y0, y1) = (s.a.y.min(s.b.y), s.a.y.max(s.b.y));
    x0 <= r.x1 && x1 >= r.x0 && y0 <= r.y1 && y1 >= r.y0
}

/// Every rule the drawing breaks, in words (empty when it keeps them all).
pub fn problems(d: &Drawing, c: &Circuit) -> Vec<String> {
    let mut out = Vec::new();
    let mut placed = vec![0; c.elems.len()];
    for s in &d.symbols {
        placed[s.elem] += 1;
    }
    for (i, n) in placed.iter().enumerate() {
        if *n != 1 {
            out.push(format!("{} is drawn {n} times", c.elems[i].name));
        }
    }
    for w in &d.wires {
        if (w.a.x != w.b.x && w.a.y != w.b.y) || w.a == w.b {
            out.push(format!("wire {w:?} is not a straight horizontal or vertical piece"));
        }
    }
    // Collinear wires that overlap would hide a joint.
    for (i, a) in d.wires.iter().enumerate() {
        for b in &d.wires[i + 1..] {
            let same_line = (a.a.x == a.b.x && b.a.x == b.b.x && a.a.x == b.a.x) || (a.a.y == a.b.y && b.a.y == b.b.y && a.a.y == b.a.y);
            if same_line
                && (strictly_inside(a, b.a)
                    || strictly_inside(a, b.b)
                    || strictly_inside(b, a.a)
                    || strictly_inside(b, a.b)
                    || (a.a.min(a.b) == b.a.min(b.b) && a.a.max(a.b) == b.a.max(b.b)))
            {
                out.push(format!("wires {a:?} and {b:?} overlap"));
            }
        }
    }
    // An end on another wire's middle: a joint the drawing does not show.
    let ends: Vec<P> = d.wires.iter().flat_map(|w| [w.a, w.b]).chain(d.symbols.iter().flat_map(|s| s.t)).chain(d.inputs.iter().copied()).collect();
    for w in &d.wires {
        for q in &ends {
            if strictly_inside(w, *q) {
                out.push(format!("an end at {q:?} stands on the middle of wire {w:?}"));
            }
        }
    }
    let need: BTreeSet<P> = joints(&d.wires, &d.symbols, &d.inputs).into_iter().collect();
    let have: BTreeSet<P> = d.dots.iter().copied().collect();
    for q in need.difference(&have) {
        out.push(format!("three or more ends meet at {q:?} with no junction dot"));
    }
    for q in have.difference(&need) {
        out.push(format!("a junction dot at {q:?} where fewer than three ends meet"));
    }
    // Symbols: terminals on their box, wires only at terminals, no two boxes overlapping.
    for s in &d.symbols {
        let name = &c.elems[s.elem].name;
        for t in s.t {
            let on_edge =
                (t.x == s.bbox.x0 || t.x == s.bbox.x1 || t.y == s.bbox.y0 || t.y == s.bbox.y1) && t.x >= s.bbox.x0 && t.x <= s.bbox.x1 && t.y >= s.bbox.y0 && t.y <= s.bbox.y1;
            if !on_edge {
                out.push(format!("{name}: a terminal is not on its symbol's edge"));
            }
        }
        for w in &d.wires {
            if enters(w, &s.bbox) {
                out.push(format!("wire {w:?} runs through {name}"));
            }
        }
    }
    for (i, a) in d.symbols.iter().enumerate() {
        for b in &d.symbols[i + 1..] {
            if a.bbox.overlaps(&b.bbox) {
                out.push(format!("{} and {} overlap", c.elems[a.elem].name, c.elems[b.elem].name));
            }
        }
    }
    // Labels: on no wire, symbol or other label.
    for (i, t) in d.texts.iter().enumerate() {
        let what = t.lines.join(" / ");
        for w in &d.wires {
            if touches(w, &t.rect) {
                out.push(format!("label \"{what}\" sits on wire {w:?}"));
            }
        }
        for s in &d.symbols {
            if t.rect.overlaps(&s.bbox) {
                out.push(format!("label \"{what}\" covers {}", c.elems[s.elem].name));
            }
        }
        for u in &d.texts[i + 1..] {
            if t.rect.overlaps(&u.rect) {
                out.push(format!("labels \"{what}\" and \"{}\" overlap", u.lines.join(" / ")));
            }
        }
        if t.rect.x0 < 0 || t.rect.y0 < 0 || t.rect.x1 > d.width || t.rect.y1 > d.height {
            out.push(format!("label \"{what}\" runs off the drawing"));
        }
    }
    out
}

/// A terminal of an element (index, 0 or 1); the amplifier's are `(elems.len(), 0 | 1)`.
pub type Terminal = (usize, usize);

/// The netlist the drawing shows, read from its geometry alone: the sets of terminals that
/// wires join.
pub fn netlist(d: &Drawing, elems: usize) -> BTreeSet<BTreeSet<Terminal>> {
    let mut parent: BTreeMap<P, P> = BTreeMap::new();
    fn find(parent: &mut BTreeMap<P, P>, q: P) -> P {
        let up = *parent.entry(q).or_insert(q);
        if up == q {
            return q;
        }
        let root = find(parent, up);
        parent.insert(q, root);
        root
    }
    for w in &d.wires {
        let (ra, rb) = (find(&mut parent, w.a), find(&mut parent, w.b));
        if ra != rb {
            parent.insert(ra, rb);
        }
    }
    let mut nets: BTreeMap<P, BTreeSet<Terminal>> = BTreeMap::new();
    for s in &d.symbols {
        for (k, t) in s.t.iter().enumerate() {
            let r = find(&mut parent, *t);
            nets.entry(r).or_default().insert((s.elem, k));
        }
    }
    for (k, t) in d.inputs.iter().enumerate() {
        let r = find(&mut parent, *t);
        nets.entry(r).or_default().insert((elems, k));
    }
    nets.into_values().collect()
}

/// The netlist the circuit is: the sets of terminals on each node.
pub fn expected(c: &Circuit) -> BTreeSet<BTreeSet<Terminal>> {
    let mut nets: BTreeMap<&str, BTreeSet<Terminal>> = BTreeMap::new();
    for (i, e) in c.elems.iter().enumerate() {
        for (k, n) in e.nodes.iter().enumerate() {
            nets.entry(n).or_default().insert((i, k));
        }
    }
    for (k, n) in c.input.iter().enumerate() {
        nets.entry(n).or_default().insert((c.elems.len(), k));
    }
    nets.into_values().collect()
}

/// Everything wrong with a drawing of `c`: its rules, then whether its geometry is `c`'s
/// netlist.
pub fn verify(d: &Drawing, c: &Circuit) -> Vec<String> {
    let mut out = problems(d, c);
    if netlist(d, c.elems.len()) != expected(c) {
        out.push("the netlist read from the drawing is not the circuit's".into());
    }
    out
}
