//! One incident: sections, and opening its forms (edit, custody, attach) and the bench.

use crate::app::incident::{self, EditKind, EditState, IncidentState, Section};
use crate::app::{Action, App, Screen};

impl App {
    /// Load an incident (by id or reference) with its history and show it.
    pub fn open_incident(&mut self, key: &str) {
        let Some(records) = crate::app::read_side(&self.store, &self.fleet) else {
            return;
        };
        let loaded = records.get(key).and_then(|inc| {
            let history = match (self.store.as_ref(), self.fleet.as_ref()) {
                (Some(store), _) => store.history(&inc.id)?,
                // the history as the fleet holds it, oldest first as the bench gives it
                (None, Some(fleet)) => fleet.history(&inc.id)?,
                (None, None) => Vec::new(),
            };
            let owner = match self.fleet.as_ref() {
                Some(fleet) => fleet.owner_of(&inc.id)?,
                None => None,
            };
            Ok((inc, history, owner))
        });
        match loaded {
            Ok((incident, mut history, owner)) => {
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
                    history_cursor: 0,
                    scroll_max: std::cell::Cell::new(u16::MAX),
                    owner,
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
        if let Some(store) = crate::app::read_side(&self.store, &self.fleet) {
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
        if state.section == Section::History {
            let last = state.history.len().saturating_sub(1);
            match action {
                Action::Down | Action::ScrollDown => {
                    state.history_cursor = (state.history_cursor + 1).min(last);
                    state.scroll = history_scroll(state.history_cursor);
                    return;
                }
                Action::Up | Action::ScrollUp => {
                    state.history_cursor = state.history_cursor.saturating_sub(1);
                    state.scroll = history_scroll(state.history_cursor);
                    return;
                }
                _ => {}
            }
        }
        match action {
            Action::Revert => {
                if state.section != Section::History {
                    self.info("v restores a revision: go to the History section first (Tab)");
                    return;
                }
                let Some(h) = state.history.get(state.history_cursor) else {
                    return;
                };
                if state.history_cursor == 0 {
                    self.info("the highlighted entry is the current revision: nothing to restore");
                    return;
                }
                let Some(revision) = h
                    .after
                    .as_ref()
                    .and_then(|a| a.get("revision"))
                    .and_then(|r| r.as_i64())
                else {
                    let msg = format!("entry #{} keeps no record to restore", h.seq);
                    self.error(msg);
                    return;
                };
                self.prompt = Some(crate::app::Prompt::Revert {
                    seq: h.seq,
                    what: format!(
                        "revision {revision} of {} ({}, {})",
                        h.at.format("%Y-%m-%d %H:%M"),
                        state.incident.reference,
                        h.actor
                    ),
                });
            }
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
                    self.info("Evidence: a attaches a file, c adds a custody entry. History: ↑/↓ pick a revision, v restores it.");
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

    /// Restore the open incident as it was after history entry `seq`, as a new change.
    pub(super) fn revert_incident(&mut self, seq: i64) {
        let stamp = self.stamp();
        let (Some(state), Some(store)) = (self.incident.as_ref(), self.store.as_mut()) else {
            return;
        };
        let (id, revision) = (state.incident.id.clone(), state.incident.revision);
        match store.revert(&id, seq, revision, &stamp) {
            Ok(saved) => {
                let msg = format!(
                    "restored {} as it was after entry #{seq} (now revision {}); the history keeps \
                     every revision",
                    saved.reference, saved.revision
                );
                self.reopen_incident();
                self.info(msg);
            }
            Err(e) => self.error(format!("not restored: {e}")),
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

/// The scroll of the History section that shows entry `cursor` near the top (a heading
/// line, then two lines per entry).
fn history_scroll(cursor: usize) -> u16 {
    u16::try_from(cursor.saturating_sub(1) * 2).unwrap_or(u16::MAX)
}
