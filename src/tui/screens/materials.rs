//! The materials screen: the list (library and own) above, the highlighted material's
//! constants below; or the form to add or change an own material.

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::Widget;
use ratatui::Frame;

use crate::app::materials::MaterialRow;
use crate::app::App;
use crate::tui::theme::Theme;
use crate::tui::widgets::{self, boxed, WindowTable};
use shardlog_core::fracture::materials::{slot, CONSTANTS};
use shardlog_core::text::sanitize_for_terminal;

pub fn draw(app: &App, f: &mut Frame, body: Rect, th: &Theme) {
    let m = &app.materials;
    if let Some(form) = &m.form {
        let mut title = m.title();
        if form.form.is_dirty() {
            title.push_str(" · unsaved");
        }
        let inner = boxed(f, body, &title, true, th);
        widgets::draw_form(
            f.buffer_mut(),
            inner,
            &form.form,
            !app.help_open && app.prompt.is_none(),
            th,
        );
        return;
    }
    // the constants need 11 rows; the list takes the rest
    let detail_rows = 11u16.min(body.height.saturating_sub(4));
    let [list, detail] =
        Layout::vertical([Constraint::Fill(1), Constraint::Length(detail_rows)]).areas(body);
    let inner = boxed(f, list, &m.title(), true, th);
    let shown = inner.height.saturating_sub(1).max(1) as usize;
    let first = m.cursor.saturating_sub(shown.saturating_sub(1));
    let rows: Vec<Vec<String>> = m
        .rows
        .iter()
        .skip(first)
        .take(shown)
        .map(|r| {
            vec![
                sanitize_for_terminal(&r.material.key, false),
                match &r.own {
                    Some(o) => format!("own r{}", o.revision),
                    None => "library".to_string(),
                },
                sanitize_for_terminal(&r.material.name, false),
            ]
        })
        .collect();
    WindowTable {
        header: vec!["code", "kind", "name"],
        widths: vec![
            Constraint::Length(22),
            Constraint::Length(8),
            Constraint::Fill(1),
        ],
        rows,
        selected: Some(m.cursor - first),
        header_style: th.header,
        selected_style: th.selected,
    }
    .render(inner, f.buffer_mut());
    if let Some(row) = m.current() {
        let inner = boxed(f, detail, "Constants (± one standard deviation)", false, th);
        widgets::para(detail_lines(row, inner.width, th)).render(inner, f.buffer_mut());
    }
}

fn detail_lines(row: &MaterialRow, width: u16, th: &Theme) -> Vec<Line<'static>> {
    let mut out = Vec::new();
    let what = match &row.own {
        Some(o) => format!(
            "own material, revision {}{}",
            o.revision,
            o.base
                .as_deref()
                .map(|b| format!(", copied from {b}"))
                .unwrap_or_default()
        ),
        None => "library material: read-only; c copies it into an own one".to_string(),
    };
    out.push(Line::from(Span::styled(
        widgets::fit(&what, width as usize),
        th.muted,
    )));
    let mut m = row.material.clone();
    for (i, (sym, _, q)) in CONSTANTS.iter().enumerate() {
        let (figure, mark) = match slot(&mut m, i) {
            Some(c) => (
                match c.spread {
                    Some(s) => format!("{} ± {}", q.show(c.value), q.show(s)),
                    None => q.show(c.value),
                },
                c.provenance.mark().to_string(),
            ),
            None => ("–".to_string(), String::new()),
        };
        out.push(Line::from(vec![
            Span::styled(format!("{sym:<5} "), th.label),
            Span::styled(format!("{figure:<32}"), th.figure),
            Span::styled(mark, th.muted),
        ]));
    }
    out
}
