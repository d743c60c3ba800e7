//! Bulk loading of a new database file (the demo generator), and of a large import into an
//! existing one: indexes and the fleet statistics' triggers are dropped for the load and put
//! back after it; the incidents are made ready on a second thread while this one writes
//! them; the text index of an empty database is built on a third thread in a database of its
//! own and copied in at the end. Everything that names SQLite stays here; the caller hands
//! over domain records.

use std::path::{Path, PathBuf};
use std::sync::mpsc;

use rusqlite::{Transaction, TransactionBehavior};

use super::audit::{Bulk, Chain, INCIDENT};
use super::incidents::{
    fill_fleet_facts_after, insert_prepared, prepare, prepare_rendered, Prepared,
};
use super::model::*;
use super::{files, refdata, sqlite, IdGen, Store, StoreError};

/// The reference `<prefix><n>` of the `n`th incident found on a day.
pub(crate) use super::incidents::format_reference;
/// Keys of the records an incident refers to (site, asset, supplier, product, lot).
pub(crate) use super::incidents::Refs;

/// Incidents made ready per hand-over between the threads: fewer wake-ups than one by one.
const HAND_OVER: usize = 256;

/// One hand-over of incidents made ready, each in its own allocation (made, and freed, on
/// the maker thread; the writer only moves them).
type Ready = Vec<Box<Prepared>>;

/// A new incident for [`BulkLoad::write_incidents`]: the record, the keys of the records it
/// refers to, and who entered it when.
pub(crate) struct NewIncident {
    pub incident: Incident,
    pub refs: Refs,
    pub stamp: Stamp,
    /// The stored texts of its results, rendered aside (per examination) while the record
    /// holds their figures only; None: the record holds its results whole.
    pub rendered: Option<Vec<Option<super::rendered::RenderedResult>>>,
}

impl NewIncident {
    /// Made ready for the writer: its audit digest, searchable text and row texts.
    pub(crate) fn prepare(self) -> Result<Prepared, StoreError> {
        match self.rendered {
            Some(r) => prepare_rendered(self.incident, self.refs, self.stamp, r),
            None => prepare(self.incident, self.refs, self.stamp),
        }
    }
}

/// How the incidents of a bulk load are audited.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AuditRows {
    /// One audit row per incident with its full image, as the interface writes them.
    OnePerIncident,
    /// One batch row per 1,000 incidents listing their digests; `seed` makes the batch
    /// rows' keys.
    Batched { seed: u64 },
}

/// Where a bulk load keeps attachment files (`<database>.files/`).
#[derive(Debug, Clone)]
pub struct AttachmentFolder(PathBuf);

impl AttachmentFolder {
    /// Store `bytes` under their SHA-256 name; returns the hash (hex).
    pub fn put(&self, bytes: &[u8]) -> Result<String, StoreError> {
        files::put_bytes(&self.0, bytes)
    }
}

/// A new database file being filled by one bulk load.
pub struct BulkFile {
    store: Store,
    path: PathBuf,
    attachments: AttachmentFolder,
}

impl BulkFile {
    /// Create the database at `path` with keys made from `id_seed`; its attachments go
    /// beside `final_path` (the name the file will have when `path` is a temporary one).
    pub fn create(path: &Path, final_path: &Path, id_seed: u64) -> Result<BulkFile, StoreError> {
        let mut store = Store::open(path)?;
        store.set_id_seed(id_seed);
        sqlite::set_bulk_pragmas(&store.conn)?;
        Ok(BulkFile {
            store,
            path: path.to_path_buf(),
            attachments: AttachmentFolder(files::dir_for(final_path)),
        })
    }

    /// Start the load's one transaction, with the indexes and the fleet statistics'
    /// triggers dropped (they are put back by [`BulkLoad::write_incidents`]).
    pub fn begin(&mut self) -> Result<BulkLoad<'_>, StoreError> {
        let attachments = self.attachments.clone();
        begin_load(
            &mut self.store.conn,
            &mut self.store.ids,
            attachments,
            TransactionBehavior::Deferred,
            true,
        )
        .map(|mut load| {
            load.text_in_memory = true;
            load
        })
    }
}

/// A bulk load into a store's database (a large import), on its connection and key
/// generator, in one immediate transaction that [`BulkLoad::write_incidents`] commits (or
/// rolls back, after [`BulkLoad::roll_back_at_end`]). The fleet statistics' triggers are
/// dropped and their copy filled for the new incidents at the end; the indexes are dropped
/// and rebuilt only when `drop_indexes` (rebuilding costs the whole table, worth it when the
/// load is at least as large as what is there); the text index is built aside only while the
/// database has no incident, else written row by row.
pub(crate) fn begin_bulk<'s>(
    conn: &'s mut rusqlite::Connection,
    ids: &'s mut IdGen,
    files_dir: Option<&Path>,
    drop_indexes: bool,
) -> Result<BulkLoad<'s>, StoreError> {
    let attachments = AttachmentFolder(files_dir.map(Path::to_path_buf).unwrap_or_default());
    begin_load(
        conn,
        ids,
        attachments,
        TransactionBehavior::Immediate,
        drop_indexes,
    )
}

/// The transaction of a bulk load, with the triggers (and, when `drop_indexes`, the
/// indexes) of the incident tables dropped.
fn begin_load<'s>(
    conn: &'s mut rusqlite::Connection,
    ids: &'s mut IdGen,
    attachments: AttachmentFolder,
    behavior: TransactionBehavior,
    drop_indexes: bool,
) -> Result<BulkLoad<'s>, StoreError> {
    let indexes = if drop_indexes {
        schema_objects(
            conn,
            "SELECT name, sql FROM sqlite_master WHERE type = 'index' AND sql IS NOT NULL
             AND tbl_name IN ('incidents', 'plies', 'examinations', 'mirror_readings', 'custody', 'attachments', 'audit')",
        )?
    } else {
        Vec::new()
    };
    // the fleet statistics' copy (incident_facts) is kept by triggers on every write; the
    // bulk load drops them and fills the copy in one pass at the end, as the migration does
    let triggers = schema_objects(
        conn,
        "SELECT name, sql FROM sqlite_master WHERE type = 'trigger' AND sql IS NOT NULL
         AND tbl_name = 'incidents'",
    )?;
    let tx = conn.transaction_with_behavior(behavior)?;
    for (name, _) in &indexes {
        // names come from sqlite_master, not from a user
        tx.execute_batch(&format!("DROP INDEX \"{}\"", name.replace('"', "")))?;
    }
    for (name, _) in &triggers {
        // names come from sqlite_master, not from a user
        tx.execute_batch(&format!("DROP TRIGGER \"{}\"", name.replace('"', "")))?;
    }
    let last_seq: i64 = tx.query_row("SELECT COALESCE(MAX(seq), 0) FROM incidents", [], |r| {
        r.get(0)
    })?;
    let chain = Chain::load(&tx)?;
    Ok(BulkLoad {
        tx,
        ids,
        chain,
        indexes,
        triggers,
        attachments,
        last_stamp: None,
        facts_after: last_seq,
        text_aside: last_seq == 0,
        text_in_memory: false,
        commit: true,
    })
}

impl BulkFile {
    /// After the load: statistics for the query planner, then the file's own settings.
    pub fn finish(self) -> Result<(), StoreError> {
        // a fresh connection: this one may hold the text index's layout from before the copy
        drop(self.store);
        let store = Store::open(&self.path)?;
        store
            .conn
            // ANALYZE reads every page once: through SQLite's cache, not the read map, which
            // would count the whole file in this process's resident memory. Its samples of key
            // values go (schema/0013_plain_statistics.sql says why); the row counts stay.
            .execute_batch(
                "PRAGMA mmap_size = 0; PRAGMA journal_mode = DELETE; ANALYZE; PRAGMA optimize;
                 DROP TABLE IF EXISTS sqlite_stat4;",
            )?;
        // the file's own settings (WAL); the read map set here is this connection's only
        sqlite::set_file_pragmas(&store.conn)?;
        Ok(())
    }
}

/// (name, statement) of the schema objects a query of `sqlite_master` lists.
fn schema_objects(
    conn: &rusqlite::Connection,
    sql: &str,
) -> Result<Vec<(String, String)>, StoreError> {
    let mut stmt = conn.prepare(sql)?;
    let rows = stmt.query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?;
    Ok(rows.collect::<Result<_, _>>()?)
}

/// The one transaction of a bulk load. Every record added gets its audit row.
pub struct BulkLoad<'s> {
    tx: Transaction<'s>,
    ids: &'s mut IdGen,
    chain: Chain,
    indexes: Vec<(String, String)>,
    triggers: Vec<(String, String)>,
    attachments: AttachmentFolder,
    /// The stamp of the last record written (batch audit rows carry it).
    last_stamp: Option<Stamp>,
    /// The last incident row before the load: the fleet statistics' copy is filled after it.
    facts_after: i64,
    /// Build the text index aside and copy it in (only into a database without incidents).
    text_aside: bool,
    /// Build it aside in memory, its texts queued without a bound (the demo, whose writer
    /// never waits); else in a temporary file, the queue bounded (an import: memory bounded
    /// whatever the file's size).
    text_in_memory: bool,
    /// Commit at the end (else roll back: a dry run).
    commit: bool,
}

impl<'s> BulkLoad<'s> {
    /// A new key (UUIDv7) for a record made at `millis`.
    pub fn new_id(&mut self, millis: i64) -> String {
        self.ids.uuid_v7(millis)
    }

    /// Where the load keeps attachment files.
    pub fn attachments(&self) -> AttachmentFolder {
        self.attachments.clone()
    }

    /// Roll the whole load back at the end instead of committing it (a dry run).
    pub(crate) fn roll_back_at_end(&mut self) {
        self.commit = false;
    }

    /// The load's transaction, audit chain and key generator, for records the caller writes
    /// itself before the incidents (an import's reference data).
    pub(crate) fn writing(&mut self) -> (&rusqlite::Connection, &mut Chain, &mut IdGen) {
        (&self.tx, &mut self.chain, &mut *self.ids)
    }

    /// Insert one reference record with its audit row.
    fn add<T>(
        &mut self,
        insert: fn(&rusqlite::Connection, &mut Chain, &T, &Stamp) -> Result<(), StoreError>,
        record: &T,
        stamp: &Stamp,
    ) -> Result<(), StoreError> {
        insert(&self.tx, &mut self.chain, record, stamp)?;
        self.last_stamp = Some(stamp.clone());
        Ok(())
    }

    pub fn add_site(&mut self, site: &Site, stamp: &Stamp) -> Result<(), StoreError> {
        self.add(refdata::insert_site, site, stamp)
    }

    pub fn add_supplier(&mut self, supplier: &Supplier, stamp: &Stamp) -> Result<(), StoreError> {
        self.add(refdata::insert_supplier, supplier, stamp)
    }

    pub fn add_product(&mut self, product: &Product, stamp: &Stamp) -> Result<(), StoreError> {
        self.add(refdata::insert_product, product, stamp)
    }

    pub fn add_lot(&mut self, lot: &Lot, stamp: &Stamp) -> Result<(), StoreError> {
        self.add(refdata::insert_lot, lot, stamp)
    }

    pub fn add_asset(&mut self, asset: &Asset, stamp: &Stamp) -> Result<(), StoreError> {
        self.add(refdata::insert_asset, asset, stamp)
    }

    pub fn add_exposure(&mut self, exposure: &Exposure, stamp: &Stamp) -> Result<(), StoreError> {
        self.add(refdata::insert_exposure, exposure, stamp)
    }

    /// Write the incidents `make` returns, one call each, until it returns `None`; then
    /// finish the audit chain, fill the fleet statistics' copy, put the indexes and
    /// triggers back, copy the text index in and commit. Returns how many were written.
    ///
    /// `make` runs on a second thread (with the load's key generator) while this one
    /// writes; the result is the same as a single-threaded run: every key, draw and row
    /// comes in the same sequence.
    pub(crate) fn write_incidents<F>(self, audit: AuditRows, make: F) -> Result<u64, StoreError>
    where
        F: FnMut(&mut IdGen) -> Option<Result<NewIncident, StoreError>> + Send,
    {
        let mut make = make;
        self.write_prepared(audit, move |ids: &mut IdGen| {
            make(ids).map(|n| n.and_then(|n| n.prepare().map(Box::new)))
        })
    }

    /// [`BulkLoad::write_incidents`] of incidents `make` returns made ready already
    /// (`incidents::prepare`, `prepare_rendered`): a caller that makes them ready on
    /// several threads of its own.
    pub(crate) fn write_prepared<F>(self, audit: AuditRows, make: F) -> Result<u64, StoreError>
    where
        F: FnMut(&mut IdGen) -> Option<Result<Box<Prepared>, StoreError>> + Send,
    {
        let BulkLoad {
            tx,
            ids,
            mut chain,
            indexes,
            triggers,
            mut last_stamp,
            facts_after,
            text_aside,
            text_in_memory,
            commit,
            ..
        } = self;
        let mut bulk = match audit {
            AuditRows::OnePerIncident => None,
            AuditRows::Batched { seed } => Some(Bulk::new(INCIDENT, seed)),
        };
        let (to_writer, from_maker) = mpsc::sync_channel::<Ready>(4);
        // what the writer is done with goes back to be freed where it was made (freeing
        // across threads is dear), without its searchable text, which goes to the text thread
        let (spent, spent_back) = mpsc::channel::<Ready>();
        // The text index is built on a third thread in a database of its own, in memory, made
        // by the same statement; its tables are copied in at the end (sqlite::fts_copy_index).
        // The index is the same as inserting every text here, in the same order. The texts
        // queue up without a bound, so the writer never waits for that thread, which catches
        // up while the writer builds the fleet facts and the indexes.
        let text_sql = sqlite::fts_create_sql(&tx)?;
        let (to_text, from_writer) = TextQueue::new(text_in_memory);
        let mut written = 0u64;
        std::thread::scope(|scope| -> Result<(), StoreError> {
            let texter =
                scope.spawn(move || build_text_index(&text_sql, from_writer, text_in_memory));
            let maker = scope.spawn(move || make_ready(make, ids, to_writer, spent_back));
            let mut write = || -> Result<(), StoreError> {
                for mut prepared in from_maker.iter() {
                    let mut texts = Vec::with_capacity(prepared.len());
                    for p in prepared.iter_mut() {
                        let seq = insert_prepared(&tx, &mut chain, p, bulk.as_mut())?;
                        written += 1;
                        if text_aside {
                            texts.push((seq, p.take_body()));
                        } else {
                            sqlite::fts_insert(&tx, seq, &p.take_body())?;
                        }
                    }
                    if let Some(p) = prepared.last() {
                        last_stamp = Some(p.stamp.clone());
                    }
                    // a stopped maker or text thread reports its own error
                    let _ = spent.send(prepared);
                    if to_text.send(texts).is_err() {
                        break;
                    }
                }
                Ok(())
            };
            let wrote = write();
            drop(from_maker); // lets a maker blocked on a full channel finish
            drop(to_text); // the text thread finishes its index
            let made = maker
                .join()
                .map_err(|_| StoreError::Database("the demo generator thread panicked".into()))?;
            wrote.and(made)?;
            if let (Some(bulk), Some(stamp)) = (bulk.as_mut(), &last_stamp) {
                bulk.flush(&tx, &mut chain, stamp)?;
            }
            chain.finish(&tx)?;
            fill_fleet_facts_after(&tx, facts_after)?;
            for (_, sql) in &triggers {
                tx.execute_batch(sql)?;
            }
            for (_, sql) in &indexes {
                tx.execute_batch(sql)?;
            }
            let text_index = texter.join().map_err(|_| {
                StoreError::Database("the demo text-index thread panicked".into())
            })??;
            if text_aside {
                sqlite::fts_copy_index(&text_index, &tx)?;
            }
            Ok(())
        })?;
        if commit {
            tx.commit()?;
        }
        Ok(written)
    }
}

/// An incident of a streamed load ([`BulkLoad::stream_incidents`]): the record, its canonical
/// image and that image's SHA-256 (hex), and the audit row that covers it.
pub struct StreamedIncident {
    pub incident: Incident,
    pub image: String,
    pub digest: String,
    /// The sequence number of the audit row that lists it (its batch row, or its own row).
    pub seq: i64,
}

impl<'s> BulkLoad<'s> {
    /// [`BulkLoad::write_incidents`] without writing the incidents: each one's audit row (or
    /// its place in a batch row) is written exactly as there, the file's chain ends where
    /// that load's would, and the incidents go to `sink` in the order of the chain, each with
    /// its image and the row that covers it (a batch's incidents once that row is written).
    /// The database keeps no incident: it is a source of the chain and the reference
    /// records for a bulk fill of another store (the fleet), not a bench to work on.
    pub(crate) fn stream_incidents<F>(
        self,
        audit: AuditRows,
        make: F,
        mut sink: impl FnMut(StreamedIncident) -> Result<(), StoreError>,
    ) -> Result<u64, StoreError>
    where
        F: FnMut(&mut IdGen) -> Option<Result<NewIncident, StoreError>> + Send,
    {
        let BulkLoad {
            tx,
            ids,
            mut chain,
            indexes,
            triggers,
            mut last_stamp,
            commit,
            ..
        } = self;
        let mut bulk = match audit {
            AuditRows::OnePerIncident => None,
            AuditRows::Batched { seed } => Some(Bulk::new(INCIDENT, seed)),
        };
        type Imaged = Vec<(NewIncident, String, String)>;
        let (to_writer, from_maker) = mpsc::sync_channel::<Imaged>(4);
        let mut written = 0u64;
        // a batch's incidents wait for the row that lists them
        let mut waiting: Vec<(Incident, String, String)> = Vec::new();
        std::thread::scope(|scope| -> Result<(), StoreError> {
            let maker = scope.spawn(move || {
                let mut make = make;
                let mut batch = Vec::with_capacity(HAND_OVER);
                while let Some(next) = make(ids) {
                    let n = next?;
                    if n.rendered.is_some() {
                        return Err(StoreError::Database(
                            "a streamed load takes incidents that hold their results whole".into(),
                        ));
                    }
                    let image = super::canon::incident_image(&n.incident)?;
                    let digest = super::canon::sha256_hex(image.as_bytes());
                    batch.push((n, image, digest));
                    if batch.len() == HAND_OVER {
                        let full = std::mem::replace(&mut batch, Vec::with_capacity(HAND_OVER));
                        if to_writer.send(full).is_err() {
                            return Ok(()); // the writer stopped on an error: it reports it
                        }
                    }
                }
                if !batch.is_empty() {
                    let _ = to_writer.send(batch);
                }
                Ok::<(), StoreError>(())
            });
            let mut write = || -> Result<(), StoreError> {
                for ready in from_maker.iter() {
                    for (n, image, digest) in ready {
                        let before = chain.seq();
                        match bulk.as_mut() {
                            Some(b) => b.add_digest(
                                &tx,
                                &mut chain,
                                &n.stamp,
                                &n.incident.id,
                                digest.clone(),
                            )?,
                            None => chain.record(
                                &tx,
                                &n.stamp,
                                INCIDENT,
                                &n.incident.id,
                                None,
                                Some(&image),
                            )?,
                        }
                        last_stamp = Some(n.stamp);
                        written += 1;
                        waiting.push((n.incident, image, digest));
                        if chain.seq() != before {
                            for (incident, image, digest) in waiting.drain(..) {
                                let seq = chain.seq();
                                sink(StreamedIncident {
                                    incident,
                                    image,
                                    digest,
                                    seq,
                                })?;
                            }
                        }
                    }
                }
                Ok(())
            };
            let wrote = write();
            drop(from_maker); // lets a maker blocked on a full channel finish
            let made = maker
                .join()
                .map_err(|_| StoreError::Database("the demo generator thread panicked".into()))?;
            wrote.and(made)?;
            if let (Some(bulk), Some(stamp)) = (bulk.as_mut(), &last_stamp) {
                bulk.flush(&tx, &mut chain, stamp)?;
            }
            for (incident, image, digest) in waiting.drain(..) {
                let seq = chain.seq();
                sink(StreamedIncident {
                    incident,
                    image,
                    digest,
                    seq,
                })?;
            }
            chain.finish(&tx)?;
            for (_, sql) in triggers.iter().chain(&indexes) {
                tx.execute_batch(sql)?;
            }
            Ok(())
        })?;
        if commit {
            tx.commit()?;
        }
        Ok(written)
    }
}

/// The maker thread: each incident `make` returns, made ready (audit digest, searchable
/// text) and handed to the writer in batches.
fn make_ready<F>(
    mut make: F,
    ids: &mut IdGen,
    to_writer: mpsc::SyncSender<Ready>,
    spent_back: mpsc::Receiver<Ready>,
) -> Result<(), StoreError>
where
    F: FnMut(&mut IdGen) -> Option<Result<Box<Prepared>, StoreError>>,
{
    let mut batch = Vec::with_capacity(HAND_OVER);
    while let Some(next) = make(ids) {
        batch.push(next?);
        if batch.len() == HAND_OVER {
            drop(spent_back.try_iter().collect::<Vec<_>>());
            let full = std::mem::replace(&mut batch, Vec::with_capacity(HAND_OVER));
            if to_writer.send(full).is_err() {
                return Ok(()); // the writer stopped on an error: it reports it
            }
        }
    }
    if !batch.is_empty() {
        let _ = to_writer.send(batch); // a stopped writer reports its own error
    }
    Ok(())
}

/// Texts for the text thread: queued without a bound, or with one.
enum TextQueue {
    Unbounded(mpsc::Sender<Vec<(i64, String)>>),
    Bounded(mpsc::SyncSender<Vec<(i64, String)>>),
}

impl TextQueue {
    /// The queue and its receiving end; `unbounded` or bounded to a few hand-overs.
    fn new(unbounded: bool) -> (TextQueue, mpsc::Receiver<Vec<(i64, String)>>) {
        if unbounded {
            let (tx, rx) = mpsc::channel();
            (TextQueue::Unbounded(tx), rx)
        } else {
            let (tx, rx) = mpsc::sync_channel(16);
            (TextQueue::Bounded(tx), rx)
        }
    }

    /// Err: the text thread stopped (it reports its own error).
    fn send(&self, texts: Vec<(i64, String)>) -> Result<(), ()> {
        match self {
            TextQueue::Unbounded(tx) => tx.send(texts).map_err(|_| ()),
            TextQueue::Bounded(tx) => tx.send(texts).map_err(|_| ()),
        }
    }
}

/// The text thread: the index of every (seq, text) received, in a database of its own, in
/// memory or in a temporary file (deleted when closed).
fn build_text_index(
    create_sql: &str,
    from_writer: mpsc::Receiver<Vec<(i64, String)>>,
    in_memory: bool,
) -> Result<rusqlite::Connection, StoreError> {
    let aside = if in_memory {
        rusqlite::Connection::open_in_memory()?
    } else {
        // an empty name: a private temporary file, its pages beyond the cache on disk
        let aside = rusqlite::Connection::open("")?;
        aside.execute_batch(
            "PRAGMA journal_mode = OFF; PRAGMA synchronous = OFF; PRAGMA cache_size = -16384;",
        )?;
        aside
    };
    aside.execute_batch(create_sql)?;
    let atx = aside.unchecked_transaction()?;
    for batch in from_writer.iter() {
        for (seq, body) in batch {
            sqlite::fts_insert(&atx, seq, &body)?;
        }
    }
    atx.commit()?;
    Ok(aside)
}

#[cfg(test)]
mod tests {
    use super::super::incidents;
    use super::*;

    /// Every row of FTS5's own tables of the text index, in order.
    fn text_index_rows(conn: &rusqlite::Connection) -> Vec<(String, Vec<rusqlite::types::Value>)> {
        let names: Vec<String> = sqlite::fts_shadow_tables(conn)
            .unwrap()
            .into_iter()
            .map(|(name, _)| name)
            .collect();
        assert!(names.len() >= 3, "{names:?}");
        let mut out = Vec::new();
        for n in names {
            let mut stmt = conn.prepare(&format!("SELECT * FROM \"{n}\"")).unwrap();
            let cols = stmt.column_count();
            let mut rows = stmt.query([]).unwrap();
            while let Some(r) = rows.next().unwrap() {
                let v = (0..cols).map(|i| r.get(i).unwrap()).collect();
                out.push((n.clone(), v));
            }
        }
        out
    }

    /// The demo builds its text index on another thread and copies FTS5's tables in: the
    /// result must be the very index that inserting each incident's text here gives.
    #[test]
    fn the_text_index_built_aside_is_the_one_built_in_place() {
        let (_dir, db) = crate::demo::temp_demo(600, 7);
        let demo = rusqlite::Connection::open(&db).unwrap();
        let in_place = rusqlite::Connection::open_in_memory().unwrap();
        in_place
            .execute_batch(&sqlite::fts_create_sql(&demo).unwrap())
            .unwrap();
        // one transaction, as the demo writes it
        in_place.execute_batch("BEGIN").unwrap();
        let mut n = 0;
        incidents::for_each_incident(&demo, |inc, _| {
            let seq: i64 = demo
                .query_row("SELECT seq FROM incidents WHERE id = ?1", [&inc.id], |r| {
                    r.get(0)
                })
                .unwrap();
            let body = incidents::search_body(&inc);
            n += 1;
            sqlite::fts_insert(&in_place, seq, &body)
        })
        .unwrap();
        in_place.execute_batch("COMMIT").unwrap();
        assert_eq!(n, 600);
        let (a, b) = (text_index_rows(&demo), text_index_rows(&in_place));
        assert!(a.len() > 600, "{}", a.len());
        let first = a.iter().zip(&b).position(|(x, y)| x != y);
        assert!(
            a == b,
            "the demo's text index differs from one built in place ({} against {} rows; first difference at {first:?}: {:?})",
            a.len(),
            b.len(),
            first.map(|i| (&a[i].0, &b[i].0))
        );
        // and FTS5 finds it whole
        demo.execute_batch("INSERT INTO incident_text (incident_text) VALUES ('integrity-check')")
            .unwrap();
    }
}
