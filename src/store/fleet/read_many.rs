//! The fleet reading many incidents at once (a dispute bundle): their images, their rows in
//! the witnessed chains, the bulk-load rows that list them and their attachments, each in a
//! few set-based statements for the whole lot, not a few round trips per incident. Each
//! incident and history is the one the single reads give (`get`, `history`).

use std::collections::{BTreeMap, BTreeSet, HashMap, HashSet};
use std::rc::Rc;

use super::read::{incident_from, FleetReader};
use crate::store::audit::{
    listed_ids, plain_id, starts_at_a_manifest, AuditRow, Manifest, BATCH, INCIDENT,
};
use crate::store::model::{HistoryEntry, Incident};
use crate::store::StoreError;

/// Up to this many incidents of one bench whose bulk-load row must be searched for are
/// searched for one by one by the server (a pattern over the bench's bulk-load rows each);
/// more, and the rows are read once and searched here.
const SEARCHED_ONE_BY_ONE: usize = 4;

/// Bulk-load rows read at once while searching a bench's rows here.
const MANIFESTS_AT_ONCE: i64 = 64;

/// An incident as the fleet holds it.
pub(super) struct Held {
    pub(super) id: String,
    pub(super) reference: String,
    /// The bench that made it, and the bench that owns it now.
    pub(super) origin: String,
    pub(super) owner: String,
    /// Its current image, and the owner's chain row that made it.
    pub(super) image: String,
    pub(super) bench_seq: i64,
}

impl Held {
    /// A row of `SELECT id, reference, origin, owner, image, bench_seq FROM fleet_records`.
    pub(super) fn from_row(r: &postgres::Row) -> Held {
        Held {
            id: r.get(0),
            reference: r.get(1),
            origin: r.get(2),
            owner: r.get(3),
            image: r.get(4),
            bench_seq: r.get(5),
        }
    }
}

impl FleetReader {
    /// The incidents of `ids` (as `matching_ids` gives them), in that order, each with its
    /// history: what `get` and `history` give one by one.
    pub(super) fn incidents_with_history_many(
        &self,
        ids: &[String],
    ) -> Result<Vec<(Incident, Vec<HistoryEntry>)>, StoreError> {
        let rows = self.query_with(
            "SELECT id, reference, origin, owner, image, bench_seq FROM fleet_records
             WHERE entity = 'incident' AND image IS NOT NULL AND id = ANY($1)
               AND ($2::text IS NULL OR owner = $2)",
            &[&ids, &self.scope],
        )?;
        let held: HashMap<String, Held> = rows
            .iter()
            .map(|r| {
                let h = Held::from_row(r);
                (h.id.clone(), h)
            })
            .collect();
        let found: Vec<&Held> = ids.iter().filter_map(|id| held.get(id)).collect();
        let mut histories = self.histories_held(&found)?.into_iter();
        let mut out = Vec::with_capacity(ids.len());
        for id in ids {
            let Some(h) = held.get(id) else {
                // not held by its id: as `get` finds it, whatever it is
                let inc = crate::store::read::RecordSource::get(self, id)?;
                let history = self.fleet_history(&inc.id)?;
                out.push((inc, history));
                continue;
            };
            let mut inc = incident_from(h.reference.clone(), &h.image).map_err(|reference| {
                StoreError::Database(format!("the fleet's image of {reference} cannot be read"))
            })?;
            self.restore_analyses(&mut inc)?;
            out.push((inc, histories.next().unwrap_or_default()));
        }
        Ok(out)
    }

    /// The audit histories of `held`, in order, from the witnessed chains, as the bench gives
    /// them (`Store::history`): an incident a bulk load made starts at the bulk-load row
    /// listing it (the row that made its image, else the first of its bench that lists it),
    /// with its first image when the digest there vouches for it.
    pub(super) fn histories_held(
        &self,
        held: &[&Held],
    ) -> Result<Vec<Vec<HistoryEntry>>, StoreError> {
        let ids: Vec<&str> = held.iter().map(|h| h.id.as_str()).collect();
        let mut rows: HashMap<String, Vec<AuditRow>> = HashMap::new();
        for r in self.query_with(
            "SELECT entity_id, seq, at, actor, op, before, after, hash FROM bench_chain
             WHERE entity = $1 AND entity_id = ANY($2) ORDER BY entity_id, fleet_seq, seq",
            &[&INCIDENT, &ids],
        )? {
            rows.entry(r.get(0)).or_default().push(AuditRow {
                seq: r.get(1),
                at: r.get(2),
                actor: r.get(3),
                op: r.get(4),
                before: r.get(5),
                after: r.get(6),
                hash: r.get(7),
            });
        }
        let rows_of = |h: &Held| rows.get(&h.id).cloned().unwrap_or_default();
        let needing: Vec<&Held> = held
            .iter()
            .copied()
            .filter(|h| starts_at_a_manifest(rows.get(&h.id).map_or(&[][..], Vec::as_slice)))
            .collect();
        let first = self.first_manifests(&needing)?;
        Ok(held
            .iter()
            .map(|h| {
                let rows = rows_of(h);
                let mut out = Vec::with_capacity(rows.len() + 1);
                if let Some(m) = first
                    .get(h.id.as_str())
                    .filter(|_| starts_at_a_manifest(&rows))
                {
                    let image = match rows.first() {
                        Some(r) => r.before.clone(),
                        None => Some(h.image.clone()),
                    };
                    out.push(m.insert_entry(&h.id, image));
                }
                out.extend(rows.into_iter().map(AuditRow::entry));
                out
            })
            .collect())
    }

    /// For each incident of `needing`, the bulk-load row its history starts at: the owner's
    /// row that made its image when that row lists it, else the first row of its origin
    /// bench that lists it (`after LIKE '%["id",%'`); none when no row lists it.
    fn first_manifests<'h>(
        &self,
        needing: &[&'h Held],
    ) -> Result<HashMap<&'h str, Rc<Manifest>>, StoreError> {
        let mut first: HashMap<&'h str, Rc<Manifest>> = HashMap::new();
        let mut pairs = BTreeSet::new();
        let (mut benches, mut seqs) = (Vec::new(), Vec::new());
        for h in needing.iter().filter(|h| plain_id(&h.id)) {
            if pairs.insert((h.owner.as_str(), h.bench_seq)) {
                benches.push(h.owner.as_str());
                seqs.push(h.bench_seq);
            }
        }
        // the rows that made the images, each read once
        let mut made: HashMap<(String, i64), (Rc<Manifest>, HashSet<String>)> = HashMap::new();
        if !benches.is_empty() {
            for r in self.query_with(
                "SELECT c.bench, c.seq, c.at, c.actor, c.after, c.hash FROM bench_chain c
                 JOIN unnest($1::text[], $2::bigint[]) AS k(bench, seq)
                   ON c.bench = k.bench AND c.seq = k.seq
                 WHERE c.entity = $3 AND c.after IS NOT NULL",
                &[&benches, &seqs, &BATCH],
            )? {
                let text: &str = r.get(4);
                let mut listed = HashSet::new();
                listed_ids(text, |id| {
                    listed.insert(id.to_string());
                });
                let m = Manifest::new(r.get(1), r.get(2), r.get(3), text, r.get(5));
                made.insert((r.get(0), r.get(1)), (Rc::new(m), listed));
            }
        }
        let mut searched: BTreeMap<&str, Vec<&'h str>> = BTreeMap::new();
        for h in needing {
            if !plain_id(&h.id) {
                let m = match self.manifest_by_pattern(&h.owner, Some(h.bench_seq), &h.id)? {
                    Some(m) => Some(m),
                    None => self.manifest_by_pattern(&h.origin, None, &h.id)?,
                };
                if let Some(m) = m {
                    first.insert(h.id.as_str(), Rc::new(m));
                }
                continue;
            }
            match made.get(&(h.owner.clone(), h.bench_seq)) {
                Some((m, listed)) if listed.contains(&h.id) => {
                    first.insert(h.id.as_str(), m.clone());
                }
                _ => searched
                    .entry(h.origin.as_str())
                    .or_default()
                    .push(h.id.as_str()),
            }
        }
        for (bench, ids) in searched {
            if ids.len() <= SEARCHED_ONE_BY_ONE {
                for id in ids {
                    if let Some(m) = self.manifest_by_pattern(bench, None, id)? {
                        first.insert(id, Rc::new(m));
                    }
                }
            } else {
                first.extend(self.search_manifests(bench, ids)?);
            }
        }
        Ok(first)
    }

    /// The first bulk-load row of `bench` (at entry `seq` only, when given) whose text
    /// matches `%["id",%`, found by the server.
    fn manifest_by_pattern(
        &self,
        bench: &str,
        seq: Option<i64>,
        id: &str,
    ) -> Result<Option<Manifest>, StoreError> {
        let quoted = format!("%[\"{id}\",%");
        let rows = self.query_with(
            "SELECT seq, at, actor, after, hash FROM bench_chain
             WHERE bench = $1 AND entity = $2 AND after LIKE $3
               AND ($4::bigint IS NULL OR seq = $4)
             ORDER BY seq LIMIT 1",
            &[&bench, &BATCH, &quoted, &seq],
        )?;
        Ok(rows
            .first()
            .map(|r| Manifest::new(r.get(0), r.get(1), r.get(2), r.get(3), r.get(4))))
    }

    /// For each of `ids` (plain ids), the first bulk-load row of `bench` that lists it: the
    /// bench's bulk-load rows read in order, a few at a time, until every id is found.
    fn search_manifests<'h>(
        &self,
        bench: &str,
        ids: Vec<&'h str>,
    ) -> Result<HashMap<&'h str, Rc<Manifest>>, StoreError> {
        let mut pending: HashMap<&str, &'h str> = ids.iter().map(|id| (*id, *id)).collect();
        let mut found = HashMap::new();
        let mut after = 0i64;
        while !pending.is_empty() {
            let rows = self.query_with(
                "SELECT seq, at, actor, after, hash FROM bench_chain
                 WHERE bench = $1 AND entity = $2 AND after IS NOT NULL AND seq > $3
                 ORDER BY seq LIMIT $4",
                &[&bench, &BATCH, &after, &MANIFESTS_AT_ONCE],
            )?;
            for r in &rows {
                after = r.get(0);
                let text: &str = r.get(3);
                let mut listed = Vec::new();
                listed_ids(text, |id| {
                    if let Some(id) = pending.remove(id) {
                        listed.push(id);
                    }
                });
                if listed.is_empty() {
                    continue;
                }
                let m = Rc::new(Manifest::new(after, r.get(1), r.get(2), text, r.get(4)));
                for id in listed {
                    found.insert(id, m.clone());
                }
            }
            if (rows.len() as i64) < MANIFESTS_AT_ONCE {
                break;
            }
        }
        Ok(found)
    }

    /// The bytes of each of `hashes` the fleet's file table holds, keyed as given.
    pub(super) fn files_held(
        &self,
        hashes: &[String],
    ) -> Result<HashMap<String, Vec<u8>>, StoreError> {
        let wanted: Vec<String> = hashes
            .iter()
            .map(|h| h.to_ascii_lowercase())
            .collect::<BTreeSet<_>>()
            .into_iter()
            .collect();
        if wanted.is_empty() {
            return Ok(HashMap::new());
        }
        let by_hash: HashMap<String, Vec<u8>> = self
            .query_with(
                "SELECT sha256, bytes FROM fleet_files WHERE sha256 = ANY($1)",
                &[&wanted],
            )?
            .iter()
            .map(|r| (r.get(0), r.get(1)))
            .collect();
        Ok(hashes
            .iter()
            .filter_map(|h| {
                by_hash
                    .get(&h.to_ascii_lowercase())
                    .map(|b| (h.clone(), b.clone()))
            })
            .collect())
    }
}
