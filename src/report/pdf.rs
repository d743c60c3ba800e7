//! PDF renderer: lays a [`Document`] out on A4 or US Letter pages and writes the file with
//! `pdf-writer`, the bundled DejaVu Sans faces subset-embedded (`subsetter`) as CID fonts
//! with a ToUnicode map (so the text can be searched and copied), photos embedded (JPEG as
//! is, PNG decoded and recompressed), charts as vector paths. Every page has a header with
//! the reference and a footer with the page number and the content digest.
//!
//! Output is deterministic: the same document gives the same bytes (no clock, no random).

use std::collections::{BTreeMap, HashMap};
use std::sync::{Arc, Mutex, OnceLock};

use pdf_writer::types::Predictor;
use pdf_writer::types::{CidFontType, FontFlags, SystemInfo};
use pdf_writer::{Content, Filter, Finish, Name, Pdf, Rect, Ref, Str, TextStr};
use subsetter::GlyphRemapper;

use super::chart::{Anchor, Prim, Rgb, GRID, INK};
use super::doc::{Block, Document, Paper, Table};
use super::font::{is_invisible, needs_shaping, visual, wrap, Font, Shaped, Weight};
use super::image::{decode_png, png_passthrough, Picture, PictureKind};

const MARGIN_X: f32 = 50.0;
const MARGIN_TOP: f32 = 40.0;
const MARGIN_BOTTOM: f32 = 40.0;
const HEADER_H: f32 = 26.0;
const FOOTER_H: f32 = 22.0;
const BODY: f32 = 9.5;
const SMALL: f32 = 8.0;
const CELL: f32 = 8.5;
const GREY: Rgb = Rgb(0x66, 0x66, 0x66);
const HEAD_FILL: Rgb = Rgb(0xe8, 0xec, 0xf1);

struct FontUse {
    font: Font,
    remap: GlyphRemapper,
    /// new glyph id -> (text it stands for, advance in 1/1000 em)
    used: BTreeMap<u16, (String, f32)>,
}

/// Characters every subset carries, in a fixed order: with them most documents of a bundle
/// need the very same subset, which is then made and compressed once (see `subset_cached`).
const BASE_CHARS: &str = " !\"#$%&'()*+,-./0123456789:;<=>?@ABCDEFGHIJKLMNOPQRSTUVWXYZ[\\]^_`\
abcdefghijklmnopqrstuvwxyz{|}~°±²³µ·×÷ÄÖÜßäöüéèàçñ–—‘’“”•…−√σ≤≥≈·→€";

impl FontUse {
    fn new(w: Weight) -> FontUse {
        let mut fu = FontUse {
            font: Font::load(w),
            remap: GlyphRemapper::new(),
            used: BTreeMap::new(),
        };
        let _ = fu.encode(BASE_CHARS);
        fu
    }
    fn encode(&mut self, text: &str) -> Vec<u8> {
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
    fn encode_shaped(&mut self, glyphs: &[Shaped]) -> Vec<Item> {
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
enum Item {
    Glyphs(Vec<u8>),
    Adjust(f32),
}

struct ImageRes {
    name: String,
    pic_index: usize,
}

struct Writer<'d> {
    doc: &'d Document,
    pw: f32,
    ph: f32,
    fonts: [FontUse; 2],
    pages: Vec<Content>,
    cur: Content,
    /// distance of the cursor from the top edge
    y: f32,
    images: Vec<ImageRes>,
    image_by_hash: HashMap<String, usize>,
    pictures: Vec<&'d Picture>,
}

fn fi(w: Weight) -> usize {
    match w {
        Weight::Regular => 0,
        Weight::Bold => 1,
    }
}

impl<'d> Writer<'d> {
    fn cw(&self) -> f32 {
        self.pw - 2.0 * MARGIN_X
    }
    fn top(&self) -> f32 {
        MARGIN_TOP + HEADER_H
    }
    fn bottom(&self) -> f32 {
        self.ph - MARGIN_BOTTOM - FOOTER_H
    }
    fn room(&self) -> f32 {
        self.bottom() - self.y
    }

    fn new_page(&mut self) {
        let done = std::mem::replace(&mut self.cur, Content::new());
        self.pages.push(done);
        self.y = self.top();
        self.header();
    }

    fn ensure(&mut self, h: f32) {
        if self.y + h > self.bottom() && self.y > self.top() + 0.5 {
            self.new_page();
        }
    }

    fn width(&mut self, text: &str, size: f32, w: Weight) -> f32 {
        self.fonts[fi(w)].font.width(text, size)
    }

    fn wrap(&mut self, text: &str, size: f32, w: Weight, max: f32) -> Vec<String> {
        wrap(&mut self.fonts[fi(w)].font, text, size, max)
    }

    /// Draw one line (logical order) with its baseline `baseline` points from the top.
    #[allow(clippy::too_many_arguments)]
    fn text_at(
        &mut self,
        x: f32,
        baseline: f32,
        size: f32,
        w: Weight,
        color: Rgb,
        anchor: Anchor,
        line: &str,
    ) {
        if needs_shaping(line) {
            return self.shaped_text_at(x, baseline, size, w, color, anchor, line);
        }
        let vis = visual(line);
        if vis.chars().all(|c| c == ' ' || is_invisible(c)) {
            return;
        }
        let width = self.width(&vis, size, w);
        let x = match anchor {
            Anchor::Start => x,
            Anchor::Middle => x - width / 2.0,
            Anchor::End => x - width,
        };
        let bytes = self.fonts[fi(w)].encode(&vis);
        let (r, g, b) = color.f();
        let fname = if w == Weight::Bold { "F1" } else { "F0" };
        self.cur
            .begin_text()
            .set_fill_rgb(r, g, b)
            .set_font(Name(fname.as_bytes()), size)
            .next_line(x, self.ph - baseline)
            .show(Str(&bytes))
            .end_text();
    }

    /// [`Self::text_at`] for a line that must be shaped (right-to-left or joining scripts).
    #[allow(clippy::too_many_arguments)]
    fn shaped_text_at(
        &mut self,
        x: f32,
        baseline: f32,
        size: f32,
        w: Weight,
        color: Rgb,
        anchor: Anchor,
        line: &str,
    ) {
        let fu = &mut self.fonts[fi(w)];
        let glyphs = fu.font.shape_line(line);
        if glyphs.is_empty() {
            return;
        }
        let width = glyphs.iter().map(|g| g.advance).sum::<f32>() * size;
        let x = match anchor {
            Anchor::Start => x,
            Anchor::Middle => x - width / 2.0,
            Anchor::End => x - width,
        };
        let items = fu.encode_shaped(&glyphs);
        let (r, g, b) = color.f();
        let fname = if w == Weight::Bold { "F1" } else { "F0" };
        self.cur
            .begin_text()
            .set_fill_rgb(r, g, b)
            .set_font(Name(fname.as_bytes()), size)
            .next_line(x, self.ph - baseline);
        show_items(&mut self.cur, &items);
        self.cur.end_text();
    }

    fn rule(&mut self, x1: f32, y: f32, x2: f32, width: f32, color: Rgb) {
        let (r, g, b) = color.f();
        self.cur
            .set_stroke_rgb(r, g, b)
            .set_line_width(width)
            .move_to(x1, self.ph - y)
            .line_to(x2, self.ph - y)
            .stroke();
    }

    fn fill_rect(&mut self, x: f32, y: f32, w: f32, h: f32, color: Rgb) {
        let (r, g, b) = color.f();
        self.cur
            .set_fill_rgb(r, g, b)
            .rect(x, self.ph - y - h, w, h)
            .fill_nonzero();
    }

    fn header(&mut self) {
        let doc = self.doc;
        let y = MARGIN_TOP + 10.0;
        let left = format!("{}  ·  {}", doc.reference, doc.title);
        self.text_at(MARGIN_X, y, SMALL, Weight::Bold, INK, Anchor::Start, &left);
        let right = self.pw - MARGIN_X;
        self.text_at(
            right,
            y,
            SMALL,
            Weight::Regular,
            GREY,
            Anchor::End,
            "shardlog",
        );
        self.rule(MARGIN_X, y + 6.0, right, 0.6, GREY);
    }

    /// Lines of text, each checked for room (so paragraphs break across pages).
    #[allow(clippy::too_many_arguments)]
    fn lines(&mut self, text: &str, size: f32, w: Weight, color: Rgb, x: f32, max: f32) {
        let lead = size * 1.35;
        for l in self.wrap(text, size, w, max) {
            self.ensure(lead);
            self.text_at(x, self.y + size, size, w, color, Anchor::Start, &l);
            self.y += lead;
        }
    }

    fn block(&mut self, b: &'d Block) {
        let cw = self.cw();
        match b {
            Block::Heading(t) => {
                // a heading keeps room for a table header and a few lines under it
                self.ensure(100.0);
                if self.y > self.top() + 1.0 {
                    self.y += 10.0;
                }
                self.lines(t, 13.0, Weight::Bold, Rgb(0x1f, 0x3a, 0x5f), MARGIN_X, cw);
                self.rule(MARGIN_X, self.y, MARGIN_X + cw, 0.5, GRID);
                self.y += 6.0;
            }
            Block::Subheading(t) => {
                self.ensure(40.0);
                self.y += 4.0;
                self.lines(t, 10.5, Weight::Bold, INK, MARGIN_X, cw);
                self.y += 2.0;
            }
            Block::Paragraph(t) => {
                self.lines(t, BODY, Weight::Regular, INK, MARGIN_X, cw);
                self.y += 4.0;
            }
            Block::Note(t) => {
                self.lines(t, SMALL, Weight::Regular, GREY, MARGIN_X, cw);
                self.y += 4.0;
            }
            Block::KeyValue(pairs) => self.key_values(pairs),
            Block::Table(t) => self.table(t),
            Block::Figure { chart, caption } => {
                let h = match chart {
                    super::chart::Chart::Weibull { series, .. } => {
                        230.0 + 12.0 * series.len().min(6) as f32
                    }
                    super::chart::Chart::Bars { bars, .. } => {
                        (40.0 + 16.0 * bars.len() as f32).clamp(80.0, 420.0)
                    }
                    _ => 200.0,
                };
                self.ensure(h + 20.0);
                let prims = chart.layout(cw, h);
                let (x0, y0) = (MARGIN_X, self.y);
                for p in &prims {
                    self.prim(x0, y0, p);
                }
                self.y += h + 4.0;
                self.lines(caption, SMALL, Weight::Regular, GREY, MARGIN_X, cw);
                self.y += 6.0;
            }
            Block::Picture(p) => self.picture(p),
            Block::Boxed { title, lines } => {
                let pad = 8.0;
                let inner = cw - 2.0 * pad;
                let mut wrapped = Vec::new();
                for l in lines {
                    wrapped.extend(self.wrap(l, BODY, Weight::Regular, inner));
                }
                let lead = BODY * 1.35;
                let h = 2.0 * pad + 14.0 + lead * wrapped.len() as f32;
                if h <= self.bottom() - self.top() {
                    self.ensure(h + 6.0);
                    let (r, g, bl) = Rgb(0xb0, 0x6a, 0x00).f();
                    self.fill_rect(MARGIN_X, self.y, cw, h, Rgb(0xfd, 0xf6, 0xe3));
                    self.cur
                        .set_stroke_rgb(r, g, bl)
                        .set_line_width(0.8)
                        .rect(MARGIN_X, self.ph - self.y - h, cw, h)
                        .stroke();
                    let y0 = self.y + pad;
                    self.text_at(
                        MARGIN_X + pad,
                        y0 + 10.0,
                        10.0,
                        Weight::Bold,
                        INK,
                        Anchor::Start,
                        title,
                    );
                    for (i, l) in wrapped.iter().enumerate() {
                        let bl = y0 + 14.0 + lead * i as f32 + BODY;
                        self.text_at(
                            MARGIN_X + pad,
                            bl,
                            BODY,
                            Weight::Regular,
                            INK,
                            Anchor::Start,
                            l,
                        );
                    }
                    self.y += h + 8.0;
                } else {
                    self.lines(title, 10.0, Weight::Bold, INK, MARGIN_X, cw);
                    for l in lines {
                        self.lines(l, BODY, Weight::Regular, INK, MARGIN_X, cw);
                    }
                }
            }
        }
    }

    fn key_values(&mut self, pairs: &[(String, String)]) {
        let cw = self.cw();
        let kw = pairs
            .iter()
            .map(|(k, _)| self.width(k, CELL, Weight::Bold))
            .fold(0.0, f32::max)
            .min(cw * 0.34)
            + 10.0;
        let lead = CELL * 1.35;
        for (k, v) in pairs {
            let kl = self.wrap(k, CELL, Weight::Bold, kw - 10.0);
            let vl = self.wrap(v, CELL, Weight::Regular, cw - kw);
            let n = kl.len().max(vl.len());
            for i in 0..n {
                self.ensure(lead);
                if let Some(l) = kl.get(i) {
                    self.text_at(
                        MARGIN_X,
                        self.y + CELL,
                        CELL,
                        Weight::Bold,
                        GREY,
                        Anchor::Start,
                        l,
                    );
                }
                if let Some(l) = vl.get(i) {
                    self.text_at(
                        MARGIN_X + kw,
                        self.y + CELL,
                        CELL,
                        Weight::Regular,
                        INK,
                        Anchor::Start,
                        l,
                    );
                }
                self.y += lead;
            }
            self.y += 1.5;
        }
        self.y += 4.0;
    }

    fn column_widths(&mut self, t: &Table) -> Vec<f32> {
        let cw = self.cw();
        let n = t.header.len().max(1);
        let pad = 6.0;
        let mut natural = vec![0.0f32; n];
        let mut minw = vec![0.0f32; n];
        let all = std::iter::once((&t.header, Weight::Bold))
            .chain(t.rows.iter().map(|r| (r, Weight::Regular)));
        let cap_word = (cw / n as f32).max(50.0);
        for (row, w) in all {
            for (i, cell) in row.iter().enumerate().take(n) {
                for line in cell.split('\n') {
                    let lw = self.width(line, CELL, w);
                    natural[i] = natural[i].max(lw.min(cw));
                    for word in line.split(' ') {
                        let ww = self.width(word, CELL, w).min(cap_word);
                        minw[i] = minw[i].max(ww);
                    }
                }
            }
        }
        for i in 0..n {
            natural[i] += pad;
            minw[i] += pad;
        }
        // long unbreakable words (hashes) keep their width when the table has room for them
        let mut full_min = vec![0.0f32; n];
        let rows = std::iter::once((&t.header, Weight::Bold))
            .chain(t.rows.iter().map(|r| (r, Weight::Regular)));
        for (row, w) in rows {
            for (i, cell) in row.iter().enumerate().take(n) {
                for word in cell.split([' ', '\n']) {
                    full_min[i] = full_min[i].max(self.width(word, CELL, w).min(cw) + pad);
                }
            }
        }
        if full_min.iter().sum::<f32>() <= cw {
            minw = full_min;
        }
        let total: f32 = natural.iter().sum();
        if total <= cw {
            let extra = cw - total;
            return natural
                .iter()
                .map(|w| w + extra * w / total.max(1.0))
                .collect();
        }
        let msum: f32 = minw.iter().sum();
        if msum >= cw {
            return minw.iter().map(|w| w * cw / msum).collect();
        }
        let left = cw - msum;
        let want: Vec<f32> = natural.iter().zip(&minw).map(|(a, b)| a - b).collect();
        let wsum: f32 = want.iter().sum::<f32>().max(1e-3);
        minw.iter()
            .zip(&want)
            .map(|(m, w)| m + left * w / wsum)
            .collect()
    }

    fn table_header(&mut self, t: &Table, widths: &[f32], head: &[Vec<String>]) {
        if t.header.iter().all(|h| h.is_empty()) {
            return;
        }
        let lead = CELL * 1.3;
        let n = head.iter().map(|c| c.len()).max().unwrap_or(1).max(1);
        let h = n as f32 * lead + 5.0;
        let cw = self.cw();
        self.fill_rect(MARGIN_X, self.y, cw, h, HEAD_FILL);
        let mut x = MARGIN_X;
        for (i, cell) in head.iter().enumerate() {
            let w = widths.get(i).copied().unwrap_or(0.0);
            for (j, l) in cell.iter().enumerate() {
                let bl = self.y + 2.5 + CELL + lead * j as f32;
                if t.is_numeric(i) {
                    self.text_at(x + w - 3.0, bl, CELL, Weight::Bold, INK, Anchor::End, l);
                } else {
                    self.text_at(x + 3.0, bl, CELL, Weight::Bold, INK, Anchor::Start, l);
                }
            }
            x += w;
        }
        self.y += h;
    }

    fn table(&mut self, t: &Table) {
        let widths = self.column_widths(t);
        let lead = CELL * 1.3;
        let head: Vec<Vec<String>> = t
            .header
            .iter()
            .enumerate()
            .map(|(i, h)| self.wrap(h, CELL, Weight::Bold, widths[i] - 6.0))
            .collect();
        let head_h = head.iter().map(|c| c.len()).max().unwrap_or(1) as f32 * lead + 5.0;
        // never leave a header alone at the foot of a page: keep it with its first row
        // (or the first few lines of a long one)
        let first_lines = t
            .rows
            .first()
            .map(|r| {
                r.iter()
                    .enumerate()
                    .take(widths.len())
                    .map(|(i, c)| self.wrap(c, CELL, Weight::Regular, widths[i] - 6.0).len())
                    .max()
                    .unwrap_or(1)
            })
            .unwrap_or(1)
            .min(4);
        self.ensure(head_h + first_lines as f32 * lead + 5.0);
        self.table_header(t, &widths, &head);
        let cw = self.cw();
        for row in &t.rows {
            let cells: Vec<Vec<String>> = row
                .iter()
                .enumerate()
                .take(widths.len())
                .map(|(i, c)| self.wrap(c, CELL, Weight::Regular, widths[i] - 6.0))
                .collect();
            let n = cells.iter().map(|c| c.len()).max().unwrap_or(1).max(1);
            let mut start = 0usize;
            while start < n {
                let fresh = self.y <= self.top() + head_h + 0.5;
                let fit = ((self.room() - 5.0) / lead).floor().max(0.0) as usize;
                let remaining = n - start;
                let full_page = ((self.bottom() - self.top() - head_h - 5.0) / lead) as usize;
                if remaining > fit && !fresh && (fit == 0 || (start == 0 && remaining <= full_page))
                {
                    // keep a row that fits on one page together; never start a row with no room
                    self.new_page();
                    self.table_header(t, &widths, &head);
                    continue;
                }
                let take = remaining.min(fit.max(1));
                let mut x = MARGIN_X;
                for (i, cell) in cells.iter().enumerate() {
                    let w = widths[i];
                    for (j, l) in cell.iter().skip(start).take(take).enumerate() {
                        let bl = self.y + 2.5 + CELL + lead * j as f32;
                        if t.is_numeric(i) {
                            self.text_at(
                                x + w - 3.0,
                                bl,
                                CELL,
                                Weight::Regular,
                                INK,
                                Anchor::End,
                                l,
                            );
                        } else {
                            self.text_at(x + 3.0, bl, CELL, Weight::Regular, INK, Anchor::Start, l);
                        }
                    }
                    x += w;
                }
                self.y += take as f32 * lead + 5.0;
                start += take;
                if start < n {
                    self.new_page();
                    self.table_header(t, &widths, &head);
                }
            }
            self.rule(MARGIN_X, self.y, MARGIN_X + cw, 0.4, GRID);
        }
        self.y += 8.0;
    }

    fn picture(&mut self, p: &'d Picture) {
        let cw = self.cw();
        let caption = format!("{} — {}\nSHA-256 {}", p.name, p.caption, p.sha256);
        let drawable = match p.kind {
            PictureKind::Jpeg { .. } => true,
            // a full decode checks every chunk and the compressed stream
            PictureKind::Png { .. } => decode_png(&p.bytes).is_some(),
            PictureKind::Other => false,
        };
        if !drawable {
            let text = format!(
                "Attachment not shown (its content is not a JPEG or PNG image): {} — {}\nSHA-256 {}",
                p.name, p.caption, p.sha256
            );
            self.lines(&text, SMALL, Weight::Regular, GREY, MARGIN_X, cw);
            self.y += 6.0;
            return;
        }
        let (iw, ih) = p.size();
        // photos at a readable size, two to a page: at most 62 % of the text width and
        // 250 pt high, never enlarged beyond 2 points per pixel
        let max_h = (self.bottom() - self.top() - 40.0).min(250.0);
        let scale = (cw * 0.62 / iw as f32).min(max_h / ih as f32).min(2.0);
        let (w, h) = (iw as f32 * scale, ih as f32 * scale);
        self.ensure(h + 30.0);
        let idx = match self.image_by_hash.get(&p.sha256) {
            Some(i) => *i,
            None => {
                let i = self.images.len();
                self.images.push(ImageRes {
                    name: format!("Im{i}"),
                    pic_index: self.pictures.len(),
                });
                self.pictures.push(p);
                self.image_by_hash.insert(p.sha256.clone(), i);
                i
            }
        };
        let name = self.images[idx].name.clone();
        self.cur
            .save_state()
            .transform([w, 0.0, 0.0, h, MARGIN_X, self.ph - self.y - h])
            .x_object(Name(name.as_bytes()))
            .restore_state();
        self.y += h + 4.0;
        self.lines(&caption, SMALL, Weight::Regular, GREY, MARGIN_X, cw);
        self.y += 8.0;
    }

    fn prim(&mut self, x0: f32, y0: f32, p: &Prim) {
        let ph = self.ph;
        match p {
            Prim::Line {
                x1,
                y1,
                x2,
                y2,
                width,
                color,
                dashed,
            } => {
                let (r, g, b) = color.f();
                self.cur.save_state();
                if *dashed {
                    self.cur.set_dash_pattern([3.0, 2.0], 0.0);
                }
                self.cur
                    .set_stroke_rgb(r, g, b)
                    .set_line_width(*width)
                    .move_to(x0 + x1, ph - (y0 + y1))
                    .line_to(x0 + x2, ph - (y0 + y2))
                    .stroke()
                    .restore_state();
            }
            Prim::Rect { x, y, w, h, fill } => {
                self.fill_rect(x0 + x, y0 + y, *w, *h, *fill);
            }
            Prim::Dot { x, y, r, fill } => {
                let (cr, cg, cb) = fill.f();
                let (cx, cy) = (x0 + x, ph - (y0 + y));
                let k = 0.5523 * r;
                self.cur
                    .set_fill_rgb(cr, cg, cb)
                    .move_to(cx + r, cy)
                    .cubic_to(cx + r, cy + k, cx + k, cy + r, cx, cy + r)
                    .cubic_to(cx - k, cy + r, cx - r, cy + k, cx - r, cy)
                    .cubic_to(cx - r, cy - k, cx - k, cy - r, cx, cy - r)
                    .cubic_to(cx + k, cy - r, cx + r, cy - k, cx + r, cy)
                    .fill_nonzero();
            }
            Prim::Text {
                x,
                y,
                size,
                anchor,
                vertical,
                color,
                text,
            } => {
                if *vertical {
                    let vis = visual(text);
                    let w = self.width(&vis, *size, Weight::Regular);
                    let bytes = self.fonts[0].encode(&vis);
                    let (r, g, b) = color.f();
                    let (tx, ty) = (x0 + x + size * 0.35, ph - (y0 + y) - w / 2.0);
                    self.cur
                        .begin_text()
                        .set_fill_rgb(r, g, b)
                        .set_font(Name(b"F0"), *size)
                        .set_text_matrix([0.0, 1.0, -1.0, 0.0, tx, ty])
                        .show(Str(&bytes))
                        .end_text();
                } else {
                    self.text_at(
                        x0 + x,
                        y0 + y,
                        *size,
                        Weight::Regular,
                        *color,
                        *anchor,
                        text,
                    );
                }
            }
        }
    }
}

fn show_items(content: &mut Content, items: &[Item]) {
    let mut tj = content.show_positioned();
    let mut list = tj.items();
    for item in items {
        match item {
            Item::Glyphs(bytes) => list.show(Str(bytes)),
            Item::Adjust(a) => list.adjust(*a),
        };
    }
}

fn deflate(data: &[u8]) -> Vec<u8> {
    miniz_oxide::deflate::compress_to_vec_zlib(data, 6)
}

/// Photo samples: noisy data compresses little better at higher levels, and slowly.
fn deflate_fast(data: &[u8]) -> Vec<u8> {
    miniz_oxide::deflate::compress_to_vec_zlib(data, 1)
}

/// Render the document to PDF bytes.
pub fn render(doc: &Document, paper: Paper) -> Vec<u8> {
    let (pw, ph) = paper.size();
    let mut w = Writer {
        doc,
        pw,
        ph,
        fonts: [FontUse::new(Weight::Regular), FontUse::new(Weight::Bold)],
        pages: Vec::new(),
        cur: Content::new(),
        y: MARGIN_TOP + HEADER_H,
        images: Vec::new(),
        image_by_hash: HashMap::new(),
        pictures: Vec::new(),
    };
    w.header();
    // title block
    let cw = w.cw();
    w.lines(&doc.title, 18.0, Weight::Bold, INK, MARGIN_X, cw);
    w.lines(
        &doc.reference,
        12.0,
        Weight::Bold,
        Rgb(0x1f, 0x3a, 0x5f),
        MARGIN_X,
        cw,
    );
    if !doc.subtitle.is_empty() {
        w.lines(&doc.subtitle, SMALL, Weight::Regular, GREY, MARGIN_X, cw);
    }
    w.y += 8.0;
    for b in &doc.blocks {
        w.block(b);
    }
    if !doc.proof.is_empty() {
        w.ensure(30.0 + 14.0 * doc.proof.len() as f32);
        w.block_proof();
    }
    let last = std::mem::replace(&mut w.cur, Content::new());
    w.pages.push(last);

    // footers, now that the page count is known
    let total = w.pages.len();
    let digest = doc
        .proof
        .first()
        .map(|(k, v)| format!("{k}: {v}"))
        .unwrap_or_default();
    let mut pages = std::mem::take(&mut w.pages);
    for (i, page) in pages.iter_mut().enumerate() {
        std::mem::swap(&mut w.cur, page);
        let y = ph - MARGIN_BOTTOM;
        w.rule(MARGIN_X, y - 12.0, pw - MARGIN_X, 0.4, GRID);
        if !digest.is_empty() {
            w.text_at(
                MARGIN_X,
                y,
                6.5,
                Weight::Regular,
                GREY,
                Anchor::Start,
                &digest,
            );
        }
        let label = format!("Page {} of {}", i + 1, total);
        w.text_at(
            pw - MARGIN_X,
            y,
            SMALL,
            Weight::Regular,
            GREY,
            Anchor::End,
            &label,
        );
        std::mem::swap(&mut w.cur, page);
    }

    // objects
    let mut pdf = Pdf::new();
    let mut next = 1i32;
    let mut alloc = || {
        let r = Ref::new(next);
        next += 1;
        r
    };
    let catalog = alloc();
    let tree = alloc();
    let info = alloc();
    let font_refs: Vec<Ref> = (0..2).map(|_| alloc()).collect();
    let mut image_refs = Vec::new();
    for _ in &w.images {
        image_refs.push((alloc(), alloc()));
    }
    let page_refs: Vec<(Ref, Ref)> = pages.iter().map(|_| (alloc(), alloc())).collect();

    pdf.catalog(catalog).pages(tree);
    pdf.pages(tree)
        .kids(page_refs.iter().map(|p| p.0))
        .count(page_refs.len() as i32);
    pdf.document_info(info)
        .title(TextStr(&format!("{} {}", doc.title, doc.reference)))
        .producer(TextStr(concat!("shardlog ", env!("CARGO_PKG_VERSION"))));

    for (k, fu) in w.fonts.iter().enumerate() {
        write_font(&mut pdf, &mut alloc, font_refs[k], fu);
    }
    for (k, im) in w.images.iter().enumerate() {
        let p = w.pictures[im.pic_index];
        write_image(&mut pdf, image_refs[k], p);
    }
    for (i, page) in pages.into_iter().enumerate() {
        let (pref, cref) = page_refs[i];
        let mut pg = pdf.page(pref);
        pg.parent(tree)
            .media_box(Rect::new(0.0, 0.0, pw, ph))
            .contents(cref);
        {
            let mut res = pg.resources();
            {
                let mut f = res.fonts();
                f.pair(Name(b"F0"), font_refs[0]);
                f.pair(Name(b"F1"), font_refs[1]);
            }
            if !w.images.is_empty() {
                let mut x = res.x_objects();
                for (k, im) in w.images.iter().enumerate() {
                    x.pair(Name(im.name.as_bytes()), image_refs[k].0);
                }
            }
        }
        pg.finish();
        let data = deflate_fast(&page.finish());
        pdf.stream(cref, &data).filter(Filter::FlateDecode);
    }
    pdf.finish()
}

impl Writer<'_> {
    fn block_proof(&mut self) {
        let cw = self.cw();
        self.y += 6.0;
        self.rule(MARGIN_X, self.y, MARGIN_X + cw, 0.5, GRID);
        self.y += 6.0;
        let pairs = self.doc.proof.clone();
        self.key_values(&pairs);
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

fn write_font(pdf: &mut Pdf, alloc: &mut impl FnMut() -> Ref, type0: Ref, fu: &FontUse) {
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

fn write_image(pdf: &mut Pdf, (img, mask): (Ref, Ref), p: &Picture) {
    match p.kind {
        PictureKind::Jpeg {
            width,
            height,
            components,
        } => {
            let mut x = pdf.image_xobject(img, &p.bytes);
            x.filter(Filter::DctDecode);
            x.width(width as i32)
                .height(height as i32)
                .bits_per_component(8);
            if components == 1 {
                x.color_space().device_gray();
            } else {
                x.color_space().device_rgb();
            }
        }
        PictureKind::Png { .. } => {
            // most photos: the PNG's own compressed data, read by PDF with PNG predictors
            if let Some((w, h, colors, data)) = png_passthrough(&p.bytes) {
                let mut x = pdf.image_xobject(img, &data);
                x.filter(Filter::FlateDecode);
                x.decode_parms()
                    .predictor(Predictor::PngOptimum)
                    .colors(i32::from(colors))
                    .bits_per_component(8)
                    .columns(w as i32);
                x.width(w as i32).height(h as i32).bits_per_component(8);
                if colors == 1 {
                    x.color_space().device_gray();
                } else {
                    x.color_space().device_rgb();
                }
                return;
            }
            // decodes: checked before the image was placed
            let Some(d) = decode_png(&p.bytes) else {
                return;
            };
            let color = deflate_fast(&d.color);
            let alpha = d.alpha.as_ref().map(|a| deflate_fast(a));
            {
                let mut x = pdf.image_xobject(img, &color);
                x.filter(Filter::FlateDecode);
                x.width(d.width as i32)
                    .height(d.height as i32)
                    .bits_per_component(8);
                if d.channels == 1 {
                    x.color_space().device_gray();
                } else {
                    x.color_space().device_rgb();
                }
                if alpha.is_some() {
                    x.s_mask(mask);
                }
            }
            if let Some(a) = &alpha {
                let mut m = pdf.image_xobject(mask, a);
                m.filter(Filter::FlateDecode);
                m.width(d.width as i32)
                    .height(d.height as i32)
                    .bits_per_component(8);
                m.color_space().device_gray();
            }
        }
        PictureKind::Other => {}
    }
}
