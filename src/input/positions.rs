//! Where each value sits in a YAML document: a map from a YAML path
//! (`transistor_classes[3].model.bf`) to its line and column.
//!
//! serde reports positions for syntax and type errors only; validation happens after
//! deserialising, so it looks positions up here. Built from yaml-rust2's event stream,
//! which never expands aliases, so an alias bomb costs no more than its text.

use std::collections::{HashMap, HashSet};

use yaml_rust2::parser::{Event, MarkedEventReceiver, Parser};
use yaml_rust2::scanner::Marker;

/// Line and column, both 1-based.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Position {
    pub line: usize,
    pub col: usize,
}

impl Position {
    pub const START: Position = Position { line: 1, col: 1 };
}

#[derive(Debug, Default, Clone)]
pub struct Positions {
    map: HashMap<String, Position>,
    /// Where the document, with every alias expanded, first grows past
    /// [`EXPANSION_LIMIT`] nodes (an alias bomb), if it does.
    pub bomb_at: Option<Position>,
    /// The first key that repeats within one mapping, and where it repeats.
    pub duplicate_key: Option<(String, Position)>,
}

/// Largest number of nodes a document may have once aliases are expanded. Real catalogs
/// have a few thousand; a "billion laughs" document has hundreds of millions.
pub const EXPANSION_LIMIT: u64 = 100_000;

impl Positions {
    /// Walk `text`. A document that fails to scan yields an empty map (the caller has
    /// already reported syntax errors through serde).
    pub fn of(text: &str) -> Positions {
        let mut walker = Walker::default();
        let mut parser = Parser::new_from_str(text);
        let _ = parser.load(&mut walker, false);
        Positions {
            map: walker.map,
            bomb_at: walker.bomb_at,
            duplicate_key: walker.duplicate_key,
        }
    }

    /// The position of `path`, or of its nearest recorded ancestor, or the start.
    pub fn get(&self, path: &str) -> Position {
        let mut p = path;
        loop {
            if let Some(pos) = self.map.get(p) {
                return *pos;
            }
            match p.rfind(['.', '[']) {
                Some(i) => p = &p[..i],
                None => return self.map.get("").copied().unwrap_or(Position::START),
            }
        }
    }
}

enum Frame {
    Map {
        key: Option<String>,
        expecting_key: bool,
        seen: HashSet<String>,
    },
    Seq {
        index: usize,
    },
}

#[derive(Default)]
struct Walker {
    stack: Vec<Frame>,
    map: HashMap<String, Position>,
    /// Expanded node count of each open collection, with its anchor id (0 = none).
    sizes: Vec<(u64, usize)>,
    /// Expanded node count of each anchored node.
    anchors: HashMap<usize, u64>,
    total: u64,
    bomb_at: Option<Position>,
    duplicate_key: Option<(String, Position)>,
}

impl Walker {
    /// Count `n` expanded nodes at `mark`, into the open collection if any.
    fn count(&mut self, n: u64, mark: Marker) {
        self.total = self.total.saturating_add(n);
        if let Some((size, _)) = self.sizes.last_mut() {
            *size = size.saturating_add(n);
        }
        if self.total > EXPANSION_LIMIT && self.bomb_at.is_none() {
            self.bomb_at = Some(Position {
                line: mark.line(),
                col: mark.col() + 1,
            });
        }
    }

    fn path(&self) -> String {
        let mut s = String::new();
        for f in &self.stack {
            match f {
                Frame::Map { key: Some(k), .. } => {
                    if !s.is_empty() {
                        s.push('.');
                    }
                    s.push_str(k);
                }
                Frame::Map { key: None, .. } => {}
                Frame::Seq { index } => s.push_str(&format!("[{index}]")),
            }
        }
        s
    }

    fn record(&mut self, mark: Marker) {
        // yaml-rust2 counts lines from 1 and columns from 0.
        let pos = Position {
            line: mark.line(),
            col: mark.col() + 1,
        };
        self.map.entry(self.path()).or_insert(pos);
    }

    /// A value (scalar, alias or collection) has ended: move to the next key or index.
    fn advance(&mut self) {
        match self.stack.last_mut() {
            Some(Frame::Map { expecting_key, .. }) => *expecting_key = true,
            Some(Frame::Seq { index }) => *index += 1,
            None => {}
        }
    }

    fn expecting_key(&self) -> bool {
        matches!(
            self.stack.last(),
            Some(Frame::Map {
                expecting_key: true,
                ..
            })
        )
    }
}

impl MarkedEventReceiver for Walker {
    fn on_event(&mut self, ev: Event, mark: Marker) {
        // Expansion count, to catch alias bombs without expanding anything.
        match &ev {
            Event::Scalar(_, _, anchor, _) => {
                if *anchor > 0 {
                    self.anchors.insert(*anchor, 1);
                }
                self.count(1, mark);
            }
            Event::Alias(id) => {
                let n = self.anchors.get(id).copied().unwrap_or(1);
                self.count(n, mark);
            }
            Event::MappingStart(anchor, _) | Event::SequenceStart(anchor, _) => {
                self.sizes.push((1, *anchor));
            }
            Event::MappingEnd | Event::SequenceEnd => {
                if let Some((size, anchor)) = self.sizes.pop() {
                    if anchor > 0 {
                        self.anchors.insert(anchor, size);
                    }
                    // The collection's nodes were counted into `total` as they came;
                    // only the parent's running size needs them now.
                    if let Some((parent, _)) = self.sizes.last_mut() {
                        *parent = parent.saturating_add(size);
                    }
                }
            }
            _ => {}
        }
        match ev {
            Event::Scalar(value, ..) => {
                if self.expecting_key() {
                    if let Some(Frame::Map {
                        key,
                        expecting_key,
                        seen,
                    }) = self.stack.last_mut()
                    {
                        if !seen.insert(value.clone()) && self.duplicate_key.is_none() {
                            self.duplicate_key = Some((
                                value.clone(),
                                Position {
                                    line: mark.line(),
                                    col: mark.col() + 1,
                                },
                            ));
                        }
                        *key = Some(value);
                        *expecting_key = false;
                    }
                } else {
                    self.record(mark);
                    self.advance();
                }
            }
            Event::Alias(_) => {
                if self.expecting_key() {
                    if let Some(Frame::Map {
                        key, expecting_key, ..
                    }) = self.stack.last_mut()
                    {
                        *key = Some("*alias".into());
                        *expecting_key = false;
                    }
                } else {
                    self.record(mark);
                    self.advance();
                }
            }
            Event::MappingStart(..) | Event::SequenceStart(..) => {
                if self.expecting_key() {
                    // A complex key: give it a name no field has.
                    if let Some(Frame::Map {
                        key, expecting_key, ..
                    }) = self.stack.last_mut()
                    {
                        *key = Some("?complex".into());
                        *expecting_key = false;
                    }
                }
                self.record(mark);
                self.stack.push(if matches!(ev, Event::MappingStart(..)) {
                    Frame::Map {
                        key: None,
                        expecting_key: true,
                        seen: HashSet::new(),
                    }
                } else {
                    Frame::Seq { index: 0 }
                });
            }
            Event::MappingEnd | Event::SequenceEnd => {
                self.stack.pop();
                self.advance();
            }
            _ => {}
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn paths_map_to_positions() {
        let text = "a: 1\nlist:\n  - x: 2\n    y: [3, 4]\n  - x: 5\n";
        let p = Positions::of(text);
        assert_eq!(p.get("a"), Position { line: 1, col: 4 });
        assert_eq!(p.get("list[0].x"), Position { line: 3, col: 8 });
        assert_eq!(p.get("list[0].y[1]"), Position { line: 4, col: 12 });
        assert_eq!(p.get("list[1].x"), Position { line: 5, col: 8 });
        // Unknown paths fall back to the nearest ancestor.
        assert_eq!(p.get("list[1].z"), p.get("list[1]"));
        assert_eq!(p.bomb_at, None);
        assert_eq!(p.duplicate_key, None);
        let d = Positions::of("a: 1\nb:\n  c: 2\n  c: 3\n");
        assert_eq!(
            d.duplicate_key,
            Some(("c".to_string(), Position { line: 4, col: 3 }))
        );
    }

    #[test]
    fn alias_bomb_is_found_without_expanding_it() {
        let mut text = String::from("a: &a [x, x, x, x, x, x, x, x, x, x]\n");
        let mut prev = 'a';
        for name in "bcdefghij".chars() {
            let refs = vec![format!("*{prev}"); 10].join(", ");
            text.push_str(&format!("{name}: &{name} [{refs}]\n"));
            prev = name;
        }
        let p = Positions::of(&text);
        // 10^5 nodes are reached on line 5 (anchor `e`).
        assert_eq!(p.bomb_at.map(|b| b.line), Some(5));
        // A few aliases are fine.
        assert_eq!(Positions::of("a: &x 1\nb: *x\nc: *x\n").bomb_at, None);
    }
}
