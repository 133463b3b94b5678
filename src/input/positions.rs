//! Where each value sits in a YAML document: a map from a YAML path
//! (`transistor_classes[3].model.bf`) to its line and column.
//!
//! serde reports positions for syntax and type errors only; validation happens after
//! deserialising, so it looks positions up here. Built from yaml-rust2's event stream,
//! which never expands aliases, so an alias bomb costs no more than its text.

use std::collections::{HashMap, HashSet};

use yaml_rust2::parser::{Event, Parser};

use super::Problem;
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
    /// The first reason the document is refused before it is deserialised, and where:
    /// an alias bomb (aliases add more than [`EXPANSION_LIMIT`] nodes), nesting deeper
    /// than [`MAX_DEPTH`], a scalar longer than [`MAX_SCALAR_CHARS`] or a key longer than
    /// [`MAX_KEY_CHARS`]. The walk stops there, so its cost stays linear in the text.
    pub refused: Option<(Position, Problem)>,
    /// The first key that repeats within one mapping, and where it repeats.
    pub duplicate_key: Option<(String, Position)>,
}

/// Most nodes aliases may add to a document once expanded. Plain nodes are not counted:
/// an honest catalog of thousands of classes has hundreds of thousands of them, while a
/// "billion laughs" document adds hundreds of millions through its aliases.
pub const EXPANSION_LIMIT: u64 = 100_000;

/// Deepest nesting of mappings and lists. The formats need fewer than 10 levels; the
/// cap keeps the parsers' work (which grows with depth) small.
pub const MAX_DEPTH: usize = 32;

/// Longest scalar value, in characters (descriptions and provenance notes included).
pub const MAX_SCALAR_CHARS: usize = 4096;

/// Longest mapping key, in characters: every key of the formats is a field name.
pub const MAX_KEY_CHARS: usize = 64;

/// Total bytes of recorded paths after which no more positions are recorded (later
/// values are located at their nearest recorded ancestor). Keeps memory linear in the
/// text whatever its shape.
const PATH_BUDGET_BYTES: usize = 64 << 20;

impl Positions {
    /// Walk `text`. A document that fails to scan yields the map up to the failure (the
    /// caller reports syntax errors through serde).
    pub fn of(text: &str) -> Positions {
        if let Some(line) = too_indented(text) {
            return Positions {
                refused: Some((
                    Position { line, col: 1 },
                    Problem::TooDeep { limit: MAX_DEPTH },
                )),
                ..Positions::default()
            };
        }
        let mut walker = Walker::default();
        let mut parser = Parser::new_from_str(text);
        while walker.refused.is_none() {
            match parser.next_token() {
                Ok((Event::StreamEnd, _)) => break,
                Ok((ev, mark)) => walker.on_event(ev, mark),
                Err(e) => {
                    // The scanner's own nesting limit (flow collections, 255 levels) can
                    // trip before the walk reaches MAX_DEPTH: the same refusal.
                    if e.info().contains("recursion limit") {
                        walker.refuse(*e.marker(), Problem::TooDeep { limit: MAX_DEPTH });
                    }
                    break;
                }
            }
        }
        Positions {
            map: walker.map,
            refused: walker.refused,
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

/// Block nesting takes at least one column per level: a line whose indentation and
/// leading `- ` / `? ` / `: ` indicators reach past this column nests far too deep, and
/// is refused before the parser builds its indentation stack.
const MAX_INDENT_COLUMNS: usize = 512;

/// The first line (1-based) indented past [`MAX_INDENT_COLUMNS`], if any.
fn too_indented(text: &str) -> Option<usize> {
    for (i, line) in text.lines().enumerate() {
        let b = line.as_bytes();
        let mut c = 0;
        while c < b.len() {
            let indicator = matches!(b[c], b'-' | b'?' | b':')
                && b.get(c + 1).is_none_or(|x| *x == b' ' || *x == b'\t');
            if !(b[c] == b' ' || b[c] == b'\t' || indicator) {
                break;
            }
            c += 1;
            if c > MAX_INDENT_COLUMNS {
                return Some(i + 1);
            }
        }
    }
    None
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
    path_bytes: usize,
    /// Expanded node count of each open collection, with its anchor id (0 = none).
    sizes: Vec<(u64, usize)>,
    /// Expanded node count of each anchored node.
    anchors: HashMap<usize, u64>,
    /// Nodes added by alias expansion so far.
    added: u64,
    refused: Option<(Position, Problem)>,
    duplicate_key: Option<(String, Position)>,
}

fn position(mark: Marker) -> Position {
    // yaml-rust2 counts lines from 1 and columns from 0.
    Position {
        line: mark.line(),
        col: mark.col() + 1,
    }
}

impl Walker {
    /// Count `n` expanded nodes into the open collection, if any; `by_alias` nodes also
    /// count towards the expansion limit.
    fn count(&mut self, n: u64, by_alias: bool, mark: Marker) {
        if let Some((size, _)) = self.sizes.last_mut() {
            *size = size.saturating_add(n);
        }
        if by_alias {
            self.added = self.added.saturating_add(n);
            if self.added > EXPANSION_LIMIT {
                self.refuse(
                    mark,
                    Problem::AliasBomb(format!(
                        "aliases add more than {EXPANSION_LIMIT} nodes once expanded"
                    )),
                );
            }
        }
    }

    fn refuse(&mut self, mark: Marker, problem: Problem) {
        if self.refused.is_none() {
            self.refused = Some((position(mark), problem));
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
        if self.path_bytes > PATH_BUDGET_BYTES {
            return;
        }
        let path = self.path();
        self.path_bytes += path.len() + 32;
        self.map.entry(path).or_insert(position(mark));
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

    fn on_event(&mut self, ev: Event, mark: Marker) {
        // Expansion count, to catch alias bombs without expanding anything.
        match &ev {
            Event::Scalar(value, _, anchor, _) => {
                let limit = if self.expecting_key() {
                    ("key", MAX_KEY_CHARS)
                } else {
                    ("value", MAX_SCALAR_CHARS)
                };
                // Bytes bound characters from above: count characters only when needed.
                if value.len() > limit.1 && value.chars().count() > limit.1 {
                    self.refuse(
                        mark,
                        Problem::TooLong {
                            what: limit.0,
                            chars: value.chars().count(),
                            limit: limit.1,
                            start: value.chars().take(crate::text::SHOWN_CHARS).collect(),
                        },
                    );
                    return;
                }
                if *anchor > 0 {
                    self.anchors.insert(*anchor, 1);
                }
                self.count(1, false, mark);
            }
            Event::Alias(id) => {
                let n = self.anchors.get(id).copied().unwrap_or(1);
                self.count(n, true, mark);
            }
            Event::MappingStart(anchor, _) | Event::SequenceStart(anchor, _) => {
                if self.stack.len() >= MAX_DEPTH {
                    self.refuse(mark, Problem::TooDeep { limit: MAX_DEPTH });
                    return;
                }
                self.sizes.push((1, *anchor));
            }
            Event::MappingEnd | Event::SequenceEnd => {
                if let Some((size, anchor)) = self.sizes.pop() {
                    if anchor > 0 {
                        self.anchors.insert(anchor, size);
                    }
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
                            self.duplicate_key = Some((value.clone(), position(mark)));
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
        assert!(p.refused.is_none());
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
        // Aliases add more than 10^5 nodes on line 5 (anchor `e`).
        let (at, problem) = p.refused.unwrap();
        assert_eq!(at.line, 5);
        assert!(matches!(problem, Problem::AliasBomb(_)));
        // A few aliases are fine.
        assert!(Positions::of("a: &x 1\nb: *x\nc: *x\n").refused.is_none());
    }

    #[test]
    fn many_plain_nodes_are_not_a_bomb() {
        // 2,500 classes of 50 plain values: 125,000 nodes, no alias.
        let mut text = String::from("classes:\n");
        for i in 0..2500 {
            text.push_str(&format!("  - id: c{i}\n    v: ["));
            text.push_str(&vec!["1"; 48].join(", "));
            text.push_str("]\n");
        }
        assert!(Positions::of(&text).refused.is_none());
    }

    #[test]
    fn deep_nesting_is_refused_at_the_cap_quickly() {
        // 100,000 levels, block style: refused where level MAX_DEPTH + 1 opens.
        let text = format!("{}1\n", "- ".repeat(100_000));
        let flow = format!("a: {}1{}", "[".repeat(100_000), "]".repeat(100_000));
        for t in [text, flow] {
            let (at, problem) = Positions::of(&t).refused.expect("too deep");
            assert!(
                matches!(problem, Problem::TooDeep { limit: MAX_DEPTH }),
                "{problem:?}"
            );
            assert!(at.line >= 1);
        }
        let nested = format!(
            "a: {}1{}",
            "[".repeat(MAX_DEPTH - 1),
            "]".repeat(MAX_DEPTH - 1)
        );
        assert!(Positions::of(&nested).refused.is_none());
    }

    #[test]
    fn long_scalars_and_keys_are_refused_where_they_start() {
        let text = format!("name: ok\nid: {}\n", "x".repeat(MAX_SCALAR_CHARS + 1));
        let (at, problem) = Positions::of(&text).refused.unwrap();
        assert_eq!(at, Position { line: 2, col: 5 });
        assert!(matches!(problem, Problem::TooLong { what: "value", .. }));
        let text = format!("{}: 1\n", "k".repeat(MAX_KEY_CHARS + 1));
        let (_, problem) = Positions::of(&text).refused.unwrap();
        assert!(matches!(problem, Problem::TooLong { what: "key", .. }));
    }
}
