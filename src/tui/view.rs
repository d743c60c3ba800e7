//! Drawing. Only reads the state; never calls the store.

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Borders, Clear, Paragraph, Widget};
use ratatui::Frame;

use super::cautions::CAUTIONS;
use super::keys;
use super::theme::{theme, Theme};
use super::widgets::{self, fit};
use crate::app::{App, Ctx, Prompt, Screen};

/// Smallest area that gets the full layout; below it a polite message is shown.
pub const MIN_WIDTH: u16 = 40;
pub const MIN_HEIGHT: u16 = 10;

pub fn screen_title(app: &App) -> &'static str {
    match app.screen() {
        Screen::Log => "Incident log",
        Screen::Incident => "Incident",
        Screen::Edit => "Edit",
        Screen::Bench => "Bench calculator",
        Screen::Review => "Fleet review",
        Screen::Materials => "Materials",
        Screen::Lookups => "Lookup lists",
    }
}

/// Draw the whole interface.
pub fn draw(app: &App, f: &mut Frame) {
    let area = f.area();
    let th = theme();
    if area.width == 0 || area.height == 0 {
        return;
    }
    if area.width < MIN_WIDTH || area.height < MIN_HEIGHT {
        let msg = format!(
            "shardlog needs at least {MIN_WIDTH}×{MIN_HEIGHT}; this window is {}×{}. \
             Enlarge it, or press q to quit.",
            area.width, area.height
        );
        widgets::para(vec![Line::from(msg)]).render(area, f.buffer_mut());
        return;
    }
    let [title, body, status, footer] = Layout::vertical([
        Constraint::Length(1),
        Constraint::Fill(1),
        Constraint::Length(1),
        Constraint::Length(1),
    ])
    .areas(area);
    draw_title(app, f, title, th);
    match app.screen() {
        Screen::Log => super::screens::log::draw(app, f, body, th),
        Screen::Incident => super::screens::incident::draw(app, f, body, th),
        Screen::Edit => super::screens::edit::draw(app, f, body, th),
        Screen::Bench => super::screens::bench::draw(app, f, body, th),
        Screen::Review => super::screens::review::draw(app, f, body, th),
        Screen::Materials => super::screens::materials::draw(app, f, body, th),
        Screen::Lookups => super::screens::lookups::draw(app, f, body, th),
    }
    draw_status(app, f, status, th);
    draw_footer(app, f, footer, th);
    if app.help_open {
        draw_help(app, f, body, th);
    }
    if let Some(p) = &app.prompt {
        draw_prompt(p, f, body, th);
    }
    if let Some(entry) = &app.name_entry {
        draw_name_entry(entry, f, body, th);
    }
}

/// The first-use question: the analyst's name, in a box over the screen.
fn draw_name_entry(entry: &crate::app::field::Field, f: &mut Frame, body: Rect, th: &Theme) {
    let area = widgets::centered(body, 60, 8);
    if area.width < 10 || area.height < 5 {
        return;
    }
    Clear.render(area, f.buffer_mut());
    let inner_w = area.width.saturating_sub(2) as usize;
    let (_, col) = entry.caret();
    let text = entry.text();
    let before: String = text.chars().take(col).collect();
    let after: String = text.chars().skip(col).collect();
    let lines = vec![
        // each line fits the box's 58 columns: a wrapped line would push the name out of it
        Line::from("Who is at the bench? Your name goes into the history"),
        Line::from("of every change and beside every reading"),
        Line::from("(SHARDLOG_USER sets it too)."),
        Line::from(""),
        Line::from(vec![
            Span::styled("Your name: ", th.label),
            Span::raw(fit(&widgets::clean(&before), inner_w.saturating_sub(13))),
            Span::styled("▏", th.focus_border),
            Span::raw(widgets::clean(&after)),
        ]),
    ];
    widgets::para(lines)
        .block(
            Block::default()
                .borders(Borders::ALL)
                .border_style(th.focus_border)
                .title(" First use "),
        )
        .render(area, f.buffer_mut());
}

fn draw_title(app: &App, f: &mut Frame, area: Rect, th: &Theme) {
    // on the fleet nothing is recorded under a name
    let left = if app.on_fleet() {
        format!(" shardlog · {}", screen_title(app))
    } else {
        format!(
            " shardlog · {} · {}",
            screen_title(app),
            fit(&widgets::clean(&app.actor), 24)
        )
    };
    // where the records are (the fleet: its host and database, never a password), then
    // what may be done there, which is never cut
    let (place, what) = match &app.fleet {
        Some(fleet) => {
            let bench = match &app.log.filter.bench {
                Some(code) => format!(" · bench {code}"),
                None => String::new(),
            };
            (fleet.shown(), format!(" (fleet, read-only){bench}"))
        }
        None if app.read_only() => (app.db_path.display().to_string(), " (read-only)".into()),
        None => (app.db_path.display().to_string(), String::new()),
    };
    let w = area.width as usize;
    let lw = unicode_width::UnicodeWidthStr::width(left.as_str());
    let room = w.saturating_sub(lw + 2);
    let what_w = unicode_width::UnicodeWidthStr::width(what.as_str());
    let right = if room > what_w + 8 {
        format!(
            "{}{what}",
            fit(&widgets::clean(&place), room.saturating_sub(what_w))
        )
    } else {
        widgets::clean(&format!("{place}{what}"))
    };
    let text = if room > 8 {
        let r = fit(&right, room);
        let rw = unicode_width::UnicodeWidthStr::width(r.as_str());
        format!("{left}{}{r} ", " ".repeat(w.saturating_sub(lw + rw + 1)))
    } else {
        left
    };
    f.buffer_mut()
        .set_stringn(area.x, area.y, widgets::fit_left(&text, w), w, th.title);
}

fn draw_status(app: &App, f: &mut Frame, area: Rect, th: &Theme) {
    let w = area.width as usize;
    let (text, style) = match &app.message {
        Some(m) if m.error => (format!(" ✗ {}", widgets::clean(&m.text)), th.error),
        Some(m) => (format!(" {}", widgets::clean(&m.text)), th.ok),
        None => (format!(" {}", app.status_line()), th.muted),
    };
    f.buffer_mut()
        .set_stringn(area.x, area.y, fit(&text, w), w, style);
}

fn draw_footer(app: &App, f: &mut Frame, area: Rect, th: &Theme) {
    let ctx = app.ctx();
    let mut all = keys::footer_for(ctx);
    all.retain(|b| keys::works_on(b, app));
    if app.on_fleet() {
        all.retain(|b| !keys::edits_records(b, app));
    }
    // the help key is always shown, at the end; the others as many as fit before it
    let help = all
        .iter()
        .find(|b| b.action == crate::app::Action::ToggleHelp)
        .map(|b| (b.label, "help"));
    let entries: Vec<(&str, &str)> = all
        .iter()
        .filter(|b| b.action != crate::app::Action::ToggleHelp)
        .map(|b| (b.label, short_desc(b.desc)))
        .collect();
    let reserve = help
        .map(|(k, d)| (unicode_width::UnicodeWidthStr::width(k) + d.len() + 3) as u16)
        .unwrap_or(0);
    let mut line = widgets::footer_line(&entries, area.width.saturating_sub(reserve), th);
    if let Some((k, d)) = help {
        if area.width >= reserve {
            let used = line.width() as u16;
            let gap = area.width.saturating_sub(used + reserve) as usize;
            line.spans.push(Span::raw(" ".repeat(gap)));
            line.spans
                .extend(widgets::footer_line(&[(k, d)], reserve, th).spans);
        }
    }
    Paragraph::new(line).render(area, f.buffer_mut());
}

/// The footer shows the first clause of a description.
fn short_desc(desc: &str) -> &str {
    desc.split([':', '(', ','])
        .next()
        .unwrap_or(desc)
        .trim_end()
}

/// What typing does in a text context (shown at the top of help).
pub fn typing_note(ctx: Ctx) -> Option<&'static str> {
    match ctx {
        Ctx::Field => Some(
            "Type to edit. A value already there shows selected: typing replaces it, an \
                 arrow key keeps it. A value that cannot be used is marked ✗ with the reason.",
        ),
        Ctx::MultiField => Some(
            "One reading per line with its unit (1.02 mm, 850 µm). Enter starts a new line; \
             ↑/↓ move between lines.",
        ),
        Ctx::Pick => Some("Type to narrow the list; Backspace widens it."),
        _ => None,
    }
}

fn draw_help(app: &App, f: &mut Frame, body: Rect, th: &Theme) {
    let area = widgets::centered(body, 76, body.height);
    if area.width < 10 || area.height < 3 {
        return;
    }
    // help is about the context underneath
    let ctx = app.ctx_beneath_help();
    let mut lines: Vec<Line<'static>> = Vec::new();
    lines.push(Line::styled(
        format!("Keys on this screen ({})", screen_title(app)),
        th.header,
    ));
    if let Some(n) = typing_note(ctx) {
        lines.push(Line::from(n));
    }
    if app.on_fleet() {
        lines.push(Line::from(
            "Fleet database, read only: edit keys say at which bench an edit is made.",
        ));
    }
    let kw = 12usize;
    // a description too long for its line goes on under itself, not under the keys
    let text_w = usize::from(area.width.saturating_sub(2));
    let key_line = |lines: &mut Vec<Line<'static>>, key: &str, w: usize, desc: &str| {
        let mut parts = widgets::wrap(desc, text_w.saturating_sub(w).max(10));
        if parts.is_empty() {
            parts.push(String::new());
        }
        for (i, part) in parts.into_iter().enumerate() {
            let shown = if i == 0 { key } else { "" };
            lines.push(Line::from(vec![
                Span::styled(widgets::fit_left(shown, w), th.focus_label),
                Span::raw(part),
            ]));
        }
    };
    for b in keys::bindings_for(ctx)
        .into_iter()
        .filter(|b| keys::works_on(b, app))
    {
        key_line(&mut lines, b.label, kw, b.desc);
    }
    if matches!(ctx, Ctx::Field | Ctx::MultiField) {
        lines.push(Line::styled("Editing keys in a field", th.header));
        for (k, d) in crate::app::text_input::EDITING_KEYS {
            key_line(&mut lines, k, kw + 2, d);
        }
    }
    if ctx.has_global() {
        let (k, d) = keys::MOUSE_HELP;
        key_line(&mut lines, k, kw, d);
    }
    lines.push(Line::raw(""));
    lines.push(Line::styled("Cautions", th.header));
    for c in CAUTIONS {
        lines.push(Line::styled(format!("• {c}"), th.caution));
    }
    lines.push(Line::raw(""));
    lines.push(Line::styled(
        "shardlog — fractography and breakage incident log. ? / Esc closes this help.",
        th.muted,
    ));
    let block = Block::default()
        .borders(Borders::ALL)
        .border_style(th.focus_border)
        .title(" Help · ↑/↓ PgUp/PgDn scroll (cautions at the end) · Esc closes ");
    Clear.render(area, f.buffer_mut());
    let inner_h = area.height.saturating_sub(2);
    let max = widgets::wrapped_rows(&lines, area.width.saturating_sub(2)).saturating_sub(inner_h);
    app.help_scroll_max.set(max);
    widgets::para(lines)
        .block(block)
        .scroll((app.help_scroll.min(max), 0))
        .render(area, f.buffer_mut());
}

fn draw_prompt(p: &Prompt, f: &mut Frame, body: Rect, th: &Theme) {
    let (text, title) = match p {
        Prompt::DiscardChanges => (
            "You have unsaved changes. Leave and drop them? y = leave, n or Esc = stay".to_string(),
            " Unsaved changes ",
        ),
        Prompt::QuitDiscard => (
            "You have unsaved changes. Quit and drop them? y = quit, n or Esc = stay".to_string(),
            " Unsaved changes ",
        ),
        Prompt::Revert { what, .. } => (
            format!(
                "Restore {}? It is written as a new change; the history keeps everything. \
                 y = restore, n or Esc = keep",
                widgets::clean(what)
            ),
            " Restore a revision ",
        ),
        Prompt::SaveDuplicate(refs) => (
            format!(
                "{} has the same asset, position and date found. Save this one as well? \
                 y = save, n or Esc = back to the form",
                widgets::clean(refs)
            ),
            " Possible duplicate ",
        ),
    };
    let area = widgets::centered(body, 50, 5);
    if area.width < 6 || area.height < 3 {
        return;
    }
    Clear.render(area, f.buffer_mut());
    widgets::para(vec![Line::styled(text, th.warning)])
        .block(
            Block::default()
                .borders(Borders::ALL)
                .border_style(th.focus_border)
                .title(title),
        )
        .render(area, f.buffer_mut());
}
