//! Restoring an incident to an earlier revision from its history. The restore is an ordinary
//! change (revision-checked, with its own audit row): the history keeps every revision,
//! including the one replaced.

use serde_json::Value;

use crate::store::canon;
use crate::store::model::*;
use crate::store::{Store, StoreError};

impl Store {
    /// Write the incident `key` back as it was after the history entry `seq`, as a new
    /// revision. `expected` is the revision the caller saw (a later change refuses).
    pub fn revert(
        &mut self,
        key: &str,
        seq: i64,
        expected: i64,
        stamp: &Stamp,
    ) -> Result<Incident, StoreError> {
        let current = self.get(key)?;
        if current.revision != expected {
            return Err(StoreError::StaleRevision {
                reference: current.reference,
                expected,
                current: current.revision,
            });
        }
        let history = self.history(&current.id)?;
        let Some(entry) = history.iter().find(|h| h.seq == seq) else {
            return Err(StoreError::invalid(
                "history",
                format!("{} has no history entry #{seq}", current.reference),
            ));
        };
        let Some(image) = entry.after.clone() else {
            return Err(StoreError::invalid(
                "history",
                format!(
                    "entry #{seq} of {} keeps no image to restore",
                    current.reference
                ),
            ));
        };
        let mut old: Incident = serde_json::from_value(image).map_err(|e| {
            StoreError::invalid("history", format!("entry #{seq} cannot be read back: {e}"))
        })?;
        restore_analyses(&mut old, &current);
        old.id = current.id.clone();
        old.reference = current.reference.clone();
        old.revision = current.revision;
        old.created_at = current.created_at;
        self.update_incident(&old, stamp)
    }
}

/// The audit image pins each result's analysis by its digest ("sha256:<hex>") instead of
/// copying it. Where the current record still holds an analysis with that digest it comes
/// back whole; otherwise the result keeps its figures and says where its analysis is pinned.
fn restore_analyses(old: &mut Incident, current: &Incident) {
    let known: Vec<(String, &Value)> = current
        .examinations
        .iter()
        .filter_map(|e| e.result.as_ref())
        .map(|r| {
            let digest = canon::sha256_hex(canon::canonical_value(&r.analysis).as_bytes());
            (format!("sha256:{digest}"), &r.analysis)
        })
        .collect();
    for exam in &mut old.examinations {
        let Some(result) = exam.result.as_mut() else {
            continue;
        };
        let Some(pin) = result.analysis.as_str().map(str::to_string) else {
            continue;
        };
        result.analysis = match known.iter().find(|(d, _)| *d == pin) {
            Some((_, analysis)) => (*analysis).clone(),
            None => serde_json::json!({
                "restored_from_history": pin,
                "note": "the full analysis of this revision was replaced since; its figures are \
                         kept here and its text is pinned in the history by this digest",
            }),
        };
    }
}
