//! One bench's incidents streamed into the fleet during a bulk fill
//! ([`super::BulkFill::fill_bench`]). The thread that receives the incidents works out each
//! one's rows and encodes them; one thread per connection sends them, so that a connection
//! whose server process is behind holds up neither the others nor the making of incidents,
//! and the server's work on each table runs beside the client's:
//! - the records, by binary COPY into `fleet_records`;
//! - the facts, by binary COPY into `fleet_facts`;
//! - the words and the order of creation, a statement per thousand incidents that inserts
//!   both, the words made a tsvector as they are inserted (nothing is left to do for them at
//!   the end of the fill but the search index).

use std::collections::HashSet;
use std::io::Write;
use std::sync::mpsc::{sync_channel, Receiver, SyncSender};

use postgres::Client;

use super::copy_rows::CopyRows;
use super::fill_facts::{fact_row, fleet_reference};
use super::FleetError;
use crate::store::audit::INCIDENT;
use crate::store::bulk::StreamedIncident;

/// The fleet's records as a fill copies them in (here, and for a bench's other records).
pub(super) const RECORDS_COPY: &str = "COPY fleet_records (entity, id, origin, owner, image, \
     digest, reference, bench_seq, fleet_seq) FROM STDIN (FORMAT binary)";

const FACTS_COPY: &str = "COPY fleet_facts (id, origin, owner, ord, reference, found_on, asset, \
     position, site, product, supplier, lot, status, cause, origin_type, temper, stress_pa, \
     applied_stress_pa) FROM STDIN (FORMAT binary)";

/// The words (as `fleet_facts_source` makes them: `to_tsvector('simple', …)`) and the place
/// in the order of creation of a thousand incidents of bench $1.
const WORDS_INSERT: &str = "WITH placed AS (
         INSERT INTO fleet_incident_order (id, bench, ord)
         SELECT id, $1, ord FROM unnest($2::text[], $3::int8[]) AS t(id, ord))
     INSERT INTO fleet_search (id, doc)
     SELECT id, to_tsvector('simple', words) FROM unnest($2::text[], $4::text[]) AS t(id, words)
     WHERE words IS NOT NULL";

/// Incidents per statement of words and order.
const WORDS_BATCH: usize = 1000;
/// Chunks (or word batches) that may wait for each connection.
const QUEUED: usize = 8;

/// What a bench's stream left for [`super::BulkFill::end_bench`].
pub struct Streamed {
    pub(super) code: String,
    pub(super) count: u64,
    pub(super) files: HashSet<String>,
}

/// Bytes for a COPY: more of them, or the last.
enum Piece {
    More(Vec<u8>),
    Last(Vec<u8>),
}

/// The words and places of up to [`WORDS_BATCH`] incidents.
#[derive(Default)]
struct Words {
    ids: Vec<String>,
    ords: Vec<i64>,
    words: Vec<Option<String>>,
}

/// Why a connection's thread ended without finishing its part.
enum Stop {
    /// The server or the connection failed.
    Failed(FleetError),
    /// The incidents stopped coming before their end (the maker's error is the one told).
    Abandoned,
}

impl From<postgres::Error> for Stop {
    fn from(e: postgres::Error) -> Self {
        Stop::Failed(FleetError::from(e))
    }
}

impl From<std::io::Error> for Stop {
    fn from(e: std::io::Error) -> Self {
        let server = e
            .get_ref()
            .and_then(|inner| inner.downcast_ref::<postgres::Error>());
        Stop::Failed(match server {
            Some(pe) => super::connect::classify(pe),
            None => FleetError::Database(e.to_string()),
        })
    }
}

/// The incidents of one bench being streamed in: the rows made ready, and where they go.
pub struct BenchRows<'s> {
    code: &'s str,
    fleet_seq: i64,
    ord: i64,
    records: CopyRows,
    facts: CopyRows,
    words: Words,
    to_records: SyncSender<Piece>,
    to_facts: SyncSender<Piece>,
    to_words: SyncSender<Option<Words>>,
    count: u64,
    files: HashSet<String>,
}

/// The connection a piece could not be handed to has stopped; its thread tells why.
fn stopped<T>(_: T) -> FleetError {
    FleetError::Database("a connection of the fill stopped".into())
}

impl BenchRows<'_> {
    /// Add one incident of the stream (in the order of the bench's chain).
    pub fn add(&mut self, s: StreamedIncident) -> Result<(), FleetError> {
        let code = self.code;
        let row = fact_row(code, &s.image)?;
        let reference = match &row {
            Some(f) => f.reference.clone(),
            None => fleet_reference(code, &s.image),
        };
        self.ord += 1;
        let ord = self.ord;
        self.records
            .row(9)
            .text(INCIDENT)
            .text(&s.incident.id)
            .text(code)
            .text(code)
            .text(&s.image)
            .text(&s.digest)
            .text(&reference)
            .int8(s.seq)
            .int8(self.fleet_seq);
        if let Some(f) = &row {
            self.facts
                .row(18)
                .text(&s.incident.id)
                .text(code)
                .text(code)
                .int8(ord)
                .text(&f.reference)
                .text(&f.found_on)
                .text_or_null(f.asset.as_deref())
                .text(&f.position)
                .text_or_null(f.site.as_deref())
                .text_or_null(f.product.as_deref())
                .text_or_null(f.supplier.as_deref())
                .text_or_null(f.lot.as_deref())
                .text(&f.status)
                .text_or_null(f.cause.as_deref())
                .text_or_null(f.origin_type.as_deref())
                .text_or_null(f.temper.as_deref())
                .float8_or_null(f.stress_pa)
                .float8_or_null(f.applied_stress_pa);
        }
        for a in &s.incident.attachments {
            if !self.files.contains(&a.sha256) {
                self.files.insert(a.sha256.clone());
            }
        }
        self.words.ids.push(s.incident.id);
        self.words.ords.push(ord);
        self.words.words.push(row.map(|f| f.words));
        self.count += 1;
        if let Some(chunk) = self.records.full_chunk() {
            self.to_records.send(Piece::More(chunk)).map_err(stopped)?;
        }
        if let Some(chunk) = self.facts.full_chunk() {
            self.to_facts.send(Piece::More(chunk)).map_err(stopped)?;
        }
        if self.words.ids.len() >= WORDS_BATCH {
            let batch = std::mem::take(&mut self.words);
            self.to_words.send(Some(batch)).map_err(stopped)?;
        }
        Ok(())
    }

    /// Hand over the last rows of every stream.
    fn end(&mut self) -> Result<(), FleetError> {
        let records = std::mem::replace(&mut self.records, CopyRows::new());
        let facts = std::mem::replace(&mut self.facts, CopyRows::new());
        self.to_records
            .send(Piece::Last(records.end()))
            .map_err(stopped)?;
        self.to_facts
            .send(Piece::Last(facts.end()))
            .map_err(stopped)?;
        let batch = std::mem::take(&mut self.words);
        if !batch.ids.is_empty() {
            self.to_words.send(Some(batch)).map_err(stopped)?;
        }
        self.to_words.send(None).map_err(stopped)
    }
}

/// Stream bench `code`'s incidents, which `produce` hands to [`BenchRows::add`], into the
/// three connections (records and chain; facts; words and order), each sending from its own
/// thread. `ord` is the last place in the fleet's order of creation, moved on by as many.
/// The first failure is told: a connection's own before the one it caused in the maker.
pub(super) fn stream_bench(
    links: &mut [Client; 3],
    code: &str,
    fleet_seq: i64,
    ord: &mut i64,
    produce: impl FnOnce(&mut BenchRows<'_>) -> Result<(), FleetError>,
) -> Result<Streamed, FleetError> {
    let [a, b, c] = links;
    let (to_records, records) = sync_channel(QUEUED);
    let (to_facts, facts) = sync_channel(QUEUED);
    let (to_words, words) = sync_channel(QUEUED);
    std::thread::scope(|scope| {
        let senders = [
            scope.spawn(move || copy_in(a, RECORDS_COPY, records)),
            scope.spawn(move || copy_in(b, FACTS_COPY, facts)),
            scope.spawn(move || insert_words(c, code, words)),
        ];
        let mut rows = BenchRows {
            code,
            fleet_seq,
            ord: *ord,
            records: CopyRows::new(),
            facts: CopyRows::new(),
            words: Words::default(),
            to_records,
            to_facts,
            to_words,
            count: 0,
            files: HashSet::new(),
        };
        let produced = produce(&mut rows).and_then(|()| rows.end());
        let BenchRows {
            ord: last,
            count,
            files,
            ..
        } = rows; // the senders go: a thread still waiting learns that nothing more comes
        let mut failed = None;
        let mut abandoned = false;
        for handle in senders {
            match handle.join() {
                Ok(Ok(())) => {}
                Ok(Err(Stop::Failed(e))) => {
                    failed.get_or_insert(e);
                }
                Ok(Err(Stop::Abandoned)) => abandoned = true,
                Err(_) => {
                    failed.get_or_insert(FleetError::Database(
                        "a connection thread of the fill panicked".into(),
                    ));
                }
            }
        }
        if let Some(e) = failed {
            return Err(e);
        }
        produced?;
        if abandoned {
            return Err(FleetError::Database(
                "a connection of the fill ended before its rows".into(),
            ));
        }
        *ord = last;
        Ok(Streamed {
            code: code.to_string(),
            count,
            files,
        })
    })
}

/// One COPY on `client` of the pieces as they come; finished only at the last piece (else
/// dropped, which aborts it).
fn copy_in(client: &mut Client, sql: &str, pieces: Receiver<Piece>) -> Result<(), Stop> {
    let mut writer = client.copy_in(sql)?;
    for piece in pieces.iter() {
        match piece {
            Piece::More(bytes) => writer.write_all(&bytes)?,
            Piece::Last(bytes) => {
                writer.write_all(&bytes)?;
                writer.finish()?;
                return Ok(());
            }
        }
    }
    Err(Stop::Abandoned)
}

/// The words and order statements of the batches as they come, until the end mark.
fn insert_words(
    client: &mut Client,
    code: &str,
    batches: Receiver<Option<Words>>,
) -> Result<(), Stop> {
    let statement = client.prepare(WORDS_INSERT)?;
    for batch in batches.iter() {
        let Some(w) = batch else {
            return Ok(());
        };
        client.execute(&statement, &[&code, &w.ids, &w.ords, &w.words])?;
    }
    Err(Stop::Abandoned)
}
