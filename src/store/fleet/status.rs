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
        Ok(FleetStatus {
            database: self.shown.clone(),
            schema_version,
            receipts,
            head_hash,
            incidents,
            benches,
        })
    }
}
