//! Reads a rendered report back as its reader would, with lopdf (a general-purpose PDF
//! library) and no program outside cargo: each page's words with their boxes, in lines from
//! the top of the page; the files the PDF carries; the images it places.
//!
//! The text comes from the page's own operators (PDF 1.7, ISO 32000-1, section 9): each glyph
//! placed by the text and graphics matrices (9.4.4), its character from the font's ToUnicode
//! map (9.10.3), its advance from the font's widths (9.2.4, 9.7.4.3), forms drawn by `Do`
//! followed into (8.10). Words are glyphs closer than a fifth of the font's size; lines are
//! words on one baseline, ordered left to right.

use lopdf::content::Content;
use lopdf::{Dictionary, Document, Object, ObjectId};
use std::collections::HashMap;
use std::path::Path;
use std::rc::Rc;

/// A word on a page, in points from the page's top left corner.
#[derive(Clone, Debug)]
pub struct Word {
    pub x0: f64,
    /// The top and bottom of the word's line box (its baseline less 0.8 and plus 0.2 of its size).
    pub top: f64,
    pub bottom: f64,
    pub text: String,
}

pub struct Page {
    pub height: f64,
    /// Lines from the top of the page, each its words from left to right.
    pub lines: Vec<Vec<Word>>,
}

impl Page {
    /// The page's lines, each its words joined by single spaces.
    pub fn plain(&self) -> Vec<String> {
        self.lines.iter().map(|l| l.iter().map(|w| w.text.as_str()).collect::<Vec<_>>().join(" ")).collect()
    }

    /// The page laid out as text: each word set at a column from its place across the page,
    /// a blank line where the page leaves a gap of more than two lines.
    pub fn layout(&self) -> String {
        let mut out = String::new();
        let mut last_bottom: Option<f64> = None;
        for line in &self.lines {
            let (top, bottom) = (line[0].top, line[0].bottom);
            if let Some(b) = last_bottom {
                if top - b > 2.0 * (bottom - top) {
                    out.push('\n');
                }
            }
            let mut s = String::new();
            for w in line {
                let col = (w.x0 / COLUMN).round() as usize;
                let have = s.chars().count();
                if have < col {
                    s.extend(std::iter::repeat_n(' ', col - have));
                } else if have > 0 {
                    s.push(' ');
                }
                s.push_str(&w.text);
            }
            out.push_str(&s);
            out.push('\n');
            last_bottom = Some(bottom);
        }
        out
    }
}

/// Points a character column stands for in `Page::layout` (about the width of a body
/// glyph at 10 pt).
const COLUMN: f64 = 4.5;

pub struct Pdf {
    pub pages: Vec<Page>,
    /// Every image drawn, as (width, height) in pixels, in the order drawn.
    pub images: Vec<(i64, i64)>,
    doc: Document,
}

impl Pdf {
    pub fn open(path: &Path) -> Pdf {
        let doc = Document::load(path).unwrap_or_else(|e| panic!("{}: not a PDF lopdf reads: {e}", path.display()));
        let mut reader = Reader { doc: &doc, fonts: HashMap::new(), images: Vec::new() };
        let mut pages = Vec::new();
        for (_, id) in doc.get_pages() {
            pages.push(reader.page(id));
        }
        let images = reader.images;
        Pdf { pages, images, doc }
    }

    /// The document's text as lines, pages ended by a form feed.
    pub fn text(&self) -> String {
        self.pages.iter().map(|p| p.layout() + "\u{c}").collect()
    }

    /// Every word of the document, joined by single spaces.
    pub fn words(&self) -> String {
        self.pages.iter().flat_map(|p| p.plain()).collect::<Vec<_>>().join(" ").split_whitespace().collect::<Vec<_>>().join(" ")
    }

    /// The files the document carries (its EmbeddedFiles name tree, ISO 32000-1 7.11.4), by
    /// name, with their bytes.
    pub fn attachments(&self) -> Vec<(String, Vec<u8>)> {
        let doc = &self.doc;
        let mut out = Vec::new();
        let root = doc.trailer.get(b"Root").ok().map(|o| deref(doc, o));
        let tree = root
            .and_then(|r| r.as_dict().ok())
            .and_then(|r| r.get(b"Names").ok())
            .map(|o| deref(doc, o))
            .and_then(|n| n.as_dict().ok())
            .and_then(|n| n.get(b"EmbeddedFiles").ok())
            .map(|o| deref(doc, o));
        if let Some(Object::Dictionary(node)) = tree {
            name_tree(doc, node, &mut out);
        }
        out
    }
}

fn name_tree(doc: &Document, node: &Dictionary, out: &mut Vec<(String, Vec<u8>)>) {
    if let Ok(Object::Array(kids)) = node.get(b"Kids").map(|o| deref(doc, o)) {
        for k in kids {
            if let Object::Dictionary(d) = deref(doc, k) {
                name_tree(doc, d, out);
            }
        }
    }
    if let Ok(Object::Array(names)) = node.get(b"Names").map(|o| deref(doc, o)) {
        for pair in names.chunks(2) {
            let [key, spec] = pair else { continue };
            let Object::Dictionary(spec) = deref(doc, spec) else { continue };
            let name = spec.get(b"UF").or_else(|_| spec.get(b"F")).map(|o| text_string(deref(doc, o))).unwrap_or_else(|_| text_string(deref(doc, key)));
            let stream = spec.get(b"EF").map(|o| deref(doc, o)).ok().and_then(|ef| ef.as_dict().ok()).and_then(|ef| ef.get(b"F").ok()).map(|o| deref(doc, o));
            if let Some(Object::Stream(s)) = stream {
                out.push((name, stream_bytes(s)));
            }
        }
    }
}

/// A PDF text string: UTF-16BE after its byte order mark, else PDFDocEncoding (taken as
/// Latin-1, which it matches for the characters a file name uses).
fn text_string(o: &Object) -> String {
    match o {
        Object::String(b, _) if b.starts_with(&[0xfe, 0xff]) => {
            let units: Vec<u16> = b[2..].chunks(2).map(|c| u16::from_be_bytes([c[0], *c.get(1).unwrap_or(&0)])).collect();
            String::from_utf16_lossy(&units)
        }
        Object::String(b, _) => b.iter().map(|&c| c as char).collect(),
        Object::Name(b) => String::from_utf8_lossy(b).into_owned(),
        _ => String::new(),
    }
}

fn stream_bytes(s: &lopdf::Stream) -> Vec<u8> {
    if s.dict.has(b"Filter") {
        s.decompressed_content().unwrap_or_else(|e| panic!("a stream lopdf cannot decode: {e}"))
    } else {
        s.content.clone()
    }
}

fn deref<'a>(doc: &'a Document, o: &'a Object) -> &'a Object {
    match o {
        Object::Reference(id) => doc.get_object(*id).unwrap_or(o),
        _ => o,
    }
}

fn num(o: &Object) -> f64 {
    match o {
        Object::Integer(i) => *i as f64,
        Object::Real(r) => *r as f64,
        _ => 0.0,
    }
}

type Matrix = [f64; 6];
const IDENTITY: Matrix = [1.0, 0.0, 0.0, 1.0, 0.0, 0.0];

/// a then b (row vectors, as the PDF's matrices compose).
fn mul(a: Matrix, b: Matrix) -> Matrix {
    [a[0] * b[0] + a[1] * b[2], a[0] * b[1] + a[1] * b[3], a[2] * b[0] + a[3] * b[2], a[2] * b[1] + a[3] * b[3], a[4] * b[0] + a[5] * b[2] + b[4], a[4] * b[1] + a[5] * b[3] + b[5]]
}

fn matrix(ops: &[Object]) -> Matrix {
    let mut m = IDENTITY;
    for (i, o) in ops.iter().take(6).enumerate() {
        m[i] = num(o);
    }
    m
}

/// What a font tells the reader: how its codes are read, what each says and how wide it is.
struct Font {
    two_byte: bool,
    unicode: HashMap<u32, String>,
    widths: HashMap<u32, f64>,
    default_width: f64,
    /// Glyph space to text space: 1/1000, or a Type 3 font's matrix.
    scale: f64,
}

impl Font {
    fn read(doc: &Document, d: &Dictionary) -> Font {
        let subtype = d.get(b"Subtype").ok().and_then(|o| o.as_name().ok()).unwrap_or(b"");
        let mut f = Font { two_byte: subtype == b"Type0", unicode: HashMap::new(), widths: HashMap::new(), default_width: 0.0, scale: 0.001 };
        if let Ok(Object::Stream(s)) = d.get(b"ToUnicode").map(|o| deref(doc, o)) {
            f.unicode = cmap(&String::from_utf8_lossy(&stream_bytes(s)));
        }
        if f.two_byte {
            f.default_width = 1000.0;
            let cid = d.get(b"DescendantFonts").map(|o| deref(doc, o)).ok().and_then(|a| a.as_array().ok()).and_then(|a| a.first()).map(|o| deref(doc, o));
            if let Some(Object::Dictionary(cid)) = cid {
                if let Ok(w) = cid.get(b"DW") {
                    f.default_width = num(deref(doc, w));
                }
                if let Ok(Object::Array(w)) = cid.get(b"W").map(|o| deref(doc, o)) {
                    let mut i = 0;
                    while i + 1 < w.len() {
                        let first = num(deref(doc, &w[i])) as u32;
                        match deref(doc, &w[i + 1]) {
                            Object::Array(ws) => {
                                for (k, x) in ws.iter().enumerate() {
                                    f.widths.insert(first + k as u32, num(deref(doc, x)));
                                }
                                i += 2;
                            }
                            last => {
                                let width = w.get(i + 2).map(|o| num(deref(doc, o))).unwrap_or(0.0);
                                for c in first..=num(last) as u32 {
                                    f.widths.insert(c, width);
                                }
                                i += 3;
                            }
                        }
                    }
                }
            }
        } else {
            if subtype == b"Type3" {
                if let Ok(Object::Array(m)) = d.get(b"FontMatrix").map(|o| deref(doc, o)) {
                    f.scale = m.first().map(num).unwrap_or(0.001);
                }
            }
            let first = d.get(b"FirstChar").map(|o| num(deref(doc, o)) as u32).unwrap_or(0);
            if let Ok(Object::Array(ws)) = d.get(b"Widths").map(|o| deref(doc, o)) {
                for (k, x) in ws.iter().enumerate() {
                    f.widths.insert(first + k as u32, num(deref(doc, x)));
                }
            }
        }
        f
    }

    fn codes(&self, bytes: &[u8]) -> Vec<u32> {
        if self.two_byte {
            bytes.chunks(2).map(|c| (c[0] as u32) << 8 | *c.get(1).unwrap_or(&0) as u32).collect()
        } else {
            bytes.iter().map(|&b| b as u32).collect()
        }
    }

    fn text(&self, code: u32) -> String {
        match self.unicode.get(&code) {
            Some(s) => s.clone(),
            None if !self.two_byte => char::from_u32(code).map(String::from).unwrap_or_default(),
            None => "\u{fffd}".into(),
        }
    }
}

/// A ToUnicode CMap's bfchar and bfrange entries (ISO 32000-1 9.10.3; Adobe TN 5411).
fn cmap(src: &str) -> HashMap<u32, String> {
    // Tokens: hex strings, brackets and words.
    let mut tokens: Vec<String> = Vec::new();
    let mut chars = src.chars().peekable();
    while let Some(c) = chars.next() {
        match c {
            '<' => {
                let mut h = String::new();
                for d in chars.by_ref() {
                    if d == '>' {
                        break;
                    }
                    if !d.is_whitespace() {
                        h.push(d);
                    }
                }
                tokens.push(format!("<{h}"));
            }
            '[' | ']' => tokens.push(c.to_string()),
            c if c.is_whitespace() => {}
            c => {
                let mut w = c.to_string();
                while let Some(&d) = chars.peek() {
                    if d.is_whitespace() || "<[]".contains(d) {
                        break;
                    }
                    w.push(d);
                    chars.next();
                }
                tokens.push(w);
            }
        }
    }
    let hex = |t: &str| u32::from_str_radix(&t[1..], 16).unwrap_or(0);
    let utf16 = |t: &str| {
        let units: Vec<u16> = (1..t.len()).step_by(4).filter_map(|i| t.get(i..i + 4)).filter_map(|u| u16::from_str_radix(u, 16).ok()).collect();
        String::from_utf16_lossy(&units)
    };
    let mut map = HashMap::new();
    let mut i = 0;
    let mut mode = "";
    while i < tokens.len() {
        let t = tokens[i].as_str();
        match t {
            "beginbfchar" | "beginbfrange" => mode = if t == "beginbfchar" { "char" } else { "range" },
            "endbfchar" | "endbfrange" => mode = "",
            _ if mode == "char" && t.starts_with('<') && i + 1 < tokens.len() => {
                map.insert(hex(t), utf16(&tokens[i + 1]));
                i += 1;
            }
            _ if mode == "range" && t.starts_with('<') && i + 2 < tokens.len() => {
                let (lo, hi) = (hex(t), hex(&tokens[i + 1]));
                if tokens[i + 2] == "[" {
                    let mut k = i + 3;
                    let mut code = lo;
                    while k < tokens.len() && tokens[k] != "]" {
                        map.insert(code, utf16(&tokens[k]));
                        code += 1;
                        k += 1;
                    }
                    i = k;
                } else {
                    let base = utf16(&tokens[i + 2]);
                    let mut units: Vec<u16> = base.encode_utf16().collect();
                    for code in lo..=hi {
                        map.insert(code, String::from_utf16_lossy(&units));
                        if let Some(last) = units.last_mut() {
                            *last = last.wrapping_add(1);
                        }
                    }
                    i += 2;
                }
            }
            _ => {}
        }
        i += 1;
    }
    map
}

/// One glyph placed on the page: its origin on the baseline and its advance, in points
/// from the page's top left.
struct Glyph {
    x0: f64,
    x1: f64,
    baseline: f64,
    size: f64,
    text: String,
    /// Set along the page's lines (not turned, as a plot's vertical axis label is).
    upright: bool,
    /// Where the glyph starts and where the next would (the page's own coordinates): a turned
    /// label's glyphs are joined where one ends and the next begins.
    from: (f64, f64),
    to: (f64, f64),
}

#[derive(Clone)]
struct State {
    ctm: Matrix,
    font: Option<Rc<Font>>,
    size: f64,
    char_spacing: f64,
    word_spacing: f64,
    scaling: f64,
    leading: f64,
    rise: f64,
}

struct Reader<'a> {
    doc: &'a Document,
    fonts: HashMap<ObjectId, Rc<Font>>,
    images: Vec<(i64, i64)>,
}

impl Reader<'_> {
    fn page(&mut self, id: ObjectId) -> Page {
        let doc = self.doc;
        let page = doc.get_dictionary(id).expect("a page dictionary");
        let mut media = [0.0, 0.0, 595.0, 842.0];
        if let Ok(Object::Array(m)) = page.get(b"MediaBox").map(|o| deref(doc, o)) {
            for (i, x) in m.iter().take(4).enumerate() {
                media[i] = num(deref(doc, x));
            }
        }
        let height = media[3] - media[1];
        let resources = match page.get(b"Resources").map(|o| deref(doc, o)) {
            Ok(Object::Dictionary(d)) => d.clone(),
            _ => Dictionary::new(),
        };
        let content = doc.get_page_content(id).unwrap_or_default();
        let ops = Content::decode(&content).map(|c| c.operations).unwrap_or_default();
        let mut glyphs = Vec::new();
        let state = State { ctm: IDENTITY, font: None, size: 0.0, char_spacing: 0.0, word_spacing: 0.0, scaling: 1.0, leading: 0.0, rise: 0.0 };
        self.run(&ops, &resources, state, &mut glyphs, 0);
        // The page's own y runs up from its foot; the words' run down from its top.
        for g in &mut glyphs {
            g.baseline = media[3] - g.baseline;
            g.x0 -= media[0];
            g.x1 -= media[0];
        }
        Page { height, lines: lines(glyphs) }
    }

    fn font(&mut self, resources: &Dictionary, name: &[u8]) -> Option<Rc<Font>> {
        let doc = self.doc;
        let fonts = resources.get(b"Font").map(|o| deref(doc, o)).ok()?.as_dict().ok()?;
        let entry = fonts.get(name).ok()?;
        if let Object::Reference(id) = entry {
            if let Some(f) = self.fonts.get(id) {
                return Some(f.clone());
            }
            let f = Rc::new(Font::read(doc, doc.get_dictionary(*id).ok()?));
            self.fonts.insert(*id, f.clone());
            return Some(f);
        }
        Some(Rc::new(Font::read(doc, entry.as_dict().ok()?)))
    }

    fn run(&mut self, ops: &[lopdf::content::Operation], resources: &Dictionary, mut gs: State, out: &mut Vec<Glyph>, depth: usize) {
        let doc = self.doc;
        let mut stack: Vec<State> = Vec::new();
        let (mut tm, mut tlm) = (IDENTITY, IDENTITY);
        for op in ops {
            let a = &op.operands;
            match op.operator.as_str() {
                "q" => stack.push(gs.clone()),
                "Q" => gs = stack.pop().unwrap_or_else(|| gs.clone()),
                "cm" => gs.ctm = mul(matrix(a), gs.ctm),
                "BT" => (tm, tlm) = (IDENTITY, IDENTITY),
                "Tf" if a.len() == 2 => {
                    gs.font = a[0].as_name().ok().and_then(|n| self.font(resources, n));
                    gs.size = num(&a[1]);
                }
                "Tc" if !a.is_empty() => gs.char_spacing = num(&a[0]),
                "Tw" if !a.is_empty() => gs.word_spacing = num(&a[0]),
                "Tz" if !a.is_empty() => gs.scaling = num(&a[0]) / 100.0,
                "TL" if !a.is_empty() => gs.leading = num(&a[0]),
                "Ts" if !a.is_empty() => gs.rise = num(&a[0]),
                "Tm" => (tm, tlm) = (matrix(a), matrix(a)),
                "Td" | "TD" if a.len() == 2 => {
                    if op.operator == "TD" {
                        gs.leading = -num(&a[1]);
                    }
                    tlm = mul([1.0, 0.0, 0.0, 1.0, num(&a[0]), num(&a[1])], tlm);
                    tm = tlm;
                }
                "T*" => {
                    tlm = mul([1.0, 0.0, 0.0, 1.0, 0.0, -gs.leading], tlm);
                    tm = tlm;
                }
                "Tj" | "'" | "\"" | "TJ" => {
                    if op.operator != "Tj" && op.operator != "TJ" {
                        if op.operator == "\"" && a.len() == 3 {
                            gs.word_spacing = num(&a[0]);
                            gs.char_spacing = num(&a[1]);
                        }
                        tlm = mul([1.0, 0.0, 0.0, 1.0, 0.0, -gs.leading], tlm);
                        tm = tlm;
                    }
                    let items: Vec<&Object> = match a.last() {
                        Some(Object::Array(items)) => items.iter().collect(),
                        Some(o) => vec![o],
                        None => vec![],
                    };
                    for item in items {
                        match item {
                            Object::String(bytes, _) => self.show(bytes, &gs, &mut tm, out),
                            o => tm = mul([1.0, 0.0, 0.0, 1.0, -num(o) / 1000.0 * gs.size * gs.scaling, 0.0], tm),
                        }
                    }
                }
                "Do" if depth < 16 => {
                    let Some(name) = a.first().and_then(|o| o.as_name().ok()) else { continue };
                    let xobj = resources.get(b"XObject").map(|o| deref(doc, o)).ok().and_then(|x| x.as_dict().ok()).and_then(|x| x.get(name).ok()).map(|o| deref(doc, o));
                    let Some(Object::Stream(s)) = xobj else { continue };
                    match s.dict.get(b"Subtype").ok().and_then(|o| o.as_name().ok()) {
                        Some(b"Image") => {
                            let dim = |k: &[u8]| s.dict.get(k).map(|o| num(deref(doc, o)) as i64).unwrap_or(0);
                            self.images.push((dim(b"Width"), dim(b"Height")));
                        }
                        Some(b"Form") => {
                            let m = match s.dict.get(b"Matrix").map(|o| deref(doc, o)) {
                                Ok(Object::Array(m)) => matrix(m),
                                _ => IDENTITY,
                            };
                            let own = match s.dict.get(b"Resources").map(|o| deref(doc, o)) {
                                Ok(Object::Dictionary(d)) => d.clone(),
                                _ => resources.clone(),
                            };
                            let inner = Content::decode(&stream_bytes(s)).map(|c| c.operations).unwrap_or_default();
                            let mut form = gs.clone();
                            form.ctm = mul(m, gs.ctm);
                            self.run(&inner, &own, form, out, depth + 1);
                        }
                        _ => {}
                    }
                }
                _ => {}
            }
        }
    }

    fn show(&mut self, bytes: &[u8], gs: &State, tm: &mut Matrix, out: &mut Vec<Glyph>) {
        let Some(font) = gs.font.clone() else { return };
        for code in font.codes(bytes) {
            let w0 = font.widths.get(&code).copied().unwrap_or(font.default_width) * font.scale;
            let trm = mul(mul([gs.size * gs.scaling, 0.0, 0.0, gs.size, 0.0, gs.rise], *tm), gs.ctm);
            let (ox, oy) = (trm[4], trm[5]);
            let ex = w0 * trm[0] + trm[4];
            let size = (trm[2] * trm[2] + trm[3] * trm[3]).sqrt();
            let upright = trm[1].abs() < 1e-6 * trm[0].abs().max(1e-9) && trm[0] > 0.0;
            let to = (ex, w0 * trm[1] + trm[5]);
            out.push(Glyph { x0: ox.min(ex), x1: ox.max(ex), baseline: oy, size, text: font.text(code), upright, from: (ox, oy), to });
            let space = if !font.two_byte && code == 32 { gs.word_spacing } else { 0.0 };
            let tx = (w0 * gs.size + gs.char_spacing + space) * gs.scaling;
            *tm = mul([1.0, 0.0, 0.0, 1.0, tx, 0.0], *tm);
        }
    }
}

/// Glyphs to lines of words: upright glyphs on one baseline (within a third of their size)
/// make a line, split into words where a space is set or a gap of a fifth of the size is
/// left; a turned label (its glyphs drawn one after another, each starting where the last
/// ended) is one line of its own where it starts.
fn lines(mut glyphs: Vec<Glyph>) -> Vec<Vec<Word>> {
    let mut out: Vec<(f64, Vec<Word>)> = Vec::new();
    let word = |gs: &[&Glyph]| -> Option<Word> {
        let text: String = gs.iter().map(|g| g.text.as_str()).collect::<String>().trim().to_string();
        if text.is_empty() {
            return None;
        }
        let size = gs.iter().map(|g| g.size).fold(0.0, f64::max);
        let base = gs[0].baseline;
        Some(Word { x0: gs[0].x0, top: base - 0.8 * size, bottom: base + 0.2 * size, text })
    };
    // Turned runs.
    let mut turned: Vec<Glyph> = Vec::new();
    glyphs.retain_mut(|g| {
        if g.upright {
            true
        } else {
            turned.push(Glyph { text: std::mem::take(&mut g.text), ..*g });
            false
        }
    });
    let mut i = 0;
    while i < turned.len() {
        let mut j = i + 1;
        while j < turned.len() && {
            let (a, b) = (turned[j - 1].to, turned[j].from);
            (a.0 - b.0).hypot(a.1 - b.1) < 0.3 * turned[j].size
        } {
            j += 1;
        }
        let gs: Vec<&Glyph> = turned[i..j].iter().collect();
        if let Some(w) = word(&gs) {
            out.push((turned[i].baseline, vec![w]));
        }
        i = j;
    }
    // Upright lines.
    glyphs.sort_by(|a, b| a.baseline.total_cmp(&b.baseline));
    let mut start = 0;
    while start < glyphs.len() {
        let mut end = start + 1;
        while end < glyphs.len() && (glyphs[end].baseline - glyphs[start].baseline) < 0.33 * glyphs[start].size.max(glyphs[end].size) {
            end += 1;
        }
        let mut line: Vec<&Glyph> = glyphs[start..end].iter().collect();
        line.sort_by(|a, b| a.x0.total_cmp(&b.x0));
        let mut words = Vec::new();
        let mut cur: Vec<&Glyph> = Vec::new();
        for g in line {
            let blank = g.text.trim().is_empty();
            let gap = cur.last().map(|p| g.x0 - p.x1 > 0.2 * g.size.max(p.size)).unwrap_or(false);
            if blank || gap {
                words.extend(word(&cur));
                cur.clear();
            }
            if !blank {
                cur.push(g);
            }
        }
        words.extend(word(&cur));
        if !words.is_empty() {
            out.push((glyphs[start].baseline, words));
        }
        start = end;
    }
    out.sort_by(|a, b| a.0.total_cmp(&b.0));
    out.into_iter().map(|l| l.1).collect()
}
