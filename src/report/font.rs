//! The bundled typeface (DejaVu Sans, regular and bold; licence in assets/fonts/) and the
//! text measuring every renderer shares: glyph lookup with a visible fallback for characters
//! the face lacks, word wrapping that also breaks words longer than the line, and the
//! visual order of right-to-left runs (Unicode bidirectional algorithm, per line).

use std::collections::HashMap;

use ttf_parser::{Face, GlyphId};
use unicode_bidi::BidiInfo;

static REGULAR: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans.ttf");
static BOLD: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans-Bold.ttf");

/// Which of the two bundled faces.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Weight {
    Regular,
    Bold,
}

/// One parsed face with a per-character cache of (glyph, advance in em).
pub struct Font {
    pub data: &'static [u8],
    pub face: Face<'static>,
    pub postscript_name: &'static str,
    upem: f32,
    cache: HashMap<char, Option<(u16, f32)>>,
    fallback: (u16, f32),
}

impl Font {
    /// Parse a bundled face. The bytes are compiled in, so a failure here is a build error
    /// that the unit tests catch, never a user's input.
    pub fn load(weight: Weight) -> Font {
        let (data, postscript_name) = match weight {
            Weight::Regular => (REGULAR, "DejaVuSans"),
            Weight::Bold => (BOLD, "DejaVuSans-Bold"),
        };
        #[allow(clippy::expect_used)]
        let face = Face::parse(data, 0).expect("bundled font parses");
        let upem = f32::from(face.units_per_em().max(1));
        let adv = |g: GlyphId| f32::from(face.glyph_hor_advance(g).unwrap_or(0)) / upem;
        // U+FFFD REPLACEMENT CHARACTER where the face has it, else '?'
        let fallback = face
            .glyph_index('\u{fffd}')
            .or_else(|| face.glyph_index('?'))
            .map(|g| (g.0, adv(g)))
            .unwrap_or((0, 0.5));
        Font {
            data,
            face,
            postscript_name,
            upem,
            cache: HashMap::new(),
            fallback,
        }
    }

    pub fn units_per_em(&self) -> f32 {
        self.upem
    }

    /// Glyph id and advance (in em) for one character; `None` for characters drawn as
    /// nothing (controls, zero-width joiners, variation selectors, bidi marks).
    pub fn glyph(&mut self, c: char) -> Option<(u16, f32)> {
        if let Some(v) = self.cache.get(&c) {
            return *v;
        }
        let v = if is_invisible(c) {
            None
        } else {
            match self.face.glyph_index(c) {
                Some(g) => {
                    let a = f32::from(self.face.glyph_hor_advance(g).unwrap_or(0)) / self.upem;
                    Some((g.0, a))
                }
                None => Some(self.fallback),
            }
        };
        self.cache.insert(c, v);
        v
    }

    /// True when the face draws this character itself (not the fallback).
    pub fn has(&self, c: char) -> bool {
        self.face.glyph_index(c).is_some()
    }

    /// Width of a line of text at `size` points.
    pub fn width(&mut self, text: &str, size: f32) -> f32 {
        text.chars()
            .filter_map(|c| self.glyph(c))
            .map(|(_, a)| a)
            .sum::<f32>()
            * size
    }
}

/// Characters that take no room and need no glyph.
pub fn is_invisible(c: char) -> bool {
    matches!(c,
        '\u{200b}'..='\u{200f}' | '\u{202a}'..='\u{202e}' | '\u{2060}'..='\u{2069}'
        | '\u{fe00}'..='\u{fe0f}' | '\u{feff}' | '\u{e0100}'..='\u{e01ef}' | '\u{1f3fb}'..='\u{1f3ff}')
        || (c.is_control() && c != '\n')
}

/// Split text into lines no wider than `max_width` points: hard breaks at newlines, soft
/// breaks at spaces, and words longer than a line broken between characters. Each line is
/// returned in logical order; call [`visual`] before drawing it.
pub fn wrap(font: &mut Font, text: &str, size: f32, max_width: f32) -> Vec<String> {
    let mut lines = Vec::new();
    let max_width = max_width.max(size); // at least one character per line
    for para in text.split('\n') {
        let para = para.trim_end_matches('\r');
        let mut line = String::new();
        let mut line_w = 0.0f32;
        let space_w = font.width(" ", size);
        for word in glue_units(para) {
            let word = word.as_str();
            let word_w = font.width(word, size);
            let sep_w = if line.is_empty() { 0.0 } else { space_w };
            if line_w + sep_w + word_w <= max_width {
                if !line.is_empty() {
                    line.push(' ');
                }
                line.push_str(word);
                line_w += sep_w + word_w;
                continue;
            }
            if word_w <= max_width {
                lines.push(std::mem::take(&mut line));
                line.push_str(word);
                line_w = word_w;
                continue;
            }
            // a word longer than a line: fill the current line, then break by characters
            if !line.is_empty() {
                line.push(' ');
                line_w += space_w;
            }
            for c in word.chars() {
                let w = font.glyph(c).map(|(_, a)| a * size).unwrap_or(0.0);
                if line_w + w > max_width && !line.is_empty() {
                    lines.push(std::mem::take(&mut line));
                    line_w = 0.0;
                }
                line.push(c);
                line_w += w;
            }
        }
        lines.push(line);
    }
    lines
}

/// Split at spaces, but keep a number and the short unit after it together ("38.4 MPa",
/// "95 %", "72 kB"): they are joined by a no-break space, which the PDF draws as a space.
/// A unit is letters and unit signs only; short words that read on ("0.99 to 1.96") are not
/// units, nor is anything with brackets or digits.
fn glue_units(para: &str) -> Vec<String> {
    const NOT_UNITS: [&str; 12] = [
        "to", "and", "or", "of", "in", "at", "on", "for", "per", "by", "the", "times",
    ];
    let unit_like = |w: &str| {
        let w = w.trim_end_matches([')', ',', '.', ';', ':']);
        !w.is_empty()
            && w.chars().count() <= 6
            && w.chars()
                .all(|c| c.is_alphabetic() || "%°µ·/²³Ω‰′″√".contains(c))
            && !NOT_UNITS.contains(&w)
    };
    let mut out: Vec<String> = Vec::new();
    for w in para.split(' ') {
        let glue = match out.last() {
            Some(prev) => prev.ends_with(|c: char| c.is_ascii_digit()) && unit_like(w),
            None => false,
        };
        if glue {
            if let Some(prev) = out.last_mut() {
                prev.push('\u{a0}');
                prev.push_str(w);
            }
        } else {
            out.push(w.to_string());
        }
    }
    out
}

/// The visual (left-to-right drawing) order of one line: right-to-left runs reversed by the
/// Unicode bidirectional algorithm. Pure left-to-right text is returned unchanged.
pub fn visual(line: &str) -> String {
    if !line.chars().any(is_rtl_char) {
        return line.to_string();
    }
    let info = BidiInfo::new(line, None);
    let mut out = String::with_capacity(line.len());
    for para in &info.paragraphs {
        let range = para.range.clone();
        out.push_str(&info.reorder_line(para, range));
    }
    out
}

fn is_rtl_char(c: char) -> bool {
    matches!(c, '\u{0590}'..='\u{08ff}' | '\u{fb1d}'..='\u{fdff}' | '\u{fe70}'..='\u{feff}'
        | '\u{10800}'..='\u{10fff}' | '\u{1e800}'..='\u{1efff}' | '\u{200f}' | '\u{202b}' | '\u{202e}' | '\u{2067}')
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn faces_load_and_measure() {
        let mut f = Font::load(Weight::Regular);
        assert!(f.has('µ') && f.has('σ') && f.has('√') && f.has('°') && f.has('א'));
        assert!(f.width("MPa", 10.0) > 10.0);
        // an emoji is not in the face: drawn with the fallback glyph, still measured
        assert!(!f.has('🧪'));
        assert!(f.glyph('🧪').is_some());
        assert!(f.glyph('\u{fe0f}').is_none());
        let mut b = Font::load(Weight::Bold);
        assert!(b.width("MPa", 10.0) > f.width("MPa", 10.0) * 0.99);
    }

    #[test]
    fn a_number_keeps_its_unit_but_not_the_next_word() {
        let nb = |s: &str| s.replace(' ', "\u{a0}");
        assert_eq!(
            glue_units("38.4 MPa and 95 % interval"),
            vec![nb("38.4 MPa"), "and".into(), nb("95 %"), "interval".into()]
        );
        // an interval: "to" reads on, brackets are no unit
        assert_eq!(
            glue_units("1.41 (0.993 to 1.96)"),
            vec!["1.41", "(0.993", "to", "1.96)"]
        );
        assert_eq!(
            glue_units("(1.21 mm to 5.78 mm)"),
            vec![nb("(1.21 mm"), "to".into(), nb("5.78 mm)")]
        );
        assert_eq!(glue_units("0.75 MPa·√m"), vec![nb("0.75 MPa·√m")]);
    }

    #[test]
    fn wrap_breaks_long_words_and_keeps_lines_narrow() {
        let mut f = Font::load(Weight::Regular);
        let long = "x".repeat(10_000);
        let lines = wrap(&mut f, &format!("start {long} end"), 9.0, 200.0);
        assert!(lines.len() > 100);
        for l in &lines {
            assert!(f.width(l, 9.0) <= 200.0 + 0.01, "{l}");
        }
        let joined: String = lines.concat();
        assert_eq!(joined.matches('x').count(), 10_000);
        assert_eq!(wrap(&mut f, "a\nb", 9.0, 200.0), vec!["a", "b"]);
    }

    #[test]
    fn visual_order_reverses_rtl_runs_only() {
        assert_eq!(visual("abc"), "abc");
        // Hebrew "shalom" stored logically; drawn right to left
        let v = visual("x שלום y");
        assert!(v.starts_with("x ") && v.ends_with(" y"));
        assert!(v.contains("םולש"));
    }
}
