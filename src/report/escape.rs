//! The one escaping function for study text placed into Typst markup.
//!
//! Free text from the study (titles, names, units, notes, bases) must be printed, never run.
//! A backslash before a character makes it literal in Typst markup, so every character that can
//! start markup or code gets one (the list follows the typst-syntax 0.15 lexer; see
//! TOOLCHAIN.md §1.8), and line breaks become spaces so text cannot open a heading or a list.

/// Characters that start Typst markup, code, math, comments, labels or shorthands.
const SPECIAL: &[char] = &[
    '\\', '#', '$', '*', '_', '`', '<', '>', '@', '[', ']', '~', '/', '=', '-', '+', '.', '"', '\'',
];

/// Characters Typst reads as a line break (typst-syntax `is_newline`: LF, VT, FF, CR, NEL,
/// U+2028, U+2029) and every other control character: in markup each becomes a space, so no
/// text can end a line and start a heading, a list or a term.
fn breaks_or_controls(c: char) -> bool {
    c.is_control() || matches!(c, '\u{2028}' | '\u{2029}')
}

/// Text escaped for Typst markup: printed literally, on one line.
pub fn markup(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + text.len() / 4);
    for c in text.chars() {
        match c {
            c if breaks_or_controls(c) => out.push(' '),
            c if SPECIAL.contains(&c) => {
                out.push('\\');
                out.push(c);
            }
            c => out.push(c),
        }
    }
    out
}

/// Text as the body of a Typst string literal `"…"`.
pub fn string_literal(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + 2);
    for c in text.chars() {
        match c {
            '\\' => out.push_str("\\\\"),
            '"' => out.push_str("\\\""),
            '\n' => out.push_str("\\n"),
            '\r' => out.push_str("\\r"),
            '\t' => out.push_str("\\t"),
            c if breaks_or_controls(c) => out.push_str(&format!("\\u{{{:x}}}", u32::from(c))),
            c => out.push(c),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_markup_character_gets_a_backslash() {
        assert_eq!(markup("#read(\"/x\")"), "\\#read(\\\"\\/x\\\")");
        assert_eq!(markup("a*b_c"), "a\\*b\\_c");
        assert_eq!(markup("[x]"), "\\[x\\]");
    }

    #[test]
    fn line_breaks_become_spaces_so_no_heading_or_list_can_start() {
        assert_eq!(markup("a\n= b\n- c"), "a \\= b \\- c");
    }

    #[test]
    fn every_character_typst_reads_as_a_line_break_becomes_a_space() {
        for sep in [
            '\u{000B}', '\u{000C}', '\u{0085}', '\u{2028}', '\u{2029}', '\u{0001}',
        ] {
            assert_eq!(markup(&format!("a{sep}= b")), "a \\= b", "{sep:?}");
        }
        assert_eq!(string_literal("a\u{2028}b"), "a\\u{2028}b");
    }

    #[test]
    fn string_literals_escape_quotes_and_backslashes() {
        assert_eq!(string_literal("a\"b\\c\nd"), "a\\\"b\\\\c\\nd");
    }
}
