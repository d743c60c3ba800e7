//! The fleet database on PostgreSQL: what only the fleet side has. Benches push their audit
//! chain into it (the outbox), the fleet witnesses every row inside PostgreSQL
//! (`fleet_push()`, schema/fleet/), keeps its own chain of receipts, refusals and conflicts,
//! and hands reference data back.
//!
//! - `connect`: the URL, TLS (rustls) for `sslmode=require`, a clear message when the server
//!   cannot be reached.
//! - `schema`: the fleet's numbered migrations, its two roles and a login per bench.
//! - `push`: a bench's chain, records and files staged by binary COPY, then `fleet_push()`;
//!   `push_facts` a large push's incident images with their read-table rows beside them.
//! - `pull`: reference data of other benches merged into this bench by code.
//! - `check`: `verify` on the fleet: the witnessed chains, receipts, records, read tables.
//! - `read`: the fleet as its users read it (`--db postgres://…`), read-only; `read_page` the
//!   log's pages, `read_total` and `read_stats` what is counted, `read_many` many incidents
//!   with their histories and files at once (a dispute bundle).
//! - `status`: per bench its witnessed head, last sync, incidents, conflicts, refusals.
//! - `pull_incidents`: the incidents other benches sent to this one, as the fleet holds them.
//! - `status`: also the open conflicts with both versions.
//! - `resolve`: the owning bench settles a conflict with a new edit that names it.
//! - `bulk_fill`: new benches written straight into the fleet's tables (`fleet demo`), the
//!   rows their first pushes would leave; `fill_facts` their read-table rows, `fill_stream`
//!   a bench's incidents sent over three connections at once, `copy_rows` binary COPY rows.
//! - `sync`: push then pull, with the bench's receipts and `verify --fleet`.

mod bulk_fill;
mod check;
mod connect;
mod copy_rows;
mod fill_facts;
mod fill_stream;
mod pull;
mod pull_incidents;
mod push;
mod push_facts;
mod read;
mod read_many;
mod read_materials;
mod read_need;
mod read_page;
mod read_report;
mod read_stats;
mod read_total;
mod resolve;
mod schema;
mod status;
mod sync;

pub use bulk_fill::{BenchFilled, BenchRows, BulkFill, Streamed};
pub use check::{BenchChainCheck, FleetCheck};
pub use connect::Fleet;
pub use pull::PullReport;
pub use pull_incidents::IncidentPull;
pub use push::PushOutcome;
pub use read::FleetReader;
pub use resolve::{resolve, ResolveReport};
pub use schema::{FleetInit, FleetLogin, FLEET_SCHEMA_VERSION};
pub use status::{BenchStatus, Conflict, FleetStatus};
pub use sync::{sync, verify_fleet, FleetVerify, SyncReport};

/// Why a fleet operation failed. The message names what to do.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FleetError {
    /// The server could not be reached or went away: nothing was applied.
    #[error("the fleet database cannot be reached ({0}); nothing was changed on either side, sync again when it is back")]
    Unreachable(String),
    /// The URL or a setting cannot be used.
    #[error("{0}")]
    Usage(String),
    /// The fleet refused the push (fork, forged rows, gap, collision, missing record).
    #[error("the fleet refused the push ({kind}): {detail}")]
    Refused { kind: String, detail: String },
    /// The bench cannot sync as it is (no code, a NUL in its history, a fork seen here).
    #[error("{0}")]
    Bench(String),
    #[error("fleet database: {0}")]
    Database(String),
}

impl From<postgres::Error> for FleetError {
    fn from(e: postgres::Error) -> Self {
        connect::classify(&e)
    }
}

impl From<crate::store::StoreError> for FleetError {
    fn from(e: crate::store::StoreError) -> Self {
        FleetError::Bench(format!("this bench's database: {e}"))
    }
}

impl From<serde_json::Error> for FleetError {
    fn from(e: serde_json::Error) -> Self {
        FleetError::Database(format!("JSON: {e}"))
    }
}

pub use crate::store::check_bench_code;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bench_codes() {
        assert_eq!(check_bench_code(" north ").unwrap(), "NORTH");
        assert_eq!(check_bench_code("LAB2").unwrap(), "LAB2");
        for bad in ["", "N", "2LAB", "NORTH-1", "ABCDEFGHI", "NÖRD"] {
            assert!(check_bench_code(bad).is_err(), "{bad}");
        }
    }
}
