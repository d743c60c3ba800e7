//! The terminal interface: set-up and restore, the event loop, the key table, screens and
//! widgets. State lives in `crate::app`; this module turns events into actions and draws.

pub mod cautions;
pub mod keys;
pub mod screens;
pub mod theme;
pub mod view;
pub mod widgets;

use std::io::{self, Write};
use std::path::Path;

use ratatui::crossterm::event::{
    self, DisableBracketedPaste, DisableMouseCapture, EnableBracketedPaste, EnableMouseCapture,
    Event, KeyEventKind, MouseEventKind,
};
use ratatui::crossterm::execute;
use ratatui::{backend::Backend, Terminal};

use crate::app::{Action, App};

/// Who the audit log records as the author of changes.
pub enum Analyst {
    /// Set on purpose (`SHARDLOG_USER`, or kept from an earlier first use).
    Known(String),
    /// Not known yet: ask before anything else, offering `suggestion`, and keep the answer in
    /// the file `keep_in`.
    Ask {
        suggestion: Option<String>,
        keep_in: std::path::PathBuf,
    },
}

/// Open the terminal interface on the database at `db`.
pub fn run(db: &Path, who: Analyst) -> anyhow::Result<()> {
    let (mut app, keep_in) = match who {
        // the fleet is read only: nothing is recorded under a name there
        _ if crate::store::is_fleet_url(db) => (App::open_fleet(db)?, None),
        Analyst::Known(name) => (App::open(db, &name)?, None),
        Analyst::Ask {
            suggestion,
            keep_in,
        } => {
            let mut app = App::open(db, suggestion.as_deref().unwrap_or("analyst"))?;
            app.ask_name(suggestion.as_deref());
            (app, Some(keep_in))
        }
    };
    app.home = std::env::var_os("HOME").map(std::path::PathBuf::from);
    let mut terminal = ratatui::try_init()?;
    install_panic_hook();
    let _ = execute!(io::stdout(), EnableMouseCapture, EnableBracketedPaste);
    let result = event_loop(&mut terminal, &mut app);
    restore();
    if let (Some(path), Some(name)) = (keep_in, app.name_to_keep.take()) {
        keep_name(&path, &name)?;
    }
    result
}

/// Keep the analyst's name for the next start (a file of one line).
fn keep_name(path: &Path, name: &str) -> anyhow::Result<()> {
    use anyhow::Context;
    if let Some(dir) = path.parent() {
        std::fs::create_dir_all(dir)
            .with_context(|| format!("keeping your name: cannot create {}", dir.display()))?;
    }
    crate::store::write_atomically(path, format!("{name}\n").as_bytes(), false)
        .with_context(|| format!("keeping your name in {}", path.display()))
}

/// Turn mouse capture and bracketed paste off, then give the terminal back.
fn restore() {
    let mut out = io::stdout();
    let _ = execute!(out, DisableBracketedPaste, DisableMouseCapture);
    let _ = out.flush();
    ratatui::restore();
}

/// ratatui's hook (installed by `init`) leaves the alternate screen and raw mode; ours
/// first turns mouse capture and bracketed paste off, so a panic never leaves a terminal
/// that prints escape codes on every mouse move.
fn install_panic_hook() {
    let previous = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        let mut out = io::stdout();
        let _ = execute!(out, DisableBracketedPaste, DisableMouseCapture);
        let _ = out.flush();
        previous(info);
    }));
}

/// Draw, then wait for an event, map it, update, draw again. The first frame is drawn
/// before the first event so the screen never looks frozen.
pub fn event_loop<B: Backend>(terminal: &mut Terminal<B>, app: &mut App) -> anyhow::Result<()>
where
    B::Error: Send + Sync + 'static,
{
    let size = terminal.size()?;
    app.update(Action::Resize {
        width: size.width,
        height: size.height,
    });
    terminal.draw(|f| view::draw(app, f))?;
    if app.after_draw() {
        terminal.draw(|f| view::draw(app, f))?;
    }
    // debug builds only: lets the pseudo-terminal test check the panic path restores the
    // terminal (release builds never read this)
    if cfg!(debug_assertions) && std::env::var_os("SHARDLOG_TEST_PANIC_AFTER_FIRST_FRAME").is_some()
    {
        panic!("test panic after the first frame (SHARDLOG_TEST_PANIC_AFTER_FIRST_FRAME)");
    }
    while !app.quit {
        let ev = event::read()?;
        let Some(action) = action_for_event(app, &ev) else {
            continue;
        };
        app.update(action);
        if app.quit {
            break;
        }
        terminal.draw(|f| view::draw(app, f))?;
        if app.after_draw() {
            terminal.draw(|f| view::draw(app, f))?;
        }
    }
    Ok(())
}

/// Map a terminal event to an action: key presses through the key table (presses only,
/// never repeats or releases), the mouse wheel to scrolling, paste to text, resize to a
/// new layout.
pub fn action_for_event(app: &App, ev: &Event) -> Option<Action> {
    match ev {
        Event::Key(key) if key.kind == KeyEventKind::Press => keys::action_for(app.ctx(), key),
        Event::Mouse(m) => match m.kind {
            MouseEventKind::ScrollUp => Some(Action::ScrollUp),
            MouseEventKind::ScrollDown => Some(Action::ScrollDown),
            _ => None,
        },
        Event::Paste(text) => Some(Action::Paste(text.clone())),
        Event::Resize(w, h) => Some(Action::Resize {
            width: *w,
            height: *h,
        }),
        _ => None,
    }
}

/// Test and benchmark support: feed events and draw into any backend, as the event loop does.
pub mod harness {
    use ratatui::backend::TestBackend;
    use ratatui::crossterm::event::{Event, KeyCode, KeyEvent, KeyEventKind, KeyModifiers};
    use ratatui::Terminal;

    use crate::app::App;

    /// A key press event.
    pub fn key(code: KeyCode) -> Event {
        Event::Key(KeyEvent::new_with_kind(
            code,
            KeyModifiers::NONE,
            KeyEventKind::Press,
        ))
    }

    /// A key press with modifiers.
    pub fn key_mod(code: KeyCode, mods: KeyModifiers) -> Event {
        Event::Key(KeyEvent::new_with_kind(code, mods, KeyEventKind::Press))
    }

    /// Feed one event as the event loop would.
    pub fn send(app: &mut App, ev: &Event) {
        if let Some(a) = super::action_for_event(app, ev) {
            app.update(a);
        }
    }

    /// Type each character of `text` as a key press.
    pub fn type_str(app: &mut App, text: &str) {
        for c in text.chars() {
            let ev = if c == '\n' {
                key(KeyCode::Enter)
            } else {
                key(KeyCode::Char(c))
            };
            send(app, &ev);
        }
    }

    /// Draw the app into a fresh test terminal of `w`×`h` and return the screen as lines.
    pub fn render(app: &mut App, w: u16, h: u16) -> Vec<String> {
        app.update(crate::app::Action::Resize {
            width: w,
            height: h,
        });
        let mut term = match Terminal::new(TestBackend::new(w, h)) {
            Ok(t) => t,
            Err(e) => match e {},
        };
        // as the event loop does: a frame, the deferred work, the frame after it
        let _ = term.draw(|f| super::view::draw(app, f));
        if app.after_draw() {
            let _ = term.draw(|f| super::view::draw(app, f));
        }
        let buf = term.backend().buffer();
        (0..h)
            .map(|y| {
                let mut line = String::new();
                let mut x = 0;
                while x < w {
                    let cell = &buf[(x, y)];
                    line.push_str(cell.symbol());
                    // a wide character covers the next cell too, as on a real terminal
                    let cw = unicode_width::UnicodeWidthStr::width(cell.symbol()).max(1);
                    x = x.saturating_add(cw as u16);
                }
                line
            })
            .collect()
    }
}
