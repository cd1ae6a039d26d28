//! Untrusted text on its way to a terminal.
//!
//! Ids, titles, categories and notes come from the user's files, which may come from
//! anyone. Printed raw, an escape sequence in an id could move the cursor, change colours,
//! rewrite what is on screen or set the window title; a bell or a backspace is only rude.
//! Table output and the explorer show such characters escaped ([`escaped`]); CSV and JSON
//! keep the exact bytes, quoted or escaped by their own rules.

use std::borrow::Cow;

/// True for characters that are shown escaped: control characters (C0, DEL, C1) and the
/// invisible bidirectional controls that can make text read differently from what it is.
pub fn needs_escape(c: char) -> bool {
    c.is_control()
        || matches!(c, '\u{200E}' | '\u{200F}' | '\u{202A}'..='\u{202E}' | '\u{2066}'..='\u{2069}')
}

/// One character as it is shown: `\n`, `\t`, `\r`, `\x1b`, `\u{202e}`.
pub fn escape_char(c: char) -> String {
    match c {
        '\n' => "\\n".into(),
        '\t' => "\\t".into(),
        '\r' => "\\r".into(),
        c if (c as u32) < 0x80 => format!("\\x{:02x}", c as u32),
        c => format!("\\u{{{:x}}}", c as u32),
    }
}

/// `text` with every character [`needs_escape`] picks written out as an escape; borrowed
/// when there is none (the usual case).
pub fn escaped(text: &str) -> Cow<'_, str> {
    if !text.chars().any(needs_escape) {
        return Cow::Borrowed(text);
    }
    let mut out = String::with_capacity(text.len() + 8);
    for c in text.chars() {
        if needs_escape(c) {
            out.push_str(&escape_char(c));
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn control_characters_are_written_out() {
        assert_eq!(escaped("plain soup"), "plain soup");
        assert!(matches!(escaped("plain"), Cow::Borrowed(_)));
        assert_eq!(escaped("a\x1b[2Jb"), "a\\x1b[2Jb");
        assert_eq!(escaped("bell\x07"), "bell\\x07");
        assert_eq!(escaped("two\nlines\tand\r"), "two\\nlines\\tand\\r");
        assert_eq!(escaped("\u{9b}31m"), "\\u{9b}31m");
        assert_eq!(escaped("abc\u{202e}def"), "abc\\u{202e}def");
        assert_eq!(escaped("Crème brûlée ✎"), "Crème brûlée ✎");
    }
}
