//! The bundled typeface (DejaVu Sans, regular and bold; licence in assets/fonts/) and the
//! text measuring every renderer shares: glyph lookup with a visible fallback for characters
//! the face lacks, word wrapping that also breaks words longer than the line, and the
//! visual order of right-to-left runs (Unicode bidirectional algorithm, per line).

use std::collections::HashMap;

use harfrust::{Direction, ShapeOptions, ShaperFont};
use skrifa::{Font as Face, GlyphId};
use unicode_bidi::BidiInfo;

static REGULAR: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans.ttf");
static BOLD: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans-Bold.ttf");

/// Which of the two bundled faces.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Weight {
    Regular,
    Bold,
}

/// One glyph of a shaped line, in drawing (visual) order.
#[derive(Debug, Clone, PartialEq)]
pub struct Shaped {
    pub glyph: u16,
    /// Advance the shaper gives, in em.
    pub advance: f32,
    /// Horizontal offset from the pen position, in em (marks over their base).
    pub offset: f32,
    /// The text this glyph stands for (its cluster), empty for the second and later glyphs
    /// of a cluster.
    pub text: String,
}

/// One parsed face (font data through skrifa, shaping through harfrust) with a
/// per-character cache of (glyph, advance in em).
pub struct Font {
    pub data: &'static [u8],
    pub face: Face,
    pub postscript_name: &'static str,
    pub weight: Weight,
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
        let face = Face::new(data, 0).expect("bundled font parses");
        let upem = f32::from(face.units_per_em().max(1));
        let fallback = {
            let charmap = face.charmap();
            let metrics = face.glyph_metrics();
            // U+FFFD REPLACEMENT CHARACTER where the face has it, else '?'
            charmap
                .map_unicode('\u{fffd}')
                .or_else(|| charmap.map_unicode('?'))
                .map(|g| (glyph16(g), metrics.h_advance(g) / upem))
                .unwrap_or((0, 0.5))
        };
        Font {
            data,
            face,
            postscript_name,
            weight,
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
            match self.face.charmap().map_unicode(c) {
                Some(g) => Some((glyph16(g), self.advance(glyph16(g)))),
                None => Some(self.fallback),
            }
        };
        self.cache.insert(c, v);
        v
    }

    /// The advance of a glyph in em, from the face's metrics.
    pub fn advance(&self, glyph: u16) -> f32 {
        self.face
            .glyph_metrics()
            .h_advance(GlyphId::new(u32::from(glyph)))
            / self.upem
    }

    /// True when the face draws this character itself (not the fallback).
    pub fn has(&self, c: char) -> bool {
        self.face.charmap().map_unicode(c).is_some()
    }

    /// Width of a line of text at `size` points (shaped when the line needs it).
    pub fn width(&mut self, text: &str, size: f32) -> f32 {
        if needs_shaping(text) {
            return self.shape_line(text).iter().map(|g| g.advance).sum::<f32>() * size;
        }
        text.chars()
            .filter_map(|c| self.glyph(c))
            .map(|(_, a)| a)
            .sum::<f32>()
            * size
    }

    /// The glyphs of one line (logical order in) in drawing order: the line is split into
    /// runs by the Unicode bidirectional algorithm, each run is shaped in its direction
    /// (joining forms, ligatures, mark positions from the face's layout tables), and the
    /// runs are laid out left to right.
    pub fn shape_line(&mut self, line: &str) -> Vec<Shaped> {
        let info = BidiInfo::new(line, None);
        let mut out = Vec::new();
        for para in &info.paragraphs {
            let (levels, runs) = info.visual_runs(para, para.range.clone());
            for run in runs {
                let rtl = levels[run.start].is_rtl();
                out.extend(self.shape_run(&line[run], rtl));
            }
        }
        out
    }

    /// Shape one run of one direction; glyphs in drawing order.
    pub fn shape_run(&mut self, run: &str, rtl: bool) -> Vec<Shaped> {
        let shaper = ShaperFont::new(&self.face);
        let mut buffer = harfrust::Buffer::new();
        buffer.push_str(run);
        buffer.guess_segment_properties();
        buffer.set_direction(if rtl {
            Direction::RightToLeft
        } else {
            Direction::LeftToRight
        });
        if harfrust::shape(&shaper, &mut buffer, ShapeOptions::new()).is_err() {
            // a face the shaper refuses: one glyph per character, in drawing order
            let mut plain: Vec<Shaped> = run
                .chars()
                .filter_map(|c| {
                    self.glyph(c).map(|(glyph, advance)| Shaped {
                        glyph,
                        advance,
                        offset: 0.0,
                        text: c.to_string(),
                    })
                })
                .collect();
            if rtl {
                plain.reverse();
            }
            return plain;
        }
        let infos = buffer.glyph_infos();
        let positions = buffer.glyph_positions();
        // each cluster's text runs from its start to the next larger cluster start
        let mut starts: Vec<usize> = infos.iter().map(|i| i.cluster as usize).collect();
        starts.sort_unstable();
        starts.dedup();
        let text_of = |start: usize| {
            let end = starts
                .iter()
                .find(|&&s| s > start)
                .copied()
                .unwrap_or(run.len());
            run.get(start..end).unwrap_or("").to_string()
        };
        let mut seen = std::collections::HashSet::new();
        infos
            .iter()
            .zip(positions)
            .filter_map(|(i, p)| {
                let glyph = u16::try_from(i.glyph_id).ok()?;
                let start = i.cluster as usize;
                let text = if seen.insert(start) {
                    text_of(start)
                } else {
                    String::new()
                };
                Some(Shaped {
                    glyph,
                    advance: p.x_advance as f32 / self.upem,
                    offset: p.x_offset as f32 / self.upem,
                    text,
                })
            })
            .collect()
    }

    /// The face's box around every glyph, in font units: x_min, y_min, x_max, y_max.
    pub fn bounding_box(&self) -> [f32; 4] {
        let b = self.face.metrics().bounds;
        [b.x_min, b.y_min, b.x_max, b.y_max].map(|v| v.to_f64() as f32)
    }

    /// Ascender and descender (negative) in font units, from `hhea`.
    pub fn ascender_descender(&self) -> (f32, f32) {
        match self.face.metrics().hhea_line {
            Some(l) => (l.ascender.to_f64() as f32, l.descender.to_f64() as f32),
            None => (0.8 * self.upem, -0.2 * self.upem),
        }
    }

    /// Height of a capital letter in font units (the ascender where the face does not say).
    pub fn cap_height(&self) -> f32 {
        match self.face.metrics().cap_height {
            Some(h) => h.to_f64() as f32,
            None => self.ascender_descender().0,
        }
    }
}

fn glyph16(g: GlyphId) -> u16 {
    u16::try_from(g.to_u32()).unwrap_or(0)
}

/// True when a line has text that must be shaped to be drawn right: right-to-left text
/// (drawn in reverse, with mirrored brackets) and scripts whose letters join (Arabic,
/// Syriac, Thaana, N'Ko and their supplements).
pub fn needs_shaping(line: &str) -> bool {
    line.chars().any(|c| {
        is_rtl_char(c)
            || matches!(c, '\u{0600}'..='\u{08ff}' | '\u{fb50}'..='\u{fdff}' | '\u{fe70}'..='\u{feff}')
    })
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

#[cfg(test)]
mod shaping_tests {
    use super::*;

    fn gid(f: &Font, c: char) -> u16 {
        glyph16(
            f.face
                .charmap()
                .map_unicode(c)
                .expect("the face has the form"),
        )
    }

    #[test]
    fn arabic_is_joined_and_drawn_right_to_left() {
        // "مكسور" (broken): meem, kaf, seen are dual-joining, waw and reh right-joining
        // (Unicode ArabicShaping.txt), so the word is meem initial, kaf medial, seen medial,
        // waw final, reh isolated. Their shapes are the Arabic Presentation Forms-B of the
        // Unicode Standard: U+FEE3, U+FEDC, U+FEB4, U+FEEE and U+FEAD (or the plain letter,
        // which is the isolated shape). Drawn right to left, the first glyph is the reh.
        let mut f = Font::load(Weight::Regular);
        let shaped = f.shape_line("مكسور");
        let glyphs: Vec<u16> = shaped.iter().map(|g| g.glyph).collect();
        let reh = glyphs[0];
        assert!(
            reh == gid(&f, '\u{0631}') || reh == gid(&f, '\u{fead}'),
            "{glyphs:?}"
        );
        assert_eq!(
            glyphs[1..],
            [
                gid(&f, '\u{feee}'),
                gid(&f, '\u{feb4}'),
                gid(&f, '\u{fedc}'),
                gid(&f, '\u{fee3}')
            ],
            "{shaped:?}"
        );
        let texts: Vec<&str> = shaped.iter().map(|g| g.text.as_str()).collect();
        assert_eq!(texts, ["ر", "و", "س", "ك", "م"]);
        // the same letter takes its three positional forms: beh final, medial, initial
        // (U+FE90, U+FE92, U+FE91) when drawn right to left
        let beh: Vec<u16> = f.shape_line("ببب").iter().map(|g| g.glyph).collect();
        assert_eq!(
            beh,
            [
                gid(&f, '\u{fe90}'),
                gid(&f, '\u{fe92}'),
                gid(&f, '\u{fe91}')
            ]
        );
        // lam followed by alef is one ligature glyph (U+FEFB) standing for both letters
        let lam_alef = f.shape_line("لا");
        assert_eq!(lam_alef.len(), 1);
        assert_eq!(lam_alef[0].glyph, gid(&f, '\u{fefb}'));
        assert_eq!(lam_alef[0].text, "لا");
        // the measured width is the shaped one, not the sum of the isolated letters
        let shaped_w: f32 = f.shape_line("ببب").iter().map(|g| g.advance).sum();
        assert!((f.width("ببب", 1.0) - shaped_w).abs() < 1e-6);
    }

    #[test]
    fn a_mixed_line_keeps_latin_left_to_right() {
        let mut f = Font::load(Weight::Regular);
        let texts: Vec<String> = f
            .shape_line("glass زجاج ok")
            .into_iter()
            .map(|g| g.text)
            .collect();
        let joined = texts.concat();
        // Latin first in reading order, the Arabic word reversed for drawing, Latin again
        assert!(joined.starts_with("glass "), "{joined}");
        assert!(joined.ends_with(" ok"), "{joined}");
        assert!(joined.contains("جاجز"), "{joined}");
        assert!(!needs_shaping("plain Latin, 38.4 MPa·√m"));
        assert!(needs_shaping("x שלום") && needs_shaping("زجاج"));
    }
}
