//! The log as it stood at an earlier audit entry: which incidents a filter matched then.
//! The rows after that entry say everything: an incident's first row after it holds its
//! image as it stood (none: it did not exist yet; a bulk-load row lists records it made);
//! an incident no later row names is as it stands now.

use std::collections::{BTreeSet, HashMap};

use rusqlite::params;

use super::derive;
use crate::store::audit::{manifest_records, BATCH, INCIDENT};
use crate::store::canon;
use crate::store::model::{Filter, Incident, NO_CAUSE};
use crate::store::{Store, StoreError};

/// Whether `inc` matches `f` (every field but free text, which the caller refuses).
/// The same rules as the log's SQL filter; a field added to [`Filter`] is added here too.
pub(crate) fn matches(f: &Filter, inc: &Incident) -> bool {
    let eq =
        |want: &Option<String>, have: Option<&str>| want.as_deref().is_none_or(|w| have == Some(w));
    eq(&f.status, Some(inc.status.as_str()))
        && match (f.cause.as_deref(), inc.cause.as_ref()) {
            (None, _) => true,
            (Some(NO_CAUSE), None) => true,
            (Some(w), Some(c)) => c.category == w,
            (Some(_), None) => false,
        }
        && eq(&f.origin_type, derive(inc).origin_type.as_deref())
        && eq(&f.supplier, inc.glass.supplier.as_deref())
        && eq(&f.lot, inc.glass.lot.as_deref())
        && eq(&f.site, inc.site.as_deref())
        && f.since.is_none_or(|d| inc.found_on >= d)
        && f.until.is_none_or(|d| inc.found_on <= d)
}

impl Store {
    /// References of the incidents that matched `filter` as the records stood right after
    /// audit entry `seq`. Free text cannot be asked of the past (it is an error).
    pub fn matching_references_at(
        &self,
        filter: &Filter,
        seq: i64,
    ) -> Result<BTreeSet<String>, StoreError> {
        if filter.text.is_some() {
            return Err(StoreError::invalid(
                "text",
                "a free-text filter cannot be re-run on the records as they stood earlier",
            ));
        }
        // each incident named after `seq`: its image at `seq` (None: not there yet)
        let mut then: HashMap<String, Option<String>> = HashMap::new();
        {
            let mut stmt = self.conn.prepare(
                "SELECT entity, entity_id, before, after FROM audit
                 WHERE seq > ?1 AND entity IN (?2, ?3) ORDER BY seq",
            )?;
            let mut rows = stmt.query(params![seq, INCIDENT, BATCH])?;
            while let Some(r) = rows.next()? {
                let entity: String = r.get(0)?;
                if entity == INCIDENT {
                    let id: String = r.get(1)?;
                    let before: Option<String> = r.get(2)?;
                    then.entry(id).or_insert(before);
                    continue;
                }
                let after: Option<String> = r.get(3)?;
                let listed = after.as_deref().and_then(manifest_records).ok_or_else(|| {
                    StoreError::Database(
                        "a bulk-load audit row whose list of records cannot be read".into(),
                    )
                })?;
                for (e, id, _) in listed {
                    if e == INCIDENT {
                        then.entry(id).or_insert(None);
                    }
                }
            }
        }
        let mut out = BTreeSet::new();
        let mut reference = self
            .conn
            .prepare("SELECT reference FROM incidents WHERE id = ?1")?;
        for id in self.matching_ids(filter)? {
            if !then.contains_key(&id) {
                out.insert(reference.query_row([&id], |r| r.get::<_, String>(0))?);
            }
        }
        for image in then.into_values().flatten() {
            let inc: Incident = canon::decanonical(&image)
                .and_then(|v| serde_json::from_value(v).ok())
                .ok_or_else(|| {
                    StoreError::Database("an incident image in the audit log cannot be read".into())
                })?;
            if matches(filter, &inc) {
                out.insert(inc.reference);
            }
        }
        Ok(out)
    }
}
