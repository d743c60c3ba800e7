//! `fleet status`: per bench its code, witnessed head, last sync, incidents it owns, open
//! conflicts and refused pushes; the fleet's own chain head.

use super::{Fleet, FleetError};

/// One bench as the fleet knows it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct BenchStatus {
    pub code: String,
    /// The last row of the bench's audit chain the fleet witnessed.
    pub head_seq: i64,
    pub head_hash: String,
    /// RFC 3339 UTC, None before a sync completed.
    pub last_sync: Option<String>,
    /// Incidents this bench owns in the fleet (deleted ones not counted).
    pub incidents: i64,
    /// Conflicts on this bench's incidents or from its edits, still open.
    pub open_conflicts: i64,
    /// Pushes of this bench the fleet refused.
    pub refused_pushes: i64,
    /// The last refusal: its kind and what it said.
    pub last_refusal: Option<String>,
}

/// A conflict the fleet keeps open: the version it holds and the one it did not apply.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Conflict {
    /// The fleet's number of the conflict (`fleet resolve N`).
    pub id: i64,
    /// "edit" (a change the fleet did not apply) or "transfer" (a bench sent an incident it
    /// did not own).
    pub kind: String,
    pub entity: String,
    pub record_id: String,
    /// The incident's reference as the fleet shows it, when it is one.
    pub reference: Option<String>,
    /// The bench whose row was not applied, and that row.
    pub bench: String,
    pub bench_seq: i64,
    /// The bench that owns the record in the fleet.
    pub owner: Option<String>,
    /// RFC 3339 UTC.
    pub opened_at: String,
    /// The version the fleet holds, and the version it kept aside (canonical JSON).
    pub fleet_image: Option<String>,
    pub bench_image: Option<String>,
    /// Top-level fields in which the two versions differ.
    pub differs_in: Vec<String>,
    /// RFC 3339 UTC, None while open.
    pub resolved_at: Option<String>,
}

/// The top-level keys whose values differ between two JSON object texts.
fn differing_keys(a: Option<&str>, b: Option<&str>) -> Vec<String> {
    let parse = |t: Option<&str>| {
        t.and_then(|t| serde_json::from_str::<serde_json::Map<String, serde_json::Value>>(t).ok())
            .unwrap_or_default()
    };
    let (a, b) = (parse(a), parse(b));
    let mut keys: Vec<String> = a
        .keys()
        .chain(b.keys())
        .filter(|k| a.get(*k) != b.get(*k))
        .cloned()
        .collect();
    keys.sort();
    keys.dedup();
    keys
}

/// The columns `conflict_row` reads (a macro so that the queries can `concat!` it).
macro_rules! conflict_select {
    () => {
        "SELECT c.id, c.kind, c.entity, c.record_id, r.reference, c.bench,
        c.bench_seq, r.owner,
        to_char(c.opened_at AT TIME ZONE 'UTC', 'YYYY-MM-DD\"T\"HH24:MI:SS\"Z\"'),
        c.fleet_image, c.bench_image,
        to_char(c.resolved_at AT TIME ZONE 'UTC', 'YYYY-MM-DD\"T\"HH24:MI:SS\"Z\"')
     FROM fleet_conflicts c
     LEFT JOIN fleet_records r ON r.entity = c.entity AND r.id = c.record_id
          AND c.entity <> 'lookup'"
    };
}

fn conflict_row(r: &postgres::Row) -> Conflict {
    let fleet_image: Option<String> = r.get(9);
    let bench_image: Option<String> = r.get(10);
    Conflict {
        id: r.get(0),
        kind: r.get(1),
        entity: r.get(2),
        record_id: r.get(3),
        reference: r.get(4),
        bench: r.get(5),
        bench_seq: r.get(6),
        owner: r.get(7),
        opened_at: r.get(8),
        differs_in: differing_keys(fleet_image.as_deref(), bench_image.as_deref()),
        fleet_image,
        bench_image,
        resolved_at: r.get(11),
    }
}

/// The whole fleet.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct FleetStatus {
    pub database: String,
    pub schema_version: i64,
    /// The fleet's own chain: its last receipt (0 and zeros before any push).
    pub receipts: i64,
    pub head_hash: String,
    pub incidents: i64,
    pub benches: Vec<BenchStatus>,
    /// The open conflicts, oldest first, each with both versions.
    pub conflicts: Vec<Conflict>,
}

impl Fleet {
    /// The fleet's state, bench by bench.
    pub fn status(&mut self) -> Result<FleetStatus, FleetError> {
        self.check_schema()?;
        let schema_version = self.schema_version()?;
        let head = self.client.query_opt(
            "SELECT fleet_seq, hash FROM fleet_receipts ORDER BY fleet_seq DESC LIMIT 1",
            &[],
        )?;
        let (receipts, head_hash) = head
            .map(|r| (r.get(0), r.get(1)))
            .unwrap_or((0, crate::store::canon::GENESIS.to_string()));
        let incidents: i64 = self
            .client
            .query_one(
                "SELECT count(*) FROM fleet_records WHERE entity = 'incident' AND image IS NOT NULL",
                &[],
            )?
            .get(0);
        let rows = self.client.query(
            "SELECT b.code, b.head_seq, b.head_hash,
                    to_char(b.last_sync AT TIME ZONE 'UTC', 'YYYY-MM-DD\"T\"HH24:MI:SS\"Z\"'),
                    (SELECT count(*) FROM fleet_records r
                      WHERE r.entity = 'incident' AND r.owner = b.code AND r.image IS NOT NULL),
                    (SELECT count(*) FROM fleet_conflicts c
                      WHERE c.resolved_at IS NULL AND (c.bench = b.code OR EXISTS (
                          SELECT 1 FROM fleet_records r WHERE r.entity = c.entity
                             AND r.id = c.record_id AND r.owner = b.code))),
                    (SELECT count(*) FROM fleet_refusals f WHERE f.bench = b.code),
                    (SELECT f.kind || ': ' || f.detail FROM fleet_refusals f
                      WHERE f.bench = b.code ORDER BY f.id DESC LIMIT 1)
             FROM fleet_benches b ORDER BY b.code",
            &[],
        )?;
        let benches = rows
            .iter()
            .map(|r| BenchStatus {
                code: r.get(0),
                head_seq: r.get(1),
                head_hash: r.get(2),
                last_sync: r.get(3),
                incidents: r.get(4),
                open_conflicts: r.get(5),
                refused_pushes: r.get(6),
                last_refusal: r.get(7),
            })
            .collect();
        let conflicts = self
            .client
            .query(
                concat!(
                    conflict_select!(),
                    " WHERE c.resolved_at IS NULL ORDER BY c.id"
                ),
                &[],
            )?
            .iter()
            .map(conflict_row)
            .collect();
        Ok(FleetStatus {
            database: self.shown.clone(),
            schema_version,
            receipts,
            head_hash,
            incidents,
            benches,
            conflicts,
        })
    }

    /// One conflict, open or resolved.
    pub fn conflict(&mut self, id: i64) -> Result<Option<Conflict>, FleetError> {
        self.check_schema()?;
        Ok(self
            .client
            .query_opt(concat!(conflict_select!(), " WHERE c.id = $1"), &[&id])?
            .as_ref()
            .map(conflict_row))
    }
}
