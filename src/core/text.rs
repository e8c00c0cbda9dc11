//! Text from files shown on a terminal: names may hold escape sequences (which a
//! terminal obeys: colours, cursor moves, a changed window title) or right-to-left
//! overrides (which make a name read as something else). Messages and text output show
//! them escaped; CSV and JSON keep the exact text.

use std::borrow::Cow;
use std::fmt::Write;

/// True for a character a terminal would act on rather than show: control characters
/// other than line feed and tab, and the Unicode bidirectional controls (Unicode
/// Standard Annex #9, table 4: LRM, RLM, ALM, LRE…RLO, LRI…PDI).
pub fn acts_on_terminal(c: char) -> bool {
    (c.is_control() && c != '\n' && c != '\t')
        || matches!(
            c,
            '\u{200e}' | '\u{200f}' | '\u{061c}' | '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}'
        )
}

/// `text` with every character that `acts_on_terminal` written as `\u{hex}`.
pub fn printable(text: &str) -> Cow<'_, str> {
    if !text.chars().any(acts_on_terminal) {
        return text.into();
    }
    let mut out = String::with_capacity(text.len() + 16);
    for c in text.chars() {
        if acts_on_terminal(c) {
            let _ = write!(out, "\\u{{{:x}}}", u32::from(c));
        } else {
            out.push(c);
        }
    }
    out.into()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_what_a_terminal_obeys_and_keeps_the_rest() {
        assert_eq!(printable("plain café\tx\n"), "plain café\tx\n");
        assert_eq!(
            printable("\u{1b}[31mred\u{202e}txt\r"),
            "\\u{1b}[31mred\\u{202e}txt\\u{d}"
        );
    }
}
