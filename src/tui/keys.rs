//! The one key table. Every binding is declared here once with its description; key
//! dispatch, the footer and the help overlay all read this table, so help cannot drift
//! from the keys that really work.

use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};

use crate::app::{Action, Ctx, Key, KeyPress};

/// One key: a code and the Ctrl/Alt modifiers that must be held.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct K {
    pub code: KeyCode,
    pub mods: KeyModifiers,
}

const fn k(code: KeyCode) -> K {
    K {
        code,
        mods: KeyModifiers::NONE,
    }
}

const fn c(ch: char) -> K {
    k(KeyCode::Char(ch))
}

const fn ctrl(ch: char) -> K {
    K {
        code: KeyCode::Char(ch),
        mods: KeyModifiers::CONTROL,
    }
}

/// One binding: in which contexts, which keys, what it is called, what it does.
#[derive(Debug)]
pub struct Binding {
    pub ctxs: &'static [Ctx],
    pub keys: &'static [K],
    /// The keys as the footer and help show them.
    pub label: &'static str,
    pub desc: &'static str,
    pub action: Action,
    /// Shown in the one-line footer (the most useful keys only).
    pub footer: bool,
}

use Ctx::*;

const TEXT: &[Ctx] = &[Field, MultiField, Pick];
const LISTS: &[Ctx] = &[Global, Help];

/// The table. Order matters: the first binding that matches wins, and the footer and
/// help list bindings in this order.
pub static TABLE: &[Binding] = &[
    // --- prompt ---
    Binding {
        ctxs: &[Prompt],
        keys: &[c('y'), c('Y')],
        label: "y",
        desc: "yes: leave, quit or save, as the question asks",
        action: Action::Yes,
        footer: true,
    },
    Binding {
        ctxs: &[Prompt],
        keys: &[c('n'), c('N'), k(KeyCode::Esc)],
        label: "n/Esc",
        desc: "no, stay and keep editing",
        action: Action::No,
        footer: true,
    },
    // --- forms (text fields and pick-lists) ---
    Binding {
        ctxs: TEXT,
        keys: &[k(KeyCode::Tab)],
        label: "Tab",
        desc: "next field",
        action: Action::NextField,
        footer: true,
    },
    Binding {
        ctxs: TEXT,
        keys: &[k(KeyCode::BackTab)],
        label: "S-Tab",
        desc: "previous field",
        action: Action::PrevField,
        footer: false,
    },
    Binding {
        ctxs: &[Field],
        keys: &[k(KeyCode::Up)],
        label: "↑",
        desc: "previous field",
        action: Action::PrevField,
        footer: false,
    },
    Binding {
        ctxs: &[Field],
        keys: &[k(KeyCode::Down)],
        label: "↓",
        desc: "next field",
        action: Action::NextField,
        footer: false,
    },
    Binding {
        ctxs: &[Pick],
        keys: &[k(KeyCode::Up)],
        label: "↑",
        desc: "move up the list",
        action: Action::Up,
        footer: false,
    },
    Binding {
        ctxs: &[Pick],
        keys: &[k(KeyCode::Down)],
        label: "↓",
        desc: "move down the list (type to narrow it)",
        action: Action::Down,
        footer: false,
    },
    Binding {
        ctxs: &[Pick],
        keys: &[k(KeyCode::Enter)],
        label: "Enter",
        desc: "choose the highlighted item",
        action: Action::Confirm,
        footer: true,
    },
    Binding {
        ctxs: &[Field],
        keys: &[k(KeyCode::Enter)],
        label: "Enter",
        desc: "next field",
        action: Action::NextField,
        footer: false,
    },
    Binding {
        ctxs: TEXT,
        keys: &[ctrl('s')],
        label: "C-s",
        desc: "save",
        action: Action::Save,
        footer: true,
    },
    Binding {
        ctxs: TEXT,
        keys: &[k(KeyCode::PageUp)],
        label: "PgUp",
        desc: "scroll the results or details up",
        action: Action::PageUp,
        footer: false,
    },
    Binding {
        ctxs: TEXT,
        keys: &[k(KeyCode::PageDown)],
        label: "PgDn",
        desc: "scroll the results or details down",
        action: Action::PageDown,
        footer: false,
    },
    Binding {
        ctxs: TEXT,
        keys: &[k(KeyCode::F(2))],
        label: "F2",
        desc: "hypothesis (bench): go to its inputs, again to the readings",
        action: Action::JumpHypothesis,
        footer: true,
    },
    // --- help overlay ---
    Binding {
        ctxs: &[Help],
        keys: &[k(KeyCode::Up), c('k')],
        label: "↑/k",
        desc: "scroll up",
        action: Action::Up,
        footer: false,
    },
    Binding {
        ctxs: &[Help],
        keys: &[k(KeyCode::Down), c('j')],
        label: "↓/j",
        desc: "scroll down",
        action: Action::Down,
        footer: false,
    },
    // --- lists and screens ---
    Binding {
        ctxs: &[Global],
        keys: &[k(KeyCode::Up), c('k')],
        label: "↑/k",
        desc: "move up",
        action: Action::Up,
        footer: false,
    },
    Binding {
        ctxs: &[Global],
        keys: &[k(KeyCode::Down), c('j')],
        label: "↓/j",
        desc: "move down",
        action: Action::Down,
        footer: false,
    },
    Binding {
        ctxs: LISTS,
        keys: &[k(KeyCode::PageUp)],
        label: "PgUp",
        desc: "page up",
        action: Action::PageUp,
        footer: false,
    },
    Binding {
        ctxs: LISTS,
        keys: &[k(KeyCode::PageDown)],
        label: "PgDn",
        desc: "page down",
        action: Action::PageDown,
        footer: false,
    },
    Binding {
        ctxs: LISTS,
        keys: &[k(KeyCode::Home), c('g')],
        label: "Home/g",
        desc: "first",
        action: Action::Home,
        footer: false,
    },
    Binding {
        ctxs: LISTS,
        keys: &[k(KeyCode::End), c('G')],
        label: "End/G",
        desc: "last",
        action: Action::End,
        footer: false,
    },
    // --- the log ---
    Binding {
        ctxs: &[Log],
        keys: &[k(KeyCode::Enter), k(KeyCode::Right), c('l')],
        label: "Enter/→",
        desc: "open the incident",
        action: Action::Confirm,
        footer: true,
    },
    Binding {
        ctxs: &[Log],
        keys: &[c('n')],
        label: "n",
        desc: "new incident",
        action: Action::NewIncident,
        footer: true,
    },
    Binding {
        ctxs: &[Log],
        keys: &[c('/')],
        label: "/",
        desc: "search text",
        action: Action::Search,
        footer: true,
    },
    Binding {
        ctxs: &[Log],
        keys: &[c('f')],
        label: "f",
        desc: "filter: status, cause, origin type, supplier, lot, site, dates",
        action: Action::Filter,
        footer: true,
    },
    Binding {
        ctxs: &[Log],
        keys: &[c('B')],
        label: "B",
        desc: "bench: one bench's incidents, or every bench's",
        action: Action::FilterBench,
        footer: true,
    },
    Binding {
        ctxs: &[Log],
        keys: &[c('x')],
        label: "x",
        desc: "clear filters and search",
        action: Action::ClearFilter,
        footer: false,
    },
    Binding {
        ctxs: &[Log],
        keys: &[c('s')],
        label: "s",
        desc: "sort by the next column (date, reference, stress, status)",
        action: Action::SortNext,
        footer: true,
    },
    Binding {
        ctxs: &[Log],
        keys: &[c('S')],
        label: "S",
        desc: "reverse the sort",
        action: Action::SortReverse,
        footer: false,
    },
    Binding {
        ctxs: &[Log],
        keys: &[c('r')],
        label: "r",
        desc: "fleet review: causes, months, stress, Weibull, rates",
        action: Action::OpenReview,
        footer: true,
    },
    Binding {
        ctxs: &[Log],
        keys: &[c('m')],
        label: "m",
        desc: "materials: the library and the lab's own (add, copy, edit)",
        action: Action::OpenMaterials,
        footer: false,
    },
    // --- materials ---
    Binding {
        ctxs: &[Materials],
        keys: &[k(KeyCode::Enter), c('e')],
        label: "e/Enter",
        desc: "edit (own only)",
        action: Action::Edit,
        footer: true,
    },
    Binding {
        ctxs: &[Materials],
        keys: &[c('c')],
        label: "c",
        desc: "copy into an own one",
        action: Action::CopyMaterial,
        footer: true,
    },
    Binding {
        ctxs: &[Materials],
        keys: &[c('a')],
        label: "a",
        desc: "new own",
        action: Action::AddMaterial,
        footer: true,
    },
    // --- the fleet review ---
    Binding {
        ctxs: &[Review],
        keys: &[k(KeyCode::Enter)],
        label: "Enter",
        desc: "open in the log: the incidents of the highlighted bar or group",
        action: Action::Confirm,
        footer: true,
    },
    Binding {
        ctxs: &[Review],
        keys: &[k(KeyCode::Tab), k(KeyCode::Right), c('l')],
        label: "Tab/→",
        desc: "next panel: causes, months, stress, Weibull, groups, heat-soak",
        action: Action::NextSection,
        footer: true,
    },
    Binding {
        ctxs: &[Review],
        keys: &[k(KeyCode::BackTab), k(KeyCode::Left), c('h')],
        label: "S-Tab/←",
        desc: "previous panel",
        action: Action::PrevSection,
        footer: false,
    },
    Binding {
        ctxs: &[Review],
        keys: &[c('1')],
        label: "1",
        desc: "group by: cause, bench (fleet), supplier, lot, site, origin, month, season",
        action: Action::GroupFirst,
        footer: true,
    },
    Binding {
        ctxs: &[Review],
        keys: &[c('2')],
        label: "2",
        desc: "second grouping key (none, then each other key)",
        action: Action::GroupSecond,
        footer: false,
    },
    Binding {
        ctxs: &[Review],
        keys: &[c('w')],
        label: "w",
        desc: "window: last 12 months or all records",
        action: Action::NextWindow,
        footer: true,
    },
    Binding {
        ctxs: &[Review],
        keys: &[c('x')],
        label: "x",
        desc: "enter exposure: panes in service of a supplier, product, lot, site",
        action: Action::AddExposure,
        footer: true,
    },
    Binding {
        ctxs: &[Review],
        keys: &[c('g')],
        label: "g",
        desc: "per month: the whole fleet or the group highlighted on Groups",
        action: Action::ToggleGroupMonths,
        footer: false,
    },
    Binding {
        ctxs: &[Review],
        keys: &[c('L')],
        label: "L",
        desc: "the lab's lookup lists: add, rename, retire, restore",
        action: Action::OpenLookups,
        footer: false,
    },
    // --- the lookup lists ---
    Binding {
        ctxs: &[Lookups],
        keys: &[c('a')],
        label: "a",
        desc: "add an entry to the list shown (its code is kept for good)",
        action: Action::AddEntry,
        footer: true,
    },
    Binding {
        ctxs: &[Lookups],
        keys: &[c('e'), k(KeyCode::Enter)],
        label: "e/Enter",
        desc: "rename the highlighted entry (the label; the code stays)",
        action: Action::Edit,
        footer: true,
    },
    Binding {
        ctxs: &[Lookups],
        keys: &[c('r')],
        label: "r",
        desc: "retire the highlighted entry (hidden from pick-lists), or restore it",
        action: Action::RetireOrRestore,
        footer: true,
    },
    Binding {
        ctxs: &[Lookups],
        keys: &[k(KeyCode::Tab), k(KeyCode::Right), c('l')],
        label: "Tab/→",
        desc: "next list (causes, origin types, custody events, statuses)",
        action: Action::NextSection,
        footer: true,
    },
    Binding {
        ctxs: &[Lookups],
        keys: &[k(KeyCode::BackTab), k(KeyCode::Left), c('h')],
        label: "S-Tab/←",
        desc: "previous list",
        action: Action::PrevSection,
        footer: false,
    },
    // --- the search line ---
    Binding {
        ctxs: &[Search],
        keys: &[k(KeyCode::Enter)],
        label: "Enter",
        desc: "search",
        action: Action::Confirm,
        footer: true,
    },
    Binding {
        ctxs: &[Search],
        keys: &[k(KeyCode::Esc)],
        label: "Esc",
        desc: "cancel the search",
        action: Action::Back,
        footer: true,
    },
    // --- the analyst's name, asked on first use ---
    Binding {
        ctxs: &[Name],
        keys: &[k(KeyCode::Enter)],
        label: "Enter",
        desc: "use this name for the history and the readings",
        action: Action::Confirm,
        footer: true,
    },
    // --- one incident ---
    Binding {
        ctxs: &[Incident],
        keys: &[k(KeyCode::Tab), k(KeyCode::Right), c('l')],
        label: "Tab/→",
        desc: "next section",
        action: Action::NextSection,
        footer: true,
    },
    Binding {
        ctxs: &[Incident],
        keys: &[k(KeyCode::BackTab), k(KeyCode::Left), c('h')],
        label: "S-Tab/←",
        desc: "previous section",
        action: Action::PrevSection,
        footer: false,
    },
    Binding {
        ctxs: &[Incident],
        keys: &[c('e'), k(KeyCode::Enter)],
        label: "e/Enter",
        desc: "edit this section",
        action: Action::Edit,
        footer: true,
    },
    Binding {
        ctxs: &[Incident],
        keys: &[c('a')],
        label: "a",
        desc: "attach a file (photo, micrograph) by its path",
        action: Action::Attach,
        footer: true,
    },
    Binding {
        ctxs: &[Incident],
        keys: &[c('c')],
        label: "c",
        desc: "add a specimen custody entry",
        action: Action::AddCustody,
        footer: true,
    },
    Binding {
        ctxs: &[Incident],
        keys: &[c('v')],
        label: "v",
        desc: "History: restore the highlighted revision (written as a new change)",
        action: Action::Revert,
        footer: false,
    },
    Binding {
        ctxs: &[Incident, Log],
        keys: &[c('b')],
        label: "b",
        desc: "bench calculator (for this incident when one is open)",
        action: Action::OpenBench,
        footer: true,
    },
    // --- everywhere ---
    Binding {
        ctxs: &[Global, Help],
        keys: &[c('?')],
        label: "?",
        desc: "help: keys of this screen, cautions",
        action: Action::ToggleHelp,
        footer: true,
    },
    Binding {
        ctxs: TEXT,
        keys: &[k(KeyCode::F(1))],
        label: "F1",
        desc: "help: keys of this screen, cautions",
        action: Action::ToggleHelp,
        footer: true,
    },
    Binding {
        ctxs: &[Global, Help],
        keys: &[k(KeyCode::F(1))],
        label: "F1",
        desc: "help: keys of this screen, cautions",
        action: Action::ToggleHelp,
        footer: false,
    },
    Binding {
        ctxs: &[Global, Help, Field, MultiField, Pick],
        keys: &[k(KeyCode::Esc)],
        label: "Esc",
        desc: "back (asks first if there are unsaved changes)",
        action: Action::Back,
        footer: true,
    },
    Binding {
        ctxs: &[Global, Help],
        keys: &[c('q')],
        label: "q",
        desc: "quit (from the log; elsewhere: back)",
        action: Action::Quit,
        footer: true,
    },
    Binding {
        ctxs: &[Global, Help, Field, MultiField, Pick, Prompt, Search, Name],
        keys: &[ctrl('c')],
        label: "C-c",
        desc: "quit from any screen (asks first if there are unsaved changes)",
        action: Action::QuitAll,
        footer: false,
    },
];

/// Mouse handling, listed in help beside the table (the wheel is not a key).
pub const MOUSE_HELP: (&str, &str) = ("wheel", "scroll the list or text under view");

fn normalize(ev: &KeyEvent) -> K {
    // Shift is part of the character (or of BackTab); only Ctrl and Alt must match.
    let mods = ev.modifiers & (KeyModifiers::CONTROL | KeyModifiers::ALT);
    K {
        code: ev.code,
        mods,
    }
}

/// The binding that a key press triggers in `ctx`, if any.
pub fn lookup(ctx: Ctx, ev: &KeyEvent) -> Option<&'static Binding> {
    let key = normalize(ev);
    TABLE
        .iter()
        .find(|b| b.ctxs.contains(&ctx) && b.keys.contains(&key))
        .or_else(|| {
            if ctx.has_global() {
                TABLE
                    .iter()
                    .find(|b| b.ctxs.contains(&Ctx::Global) && b.keys.contains(&key))
            } else {
                None
            }
        })
}

/// Turn a key press into an action for the current context.
pub fn action_for(ctx: Ctx, ev: &KeyEvent) -> Option<Action> {
    if let Some(b) = lookup(ctx, ev) {
        return Some(b.action.clone());
    }
    if ctx.takes_text() {
        return Some(Action::Input(key_press(ev)));
    }
    None
}

/// The app's key press for a terminal key event.
pub fn key_press(ev: &KeyEvent) -> KeyPress {
    let key = match ev.code {
        KeyCode::Char(c) => Key::Char(c),
        KeyCode::F(n) => Key::Function(n),
        KeyCode::Enter => Key::Enter,
        KeyCode::Backspace => Key::Backspace,
        KeyCode::Delete => Key::Delete,
        KeyCode::Left => Key::Left,
        KeyCode::Right => Key::Right,
        KeyCode::Up => Key::Up,
        KeyCode::Down => Key::Down,
        KeyCode::Home => Key::Home,
        KeyCode::End => Key::End,
        KeyCode::PageUp => Key::PageUp,
        KeyCode::PageDown => Key::PageDown,
        KeyCode::Tab => Key::Tab,
        KeyCode::BackTab => Key::BackTab,
        KeyCode::Esc => Key::Esc,
        _ => Key::Other,
    };
    KeyPress {
        key,
        ctrl: ev.modifiers.contains(KeyModifiers::CONTROL),
        alt: ev.modifiers.contains(KeyModifiers::ALT),
        shift: ev.modifiers.contains(KeyModifiers::SHIFT),
    }
}

/// The bindings active in `ctx`, in table order, for the help overlay.
pub fn bindings_for(ctx: Ctx) -> Vec<&'static Binding> {
    let mut out: Vec<&'static Binding> = TABLE.iter().filter(|b| b.ctxs.contains(&ctx)).collect();
    if ctx.has_global() && ctx != Ctx::Global {
        // shared keys, unless this screen gives every one of their keys another meaning
        let shadowed = |k: &K| out_keys(ctx).contains(k);
        out.extend(TABLE.iter().filter(|b| {
            b.ctxs.contains(&Ctx::Global) && !b.ctxs.contains(&ctx) && !b.keys.iter().all(shadowed)
        }));
    }
    out
}

fn out_keys(ctx: Ctx) -> Vec<K> {
    TABLE
        .iter()
        .filter(|b| b.ctxs.contains(&ctx))
        .flat_map(|b| b.keys.iter().copied())
        .collect()
}

/// Whether a binding does something on `screen` (the text keys are shared by every form;
/// F2 only works in the bench calculator).
pub fn works_on(b: &Binding, app: &crate::app::App) -> bool {
    match b.action {
        Action::JumpHypothesis => app.screen() == crate::app::Screen::Bench,
        // a bench file holds its own bench's incidents only
        Action::FilterBench => app.on_fleet(),
        _ => true,
    }
}

/// Whether the footer leaves the binding out on the fleet database, where it would change
/// the records (the key still answers, saying where the edit is made; help lists it).
pub fn edits_records(b: &Binding, app: &crate::app::App) -> bool {
    use crate::app::Screen;
    match b.action {
        Action::NewIncident
        | Action::Attach
        | Action::AddCustody
        | Action::Revert
        | Action::AddExposure
        | Action::AddEntry
        | Action::RetireOrRestore
        | Action::AddMaterial
        | Action::CopyMaterial => true,
        Action::Edit => matches!(
            app.screen(),
            Screen::Incident | Screen::Lookups | Screen::Materials
        ),
        Action::Save => app.screen() == Screen::Bench,
        _ => false,
    }
}

/// The footer entries for `ctx`.
pub fn footer_for(ctx: Ctx) -> Vec<&'static Binding> {
    bindings_for(ctx).into_iter().filter(|b| b.footer).collect()
}
