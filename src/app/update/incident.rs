//! One incident: sections, and opening its forms (edit, custody, attach) and the bench.

use crate::app::incident::{self, EditKind, EditState, IncidentState, Section};
use crate::app::{Action, App, Screen};

impl App {
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

    pub(super) fn reopen_incident(&mut self) {
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

    pub(super) fn update_incident(&mut self, action: Action) {
        if action == Action::AddCustody {
            self.open_custody();
            return;
        }
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

    /// A custody entry for the open incident, by this user, now.
    pub(super) fn open_custody(&mut self) {
        let Some(state) = &self.incident else {
            return;
        };
        let stamp = self.stamp();
        let form = incident::custody_form(stamp.at, &stamp.actor, &self.lists);
        self.edit = Some(EditState {
            kind: EditKind::Custody,
            form,
            base: Some(state.incident.clone()),
            conflict: false,
        });
        self.stack.push(Screen::Edit);
    }

    pub(super) fn open_new(&mut self) {
        let today = self.stamp().at.date_naive();
        self.edit = Some(EditState {
            kind: EditKind::New,
            form: incident::new_form(today, &self.lists),
            base: None,
            conflict: false,
        });
        self.stack.push(Screen::Edit);
    }
}
