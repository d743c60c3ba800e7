//! UI-agnostic application state: screens, actions, `update()`.
//!
//! The terminal layer (src/tui) turns key presses into [`Action`]s through its one key table,
//! calls [`App::update`], and draws the state with a view that only reads. Nothing here
//! touches the terminal; the store is called from `update`, never from a draw.

pub mod bench;
mod bench_restore;
pub mod field;
pub mod form;
pub mod hypothesis;
pub mod incident;
pub mod key;
pub mod log_view;
pub mod lookups;
pub mod materials;
pub mod picklist;
pub mod practice;
pub mod review;
pub mod text_input;
mod update;

use std::path::{Path, PathBuf};

pub use key::{Key, KeyPress};

use bench::BenchState;
use field::Field;
use incident::{EditState, IncidentState, Lists};
use log_view::LogState;
use picklist::PickItem;
use review::ReviewState;

use crate::store::model::{LookupKind, Stamp};
use crate::store::{RecordSource, ReportSource, Store, StoreError};

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
    /// The material library and the own materials.
    Materials,
    /// The lookup lists a lab keeps (causes, origin types, custody events, statuses).
    Lookups,
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
    /// The analyst's name is asked (first use).
    Name,
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
    /// The materials list.
    Materials,
    /// The lookup lists.
    Lookups,
}

impl Ctx {
    /// Whether unbound keys are typed into a text input in this context.
    pub fn takes_text(self) -> bool {
        matches!(
            self,
            Ctx::Field | Ctx::MultiField | Ctx::Pick | Ctx::Search | Ctx::Name
        )
    }

    /// Whether the shared moving keys (Global) also apply.
    pub fn has_global(self) -> bool {
        matches!(
            self,
            Ctx::Log | Ctx::Incident | Ctx::Review | Ctx::Materials | Ctx::Lookups | Ctx::Global
        )
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
    /// The log on the fleet database: one bench's incidents, or every bench's.
    FilterBench,
    ClearFilter,
    SortNext,
    SortReverse,
    AddCustody,
    Attach,
    Yes,
    No,
    /// Incident history: restore the highlighted revision (as a new change).
    Revert,
    /// Review: enter panes in service (exposure).
    AddExposure,
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
    /// Open the materials screen.
    OpenMaterials,
    /// Materials: a new own material.
    AddMaterial,
    /// Materials: an own copy of the highlighted material.
    CopyMaterial,
    /// Review: the next first grouping key.
    GroupFirst,
    /// Review: the next second grouping key (or none).
    GroupSecond,
    /// Review: the next date window.
    NextWindow,
    /// Review: per month for the whole fleet or for the highlighted group.
    ToggleGroupMonths,
    /// Open the lookup lists (from the review).
    OpenLookups,
    /// Lookup lists: add an entry to the list shown.
    AddEntry,
    /// Lookup lists: retire the highlighted entry, or restore a retired one.
    RetireOrRestore,
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
    /// Save a new incident although one with the same asset, position and date found is
    /// recorded (their references)?
    SaveDuplicate(String),
    /// Restore the open incident as it was after the history entry `seq` (its revision
    /// and time in words)?
    Revert { seq: i64, what: String },
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
    /// The bench file: read and edited.
    pub store: Option<Store>,
    /// The fleet database, read only: edits are made at the owning bench (None on a bench).
    pub fleet: Option<Box<dyn ReportSource>>,
    pub lists: Lists,
    /// Who the audit log records as the author of changes.
    pub actor: String,
    /// The analyst's name being asked for (first use), before anything else.
    pub name_entry: Option<Field>,
    /// A name the analyst has just given, for the terminal layer to keep for next time.
    pub name_to_keep: Option<String>,
    /// The analyst answered yes to saving a possible duplicate (for the next save only).
    pub duplicate_confirmed: bool,
    /// The user's home folder, for a path typed as `~/…` (none: such a path is taken as typed).
    pub home: Option<PathBuf>,
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
    pub materials: materials::MaterialsState,
    pub lookups: lookups::LookupsState,
    /// The log's filter before the review opened a group in it: Esc from that log goes back
    /// to the review, and leaving the review gives the log its own filter back.
    pub log_filter_before_review: Option<crate::store::model::Filter>,
    pub width: u16,
    pub height: u16,
}

/// The records the screens read: the bench file, else the fleet database. (A function of
/// the two fields, so that a caller may change another field of the app while reading.)
pub(crate) fn read_side<'a>(
    store: &'a Option<Store>,
    fleet: &'a Option<Box<dyn ReportSource>>,
) -> Option<&'a dyn RecordSource> {
    match (store, fleet) {
        (Some(s), _) => Some(s),
        (None, Some(f)) => Some(f.as_ref() as &dyn RecordSource),
        (None, None) => None,
    }
}

/// The pick-lists of a bench file (the fleet's lists and its assets).
pub(crate) fn load_lists(store: &Store) -> Result<Lists, StoreError> {
    let mut lists = lists_from(store)?;
    lists.assets = store
        .assets()?
        .into_iter()
        .map(|a| PickItem::new(a.code.clone(), format!("{} ({})", a.name, a.code)))
        .collect();
    Ok(lists)
}

/// The pick-lists any records give (assets only matter to edits, made at a bench).
pub(crate) fn lists_from(store: &dyn RecordSource) -> Result<Lists, StoreError> {
    let mut lists = Lists::default();
    for kind in LookupKind::ALL {
        let (retired, in_use): (Vec<_>, Vec<_>) =
            store.lookups(kind)?.into_iter().partition(|e| e.retired);
        let items = |v: Vec<crate::store::LookupEntry>| -> Vec<PickItem> {
            v.into_iter()
                .map(|e| PickItem::new(e.code, e.label))
                .collect()
        };
        lists
            .lookups
            .insert(kind.as_str().to_string(), items(in_use));
        lists
            .retired
            .insert(kind.as_str().to_string(), items(retired));
    }
    lists.suppliers = store
        .suppliers()?
        .into_iter()
        .map(|s| PickItem::new(s.code.clone(), format!("{} ({})", s.name, s.code)))
        .collect();
    lists.products = store
        .products()?
        .into_iter()
        .map(|p| PickItem::new(p.code.clone(), format!("{} ({})", p.name, p.code)))
        .collect();
    lists.products.dedup_by(|a, b| a.code == b.code);
    let lots = store.lots()?;
    lists.lots = lots
        .iter()
        .map(|l| PickItem::new(l.code.clone(), format!("{} · {}", l.code, l.supplier)))
        .collect();
    lists.lot_heat_soak = lots
        .into_iter()
        .filter_map(|l| Some(((l.supplier, l.product, l.code), l.heat_soak?)))
        .collect();
    lists.fragmentation = store.fragmentation_minimums()?;
    lists.lots.dedup_by(|a, b| a.code == b.code);
    lists.sites = store
        .sites()?
        .into_iter()
        .map(|s| PickItem::new(s.code.clone(), format!("{} ({})", s.name, s.code)))
        .collect();
    lists.benches = store.bench_codes()?;
    Ok(lists)
}

impl App {
    /// The bench calculator alone, with no database (tests, and a bench without records).
    pub fn new(db: &Path) -> Self {
        App {
            db_path: db.to_path_buf(),
            store: None,
            fleet: None,
            lists: Lists::default(),
            actor: "analyst".to_string(),
            name_entry: None,
            name_to_keep: None,
            duplicate_confirmed: false,
            home: None,
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
            materials: materials::MaterialsState::default(),
            lookups: lookups::LookupsState::default(),
            log_filter_before_review: None,
            width: 80,
            height: 24,
        }
    }

    /// Open the interface on the database at `db` (created if it does not exist); `actor` is
    /// who the audit log records as the author of changes.
    pub fn open(db: &Path, actor: &str) -> anyhow::Result<Self> {
        let store = Store::open(db)?;
        let mut app = App::with_store(store, db)?;
        app.actor = shardlog_core::text::sanitize_for_terminal(actor.trim(), false);
        Ok(app)
    }

    /// The interface over an open store; the log is the top screen.
    pub fn with_store(store: Store, db: &Path) -> anyhow::Result<Self> {
        let mut app = App::new(db);
        app.lists = load_lists(&store)?;
        app.bench.set_materials(store.material_book()?);
        app.log.reload(&store)?;
        app.store = Some(store);
        app.stack = vec![Screen::Log];
        Ok(app)
    }

    /// Open the interface on the fleet database at the URL `db`, read only.
    pub fn open_fleet(db: &Path) -> anyhow::Result<Self> {
        let fleet = crate::store::open_reports(db, None)?;
        App::with_fleet(fleet, db)
    }

    /// The interface over the fleet's records (read only); the log is the top screen.
    pub fn with_fleet(fleet: Box<dyn ReportSource>, db: &Path) -> anyhow::Result<Self> {
        let mut app = App::new(db);
        app.lists = lists_from(fleet.as_ref())?;
        // the benches' own materials, as they pushed them: analyses show as at the bench
        app.bench.set_materials(fleet.material_book()?);
        app.log.reload(fleet.as_ref())?;
        app.review.by_bench = true;
        app.fleet = Some(fleet);
        app.stack = vec![Screen::Log];
        Ok(app)
    }

    /// Whether the records are the fleet database's (read only: edits are made at the
    /// owning bench).
    pub fn on_fleet(&self) -> bool {
        self.fleet.is_some()
    }

    /// The records the screens read, if any are open.
    pub fn records(&self) -> Option<&dyn RecordSource> {
        read_side(&self.store, &self.fleet)
    }

    /// Ask for the analyst's name before anything else (first use); `suggestion` (e.g. the
    /// login name) is shown and replaced by typing.
    pub fn ask_name(&mut self, suggestion: Option<&str>) {
        let mut f = Field::new(
            "analyst_name",
            "Your name",
            field::FieldKind::Text { required: true },
        )
        .with_hint("as the history and the readings should show it");
        if let Some(s) = suggestion.map(str::trim).filter(|s| !s.is_empty()) {
            f.suggest(s);
        }
        self.name_entry = Some(f);
    }

    /// Whether the open database can only be read (the file or its folder is not writable).
    pub fn read_only(&self) -> bool {
        self.on_fleet() || self.store.as_ref().is_some_and(|s| s.is_read_only())
    }

    pub fn screen(&self) -> Screen {
        *self.stack.last().unwrap_or(&Screen::Bench)
    }

    pub fn at_top(&self) -> bool {
        self.stack.len() <= 1
    }

    /// The key context for the current focus.
    pub fn ctx(&self) -> Ctx {
        if self.name_entry.is_some() {
            return Ctx::Name;
        }
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
            Screen::Materials => self
                .materials
                .form
                .as_ref()
                .map(|f| f.form.ctx())
                .unwrap_or(Ctx::Materials),
            Screen::Lookups => Ctx::Lookups,
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
                    Some(n) if self.log.more_than_total => {
                        format!("more than {} incidents match", group_thousands(n))
                    }
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
                let fleet = if self.on_fleet() { "fleet · " } else { "" };
                format!(
                    "{fleet}{total}{rows} · sort: {}{filt}",
                    self.log.sort_label()
                )
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
                Some(t) if self.on_fleet() => format!(
                    "bench calculator for {} · read-only fleet: saves nothing",
                    t.reference
                ),
                None if self.on_fleet() => {
                    "bench calculator: nothing is saved on the fleet (read-only)".to_string()
                }
                Some(t) => format!(
                    "bench calculator for {} · Ctrl-S saves into it",
                    t.reference
                ),
                None => "bench calculator: no incident open (open one and press b to save into it)"
                    .to_string(),
            },
            Screen::Review => self.review.status_line(),
            Screen::Materials if self.materials.form.is_some() => {
                "type each constant with its unit, ± spread · Ctrl-S saves · Esc leaves the form"
                    .to_string()
            }
            Screen::Materials => format!(
                "{} materials · library read-only (c copies) · own: e edits",
                self.materials.rows.len()
            ),
            Screen::Lookups => format!(
                "{} · {} entries · codes never change; retired ones stay on old records",
                self.lookups.title(),
                self.lookups.entries.len()
            ),
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
            Screen::Bench => {
                self.bench_target.is_some() && self.bench.form.is_dirty() && !self.on_fleet()
            }
            Screen::Materials => self.materials.is_dirty(),
            _ => false,
        }
    }

    /// Who acts and when: the one place the app reads the clock.
    fn stamp(&self) -> Stamp {
        Stamp::new(self.actor.clone(), chrono::Utc::now())
    }

    /// Work left for after a frame is drawn (the log's count over a large table). Returns
    /// true when the screen should be drawn again.
    pub fn after_draw(&mut self) -> bool {
        if !self.log.count_pending {
            return false;
        }
        let Some(store) = read_side(&self.store, &self.fleet) else {
            self.log.count_pending = false;
            return false;
        };
        let r = self.log.count(store);
        self.log.count_pending = false;
        self.report(r);
        true
    }
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
