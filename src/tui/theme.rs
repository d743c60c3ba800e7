//! Colours and styles, defined once. `NO_COLOR` (any non-empty value) turns colour off;
//! emphasis then uses bold, reverse and underline only.

use std::sync::OnceLock;

use ratatui::style::{Color, Modifier, Style};

/// The styles every screen uses.
#[derive(Debug, Clone, Copy)]
pub struct Theme {
    pub base: Style,
    pub title: Style,
    pub footer_key: Style,
    pub footer_text: Style,
    pub label: Style,
    pub focus_label: Style,
    pub input: Style,
    pub error: Style,
    pub warning: Style,
    pub ok: Style,
    pub muted: Style,
    pub selected: Style,
    pub header: Style,
    pub figure: Style,
    pub caution: Style,
    pub border: Style,
    pub focus_border: Style,
}

pub const COLOR: Theme = Theme {
    base: Style::new(),
    title: Style::new()
        .fg(Color::Black)
        .bg(Color::Cyan)
        .add_modifier(Modifier::BOLD),
    footer_key: Style::new().fg(Color::Black).bg(Color::Gray),
    footer_text: Style::new(),
    label: Style::new().fg(Color::Gray),
    focus_label: Style::new().fg(Color::Cyan).add_modifier(Modifier::BOLD),
    input: Style::new(),
    error: Style::new().fg(Color::LightRed),
    warning: Style::new().fg(Color::Yellow),
    ok: Style::new().fg(Color::Green),
    muted: Style::new().fg(Color::DarkGray),
    selected: Style::new()
        .fg(Color::Black)
        .bg(Color::Cyan)
        .add_modifier(Modifier::BOLD),
    header: Style::new().add_modifier(Modifier::BOLD.union(Modifier::UNDERLINED)),
    figure: Style::new().fg(Color::White).add_modifier(Modifier::BOLD),
    caution: Style::new().fg(Color::Yellow),
    border: Style::new().fg(Color::DarkGray),
    focus_border: Style::new().fg(Color::Cyan),
};

pub const MONO: Theme = Theme {
    base: Style::new(),
    title: Style::new().add_modifier(Modifier::REVERSED.union(Modifier::BOLD)),
    footer_key: Style::new().add_modifier(Modifier::REVERSED),
    footer_text: Style::new(),
    label: Style::new(),
    focus_label: Style::new().add_modifier(Modifier::BOLD.union(Modifier::UNDERLINED)),
    input: Style::new(),
    error: Style::new().add_modifier(Modifier::BOLD),
    warning: Style::new().add_modifier(Modifier::BOLD),
    ok: Style::new(),
    muted: Style::new(),
    selected: Style::new().add_modifier(Modifier::REVERSED),
    header: Style::new().add_modifier(Modifier::BOLD.union(Modifier::UNDERLINED)),
    figure: Style::new().add_modifier(Modifier::BOLD),
    caution: Style::new(),
    border: Style::new(),
    focus_border: Style::new().add_modifier(Modifier::BOLD),
};

static CURRENT: OnceLock<Theme> = OnceLock::new();

/// Whether `NO_COLOR` asks for no colour (<https://no-color.org>: any non-empty value).
pub fn no_color_requested() -> bool {
    std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty())
}

/// The theme for this run, chosen once from the environment.
pub fn theme() -> &'static Theme {
    CURRENT.get_or_init(|| if no_color_requested() { MONO } else { COLOR })
}
