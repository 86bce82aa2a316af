//! The crossover drawn from the job: a schematic laid out from the network alone.
//!
//! The drawing knows nothing of the job's model: [`view`] turns a network (as designed, as
//! left, as an option proposes it) into a [`Circuit`] of two-terminal elements with their
//! labels and marks; [`layout`] places them (a ladder stacked by driver where the network is
//! one, otherwise one rail per node); [`geometry`] rebuilds the netlist from the drawing's
//! geometry alone and checks that nothing overlaps, so a drawing is checked, not trusted; and
//! [`svg`] writes it with the graphical symbols of IEC 60617 (resistor as a rectangle,
//! capacitor as two plates, inductor as a row of arcs, loudspeaker as a magnet and cone).

pub mod geometry;
pub mod layout;
pub mod svg;
pub mod view;

/// The kind of symbol an element is drawn with.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Sym {
    Resistor,
    Capacitor,
    Inductor,
    Driver,
}

/// What the work did to an element, shown by line weight and pattern (and said in its label,
/// so nothing rests on the drawing's style alone).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mark {
    Kept,
    Replaced,
    Added,
    Removed,
}

/// One two-terminal element: a part or a driver.
#[derive(Debug, Clone, PartialEq)]
pub struct Elem {
    pub name: String,
    pub sym: Sym,
    /// The nodes its two terminals join; for a driver, its + terminal first.
    pub nodes: [String; 2],
    /// The label's lines after the name: value, reading, what was done.
    pub text: Vec<String>,
    pub mark: Mark,
    /// A driver or part found failed (open, shorted, rubbing): drawn struck through.
    pub failed: bool,
    /// Which terminal a driver's + mark stands at: 0 normally, 1 for a driver wired
    /// inverted (its + terminal on the second node).
    pub plus_at: usize,
}

/// A network to draw: its input terminals (signal, return) and its elements.
#[derive(Debug, Clone, PartialEq)]
pub struct Circuit {
    pub input: [String; 2],
    pub elems: Vec<Elem>,
}

/// A point on the drawing, in SVG user units (integers, so geometry compares exactly).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct P {
    pub x: i32,
    pub y: i32,
}

pub const fn p(x: i32, y: i32) -> P {
    P { x, y }
}

/// An axis-aligned rectangle.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Rect {
    pub x0: i32,
    pub y0: i32,
    pub x1: i32,
    pub y1: i32,
}

impl Rect {
    /// Whether the open interiors of two rectangles meet.
    pub fn overlaps(&self, o: &Rect) -> bool {
        self.x0 < o.x1 && o.x0 < self.x1 && self.y0 < o.y1 && o.y0 < self.y1
    }
}

/// A straight wire, horizontal or vertical.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Seg {
    pub a: P,
    pub b: P,
}

/// An element placed: its terminals (`t[i]` joins `nodes[i]`) and the box its symbol fills.
#[derive(Debug, Clone, PartialEq)]
pub struct Placed {
    pub elem: usize,
    pub vertical: bool,
    pub t: [P; 2],
    pub bbox: Rect,
}

/// Text on the drawing: its lines, the top-left corner and the box it fills.
#[derive(Debug, Clone, PartialEq)]
pub struct Text {
    pub lines: Vec<String>,
    pub rect: Rect,
    /// Set in bold: an element's designator.
    pub bold_first: bool,
}

/// How the drawing was laid out.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Method {
    /// Ladders stacked by driver: series parts along each signal path, shunt parts dropping
    /// to the return line.
    Ladder,
    /// One horizontal rail per node and one column per element: any network.
    Rails,
}

/// A laid-out schematic.
#[derive(Debug, Clone, PartialEq)]
pub struct Drawing {
    pub width: i32,
    pub height: i32,
    pub symbols: Vec<Placed>,
    pub wires: Vec<Seg>,
    pub dots: Vec<P>,
    pub texts: Vec<Text>,
    /// The amplifier terminals: signal (+) and return (-).
    pub inputs: [P; 2],
    pub method: Method,
}

/// Width of a label's box for `lines` (a conservative 6 units a character at 10 units).
pub fn text_box(at: P, lines: &[String]) -> Rect {
    let w = lines.iter().map(|l| l.chars().count() as i32).max().unwrap_or(0) * CHAR_W + 2;
    Rect { x0: at.x, y0: at.y, x1: at.x + w, y1: at.y + lines.len() as i32 * LINE_H }
}

pub const CHAR_W: i32 = 6;
pub const LINE_H: i32 = 12;
/// A symbol's length from terminal to terminal.
pub const LEN: i32 = 40;

#[cfg(test)]
#[path = "tests.rs"]
mod tests;
