//! `verify` on the fleet database: every bench's witnessed chain (each row's hash is its
//! content and its link, the rows numbered without a gap, the head where the chain ends), the
//! fleet's own chain of receipts, every record against its digest, the read tables kept on
//! ingest against the images they come from, and the counts by month against those facts.
//! Read-only: run as the reader role or anyone.

use super::read::FleetReader;
use crate::store::StoreError;

/// What `verify` found on the fleet database.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct FleetCheck {
    /// Per bench: its code, the rows checked, the head the fleet holds (sequence and hash).
    pub benches: Vec<BenchChainCheck>,
    /// Receipts of the fleet's own chain checked, and its head hash.
    pub receipts: i64,
    pub fleet_head: Option<String>,
    /// Records whose image was checked against its digest.
    pub records: i64,
    /// Incidents whose facts and words were compared with their images.
    pub incidents: i64,
    /// Every problem found (empty: all is well), the first few of each kind.
    pub problems: Vec<String>,
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct BenchChainCheck {
    pub bench: String,
    pub rows: i64,
    pub head_seq: i64,
    pub head_hash: String,
}

/// Rows of the witnessed chains that are not what the fleet checked on arrival.
const CHAIN_PROBLEMS: &str = "
SELECT bench, seq, problem FROM (
    SELECT bench, seq,
           CASE WHEN seq <> row_number() OVER w THEN 'is out of sequence'
                WHEN prev_hash <> coalesce(lag(hash) OVER w, repeat('0', 64))
                    THEN 'does not link to the row before it'
                WHEN hash <> fleet_link_hash(prev_hash, fleet_row_text(seq, at, actor, entity,
                                             entity_id, op, before, after))
                    THEN 'has a hash that is not its content'
           END AS problem
    FROM bench_chain WINDOW w AS (PARTITION BY bench ORDER BY seq)
) x WHERE problem IS NOT NULL ORDER BY bench, seq LIMIT 20";

/// Each bench's rows and where its chain ends, beside the head the fleet records for it.
const BENCH_HEADS: &str = "
SELECT b.code, b.head_seq, b.head_hash, count(c.seq),
       coalesce(max(c.seq), 0),
       coalesce((SELECT l.hash FROM bench_chain l WHERE l.bench = b.code
                 ORDER BY l.seq DESC LIMIT 1), repeat('0', 64))
FROM fleet_benches b LEFT JOIN bench_chain c ON c.bench = b.code
GROUP BY b.code, b.head_seq, b.head_hash ORDER BY b.code";

/// Receipts that are not a chain.
const RECEIPT_PROBLEMS: &str = "
SELECT fleet_seq, problem FROM (
    SELECT fleet_seq,
           CASE WHEN fleet_seq <> row_number() OVER w THEN 'is out of sequence'
                WHEN prev_hash <> coalesce(lag(hash) OVER w, repeat('0', 64))
                    THEN 'does not link to the receipt before it'
                WHEN hash <> fleet_link_hash(prev_hash, fleet_receipt_text(fleet_seq, at, bench,
                                             from_seq, to_seq, bench_hash, records))
                    THEN 'has a hash that is not its content'
           END AS problem
    FROM fleet_receipts WINDOW w AS (ORDER BY fleet_seq)
) x WHERE problem IS NOT NULL ORDER BY fleet_seq LIMIT 20";

const RECEIPT_HEAD: &str =
    "SELECT count(*), (SELECT hash FROM fleet_receipts ORDER BY fleet_seq DESC LIMIT 1) FROM fleet_receipts";

/// Records whose image is not the one their digest names.
const RECORD_PROBLEMS: &str = "
SELECT entity, id, origin FROM fleet_records
WHERE image IS NOT NULL AND digest IS DISTINCT FROM encode(sha256(convert_to(image, 'UTF8')), 'hex')
ORDER BY entity, id LIMIT 20";

const RECORD_COUNT: &str = "SELECT count(*) FROM fleet_records WHERE image IS NOT NULL";

/// Incidents whose row in the read tables differs from what their image gives (or is missing,
/// or has no image behind it).
const FACT_PROBLEMS: &str = "
SELECT coalesce(s.reference, f.reference)::text FROM fleet_facts_source s
FULL JOIN fleet_facts f ON f.id = s.id
LEFT JOIN fleet_search w ON w.id = coalesce(s.id, f.id)
WHERE row(s.origin, s.owner, s.ord, s.reference::text, s.found_on::text, s.asset::text,
          s.position, s.site::text, s.product::text, s.supplier::text, s.lot::text,
          s.status::text, s.cause::text, s.origin_type::text, s.temper::text, s.stress_pa,
          s.applied_stress_pa)::text
   IS DISTINCT FROM
      row(f.origin, f.owner, f.ord, f.reference::text, f.found_on::text, f.asset::text,
          f.position, f.site::text, f.product::text, f.supplier::text, f.lot::text,
          f.status::text, f.cause::text, f.origin_type::text, f.temper::text, f.stress_pa,
          f.applied_stress_pa)::text
   OR s.doc IS DISTINCT FROM w.doc
ORDER BY 1 LIMIT 20";

const FACT_COUNT: &str = "SELECT count(*) FROM fleet_facts";

/// Cells of the counts by month (schema/fleet/0007_counts.sql) that differ from the facts
/// counted afresh: the bench, the month and what the counts hold against the facts.
const COUNT_PROBLEMS: &str = "
WITH fresh AS (
    SELECT owner, left(found_on, 7) AS month, cause, origin_type, supplier, product, lot, site,
           temper, count(*) AS n
    FROM fleet_facts GROUP BY 1, 2, 3, 4, 5, 6, 7, 8, 9
), kept AS (
    SELECT owner, month, cause, origin_type, supplier, product, lot, site, temper, n
    FROM fleet_fact_months
)
SELECT owner, month::text, 'counts' AS side, n FROM (SELECT * FROM kept EXCEPT ALL SELECT * FROM fresh) a
UNION ALL
SELECT owner, month::text, 'facts', n FROM (SELECT * FROM fresh EXCEPT ALL SELECT * FROM kept) b
ORDER BY 1, 2, 3 LIMIT 20";

impl FleetReader {
    /// Check the whole fleet database (every bench, whatever the reader's scope).
    pub fn check(&self) -> Result<FleetCheck, StoreError> {
        let mut problems = Vec::new();
        let chain = self.query(CHAIN_PROBLEMS)?;
        for r in &chain {
            let (bench, seq, what): (String, i64, String) = (r.get(0), r.get(1), r.get(2));
            problems.push(format!("bench {bench}: witnessed row {seq} {what}"));
        }
        let mut benches = Vec::new();
        for r in &self.query(BENCH_HEADS)? {
            let code: String = r.get(0);
            let (head_seq, head_hash): (i64, String) = (r.get(1), r.get(2));
            let (rows, last_seq, last_hash): (i64, i64, String) = (r.get(3), r.get(4), r.get(5));
            if (head_seq, &head_hash) != (last_seq, &last_hash) {
                problems.push(format!(
                    "bench {code}: the fleet records its head as row {head_seq} ({}), but its witnessed chain ends at row {last_seq} ({})",
                    short(&head_hash),
                    short(&last_hash)
                ));
            }
            benches.push(BenchChainCheck {
                bench: code,
                rows,
                head_seq,
                head_hash,
            });
        }
        for r in &self.query(RECEIPT_PROBLEMS)? {
            let (seq, what): (i64, String) = (r.get(0), r.get(1));
            problems.push(format!("the fleet's receipt {seq} {what}"));
        }
        let head = self.query(RECEIPT_HEAD)?;
        let (receipts, fleet_head): (i64, Option<String>) = (head[0].get(0), head[0].get(1));
        for r in &self.query(RECORD_PROBLEMS)? {
            let (entity, id, origin): (String, String, String) = (r.get(0), r.get(1), r.get(2));
            problems.push(format!(
                "{entity} {id} (from bench {origin}): its image is not the one its digest names"
            ));
        }
        let records: i64 = self.query(RECORD_COUNT)?[0].get(0);
        for r in &self.query(FACT_PROBLEMS)? {
            let reference: Option<String> = r.get(0);
            problems.push(format!(
                "incident {}: the fleet's read tables (fleet_facts, fleet_search) differ from its image",
                reference.unwrap_or_else(|| "(no reference)".into())
            ));
        }
        for r in &self.query(COUNT_PROBLEMS)? {
            let (bench, month, side, n): (String, String, String, i64) =
                (r.get(0), r.get(1), r.get(2), r.get(3));
            problems.push(format!(
                "bench {bench}, {month}: a cell of the counts by month (fleet_fact_months) is not what the facts give ({side}: {n} incidents)"
            ));
        }
        let incidents: i64 = self.query(FACT_COUNT)?[0].get(0);
        Ok(FleetCheck {
            benches,
            receipts,
            fleet_head,
            records,
            incidents,
            problems,
        })
    }
}

fn short(hash: &str) -> &str {
    hash.get(..12).unwrap_or(hash)
}
