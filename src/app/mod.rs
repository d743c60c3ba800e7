//! UI-agnostic application state: screens, actions, `update()`.
//!
//! The terminal layer (src/tui) turns key presses into [`Action`]s through its one key table,
//! calls [`App::update`], and draws the state with a view that only reads. Nothing here
//! touches the terminal; the store is called from `update`, never from a draw.

pub mod bench;
pub mod field;
pub mod form;
pub mod picklist;

use std::path::{Path, PathBuf};

pub use ratatui_textarea::{Input, Key};

use bench::BenchState;

/// The screens, from the top of the stack down. The first screen is the top screen
/// (`q` quits from there).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Screen {
    /// The bench calculator (also usable with no incident open).
    Bench,
}

/// Which set of keys is active: the key table is keyed by this.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Ctx {
    /// Keys that work everywhere (unless a text field takes them).
    Global,
    /// The help overlay is open.
    Help,
    /// A yes/no question is asked.
    Prompt,
    /// A one-line text field has the focus.
    Field,
    /// A multi-line text field (readings) has the focus.
    MultiField,
    /// A pick-list has the focus.
    Pick,
}

impl Ctx {
    /// Whether unbound keys are typed into a text input in this context.
    pub fn takes_text(self) -> bool {
        matches!(self, Ctx::Field | Ctx::MultiField | Ctx::Pick)
    }
}

/// Everything the user can ask for. The key table maps keys to these.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Action {
    Quit,
    /// Quit from any screen (asks first when typing is unsaved).
    QuitAll,
    Back,
    ToggleHelp,
    Up,
    Down,
    Left,
    Right,
    PageUp,
    PageDown,
    Home,
    End,
    NextField,
    PrevField,
    Confirm,
    Save,
    OpenBench,
    Yes,
    No,
    /// A key for the focused text input.
    Input(Input),
    /// Pasted text for the focused text input.
    Paste(String),
    ScrollUp,
    ScrollDown,
    /// The drawing area changed; `rows` is the height available to lists.
    Resize {
        width: u16,
        height: u16,
    },
}

/// A line for the status bar.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Message {
    pub text: String,
    pub error: bool,
}

/// A pending yes/no question.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Prompt {
    /// Leave the current form and drop its unsaved changes?
    DiscardChanges,
    /// Quit and drop unsaved changes?
    QuitDiscard,
}

/// The whole state of the interface.
pub struct App {
    pub db_path: PathBuf,
    pub stack: Vec<Screen>,
    pub help_open: bool,
    pub help_scroll: u16,
    pub prompt: Option<Prompt>,
    pub quit: bool,
    pub message: Option<Message>,
    pub bench: BenchState,
    pub width: u16,
    pub height: u16,
}

impl App {
    /// A new interface state on the database at `db` (the database is opened by the caller
    /// of the store, not here).
    pub fn new(db: &Path) -> Self {
        App {
            db_path: db.to_path_buf(),
            stack: vec![Screen::Bench],
            help_open: false,
            help_scroll: 0,
            prompt: None,
            quit: false,
            message: None,
            bench: BenchState::new(),
            width: 80,
            height: 24,
        }
    }

    /// Open the interface on the database at `db`.
    pub fn open(db: &Path) -> anyhow::Result<Self> {
        Ok(Self::new(db))
    }

    /// The key context the help overlay describes (the one under it).
    pub fn ctx_beneath_help(&self) -> Ctx {
        match self.screen() {
            Screen::Bench => self.bench.ctx(),
        }
    }

    /// The reference of the incident the bench calculator works for, if any.
    pub fn bench_incident_label(&self) -> Option<String> {
        None
    }

    /// What the status line shows when there is no message.
    pub fn status_line(&self) -> String {
        match self.screen() {
            Screen::Bench => "bench calculator: no incident open".to_string(),
        }
    }

    pub fn screen(&self) -> Screen {
        *self.stack.last().unwrap_or(&Screen::Bench)
    }

    pub fn at_top(&self) -> bool {
        self.stack.len() <= 1
    }

    /// The key context for the current focus.
    pub fn ctx(&self) -> Ctx {
        if self.prompt.is_some() {
            return Ctx::Prompt;
        }
        if self.help_open {
            return Ctx::Help;
        }
        match self.screen() {
            Screen::Bench => self.bench.ctx(),
        }
    }

    pub fn info(&mut self, text: impl Into<String>) {
        self.message = Some(Message {
            text: text.into(),
            error: false,
        });
    }

    pub fn error(&mut self, text: impl Into<String>) {
        self.message = Some(Message {
            text: text.into(),
            error: true,
        });
    }

    /// Whether the current screen holds typing that is not saved.
    pub fn has_unsaved(&self) -> bool {
        match self.screen() {
            Screen::Bench => false,
        }
    }

    /// Apply one action.
    pub fn update(&mut self, action: Action) {
        if let Action::Resize { width, height } = action {
            self.width = width;
            self.height = height;
            return;
        }
        if let Some(prompt) = self.prompt.clone() {
            match action {
                Action::Yes => {
                    self.prompt = None;
                    match prompt {
                        Prompt::DiscardChanges => self.leave_screen(),
                        Prompt::QuitDiscard => self.quit = true,
                    }
                }
                Action::No | Action::Back => {
                    self.prompt = None;
                    self.info("kept your changes");
                }
                _ => {}
            }
            return;
        }
        if self.help_open {
            match action {
                Action::QuitAll => {
                    self.help_open = false;
                    self.update(Action::QuitAll);
                }
                Action::ToggleHelp | Action::Back | Action::Quit => {
                    self.help_open = false;
                    self.help_scroll = 0;
                }
                Action::Down | Action::ScrollDown => {
                    self.help_scroll = self.help_scroll.saturating_add(1)
                }
                Action::Up | Action::ScrollUp => {
                    self.help_scroll = self.help_scroll.saturating_sub(1)
                }
                Action::PageDown => self.help_scroll = self.help_scroll.saturating_add(10),
                Action::PageUp => self.help_scroll = self.help_scroll.saturating_sub(10),
                Action::Home => self.help_scroll = 0,
                _ => {}
            }
            return;
        }
        match action {
            Action::ToggleHelp => {
                self.help_open = true;
                return;
            }
            Action::QuitAll => {
                if self.has_unsaved() {
                    self.prompt = Some(Prompt::QuitDiscard);
                } else {
                    self.quit = true;
                }
                return;
            }
            Action::Quit if self.at_top() => {
                self.quit = true;
                return;
            }
            Action::Back => {
                if self.has_unsaved() {
                    self.prompt = Some(Prompt::DiscardChanges);
                } else if self.at_top() {
                    self.info("press q to quit");
                } else {
                    self.leave_screen();
                }
                return;
            }
            Action::OpenBench => {
                if self.screen() != Screen::Bench {
                    self.stack.push(Screen::Bench);
                }
                return;
            }
            _ => {}
        }
        self.message = None;
        match self.screen() {
            Screen::Bench => self.bench.update(action),
        }
    }

    fn leave_screen(&mut self) {
        if self.stack.len() > 1 {
            self.stack.pop();
        }
    }
}
