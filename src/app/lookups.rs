//! The lookup lists a lab keeps itself (causes, origin types, custody events, statuses),
//! one list at a time: add an entry, give one a new label, retire or restore it. The store
//! audits every change; this holds only what the screen shows.

use crate::store::model::{LookupEntry, LookupKind};
use crate::store::{RecordSource, StoreError};

/// The lists the screen offers, in the order Tab walks them, with their titles.
pub const LISTS: [(LookupKind, &str); 5] = [
    (LookupKind::CauseCategory, "Causes"),
    (LookupKind::OriginType, "Origin types"),
    (LookupKind::CustodyAction, "Custody events"),
    (LookupKind::Status, "Statuses"),
    (LookupKind::ViewingMode, "Viewing modes"),
];

#[derive(Debug, Default)]
pub struct LookupsState {
    /// Which of [`LISTS`] is shown.
    pub list: usize,
    /// The entries of that list, retired ones included (marked).
    pub entries: Vec<LookupEntry>,
    /// The highlighted entry.
    pub cursor: usize,
}

impl LookupsState {
    pub fn kind(&self) -> LookupKind {
        LISTS[self.list % LISTS.len()].0
    }

    pub fn title(&self) -> &'static str {
        LISTS[self.list % LISTS.len()].1
    }

    /// Read the shown list again, keeping the highlight on the same code when it is still there.
    pub fn load(&mut self, store: &dyn RecordSource) -> Result<(), StoreError> {
        let keep = self.selected().map(|e| e.code.clone());
        self.entries = store.lookups(self.kind())?;
        self.cursor = keep
            .and_then(|c| self.entries.iter().position(|e| e.code == c))
            .unwrap_or(self.cursor)
            .min(self.entries.len().saturating_sub(1));
        Ok(())
    }

    /// Show the next (or previous) list.
    pub fn switch(&mut self, store: &dyn RecordSource, forward: bool) -> Result<(), StoreError> {
        let n = LISTS.len();
        self.list = if forward {
            (self.list + 1) % n
        } else {
            (self.list + n - 1) % n
        };
        self.entries.clear();
        self.cursor = 0;
        self.load(store)
    }

    pub fn selected(&self) -> Option<&LookupEntry> {
        self.entries.get(self.cursor)
    }

    pub fn move_by(&mut self, delta: i64) {
        let last = self.entries.len().saturating_sub(1) as i64;
        self.cursor = (self.cursor as i64 + delta).clamp(0, last.max(0)) as usize;
    }

    /// Select the entry with `code`, when the list holds it.
    pub fn select_code(&mut self, code: &str) {
        if let Some(i) = self.entries.iter().position(|e| e.code == code) {
            self.cursor = i;
        }
    }
}
