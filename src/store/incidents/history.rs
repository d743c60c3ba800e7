//! An incident's audit history, oldest first, with the image of each version.

use chrono::{DateTime, Utc};
use rusqlite::{params, OptionalExtension};

use super::read::{load, resolve_key};
use crate::store::audit::{changed_keys, digest, manifest_records, BATCH, INCIDENT};
use crate::store::canon;
use crate::store::dates::parse_time;
use crate::store::model::*;
use crate::store::{Store, StoreError};

impl Store {
    /// The audit history of one incident (by reference or id), oldest first.
    pub fn history(&self, key: &str) -> Result<Vec<HistoryEntry>, StoreError> {
        let id = resolve_key(&self.conn, key)?;
        let mut stmt = self.conn.prepare(
            "SELECT seq, at, actor, op, before, after, hash FROM audit
             WHERE entity = ?1 AND entity_id = ?2 ORDER BY seq",
        )?;
        let rows = stmt.query_map(params![INCIDENT, id], |r| {
            Ok((
                r.get::<_, i64>(0)?,
                r.get::<_, String>(1)?,
                r.get::<_, String>(2)?,
                r.get::<_, String>(3)?,
                r.get::<_, Option<String>>(4)?,
                r.get::<_, Option<String>>(5)?,
                r.get::<_, String>(6)?,
            ))
        })?;
        let mut out = Vec::new();
        let rows: Vec<_> = rows.collect::<Result<_, _>>()?;
        drop(stmt);
        if rows.first().is_none_or(|r| r.3 != "insert") {
            // inserted by a bulk load: the manifest row names it; its image is the first
            // later row's before-image, or the current record if it matches the digest
            let mut stmt = self.conn.prepare(
                "SELECT seq, at, actor, after, hash FROM audit
                 WHERE entity = ?1 AND after LIKE ?2 ORDER BY seq LIMIT 1",
            )?;
            // ids are UUIDs (hex digits and hyphens): nothing in them is a LIKE wildcard
            let quoted = format!("%[\"{id}\",%");
            let found = stmt
                .query_row(params![BATCH, quoted], |r| {
                    Ok((
                        r.get::<_, i64>(0)?,
                        r.get::<_, String>(1)?,
                        r.get::<_, String>(2)?,
                        r.get::<_, String>(3)?,
                        r.get::<_, String>(4)?,
                    ))
                })
                .optional()?;
            if let Some((seq, at, actor, manifest, hash)) = found {
                let image = match rows.first() {
                    Some(r) => r.4.clone(),
                    None => load(&self.conn, &id)?
                        .map(|inc| canon::incident_image(&inc))
                        .transpose()?,
                };
                let want = manifest_records(&manifest).and_then(|rs| {
                    rs.into_iter()
                        .find(|(_, rid, _)| *rid == id)
                        .map(|(_, _, d)| d)
                });
                let image = image.filter(|img| Some(digest(img)) == want);
                let after = image.as_deref().and_then(canon::decanonical);
                out.push(HistoryEntry {
                    seq,
                    at: parse_time(&at).unwrap_or(DateTime::<Utc>::UNIX_EPOCH),
                    actor,
                    op: "insert".into(),
                    changed: changed_keys(None, after.as_ref()),
                    before: None,
                    after,
                    hash,
                });
            }
        }
        for row in rows {
            let (seq, at, actor, op, before, after, hash) = row;
            let before = before.as_deref().and_then(canon::decanonical);
            let after = after.as_deref().and_then(canon::decanonical);
            out.push(HistoryEntry {
                seq,
                at: parse_time(&at).unwrap_or(DateTime::<Utc>::UNIX_EPOCH),
                actor,
                op,
                changed: changed_keys(before.as_ref(), after.as_ref()),
                before,
                after,
                hash,
            });
        }
        Ok(out)
    }
}
