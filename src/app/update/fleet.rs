//! The fleet database is read only for its users: an edit key says where the edit is made
//! (the owning bench, whose next sync brings it to the fleet) instead of failing.

use crate::app::{Action, App, Screen};

impl App {
    /// On the fleet database, the edit `action` would start, refused with a message saying
    /// where it is made. Returns true when the action was refused.
    pub(super) fn refuse_fleet_edit(&mut self, action: &Action) -> bool {
        if !self.on_fleet() {
            return false;
        }
        let what = match (self.screen(), action) {
            (Screen::Log, Action::NewIncident) => "a new incident",
            (Screen::Incident, Action::Edit | Action::Confirm) => "an edit",
            (Screen::Incident, Action::Attach) => "an attachment",
            (Screen::Incident, Action::AddCustody) => "a custody entry",
            (Screen::Incident, Action::Revert) => "a revert",
            (Screen::Bench, Action::Save) => "a bench result",
            (Screen::Review, Action::AddExposure) => "exposure",
            (
                Screen::Lookups,
                Action::AddEntry | Action::Edit | Action::Confirm | Action::RetireOrRestore,
            ) => "a lookup change",
            (
                Screen::Materials,
                Action::AddMaterial | Action::CopyMaterial | Action::Edit | Action::Confirm,
            ) => "an own material",
            _ => return false,
        };
        let message = self.where_edits_are_made(what);
        self.info(message);
        true
    }

    /// "fleet is read-only: an edit is made at the owning bench NORTH, then synced", or, with
    /// no incident in view, at which benches.
    pub fn where_edits_are_made(&self, what: &str) -> String {
        let owner = match self.screen() {
            Screen::Incident => self.incident.as_ref().and_then(|s| s.owner.clone()),
            Screen::Bench => self
                .bench_target
                .as_ref()
                .and_then(|t| self.incident.as_ref().filter(|s| s.incident.id == t.id))
                .and_then(|s| s.owner.clone()),
            _ => None,
        };
        match owner {
            Some(code) => {
                format!(
                    "fleet is read-only: {what} is made at the owning bench {code}, then synced"
                )
            }
            None if self.lists.benches.is_empty() => {
                format!("fleet is read-only: {what} is made at a bench, then synced")
            }
            None => format!(
                "fleet is read-only: {what} is made at a bench ({}), then synced",
                self.lists.benches.join(", ")
            ),
        }
    }
}
