//! The bench calculator: inputs on the left, live results on the right, cautions below.

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::Line;
use ratatui::widgets::Widget;
use ratatui::Frame;

use crate::app::App;
use crate::tui::theme::Theme;
use crate::tui::view::{boxed, CAUTIONS};
use crate::tui::widgets;

pub fn draw(app: &App, f: &mut Frame, body: Rect, th: &Theme) {
    let caution_h = if body.height >= 20 { 3 } else { 1 };
    let [main, caution] =
        Layout::vertical([Constraint::Fill(1), Constraint::Length(caution_h)]).areas(body);
    let (inputs, results) = if main.width >= 72 {
        let [a, b] =
            Layout::horizontal([Constraint::Percentage(52), Constraint::Fill(1)]).areas(main);
        (a, b)
    } else {
        let [a, b] =
            Layout::vertical([Constraint::Percentage(55), Constraint::Fill(1)]).areas(main);
        (a, b)
    };
    let inner = boxed(f, inputs, "Readings", true, th);
    widgets::draw_form(f.buffer_mut(), inner, &app.bench.form, !app.help_open, th);
    let inner = boxed(f, results, "Results (live)", false, th);
    widgets::para(result_lines(app, th)).render(inner, f.buffer_mut());
    let text: Vec<Line> = if caution_h >= 3 {
        CAUTIONS
            .iter()
            .map(|c| Line::styled(format!("⚠ {c}"), th.caution))
            .collect()
    } else {
        vec![Line::styled(
            "⚠ Broken glass cuts: gloves and eye protection. Estimates carry the uncertainty of constants and readings; not a substitute for a qualified investigator (? for more).",
            th.caution,
        )]
    };
    widgets::para(text).render(caution, f.buffer_mut());
}

fn result_lines(_app: &App, th: &Theme) -> Vec<Line<'static>> {
    vec![Line::styled("Enter readings on the left.", th.muted)]
}
