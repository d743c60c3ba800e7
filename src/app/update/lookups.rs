//! The lookup lists screen: moving, switching lists, and the changes (add, rename, retire,
//! restore), each written by the store with its audit row.

use crate::app::field::{Field, FieldKind};
use crate::app::form::Form;
use crate::app::incident::{EditKind, EditState};
use crate::app::{Action, App, Screen};

impl App {
    /// Open the lookup lists (from the log).
    pub fn open_lookups(&mut self) {
        let Some(store) = crate::app::read_side(&self.store, &self.fleet) else {
            self.error("no database is open: the lookup lists live in it");
            return;
        };
        let r = self.lookups.load(store);
        if self.report(r).is_some() {
            self.stack.push(Screen::Lookups);
        }
    }

    pub(super) fn update_lookups(&mut self, action: Action) {
        let page = self.height.saturating_sub(8).max(1) as i64;
        match action {
            Action::Down | Action::ScrollDown => self.lookups.move_by(1),
            Action::Up | Action::ScrollUp => self.lookups.move_by(-1),
            Action::PageDown => self.lookups.move_by(page),
            Action::PageUp => self.lookups.move_by(-page),
            Action::Home => self.lookups.cursor = 0,
            Action::End => self.lookups.move_by(i64::MAX / 2),
            Action::NextSection | Action::PrevSection => {
                if let Some(store) = crate::app::read_side(&self.store, &self.fleet) {
                    let r = self.lookups.switch(store, action == Action::NextSection);
                    self.report(r);
                }
            }
            Action::AddEntry => self.open_lookup_form(None),
            Action::Edit | Action::Confirm => match self.lookups.selected() {
                Some(e) => {
                    let label = e.label.clone();
                    self.open_lookup_form(Some(&label));
                }
                None => self.error("the list is empty: a adds an entry"),
            },
            Action::RetireOrRestore => self.retire_or_restore(),
            _ => {}
        }
    }

    /// The form that adds an entry (`current` None) or renames the highlighted one.
    fn open_lookup_form(&mut self, current: Option<&str>) {
        if self.read_only() {
            self.error("the database is read-only: the lists cannot be changed");
            return;
        }
        let kind = self.lookups.kind();
        let mut form = Form::default();
        let edit_kind = match current {
            None => {
                form.push_field(
                    Field::new("code", "Code", FieldKind::Text { required: true })
                        .with_hint("kept for good: lower case, digits and _"),
                );
                form.push_field(
                    Field::new("label", "Label", FieldKind::Text { required: true })
                        .with_hint("what pick-lists and reports show"),
                );
                EditKind::LookupAdd(kind)
            }
            Some(label) => {
                form.push_field(
                    Field::new("label", "Label", FieldKind::Text { required: true })
                        .with_hint("the code, and the records that hold it, stay")
                        .with_text(label),
                );
                EditKind::LookupRename(kind)
            }
        };
        form.mark_clean();
        self.edit = Some(EditState {
            kind: edit_kind,
            form,
            base: None,
            conflict: false,
        });
        self.stack.push(Screen::Edit);
    }

    /// Save the add or rename form; the list and every pick-list are read again.
    pub(super) fn save_lookup_edit(&mut self) {
        let Some(edit) = self.edit.as_ref() else {
            return;
        };
        if let Some((i, e)) = edit.form.first_error() {
            if let Some(edit) = self.edit.as_mut() {
                edit.form.focus = i;
            }
            self.error(format!("not saved: {e}"));
            return;
        }
        let stamp = self.stamp();
        let label = edit.form.text("label").trim().to_string();
        let code = edit.form.text("code").trim().to_string();
        let selected = self.lookups.selected().map(|e| e.code.clone());
        let Some(store) = self.store.as_mut() else {
            self.error("no database is open");
            return;
        };
        let r = match edit.kind {
            EditKind::LookupAdd(kind) => store
                .add_lookup(kind, &code, &label, &stamp)
                .map(|e| ("added", e)),
            EditKind::LookupRename(kind) => {
                let Some(code) = selected else {
                    return;
                };
                store
                    .rename_lookup(kind, &code, &label, &stamp)
                    .map(|e| ("renamed", e))
            }
            _ => return,
        };
        match r {
            Ok((verb, entry)) => {
                self.edit = None;
                self.stack.pop();
                self.after_lookup_change(&entry.code);
                self.info(format!("{verb} {}: {}", entry.code, entry.label));
            }
            Err(e) => self.error(format!("not saved: {e}")),
        }
    }

    fn retire_or_restore(&mut self) {
        let Some(entry) = self.lookups.selected().cloned() else {
            self.error("the list is empty: a adds an entry");
            return;
        };
        let stamp = self.stamp();
        let Some(store) = self.store.as_mut() else {
            return;
        };
        let r = if entry.retired {
            store
                .restore_lookup(entry.kind, &entry.code, &stamp)
                .map(|_| "restored: offered in pick-lists again")
        } else {
            store
                .retire_lookup(entry.kind, &entry.code, &stamp)
                .map(|_| "retired: no longer offered for new work; records keep it")
        };
        match r {
            Ok(what) => {
                self.after_lookup_change(&entry.code);
                self.info(format!("{} {what}", entry.code));
            }
            Err(e) => self.error(format!("not changed: {e}")),
        }
    }

    /// The screen's list and the pick-lists of every form follow a change.
    fn after_lookup_change(&mut self, code: &str) {
        let Some(store) = self.store.as_ref() else {
            return;
        };
        let r = self
            .lookups
            .load(store)
            .and_then(|()| super::super::load_lists(store));
        if let Some(lists) = self.report(r) {
            self.lists = lists;
        }
        self.lookups.select_code(code);
    }
}
