//! The incidents' part of `verify`, on a second thread when it can be: every incident read,
//! its canonical image hashed and its examinations recomputed on a second read-only
//! connection (one read snapshot, the same as the first connection's), while the first
//! thread recomputes the audit chain; the results are then compared with the chain's last
//! images in incident order, so the report is the same as one thread's.

use std::path::Path;
use std::sync::mpsc;

use rusqlite::{Connection, OptionalExtension};

use super::audit::{digest, Verification, INCIDENT};
use super::progress::ProgressSlot;
use super::{canon, incidents, sqlite, StoreError};

/// What the scan found of one incident.
pub(super) enum Checked {
    Read {
        id: String,
        reference: String,
        /// First 16 bytes of the SHA-256 of its canonical image.
        digest: [u8; 16],
        /// Its examinations whose stored result does not follow from their readings.
        exams: Vec<String>,
        /// Its derived columns agree with its examinations.
        derived_ok: bool,
    },
    Damaged {
        id: String,
        reference: String,
        why: String,
    },
}

/// How many incidents go to the other thread at a time.
const CHUNK: usize = 2048;

/// Every seq of incidents, to split the scan in two.
pub(super) const ALL: (i64, i64) = (i64::MIN, i64::MAX);

/// Read every incident of `conn` whose seq is in `range`, in row order, and hand each one's
/// findings to `sink`.
pub(super) fn scan(
    conn: &Connection,
    range: (i64, i64),
    book: &super::MaterialBook,
    mut sink: impl FnMut(Checked) -> Result<(), StoreError>,
) -> Result<(), StoreError> {
    let mut damaged = Vec::new();
    incidents::for_each_readable_incident(
        conn,
        range,
        |inc, derived_ok| {
            let img = canon::incident_image(&inc)?;
            let mut exams = Vec::new();
            for (n, exam) in inc.examinations.iter().enumerate() {
                if let Some(why) = super::analysis::stored_result_differs(&inc, exam, book) {
                    exams.push(format!(
                        "incident {}: examination {}: {why}",
                        inc.reference,
                        n + 1
                    ));
                }
            }
            sink(Checked::Read {
                digest: digest(&img),
                id: inc.id,
                reference: inc.reference,
                exams,
                derived_ok,
            })
        },
        |id, reference, why| {
            damaged.push(Checked::Damaged { id, reference, why });
            Ok(())
        },
    )?;
    for d in damaged {
        sink(d)?;
    }
    Ok(())
}

/// The findings of [`scan`] compared with the chain's last images, in the order the scan
/// gave them; the problems are reported as one thread reports them.
#[derive(Default)]
pub(super) struct Merge {
    done: u64,
    bad_derived: Option<String>,
    n_bad: u64,
    unreadable: Vec<(String, String)>,
}

impl Merge {
    pub(super) fn take(
        &mut self,
        v: &mut Verification,
        c: Checked,
        progress: &ProgressSlot,
        total: Option<u64>,
    ) {
        progress.tell("verifying", self.done, total);
        self.done += 1;
        match c {
            Checked::Read {
                id,
                reference,
                digest,
                exams,
                derived_ok,
            } => {
                v.check_record_digest(INCIDENT, &id, &reference, digest);
                for m in exams {
                    v.problem(m);
                }
                if !derived_ok {
                    self.n_bad += 1;
                    if self.bad_derived.is_none() {
                        self.bad_derived = Some(reference);
                    }
                }
            }
            Checked::Damaged { id, reference, why } => {
                self.unreadable.push((id, format!(
                    "incident {reference}: damaged, its row cannot be read ({why}); the other records were checked"
                )));
            }
        }
    }

    pub(super) fn finish(self, v: &mut Verification) {
        for (id, m) in self.unreadable {
            v.damaged(m);
            // there, though not comparable: not also called missing
            v.mark_seen(INCIDENT, &id);
        }
        if let Some(r) = self.bad_derived {
            for _ in 0..self.n_bad {
                v.problem(format!("incident {r}: its listed stress, origin type or temper does not follow from its examinations (changed behind shardlog's back)"));
            }
        }
    }
}

/// The last audit entry a connection sees: (seq, hash), None for an empty log.
pub(super) fn head_seen(conn: &Connection) -> Result<Option<(i64, String)>, StoreError> {
    Ok(conn
        .query_row(
            "SELECT seq, hash FROM audit ORDER BY seq DESC LIMIT 1",
            [],
            |r| Ok((r.get(0)?, r.get(1)?)),
        )
        .optional()?)
}

/// A second connection to read `path` with, in a read transaction that sees the audit head
/// `head` (the first connection's); None when there is none to be had (a database in
/// memory, a file that cannot be opened twice, a write in between): the caller scans on
/// its own connection.
pub(super) fn second_reader(
    path: Option<&Path>,
    head: &Option<(i64, String)>,
) -> Option<Connection> {
    let (conn, _) = sqlite::open_for_reading(path?).ok()?;
    sqlite::set_file_pragmas(&conn).ok()?;
    conn.execute_batch("BEGIN").ok()?;
    match head_seen(&conn) {
        Ok(h) if h == *head => Some(conn),
        _ => None,
    }
}

/// The other thread's share: [`scan`] of `range` on `conn`, its findings in chunks down
/// `tx`, then the fleet-statistics copy checked (its problems returned).
pub(super) fn scan_to(
    conn: Connection,
    range: (i64, i64),
    book: &super::MaterialBook,
    tx: mpsc::Sender<Vec<Checked>>,
) -> Result<Vec<String>, StoreError> {
    let mut chunk = Vec::with_capacity(CHUNK);
    scan(&conn, range, book, |c| {
        chunk.push(c);
        if chunk.len() == CHUNK {
            // a closed receiver means the other thread stopped on an error of its own
            let _ = tx.send(std::mem::replace(&mut chunk, Vec::with_capacity(CHUNK)));
        }
        Ok(())
    })?;
    if !chunk.is_empty() {
        let _ = tx.send(chunk);
    }
    drop(tx);
    incidents::fleet_facts_problems(&conn)
}

/// A range of incident seqs, both ends in.
pub(super) type SeqRange = (i64, i64);

/// The incidents split at the middle seq: (first half, second half).
pub(super) fn halves(conn: &Connection) -> Result<(SeqRange, SeqRange), StoreError> {
    let (lo, hi): (Option<i64>, Option<i64>) =
        conn.query_row("SELECT min(seq), max(seq) FROM incidents", [], |r| {
            Ok((r.get(0)?, r.get(1)?))
        })?;
    let (Some(lo), Some(hi)) = (lo, hi) else {
        return Ok((ALL, (1, 0)));
    };
    let mid = lo + (hi - lo) / 2;
    Ok(((i64::MIN, mid), (mid + 1, i64::MAX)))
}
