//! Saving what the forms hold beside the incident: the lot's heat-soak record, and the panes
//! in service the review enters.

use crate::app::incident;
use crate::app::App;
use crate::store::model::Incident;

impl App {
    /// After the incident is saved: write its lot's heat-soak record when the form changed
    /// it. Returns a note for the status line ("" when nothing was written).
    pub(super) fn save_lot_heat_soak(&mut self, saved: &Incident) -> String {
        let Some(edit) = self.edit.as_ref() else {
            return String::new();
        };
        let change =
            match crate::app::practice::lot_change(&edit.form, saved, &self.lists.lot_heat_soak) {
                Ok(Some(c)) => c,
                Ok(None) => return String::new(),
                Err(e) => return format!("; lot not changed: {e}"),
            };
        let stamp = self.stamp();
        let Some(store) = self.store.as_mut() else {
            return String::new();
        };
        let ((s, p, l), record) = change;
        match store.set_lot_heat_soak(&s, &p, &l, record.as_ref(), &stamp) {
            Ok(_) => {
                match record {
                    Some(h) => self.lists.lot_heat_soak.insert((s, p, l.clone()), h),
                    None => self.lists.lot_heat_soak.remove(&(s, p, l.clone())),
                };
                format!("; heat-soak record of lot {l} saved")
            }
            Err(e) => format!("; lot {l} not changed: {e}"),
        }
    }

    /// Save the exposure form (from the review) and go back to the review.
    pub(super) fn save_exposure(&mut self) {
        let Some(edit) = self.edit.as_ref() else {
            return;
        };
        let stamp = self.stamp();
        let Some(store) = self.store.as_mut() else {
            self.error("no database is open");
            return;
        };
        match incident::exposure_entry(&edit.form).and_then(|e| store.enter_exposure(e, &stamp)) {
            Ok(()) => {
                self.edit = None;
                self.stack.pop();
                if let Some(store) = self.store.as_ref() {
                    if let Ok(l) = super::super::load_lists(store) {
                        self.lists = l;
                    }
                }
                self.reload_review();
                self.info("exposure saved: rates use it from now on");
            }
            Err(e) => self.error(format!("not saved: {e}")),
        }
    }
}
