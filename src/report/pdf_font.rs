//! The fonts of a PDF: which glyphs a document uses and what text each stands for, the TJ
//! arrays of shaped lines, and the embedded subset with its widths and ToUnicode map.

use std::collections::{BTreeMap, HashMap};
use std::sync::{Arc, Mutex, OnceLock};

use pdf_writer::types::{CidFontType, FontFlags, SystemInfo};
use pdf_writer::{Content, Filter, Name, Pdf, Rect, Ref, Str};
use subsetter::GlyphRemapper;

use super::font::{Font, Shaped, Weight};

pub(super) struct FontUse {
    pub(super) font: Font,
    remap: GlyphRemapper,
    /// new glyph id -> (text it stands for, advance in 1/1000 em)
    used: BTreeMap<u16, (String, f32)>,
}

/// Characters every subset carries, in a fixed order: with them most documents of a bundle
/// need the very same subset, which is then made and compressed once (see `subset_cached`).
const BASE_CHARS: &str = " !\"#$%&'()*+,-./0123456789:;<=>?@ABCDEFGHIJKLMNOPQRSTUVWXYZ[\\]^_`\
abcdefghijklmnopqrstuvwxyz{|}~°±²³µ·×÷ÄÖÜßäöüéèàçñ–—‘’“”•…−√σ≤≥≈·→€";

impl FontUse {
    pub(super) fn new(w: Weight) -> FontUse {
        let mut fu = FontUse {
            font: Font::load(w),
            remap: GlyphRemapper::new(),
            used: BTreeMap::new(),
        };
        let _ = fu.encode(BASE_CHARS);
        fu
    }
    pub(super) fn encode(&mut self, text: &str) -> Vec<u8> {
        let mut out = Vec::with_capacity(text.len() * 2);
        for c in text.chars() {
            // a no-break space (from unit gluing) is drawn and extracted as a plain space
            let c = if c == '\u{a0}' { ' ' } else { c };
            let Some((gid, adv)) = self.font.glyph(c) else {
                continue;
            };
            let shown = if self.font.has(c) { c } else { '\u{fffd}' };
            let new = self.remap.remap(gid);
            self.used
                .entry(new)
                .or_insert_with(|| (shown.to_string(), adv * 1000.0));
            out.extend_from_slice(&new.to_be_bytes());
        }
        out
    }

    /// The TJ items of shaped glyphs: glyph codes, with a position adjustment (thousandths
    /// of an em, positive to the left) wherever the shaper's advance or offset differs from
    /// the face's own advance that the PDF's width table carries.
    pub(super) fn encode_shaped(&mut self, glyphs: &[Shaped]) -> Vec<Item> {
        let mut items: Vec<Item> = Vec::new();
        let push_glyph = |items: &mut Vec<Item>, code: [u8; 2]| match items.last_mut() {
            Some(Item::Glyphs(b)) => b.extend_from_slice(&code),
            _ => items.push(Item::Glyphs(code.to_vec())),
        };
        for g in glyphs {
            let own = self.font.advance(g.glyph);
            let new = self.remap.remap(g.glyph);
            let entry = self
                .used
                .entry(new)
                .or_insert_with(|| (String::new(), own * 1000.0));
            if entry.0.is_empty() {
                entry.0 = g.text.clone();
            }
            if g.offset.abs() > 1e-4 {
                items.push(Item::Adjust(-g.offset * 1000.0));
            }
            push_glyph(&mut items, new.to_be_bytes());
            let rest = own - g.advance + g.offset;
            if rest.abs() > 1e-4 {
                items.push(Item::Adjust(rest * 1000.0));
            }
        }
        items
    }
}

/// One item of a TJ array.
pub(super) enum Item {
    Glyphs(Vec<u8>),
    Adjust(f32),
}

pub(super) fn show_items(content: &mut Content, items: &[Item]) {
    let mut tj = content.show_positioned();
    let mut list = tj.items();
    for item in items {
        match item {
            Item::Glyphs(bytes) => list.show(Str(bytes)),
            Item::Adjust(a) => list.adjust(*a),
        };
    }
}

type SubsetCache = HashMap<(&'static str, Vec<u16>), (String, Arc<Vec<u8>>)>;

/// The subset of a face for a glyph set, compressed, with its tag; made once per process
/// for each distinct glyph set (the result depends only on the set, so output stays
/// deterministic).
fn subset_cached(fu: &FontUse) -> (String, Arc<Vec<u8>>) {
    static CACHE: OnceLock<Mutex<SubsetCache>> = OnceLock::new();
    let key = (
        fu.font.postscript_name,
        fu.remap.remapped_gids().collect::<Vec<u16>>(),
    );
    let cache = CACHE.get_or_init(|| Mutex::new(HashMap::new()));
    if let Ok(c) = cache.lock() {
        if let Some(v) = c.get(&key) {
            return v.clone();
        }
    }
    let sub = match subsetter::subset(fu.font.data, 0, &fu.remap) {
        Ok(s) => s,
        Err(_) => fu.font.data.to_vec(), // whole face: larger, still correct
    };
    let v = (subset_tag(&sub), Arc::new(deflate(&sub)));
    if let Ok(mut c) = cache.lock() {
        if c.len() > 256 {
            c.clear();
        }
        c.insert(key, v.clone());
    }
    v
}

fn subset_tag(data: &[u8]) -> String {
    use sha2::{Digest, Sha256};
    let h = Sha256::digest(data);
    h.iter()
        .take(6)
        .map(|b| char::from(b'A' + b % 26))
        .collect()
}

pub(super) fn write_font(pdf: &mut Pdf, alloc: &mut impl FnMut() -> Ref, type0: Ref, fu: &FontUse) {
    let cid = alloc();
    let desc = alloc();
    let file = alloc();
    let cmap_ref = alloc();
    let scale = 1000.0 / fu.font.units_per_em();
    let (sub_tag, data) = subset_cached(fu);
    let name = format!("{}+{}", sub_tag, fu.font.postscript_name);
    let info = SystemInfo {
        registry: Str(b"Adobe"),
        ordering: Str(b"Identity"),
        supplement: 0,
    };
    pdf.type0_font(type0)
        .base_font(Name(name.as_bytes()))
        .encoding_predefined(Name(b"Identity-H"))
        .descendant_font(cid)
        .to_unicode(cmap_ref);
    {
        let mut c = pdf.cid_font(cid);
        c.subtype(CidFontType::Type2)
            .base_font(Name(name.as_bytes()))
            .system_info(info)
            .font_descriptor(desc)
            .default_width(0.0)
            .cid_to_gid_map_predefined(Name(b"Identity"));
        let mut ws = c.widths();
        let mut run: Vec<f32> = Vec::new();
        let mut start: Option<u16> = None;
        let mut prev = 0u16;
        for (&g, &(_, adv)) in &fu.used {
            match start {
                Some(_) if g == prev.wrapping_add(1) => run.push(adv),
                Some(s) => {
                    ws.consecutive(s, run.drain(..));
                    start = Some(g);
                    run.push(adv);
                }
                None => {
                    start = Some(g);
                    run.push(adv);
                }
            }
            prev = g;
        }
        if let Some(s) = start {
            ws.consecutive(s, run.drain(..));
        }
    }
    let bb = fu.font.bounding_box();
    let (ascender, descender) = fu.font.ascender_descender();
    pdf.font_descriptor(desc)
        .name(Name(name.as_bytes()))
        .flags(FontFlags::SYMBOLIC)
        .bbox(Rect::new(
            bb[0] * scale,
            bb[1] * scale,
            bb[2] * scale,
            bb[3] * scale,
        ))
        .italic_angle(0.0)
        .ascent(ascender * scale)
        .descent(descender * scale)
        .cap_height(fu.font.cap_height() * scale)
        .stem_v(if fu.font.weight == Weight::Bold {
            140.0
        } else {
            80.0
        })
        .font_file2(file);
    pdf.stream(file, &data).filter(Filter::FlateDecode);
    let mut cmap = pdf_writer::types::UnicodeCmap::new(Name(b"Custom"), info);
    for (&g, (text, _)) in &fu.used {
        if !text.is_empty() {
            cmap.pair_with_multiple(g, text.chars());
        }
    }
    let cmap_data = cmap.finish();
    pdf.stream(cmap_ref, &cmap_data);
}

/// zlib at level 6: fonts and other streams read many times.
fn deflate(data: &[u8]) -> Vec<u8> {
    miniz_oxide::deflate::compress_to_vec_zlib(data, 6)
}
