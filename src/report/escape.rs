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

/// Text escaped for Typst markup: printed literally, on one line.
pub fn markup(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + text.len() / 4);
    for c in text.chars() {
        match c {
            '\n' | '\r' | '\t' => out.push(' '),
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
    fn string_literals_escape_quotes_and_backslashes() {
        assert_eq!(string_literal("a\"b\\c\nd"), "a\\\"b\\\\c\\nd");
    }
}
