//! A drawing as SVG, in black on white so it reads in greyscale and in print. The symbols
//! follow IEC 60617: a resistor is a rectangle, a capacitor two plates, an inductor a row of
//! arcs, a loudspeaker a small rectangle (the magnet) with a trapezoid (the cone). What the
//! work did is shown by line weight and pattern, never by colour alone: a replaced part is
//! drawn heavy, an added part heavy on a shaded ground, a removed part dashed; a failed
//! driver or part is struck through. Crossing wires hop; joints carry a dot.

use super::{geometry, Circuit, Drawing, Mark, Placed, Sym, LEN, LINE_H, P};
use std::fmt::Write;

pub const LABEL_FONT: &str = "DejaVu Sans Mono";

fn esc(s: &str) -> String {
    s.replace('&', "&amp;").replace('<', "&lt;").replace('>', "&gt;").replace('"', "&quot;")
}

fn stroke(mark: Mark) -> &'static str {
    match mark {
        Mark::Kept => r##"stroke="#000" stroke-width="1.3""##,
        Mark::Replaced | Mark::Added => r##"stroke="#000" stroke-width="2.8""##,
        Mark::Removed => r##"stroke="#555" stroke-width="1.2" stroke-dasharray="3 2""##,
    }
}

/// A symbol's strokes, drawn in its own frame (terminals at u = 0 and u = LEN on the axis)
/// and mapped onto the page.
fn symbol(out: &mut String, s: &Placed, c: &Circuit) {
    let el = &c.elems[s.elem];
    let st = stroke(el.mark);
    if el.mark == Mark::Added {
        let b = s.bbox;
        let _ = write!(out, r##"<rect x="{}" y="{}" width="{}" height="{}" fill="#d0d0d0" stroke="none"/>"##, b.x0 - 3, b.y0 - 3, b.x1 - b.x0 + 6, b.y1 - b.y0 + 6);
    }
    // The terminal nearer the top-left is the frame's origin.
    let o = if s.t[0] <= s.t[1] { s.t[0] } else { s.t[1] };
    let o = if s.vertical { P { x: s.t[0].x, y: s.t[0].y.min(s.t[1].y) } } else { P { x: s.t[0].x.min(s.t[1].x), y: o.y } };
    let map = |u: f64, v: f64| -> (f64, f64) {
        if s.vertical {
            (o.x as f64 + v, o.y as f64 + u)
        } else {
            (o.x as f64 + u, o.y as f64 + v)
        }
    };
    let line = |out: &mut String, a: (f64, f64), b: (f64, f64)| {
        let (p, q) = (map(a.0, a.1), map(b.0, b.1));
        let _ = write!(out, r#"<line x1="{}" y1="{}" x2="{}" y2="{}" {st} fill="none"/>"#, p.0, p.1, q.0, q.1);
    };
    let l = LEN as f64;
    match el.sym {
        Sym::Resistor => {
            line(out, (0.0, 0.0), (8.0, 0.0));
            line(out, (l - 8.0, 0.0), (l, 0.0));
            let (a, b) = (map(8.0, -5.0), map(l - 8.0, 5.0));
            let (x, y) = (a.0.min(b.0), a.1.min(b.1));
            let _ = write!(out, r#"<rect x="{x}" y="{y}" width="{}" height="{}" {st} fill="white"/>"#, (a.0 - b.0).abs(), (a.1 - b.1).abs());
        }
        Sym::Capacitor => {
            let m = l / 2.0;
            line(out, (0.0, 0.0), (m - 3.0, 0.0));
            line(out, (m + 3.0, 0.0), (l, 0.0));
            line(out, (m - 3.0, -8.0), (m - 3.0, 8.0));
            line(out, (m + 3.0, -8.0), (m + 3.0, 8.0));
        }
        Sym::Inductor => {
            line(out, (0.0, 0.0), (8.0, 0.0));
            line(out, (l - 8.0, 0.0), (l, 0.0));
            let start = map(8.0, 0.0);
            let mut d = format!("M {} {}", start.0, start.1);
            // Four arcs bulging away from the label: up when horizontal, left when vertical.
            let sweep = if s.vertical { 0 } else { 1 };
            for k in 1..=4 {
                let e = map(8.0 + 6.0 * k as f64, 0.0);
                let _ = write!(d, " A 3 3 0 0 {sweep} {} {}", e.0, e.1);
            }
            let _ = write!(out, r#"<path d="{d}" {st} fill="none"/>"#);
        }
        Sym::Driver => {
            // Drawn upright: magnet between the leads, cone to the right.
            line(out, (0.0, 0.0), (11.0, 0.0));
            line(out, (29.0, 0.0), (l, 0.0));
            let corner = map(11.0, -4.0);
            let _ = write!(out, r#"<rect x="{}" y="{}" width="8" height="18" {st} fill="white"/>"#, corner.0 - 8.0 * 0.0, corner.1);
            let pts: Vec<String> = [(13.0, 4.0), (5.0, 14.0), (35.0, 14.0), (27.0, 4.0)]
                .iter()
                .map(|&(u, v)| {
                    let q = map(u, v);
                    format!("{},{}", q.0, q.1)
                })
                .collect();
            let _ = write!(out, r#"<polygon points="{}" {st} fill="white"/>"#, pts.join(" "));
        }
    }
    if el.failed {
        let b = s.bbox;
        let _ = write!(
            out,
            r##"<path d="M {} {} L {} {} M {} {} L {} {}" stroke="#000" stroke-width="1.8"/>"##,
            b.x0 - 2,
            b.y0 + 4,
            b.x1 + 2,
            b.y1 - 4,
            b.x0 - 2,
            b.y1 - 4,
            b.x1 + 2,
            b.y0 + 4
        );
    }
}

/// The drawing as an SVG document.
pub fn render(d: &Drawing, c: &Circuit) -> String {
    let mut out = String::new();
    let _ = write!(
        out,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{w}" height="{h}" viewBox="0 0 {w} {h}"><rect width="{w}" height="{h}" fill="white"/>"#,
        w = d.width,
        h = d.height
    );
    let hops = geometry::crossings(&d.wires);
    for w in &d.wires {
        let (a, b) = if (w.a.x, w.a.y) <= (w.b.x, w.b.y) { (w.a, w.b) } else { (w.b, w.a) };
        let mut path = format!("M {} {}", a.x, a.y);
        if a.y == b.y {
            // A horizontal wire hops over every wire it crosses.
            for q in hops.iter().filter(|q| q.y == a.y && q.x > a.x && q.x < b.x) {
                let _ = write!(path, " L {} {} A 4 4 0 0 1 {} {}", q.x - 4, q.y, q.x + 4, q.y);
            }
        }
        let _ = write!(path, " L {} {}", b.x, b.y);
        let _ = write!(out, r##"<path d="{path}" stroke="#000" stroke-width="1.3" fill="none"/>"##);
    }
    for s in &d.symbols {
        symbol(&mut out, s, c);
    }
    for q in &d.dots {
        let _ = write!(out, r##"<circle cx="{}" cy="{}" r="2.8" fill="#000"/>"##, q.x, q.y);
    }
    for q in &d.inputs {
        let _ = write!(out, r##"<circle cx="{}" cy="{}" r="3.5" fill="white" stroke="#000" stroke-width="1.3"/>"##, q.x, q.y);
    }
    for t in &d.texts {
        for (i, line) in t.lines.iter().enumerate() {
            let weight = if i == 0 && t.bold_first { r#" font-weight="bold""# } else { "" };
            let _ = write!(
                out,
                r#"<text x="{}" y="{}" font-family="{LABEL_FONT}" font-size="10"{weight}>{}</text>"#,
                t.rect.x0 + 1,
                t.rect.y0 + (i as i32 + 1) * LINE_H - 3,
                esc(line)
            );
        }
    }
    out.push_str("</svg>");
    out
}
