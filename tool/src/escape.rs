//! One function per output format for text that comes from the user (`design.name`,
//! `design.notes`, the design file's path, a key as written), so nothing they hold can break out
//! of its place in the output:
//!
//! | format | function | what it does |
//! |---|---|---|
//! | Rust source (`constants`) | [`rust_comment`] | escapes like a Rust string literal: controls, line ends, bidirectional-text controls, `\` and `"` |
//! | Rust identifiers (`--module`) | [`rust_module_name`] | refuses keywords and anything not a lower-case identifier |
//! | SVG / XML text (`plot`) | [`xml_text`] | replaces what XML 1.0 cannot carry even escaped; the SVG backend escapes `<`, `>`, `&`, `"`, `'` |
//! | JSON (`--json`) | `serde_json` | its serializer escapes `"`, `\` and every control character (RFC 8259) |
//! | plain-text report (terminal) | [`text_line`] | escapes controls, bidirectional-text controls and line separators |
//! | error messages (terminal) | [`echo`] | the same, and shortens long echoes of the input |

/// Whether `c` must not appear raw in a Rust comment: a control character (it may end the comment
/// or confuse a terminal), a Unicode line or paragraph separator, or a bidirectional-text control
/// (rustc's `text_direction_codepoint_in_comment` lint refuses those by default; they can make
/// source read differently from how it compiles).
fn unsafe_in_rust_comment(c: char) -> bool {
    c.is_control()
        || matches!(
            c,
            '\u{061C}'
                | '\u{200E}'
                | '\u{200F}'
                | '\u{2028}'
                | '\u{2029}'
                | '\u{202A}'..='\u{202E}'
                | '\u{2066}'..='\u{2069}'
                | '\u{FEFF}'
        )
}

/// `text` as it may stand inside a `// … "text" …` line comment of generated Rust: every
/// character of [`unsafe_in_rust_comment`] as `\u{XXXX}`, `\` as `\\`, `"` as `\"`; the rest as
/// is. The result is one line, and reads back like a Rust string literal's contents.
pub fn rust_comment(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '\\' => out.push_str("\\\\"),
            '"' => out.push_str("\\\""),
            c if unsafe_in_rust_comment(c) => out.push_str(&format!("\\u{{{:04X}}}", c as u32)),
            c => out.push(c),
        }
    }
    out
}

/// Rust keywords of every edition up to 2024, strict and reserved: none of them can name a module.
const RUST_KEYWORDS: [&str; 52] = [
    "as", "async", "await", "break", "const", "continue", "crate", "dyn", "else", "enum", "extern",
    "false", "fn", "for", "if", "impl", "in", "let", "loop", "match", "mod", "move", "mut", "pub",
    "ref", "return", "self", "Self", "static", "struct", "super", "trait", "true", "type",
    "unsafe", "use", "where", "while", "abstract", "become", "box", "do", "final", "macro",
    "override", "priv", "typeof", "unsized", "virtual", "yield", "try", "gen",
];

/// Checks a `--module` name: a lower-case ASCII Rust identifier (`[a-z_][a-z0-9_]*`) that is not
/// `_` alone and not a keyword of any edition.
///
/// # Errors
/// Why the name cannot be used, in a phrase.
pub fn rust_module_name(name: &str) -> Result<(), &'static str> {
    let mut chars = name.chars();
    let shaped = matches!(chars.next(), Some(c) if c.is_ascii_lowercase() || c == '_')
        && chars.all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '_');
    if !shaped {
        return Err("is not a lower-case Rust identifier (letters a-z, digits, `_`)");
    }
    if name == "_" {
        return Err("is `_`, which names nothing");
    }
    if RUST_KEYWORDS.contains(&name) {
        return Err("is a Rust keyword");
    }
    Ok(())
}

/// Whether XML 1.0 can carry `c` at all (its `Char` production): tab, line feed, carriage return,
/// and U+0020 upwards except U+FFFE and U+FFFF (surrogates cannot occur in a Rust `str`).
fn xml_char(c: char) -> bool {
    matches!(c, '\t' | '\n' | '\r' | '\u{20}'..='\u{D7FF}' | '\u{E000}'..='\u{FFFD}')
        || c >= '\u{10000}'
}

/// `text` as SVG text content: tab, line feed and carriage return become a space (SVG renders
/// them as one anyway), every other control character (C0, DEL, C1) and everything XML 1.0
/// forbids even as a character reference becomes U+FFFD (�). The markup characters are escaped
/// by the SVG backend, which escapes every text and attribute it writes.
pub fn xml_text(text: &str) -> String {
    text.chars()
        .map(|c| match c {
            '\t' | '\n' | '\r' => ' ',
            c if c.is_control() || !xml_char(c) => '\u{FFFD}',
            c => c,
        })
        .collect()
}

/// `text` as one line of the plain-text report: control characters escaped (`\n`, `\u{1b}`),
/// and so are bidirectional-text controls and the Unicode line and paragraph separators
/// (`\u{202e}`), so a name cannot start a line of its own, reorder the line it stands on, or
/// send terminal control sequences.
pub fn text_line(text: &str) -> String {
    echo(text, usize::MAX)
}

/// `text` as echoed in an error message: control characters, bidirectional-text controls and
/// line / paragraph separators escaped (`\n`, `\u{1b}`, `\u{202e}`), and at most `max`
/// characters of it, the rest replaced by `… (N characters)`.
pub fn echo(text: &str, max: usize) -> String {
    let count = text.chars().count();
    let mut out = String::new();
    for c in text.chars().take(max) {
        if c.is_control() {
            out.extend(c.escape_debug());
        } else if unsafe_in_rust_comment(c) {
            // Bidi controls and line / paragraph separators: not `is_control`, but they move
            // or break the line on a terminal; `escape_debug` leaves some of them raw.
            out.extend(c.escape_unicode());
        } else {
            out.push(c);
        }
    }
    if count > max {
        out.push_str(&format!("… ({count} characters)"));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rust_comment_stays_on_one_line() {
        let s = rust_comment("a\nb\r\"c\\\u{202E}d\u{0}");
        assert_eq!(s, "a\\u{000A}b\\u{000D}\\\"c\\\\\\u{202E}d\\u{0000}");
        assert!(!s.contains('\n') && !s.contains('\r'));
        assert_eq!(rust_comment("Zone 3 µ-valve"), "Zone 3 µ-valve");
    }

    #[test]
    fn module_names() {
        for ok in ["coil", "coil_2", "_coil", "union", "raw"] {
            assert_eq!(rust_module_name(ok), Ok(()), "{ok}");
        }
        for bad in [
            "fn", "type", "self", "crate", "super", "mod", "_", "Self", "gen", "try", "async", "",
            "Coil", "2coil", "co-il", "r#fn", "coil ",
        ] {
            assert!(rust_module_name(bad).is_err(), "{bad}");
        }
    }

    #[test]
    fn xml_text_leaves_only_what_xml_carries() {
        let all: String = (0u32..0x110000).filter_map(char::from_u32).collect();
        let clean = xml_text(&all);
        assert!(clean.chars().all(|c| xml_char(c) && !c.is_control()));
        assert_eq!(xml_text("a\tb\u{7}c\u{FFFF}"), "a b\u{FFFD}c\u{FFFD}");
    }

    #[test]
    fn echo_escapes_and_shortens() {
        assert_eq!(echo("a\u{1b}[31m", 80), "a\\u{1b}[31m");
        assert_eq!(echo("abcdef", 3), "abc… (6 characters)");
    }
}
