//! Widgets shared by the screens: the form (text fields and pick-lists with the reason a
//! value is refused beside it), a visible-rows-only table, the footer, text helpers.
//! Every widget measures text with unicode-width and draws nothing into a zero-size area.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Rect};
use ratatui::style::{Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Borders, Paragraph, Row, Table, Widget};
use ratatui::Frame;
use ratatui_textarea::{CursorMove, TextArea};
use unicode_width::{UnicodeWidthChar, UnicodeWidthStr};

use super::theme::Theme;
use crate::app::field::Field;
use crate::app::form::{Form, FormItem};
use crate::app::picklist::PickList;
pub use shardlog_core::text::{fit, fit_left, width};

/// One line of user text as the interface shows it: control characters and escape sequences
/// as visible symbols (`␛`, `␇`, U+FFFD; see `shardlog_core::text::visible`), never obeyed and
/// never silently dropped, as the command line shows them on a terminal.
pub fn clean(s: &str) -> String {
    shardlog_core::text::visible(s)
}

/// A rectangle of at most `w`×`h` centred in `area`.
pub fn centered(area: Rect, w: u16, h: u16) -> Rect {
    let w = w.min(area.width);
    let h = h.min(area.height);
    Rect {
        x: area.x + (area.width - w) / 2,
        y: area.y + (area.height - h) / 2,
        width: w,
        height: h,
    }
}

/// Width of the label column of a form laid out in `width` columns.
fn label_width(width: u16) -> u16 {
    (width / 2).clamp(8, 17)
}

/// Split `text` into lines of at most `width` columns (breaking at spaces where possible).
pub fn wrap(text: &str, width: usize) -> Vec<String> {
    let width = width.max(1);
    let mut out = Vec::new();
    let mut line = String::new();
    let mut used = 0usize;
    for word in text.split(' ') {
        let ww = UnicodeWidthStr::width(word);
        let sep = usize::from(!line.is_empty());
        if used + sep + ww <= width {
            if sep == 1 {
                line.push(' ');
            }
            line.push_str(word);
            used += sep + ww;
            continue;
        }
        if !line.is_empty() {
            out.push(std::mem::take(&mut line));
            used = 0;
        }
        if ww <= width {
            line.push_str(word);
            used = ww;
        } else {
            // a word longer than the line: cut it by columns
            for ch in word.chars() {
                let cw = UnicodeWidthChar::width(ch).unwrap_or(0);
                if used + cw > width {
                    out.push(std::mem::take(&mut line));
                    used = 0;
                }
                line.push(ch);
                used += cw;
            }
        }
    }
    if !line.is_empty() {
        out.push(line);
    }
    out
}

/// Most rows a refusal reason may take under its field.
const ERROR_ROWS: usize = 3;

fn error_lines(item: &FormItem, input_w: u16) -> Vec<String> {
    match item.error() {
        Some(e) => {
            let mut lines = wrap(&format!("✗ {e}"), input_w as usize);
            if lines.len() > ERROR_ROWS {
                lines.truncate(ERROR_ROWS);
                if let Some(last) = lines.last_mut() {
                    *last = fit(&format!("{last} …"), input_w as usize);
                }
            }
            lines
        }
        None => Vec::new(),
    }
}

/// How many rows an item takes when drawn.
fn item_height(item: &FormItem, focused: bool, show_error: bool, input_w: u16) -> u16 {
    let base = match item {
        FormItem::Field(f) if f.multi_line() => (f.lines().len() as u16).clamp(1, 6),
        FormItem::Field(_) => 1,
        FormItem::Pick(p) => {
            if focused {
                1 + (p.match_count() as u16).clamp(1, 5)
            } else {
                1
            }
        }
    };
    let errs = if show_error {
        error_lines(item, input_w).len() as u16
    } else {
        0
    };
    base + errs
}

fn should_show_error(item: &FormItem, focused: bool) -> bool {
    match item {
        FormItem::Field(f) => f.is_dirty() || !f.text().trim().is_empty() || focused,
        FormItem::Pick(p) => p.is_dirty(),
    }
}

/// Draw a form: label, input, and the reason a value is refused just under it. Keeps the
/// focused item in view. `active` says whether the form has the keyboard.
pub fn draw_form(buf: &mut Buffer, area: Rect, form: &Form, active: bool, theme: &Theme) {
    if area.width < 4 || area.height == 0 {
        return;
    }
    let lw = label_width(area.width);
    let heights: Vec<u16> = form
        .items
        .iter()
        .enumerate()
        .map(|(i, it)| {
            let focused = active && i == form.focus;
            item_height(
                it,
                focused,
                should_show_error(it, focused),
                area.width.saturating_sub(lw + 1),
            )
        })
        .collect();
    // scroll so that the focused item is fully visible
    let mut start = 0usize;
    loop {
        let before: u16 = heights[start..form.focus.min(heights.len())]
            .iter()
            .sum::<u16>()
            + heights.get(form.focus).copied().unwrap_or(0);
        if before <= area.height || start >= form.focus {
            break;
        }
        start += 1;
    }
    let mut y = area.y;
    let bottom = area.y + area.height;
    for (i, item) in form.items.iter().enumerate().skip(start) {
        if y >= bottom {
            break;
        }
        let focused = active && i == form.focus;
        let h = heights[i].min(bottom - y);
        let rect = Rect {
            x: area.x,
            y,
            width: area.width,
            height: h,
        };
        draw_item(buf, rect, item, focused, lw, theme);
        y += heights[i];
    }
}

fn draw_item(buf: &mut Buffer, area: Rect, item: &FormItem, focused: bool, lw: u16, th: &Theme) {
    let label_style = if focused { th.focus_label } else { th.label };
    let marker = if focused { "▸" } else { " " };
    let label = format!("{marker}{}", item.label());
    buf.set_stringn(
        area.x,
        area.y,
        fit_left(&fit(&label, lw.saturating_sub(1) as usize), lw as usize),
        lw as usize,
        label_style,
    );
    let input = Rect {
        x: area.x + lw.min(area.width),
        y: area.y,
        width: area.width.saturating_sub(lw + 1),
        height: area.height,
    };
    let show_error = should_show_error(item, focused);
    let errs = if show_error {
        error_lines(item, input.width)
    } else {
        Vec::new()
    };
    let err_rows = errs.len() as u16;
    let body = Rect {
        height: input
            .height
            .saturating_sub(err_rows)
            .max(1)
            .min(input.height),
        ..input
    };
    match item {
        FormItem::Field(f) => draw_field(buf, body, f, focused, th),
        FormItem::Pick(p) => draw_pick(buf, body, p, focused, th),
    }
    let first = body.y + body.height;
    for (i, line) in errs.iter().enumerate() {
        let y = first + i as u16;
        if y >= area.y + area.height {
            break;
        }
        buf.set_stringn(input.x, y, line, input.width as usize, th.error);
    }
}

fn draw_field(buf: &mut Buffer, area: Rect, f: &Field, focused: bool, th: &Theme) {
    if area.width == 0 || area.height == 0 {
        return;
    }
    if focused {
        editor(f).render(area, buf);
        return;
    }
    let lines = f.lines();
    if lines.iter().all(|l| l.is_empty()) {
        buf.set_stringn(
            area.x,
            area.y,
            fit(f.hint, area.width as usize),
            area.width as usize,
            th.muted,
        );
        return;
    }
    for (row, line) in lines.iter().take(area.height as usize).enumerate() {
        let mark = if f.multi_line() && crate::app::field::line_error(f, row) {
            th.error
        } else {
            th.input
        };
        buf.set_stringn(
            area.x,
            area.y + row as u16,
            fit(&clean(line), area.width as usize),
            area.width as usize,
            mark,
        );
    }
}

/// The focused field as an editor widget: its lines, the caret in reverse video, the hint
/// while it is empty.
fn editor(f: &Field) -> TextArea<'static> {
    let mut area = TextArea::new(f.lines().to_vec());
    area.set_cursor_line_style(Style::default());
    area.set_cursor_style(Style::default().add_modifier(Modifier::REVERSED));
    if !f.hint.is_empty() {
        area.set_placeholder_text(f.hint);
    }
    let clamp = |n: usize| u16::try_from(n).unwrap_or(u16::MAX);
    let (row, col) = f.caret();
    if let Some((first, last)) = f.selection() {
        // the selection underlined and reversed; the caret at its end stays reversed
        area.set_selection_style(
            Style::default().add_modifier(Modifier::REVERSED | Modifier::UNDERLINED),
        );
        let anchor = if (row, col) == first { last } else { first };
        area.move_cursor(CursorMove::Jump(clamp(anchor.0), clamp(anchor.1)));
        area.start_selection();
    }
    area.move_cursor(CursorMove::Jump(clamp(row), clamp(col)));
    area
}

fn draw_pick(buf: &mut Buffer, area: Rect, p: &PickList, focused: bool, th: &Theme) {
    if area.width == 0 || area.height == 0 {
        return;
    }
    let w = area.width as usize;
    let chosen = p
        .chosen_item()
        .map(|i| clean(&i.label))
        .unwrap_or_else(|| "—".to_string());
    if !focused {
        buf.set_stringn(area.x, area.y, fit(&chosen, w), w, th.input);
        return;
    }
    let head = if p.filter().is_empty() {
        format!("{chosen}  (type to narrow)")
    } else {
        format!("narrow: {}▏ {} match", clean(p.filter()), p.match_count())
    };
    buf.set_stringn(area.x, area.y, fit(&head, w), w, th.focus_label);
    let rows = area.height.saturating_sub(1) as usize;
    if rows == 0 {
        return;
    }
    if p.match_count() == 0 {
        let msg = if p.allow_new && !p.filter().trim().is_empty() {
            format!("  Enter adds “{}” as new", clean(p.filter().trim()))
        } else if p.allow_new {
            "  type a code; Enter adds it".to_string()
        } else {
            "  nothing matches; Backspace widens".to_string()
        };
        buf.set_stringn(area.x, area.y + 1, fit(&msg, w), w, th.muted);
        return;
    }
    let first = p.cursor().saturating_sub(rows.saturating_sub(1));
    for (row, (idx, item)) in p.visible().enumerate().skip(first).take(rows).enumerate() {
        let style = if idx == p.cursor() {
            th.selected
        } else {
            th.input
        };
        buf.set_stringn(
            area.x,
            area.y + 1 + row as u16,
            fit_left(&format!(" {}", clean(&item.label)), w),
            w,
            style,
        );
    }
}

/// A table that is given only the rows it shows (the caller pages the data), with a
/// header, column widths and the selected row.
pub struct WindowTable<'a> {
    pub header: Vec<&'a str>,
    pub widths: Vec<Constraint>,
    /// The visible rows only, already cleaned of control characters.
    pub rows: Vec<Vec<String>>,
    /// Index into `rows` of the selected row.
    pub selected: Option<usize>,
    pub header_style: Style,
    pub selected_style: Style,
}

impl Widget for WindowTable<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        if area.width == 0 || area.height == 0 {
            return;
        }
        let rows: Vec<Row> = self
            .rows
            .into_iter()
            .enumerate()
            .take(area.height.saturating_sub(1) as usize)
            .map(|(i, cells)| {
                let r = Row::new(cells);
                if Some(i) == self.selected {
                    r.style(self.selected_style)
                } else {
                    r
                }
            })
            .collect();
        Table::new(rows, self.widths)
            .header(Row::new(self.header).style(self.header_style))
            .column_spacing(1)
            .render(area, buf);
    }
}

/// The one-line footer: key in reverse, description plain, as many as fit.
pub fn footer_line(entries: &[(&str, &str)], width: u16, th: &Theme) -> Line<'static> {
    let mut spans = Vec::new();
    let mut used = 0usize;
    for (key, desc) in entries {
        let kw = UnicodeWidthStr::width(*key) + 2;
        let dw = UnicodeWidthStr::width(*desc) + 1;
        if used + kw + dw > width as usize {
            break;
        }
        spans.push(Span::styled(format!(" {key} "), th.footer_key));
        spans.push(Span::styled(format!("{desc} "), th.footer_text));
        used += kw + dw;
    }
    Line::from(spans)
}

/// How many rows `lines` take when wrapped at `width` (the same breaking as [`wrap`]; close
/// to ratatui's word wrapping, used only to bound scrolling).
pub fn wrapped_rows(lines: &[Line<'_>], width: u16) -> u16 {
    let w = width.max(1) as usize;
    let rows: usize = lines
        .iter()
        .map(|l| wrap(&l.to_string(), w).len().max(1))
        .sum();
    u16::try_from(rows).unwrap_or(u16::MAX)
}

const NO_BREAK: &str = "\u{a0}";

/// Unit symbols a number is never parted from.
const UNITS: &[&str] = &[
    "MPa",
    "kPa",
    "GPa",
    "Pa",
    "mm",
    "µm",
    "m",
    "K",
    "N",
    "kN",
    "ms",
    "s",
    "kg",
    "m/s",
    "%",
    "MPa·√m",
    "psi",
    "ksi",
    "in",
];

/// The results' lines with no-break spaces between a number and its unit and inside an
/// interval ("51.1 – 70.7 MPa"), so that wrapping moves a figure whole to the next line.
pub fn keep_figures_whole(lines: Vec<Line<'static>>) -> Vec<Line<'static>> {
    lines
        .into_iter()
        .map(|mut l| {
            for span in &mut l.spans {
                let glued = glue(&span.content);
                if glued != span.content {
                    span.content = glued.into();
                }
            }
            l
        })
        .collect()
}

fn glue(text: &str) -> String {
    let chars: Vec<char> = text.chars().collect();
    let mut out = String::with_capacity(text.len());
    for (i, &c) in chars.iter().enumerate() {
        if c == ' ' && i > 0 && i + 1 < chars.len() {
            let prev = chars[i - 1];
            let next = chars[i + 1];
            let word: String = chars[i + 1..]
                .iter()
                .take_while(|c| !matches!(c, ' ' | ')' | ',' | ';'))
                .collect();
            let unit_follows = prev.is_ascii_digit() && UNITS.contains(&word.as_str());
            let dash_follows = prev.is_ascii_digit() && next == '–';
            let after_dash = prev == '–' && next.is_ascii_digit();
            if unit_follows || dash_follows || after_dash {
                out.push('\u{a0}');
                continue;
            }
        }
        out.push(c);
    }
    out
}

/// Draw the no-break spaces that kept figures whole (see [`keep_figures_whole`]) as spaces.
pub fn spaces_for_no_breaks(buf: &mut ratatui::buffer::Buffer, area: Rect) {
    let area = area.intersection(buf.area);
    for row in area.y..area.y + area.height {
        for col in area.x..area.x + area.width {
            let cell = &mut buf[(col, row)];
            if cell.symbol() == NO_BREAK {
                cell.set_symbol(" ");
            }
        }
    }
}

/// A paragraph that wraps, for messages that must be read whole.
pub fn para(lines: Vec<Line<'static>>) -> Paragraph<'static> {
    Paragraph::new(lines).wrap(ratatui::widgets::Wrap { trim: false })
}

/// A titled box; returns the inner area.
pub fn boxed(f: &mut Frame, area: Rect, title: &str, focused: bool, th: &Theme) -> Rect {
    let style: Style = if focused { th.focus_border } else { th.border };
    let block = Block::default()
        .borders(Borders::ALL)
        .border_style(style)
        .title(format!(" {title} "));
    let inner = block.inner(area);
    block.render(area, f.buffer_mut());
    inner
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fit_counts_columns_not_bytes() {
        assert_eq!(fit("Zürich", 6), "Zürich");
        assert_eq!(fit("Zürich", 5), "Züri…");
        assert_eq!(
            UnicodeWidthStr::width(fit("東京硝子株式会社", 7).as_str()),
            7
        );
        assert_eq!(fit("abc", 0), "");
        assert_eq!(UnicodeWidthStr::width(fit_left("東京", 7).as_str()), 7);
    }

    #[test]
    fn wrap_breaks_at_spaces_and_cuts_long_words() {
        assert_eq!(wrap("aa bb cc", 5), vec!["aa bb", "cc"]);
        assert_eq!(wrap("abcdefg", 3), vec!["abc", "def", "g"]);
        assert_eq!(wrap("東京硝子", 4), vec!["東京", "硝子"]);
    }

    #[test]
    fn zero_areas_draw_nothing() {
        let th = super::super::theme::MONO;
        let form = Form::default();
        for (w, h) in [(0, 0), (0, 5), (5, 0), (1, 1), (3, 2)] {
            let mut buf = Buffer::empty(Rect::new(0, 0, w, h));
            draw_form(&mut buf, Rect::new(0, 0, w, h), &form, true, &th);
            WindowTable {
                header: vec!["a", "b"],
                widths: vec![Constraint::Length(3), Constraint::Fill(1)],
                rows: vec![vec!["x".into(), "東京".into()]],
                selected: Some(0),
                header_style: th.header,
                selected_style: th.selected,
            }
            .render(Rect::new(0, 0, w, h), &mut buf);
        }
    }
}
