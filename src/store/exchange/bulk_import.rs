//! A large import (more than [`BULK_IMPORT_ABOVE`] incidents) takes the bulk path of the demo
//! generator (store::bulk): the same checks before anything is written (they ran already,
//! in import.rs, with the same one-pass report), the same records, audit rows, text index
//! and fleet statistics, in one transaction (all or nothing), but with the incidents' audit
//! digests and texts made on a second thread, the fleet statistics' triggers (and, when the
//! import is at least as large as the database, the indexes) dropped for the load and put
//! back after it.

use std::collections::HashSet;

use super::super::bulk::{AuditRows, NewIncident};
use super::super::model::*;
use super::super::{Store, StoreError};
use super::import::{ImportResult, Place, WriteError, Writer};
use super::{ExportDoc, ImportOptions, ImportRejected, ImportSummary, Problem};

/// Imports of more incidents than this take the bulk path.
pub const BULK_IMPORT_ABOVE: usize = 10_000;

impl Store {
    /// Imports of more than `n` incidents take the bulk path (tests and benchmarks set a small
    /// `n` to exercise it; the default is [`BULK_IMPORT_ABOVE`]).
    pub fn set_bulk_import_above(&mut self, n: usize) {
        self.bulk_import_above = n;
    }

    /// The writing of a checked import by the bulk path; the same outcome as
    /// `write_import` (import.rs), problems and summary included.
    pub(super) fn write_import_bulk(
        &mut self,
        doc: &ExportDoc,
        incidents: Vec<(Place, Incident)>,
        seen_refs: &HashSet<String>,
        options: ImportOptions,
        stamp: &Stamp,
        deferred: Option<super::super::MaterialBook>,
    ) -> ImportResult {
        let existing = self.incident_count()?;
        let drop_indexes = existing <= incidents.len() as u64;
        let mut summary = ImportSummary {
            dry_run: options.dry_run,
            ..ImportSummary::default()
        };
        let left_wal = super::super::sqlite::leave_wal_for_load(&self.conn)?;
        // keys made by this import ascend (they all carry the import's millisecond)
        self.ids.set_monotonic(true);
        let files = self.files_dir().map(|p| p.to_path_buf());
        let outcome = write_bulk(
            self,
            files,
            drop_indexes,
            doc,
            incidents,
            seen_refs,
            &options,
            stamp,
            deferred.as_ref(),
            &mut summary,
        );
        self.bulk_outcome(outcome, left_wal, options.dry_run, summary)
    }

    /// A bulk load's outcome as the import's answer (either bulk path): a refusal by the
    /// machine is an error, one by a line of the file the import's problem; once written, the
    /// lookups are read again. `left_wal`: the load ran with the rollback journal
    /// (`sqlite::leave_wal_for_load`), and the file goes back to the write-ahead log.
    pub(super) fn bulk_outcome(
        &mut self,
        outcome: Result<(), WriteError>,
        left_wal: bool,
        dry_run: bool,
        summary: ImportSummary,
    ) -> ImportResult {
        self.ids.set_monotonic(false);
        if left_wal {
            super::super::sqlite::rejoin_wal(&self.conn)?;
        }
        match outcome {
            // the machine, not a line of the file, refused: say so as such
            Err((_, e @ StoreError::Storage(_))) => Err(e),
            Err((place, e)) => Ok(Err(ImportRejected {
                problems: vec![Problem::new(place, e.to_string())],
            })),
            Ok(()) => {
                if !dry_run {
                    self.load_lookups()?;
                }
                Ok(Ok(summary))
            }
        }
    }
}

/// The bulk load itself: reference data and each incident made ready (keys, reference, the
/// records it names) here, in the file's order, as the ordinary path does; then the
/// incidents written by the bulk path.
#[allow(clippy::too_many_arguments)]
fn write_bulk(
    store: &mut Store,
    files: Option<std::path::PathBuf>,
    drop_indexes: bool,
    doc: &ExportDoc,
    incidents: Vec<(Place, Incident)>,
    seen_refs: &HashSet<String>,
    options: &ImportOptions,
    stamp: &Stamp,
    deferred: Option<&super::super::MaterialBook>,
    summary: &mut ImportSummary,
) -> Result<(), WriteError> {
    let whole = |e: StoreError| ("import".to_string(), e);
    let progress = &store.progress;
    let mut load = super::super::bulk::begin_bulk(
        &mut store.conn,
        &mut store.ids,
        files.as_deref(),
        drop_indexes,
    )
    .map_err(whole)?;
    let total = Some(incidents.len() as u64);
    let (ready, seed) = {
        let (tx, chain, ids) = load.writing();
        let mut writer = Writer {
            tx,
            ids,
            stamp,
            summary: &mut *summary,
            progress,
        };
        writer.write_lookups(chain, doc)?;
        writer.write_reference_data(chain, doc)?;
        // the batch audit rows' keys, drawn where the ordinary path draws them
        let seed = writer.ids.next_u64();
        // every audit row in the order of the ordinary path (import.rs, Writer::write_all)
        let ready: Vec<NewIncident> = writer
            .ready_all(chain, incidents, seen_refs, options.strict)?
            .into_iter()
            .map(|(_, incident, refs)| NewIncident {
                incident,
                refs,
                stamp: stamp.clone(),
                rendered: None,
            })
            .collect();
        // the lots the rows named exist now (made ready above): their heat-soak records
        writer.write_lot_heat_soak(chain, doc)?;
        (ready, seed)
    };
    if options.dry_run {
        load.roll_back_at_end();
    }
    progress.tell("writing", 0, total);
    let mut next = ready.into_iter();
    // on the maker thread: results kept as figures computed whole again, then made ready
    let at = stamp.at;
    let make = move |_: &mut super::super::IdGen| {
        next.next().map(|mut n| {
            if let Some(book) = deferred {
                super::onepass::complete_results(&mut n.incident, at, book)?;
            }
            Ok(n)
        })
    };
    let written = load
        .write_incidents(AuditRows::Batched { seed }, make)
        .map_err(whole)?;
    summary.incidents += written as usize;
    Ok(())
}
