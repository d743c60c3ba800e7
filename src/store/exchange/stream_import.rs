//! A large CSV import (more lines than the bulk threshold) read a chunk of records at a
//! time, never held whole, in three passes over the file's bytes:
//! 1. read and check every record (the one-pass problem report, in the order the whole-file
//!    path gives it), keeping only what checks across records need (keys and references
//!    seen, the duplicate keys, the lots' heat-soak records);
//! 2. in the load's one transaction, make every incident ready in the file's order (its
//!    keys, its reference, the records it names with their audit rows), keeping only where
//!    the key generator jumped past the keys of new records, and each day's first number;
//! 3. read the file again and hand each incident, its results computed once and rendered
//!    straight to their stored texts, with the same keys as in 2, to the bulk path's writer.
//!
//! The same rows and the same audit chain as the ordinary path; all or nothing.

use std::collections::{HashMap, HashSet};
use std::path::PathBuf;

use super::super::audit::Chain;
use super::super::bulk::{begin_bulk, AuditRows, NewIncident};
use super::super::incidents::{Prepared, RefCache, Refs};
use super::super::model::*;
use super::super::{IdGen, MaterialBook, Store, StoreError};
use super::admission::{self, AttachmentFiles};
use super::csv::{gather_heat_soak, CsvRecord, CsvStream};
use super::import::{
    list_valid_codes, ready_keys, Checker, DuplicatesSeen, ImportResult, Numbering, Place,
    WriteError, Writer,
};
use super::onepass::{self, Vocabulary};
use super::{ExportDoc, ImportOptions, ImportRejected, ImportSummary, Problem};

/// Records read at a time.
const CHUNK: usize = 4_096;

/// What the checks of the first pass leave for the writing.
struct Checked {
    /// References the file gives (the numbering skips them).
    seen_refs: HashSet<String>,
    files: AttachmentFiles,
    /// The lots' heat-soak records the rows give.
    doc: ExportDoc,
    /// Records read.
    records: usize,
}

/// A record of the file read again that reads differently: the file's bytes are the same,
/// so this is the program's failure, not the file's.
fn read_again(p: impl std::fmt::Display) -> StoreError {
    StoreError::Database(format!("the file read again: {p}"))
}

impl Store {
    /// Whether a CSV file takes the streamed bulk path: more lines after its header than
    /// the bulk threshold (every record takes at least one line).
    pub(super) fn streams(&self, bytes: &[u8]) -> bool {
        let lines = bytes.iter().filter(|&&b| b == b'\n').count()
            + usize::from(!bytes.is_empty() && !bytes.ends_with(b"\n"));
        lines.saturating_sub(1) > self.bulk_import_above
    }

    /// Import a large CSV file's bytes in chunks (see the module's description).
    pub(super) fn import_csv_streamed(
        &mut self,
        bytes: &[u8],
        options: ImportOptions,
        stamp: &Stamp,
    ) -> ImportResult {
        let vocabulary = Vocabulary::new(self.all_lookups()?);
        let book = self.material_book()?;
        let outcome = match self.check_streamed(bytes, &vocabulary, &book, &options, stamp)? {
            Err(problems) => Ok(Err(ImportRejected { problems })),
            Ok(checked) => {
                let copied = if options.dry_run {
                    Ok(())
                } else {
                    self.copy_attachment_files(&checked.files)
                };
                match copied {
                    Err(p) => Ok(Err(ImportRejected { problems: vec![p] })),
                    Ok(()) => {
                        self.write_streamed(bytes, &checked, &vocabulary, &book, options, stamp)
                    }
                }
            }
        };
        match outcome {
            Ok(Err(mut rejected)) => {
                for p in &mut rejected.problems {
                    list_valid_codes(&vocabulary, p);
                }
                rejected.problems.sort_by_key(onepass::line_of);
                Ok(Err(rejected))
            }
            other => other,
        }
    }

    /// The first pass: every record read and checked; Err: every problem of the file.
    fn check_streamed(
        &self,
        bytes: &[u8],
        vocabulary: &Vocabulary,
        book: &MaterialBook,
        options: &ImportOptions,
        stamp: &Stamp,
    ) -> Result<Result<Checked, Vec<Problem>>, StoreError> {
        let mut stream = match CsvStream::open(bytes) {
            Ok(s) => s,
            Err(problems) => return Ok(Err(problems)),
        };
        let mut doc = ExportDoc::empty();
        let mut checker = Checker::new(self, &doc, options, stamp)?;
        // the problems of reading the records, found before the checks (as the whole-file
        // path finds them): reported before the checks' own, line by line
        let mut early = Vec::new();
        let mut seen = DuplicatesSeen::default();
        let mut soak_lines = HashMap::new();
        let total = Some(bytes.iter().filter(|&&b| b == b'\n').count() as u64);
        let mut records = 0usize;
        loop {
            let chunk = match stream.next_records(CHUNK, stamp, &mut early) {
                Ok(chunk) => chunk,
                Err(p) => return Ok(Err(vec![p])),
            };
            if chunk.is_empty() {
                break;
            }
            let read =
                onepass::read_records(chunk, vocabulary, book, stamp.at, onepass::Keep::Figures);
            for (
                CsvRecord {
                    line,
                    mut incident,
                    lot_heat_soak,
                },
                computed,
            ) in read
            {
                if let Some(h) = lot_heat_soak {
                    gather_heat_soak(
                        line,
                        &incident,
                        h,
                        &mut doc.lot_heat_soak,
                        &mut soak_lines,
                        &mut early,
                    );
                }
                early.extend(computed);
                if !options.allow_duplicates {
                    self.note_duplicates(Place::Line(line), &incident, &mut seen, &mut early)?;
                }
                admission::normalize_keys(&mut incident);
                self.report_progress("checking", records as u64, total);
                checker.check(self, Place::Line(line), &incident)?;
                records += 1;
            }
        }
        // the whole-file path's order: the reading's problems, the document's, the records'
        let checks = std::mem::replace(&mut checker.problems, early);
        checker.check_doc_head(&doc);
        checker.problems.extend(checks);
        let Checker {
            seen_refs,
            files,
            problems,
            ..
        } = checker;
        if !problems.is_empty() {
            return Ok(Err(problems));
        }
        Ok(Ok(Checked {
            seen_refs,
            files,
            doc,
            records,
        }))
    }

    /// The second and third passes, in the bulk path's one transaction (rolled back on a
    /// dry run or a refusal).
    fn write_streamed(
        &mut self,
        bytes: &[u8],
        checked: &Checked,
        vocabulary: &Vocabulary,
        book: &MaterialBook,
        options: ImportOptions,
        stamp: &Stamp,
    ) -> ImportResult {
        let existing = self.incident_count()?;
        let drop_indexes = existing <= checked.records as u64;
        let mut summary = ImportSummary {
            dry_run: options.dry_run,
            ..ImportSummary::default()
        };
        let left_wal = super::super::sqlite::leave_wal_for_load(&self.conn)?;
        // keys made by this import ascend (they all carry the import's millisecond)
        self.ids.set_monotonic(true);
        let files = self.files_dir().map(|p| p.to_path_buf());
        let outcome = load_streamed(
            self,
            Load {
                files,
                drop_indexes,
                bytes,
                checked,
                vocabulary,
                book,
                options: &options,
                stamp,
            },
            &mut summary,
        );
        self.bulk_outcome(outcome, left_wal, options.dry_run, summary)
    }
}

/// What the writing passes are given.
struct Load<'a> {
    files: Option<PathBuf>,
    drop_indexes: bool,
    bytes: &'a [u8],
    checked: &'a Checked,
    vocabulary: &'a Vocabulary,
    book: &'a MaterialBook,
    options: &'a ImportOptions,
    stamp: &'a Stamp,
}

/// The load: reference data, the incidents made ready (pass 2), the lots' heat-soak records,
/// then the incidents written by the bulk path (pass 3): the order of the ordinary path
/// (import.rs, `Writer::write_all`).
fn load_streamed(
    store: &mut Store,
    load: Load<'_>,
    summary: &mut ImportSummary,
) -> Result<(), WriteError> {
    let whole = |e: StoreError| ("import".to_string(), e);
    let progress = &store.progress;
    let mut bulk = begin_bulk(
        &mut store.conn,
        &mut store.ids,
        load.files.as_deref(),
        load.drop_indexes,
    )
    .map_err(whole)?;
    let total = Some(load.checked.records as u64);
    let (replay, seed) = {
        let (tx, chain, ids) = bulk.writing();
        let mut writer = Writer {
            tx,
            ids,
            stamp: load.stamp,
            summary: &mut *summary,
            progress,
        };
        writer.write_lookups(chain, &load.checked.doc)?;
        writer.write_reference_data(chain, &load.checked.doc)?;
        // the batch audit rows' keys, drawn where the ordinary path draws them
        let seed = writer.ids.next_u64();
        let replay = ready_streamed(&mut writer, chain, &load, total)?;
        // the lots the rows named exist now: their heat-soak records
        writer.write_lot_heat_soak(chain, &load.checked.doc)?;
        (replay, seed)
    };
    if load.options.dry_run {
        bulk.roll_back_at_end();
    }
    progress.tell("writing", 0, total);
    let stream = CsvStream::open(load.bytes).map_err(|p| whole(read_again(problem_list(&p))))?;
    let mut maker = Maker {
        stream,
        replay,
        vocabulary: load.vocabulary,
        book: load.book,
        seen_refs: &load.checked.seen_refs,
        stamp: load.stamp.clone(),
        ready: Vec::new().into_iter(),
    };
    let written = bulk
        .write_prepared(AuditRows::Batched { seed }, move |_: &mut IdGen| {
            maker.next()
        })
        .map_err(whole)?;
    summary.incidents += written as usize;
    Ok(())
}

fn problem_list(problems: &[Problem]) -> String {
    problems
        .iter()
        .map(|p| p.to_string())
        .collect::<Vec<_>>()
        .join("; ")
}

/// The second pass: every record made ready in the file's order as the ordinary path makes
/// it (`Writer::ready`: keys, reference, the records it names, created with their audit
/// rows); the incidents themselves are not kept. Returns how to make their keys again.
fn ready_streamed(
    writer: &mut Writer<'_>,
    chain: &mut Chain,
    load: &Load<'_>,
    total: Option<u64>,
) -> Result<Replay, WriteError> {
    let whole = |e: StoreError| ("import".to_string(), e);
    let start = writer.ids.clone();
    let mut numbering = Numbering::default();
    let mut jumps = HashMap::new();
    let mut stream =
        CsvStream::open(load.bytes).map_err(|p| whole(read_again(problem_list(&p))))?;
    let mut ignored = Vec::new();
    let mut i = 0usize;
    loop {
        let chunk = stream
            .next_records(CHUNK, load.stamp, &mut ignored)
            .map_err(|p| whole(read_again(p)))?;
        if chunk.is_empty() {
            break;
        }
        ignored.clear();
        for record in chunk {
            let mut inc = record.incident;
            admission::normalize_keys(&mut inc);
            writer.progress.tell("importing", i as u64, total);
            let before = chain.seq();
            writer.ready(
                chain,
                &mut numbering,
                Place::Line(record.line),
                inc,
                &load.checked.seen_refs,
                load.options.strict,
            )?;
            // keys were drawn for records it named: the replay takes the generator from here
            if chain.seq() != before {
                jumps.insert(i, writer.ids.clone());
            }
            i += 1;
        }
    }
    let (numbering, refs) = numbering.again();
    Ok(Replay {
        ids: start,
        numbering,
        refs,
        jumps,
        next: 0,
    })
}

/// The keys of every incident made again as the second pass made them: the same generator
/// from the same state, jumping where that pass drew keys for the records an incident named;
/// the same numbering of references; the named records' keys from that pass.
struct Replay {
    ids: IdGen,
    numbering: Numbering,
    refs: RefCache,
    jumps: HashMap<usize, IdGen>,
    next: usize,
}

impl Replay {
    fn ready(
        &mut self,
        mut inc: Incident,
        stamp: &Stamp,
        seen_refs: &HashSet<String>,
    ) -> Result<(Incident, Refs), StoreError> {
        ready_keys(&mut self.ids, &mut inc, stamp);
        if inc.reference.is_empty() {
            inc.reference = self.numbering.next(inc.found_on, seen_refs)?;
        }
        let refs = self.refs.known(&inc).ok_or_else(|| {
            read_again(format!(
                "incident {} names a record not made ready",
                inc.reference
            ))
        })?;
        if let Some(ids) = self.jumps.remove(&self.next) {
            self.ids = ids;
        }
        self.next += 1;
        Ok((inc, refs))
    }
}

/// The third pass, on the bulk path's maker thread: the file read again a chunk at a time,
/// each record's keys made again (in the file's order, here), then its results computed and
/// rendered and the record made ready for the writer (audit digest, searchable and row
/// texts) on up to four threads (`onepass::in_parts`), handed on one by one.
struct Maker<'a> {
    stream: CsvStream<'a>,
    replay: Replay,
    vocabulary: &'a Vocabulary,
    book: &'a MaterialBook,
    seen_refs: &'a HashSet<String>,
    stamp: Stamp,
    ready: std::vec::IntoIter<Box<Prepared>>,
}

impl Maker<'_> {
    fn next(&mut self) -> Option<Result<Box<Prepared>, StoreError>> {
        if let Some(n) = self.ready.next() {
            return Some(Ok(n));
        }
        match self.fill() {
            Ok(true) => self.ready.next().map(Ok),
            Ok(false) => None,
            Err(e) => Some(Err(e)),
        }
    }

    /// The next chunk of records made whole and ready; false at the end of the file.
    fn fill(&mut self) -> Result<bool, StoreError> {
        let mut ignored = Vec::new();
        let chunk = self
            .stream
            .next_records(CHUNK, &self.stamp, &mut ignored)
            .map_err(read_again)?;
        if chunk.is_empty() {
            return Ok(false);
        }
        // the keys do not depend on the results (nor on the lookup cells read as codes)
        let mut keyed = Vec::with_capacity(chunk.len());
        for record in chunk {
            let mut inc = record.incident;
            admission::normalize_keys(&mut inc);
            let (incident, refs) = self.replay.ready(inc, &self.stamp, self.seen_refs)?;
            keyed.push((record.line, incident, refs));
        }
        let (vocabulary, book, stamp) = (self.vocabulary, self.book, &self.stamp);
        let made = onepass::in_parts(
            keyed,
            |scratch: &mut String, (line, mut inc, refs): (usize, Incident, Refs)| {
                vocabulary.resolve(&mut inc);
                let rendered = onepass::compute_rendered(&mut inc, line, stamp.at, book, scratch)?;
                NewIncident {
                    incident: inc,
                    refs,
                    stamp: stamp.clone(),
                    rendered: Some(rendered),
                }
                .prepare()
                .map(Box::new)
            },
        );
        self.ready = made
            .into_iter()
            .collect::<Result<Vec<_>, StoreError>>()?
            .into_iter();
        Ok(true)
    }
}
