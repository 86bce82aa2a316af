//! Placing a circuit's elements on the page.
//!
//! A network that decomposes into ladders (a tree of series parts from the amplifier's signal
//! terminal, shunt chains to the return line, each driver between a tree node and the return)
//! is drawn as ladders stacked by driver: the signal path runs left to right, shunt parts drop
//! to each row's return line, and every row's return line runs right to one return bus, which
//! comes back along the foot of the drawing to the amplifier's return terminal, so no return
//! line crosses a signal path. Any other network (bridged, a series crossover, shared nodes
//! between drivers) gets one horizontal rail per node and one column per element: always
//! correct, with a crossing wherever an element's lead passes a rail between its two nodes,
//! drawn as a hop.

use super::{p, text_box, Circuit, Drawing, Method, Placed, Rect, Seg, Sym, Text, CHAR_W, LEN, LINE_H, P};
use std::collections::{BTreeMap, BTreeSet, VecDeque};

/// Where the amplifier's terminals stand.
const X_IN: i32 = 30;
const MARGIN: i32 = 16;
/// Most lines a label shows (the designator and three more).
const MAX_LINES: usize = 4;

/// Lays out `c`: as ladders where it is one, else on rails.
pub fn layout(c: &Circuit) -> Drawing {
    match ladder_tree(c) {
        Some(t) => Ladder::new(c, t).draw(),
        None => rails(c),
    }
}

/// An element's label lines: its designator, then its text.
fn lines(c: &Circuit, e: usize) -> Vec<String> {
    let el = &c.elems[e];
    let mut v = vec![el.name.clone()];
    v.extend(el.text.iter().cloned());
    v.truncate(MAX_LINES);
    v
}

fn label_w(c: &Circuit, e: usize) -> i32 {
    lines(c, e).iter().map(|l| l.chars().count() as i32).max().unwrap_or(0) * CHAR_W + 2
}

fn label_h(c: &Circuit, e: usize) -> i32 {
    lines(c, e).len() as i32 * LINE_H
}

/// The pieces of a drawing as they are placed.
#[derive(Default)]
struct Builder {
    symbols: Vec<Placed>,
    wires: Vec<Seg>,
    texts: Vec<Text>,
}

impl Builder {
    fn wire(&mut self, a: P, b: P) {
        if a != b {
            self.wires.push(Seg { a, b });
        }
    }

    /// A horizontal symbol with its left terminal at `left`, its label above it.
    fn horizontal(&mut self, c: &Circuit, e: usize, left: P, left_node: &str) {
        let right = p(left.x + LEN, left.y);
        let t = if c.elems[e].nodes[0] == left_node { [left, right] } else { [right, left] };
        self.symbols.push(Placed { elem: e, vertical: false, t, bbox: Rect { x0: left.x, y0: left.y - 8, x1: right.x, y1: left.y + 8 } });
        let ls = lines(c, e);
        let w = label_w(c, e);
        let at = p(left.x + LEN / 2 - w / 2, left.y - 10 - label_h(c, e));
        self.texts.push(Text { rect: text_box(at, &ls), lines: ls, bold_first: true });
    }

    /// A vertical symbol with its top terminal at `top`, its label to the right.
    fn vertical(&mut self, c: &Circuit, e: usize, top: P, top_node: &str) {
        let bottom = p(top.x, top.y + LEN);
        let el = &c.elems[e];
        let t = if el.nodes[0] == top_node { [top, bottom] } else { [bottom, top] };
        let driver = el.sym == Sym::Driver;
        let bbox = if driver { Rect { x0: top.x - 8, y0: top.y, x1: top.x + 18, y1: bottom.y } } else { Rect { x0: top.x - 8, y0: top.y, x1: top.x + 8, y1: bottom.y } };
        self.symbols.push(Placed { elem: e, vertical: true, t, bbox });
        let ls = lines(c, e);
        let h = label_h(c, e);
        let at = p(bbox.x1 + 4, top.y + (LEN - h) / 2);
        self.texts.push(Text { rect: text_box(at, &ls), lines: ls, bold_first: true });
        if driver {
            // The + terminal marked beside it.
            let plus = t[el.plus_at.min(1)];
            let y = if plus == top { top.y + 3 } else { bottom.y - 15 };
            let ls = vec!["+".to_string()];
            self.texts.push(Text { rect: text_box(p(top.x - 16, y), &ls), lines: ls, bold_first: false });
        }
    }

    /// The width a vertical element's column needs: symbol, label and a gap.
    fn column_w(c: &Circuit, e: usize) -> i32 {
        let sym = if c.elems[e].sym == Sym::Driver { 18 } else { 8 };
        sym + 4 + label_w(c, e) + 18
    }

    fn finish(self, inputs: [P; 2], method: Method) -> Drawing {
        let mut texts = self.texts;
        for (at, s) in [(inputs[0], "+"), (inputs[1], "−")] {
            let ls = vec![s.to_string()];
            texts.push(Text { rect: text_box(p(at.x - 18, at.y - 6), &ls), lines: ls, bold_first: true });
        }
        let wires = split(self.wires, &self.symbols, &inputs);
        let dots = super::geometry::joints(&wires, &self.symbols, &inputs);
        let mut width = 0;
        let mut height = 0;
        for r in self.symbols.iter().map(|s| s.bbox).chain(texts.iter().map(|t| t.rect)) {
            width = width.max(r.x1);
            height = height.max(r.y1);
        }
        for w in &wires {
            width = width.max(w.a.x.max(w.b.x));
            height = height.max(w.a.y.max(w.b.y));
        }
        Drawing { width: width + MARGIN, height: height + MARGIN, symbols: self.symbols, wires, dots, texts, inputs, method }
    }
}

/// Splits every wire where another wire ends or a terminal stands on it, so that every
/// joint is where wire ends meet (and a crossing, with no end on it, joins nothing).
fn split(wires: Vec<Seg>, symbols: &[Placed], inputs: &[P; 2]) -> Vec<Seg> {
    let mut points: BTreeSet<P> = wires.iter().flat_map(|w| [w.a, w.b]).collect();
    points.extend(symbols.iter().flat_map(|s| s.t));
    points.extend(inputs.iter().copied());
    let mut out = Vec::new();
    for w in wires {
        let (a, b) = if (w.a.x, w.a.y) <= (w.b.x, w.b.y) { (w.a, w.b) } else { (w.b, w.a) };
        let mut cuts: Vec<P> = points.iter().copied().filter(|q| super::geometry::strictly_inside(&Seg { a, b }, *q)).collect();
        cuts.sort();
        let mut from = a;
        for q in cuts.into_iter().chain([b]) {
            out.push(Seg { a: from, b: q });
            from = q;
        }
    }
    let mut seen = BTreeSet::new();
    out.retain(|s| seen.insert((s.a, s.b)));
    out
}

/// The ladder decomposition: for each node of the series tree, what hangs from it.
struct Tree {
    /// Series groups (parallel elements between two nodes) and drivers, by the node they
    /// start from, in the job's order.
    items: BTreeMap<String, Vec<Item>>,
    /// Shunt chains by the node they hang from, each from that node down to the return.
    shunts: BTreeMap<String, Vec<Vec<usize>>>,
}

enum Item {
    Series { group: Vec<usize>, to: String },
    Driver(usize),
}

/// The network as a ladder tree, or `None` when it is not one.
fn ladder_tree(c: &Circuit) -> Option<Tree> {
    let [top, gnd] = &c.input;
    if top == gnd {
        return None;
    }
    let mut degree: BTreeMap<&str, usize> = BTreeMap::new();
    let mut at: BTreeMap<&str, Vec<usize>> = BTreeMap::new();
    let mut driver_nodes: BTreeSet<&str> = BTreeSet::new();
    for (i, e) in c.elems.iter().enumerate() {
        if e.nodes[0] == e.nodes[1] {
            return None;
        }
        for n in &e.nodes {
            *degree.entry(n).or_default() += 1;
            at.entry(n).or_default().push(i);
            if e.sym == Sym::Driver {
                driver_nodes.insert(n);
            }
        }
    }
    let other = |e: usize, n: &str| -> String {
        let el = &c.elems[e];
        if el.nodes[0] == n {
            el.nodes[1].clone()
        } else {
            el.nodes[0].clone()
        }
    };
    // Shunt chains: from each part on the return, up through nodes only the chain touches.
    let mut used = vec![false; c.elems.len()];
    let mut shunts: BTreeMap<String, Vec<Vec<usize>>> = BTreeMap::new();
    let mut chains: Vec<(usize, String, Vec<usize>)> = Vec::new();
    for (i, e) in c.elems.iter().enumerate() {
        if e.sym == Sym::Driver || used[i] || !e.nodes.contains(gnd) {
            continue;
        }
        let mut chain = vec![i];
        used[i] = true;
        let mut node = other(i, gnd);
        while node != *top && degree.get(node.as_str()) == Some(&2) && !driver_nodes.contains(node.as_str()) {
            let next = *at[node.as_str()].iter().find(|&&j| !chain.contains(&j))?;
            if c.elems[next].sym == Sym::Driver || used[next] || c.elems[next].nodes.contains(gnd) {
                return None;
            }
            used[next] = true;
            chain.push(next);
            node = other(next, &node);
        }
        chain.reverse();
        chains.push((i, node, chain));
    }
    for (_, node, chain) in chains {
        shunts.entry(node).or_default().push(chain);
    }
    // The rest, grouped by the pair of nodes they join, must form a tree from the signal terminal.
    let mut groups: BTreeMap<(String, String), Vec<usize>> = BTreeMap::new();
    let mut group_order: Vec<(String, String)> = Vec::new();
    for (i, e) in c.elems.iter().enumerate() {
        if e.sym == Sym::Driver || used[i] {
            continue;
        }
        if e.nodes.contains(gnd) {
            return None;
        }
        let key = if e.nodes[0] < e.nodes[1] { (e.nodes[0].clone(), e.nodes[1].clone()) } else { (e.nodes[1].clone(), e.nodes[0].clone()) };
        if !groups.contains_key(&key) {
            group_order.push(key.clone());
        }
        groups.entry(key).or_default().push(i);
    }
    let mut items: BTreeMap<String, Vec<Item>> = BTreeMap::new();
    let mut visited: BTreeSet<String> = BTreeSet::from([top.clone()]);
    let mut taken: BTreeSet<(String, String)> = BTreeSet::new();
    let mut queue = VecDeque::from([top.clone()]);
    while let Some(u) = queue.pop_front() {
        for key in &group_order {
            if taken.contains(key) || (key.0 != u && key.1 != u) {
                continue;
            }
            let v = if key.0 == u { key.1.clone() } else { key.0.clone() };
            if visited.contains(&v) {
                return None;
            }
            taken.insert(key.clone());
            visited.insert(v.clone());
            items.entry(u.clone()).or_default().push(Item::Series { group: groups[key].clone(), to: v.clone() });
            queue.push_back(v);
        }
    }
    if taken.len() != groups.len() || shunts.keys().any(|n| !visited.contains(n)) {
        return None;
    }
    for (i, e) in c.elems.iter().enumerate() {
        if e.sym != Sym::Driver {
            continue;
        }
        let node = match (e.nodes[0] == *gnd, e.nodes[1] == *gnd) {
            (true, false) => &e.nodes[1],
            (false, true) => &e.nodes[0],
            _ => return None,
        };
        if !visited.contains(node) {
            return None;
        }
        items.entry(node.clone()).or_default().push(Item::Driver(i));
    }
    // Branches in the order of the drivers they lead to (the job's driver order), so that
    // the views of one job (as designed, as left, each option) stack their rows alike
    // whatever order the steps added parts in.
    fn first_driver(items: &BTreeMap<String, Vec<Item>>, node: &str, depth: usize) -> usize {
        if depth > 10_000 {
            return usize::MAX;
        }
        items.get(node).map_or(usize::MAX, |list| list.iter().map(|i| rank(items, i, depth + 1)).min().unwrap_or(usize::MAX))
    }
    fn rank(items: &BTreeMap<String, Vec<Item>>, item: &Item, depth: usize) -> usize {
        match item {
            Item::Driver(e) => *e,
            Item::Series { to, .. } => first_driver(items, to, depth),
        }
    }
    let ranks: BTreeMap<String, Vec<usize>> = items.iter().map(|(n, list)| (n.clone(), list.iter().map(|i| rank(&items, i, 0)).collect())).collect();
    for (n, list) in items.iter_mut() {
        let r = &ranks[n];
        let mut keyed: Vec<(usize, Item)> = r.iter().copied().zip(list.drain(..)).collect();
        keyed.sort_by_key(|(k, _)| *k);
        list.extend(keyed.into_iter().map(|(_, i)| i));
    }
    Some(Tree { items, shunts })
}

/// What a ladder row holds, placed along x before the rows are given their heights.
enum Op {
    /// A wire along a row's signal line.
    Signal {
        row: usize,
        x0: i32,
        x1: i32,
    },
    /// A wire from one row's signal line down to another's.
    Branch {
        x: i32,
        from: usize,
        to: usize,
    },
    /// A chain of elements from the signal line down to the return line.
    Shunt {
        row: usize,
        x: i32,
        chain: Vec<usize>,
        node: String,
    },
    /// Parallel elements between two signal-line points, stacked downward.
    Series {
        row: usize,
        x: i32,
        w: i32,
        group: Vec<usize>,
        from: String,
    },
    Driver {
        row: usize,
        x: i32,
        elem: usize,
        node: String,
    },
}

struct Ladder<'a> {
    c: &'a Circuit,
    tree: Tree,
    ops: Vec<Op>,
    rows: usize,
}

/// Vertical pitch of one element in a shunt chain.
const CHAIN_STEP: i32 = LEN + 12;

impl<'a> Ladder<'a> {
    fn new(c: &'a Circuit, tree: Tree) -> Self {
        Ladder { c, tree, ops: Vec::new(), rows: 1 }
    }

    /// The pitch between stacked parallel elements of a series group.
    fn stack(&self, group: &[usize]) -> i32 {
        group.iter().map(|&e| label_h(self.c, e)).max().unwrap_or(0) + 24
    }

    fn series_w(&self, group: &[usize]) -> i32 {
        let label = group.iter().map(|&e| label_w(self.c, e)).max().unwrap_or(0);
        (LEN + 24).max(label + 10)
    }

    /// Places what hangs from `node`, which the signal line reaches at `x` on `row`.
    fn place(&mut self, node: &str, x: i32, row: usize) {
        let mut cx = x + 14;
        let mut last_shunt = None;
        for chain in self.tree.shunts.remove(node).unwrap_or_default() {
            let w = chain.iter().map(|&e| Builder::column_w(self.c, e)).max().unwrap_or(40);
            self.ops.push(Op::Shunt { row, x: cx, chain, node: node.to_string() });
            last_shunt = Some(cx);
            cx += w;
        }
        let items = self.tree.items.remove(node).unwrap_or_default();
        let mut first = true;
        for item in items {
            let (r, start) = if first {
                self.ops.push(Op::Signal { row, x0: x, x1: cx });
                (row, cx)
            } else {
                let r = self.rows;
                self.rows += 1;
                self.ops.push(Op::Branch { x, from: row, to: r });
                (r, x)
            };
            first = false;
            match item {
                Item::Driver(e) => {
                    let xd = start + 24;
                    self.ops.push(Op::Signal { row: r, x0: start, x1: xd });
                    self.ops.push(Op::Driver { row: r, x: xd, elem: e, node: node.to_string() });
                }
                Item::Series { group, to } => {
                    let xs = start + 10;
                    let w = self.series_w(&group);
                    self.ops.push(Op::Signal { row: r, x0: start, x1: xs });
                    self.ops.push(Op::Series { row: r, x: xs, w, group, from: node.to_string() });
                    let next = xs + w + 12;
                    self.ops.push(Op::Signal { row: r, x0: xs + w, x1: next });
                    self.place(&to, next, r);
                }
            }
        }
        if let (true, Some(end)) = (first, last_shunt) {
            // A node with nothing after it: the signal line ends at its last shunt.
            self.ops.push(Op::Signal { row, x0: x, x1: end });
        }
    }

    fn draw(mut self) -> Drawing {
        let top = self.c.input[0].clone();
        self.ops.push(Op::Signal { row: 0, x0: X_IN, x1: X_IN + 16 });
        self.place(&top, X_IN + 16, 0);
        let c = self.c;
        // Each row's depth (signal to return line) and the label room above its signal line.
        let mut depth = vec![LEN + 24; self.rows];
        let mut above = vec![LINE_H + 16; self.rows];
        for op in &self.ops {
            match op {
                Op::Shunt { row, chain, .. } => depth[*row] = depth[*row].max(chain.len() as i32 * CHAIN_STEP + 12),
                Op::Series { row, group, .. } => {
                    depth[*row] = depth[*row].max((group.len() as i32 - 1) * self.stack(group) + 30);
                    let h = group.iter().map(|&e| label_h(c, e)).max().unwrap_or(0);
                    above[*row] = above[*row].max(h + 16);
                }
                Op::Driver { row, elem, .. } => depth[*row] = depth[*row].max(LEN + 24).max(label_h(c, *elem) + 16),
                _ => {}
            }
        }
        let mut sig = vec![0; self.rows];
        let mut y = MARGIN;
        for r in 0..self.rows {
            sig[r] = y + above[r];
            y = sig[r] + depth[r] + 14;
        }
        let gnd: Vec<i32> = (0..self.rows).map(|r| sig[r] + depth[r]).collect();
        let bottom = gnd[self.rows - 1] + 24;
        let mut b = Builder::default();
        let mut ground_from: Vec<Option<i32>> = vec![None; self.rows];
        let mut right = X_IN + 40;
        let mut ground_to = 0;
        let note_ground = |row: usize, x: i32, g: &mut Vec<Option<i32>>| g[row] = Some(g[row].map_or(x, |v: i32| v.min(x)));
        for op in &self.ops {
            match op {
                Op::Signal { row, x0, x1 } => b.wire(p(*x0, sig[*row]), p(*x1, sig[*row])),
                Op::Branch { x, from, to } => b.wire(p(*x, sig[*from]), p(*x, sig[*to])),
                Op::Shunt { row, x, chain, node } => {
                    let mut yy = sig[*row];
                    let mut at = node.clone();
                    for &e in chain {
                        b.wire(p(*x, yy), p(*x, yy + 12));
                        b.vertical(c, e, p(*x, yy + 12), &at);
                        at = if c.elems[e].nodes[0] == at { c.elems[e].nodes[1].clone() } else { c.elems[e].nodes[0].clone() };
                        yy += CHAIN_STEP;
                    }
                    b.wire(p(*x, yy), p(*x, gnd[*row]));
                    note_ground(*row, *x, &mut ground_from);
                    ground_to = ground_to.max(*x);
                    right = right.max(x + Builder::column_w(c, chain[0]));
                }
                Op::Series { row, x, w, group, from } => {
                    let pitch = self.stack(group);
                    let (xl, xr) = (*x, x + w);
                    for (k, &e) in group.iter().enumerate() {
                        let yy = sig[*row] + k as i32 * pitch;
                        let t0 = xl + (w - LEN) / 2;
                        b.wire(p(xl, yy), p(t0, yy));
                        b.horizontal(c, e, p(t0, yy), from);
                        b.wire(p(t0 + LEN, yy), p(xr, yy));
                    }
                    if group.len() > 1 {
                        let last = sig[*row] + (group.len() as i32 - 1) * pitch;
                        b.wire(p(xl, sig[*row]), p(xl, last));
                        b.wire(p(xr, sig[*row]), p(xr, last));
                    }
                    right = right.max(xr + 12);
                }
                Op::Driver { row, x, elem, node } => {
                    b.vertical(c, *elem, p(*x, sig[*row]), node);
                    b.wire(p(*x, sig[*row] + LEN), p(*x, gnd[*row]));
                    note_ground(*row, *x, &mut ground_from);
                    ground_to = ground_to.max(*x);
                    right = right.max(x + Builder::column_w(c, *elem));
                }
            }
        }
        // Every row's return line runs right to the return bus, which comes back along the foot.
        // With one row returning there is no bus to run down: its return ends at its last
        // joint rather than past it.
        let bus = if ground_from[..self.rows - 1].iter().any(|g| g.is_some()) || ground_from[self.rows - 1].is_none() { right + 10 } else { ground_to };
        // The last row's return line is the foot itself when it has one (nothing lies below
        // it), else the foot runs beneath every row.
        let last = self.rows - 1;
        let bottom = if ground_from[last].is_some() { gnd[last] } else { bottom };
        let mut top_ground = bottom;
        for r in 0..last {
            if let Some(x0) = ground_from[r] {
                b.wire(p(x0, gnd[r]), p(bus, gnd[r]));
                top_ground = top_ground.min(gnd[r]);
            }
        }
        b.wire(p(bus, top_ground), p(bus, bottom));
        b.wire(p(bus, bottom), p(X_IN, bottom));
        let inputs = [p(X_IN, sig[0]), p(X_IN, bottom)];
        b.finish(inputs, Method::Ladder)
    }
}

/// One rail per node, one column per element: correct for any network.
fn rails(c: &Circuit) -> Drawing {
    let [top, gnd] = &c.input;
    // Nodes in the order a breadth-first walk from the signal terminal meets them; the
    // return last.
    let mut order: Vec<String> = vec![top.clone()];
    let mut queue = VecDeque::from([top.clone()]);
    while let Some(u) = queue.pop_front() {
        for e in &c.elems {
            if e.nodes.contains(&u) {
                for n in &e.nodes {
                    if !order.contains(n) && n != gnd {
                        order.push(n.clone());
                        queue.push_back(n.clone());
                    }
                }
            }
        }
    }
    for e in &c.elems {
        for n in &e.nodes {
            if !order.contains(n) && n != gnd {
                order.push(n.clone());
            }
        }
    }
    if top != gnd {
        order.push(gnd.clone());
    }
    let index: BTreeMap<&str, usize> = order.iter().enumerate().map(|(i, n)| (n.as_str(), i)).collect();
    let pitch = (LEN + 44).max((MAX_LINES as i32) * LINE_H + 28);
    let rail_y = |i: usize| MARGIN + LINE_H + 8 + i as i32 * pitch;
    let mut cols: Vec<usize> = (0..c.elems.len()).collect();
    let span = |e: usize| {
        let (a, b) = (index[c.elems[e].nodes[0].as_str()], index[c.elems[e].nodes[1].as_str()]);
        (a.min(b), a.max(b))
    };
    cols.sort_by_key(|&e| (span(e), e));
    let mut b = Builder::default();
    let mut extent: BTreeMap<usize, (i32, i32)> = BTreeMap::new();
    let mut stretch = |i: usize, x: i32| {
        let e = extent.entry(i).or_insert((x, x));
        e.0 = e.0.min(x);
        e.1 = e.1.max(x);
    };
    stretch(0, X_IN);
    stretch(index[gnd.as_str()], X_IN);
    let mut x = X_IN + 30;
    for e in cols {
        let (u, l) = span(e);
        let (yu, yl) = (rail_y(u), rail_y(l));
        let top_node = &order[u];
        b.wire(p(x, yu), p(x, yu + 14));
        b.vertical(c, e, p(x, yu + 14), top_node);
        if u == l {
            // Both ends on one node: the lower lead loops back to the rail on the left.
            let foot = yu + 14 + LEN + 10;
            b.wire(p(x, yu + 14 + LEN), p(x, foot));
            b.wire(p(x, foot), p(x - 16, foot));
            b.wire(p(x - 16, foot), p(x - 16, yu));
            stretch(u, x - 16);
        } else {
            b.wire(p(x, yu + 14 + LEN), p(x, yl));
        }
        stretch(u, x);
        stretch(l, x);
        x += Builder::column_w(c, e) + 10;
    }
    for (i, (x0, x1)) in extent {
        b.wire(p(x0, rail_y(i)), p(x1, rail_y(i)));
    }
    let inputs = [p(X_IN, rail_y(0)), p(X_IN, rail_y(index[gnd.as_str()]))];
    b.finish(inputs, Method::Rails)
}
