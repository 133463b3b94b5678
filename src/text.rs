//! Text from users, as messages and tables show it.
//!
//! Names and values come from files and the command line and may hold anything: ESC and
//! BEL sequences that retitle or clear a terminal, or a whole file pasted where a value
//! was expected. Everything shown back goes through [`escaped`] (control characters
//! written as `\e`, `\a`, `\u{..}`) and, in messages, [`shown`] (also cut to
//! [`SHOWN_CHARS`] characters with an ellipsis and the full length). This module must
//! not know where the text came from.

use std::borrow::Cow;

/// Most characters of a user's value a message repeats.
pub const SHOWN_CHARS: usize = 60;

/// `text` with every control character escaped (`\e`, `\a`, `\t`, `\n`, `\r`,
/// `\u{7f}`...), other characters unchanged. Borrows when nothing needs escaping.
pub fn escaped(text: &str) -> Cow<'_, str> {
    if !text.chars().any(char::is_control) {
        return Cow::Borrowed(text);
    }
    let mut out = String::with_capacity(text.len() + 8);
    for c in text.chars() {
        push_escaped(&mut out, c);
    }
    Cow::Owned(out)
}

fn push_escaped(out: &mut String, c: char) {
    match c {
        '\u{1b}' => out.push_str("\\e"),
        '\u{7}' => out.push_str("\\a"),
        '\t' => out.push_str("\\t"),
        '\n' => out.push_str("\\n"),
        '\r' => out.push_str("\\r"),
        '\0' => out.push_str("\\0"),
        c if c.is_control() => out.push_str(&format!("\\u{{{:x}}}", c as u32)),
        c => out.push(c),
    }
}

/// `text` as a message repeats it: escaped, and cut after [`SHOWN_CHARS`] characters
/// with `…` and the full length (`ABC… (12345 characters)`).
pub fn shown(text: &str) -> String {
    let total = text.chars().count();
    if total <= SHOWN_CHARS {
        return escaped(text).into_owned();
    }
    let mut out = String::with_capacity(SHOWN_CHARS * 2 + 32);
    for c in text.chars().take(SHOWN_CHARS) {
        push_escaped(&mut out, c);
    }
    out.push_str(&format!("… ({total} characters)"));
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn control_characters_are_escaped() {
        assert_eq!(escaped("ch\u{1b}]0;pwned\u{7}"), "ch\\e]0;pwned\\a");
        assert_eq!(escaped("a\u{7f}b\u{9b}c"), "a\\u{7f}b\\u{9b}c");
        assert!(matches!(escaped("plain µA Ω"), Cow::Borrowed(_)));
    }

    #[test]
    fn long_values_are_cut_with_an_ellipsis() {
        let long = "x".repeat(10_000);
        let s = shown(&long);
        assert!(s.starts_with(&"x".repeat(SHOWN_CHARS)));
        assert!(s.ends_with("… (10000 characters)"), "{s}");
        assert!(s.chars().count() < 100);
        assert_eq!(shown("short"), "short");
        // Cut on a character boundary, never inside a multi-byte character.
        let s = shown(&"Ω".repeat(100));
        assert!(s.starts_with(&"Ω".repeat(SHOWN_CHARS)));
    }
}
