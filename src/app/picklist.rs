//! A pick-list with type-to-narrow: the user types, the list keeps only the items whose
//! code or label contains every typed word (case-insensitive), Up/Down move, Enter picks.

use super::key::{Key, KeyPress};

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PickItem {
    /// Stored value (a code or an id).
    pub code: String,
    /// What the user reads.
    pub label: String,
}

impl PickItem {
    pub fn new(code: impl Into<String>, label: impl Into<String>) -> Self {
        PickItem {
            code: code.into(),
            label: label.into(),
        }
    }
}

#[derive(Debug, Clone, Default)]
pub struct PickList {
    pub key: &'static str,
    pub label: &'static str,
    items: Vec<PickItem>,
    filter: String,
    /// Indices into `items` that match the filter.
    matches: Vec<usize>,
    /// Position within `matches`.
    cursor: usize,
    /// The picked item (index into `items`).
    chosen: Option<usize>,
    /// Whether an empty choice is allowed.
    pub optional: bool,
    /// Whether Enter on a filter that matches nothing exactly takes the typed text as a new
    /// code (asset numbers, lots).
    pub allow_new: bool,
    dirty: bool,
}

impl PickList {
    pub fn new(key: &'static str, label: &'static str, items: Vec<PickItem>) -> Self {
        let mut p = PickList {
            key,
            label,
            items,
            optional: true,
            ..Default::default()
        };
        p.refilter();
        p
    }

    pub fn open_ended(mut self) -> Self {
        self.allow_new = true;
        self
    }

    pub fn required(mut self) -> Self {
        self.optional = false;
        self
    }

    /// Pre-select the item with this code (no-op if absent).
    pub fn with_choice(mut self, code: &str) -> Self {
        self.choose_code(code);
        self.dirty = false;
        self
    }

    pub fn choose_code(&mut self, code: &str) {
        self.chosen = self.items.iter().position(|i| i.code == code);
        if let Some(c) = self.chosen {
            if let Some(pos) = self.matches.iter().position(|&m| m == c) {
                self.cursor = pos;
            }
        }
        self.dirty = true;
    }

    pub fn set_items(&mut self, items: Vec<PickItem>) {
        let code = self.chosen_item().map(|i| i.code.clone());
        self.items = items;
        self.chosen = code.and_then(|c| self.items.iter().position(|i| i.code == c));
        self.refilter();
    }

    pub fn items(&self) -> &[PickItem] {
        &self.items
    }

    pub fn filter(&self) -> &str {
        &self.filter
    }

    /// The items that match the filter, in order.
    pub fn visible(&self) -> impl Iterator<Item = &PickItem> {
        self.matches.iter().map(|&i| &self.items[i])
    }

    pub fn match_count(&self) -> usize {
        self.matches.len()
    }

    pub fn cursor(&self) -> usize {
        self.cursor
    }

    pub fn highlighted(&self) -> Option<&PickItem> {
        self.matches.get(self.cursor).map(|&i| &self.items[i])
    }

    pub fn chosen_item(&self) -> Option<&PickItem> {
        self.chosen.map(|i| &self.items[i])
    }

    pub fn chosen_code(&self) -> Option<&str> {
        self.chosen_item().map(|i| i.code.as_str())
    }

    pub fn is_dirty(&self) -> bool {
        self.dirty
    }

    pub fn mark_clean(&mut self) {
        self.dirty = false;
    }

    pub fn error(&self) -> Option<&str> {
        if !self.optional && self.chosen.is_none() {
            Some("pick one: type to narrow, Enter to choose")
        } else {
            None
        }
    }

    pub fn up(&mut self) {
        self.cursor = self.cursor.saturating_sub(1);
    }

    pub fn down(&mut self) {
        if self.cursor + 1 < self.matches.len() {
            self.cursor += 1;
        }
    }

    /// Take the highlighted item (or, for an open-ended list, the typed text when nothing
    /// matches it). Returns true when something was chosen.
    pub fn confirm(&mut self) -> bool {
        let typed = self.filter.trim().to_string();
        if self.allow_new && !typed.is_empty() && self.matches.is_empty() {
            // a new code: offer it first in the list so it can be seen and chosen
            let clean = shardlog_core::text::sanitize_for_terminal(&typed, false);
            self.items
                .push(PickItem::new(clean.clone(), format!("{clean} (new)")));
            self.chosen = Some(self.items.len() - 1);
            self.filter.clear();
            self.refilter();
            self.dirty = true;
            return true;
        }
        match self.matches.get(self.cursor) {
            Some(&i) => {
                self.chosen = Some(i);
                self.filter.clear();
                self.refilter();
                if let Some(pos) = self.matches.iter().position(|&m| m == i) {
                    self.cursor = pos;
                }
                self.dirty = true;
                true
            }
            None => false,
        }
    }

    pub fn clear_choice(&mut self) {
        if self.chosen.take().is_some() {
            self.dirty = true;
        }
    }

    /// Typing narrows; Backspace widens; Up/Down move. Returns true when handled.
    pub fn input(&mut self, input: KeyPress) -> bool {
        match input.key {
            Key::Char(c) if !input.ctrl && !input.alt && !c.is_control() => {
                self.filter.push(c);
                self.refilter();
                true
            }
            Key::Backspace => {
                if self.filter.pop().is_none() && self.optional {
                    self.clear_choice();
                }
                self.refilter();
                true
            }
            Key::Up => {
                self.up();
                true
            }
            Key::Down => {
                self.down();
                true
            }
            _ => false,
        }
    }

    fn refilter(&mut self) {
        let words: Vec<String> = self
            .filter
            .split_whitespace()
            .map(str::to_lowercase)
            .collect();
        self.matches = self
            .items
            .iter()
            .enumerate()
            .filter(|(_, it)| {
                let hay = format!("{} {}", it.code, it.label).to_lowercase();
                words.iter().all(|w| hay.contains(w.as_str()))
            })
            .map(|(i, _)| i)
            .collect();
        self.cursor = self.cursor.min(self.matches.len().saturating_sub(1));
        if self.filter.is_empty() {
            if let Some(c) = self.chosen {
                if let Some(pos) = self.matches.iter().position(|&m| m == c) {
                    self.cursor = pos;
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ch(c: char) -> KeyPress {
        KeyPress::char(c)
    }

    #[test]
    fn typing_narrows_and_enter_picks() {
        let mut p = PickList::new(
            "supplier",
            "Supplier",
            vec![
                PickItem::new("s1", "Northwind Glazing"),
                PickItem::new("s2", "Brightpane Ltd"),
                PickItem::new("s3", "Zürich Flachglas"),
            ],
        );
        assert_eq!(p.match_count(), 3);
        for c in "zür".chars() {
            p.input(ch(c));
        }
        assert_eq!(p.match_count(), 1);
        assert!(p.confirm());
        assert_eq!(p.chosen_code(), Some("s3"));
        assert_eq!(p.filter(), "");
        for c in "nothing".chars() {
            p.input(ch(c));
        }
        assert_eq!(p.match_count(), 0);
        assert!(!p.confirm());
        assert_eq!(p.chosen_code(), Some("s3"));
    }
}
