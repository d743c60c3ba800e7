//! User text made safe to show, and the few ways the program lines text up.
//!
//! Widths are terminal cells (unicode-width), never bytes or `char`s: a CJK or emoji
//! character takes two cells, a combining mark none.

use unicode_width::{UnicodeWidthChar, UnicodeWidthStr};

use crate::units::{self, Unit};

/// Strip terminal control sequences and other control characters from user text before it
/// is shown on a terminal. An escape sequence goes with its payload (CSI up to its final
/// byte; OSC, DCS, APC and PM up to BEL or ST). Tabs become spaces; newlines are kept only
/// when `keep_newlines`. Bidi overrides and isolates are dropped too: they can reorder what
/// a reader sees.
pub fn sanitize_for_terminal(text: &str, keep_newlines: bool) -> String {
    let mut out = String::with_capacity(text.len());
    let mut chars = text.chars().peekable();
    while let Some(c) = chars.next() {
        match c {
            '\u{1b}' => match chars.peek() {
                Some('[') => {
                    chars.next();
                    for d in chars.by_ref() {
                        if ('@'..='~').contains(&d) {
                            break;
                        }
                    }
                }
                Some(']') | Some('P') | Some('_') | Some('^') => {
                    chars.next();
                    while let Some(d) = chars.next() {
                        if d == '\u{7}' {
                            break;
                        }
                        if d == '\u{1b}' && chars.peek() == Some(&'\\') {
                            chars.next();
                            break;
                        }
                    }
                }
                Some(_) => {
                    chars.next();
                }
                None => {}
            },
            '\n' if keep_newlines => out.push('\n'),
            '\t' => out.push(' '),
            c if c.is_control() => {}
            '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}' => {}
            c => out.push(c),
        }
    }
    out
}

/// One line of user text made visible rather than cut: every control character becomes a
/// symbol that is printed, not obeyed (C0 controls their Unicode control picture, so ESC is
/// `␛` and BEL `␇`; DEL `␡`; C1 controls and bidirectional overrides and isolates U+FFFD),
/// so an escape sequence is seen whole, payload and all. A newline or tab becomes a space so
/// that the line keeps its shape. The same symbols the command line writes to a terminal.
pub fn visible(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        out.push(visible_char(c));
    }
    out
}

/// The symbol [`visible`] shows for one character (the character itself when it prints).
pub fn visible_char(c: char) -> char {
    match c {
        '\n' | '\t' => ' ',
        '\u{7f}' => '\u{2421}',
        c if (c as u32) < 0x20 => char::from_u32(0x2400 + c as u32).unwrap_or('\u{fffd}'),
        c if c.is_control() => '\u{fffd}',
        '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}' => '\u{fffd}',
        c => c,
    }
}

/// One line of user text, safe to show: [`sanitize_for_terminal`] without newlines.
pub fn clean(s: &str) -> String {
    sanitize_for_terminal(s, false)
}

/// Width of `s` in terminal cells.
pub fn width(s: &str) -> usize {
    UnicodeWidthStr::width(s)
}

/// Cut `s` to at most `cells` terminal cells, ending with "…" when cut.
pub fn fit(s: &str, cells: usize) -> String {
    if width(s) <= cells {
        return s.to_string();
    }
    if cells == 0 {
        return String::new();
    }
    let mut out = String::new();
    let mut used = 0;
    for ch in s.chars() {
        let w = UnicodeWidthChar::width(ch).unwrap_or(0);
        if used + w > cells.saturating_sub(1) {
            break;
        }
        out.push(ch);
        used += w;
    }
    out.push('…');
    out
}

/// `s` cut (with "…") or padded on the right to exactly `cells` cells.
pub fn fit_left(s: &str, cells: usize) -> String {
    let t = fit(s, cells);
    let w = width(&t);
    format!("{t}{}", " ".repeat(cells.saturating_sub(w)))
}

/// `s` padded on the right to at least `cells` cells; longer text is kept whole.
pub fn pad_right(s: &str, cells: usize) -> String {
    format!("{s}{}", " ".repeat(cells.saturating_sub(width(s))))
}

/// `s` padded on the left to at least `cells` cells; longer text is kept whole.
pub fn pad_left(s: &str, cells: usize) -> String {
    format!("{}{s}", " ".repeat(cells.saturating_sub(width(s))))
}

/// A stress given in pascals, shown in MPa to three significant figures with its unit
/// ("71.5 MPa"). The one way a stress is printed for a reader.
pub fn stress(pa: f64) -> String {
    units::format(pa, Unit::Megapascal)
}

/// [`stress`] of an optional value, "—" when there is none.
pub fn stress_or_dash(pa: Option<f64>) -> String {
    pa.map(stress).unwrap_or_else(|| "—".into())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn visible_shows_every_control_as_a_symbol_of_one_cell() {
        let s = visible("a\u{1b}]0;owned\u{7}b\u{9b}c\u{202e}d\u{7f}e\nf\tg\r");
        assert_eq!(s, "a␛]0;owned␇b\u{fffd}c\u{fffd}d␡e f g␍");
        assert_eq!(width(&s), s.chars().count());
        assert_eq!(visible("plain é 湖"), "plain é 湖");
    }

    #[test]
    fn escape_sequences_go_with_their_payload() {
        assert_eq!(clean("a\u{1b}[31mred\u{1b}[0m b"), "ared b");
        assert_eq!(clean("x\u{1b}]0;title\u{7}y"), "xy");
        assert_eq!(clean("x\u{1b}]8;;http://h\u{1b}\\y"), "xy");
        assert_eq!(sanitize_for_terminal("a\nb\tc\u{202e}d", true), "a\nb cd");
        assert_eq!(clean("a\nb"), "ab");
    }

    #[test]
    fn widths_count_cells_not_chars() {
        assert_eq!(width("日本"), 4);
        assert_eq!(fit("日本語", 5), "日本…");
        assert_eq!(fit_left("ab", 4), "ab  ");
        assert_eq!(fit_left("abcdef", 4), "abc…");
        assert_eq!(pad_right("日", 3), "日 ");
        assert_eq!(pad_left("7", 3), "  7");
        assert_eq!(pad_right("toolong", 3), "toolong");
    }

    #[test]
    fn a_stress_carries_its_unit() {
        assert_eq!(stress(71.5e6), "71.5 MPa");
        assert_eq!(stress_or_dash(None), "—");
    }
}
