//! Import: records read by a codec are checked as a whole, then written in one transaction.
//! All or nothing: any problem, and nothing is written.

use std::collections::{HashMap, HashSet};

use chrono::NaiveDate;
use rusqlite::{Connection, TransactionBehavior};

use super::super::audit::{Bulk, Chain, INCIDENT};
use super::super::incidents::{
    self, format_reference, next_reference, reference_prefix, RefCache, Refs,
};
use super::super::model::*;
use super::super::progress::ProgressSlot;
use super::super::refdata;
use super::super::{IdGen, LookupSet, MaterialBook, Store, StoreError};
use super::admission::{self, AttachmentFiles, ReferenceCase};
use super::csv::{parse_csv_all, CsvRecord};
use super::json::parse_json;
use super::onepass::{self, Vocabulary};
use super::{
    ExportDoc, FileKind, ImportOptions, ImportRejected, ImportSummary, Problem, MAX_IMPORT_BYTES,
};

/// What an import returns: a summary, or the problems that refused it (nothing written);
/// the outer error is the machine's, not the file's.
pub(super) type ImportResult = Result<Result<ImportSummary, ImportRejected>, StoreError>;

/// Where an incident sits in the import file.
#[derive(Debug, Clone, Copy)]
pub(super) enum Place {
    /// The physical line a CSV record starts on.
    Line(usize),
    /// The position in a JSON document's `incidents`.
    Index(usize),
}

impl Place {
    pub(super) fn at(self) -> String {
        match self {
            Place::Line(n) => format!("line {n}"),
            Place::Index(i) => format!("incidents[{i}]"),
        }
    }

    /// A problem with one field of the incident: a CSV record names its column (the
    /// model's path only for a field the flat view has no column for), a JSON path names
    /// the field in the place.
    fn field_problem(self, field: &str, message: String) -> Problem {
        match self {
            Place::Line(n) => match onepass::csv_column(field) {
                Some(column) => Problem::new(format!("line {n}, column {column}"), message),
                None => Problem::new(self.at(), format!("{field}: {message}")),
            },
            Place::Index(_) => Problem::new(format!("{}.{field}", self.at()), message),
        }
    }
}

impl Store {
    /// Import a file's bytes (JSON or CSV by name or content). All or nothing.
    pub fn import_bytes(
        &mut self,
        name: &str,
        bytes: &[u8],
        options: ImportOptions,
        stamp: &Stamp,
    ) -> ImportResult {
        if bytes.len() > MAX_IMPORT_BYTES {
            return Ok(Err(ImportRejected {
                problems: vec![Problem::new(
                    "file",
                    format!("is larger than {} MB", MAX_IMPORT_BYTES >> 20),
                )],
            }));
        }
        match FileKind::detect(name, bytes) {
            FileKind::Json => match parse_json(bytes) {
                Ok(doc) => self.import_json(doc, options, stamp),
                Err(problems) => Ok(Err(ImportRejected { problems })),
            },
            FileKind::Csv if self.streams(bytes) => self.import_csv_streamed(bytes, options, stamp),
            FileKind::Csv => match parse_csv_all(bytes, stamp) {
                Ok((records, problems)) => {
                    self.import_csv_reporting(records, problems, options, stamp)
                }
                Err(problems) => Ok(Err(ImportRejected { problems })),
            },
        }
    }

    /// Import the records of a CSV file. All or nothing; problems name the record's line
    /// and the CSV column.
    pub fn import_csv(
        &mut self,
        records: Vec<CsvRecord>,
        options: ImportOptions,
        stamp: &Stamp,
    ) -> ImportResult {
        self.import_csv_reporting(records, Vec::new(), options, stamp)
    }

    /// [`Store::import_csv`] with the problems the reading already found: lookup cells are
    /// read as codes or labels, results are computed from the readings, possible duplicates
    /// are found, and every problem of the file is reported at once, in line order.
    fn import_csv_reporting(
        &mut self,
        records: Vec<CsvRecord>,
        mut early: Vec<Problem>,
        options: ImportOptions,
        stamp: &Stamp,
    ) -> ImportResult {
        let vocabulary = Vocabulary::new(self.all_lookups()?);
        let book = self.material_book()?;
        let mut seen = DuplicatesSeen::default();
        let mut incidents = Vec::with_capacity(records.len());
        let mut doc = ExportDoc::empty();
        let mut soak_lines: HashMap<(String, String, String), usize> = HashMap::new();
        // a file that takes the bulk path keeps its results' figures only until it is written
        let keep = if records.len() > self.bulk_import_above {
            onepass::Keep::Figures
        } else {
            onepass::Keep::Whole
        };
        let read = onepass::read_records(records, &vocabulary, &book, stamp.at, keep);
        for (
            CsvRecord {
                line,
                incident,
                lot_heat_soak,
            },
            computed,
        ) in read
        {
            if let Some(h) = lot_heat_soak {
                super::csv::gather_heat_soak(
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
            incidents.push((Place::Line(line), incident));
        }
        let deferred = (keep == onepass::Keep::Figures).then_some(book);
        let result = self.import_placed(doc, incidents, early, options, stamp, deferred);
        match result {
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

    /// A problem for a record with the same asset, position and date found as one recorded
    /// or one earlier in the file.
    pub(super) fn note_duplicates(
        &self,
        place: Place,
        inc: &Incident,
        seen: &mut DuplicatesSeen,
        problems: &mut Vec<Problem>,
    ) -> Result<(), StoreError> {
        let Some(key) = onepass::duplicate_key(inc) else {
            return Ok(());
        };
        let recorded = match seen.recorded {
            Some(r) => r,
            None => *seen.recorded.insert(self.incident_count()? > 0),
        };
        // a database without incidents holds no duplicate: not asked row by row
        let mut same: Vec<String> = if recorded {
            self.possible_duplicates(inc)?
        } else {
            Vec::new()
        };
        if let Some(first) = seen.keys.get(&key) {
            same.push(format!("{first} of this file"));
        } else {
            seen.keys.insert(key, place.at());
        }
        if !same.is_empty() {
            problems.push(Problem::new(
                place.at(),
                format!(
                    "possible duplicate of {} (same asset, position and date found); \
                     --allow-duplicates imports it anyway",
                    same.join(", ")
                ),
            ));
        }
        Ok(())
    }

    /// Import a JSON export document. All or nothing; problems name the JSON path.
    pub fn import_json(
        &mut self,
        mut doc: ExportDoc,
        options: ImportOptions,
        stamp: &Stamp,
    ) -> ImportResult {
        let incidents: Vec<(Place, Incident)> = std::mem::take(&mut doc.incidents)
            .into_iter()
            .enumerate()
            .map(|(i, inc)| (Place::Index(i), inc))
            .collect();
        let mut early = Vec::new();
        if !options.allow_duplicates {
            let mut seen = DuplicatesSeen::default();
            for (place, inc) in &incidents {
                self.note_duplicates(*place, inc, &mut seen, &mut early)?;
            }
        }
        self.import_placed(doc, incidents, early, options, stamp, None)
    }

    /// Check the reference data of `doc` and the incidents, then write them all or nothing;
    /// `early` holds the problems found before the checks (reported with theirs). With
    /// `deferred`, the incidents' computed results are figures only, completed with that
    /// material book as they are written ([`onepass::Keep::Figures`]).
    fn import_placed(
        &mut self,
        doc: ExportDoc,
        mut incidents: Vec<(Place, Incident)>,
        early: Vec<Problem>,
        options: ImportOptions,
        stamp: &Stamp,
        deferred: Option<MaterialBook>,
    ) -> ImportResult {
        for (_, inc) in &mut incidents {
            admission::normalize_keys(inc);
        }
        let mut checker = Checker::new(self, &doc, &options, stamp)?;
        checker.problems = early;
        checker.check_doc_head(&doc);
        let total = Some(incidents.len() as u64);
        for (i, (place, inc)) in incidents.iter().enumerate() {
            self.report_progress("checking", i as u64, total);
            checker.check(self, *place, inc)?;
        }
        for (i, e) in doc.exposure.iter().enumerate() {
            if e.panes < 0 {
                checker.problems.push(Problem::new(
                    format!("exposure[{i}].panes"),
                    "must not be negative",
                ));
            }
        }
        if !checker.problems.is_empty() {
            return Ok(Err(ImportRejected {
                problems: checker.problems,
            }));
        }
        if !options.dry_run {
            if let Err(p) = self.copy_attachment_files(&checker.files) {
                return Ok(Err(ImportRejected { problems: vec![p] }));
            }
        }
        self.write_import(
            &doc,
            incidents,
            &checker.seen_refs,
            options,
            stamp,
            deferred,
        )
    }

    /// Copy the checked files of the attachment rows into the attachment folder, before
    /// the rows are written (a file without a row is harmless; a row without its file is not).
    pub(super) fn copy_attachment_files(&self, files: &AttachmentFiles) -> Result<(), Problem> {
        if files.to_copy.is_empty() {
            return Ok(());
        }
        let Some(dir) = self.files_dir() else {
            return Err(Problem::new(
                "attachments",
                "this database has no attachment folder (in memory)",
            ));
        };
        for (sha, path) in &files.to_copy {
            let bytes = super::super::safe_file::read_regular(
                path,
                super::super::files::MAX_ATTACHMENT_BYTES,
            )
            .map_err(|e| Problem::new("attachments", e.to_string()))?;
            let put = super::super::files::put_bytes(dir, &bytes)
                .map_err(|e| Problem::new("attachments", e.to_string()))?;
            if &put != sha {
                return Err(Problem::new(
                    path.display().to_string(),
                    "changed while it was being imported",
                ));
            }
        }
        Ok(())
    }

    /// Write what was checked in one transaction (rolled back on a dry run or a refusal).
    fn write_import(
        &mut self,
        doc: &ExportDoc,
        mut incidents: Vec<(Place, Incident)>,
        seen_refs: &HashSet<String>,
        options: ImportOptions,
        stamp: &Stamp,
        deferred: Option<MaterialBook>,
    ) -> ImportResult {
        if incidents.len() > self.bulk_import_above {
            // the bulk path completes deferred results on its maker thread
            return self.write_import_bulk(doc, incidents, seen_refs, options, stamp, deferred);
        }
        if let Some(book) = &deferred {
            for (_, inc) in &mut incidents {
                onepass::complete_results(inc, stamp.at, book)?;
            }
        }
        let mut summary = ImportSummary {
            dry_run: options.dry_run,
            ..ImportSummary::default()
        };
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)?;
        // keys made by this import ascend (they all carry the import's millisecond)
        self.ids.set_monotonic(true);
        let mut writer = Writer {
            tx: &tx,
            ids: &mut self.ids,
            stamp,
            summary: &mut summary,
            progress: &self.progress,
        };
        let result = writer.write_all(doc, incidents, seen_refs, options.strict);
        self.ids.set_monotonic(false);
        match result {
            // the machine, not a line of the file, refused: say so as such
            Err((_, e @ StoreError::Storage(_))) => Err(e),
            Err((place, e)) => {
                drop(tx); // rolls back
                Ok(Err(ImportRejected {
                    problems: vec![Problem::new(place, e.to_string())],
                }))
            }
            Ok(()) => {
                if options.dry_run {
                    drop(tx);
                } else {
                    tx.commit()?;
                    self.load_lookups()?;
                }
                Ok(Ok(summary))
            }
        }
    }
}

/// The duplicate check's memory over one import: each key met (asset, position, date found)
/// with the first place it was met, and whether the database held incidents when asked.
#[derive(Default)]
pub(super) struct DuplicatesSeen {
    keys: HashMap<(String, String, NaiveDate), String>,
    recorded: Option<bool>,
}

/// A refusal of an unknown code in a CSV column says which codes (and labels) it takes.
pub(super) fn list_valid_codes(vocabulary: &Vocabulary, p: &mut Problem) {
    let Some(column) = p.place.split(", column ").nth(1) else {
        return;
    };
    let Some(kind) = onepass::column_kind(column) else {
        return;
    };
    if p.message.starts_with("unknown ") && p.message.contains(" code ") {
        p.message = format!(
            "{}; expected a code or label (any case) of: {}",
            p.message,
            vocabulary.listing(kind)
        );
    }
}

/// Lookup entries and codes that exist once the import is written: those of the database
/// and those of the file.
struct KnownCodes {
    lookups: LookupSet,
    sites: HashSet<String>,
    assets: HashSet<String>,
    suppliers: HashSet<String>,
    products: HashSet<(String, String)>,
    lots: HashSet<(String, String, String)>,
}

impl KnownCodes {
    fn after_import(store: &Store, doc: &ExportDoc) -> Result<KnownCodes, StoreError> {
        let mut lookups = store.lookups.clone();
        for e in &doc.lookups {
            lookups.insert((e.kind.as_str().to_string(), e.code.clone()));
        }
        let mut sites: HashSet<String> = store.sites()?.into_iter().map(|s| s.code).collect();
        sites.extend(doc.sites.iter().map(|s| s.code.clone()));
        let mut assets: HashSet<String> = store.assets()?.into_iter().map(|s| s.code).collect();
        assets.extend(doc.assets.iter().map(|s| s.code.clone()));
        let mut suppliers: HashSet<String> =
            store.suppliers()?.into_iter().map(|s| s.code).collect();
        suppliers.extend(doc.suppliers.iter().map(|s| s.code.clone()));
        let mut products: HashSet<(String, String)> = store
            .products(None)?
            .into_iter()
            .map(|p| (p.supplier, p.code))
            .collect();
        products.extend(
            doc.products
                .iter()
                .map(|p| (p.supplier.clone(), p.code.clone())),
        );
        let mut lots: HashSet<(String, String, String)> = store
            .lots(None, None)?
            .into_iter()
            .map(|l| (l.supplier, l.product, l.code))
            .collect();
        lots.extend(
            doc.lots
                .iter()
                .map(|l| (l.supplier.clone(), l.product.clone(), l.code.clone())),
        );
        Ok(KnownCodes {
            lookups,
            sites,
            assets,
            suppliers,
            products,
            lots,
        })
    }
}

/// The checks of an import's incidents, before anything is written.
pub(super) struct Checker {
    known: KnownCodes,
    /// The library and this bench's own materials, for recomputing stored results.
    book: MaterialBook,
    strict: bool,
    seen_ids: HashSet<String>,
    pub(super) seen_refs: HashSet<String>,
    reference_case: ReferenceCase,
    pub(super) files: AttachmentFiles,
    /// The import's clock.
    now: chrono::DateTime<chrono::Utc>,
    pub(super) problems: Vec<Problem>,
}

impl Checker {
    /// The checks of an import of `doc` (its reference data) and its incidents.
    pub(super) fn new(
        store: &Store,
        doc: &ExportDoc,
        options: &ImportOptions,
        stamp: &Stamp,
    ) -> Result<Checker, StoreError> {
        Ok(Checker {
            known: KnownCodes::after_import(store, doc)?,
            book: store.material_book()?,
            strict: options.strict,
            seen_ids: HashSet::new(),
            seen_refs: HashSet::new(),
            reference_case: ReferenceCase::default(),
            files: AttachmentFiles::new(options.attachments.as_deref(), store.files_dir()),
            now: stamp.at,
            problems: Vec::new(),
        })
    }

    /// The problems of the document's reference data found before its incidents' (its
    /// dates, its lookup codes).
    pub(super) fn check_doc_head(&mut self, doc: &ExportDoc) {
        self.problems
            .extend(admission::reference_dates_out_of_range(doc));
        for (i, e) in doc.lookups.iter().enumerate() {
            if e.code.trim().is_empty() {
                self.problems.push(Problem::new(
                    format!("lookups[{i}].code"),
                    "must not be empty",
                ));
            }
        }
    }

    fn push(&mut self, place: String, message: impl Into<String>) {
        self.problems.push(Problem::new(place, message));
    }

    /// Validation, keys and references, and in strict mode the codes, of one incident.
    pub(super) fn check(
        &mut self,
        store: &Store,
        place: Place,
        inc: &Incident,
    ) -> Result<(), StoreError> {
        for (field, msg) in incidents::validate(&self.known.lookups, inc) {
            self.problems.push(place.field_problem(&field, msg));
        }
        let mut more = admission::future_times(inc, self.now);
        more.extend(self.files.check(inc));
        if matches!(place, Place::Index(_)) {
            more.extend(admission::results_that_do_not_follow(inc, &self.book));
        }
        for (field, msg) in more {
            self.problems.push(place.field_problem(&field, msg));
        }
        let at = place.at();
        if !inc.id.is_empty() {
            if uuid::Uuid::parse_str(&inc.id).is_err() {
                self.push(format!("{at}.id"), format!("\"{}\" is not a UUID", inc.id));
            }
            if !self.seen_ids.insert(inc.id.clone()) {
                self.push(
                    format!("{at}.id"),
                    format!("{} appears twice in the file", inc.id),
                );
            } else if store.find(&inc.id)?.is_some() {
                self.push(
                    format!("{at}.id"),
                    format!("{} is already in the database", inc.id),
                );
            }
        }
        if !inc.reference.is_empty() {
            if inc.reference.len() > 64 || inc.reference.chars().any(char::is_control) {
                self.push(
                    format!("{at}.reference"),
                    "is not a usable reference (at most 64 characters, no control characters)",
                );
            } else if !self.seen_refs.insert(inc.reference.clone()) {
                self.push(
                    format!("{at}.reference"),
                    format!("{} appears twice in the file", inc.reference),
                );
            } else if store.find(&inc.reference)?.is_some() {
                self.push(
                    format!("{at}.reference"),
                    format!("{} is already in the database", inc.reference),
                );
            } else if let Some(m) = self.reference_case.clash(store, &inc.reference, &at)? {
                self.push(format!("{at}.reference"), m);
            }
        }
        if self.strict {
            self.check_codes(&at, inc);
        }
        Ok(())
    }

    /// Strict mode: every code the incident names exists after the import.
    fn check_codes(&mut self, at: &str, inc: &Incident) {
        let g = &inc.glass;
        if let Some(s) = &inc.site {
            if !self.known.sites.contains(s) {
                self.push(
                    format!("{at}.site"),
                    format!("unknown site \"{s}\" (strict mode)"),
                );
            }
        }
        if let Some(a) = &inc.asset {
            if !self.known.assets.contains(a) {
                self.push(
                    format!("{at}.asset"),
                    format!("unknown asset \"{a}\" (strict mode)"),
                );
            }
        }
        let Some(s) = &g.supplier else { return };
        if !self.known.suppliers.contains(s) {
            self.push(
                format!("{at}.glass.supplier"),
                format!("unknown supplier \"{s}\" (strict mode)"),
            );
            return;
        }
        let Some(pr) = &g.product else { return };
        if !self.known.products.contains(&(s.clone(), pr.clone())) {
            self.push(
                format!("{at}.glass.product"),
                format!("supplier {s} has no product \"{pr}\" (strict mode)"),
            );
            return;
        }
        if let Some(l) = &g.lot {
            if !self
                .known
                .lots
                .contains(&(s.clone(), pr.clone(), l.clone()))
            {
                self.push(
                    format!("{at}.glass.lot"),
                    format!("product {s}/{pr} has no lot \"{l}\" (strict mode)"),
                );
            }
        }
    }
}

/// A failure while writing, with the place in the file it belongs to.
pub(super) type WriteError = (String, StoreError);

/// The writing half of an import, inside its transaction.
pub(super) struct Writer<'a> {
    pub tx: &'a Connection,
    pub ids: &'a mut IdGen,
    pub stamp: &'a Stamp,
    pub summary: &'a mut ImportSummary,
    pub progress: &'a ProgressSlot,
}

/// What numbering the incidents of one import carries from one to the next: the last
/// reference number given per day, and the keys of the codes met so far.
#[derive(Default)]
pub(super) struct Numbering {
    per_day: HashMap<NaiveDate, u32>,
    /// The number each day started from, as the database said when the day was first met.
    first: HashMap<NaiveDate, u32>,
    /// The bench's code in references (asked once).
    code: Option<Option<String>>,
    pub(super) refs: RefCache,
}

impl Numbering {
    /// The next free reference of the day found, skipping references taken by other rows
    /// of the file; a day not met before starts where the database said ([`Numbering::first`]).
    pub(super) fn next(
        &mut self,
        found_on: NaiveDate,
        seen_refs: &HashSet<String>,
    ) -> Result<String, StoreError> {
        let code = self.code.clone().flatten();
        let code = code.as_deref();
        let mut n = match self.per_day.get(&found_on) {
            Some(n) => *n + 1,
            None => self.first.get(&found_on).copied().unwrap_or(1),
        };
        let mut r = format_reference(code, found_on, n)?;
        while seen_refs.contains(&r) {
            n += 1;
            r = format_reference(code, found_on, n)?;
        }
        self.per_day.insert(found_on, n);
        Ok(r)
    }

    /// The same numbering again from its start, without the database: what this one met of
    /// it (the bench code, each day's first number) is kept; its codes' keys are handed back.
    pub(super) fn again(self) -> (Numbering, RefCache) {
        (
            Numbering {
                per_day: HashMap::new(),
                first: self.first,
                code: self.code,
                refs: RefCache::default(),
            },
            self.refs,
        )
    }
}

/// Put each item of a reference-data section that is not already present.
macro_rules! put_new {
    ($self:ident, $chain:ident, $list:expr, $name:literal, $exists:expr, $insert:path) => {
        for (i, item) in $list.iter().enumerate() {
            let mut item = item.clone();
            if $exists(&item).map_err(|x| (format!("{}[{i}]", $name), x))? {
                $self.summary.already_present += 1;
                continue;
            }
            if item.id.is_empty() {
                item.id = $self.ids.uuid_v7($self.stamp.at.timestamp_millis());
            }
            $insert($self.tx, $chain, &item, $self.stamp)
                .map_err(|x| (format!("{}[{i}]", $name), x))?;
            $self.summary.reference_records += 1;
        }
    };
}

impl Writer<'_> {
    fn write_all(
        &mut self,
        doc: &ExportDoc,
        incidents: Vec<(Place, Incident)>,
        seen_refs: &HashSet<String>,
        strict: bool,
    ) -> Result<(), WriteError> {
        let audit = |e: StoreError| ("audit".to_string(), e);
        let mut chain = Chain::load(self.tx).map_err(audit)?;
        self.write_lookups(&mut chain, doc)?;
        self.write_reference_data(&mut chain, doc)?;
        let mut bulk = Bulk::new(INCIDENT, self.ids.next_u64());
        // every incident made ready (the records it names, with their audit rows), then the
        // lots' heat-soak records, then the incidents with their batch rows: the order of the
        // bulk path (bulk_import.rs), so that both give the same audit chain for one file
        let ready = self.ready_all(&mut chain, incidents, seen_refs, strict)?;
        self.write_lot_heat_soak(&mut chain, doc)?;
        self.write_incidents(&mut chain, &mut bulk, ready)?;
        bulk.flush(self.tx, &mut chain, self.stamp).map_err(audit)?;
        chain.finish(self.tx).map_err(audit)
    }

    /// The heat-soak records of lots, set once the lots exist (an unchanged one writes
    /// nothing).
    pub(super) fn write_lot_heat_soak(
        &mut self,
        chain: &mut Chain,
        doc: &ExportDoc,
    ) -> Result<(), WriteError> {
        let given = doc
            .lot_heat_soak
            .iter()
            .map(|l| ("lot heat-soak", l))
            .chain(
                doc.lots
                    .iter()
                    .filter(|l| l.heat_soak.is_some())
                    .map(|l| ("lots", l)),
            );
        for (i, (place, l)) in given.enumerate() {
            crate::store::practice::put_lot_heat_soak(
                self.tx,
                chain,
                &l.supplier,
                &l.product,
                &l.code,
                l.heat_soak.as_ref(),
                self.stamp,
            )
            .map_err(|e| (format!("{place}[{i}]"), e))?;
        }
        Ok(())
    }

    pub(super) fn write_lookups(
        &mut self,
        chain: &mut Chain,
        doc: &ExportDoc,
    ) -> Result<(), WriteError> {
        let existing = refdata::load_lookups(self.tx, None).map_err(|e| ("lookups".into(), e))?;
        for (i, e) in doc.lookups.iter().enumerate() {
            if existing
                .iter()
                .any(|x| x.kind == e.kind && x.code == e.code)
            {
                self.summary.already_present += 1;
            } else {
                refdata::insert_lookup(self.tx, chain, e, self.stamp)
                    .map_err(|x| (format!("lookups[{i}]"), x))?;
                self.summary.reference_records += 1;
            }
        }
        Ok(())
    }

    pub(super) fn write_reference_data(
        &mut self,
        chain: &mut Chain,
        doc: &ExportDoc,
    ) -> Result<(), WriteError> {
        let tx = self.tx;
        put_new!(
            self,
            chain,
            doc.sites,
            "sites",
            |s: &Site| refdata::site_id(tx, &s.code).map(|x| x.is_some()),
            refdata::insert_site
        );
        put_new!(
            self,
            chain,
            doc.assets,
            "assets",
            |a: &Asset| refdata::asset_id(tx, &a.code).map(|x| x.is_some()),
            refdata::insert_asset
        );
        put_new!(
            self,
            chain,
            doc.suppliers,
            "suppliers",
            |s: &Supplier| refdata::supplier_id(tx, &s.code).map(|x| x.is_some()),
            refdata::insert_supplier
        );
        put_new!(
            self,
            chain,
            doc.products,
            "products",
            |p: &Product| -> Result<bool, StoreError> {
                Ok(match refdata::supplier_id(tx, &p.supplier)? {
                    Some(sid) => refdata::product_id(tx, &sid, &p.code)?.is_some(),
                    None => false,
                })
            },
            refdata::insert_product
        );
        put_new!(
            self,
            chain,
            doc.lots,
            "lots",
            |l: &Lot| -> Result<bool, StoreError> {
                let Some(sid) = refdata::supplier_id(tx, &l.supplier)? else {
                    return Ok(false);
                };
                let Some(pid) = refdata::product_id(tx, &sid, &l.product)? else {
                    return Ok(false);
                };
                Ok(refdata::lot_id(tx, &pid, &l.code)?.is_some())
            },
            refdata::insert_lot
        );
        let existing_exposure: HashSet<String> = refdata::load_exposure(tx)
            .map_err(|e| ("exposure".to_string(), e))?
            .into_iter()
            .map(|e| e.id)
            .collect();
        put_new!(
            self,
            chain,
            doc.exposure,
            "exposure",
            |e: &Exposure| -> Result<bool, StoreError> {
                Ok(!e.id.is_empty() && existing_exposure.contains(&e.id))
            },
            refdata::insert_exposure
        );
        Ok(())
    }

    /// Each incident made ready ([`Writer::ready`]), in the file's order.
    pub(super) fn ready_all(
        &mut self,
        chain: &mut Chain,
        incidents: Vec<(Place, Incident)>,
        seen_refs: &HashSet<String>,
        strict: bool,
    ) -> Result<Vec<(Place, Incident, Refs)>, WriteError> {
        let mut numbering = Numbering::default();
        let total = Some(incidents.len() as u64);
        let mut ready = Vec::with_capacity(incidents.len());
        for (i, (place, inc)) in incidents.into_iter().enumerate() {
            self.progress.tell("importing", i as u64, total);
            let (inc, refs) = self.ready(chain, &mut numbering, place, inc, seen_refs, strict)?;
            ready.push((place, inc, refs));
        }
        Ok(ready)
    }

    fn write_incidents(
        &mut self,
        chain: &mut Chain,
        bulk: &mut Bulk,
        ready: Vec<(Place, Incident, Refs)>,
    ) -> Result<(), WriteError> {
        for (place, inc, refs) in ready {
            incidents::insert_new(self.tx, chain, &inc, &refs, self.stamp, Some(bulk))
                .map_err(|x| (place.at(), x))?;
            self.summary.incidents += 1;
        }
        Ok(())
    }

    /// An incident made ready to write: revision and times, keys, its reference, and the
    /// keys of the records it names (made when new, with their audit rows).
    pub(super) fn ready(
        &mut self,
        chain: &mut Chain,
        numbering: &mut Numbering,
        place: Place,
        mut inc: Incident,
        seen_refs: &HashSet<String>,
        strict: bool,
    ) -> Result<(Incident, Refs), WriteError> {
        let stamp = self.stamp;
        let here = |x: StoreError| (place.at(), x);
        ready_keys(self.ids, &mut inc, stamp);
        if inc.reference.is_empty() {
            inc.reference = self
                .new_reference(inc.found_on, numbering, seen_refs)
                .map_err(here)?;
        }
        let refs = Store::resolve_refs(
            self.tx,
            chain,
            self.ids,
            &inc,
            stamp,
            strict,
            &mut numbering.refs,
        )
        .map_err(here)?;
        Ok((inc, refs))
    }

    /// The next free reference of the day, skipping references taken by other rows of the
    /// file.
    fn new_reference(
        &self,
        found_on: NaiveDate,
        numbering: &mut Numbering,
        seen_refs: &HashSet<String>,
    ) -> Result<String, StoreError> {
        if numbering.code.is_none() {
            numbering.code = Some(incidents::bench_code(self.tx)?);
        }
        if !numbering.per_day.contains_key(&found_on) && !numbering.first.contains_key(&found_on) {
            let code = numbering.code.clone().flatten();
            let r = next_reference(self.tx, found_on)?;
            let n = r[reference_prefix(code.as_deref(), found_on).len()..]
                .parse::<u32>()
                .unwrap_or(1);
            numbering.first.insert(found_on, n);
        }
        numbering.next(found_on, seen_refs)
    }
}

/// The first part of making an incident ready: revision and times of a new one, its keys and
/// its children's (the keys drawn from `ids` in one order, which a replay repeats).
pub(super) fn ready_keys(ids: &mut IdGen, inc: &mut Incident, stamp: &Stamp) {
    if inc.revision < 1 {
        inc.revision = 1;
        inc.created_at = stamp.at;
        inc.updated_at = stamp.at;
    }
    Store::normalize(ids, inc, stamp);
    if inc.id.is_empty() {
        inc.id = ids.uuid_v7(stamp.at.timestamp_millis());
    }
}
