//! An incident's audit history, oldest first, with the image of each version; for one
//! incident or for many at once (a dispute bundle), with the bulk-load rows read in one pass.

use std::collections::HashMap;
use std::rc::Rc;

use rusqlite::{params, OptionalExtension};

use super::read::{load, resolve_key};
use crate::store::audit::{
    listed_ids, plain_id, starts_at_a_manifest, AuditRow, Manifest, BATCH, INCIDENT,
};
use crate::store::canon;
use crate::store::model::*;
use crate::store::{Store, StoreError};

impl Store {
    /// The audit history of one incident (by reference or id), oldest first.
    pub fn history(&self, key: &str) -> Result<Vec<HistoryEntry>, StoreError> {
        let id = resolve_key(&self.conn, key)?;
        let image = || -> Result<Option<String>, StoreError> {
            Ok(load(&self.conn, &id)?
                .map(|inc| canon::incident_image(&inc))
                .transpose()?)
        };
        let rows = self.incident_audit_rows(&id)?;
        let mut found = HashMap::new();
        if starts_at_a_manifest(&rows) {
            found = self.first_manifests_listing(&[id.as_str()])?;
        }
        assemble(&id, rows, found.get(&id).map(Rc::as_ref), image)
    }

    /// The audit histories of `incidents` (as `get` read them), each as [`Store::history`]
    /// gives it: the bulk-load rows that first list them are found in one pass over the
    /// chain's bulk-load rows, however many incidents there are.
    pub(crate) fn histories_of(
        &self,
        incidents: &[Incident],
    ) -> Result<Vec<Vec<HistoryEntry>>, StoreError> {
        let mut rows = Vec::with_capacity(incidents.len());
        let mut pending = Vec::new();
        for inc in incidents {
            let r = self.incident_audit_rows(&inc.id)?;
            if starts_at_a_manifest(&r) {
                pending.push(inc.id.as_str());
            }
            rows.push(r);
        }
        let found = self.first_manifests_listing(&pending)?;
        incidents
            .iter()
            .zip(rows)
            .map(|(inc, r)| {
                let image = || -> Result<Option<String>, StoreError> {
                    Ok(Some(canon::incident_image(inc)?))
                };
                assemble(&inc.id, r, found.get(&inc.id).map(Rc::as_ref), image)
            })
            .collect()
    }

    fn incident_audit_rows(&self, id: &str) -> Result<Vec<AuditRow>, StoreError> {
        let mut stmt = self.conn.prepare_cached(
            "SELECT seq, at, actor, op, before, after, hash FROM audit
             WHERE entity = ?1 AND entity_id = ?2 ORDER BY seq",
        )?;
        let rows = stmt.query_map(params![INCIDENT, id], |r| {
            Ok(AuditRow {
                seq: r.get(0)?,
                at: r.get(1)?,
                actor: r.get(2)?,
                op: r.get(3)?,
                before: r.get(4)?,
                after: r.get(5)?,
                hash: r.get(6)?,
            })
        })?;
        Ok(rows.collect::<Result<_, _>>()?)
    }

    /// For each of `ids`, the first bulk-load row (by entry number) whose text lists it
    /// (`after LIKE '%["id",%'`, as SQLite matches: ASCII letters in either case); ids
    /// no row lists are left out. One pass over the bulk-load rows, ended when every id is
    /// found; an id that is not plain is looked for by the pattern itself.
    fn first_manifests_listing(
        &self,
        ids: &[&str],
    ) -> Result<HashMap<String, Rc<Manifest>>, StoreError> {
        let mut found: HashMap<String, Rc<Manifest>> = HashMap::new();
        let mut pending: HashMap<String, Vec<&str>> = HashMap::new();
        for &id in ids {
            if plain_id(id) {
                pending.entry(id.to_ascii_lowercase()).or_default().push(id);
            } else if let Some(m) = self.first_manifest_by_pattern(id)? {
                found.insert(id.to_string(), Rc::new(m));
            }
        }
        if pending.is_empty() {
            return Ok(found);
        }
        let mut stmt = self.conn.prepare(
            "SELECT seq, at, actor, after, hash FROM audit
             WHERE entity = ?1 AND after IS NOT NULL ORDER BY seq",
        )?;
        let mut rows = stmt.query(params![BATCH])?;
        while let Some(r) = rows.next()? {
            let Ok(text) = r.get_ref(3)?.as_str() else {
                continue;
            };
            let mut listed: Vec<&str> = Vec::new();
            listed_ids(text, |token| {
                let key = if token.bytes().any(|b| b.is_ascii_uppercase()) {
                    pending.remove(&token.to_ascii_lowercase())
                } else {
                    pending.remove(token)
                };
                if let Some(ids) = key {
                    listed.extend(ids);
                }
            });
            if listed.is_empty() {
                continue;
            }
            let m = Rc::new(Manifest::new(
                r.get(0)?,
                r.get(1)?,
                r.get(2)?,
                text,
                r.get(4)?,
            ));
            for id in listed {
                found.insert(id.to_string(), m.clone());
            }
            if pending.is_empty() {
                break;
            }
        }
        Ok(found)
    }

    /// The first bulk-load row whose text matches `%["id",%`, by the pattern itself.
    fn first_manifest_by_pattern(&self, id: &str) -> Result<Option<Manifest>, StoreError> {
        let quoted = format!("%[\"{id}\",%");
        Ok(self
            .conn
            .query_row(
                "SELECT seq, at, actor, after, hash FROM audit
                 WHERE entity = ?1 AND after LIKE ?2 ORDER BY seq LIMIT 1",
                params![BATCH, quoted],
                |r| {
                    Ok(Manifest::new(
                        r.get(0)?,
                        r.get(1)?,
                        r.get(2)?,
                        r.get_ref(3)?.as_str().unwrap_or(""),
                        r.get(4)?,
                    ))
                },
            )
            .optional()?)
    }
}

/// An incident's history from its audit rows and, when it was inserted by a bulk load, the
/// row listing it: that row's image is the first later row's before-image, or the current
/// record (`image`) when it has no later row, kept when the listed digest vouches for it.
fn assemble(
    id: &str,
    rows: Vec<AuditRow>,
    manifest: Option<&Manifest>,
    image: impl FnOnce() -> Result<Option<String>, StoreError>,
) -> Result<Vec<HistoryEntry>, StoreError> {
    let mut out = Vec::with_capacity(rows.len() + 1);
    if starts_at_a_manifest(&rows) {
        if let Some(m) = manifest {
            let first = match rows.first() {
                Some(r) => r.before.clone(),
                None => image()?,
            };
            out.push(m.insert_entry(id, first));
        }
    }
    out.extend(rows.into_iter().map(AuditRow::entry));
    Ok(out)
}
