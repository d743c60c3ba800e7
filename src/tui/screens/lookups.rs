//! The lookup lists: one list at a time, its codes, labels and which are retired.

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::Widget;
use ratatui::Frame;

use crate::app::lookups::LISTS;
use crate::app::App;
use crate::tui::theme::Theme;
use crate::tui::widgets::{self, clean, fit, WindowTable};

pub fn draw(app: &App, f: &mut Frame, body: Rect, th: &Theme) {
    if body.height == 0 {
        return;
    }
    let st = &app.lookups;
    let [tabs, note, table] = Layout::vertical([
        Constraint::Length(1),
        Constraint::Length(1),
        Constraint::Fill(1),
    ])
    .areas(body);
    let mut spans = vec![Span::raw(" ")];
    for (i, (_, title)) in LISTS.iter().enumerate() {
        let style = if i == st.list {
            th.focus_label
        } else {
            th.muted
        };
        spans.push(Span::styled(format!(" {title} "), style));
    }
    widgets::para(vec![Line::from(spans)]).render(tabs, f.buffer_mut());
    widgets::para(vec![Line::styled(
        " a add · e rename · r retire/restore · Tab next list",
        th.muted,
    )])
    .render(note, f.buffer_mut());
    if st.entries.is_empty() {
        widgets::para(vec![Line::styled(
            " This list is empty: a adds an entry.",
            th.muted,
        )])
        .render(table, f.buffer_mut());
        return;
    }
    let code_w: u16 = 22;
    let state_w: u16 = 8;
    let label_w = table.width.saturating_sub(code_w + state_w + 2).max(6);
    // the visible window around the highlight
    let rows_room = table.height.saturating_sub(1).max(1) as usize;
    let first = st.cursor.saturating_sub(rows_room - 1);
    let rows: Vec<Vec<String>> = st
        .entries
        .iter()
        .skip(first)
        .take(rows_room)
        .map(|e| {
            vec![
                fit(&clean(&e.code), code_w as usize),
                fit(&clean(&e.label), label_w as usize),
                if e.retired { "retired" } else { "in use" }.to_string(),
            ]
        })
        .collect();
    WindowTable {
        header: vec!["Code", "Label", "State"],
        widths: vec![
            Constraint::Length(code_w),
            Constraint::Length(label_w),
            Constraint::Length(state_w),
        ],
        rows,
        selected: Some(st.cursor - first),
        header_style: th.header,
        selected_style: th.selected,
    }
    .render(table, f.buffer_mut());
}
