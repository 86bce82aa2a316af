//! The job file's YAML as a tree that keeps every node's line and column, so that a
//! problem found during validation points at the exact place in the file.

use yaml_rust2::parser::{Event, MarkedEventReceiver, Parser};
use yaml_rust2::scanner::{Marker, TScalarStyle};

pub use crate::diag::Pos;

impl From<Marker> for Pos {
    fn from(m: Marker) -> Self {
        // yaml-rust2 counts lines from 1 and columns from 0.
        Pos { line: m.line(), col: m.col() + 1 }
    }
}

#[derive(Debug, Clone, PartialEq)]
pub enum Node {
    /// A scalar as written; `quoted` tells `"auto"` from auto (both mean the same here).
    Scalar {
        text: String,
        quoted: bool,
        pos: Pos,
    },
    Seq {
        items: Vec<Node>,
        pos: Pos,
    },
    Map {
        entries: Vec<(Key, Node)>,
        pos: Pos,
    },
}

#[derive(Debug, Clone, PartialEq)]
pub struct Key {
    pub name: String,
    pub pos: Pos,
}

impl Node {
    pub fn pos(&self) -> Pos {
        match self {
            Node::Scalar { pos, .. } | Node::Seq { pos, .. } | Node::Map { pos, .. } => *pos,
        }
    }

    pub fn kind_name(&self) -> &'static str {
        match self {
            Node::Scalar { .. } => "a single value",
            Node::Seq { .. } => "a list",
            Node::Map { .. } => "a mapping",
        }
    }

    /// A mapping's value under `key`; None for a scalar or a list.
    pub fn get(&self, key: &str) -> Option<&Node> {
        match self {
            Node::Map { entries, .. } => entries.iter().find(|(k, _)| k.name == key).map(|(_, v)| v),
            _ => None,
        }
    }

    pub fn as_scalar(&self) -> Option<&str> {
        match self {
            Node::Scalar { text, .. } => Some(text),
            _ => None,
        }
    }

    /// YAML's null (`~`, `null` or nothing at all) written without quotes.
    pub fn is_null(&self) -> bool {
        matches!(self, Node::Scalar { text, quoted: false, .. } if text.is_empty() || text == "~" || text == "null")
    }
}

/// A YAML syntax error, with its place.
#[derive(Debug, Clone)]
pub struct SyntaxError {
    pub pos: Pos,
    pub message: String,
}

/// The deepest a job file nests lists and mappings (a job needs five or six levels).
pub const MAX_DEPTH: usize = 32;

#[derive(Default)]
struct Builder {
    stack: Vec<Partial>,
    root: Option<Node>,
    error: Option<SyntaxError>,
    /// Levels opened beyond [`MAX_DEPTH`], not built.
    beyond: usize,
    /// YAML documents begun: a job file holds one.
    documents: usize,
}

enum Partial {
    Seq(Vec<Node>, Pos),
    /// A mapping's entries, the key waiting for its value, its place, and the keys seen so
    /// far (a set, so a mapping of many keys is checked for repeats in linear time).
    Map(Vec<(Key, Node)>, Option<Key>, Pos, std::collections::HashSet<String>),
}

impl Builder {
    fn push_node(&mut self, node: Node) {
        match self.stack.last_mut() {
            None => self.root = Some(node),
            Some(Partial::Seq(items, _)) => items.push(node),
            Some(Partial::Map(entries, key, _, seen)) => match key.take() {
                Some(k) => entries.push((k, node)),
                None => {
                    let name = match &node {
                        Node::Scalar { text, .. } => text.clone(),
                        _ => {
                            if self.error.is_none() {
                                self.error = Some(SyntaxError { pos: node.pos(), message: "a key must be a plain name, not a list or mapping".into() });
                            }
                            String::new()
                        }
                    };
                    if !seen.insert(name.clone()) && self.error.is_none() {
                        self.error = Some(SyntaxError { pos: node.pos(), message: format!("the key `{name}` appears twice in this mapping") });
                    }
                    *key = Some(Key { name, pos: node.pos() });
                }
            },
        }
    }
}

impl MarkedEventReceiver for Builder {
    fn on_event(&mut self, ev: Event, mark: Marker) {
        let pos = Pos::from(mark);
        if matches!(ev, Event::DocumentStart) {
            self.documents += 1;
            if self.documents == 2 && self.error.is_none() {
                self.error = Some(SyntaxError { pos, message: "a second YAML document (after `---`): a job file holds one, and nothing after it would be read".into() });
            }
            return;
        }
        if self.documents > 1 {
            return;
        }
        // Nesting beyond the limit is refused at its first level and not built at all.
        match ev {
            Event::SequenceStart(..) | Event::MappingStart(..) if self.beyond > 0 || self.stack.len() >= MAX_DEPTH => {
                if self.beyond == 0 && self.error.is_none() {
                    self.error = Some(SyntaxError { pos, message: format!("lists and mappings nest deeper than the {MAX_DEPTH} levels a job file may use") });
                }
                self.beyond += 1;
                return;
            }
            Event::SequenceEnd | Event::MappingEnd if self.beyond > 0 => {
                self.beyond -= 1;
                return;
            }
            _ if self.beyond > 0 => return,
            _ => {}
        }
        // A tag (`!!binary`, `!!python/object`, `!name`) asks for a meaning a job file does
        // not have: refused rather than read as plain text.
        if let Event::Scalar(_, _, _, Some(tag)) | Event::SequenceStart(_, Some(tag)) | Event::MappingStart(_, Some(tag)) = &ev {
            if self.error.is_none() {
                // The core schema's tags are written `!!name`.
                let handle = if tag.handle == "tag:yaml.org,2002:" { "!!" } else { tag.handle.as_str() };
                self.error = Some(SyntaxError {
                    pos,
                    message: format!("a YAML tag (`{handle}{}`): job files use no tags, and voicekeep would not read the value the way the tag asks", tag.suffix),
                });
            }
        }
        match ev {
            Event::Scalar(text, style, _, _) => {
                let quoted = !matches!(style, TScalarStyle::Plain);
                self.push_node(Node::Scalar { text, quoted, pos });
            }
            Event::SequenceStart(..) => self.stack.push(Partial::Seq(Vec::new(), pos)),
            Event::MappingStart(..) => self.stack.push(Partial::Map(Vec::new(), None, pos, Default::default())),
            Event::SequenceEnd => {
                if let Some(Partial::Seq(items, p)) = self.stack.pop() {
                    self.push_node(Node::Seq { items, pos: p });
                }
            }
            Event::MappingEnd => {
                if let Some(Partial::Map(entries, _, p, _)) = self.stack.pop() {
                    self.push_node(Node::Map { entries, pos: p });
                }
            }
            Event::Alias(_) => {
                if self.error.is_none() {
                    self.error = Some(SyntaxError { pos, message: "YAML aliases (*name) are not supported in job files".into() });
                }
                self.push_node(Node::Scalar { text: String::new(), quoted: false, pos });
            }
            _ => {}
        }
    }
}

/// Parses YAML text into a positioned tree. An empty file gives an empty mapping.
pub fn parse(text: &str) -> Result<Node, SyntaxError> {
    // A directive (`%YAML 1.2`, `%TAG`) starts a line with `%`, which nothing else in a job
    // file can (a plain value cannot begin with it, and block text is indented): refused,
    // since the parser accepts any version number and a tag prefix would change what a tag means.
    if let Some(i) = text.lines().position(|l| l.starts_with('%')) {
        let word = text.lines().nth(i).unwrap_or("").split_whitespace().next().unwrap_or("%");
        return Err(SyntaxError { pos: Pos { line: i + 1, col: 1 }, message: format!("a YAML directive (`{word}`): job files use none; voicekeep reads YAML 1.2 as it is") });
    }
    let mut builder = Builder::default();
    let mut parser = Parser::new_from_str(text);
    if let Err(e) = parser.load(&mut builder, true) {
        let m = e.marker();
        return Err(SyntaxError { pos: Pos::from(*m), message: e.info().to_string() });
    }
    if let Some(e) = builder.error {
        return Err(e);
    }
    Ok(builder.root.unwrap_or(Node::Map { entries: Vec::new(), pos: Pos { line: 1, col: 1 } }))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keeps_positions_of_nested_flow_values() {
        let text = "network:\n  parts:\n    C1: { kind: capacitor, value: 3.3 uF }\n";
        let root = parse(text).unwrap();
        let Node::Map { entries, .. } = root else { panic!() };
        let Node::Map { entries, .. } = &entries[0].1 else { panic!() };
        let Node::Map { entries, .. } = &entries[0].1 else { panic!() };
        assert_eq!(entries[0].0.name, "C1");
        assert_eq!(entries[0].0.pos, Pos { line: 3, col: 5 });
        let Node::Map { entries, .. } = &entries[0].1 else { panic!() };
        assert_eq!(entries[1].0.name, "value");
        assert_eq!(entries[1].1.pos(), Pos { line: 3, col: 35 });
    }

    #[test]
    fn reports_syntax_errors_with_place() {
        // The unclosed list cannot end at the `:` of line 2 (`b: 3` is a mapping inside a
        // flow list): the error is there, not at the start of the file.
        let err = parse("a: [1, 2\nb: 3\n").unwrap_err();
        assert_eq!(err.pos.line, 2, "{err:?}");
        let err = parse("a: 1\na: 2\n").unwrap_err();
        assert_eq!(err.pos.line, 2);
        assert!(err.message.contains("twice"));
    }
}
