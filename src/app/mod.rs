//! UI-agnostic application state: screens, actions, `update()`.
//!
//! The terminal layer (src/tui) turns key presses into [`Action`]s through its one key table,
//! calls [`App::update`], and draws the state with a view that only reads. Nothing here
//! touches the terminal; the store is called from `update`, never from a draw.

pub mod bench;
pub mod field;
pub mod form;
pub mod hypothesis;
pub mod incident;
pub mod key;
pub mod log;
pub mod picklist;
pub mod review;
pub mod text_input;

use std::path::{Path, PathBuf};

pub use key::{Key, KeyPress};

use bench::{BenchState, Outcome};
use field::{Field, FieldKind};
use form::Form;
use incident::{EditKind, EditState, IncidentState, Lists, Section};
use log::LogState;
use picklist::{PickItem, PickList};
use review::ReviewState;

use crate::store::model::{Incident, LookupKind, MirrorReading, Stamp};
use crate::store::{Store, StoreError};
use shardlog_core::fracture::Boundary;

/// The screens. The first one on the stack is the top screen (`q` quits from there).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Screen {
    /// The incident log.
    Log,
    /// One incident in sections.
    Incident,
    /// A form over an incident (or a new one, or the log's filters).
    Edit,
    /// The bench calculator (also usable with no incident open).
    Bench,
    /// The fleet review: causes, months, stress, Weibull, groups with rates.
    Review,
}

/// Which set of keys is active: the key table is keyed by this.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Ctx {
    /// Moving keys shared by the list-like screens (log, incident).
    Global,
    /// The incident log.
    Log,
    /// One incident.
    Incident,
    /// The log's search line has the focus.
    Search,
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
    /// The fleet review.
    Review,
}

impl Ctx {
    /// Whether unbound keys are typed into a text input in this context.
    pub fn takes_text(self) -> bool {
        matches!(self, Ctx::Field | Ctx::MultiField | Ctx::Pick | Ctx::Search)
    }

    /// Whether the shared moving keys (Global) also apply.
    pub fn has_global(self) -> bool {
        matches!(self, Ctx::Log | Ctx::Incident | Ctx::Review | Ctx::Global)
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
    NextSection,
    PrevSection,
    Confirm,
    Save,
    OpenBench,
    NewIncident,
    Edit,
    Search,
    Filter,
    ClearFilter,
    SortNext,
    SortReverse,
    AddCustody,
    Attach,
    Yes,
    No,
    /// Bench: move to the load hypothesis inputs (again: back to the readings).
    JumpHypothesis,
    /// A key for the focused text input.
    Input(KeyPress),
    /// Pasted text for the focused text input.
    Paste(String),
    ScrollUp,
    ScrollDown,
    /// Open the fleet review.
    OpenReview,
    /// Review: the next first grouping key.
    GroupFirst,
    /// Review: the next second grouping key (or none).
    GroupSecond,
    /// Review: the next date window.
    NextWindow,
    /// Review: per month for the whole fleet or for the highlighted group.
    ToggleGroupMonths,
    /// The drawing area changed.
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

/// The bench calculator's link to an incident.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct BenchTarget {
    pub id: String,
    pub reference: String,
    pub revision: i64,
}

/// Rows of chrome around the log table: title, table header, search/filter line, status,
/// footer.
pub const LOG_CHROME_ROWS: u16 = 5;

/// The whole state of the interface.
pub struct App {
    pub db_path: PathBuf,
    pub store: Option<Store>,
    pub lists: Lists,
    /// Who the audit log records as the author of changes.
    pub actor: String,
    pub stack: Vec<Screen>,
    pub help_open: bool,
    pub help_scroll: u16,
    /// The largest useful `help_scroll`, as the last frame measured it.
    pub help_scroll_max: std::cell::Cell<u16>,
    pub prompt: Option<Prompt>,
    pub quit: bool,
    pub message: Option<Message>,
    pub log: LogState,
    /// The log's search line, while it is being typed.
    pub search: Option<Field>,
    pub incident: Option<IncidentState>,
    pub edit: Option<EditState>,
    pub bench: BenchState,
    pub bench_target: Option<BenchTarget>,
    pub review: ReviewState,
    pub width: u16,
    pub height: u16,
}

fn actor_from_env() -> String {
    for var in ["SHARDLOG_USER", "USER", "USERNAME"] {
        if let Some(v) = std::env::var_os(var) {
            let s = v.to_string_lossy().trim().to_string();
            if !s.is_empty() {
                return shardlog_core::text::sanitize_for_terminal(&s, false);
            }
        }
    }
    "analyst".to_string()
}

fn load_lists(store: &Store) -> Result<Lists, StoreError> {
    let mut lists = Lists::default();
    for kind in LookupKind::ALL {
        let items = store
            .lookups(kind)?
            .into_iter()
            .map(|e| PickItem::new(e.code, e.label))
            .collect();
        lists.lookups.insert(kind.as_str().to_string(), items);
    }
    lists.suppliers = store
        .suppliers()?
        .into_iter()
        .map(|s| PickItem::new(s.code.clone(), format!("{} ({})", s.name, s.code)))
        .collect();
    lists.products = store
        .products(None)?
        .into_iter()
        .map(|p| PickItem::new(p.code.clone(), format!("{} ({})", p.name, p.code)))
        .collect();
    lists.products.dedup_by(|a, b| a.code == b.code);
    lists.lots = store
        .lots(None, None)?
        .into_iter()
        .map(|l| PickItem::new(l.code.clone(), format!("{} · {}", l.code, l.supplier)))
        .collect();
    lists.lots.dedup_by(|a, b| a.code == b.code);
    lists.sites = store
        .sites()?
        .into_iter()
        .map(|s| PickItem::new(s.code.clone(), format!("{} ({})", s.name, s.code)))
        .collect();
    lists.assets = store
        .assets()?
        .into_iter()
        .map(|a| PickItem::new(a.code.clone(), format!("{} ({})", a.name, a.code)))
        .collect();
    Ok(lists)
}

impl App {
    /// The bench calculator alone, with no database (tests, and a bench without records).
    pub fn new(db: &Path) -> Self {
        App {
            db_path: db.to_path_buf(),
            store: None,
            lists: Lists::default(),
            actor: "analyst".to_string(),
            stack: vec![Screen::Bench],
            help_open: false,
            help_scroll: 0,
            help_scroll_max: std::cell::Cell::new(u16::MAX),
            prompt: None,
            quit: false,
            message: None,
            log: LogState::new(),
            search: None,
            incident: None,
            edit: None,
            bench: BenchState::new(),
            bench_target: None,
            review: ReviewState::new(),
            width: 80,
            height: 24,
        }
    }

    /// Open the interface on the database at `db` (created if it does not exist).
    pub fn open(db: &Path) -> anyhow::Result<Self> {
        let store = Store::open(db)?;
        let mut app = App::with_store(store, db)?;
        app.actor = actor_from_env();
        Ok(app)
    }

    /// The interface over an open store; the log is the top screen.
    pub fn with_store(store: Store, db: &Path) -> anyhow::Result<Self> {
        let mut app = App::new(db);
        app.lists = load_lists(&store)?;
        app.log.reload(&store)?;
        app.store = Some(store);
        app.stack = vec![Screen::Log];
        Ok(app)
    }

    /// Whether the open database can only be read (the file or its folder is not writable).
    pub fn read_only(&self) -> bool {
        self.store.as_ref().is_some_and(|s| s.is_read_only())
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
        self.ctx_beneath_help()
    }

    /// The key context of the screen itself (what help describes).
    pub fn ctx_beneath_help(&self) -> Ctx {
        match self.screen() {
            Screen::Log if self.search.is_some() => Ctx::Search,
            Screen::Log => Ctx::Log,
            Screen::Incident => Ctx::Incident,
            Screen::Edit => self
                .edit
                .as_ref()
                .map(|e| e.form.ctx())
                .unwrap_or(Ctx::Global),
            Screen::Bench => self.bench.ctx(),
            Screen::Review => Ctx::Review,
        }
    }

    /// The reference of the incident the bench calculator works for, if any.
    pub fn bench_incident_label(&self) -> Option<String> {
        self.bench_target.as_ref().map(|t| t.reference.clone())
    }

    /// What the status line shows when there is no message.
    pub fn status_line(&self) -> String {
        match self.screen() {
            Screen::Log => {
                let total = match self.log.total {
                    Some(1) => "1 incident matches".to_string(),
                    Some(n) => format!("{} incidents match", group_thousands(n)),
                    None => "counting…".to_string(),
                };
                let rows = match (self.log.offset, self.log.rows.len()) {
                    (_, 0) => String::new(),
                    (Some(o), n) => format!(
                        " · rows {}–{}",
                        group_thousands(o + 1),
                        group_thousands(o + n as u64)
                    ),
                    (None, _) => String::new(),
                };
                let filt = self.log.filter_summary(&self.lists);
                let filt = if filt.is_empty() {
                    String::new()
                } else {
                    format!(" · filter: {filt}")
                };
                format!("{total}{rows} · sort: {}{filt}", self.log.sort_label())
            }
            Screen::Incident => match &self.incident {
                Some(s) => format!(
                    "{} · revision {} · status {}",
                    s.incident.reference,
                    s.incident.revision,
                    self.lists.label(LookupKind::Status, &s.incident.status)
                ),
                None => String::new(),
            },
            Screen::Edit => match &self.edit {
                Some(e) if e.conflict => {
                    "changed meanwhile: your input is kept; Esc and reopen to see the new version"
                        .to_string()
                }
                Some(e) if e.form.is_dirty() => "unsaved changes · Ctrl-S saves".to_string(),
                Some(_) => "no changes yet".to_string(),
                None => String::new(),
            },
            Screen::Bench => match &self.bench_target {
                Some(t) => format!(
                    "bench calculator for {} · Ctrl-S saves into it",
                    t.reference
                ),
                None => "bench calculator: no incident open (open one and press b to save into it)"
                    .to_string(),
            },
            Screen::Review => self.review.status_line(),
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
            Screen::Edit => self.edit.as_ref().is_some_and(|e| e.form.is_dirty()),
            Screen::Bench => self.bench_target.is_some() && self.bench.form.is_dirty(),
            _ => false,
        }
    }

    fn stamp(&self) -> Stamp {
        Stamp::new(self.actor.clone(), chrono::Utc::now())
    }

    /// Work left for after a frame is drawn (the log's count over a large table). Returns
    /// true when the screen should be drawn again.
    pub fn after_draw(&mut self) -> bool {
        if !self.log.count_pending {
            return false;
        }
        let Some(store) = self.store.as_ref() else {
            self.log.count_pending = false;
            return false;
        };
        let r = self.log.count(store);
        self.log.count_pending = false;
        self.report(r);
        true
    }

    /// Apply one action.
    pub fn update(&mut self, action: Action) {
        if let Action::Resize { width, height } = action {
            self.width = width;
            self.height = height;
            let rows = height.saturating_sub(LOG_CHROME_ROWS).max(1) as usize;
            let r = self.log.set_page_size(rows, self.store.as_ref());
            self.report(r);
            return;
        }
        // a message lasts until the next key
        self.message = None;
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
                    self.help_scroll = self
                        .help_scroll
                        .saturating_add(1)
                        .min(self.help_scroll_max.get())
                }
                Action::Up | Action::ScrollUp => {
                    self.help_scroll = self.help_scroll.saturating_sub(1)
                }
                Action::PageDown => {
                    self.help_scroll = self
                        .help_scroll
                        .saturating_add(10)
                        .min(self.help_scroll_max.get())
                }
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
            Action::Quit | Action::Back
                if !(self.screen() == Screen::Log && self.search.is_some()) =>
            {
                if self.has_unsaved() {
                    self.prompt = Some(Prompt::DiscardChanges);
                } else if self.at_top() {
                    self.info("press q to quit");
                } else {
                    self.leave_screen();
                }
                return;
            }
            _ => {}
        }
        match self.screen() {
            Screen::Log => self.update_log(action),
            Screen::Incident => self.update_incident(action),
            Screen::Edit => self.update_edit(action),
            Screen::Bench => self.update_bench(action),
            Screen::Review => self.update_review(action),
        }
    }

    fn report<T>(&mut self, r: Result<T, StoreError>) -> Option<T> {
        match r {
            Ok(v) => Some(v),
            Err(e) => {
                self.error(e.to_string());
                None
            }
        }
    }

    fn leave_screen(&mut self) {
        if self.stack.len() <= 1 {
            return;
        }
        let left = self.stack.pop();
        match left {
            Some(Screen::Edit) => self.edit = None,
            Some(Screen::Bench) if self.bench_target.take().is_some() => {
                self.bench = BenchState::new();
            }
            Some(Screen::Incident) => self.incident = None,
            _ => {}
        }
    }

    // ---------------------------------------------------------------- log

    fn update_log(&mut self, action: Action) {
        if let Some(search) = &mut self.search {
            match action {
                Action::Confirm => {
                    let t = search.text().trim().to_string();
                    self.search = None;
                    self.log.filter.text = if t.is_empty() { None } else { Some(t) };
                    self.reload_log();
                }
                Action::Back => {
                    self.search = None;
                    self.info("search cancelled");
                }
                Action::Input(i) => {
                    search.input(i);
                }
                Action::Paste(p) => search.paste(&p),
                _ => {}
            }
            return;
        }
        let Some(store) = self.store.as_ref() else {
            return;
        };
        let r = match action {
            Action::Down | Action::ScrollDown => self.log.down(store),
            Action::Up | Action::ScrollUp => self.log.up(store),
            Action::PageDown => self.log.pg_down(store),
            Action::PageUp => self.log.pg_up(store),
            Action::Home => self.log.home(store),
            Action::End => self.log.end(store),
            Action::SortNext => {
                self.log.next_sort();
                self.log.reload(store)
            }
            Action::SortReverse => {
                self.log.reverse_sort();
                self.log.reload(store)
            }
            Action::ClearFilter => {
                self.log.filter = Default::default();
                let r = self.log.reload(store);
                self.info("filters cleared");
                r
            }
            Action::Search => {
                let mut f = Field::new("search", "Search", FieldKind::Text { required: false })
                    .with_hint("words in reference, position, description, notes");
                if let Some(t) = &self.log.filter.text {
                    f.set_text(t);
                }
                self.search = Some(f);
                Ok(())
            }
            Action::Filter => {
                self.open_filter();
                Ok(())
            }
            Action::Confirm | Action::Right => {
                if let Some(row) = self.log.selected_row() {
                    let id = row.id.clone();
                    self.open_incident(&id);
                }
                Ok(())
            }
            Action::NewIncident => {
                self.open_new();
                Ok(())
            }
            Action::OpenBench => {
                self.bench_target = None;
                self.stack.push(Screen::Bench);
                Ok(())
            }
            Action::OpenReview => {
                self.open_review();
                Ok(())
            }
            _ => Ok(()),
        };
        self.report(r);
    }

    fn reload_log(&mut self) {
        if let Some(store) = self.store.as_ref() {
            let r = self.log.reload(store);
            self.report(r);
        }
    }

    fn open_filter(&mut self) {
        let f = &self.log.filter;
        let mut form = Form::default();
        let any = |items: Vec<PickItem>| {
            let mut v = vec![PickItem::new("", "any")];
            v.extend(items);
            v
        };
        let pick = |key, label, items: Vec<PickItem>, cur: &Option<String>| {
            PickList::new(key, label, any(items)).with_choice(cur.as_deref().unwrap_or(""))
        };
        form.push_pick(pick(
            "status",
            "Status",
            self.lists.lookup(LookupKind::Status),
            &f.status,
        ));
        form.push_pick(pick(
            "cause",
            "Cause",
            self.lists.lookup(LookupKind::CauseCategory),
            &f.cause,
        ));
        form.push_pick(pick(
            "origin_type",
            "Origin type",
            self.lists.lookup(LookupKind::OriginType),
            &f.origin_type,
        ));
        form.push_pick(pick(
            "supplier",
            "Supplier",
            self.lists.suppliers.clone(),
            &f.supplier,
        ));
        form.push_pick(pick("lot", "Lot", self.lists.lots.clone(), &f.lot));
        form.push_pick(pick("site", "Site", self.lists.sites.clone(), &f.site));
        form.push_field(
            Field::new("since", "Found since", FieldKind::Date { optional: true })
                .with_hint("YYYY-MM-DD")
                .with_text(&f.since.map(|d| d.to_string()).unwrap_or_default()),
        );
        form.push_field(
            Field::new("until", "Found until", FieldKind::Date { optional: true })
                .with_hint("YYYY-MM-DD")
                .with_text(&f.until.map(|d| d.to_string()).unwrap_or_default()),
        );
        form.push_field(
            Field::new("text", "Text", FieldKind::Text { required: false })
                .with_text(f.text.as_deref().unwrap_or("")),
        );
        form.mark_clean();
        self.edit = Some(EditState {
            kind: EditKind::Filter,
            form,
            base: None,
            conflict: false,
        });
        self.stack.push(Screen::Edit);
    }

    fn apply_filter(&mut self) {
        let Some(edit) = &self.edit else { return };
        if let Some((_, e)) = edit.form.first_error() {
            self.error(e);
            return;
        }
        let form = &edit.form;
        let opt = |k: &str| {
            let t = form.text(k);
            if t.is_empty() {
                None
            } else {
                Some(t)
            }
        };
        let date = |k: &str| match form.field(k).map(|f| f.value()) {
            Some(Ok(field::FieldValue::Date(d))) => Some(d),
            _ => None,
        };
        let filter = crate::store::model::Filter {
            status: opt("status"),
            cause: opt("cause"),
            origin_type: opt("origin_type"),
            supplier: opt("supplier"),
            lot: opt("lot"),
            site: opt("site"),
            since: date("since"),
            until: date("until"),
            text: opt("text"),
        };
        self.log.filter = filter;
        self.edit = None;
        self.stack.pop();
        self.reload_log();
    }

    // ---------------------------------------------------------------- incident

    /// Load an incident (by id or reference) with its history and show it.
    pub fn open_incident(&mut self, key: &str) {
        let Some(store) = self.store.as_ref() else {
            return;
        };
        let loaded = store
            .get(key)
            .and_then(|inc| store.history(&inc.id).map(|h| (inc, h)));
        match loaded {
            Ok((incident, mut history)) => {
                history.reverse();
                let section = self
                    .incident
                    .as_ref()
                    .map(|s| s.section)
                    .unwrap_or(Section::Intake);
                self.incident = Some(IncidentState {
                    incident,
                    history,
                    section,
                    scroll: 0,
                    scroll_max: std::cell::Cell::new(u16::MAX),
                });
                if self.screen() != Screen::Incident {
                    self.stack.push(Screen::Incident);
                }
            }
            Err(e) => self.error(e.to_string()),
        }
    }

    fn reopen_incident(&mut self) {
        if let Some(id) = self.incident.as_ref().map(|s| s.incident.id.clone()) {
            let keep = self.stack.clone();
            self.open_incident(&id);
            self.stack = keep;
        }
        if let Some(store) = self.store.as_ref() {
            let r = self.log.refresh(store);
            self.report(r);
        }
    }

    fn update_incident(&mut self, action: Action) {
        let Some(state) = &mut self.incident else {
            return;
        };
        match action {
            Action::NextSection | Action::Right => {
                state.section = state.section.next();
                state.scroll = 0;
            }
            Action::PrevSection | Action::Left => {
                state.section = state.section.prev();
                state.scroll = 0;
            }
            Action::Down | Action::ScrollDown => {
                state.scroll = state.scroll.saturating_add(1).min(state.scroll_max.get())
            }
            Action::Up | Action::ScrollUp => state.scroll = state.scroll.saturating_sub(1),
            Action::PageDown => {
                state.scroll = state.scroll.saturating_add(10).min(state.scroll_max.get())
            }
            Action::PageUp => state.scroll = state.scroll.saturating_sub(10),
            Action::Home => state.scroll = 0,
            Action::End => state.scroll = state.scroll_max.get().min(u16::MAX / 2),
            Action::Edit | Action::Confirm => {
                let section = if state.section.editable() {
                    state.section
                } else {
                    self.info("Evidence: a attaches a file, c adds a custody entry. History is read-only.");
                    return;
                };
                let form = incident::section_form(section, &state.incident, &self.lists);
                self.edit = Some(EditState {
                    kind: EditKind::Section(section),
                    form,
                    base: Some(state.incident.clone()),
                    conflict: false,
                });
                self.stack.push(Screen::Edit);
            }
            Action::AddCustody => {
                let form = incident::custody_form(chrono::Utc::now(), &self.actor, &self.lists);
                self.edit = Some(EditState {
                    kind: EditKind::Custody,
                    form,
                    base: Some(state.incident.clone()),
                    conflict: false,
                });
                self.stack.push(Screen::Edit);
            }
            Action::Attach => {
                self.edit = Some(EditState {
                    kind: EditKind::Attach,
                    form: incident::attach_form(),
                    base: Some(state.incident.clone()),
                    conflict: false,
                });
                self.stack.push(Screen::Edit);
            }
            Action::OpenBench => {
                let inc = state.incident.clone();
                self.open_bench_for(&inc);
            }
            _ => {}
        }
    }

    fn open_new(&mut self) {
        let today = chrono::Utc::now().date_naive();
        self.edit = Some(EditState {
            kind: EditKind::New,
            form: incident::new_form(today, &self.lists),
            base: None,
            conflict: false,
        });
        self.stack.push(Screen::Edit);
    }

    // ---------------------------------------------------------------- forms

    fn update_edit(&mut self, action: Action) {
        if action == Action::Save {
            self.save_edit();
            return;
        }
        let Some(edit) = &mut self.edit else { return };
        if edit.kind == EditKind::Filter && action == Action::Confirm {
            if let Some(form::FormItem::Field(_)) = edit.form.items.get(edit.form.focus) {
                self.apply_filter();
                return;
            }
        }
        let focus = edit.form.focus_key();
        if edit.form.update(action) == form::FormEvent::Changed {
            if let (Some(k @ ("supplier" | "product")), Some(store)) = (focus, self.store.as_ref())
            {
                narrow_glass_lists(&mut edit.form, store, k);
            }
        }
    }

    fn save_edit(&mut self) {
        let Some(edit) = self.edit.as_ref() else {
            return;
        };
        if edit.kind == EditKind::Filter {
            self.apply_filter();
            return;
        }
        if let Some((i, e)) = edit.form.first_error() {
            if let Some(edit) = self.edit.as_mut() {
                edit.form.focus = i;
            }
            self.error(format!("not saved: {e}"));
            return;
        }
        let stamp = self.stamp();
        let kind = edit.kind;
        let Some(store) = self.store.as_mut() else {
            self.error("no database is open");
            return;
        };
        let result: Result<Incident, String> = match kind {
            EditKind::New => {
                let mut draft = Incident::draft(stamp.at.date_naive());
                incident::apply(kind, &edit.form, &mut draft).and_then(|_| {
                    store
                        .create_incident(&draft, &stamp)
                        .map_err(|e| e.to_string())
                })
            }
            EditKind::Section(_) => {
                let Some(base) = edit.base.clone() else {
                    return;
                };
                let mut inc = base;
                match incident::apply(kind, &edit.form, &mut inc) {
                    Ok(()) => match store.update_incident(&inc, &stamp) {
                        Ok(saved) => Ok(saved),
                        Err(StoreError::StaleRevision { reference, .. }) => {
                            // short enough for an 80-column status line
                            let msg = format!(
                                "not saved: {reference} was changed meanwhile; your input is kept"
                            );
                            if let Some(edit) = self.edit.as_mut() {
                                edit.conflict = true;
                            }
                            self.error(msg);
                            return;
                        }
                        Err(e) => Err(e.to_string()),
                    },
                    Err(e) => Err(e),
                }
            }
            EditKind::Custody => {
                let Some(base) = edit.base.as_ref() else {
                    return;
                };
                incident::custody_entry(&edit.form).and_then(|entry| {
                    store
                        .add_custody(&base.id, &entry, &stamp)
                        .map_err(|e| e.to_string())
                })
            }
            EditKind::Attach => {
                let Some(base) = edit.base.as_ref() else {
                    return;
                };
                let path = expand_home(&edit.form.text("path"));
                let caption = edit.form.text("caption");
                store
                    .add_attachment(&base.id, &path, &caption, &stamp)
                    .map_err(|e| e.to_string())
            }
            EditKind::Filter => return,
        };
        match result {
            Ok(saved) => {
                let what = match kind {
                    EditKind::New => format!("created {}", saved.reference),
                    EditKind::Section(s) => {
                        format!("saved {} of {}", s.title().to_lowercase(), saved.reference)
                    }
                    EditKind::Custody => format!("custody entry added to {}", saved.reference),
                    EditKind::Attach => {
                        let h = saved
                            .attachments
                            .last()
                            .map(|a| a.sha256.chars().take(16).collect::<String>())
                            .unwrap_or_default();
                        format!("attached to {} (sha256 {h}…)", saved.reference)
                    }
                    EditKind::Filter => String::new(),
                };
                self.edit = None;
                self.stack.pop();
                if kind == EditKind::New {
                    let id = saved.id.clone();
                    self.open_incident(&id);
                } else {
                    self.reopen_incident();
                }
                if let Some(store) = self.store.as_ref() {
                    let r = self.log.refresh(store);
                    self.report(r);
                }
                self.info(what);
            }
            Err(e) => self.error(format!("not saved: {e}")),
        }
    }

    // ---------------------------------------------------------------- review

    /// Open the fleet review (figures computed now, from the store).
    pub fn open_review(&mut self) {
        self.reload_review();
        if self.screen() != Screen::Review {
            self.stack.push(Screen::Review);
        }
    }

    fn reload_review(&mut self) {
        let Some(store) = self.store.as_ref() else {
            self.error("no database is open: the review needs the incident records");
            return;
        };
        // the clock is read here, at the edge: the window ends today
        let today = chrono::Utc::now().date_naive();
        self.review.load(store, today);
    }

    fn update_review(&mut self, action: Action) {
        let page = self.height.saturating_sub(8).max(1) as i64;
        match action {
            Action::NextSection | Action::Right => self.review.panel = self.review.panel.next(),
            Action::PrevSection | Action::Left => self.review.panel = self.review.panel.prev(),
            Action::Down | Action::ScrollDown => self.review.move_by(1),
            Action::Up | Action::ScrollUp => self.review.move_by(-1),
            Action::PageDown => self.review.move_by(page),
            Action::PageUp => self.review.move_by(-page),
            Action::Home => self.review.home(),
            Action::End => self.review.end(),
            Action::GroupFirst => {
                self.review.next_first_key();
                self.review.panel = review::Panel::Groups;
                self.reload_review();
            }
            Action::GroupSecond => {
                self.review.next_second_key();
                self.review.panel = review::Panel::Groups;
                self.reload_review();
            }
            Action::NextWindow => {
                self.review.next_window();
                self.reload_review();
            }
            Action::ToggleGroupMonths => {
                self.review.group_months = !self.review.group_months;
                self.review.panel = review::Panel::Months;
            }
            Action::Confirm => match self.review.selected_filter() {
                Ok((filter, _, _)) => {
                    self.log.filter = filter;
                    // the log sits beneath the review: go back to it, filtered
                    while self.stack.len() > 1 && self.screen() != Screen::Log {
                        self.leave_screen();
                    }
                    if self.screen() != Screen::Log {
                        self.stack.push(Screen::Log);
                    }
                    // the filter line names the group; the status line gives its count
                    self.reload_log();
                }
                Err(e) => self.error(e),
            },
            _ => {}
        }
    }

    // ---------------------------------------------------------------- bench

    fn open_bench_for(&mut self, inc: &Incident) {
        let mut bench = BenchState::new();
        bench.prefill(inc);
        bench.form.mark_clean();
        self.bench = bench;
        self.bench_target = Some(BenchTarget {
            id: inc.id.clone(),
            reference: inc.reference.clone(),
            revision: inc.revision,
        });
        self.stack.push(Screen::Bench);
    }

    fn update_bench(&mut self, action: Action) {
        if action == Action::Save {
            self.save_bench();
            return;
        }
        self.bench.update(action);
    }

    fn save_bench(&mut self) {
        let Some(target) = self.bench_target.clone() else {
            self.error("no incident open: open one from the log and press b to save into it");
            return;
        };
        let Outcome::Done {
            input, analysis, ..
        } = &self.bench.outcome
        else {
            let why = match &self.bench.outcome {
                Outcome::Incomplete(e) | Outcome::Refused(e) => e.clone(),
                _ => "no readings yet".to_string(),
            };
            self.error(format!("not saved: {why}"));
            return;
        };
        let stamp = self.stamp();
        let Some(store) = self.store.as_mut() else {
            return;
        };
        let current = match store.get(&target.id) {
            Ok(c) => c,
            Err(e) => {
                self.error(e.to_string());
                return;
            }
        };
        if current.revision != target.revision {
            self.error(format!(
                "{} was changed meanwhile (revision {} now, {} when the bench opened); nothing \
                 was saved and your readings are kept. Esc, reopen and press b again.",
                target.reference, current.revision, target.revision
            ));
            return;
        }
        let mut exam = match current.examinations.last() {
            Some(e) if e.result.is_none() && e.readings.is_empty() => e.clone(),
            _ => {
                let mut e = incident::empty_examination();
                e.analyst = self.actor.clone();
                e.examined_on = Some(stamp.at.date_naive());
                e
            }
        };
        exam.material = Some(input.material.key.replace('-', "_"));
        exam.readings = Vec::new();
        for (key, code) in [
            ("r_mist", "mirror_mist"),
            ("r_hackle", "mist_hackle"),
            ("r_branch", "branching"),
        ] {
            let Some(f) = self.bench.form.field(key) else {
                continue;
            };
            for line in f.lines().iter().filter(|l| !l.trim().is_empty()) {
                match crate::store::model::Measured::parse(
                    line,
                    shardlog_core::units::Dimension::Length,
                ) {
                    Ok(m) => exam.readings.push(MirrorReading {
                        boundary: code.to_string(),
                        radius: m,
                        magnification: None,
                        analyst: self.actor.clone(),
                        note: String::new(),
                    }),
                    Err(e) => {
                        self.error(format!("not saved: {}: {e}", f.label));
                        return;
                    }
                }
            }
        }
        if let Some(m) = input.measured_flaw_m {
            let text =
                shardlog_core::units::format_exact(m, shardlog_core::units::Unit::Micrometre);
            if let Ok(mm) =
                crate::store::model::Measured::parse(&text, shardlog_core::units::Dimension::Length)
            {
                let shape = analysis
                    .flaw
                    .as_ref()
                    .map(|f| f.geometry_label.clone())
                    .unwrap_or_default();
                exam.flaw = Some(crate::store::model::FlawMeasurement {
                    depth: Some(mm),
                    width: exam.flaw.as_ref().and_then(|f| f.width.clone()),
                    shape,
                });
            }
        }
        let mut result = match crate::store::compute::to_result(analysis, stamp.at) {
            Ok(r) => r,
            Err(e) => {
                self.error(format!("not saved: storing the analysis: {e}"));
                return;
            }
        };
        // what the bench was given beyond the stored readings (temper, constants, geometry…)
        // and the hypothesis tried beside it ride along with the analysis
        if let serde_json::Value::Object(map) = &mut result.analysis {
            map.insert(
                "bench_input".to_string(),
                serde_json::to_value(input.as_ref()).unwrap_or(serde_json::Value::Null),
            );
        }
        if let (Some(Ok(t)), serde_json::Value::Object(map)) =
            (&self.bench.thermal, &mut result.analysis)
        {
            map.insert(
                "thermal_hypothesis".to_string(),
                serde_json::json!({
                    "method": shardlog_core::loads::thermal::THERMAL_METHOD,
                    "delta_t_k": t.delta_t_k,
                    "restraint": t.restraint,
                    "stress_pa": t.stress_pa,
                    "verdict": t.verdict.as_ref().map(|v| v.explanation.clone()).ok(),
                }),
            );
        }
        if let (Some(Ok(c)), serde_json::Value::Object(map)) =
            (&self.bench.hypothesis, &mut result.analysis)
        {
            map.insert(
                "load_hypothesis".to_string(),
                serde_json::json!({
                    "kind": c.kind,
                    "inputs": c.summary,
                    "method": c.outcome.method,
                    "force_n": c.outcome.force,
                    "stress_pa": c.outcome.stress,
                    "deflection_m": c.outcome.deflection,
                    "warnings": c.outcome.warnings.iter().map(|w| w.message.clone()).collect::<Vec<_>>(),
                    "verdict": c.verdict.as_ref().and_then(|v| v.as_ref().ok()).map(|v| v.explanation.clone()),
                }),
            );
        }
        exam.result = Some(result);
        match store.put_examination(&target.id, target.revision, &exam, &stamp) {
            Ok(saved) => {
                self.bench_target = Some(BenchTarget {
                    id: saved.id.clone(),
                    reference: saved.reference.clone(),
                    revision: saved.revision,
                });
                self.bench.form.mark_clean();
                let msg = format!(
                    "saved readings and result into {} (revision {})",
                    saved.reference, saved.revision
                );
                self.reopen_incident();
                self.info(msg);
            }
            Err(e) => self.error(format!("not saved: {e}; your readings are kept")),
        }
    }
}

/// After a supplier (or product) is chosen, the product and lot lists keep only what belongs
/// to it (a new code keeps the full lists: it has nothing of its own yet).
fn narrow_glass_lists(form: &mut Form, store: &Store, changed: &str) {
    let supplier = form.text("supplier");
    let product = form.text("product");
    let sup = (!supplier.is_empty()).then_some(supplier.as_str());
    if changed == "supplier" {
        if let Ok(products) = store.products(sup) {
            if !products.is_empty() {
                let items = products
                    .into_iter()
                    .map(|p| PickItem::new(p.code.clone(), format!("{} ({})", p.name, p.code)))
                    .collect();
                if let Some(p) = form.pick_mut("product") {
                    p.set_items(items);
                }
            }
        }
    }
    let prod = (!product.is_empty()).then_some(product.as_str());
    if let Ok(lots) = store.lots(sup, prod) {
        if !lots.is_empty() {
            let items = lots
                .into_iter()
                .map(|l| PickItem::new(l.code.clone(), format!("{} · {}", l.code, l.product)))
                .collect();
            if let Some(p) = form.pick_mut("lot") {
                p.set_items(items);
            }
        }
    }
}

fn expand_home(path: &str) -> PathBuf {
    let p = path.trim();
    if let Some(rest) = p.strip_prefix("~/") {
        if let Some(home) = std::env::var_os("HOME") {
            return PathBuf::from(home).join(rest);
        }
    }
    PathBuf::from(p)
}

/// 1234567 → "1,234,567".
pub fn group_thousands(n: u64) -> String {
    let s = n.to_string();
    let mut out = String::new();
    for (i, c) in s.chars().enumerate() {
        if i > 0 && (s.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(c);
    }
    out
}

/// Which boundary a stored reading belongs to (lookup code → core boundary).
pub fn boundary_of(code: &str) -> Option<Boundary> {
    match code {
        "mirror_mist" => Some(Boundary::MirrorMist),
        "mist_hackle" => Some(Boundary::MistHackle),
        "branching" => Some(Boundary::Branching),
        _ => None,
    }
}
