//! A bulk fill of the fleet with new benches (`fleet demo`): the rows a first push of each
//! bench would leave, written straight into the fleet's tables by binary COPY instead of
//! staged and applied by `fleet_push()`.
//!
//! What it writes, bench by bench, is what `fleet_push()` writes for a bench's first push
//! into a fleet that does not know it: the bench's row, every audit row witnessed (the
//! fleet's receipt number beside it), each record's last image with its digest, the row that
//! made it and, for an incident, its fleet reference, the attachment files, one receipt
//! linked to the fleet's chain, the bench's head; and the read tables the ingest triggers
//! keep (facts, words, order of creation), worked out on the client from each image. The
//! same rows as the sync path: `tests/it/fleet_fill.rs` compares both, and `verify` on the
//! fleet recomputes the read tables from the images.
//!
//! Three connections share the work (records and chain; facts; words and order), each in
//! one transaction, so that the server's work runs on more than one core; while a bench's
//! incidents stream in, each connection sends from its own thread (`fill_stream`). The ingest
//! triggers of the loaded tables are disabled for the load, and when the fleet is smaller
//! than what is added the secondary indexes of the chain and the read tables are dropped
//! and made again at the end (one build instead of millions of index inserts; see
//! [`REBUILT`]), as are the records' foreign keys to the benches (one check of the whole
//! table instead of two lookups per row; the fill holds the records and benches tables to
//! itself until it ends, readers included). Nothing is visible to others before the
//! end; an error before it rolls everything back. The three commits come one after another:
//! a server lost between them would leave records without their read tables, which `verify`
//! on the fleet reports. The fill only makes benches the fleet does not know, and holds the
//! loaded tables to itself until it ends (disabling triggers locks a table).

use std::collections::BTreeMap;

use postgres::binary_copy::BinaryCopyInWriter;
use postgres::types::Type;
use postgres::Client;

use super::fill_stream::{stream_bench, RECORDS_COPY};
pub use super::fill_stream::{BenchRows, Streamed};
use super::sync::{link_hash, receipt_text};
use super::{Fleet, FleetError};
use crate::store::audit::{manifest_records, BATCH, INCIDENT};
use crate::store::{canon, outbox, Store};

/// The types of the columns of [`RECORDS_COPY`].
const RECORDS_TYPES: [Type; 9] = [
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::INT8,
    Type::INT8,
];

/// The tables whose secondary indexes each connection drops for the load and builds again
/// at its end (records and chain; facts; words and order). The indexes of `fleet_records`
/// stay: their keys come in nearly in order (time-ordered ids, each bench's references and
/// receipt in turn), so keeping them costs little while the client makes the incidents,
/// where building them again would read the largest table three times at the end.
const REBUILT: [&[&str]; 3] = [&["bench_chain"], &["fleet_facts"], &["fleet_search"]];

/// The secondary indexes of a table (not those behind a key or constraint): name, statement.
const SECONDARY_INDEXES: &str = "
SELECT quote_ident(x.relname), pg_get_indexdef(i.indexrelid)
FROM pg_index i
JOIN pg_class c ON c.oid = i.indrelid
JOIN pg_class x ON x.oid = i.indexrelid
WHERE c.relname = $1 AND c.relnamespace = 'public'::regnamespace
  AND NOT EXISTS (SELECT 1 FROM pg_constraint k WHERE k.conindid = i.indexrelid)
ORDER BY x.relname";

/// The foreign keys of `fleet_records` (to the benches): name, definition.
const FOREIGN_KEYS: &str = "
SELECT quote_ident(conname), pg_get_constraintdef(oid)
FROM pg_constraint
WHERE conrelid = 'public.fleet_records'::regclass AND contype = 'f'
ORDER BY conname";

/// A fill in progress: three connections, each in its own transaction.
pub struct BulkFill {
    links: [Client; 3],
    /// Indexes (and, on the first, the records' foreign keys) dropped for the load, per
    /// connection: (name, statement that makes it again).
    dropped: [Vec<(String, String)>; 3],
    /// The next receipt number and the fleet chain's last hash.
    fleet_seq: i64,
    prev_hash: String,
    /// The last place in the fleet's order of creation.
    ord: i64,
}

/// What a bench's fill wrote.
#[derive(Debug, Clone, PartialEq)]
pub struct BenchFilled {
    pub incidents: u64,
    pub records: i64,
    pub chain_rows: u64,
    pub files: u64,
}

fn begin(client: &mut Client) -> Result<(), FleetError> {
    client.batch_execute("BEGIN ISOLATION LEVEL READ COMMITTED")?;
    Ok(())
}

impl BulkFill {
    /// Open the fill on the fleet at `url` (as its owner, schema made) for the benches
    /// `codes`, about `incidents` in all; refused when the fleet knows one of them.
    pub fn begin(url: &str, codes: &[String], incidents: u64) -> Result<BulkFill, FleetError> {
        let mut links = [
            Fleet::connect(url)?.client,
            Fleet::connect(url)?.client,
            Fleet::connect(url)?.client,
        ];
        for c in links.iter_mut() {
            begin(c)?;
        }
        let [a, b, c] = &mut links;
        // one writer of the fleet's chain at a time, as fleet_push() takes it
        a.execute("SELECT pg_advisory_xact_lock(1397247047)", &[])?;
        let known: Vec<String> = a
            .query(
                "SELECT code FROM fleet_benches WHERE code = ANY($1) ORDER BY code",
                &[&codes],
            )?
            .iter()
            .map(|r| r.get(0))
            .collect();
        if !known.is_empty() {
            return Err(FleetError::Bench(format!(
                "the fleet already holds bench {}; the bulk fill only makes new benches (use a new fleet database, or --through-sync)",
                known.join(", ")
            )));
        }
        let last = a.query_opt(
            "SELECT fleet_seq, hash FROM fleet_receipts ORDER BY fleet_seq DESC LIMIT 1",
            &[],
        )?;
        let (fleet_seq, prev_hash) = match last {
            Some(r) => (r.get::<_, i64>(0) + 1, r.get(1)),
            None => (1, canon::GENESIS.to_string()),
        };
        let ord: i64 = c
            .query_one(
                "SELECT coalesce(max(ord), 0) FROM fleet_incident_order",
                &[],
            )?
            .get(0);
        let held: i64 = b.query_one("SELECT count(*) FROM fleet_facts", &[])?.get(0);
        let rebuild = u64::try_from(held).unwrap_or(0) < incidents;
        // the ingest triggers would work out again what this fill writes itself
        a.batch_execute(
            "ALTER TABLE fleet_records DISABLE TRIGGER USER;
             ALTER TABLE bench_chain DISABLE TRIGGER USER;",
        )?;
        let mut dropped: [Vec<(String, String)>; 3] = Default::default();
        if rebuild {
            for (k, client) in links.iter_mut().enumerate() {
                for table in REBUILT[k] {
                    for r in client.query(SECONDARY_INDEXES, &[table])? {
                        let (name, def): (String, String) = (r.get(0), r.get(1));
                        // the name comes from the catalog, quoted as an identifier
                        client.batch_execute(&format!("DROP INDEX {name}"))?;
                        dropped[k].push((name, def));
                    }
                }
            }
            // the records' two checks that their benches exist, one lookup per row and
            // check (about a third of the records' COPY), become one check of the whole
            // table at the end, on a connection that has nothing else to do then
            let [a, _, _] = &mut links;
            for r in a.query(FOREIGN_KEYS, &[])? {
                let (name, def): (String, String) = (r.get(0), r.get(1));
                // the name comes from the catalog, quoted as an identifier
                a.batch_execute(&format!("ALTER TABLE fleet_records DROP CONSTRAINT {name}"))?;
                // the definition pg_get_constraintdef gave for the constraint dropped
                let add = format!("ALTER TABLE fleet_records ADD CONSTRAINT {name} {def}");
                dropped[0].push((name, add));
            }
        }
        Ok(BulkFill {
            links,
            dropped,
            fleet_seq,
            prev_hash,
            ord,
        })
    }

    /// Bench `code`: its row, then its incidents, which `produce` hands to
    /// [`BenchRows::add`] in the order of the bench's chain, streamed in as they come (see
    /// `fill_stream`). What is left for [`BulkFill::end_bench`].
    pub fn fill_bench(
        &mut self,
        code: &str,
        produce: impl FnOnce(&mut BenchRows<'_>) -> Result<(), FleetError>,
    ) -> Result<Streamed, FleetError> {
        self.links[0].execute("INSERT INTO fleet_benches (code) VALUES ($1)", &[&code])?;
        stream_bench(
            &mut self.links,
            code,
            self.fleet_seq,
            &mut self.ord,
            produce,
        )
    }

    /// After a bench's stream: its chain and other records from `bench` (the file the
    /// stream came from), its files, its receipt and head.
    pub fn end_bench(&mut self, s: Streamed, bench: &Store) -> Result<BenchFilled, FleetError> {
        let [a, _, _] = &mut self.links;
        let code = s.code.as_str();
        let fleet_seq = self.fleet_seq;
        let chain = copy_chain(a, bench, code, fleet_seq)?;
        if chain.incidents != s.count {
            return Err(FleetError::Bench(format!(
                "bench {code}: its chain lists {} incidents, {} were streamed",
                chain.incidents, s.count
            )));
        }
        let mut records = i64::try_from(s.count).unwrap_or(i64::MAX);
        records += copy_others(a, code, fleet_seq, &chain.others)?;
        let mut files = 0;
        if let Some(dir) = bench.files_dir() {
            let mut sorted: Vec<&String> = s.files.iter().collect();
            sorted.sort();
            for sha in sorted {
                // a missing file is for `verify` to report, as a push leaves it out too
                let Ok(bytes) = std::fs::read(dir.join(sha)) else {
                    continue;
                };
                files += a.execute(
                    "INSERT INTO fleet_files (sha256, bytes) VALUES ($1, $2) ON CONFLICT DO NOTHING",
                    &[sha, &bytes],
                )?;
            }
        }
        let at: String = a
            .query_one(
                "SELECT to_char(clock_timestamp() AT TIME ZONE 'UTC', 'YYYY-MM-DD\"T\"HH24:MI:SS.MS\"Z\"')",
                &[],
            )?
            .get(0);
        let (last_seq, last_hash) = chain.head;
        let body = receipt_text(fleet_seq, &at, code, 1, last_seq, &last_hash, records);
        let hash = link_hash(&self.prev_hash, &body);
        a.execute(
            "INSERT INTO fleet_receipts (fleet_seq, at, bench, from_seq, to_seq, bench_hash,
                                         records, prev_hash, hash)
             VALUES ($1, $2, $3, 1, $4, $5, $6, $7, $8)",
            &[
                &fleet_seq,
                &at,
                &code,
                &last_seq,
                &last_hash,
                &records,
                &self.prev_hash,
                &hash,
            ],
        )?;
        a.execute(
            "UPDATE fleet_benches SET head_seq = $2, head_hash = $3, last_sync = now()
             WHERE code = $1",
            &[&code, &last_seq, &last_hash],
        )?;
        self.fleet_seq += 1;
        self.prev_hash = hash;
        Ok(BenchFilled {
            incidents: s.count,
            records,
            chain_rows: chain.rows,
            files,
        })
    }

    /// Finish: the words and order tables, the triggers and indexes back, each connection's
    /// work at once on the server; then commit all three and refresh the planner's figures.
    pub fn commit(self) -> Result<(), FleetError> {
        let BulkFill {
            mut links, dropped, ..
        } = self;
        on_each_link(&mut links, |k, client| finish_link(k, client, &dropped[k]))?;
        for client in links.iter_mut() {
            client.batch_execute("COMMIT")?;
        }
        const ANALYZE: [&str; 3] = [
            "ANALYZE fleet_records; ANALYZE bench_chain; ANALYZE fleet_benches",
            "ANALYZE fleet_facts",
            "ANALYZE fleet_search; ANALYZE fleet_incident_order",
        ];
        on_each_link(&mut links, |k, client| {
            client.batch_execute(ANALYZE[k])?;
            Ok(())
        })
    }
}

/// `work` on each connection at once, each in its own thread (the server works on all
/// three); the first error.
fn on_each_link(
    links: &mut [Client; 3],
    work: impl Fn(usize, &mut Client) -> Result<(), FleetError> + Sync,
) -> Result<(), FleetError> {
    let work = &work;
    let results: Vec<Result<(), FleetError>> = std::thread::scope(|scope| {
        let handles: Vec<_> = links
            .iter_mut()
            .enumerate()
            .map(|(k, client)| scope.spawn(move || work(k, client)))
            .collect();
        handles
            .into_iter()
            .map(|h| {
                h.join()
                    .unwrap_or_else(|_| Err(FleetError::Database("a fill thread panicked".into())))
            })
            .collect()
    });
    results.into_iter().collect()
}

/// One connection's end of the fill (in its own thread).
fn finish_link(
    k: usize,
    client: &mut Client,
    indexes: &[(String, String)],
) -> Result<(), FleetError> {
    if k == 0 {
        client.batch_execute(
            "ALTER TABLE fleet_records ENABLE TRIGGER USER;
             ALTER TABLE bench_chain ENABLE TRIGGER USER;",
        )?;
    }
    for (_, def) in indexes {
        // the statement that makes again an index (or foreign key) this fill dropped
        client.batch_execute(def)?;
    }
    Ok(())
}

/// A record other than a streamed incident, at its last touch: the row's seq and image.
type Others = BTreeMap<(String, String), (i64, Option<String>)>;

/// What the bench's chain held.
struct ChainCopied {
    rows: u64,
    head: (i64, String),
    /// Incidents inserted by their own rows or listed by batch rows.
    incidents: u64,
    others: Others,
}

/// Copy the bench's whole chain into `bench_chain`, and gather the records its rows make
/// (other than the incidents, which were streamed).
fn copy_chain(
    a: &mut Client,
    bench: &Store,
    code: &str,
    fleet_seq: i64,
) -> Result<ChainCopied, FleetError> {
    let sink = a.copy_in(
        "COPY bench_chain (bench, seq, at, actor, entity, entity_id, op, before, after,
                           prev_hash, hash, fleet_seq) FROM STDIN (FORMAT binary)",
    )?;
    let mut writer = BinaryCopyInWriter::new(
        sink,
        &[
            Type::TEXT,
            Type::INT8,
            Type::TEXT,
            Type::TEXT,
            Type::TEXT,
            Type::TEXT,
            Type::TEXT,
            Type::TEXT,
            Type::TEXT,
            Type::TEXT,
            Type::TEXT,
            Type::INT8,
        ],
    );
    let mut out = ChainCopied {
        rows: 0,
        head: (0, canon::GENESIS.to_string()),
        incidents: 0,
        others: BTreeMap::new(),
    };
    let mut failure: Option<FleetError> = None;
    bench
        .in_snapshot(|conn| {
            outbox::for_each_row(conn, 1, |row| {
                let problem = take_row(&row, &mut out);
                let written = problem.and_then(|()| {
                    writer
                        .write(&[
                            &code,
                            &row.seq,
                            &row.at,
                            &row.actor,
                            &row.entity,
                            &row.entity_id,
                            &row.op,
                            &row.before,
                            &row.after,
                            &row.prev_hash,
                            &row.hash,
                            &fleet_seq,
                        ])
                        .map_err(FleetError::from)
                });
                if let Err(e) = written {
                    failure = Some(e);
                    return Err(crate::store::StoreError::Database("copy".into()));
                }
                out.rows += 1;
                out.head = (row.seq, row.hash);
                Ok(())
            })
        })
        .map_err(|e| failure.take().unwrap_or_else(|| FleetError::from(e)))?;
    writer.finish()?;
    Ok(out)
}

/// Note what one chain row makes, or refuse a row this fill cannot apply as `fleet_push()`
/// would (it only makes new benches' first pushes of new records).
fn take_row(row: &outbox::ChainRow, out: &mut ChainCopied) -> Result<(), FleetError> {
    let refuse = |what: &str| {
        Err(FleetError::Bench(format!(
            "audit row {} ({} {}): {what}; the bulk fill takes only a new bench's records (use --through-sync)",
            row.seq, row.entity, row.entity_id
        )))
    };
    if row.actor == outbox::PULL_ACTOR {
        return refuse("a row pulled from the fleet");
    }
    if row.entity == BATCH {
        let listed = row
            .after
            .as_deref()
            .and_then(manifest_records)
            .unwrap_or_default();
        if listed.iter().any(|(entity, _, _)| entity != INCIDENT) {
            return refuse("a bulk-load row of records other than incidents");
        }
        out.incidents += listed.len() as u64;
    } else if row.entity == INCIDENT {
        if row.op != "insert" {
            return refuse("an incident changed after it was made");
        }
        out.incidents += 1;
    } else if row.entity == crate::store::moves::TRANSFER {
        return refuse("a transfer");
    } else {
        out.others.insert(
            (row.entity.clone(), row.entity_id.clone()),
            (row.seq, row.after.clone()),
        );
    }
    Ok(())
}

/// Copy the other records at their last touch; returns how many count in the receipt
/// (lookup entries, kept per origin, do not).
fn copy_others(
    a: &mut Client,
    code: &str,
    fleet_seq: i64,
    others: &Others,
) -> Result<i64, FleetError> {
    let mut writer = BinaryCopyInWriter::new(a.copy_in(RECORDS_COPY)?, &RECORDS_TYPES);
    let mut counted = 0i64;
    let none: Option<String> = None;
    for ((entity, id), (seq, image)) in others {
        let digest = image.as_ref().map(|i| canon::sha256_hex(i.as_bytes()));
        writer.write(&[
            entity, id, &code, &code, image, &digest, &none, seq, &fleet_seq,
        ])?;
        if entity != "lookup" {
            counted += 1;
        }
    }
    writer.finish()?;
    Ok(counted)
}
