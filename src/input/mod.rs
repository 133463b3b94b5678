//! Files in, validated model types out: YAML -> raw serde mirrors -> `model` types.
//!
//! This module owns the catalog and requirement file formats, their plausible ranges and
//! every message about a bad file. Each error names `file:line:col`, what is wrong and
//! what was expected. Raw serde structs never leave this module; callers see only
//! [`Catalog`] and [`Requirement`] (SI units, checked ranges) or an [`InputError`].
//!
//! Steps: (1) reject an empty file; (2) deserialise into raw structs with
//! `deny_unknown_fields` (serde_yaml gives syntax, type, missing and unknown field errors
//! with positions, and stops alias bombs with its repetition limit); (3) validate and
//! convert, looking up the position of any offending value by its YAML path.

mod catalog;
mod design;
mod positions;
mod raw;
mod requirement;
mod source;

use std::fmt;

pub use catalog::{catalog_to_yaml, load_catalog, load_default_catalog, DEFAULT_CATALOG_NAME};
pub use catalog::{DEFAULT_CATALOG_YAML, TRANSISTOR_FIELDS};
pub use design::{load_design, DesignDraft};
pub use positions::Position;
pub use positions::{MAX_DEPTH, MAX_SCALAR_CHARS};
pub use requirement::{load_requirement, requirement_to_yaml, REQUIREMENT_FIELDS};
pub use source::{read_text, text_of, ReadError, MAX_INPUT_BYTES};

use crate::text::shown;

/// Longest class id, channel or board name, in characters: ids are typed on command
/// lines and shown in table columns.
pub const MAX_NAME_CHARS: usize = 64;

use crate::units::QuantityError;

/// A bad input file: where, and what is wrong.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{}:{}:{}: {problem}", crate::text::escaped(file), position.line, position.col)]
pub struct InputError {
    /// The file name as the user gave it.
    pub file: String,
    pub position: Position,
    /// Boxed: errors travel through many `Result`s and should stay small.
    pub problem: Box<Problem>,
}

/// What is wrong with a file. Messages read "what is wrong; what was expected".
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum Problem {
    #[error("the file is empty; expected {0}")]
    Empty(&'static str),
    #[error("{0}")]
    Syntax(String),
    #[error("the file is larger than {} MiB; expected a catalog, requirement, design or bench file of a reasonable size", limit / (1024 * 1024))]
    TooLarge { limit: u64 },
    #[error("byte 0x{byte:02X} is not UTF-8 text; expected a file saved as UTF-8")]
    NotUtf8 { byte: u8 },
    #[error("mappings and lists nest more than {limit} levels deep here; expected a flatter file (the formats need fewer than 10 levels)")]
    TooDeep { limit: usize },
    #[error(
        "a {what} of {chars} characters (`{}…`); expected at most {limit} characters",
        crate::text::escaped(start)
    )]
    TooLong {
        /// "value" or "key".
        what: &'static str,
        chars: usize,
        limit: usize,
        /// The value's first characters, for the message.
        start: String,
    },
    #[error("the document expands too much through anchors and aliases ({0}); expected a plain file without repeated alias expansion")]
    AliasBomb(String),
    #[error(
        "unknown field `{}`{}; expected one of {}",
        shown(field),
        did_you_mean_text(suggestion),
        list(expected)
    )]
    UnknownField {
        field: String,
        suggestion: Option<String>,
        expected: Vec<String>,
    },
    #[error(
        "unknown value `{}`{}; expected one of {}",
        shown(value),
        did_you_mean_text(suggestion),
        list(expected)
    )]
    UnknownName {
        value: String,
        suggestion: Option<String>,
        expected: Vec<String>,
    },
    #[error("{0}; expected each key once per mapping")]
    DuplicateKey(String),
    #[error("the file holds more than one YAML document; expected a single document (remove the `---` separators)")]
    MultipleDocuments,
    #[error("missing field `{0}`; expected it in this mapping")]
    MissingField(String),
    #[error("`{path}`: {error}")]
    Quantity { path: String, error: QuantityError },
    #[error("`{path}`: {what}; expected {expected}")]
    Invalid {
        path: String,
        what: String,
        expected: String,
    },
    #[error(
        "duplicate id `{}` (first used on line {first_line}); expected every class id to be unique",
        shown(id)
    )]
    DuplicateId { id: String, first_line: usize },
}

fn did_you_mean_text(s: &Option<String>) -> String {
    match s {
        Some(s) => format!(" (did you mean `{s}`?)"),
        None => String::new(),
    }
}

/// `a`, `b` or `c`: a list as a person writes it.
pub fn list(items: &[String]) -> String {
    let quoted: Vec<String> = items.iter().map(|s| format!("`{s}`")).collect();
    match quoted.len() {
        0 => "nothing".to_string(),
        1 => quoted[0].clone(),
        n => format!("{} or {}", quoted[..n - 1].join(", "), quoted[n - 1]),
    }
}

/// The candidate closest to `word` by edit distance, if it is close enough to be a
/// plausible typo (at most a third of the word's length, and at least 1 edit allowed).
pub fn did_you_mean<'a, I>(word: &str, candidates: I) -> Option<String>
where
    I: IntoIterator<Item = &'a str>,
{
    let len = word.chars().count();
    // Edit distance costs the product of the lengths: a word far longer than any name
    // cannot be a typo of one, so huge values are not compared at all.
    if len > 2 * MAX_NAME_CHARS {
        return None;
    }
    let limit = (len / 3).max(1);
    candidates
        .into_iter()
        .filter(|c| c.len() <= 4 * MAX_NAME_CHARS)
        .map(|c| (edit_distance(&word.to_lowercase(), &c.to_lowercase()), c))
        .filter(|(d, _)| *d <= limit)
        .min_by_key(|(d, _)| *d)
        .map(|(_, c)| c.to_string())
}

fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.iter().enumerate() {
        let mut cur = vec![i + 1; b.len() + 1];
        for (j, cb) in b.iter().enumerate() {
            let sub = prev[j] + usize::from(ca != cb);
            cur[j + 1] = sub.min(prev[j + 1] + 1).min(cur[j] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

/// True when the text holds no YAML content (blank lines, comments, document markers).
fn is_empty_document(text: &str) -> bool {
    text.lines().all(|l| {
        let t = l.trim();
        t.is_empty() || t.starts_with('#') || t == "---" || t == "..."
    })
}

/// Deserialise `text` into a raw struct, turning serde_yaml's errors into located
/// problems.
fn deserialize<T: serde::de::DeserializeOwned>(
    file: &str,
    text: &str,
    what: &'static str,
) -> Result<T, InputError> {
    if is_empty_document(text) {
        return Err(InputError {
            file: file.to_string(),
            position: Position::START,
            problem: Box::new(Problem::Empty(what)),
        });
    }
    let positions = positions::Positions::of(text);
    if let Some((position, problem)) = positions.refused.clone() {
        return Err(InputError {
            file: file.to_string(),
            position,
            problem: Box::new(problem),
        });
    }
    serde_yaml::from_str(text).map_err(|e| {
        let problem = serde_problem(&e.to_string());
        // serde_yaml gives no position for a repeated key; the event walk has it.
        if let (Problem::DuplicateKey(_), Some((_, position))) =
            (&problem, &positions.duplicate_key)
        {
            return InputError {
                file: file.to_string(),
                position: *position,
                problem: Box::new(problem),
            };
        }
        let position = e
            .location()
            .map(|l| Position {
                line: l.line(),
                col: l.column(),
            })
            .unwrap_or(Position::START);
        InputError {
            file: file.to_string(),
            position,
            problem: Box::new(problem),
        }
    })
}

/// Remove every ` at line N column M` serde_yaml appends; the position is ours to print.
fn strip_marks(msg: &str) -> String {
    let mut out = String::new();
    let mut rest = msg;
    while let Some(i) = rest.find(" at line ") {
        out.push_str(&rest[..i]);
        let tail = &rest[i + " at line ".len()..];
        let digits = |t: &str| t.find(|c: char| !c.is_ascii_digit()).unwrap_or(t.len());
        let mut t = &tail[digits(tail)..];
        if let Some(r) = t.strip_prefix(" column ") {
            t = &r[digits(r)..];
        }
        rest = t;
    }
    out.push_str(rest);
    out
}

/// Names between backticks, in order.
fn backticked(s: &str) -> Vec<String> {
    s.split('`')
        .enumerate()
        .filter(|(i, _)| i % 2 == 1)
        .map(|(_, t)| t.to_string())
        .collect()
}

/// `msg` with every double-quoted value longer than a message should repeat cut with an
/// ellipsis (serde quotes the offending value: a whole CSV read as one YAML string).
fn cut_quoted(msg: &str) -> String {
    let parts: Vec<&str> = msg.split('"').collect();
    if parts.len() < 3 {
        return crate::text::escaped(msg).into_owned();
    }
    let mut out = String::with_capacity(msg.len().min(1024));
    for (i, p) in parts.iter().enumerate() {
        if i > 0 {
            out.push('"');
        }
        // Odd pieces sit between quotes (an unmatched last quote leaves the tail as is).
        if i % 2 == 1 && i + 1 < parts.len() {
            out.push_str(&shown(p));
        } else {
            out.push_str(&crate::text::escaped(p));
        }
    }
    out
}

fn serde_problem(raw: &str) -> Problem {
    let msg = cut_quoted(&strip_marks(raw));
    if msg.contains("recursion limit exceeded") {
        return Problem::TooDeep {
            limit: positions::MAX_DEPTH,
        };
    }
    if msg.contains("repetition limit exceeded") {
        return Problem::AliasBomb(msg);
    }
    // serde_yaml prefixes a path (`transistor_classes[0].model: ...`); keep it.
    let (prefix, body) = match msg.find(": ") {
        Some(i) if !msg[..i].contains(' ') => (format!("`{}`: ", &msg[..i]), &msg[i + 2..]),
        _ => (String::new(), msg.as_str()),
    };
    for (start, is_field) in [("unknown field ", true), ("unknown variant ", false)] {
        if let Some(rest) = body.strip_prefix(start) {
            let names = backticked(rest);
            if let Some((word, expected)) = names.split_first() {
                // Enumerations take their capitalised and upper-case spellings as aliases:
                // name each value once, as the documentation writes it (lower case).
                let mut expected = expected.to_vec();
                if !is_field {
                    let mut once: Vec<String> = Vec::new();
                    for n in &expected {
                        let lower = n.to_ascii_lowercase();
                        if !once.contains(&lower) {
                            once.push(lower);
                        }
                    }
                    expected = once;
                }
                let suggestion = did_you_mean(word, expected.iter().map(String::as_str));
                let p = if is_field {
                    Problem::UnknownField {
                        field: word.clone(),
                        suggestion,
                        expected,
                    }
                } else {
                    Problem::UnknownName {
                        value: word.clone(),
                        suggestion,
                        expected,
                    }
                };
                return if prefix.is_empty() {
                    p
                } else {
                    Problem::Syntax(format!("{prefix}{p}"))
                };
            }
        }
    }
    if let Some(rest) = body.strip_prefix("missing field ") {
        if let Some(name) = backticked(rest).first() {
            let p = Problem::MissingField(name.clone());
            return if prefix.is_empty() {
                p
            } else {
                Problem::Syntax(format!("{prefix}{p}"))
            };
        }
    }
    if body.starts_with("duplicate field") || body.starts_with("duplicate entry") {
        return Problem::DuplicateKey(format!("{prefix}{body}"));
    }
    if body.contains("more than one document") {
        return Problem::MultipleDocuments;
    }
    if body.starts_with("invalid type") || body.starts_with("invalid value") {
        let body = body
            .replace("expected u32", "expected a whole number")
            .replace("expected a string", "expected text");
        return Problem::Syntax(format!("{prefix}{body}"));
    }
    Problem::Syntax(format!(
        "{prefix}{body}; expected valid YAML (check indentation, colons and quotes)"
    ))
}

/// An unknown name at `path`, with the nearest valid one.
fn unknown_value(path: &str, value: &str, expected: &[String]) -> Problem {
    Problem::Invalid {
        path: path.to_string(),
        what: format!(
            "unknown value `{}`{}",
            shown(value),
            did_you_mean_text(&did_you_mean(value, expected.iter().map(String::as_str)))
        ),
        expected: format!("one of {}", list(expected)),
    }
}

/// Validation context: the file name, where each value sits, and the YAML path of the
/// part being validated (empty for a whole file; `channels[1].requirement.` for a
/// requirement written inline in a design file).
struct Ctx<'a> {
    file: &'a str,
    positions: positions::Positions,
    prefix: String,
}

impl<'a> Ctx<'a> {
    fn new(file: &'a str, text: &str) -> Ctx<'a> {
        Ctx {
            file,
            positions: positions::Positions::of(text),
            prefix: String::new(),
        }
    }

    /// A context for the mapping at `prefix` (ending in `.`) of the same document.
    fn nested(&self, prefix: String) -> Ctx<'a> {
        Ctx {
            file: self.file,
            positions: self.positions.clone(),
            prefix,
        }
    }

    fn full(&self, path: &str) -> String {
        format!("{}{path}", self.prefix)
    }

    fn error(&self, path: &str, problem: Problem) -> InputError {
        InputError {
            file: self.file.to_string(),
            position: self.positions.get(&self.full(path)),
            problem: Box::new(problem),
        }
    }

    fn invalid(
        &self,
        path: &str,
        what: impl Into<String>,
        expected: impl Into<String>,
    ) -> InputError {
        self.error(
            path,
            Problem::Invalid {
                path: self.full(path),
                what: what.into(),
                expected: expected.into(),
            },
        )
    }

    /// Read a quantity for `field` at `path`, in SI, range-checked.
    fn qty(
        &self,
        path: &str,
        raw: &raw::RawQty,
        field: &crate::units::Field,
    ) -> Result<f64, InputError> {
        use crate::units::{check_range, parse_field, Dimension};
        let result = match raw {
            raw::RawQty::Number(v) => {
                // A bare YAML number follows the same rule as bare text (units.rs).
                let si = if field.dimension == Dimension::Temperature {
                    v + crate::model::ZERO_CELSIUS_K
                } else {
                    *v
                };
                check_range(&raw.text(), si, field)
            }
            raw::RawQty::Text(t) => parse_field(t, field),
        };
        result.map_err(|error| {
            self.error(
                path,
                Problem::Quantity {
                    path: self.full(path),
                    error,
                },
            )
        })
    }

    fn opt_qty(
        &self,
        path: &str,
        raw: &Option<raw::RawQty>,
        field: &crate::units::Field,
    ) -> Result<Option<f64>, InputError> {
        raw.as_ref().map(|r| self.qty(path, r, field)).transpose()
    }

    fn non_empty(&self, path: &str, s: &str) -> Result<String, InputError> {
        if s.trim().is_empty() {
            return Err(self.invalid(path, "the text is empty", "a short description"));
        }
        // Free text reaches terminals, tables and reports: control characters (ESC, BEL)
        // are kept visible but harmless, escaped as `\e`, `\a`.
        Ok(crate::text::escaped(s.trim()).into_owned())
    }

    /// A class id, channel or board name: not empty, at most [`MAX_NAME_CHARS`]
    /// characters, no control characters. Returns it trimmed.
    fn name(&self, path: &str, s: &str, what: &str) -> Result<String, InputError> {
        let t = s.trim();
        if t.is_empty() {
            return Err(self.invalid(path, format!("the {what} is empty"), format!("a {what}")));
        }
        let chars = t.chars().count();
        if chars > MAX_NAME_CHARS {
            return Err(self.invalid(
                path,
                format!("a {what} of {chars} characters (`{}`)", shown(t)),
                format!("a {what} of at most {MAX_NAME_CHARS} characters"),
            ));
        }
        if let Some(c) = t.chars().find(|c| c.is_control()) {
            return Err(self.invalid(
                path,
                format!(
                    "the {what} `{}` holds the control character {}",
                    shown(t),
                    crate::text::escaped(&c.to_string())
                ),
                format!("a {what} of printable characters"),
            ));
        }
        Ok(t.to_string())
    }
}

impl fmt::Display for Position {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}:{}", self.line, self.col)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn suggestions() {
        assert_eq!(
            did_you_mean("bff", ["is", "bf", "br", "vaf"]),
            Some("bf".into())
        );
        assert_eq!(did_you_mean("zzzzzz", ["is", "bf"]), None);
        assert_eq!(
            did_you_mean("npn-dual-genral", ["npn-dual-general", "pnp-dual-general"]),
            Some("npn-dual-general".into())
        );
        assert_eq!(
            list(&["a".into(), "b".into(), "c".into()]),
            "`a`, `b` or `c`"
        );
    }

    #[test]
    fn strips_serde_marks() {
        assert_eq!(
            strip_marks("bad thing at line 3 column 7, while parsing at line 1 column 1"),
            "bad thing, while parsing"
        );
    }
}
