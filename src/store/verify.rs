//! [`Store::verify`]: the whole database checked against its audit log: the chain, every
//! record against its last audited image, the fleet statistics' copy, the attachment files.

use std::path::Path;

use rusqlite::Connection;
use sha2::{Digest, Sha256};

use super::audit::Verification;
use super::{canon, incidents, refdata, verify_scan, Store, StoreError, VerifyReport};

impl Store {
    /// Recompute the audit chain and compare every record with its last audited image.
    /// Finds audit rows changed, deleted or inserted, and record rows changed, deleted or
    /// inserted without going through the store.
    ///
    /// One read snapshot throughout. Half the incidents are read and hashed on a second
    /// thread (its own read-only connection, seeing the same audit head) while this one
    /// recomputes the chain and reads the other half; the problems are reported in the order
    /// one thread finds them. A database in memory, or one written in between, is read on
    /// one thread.
    pub fn verify(&self) -> Result<VerifyReport, StoreError> {
        // (inside a caller's transaction, that one is the snapshot)
        let snapshot = match self.conn.is_autocommit() {
            true => Some(self.conn.unchecked_transaction()?),
            false => None,
        };
        let head = verify_scan::head_seen(&self.conn)?;
        let book = self.material_book()?;
        let book = &book;
        let second = verify_scan::second_reader(self.path.as_deref(), &head);
        let total: i64 = self
            .conn
            .query_row("SELECT count(*) FROM incidents", [], |r| r.get(0))?;
        let total = Some(total.max(0) as u64);
        let report = std::thread::scope(|scope| -> Result<VerifyReport, StoreError> {
            // the second half of the incidents (and the fleet-statistics copy) on the other
            // thread; the chain, the reference data and the first half here
            let (first, second_half) = verify_scan::halves(&self.conn)?;
            let (tx, rx) = std::sync::mpsc::channel();
            let worker =
                second.map(|c| scope.spawn(move || verify_scan::scan_to(c, second_half, book, tx)));
            let mine = if worker.is_some() {
                first
            } else {
                verify_scan::ALL
            };
            // 1. the chain
            let mut v = Verification::read_chain(&self.conn)?;
            // 2. the records against their last images
            for e in refdata::load_lookups(&self.conn, None)? {
                let img = canon::canonical(&e)?;
                let key = refdata::lookup_key(&e);
                v.check_record(refdata::LOOKUP, &key, &key, &img);
            }
            let own = super::own_materials::images(&self.conn)?;
            let practice = super::practice::minimum_images(&self.conn)?;
            for (entity, id, shown, img) in refdata::all_images(&self.conn)?
                .into_iter()
                .chain(own)
                .chain(practice)
                .chain(super::moves::all_images(&self.conn)?)
                .chain(super::pulled_exposure::all_images(&self.conn)?)
            {
                v.check_record(entity, &id, &shown, &img);
            }
            let mut merge = verify_scan::Merge::default();
            verify_scan::scan(&self.conn, mine, book, |c| {
                merge.take(&mut v, c, &self.progress, total);
                Ok(())
            })?;
            let facts = match worker {
                Some(w) => {
                    for chunk in rx {
                        for c in chunk {
                            merge.take(&mut v, c, &self.progress, total);
                        }
                    }
                    w.join().map_err(|_| {
                        StoreError::Database("verify: the incident scan stopped".into())
                    })??
                }
                None => incidents::fleet_facts_problems(&self.conn)?,
            };
            merge.finish(&mut v);
            // the narrow copy the fleet statistics read (schema 3) agrees with the incidents
            for msg in facts {
                v.problem(msg);
            }
            self.verify_rest(&mut v)?;
            Ok(v.into_report())
        })?;
        if let Some(t) = snapshot {
            t.rollback()?;
        }
        Ok(report)
    }

    /// The checks after the records': the records the log names that are gone, the text
    /// index, the attachment files.
    fn verify_rest(&self, v: &mut Verification) -> Result<(), StoreError> {
        v.report_missing_records();
        // the text index holds every incident and nothing else
        for msg in super::sqlite::fts_out_of_step(&self.conn)? {
            v.problem(msg);
        }
        // 3. the evidence: every attachment's file is in the attachment folder and still has
        // the content its hash names (skipped for a database with no folder, i.e. in memory)
        if let Some(dir) = self.files_dir() {
            check_attachment_files(&self.conn, dir, v)?;
        }
        Ok(())
    }
}

/// Every attachment's file is in `dir` and still has the content its hash names.
fn check_attachment_files(
    conn: &Connection,
    dir: &Path,
    v: &mut Verification,
) -> Result<(), StoreError> {
    let mut stmt = conn.prepare(
        "SELECT i.reference, a.entry_no, a.sha256 FROM attachments a
         JOIN incidents i ON i.id = a.incident_id ORDER BY i.reference, a.entry_no",
    )?;
    let mut rows = stmt.query([])?;
    while let Some(r) = rows.next()? {
        let reference: String = r.get(0)?;
        let entry: i64 = r.get(1)?;
        let sha: String = r.get(2)?;
        v.count_checked();
        let well_formed = sha.len() == 64 && sha.bytes().all(|b| b.is_ascii_hexdigit());
        let path = dir.join(&sha);
        let kind = std::fs::symlink_metadata(&path).map(|m| m.file_type());
        let msg = if !well_formed {
            Some("its hash is not a SHA-256".to_string())
        } else if kind.as_ref().is_ok_and(|k| k.is_symlink()) {
            Some(format!(
                "its file {sha} in {} is a symbolic link, not a file shardlog wrote",
                dir.display()
            ))
        } else if kind.as_ref().is_ok_and(|k| !k.is_file()) {
            Some(format!(
                "its file {sha} in {} is not a regular file",
                dir.display()
            ))
        } else {
            match std::fs::read(&path) {
                Err(_) => Some(format!(
                    "its file {sha} is not in the attachment folder {}",
                    dir.display()
                )),
                Ok(bytes) => {
                    let got = canon::hex(&Sha256::digest(&bytes));
                    (got != sha.to_ascii_lowercase()).then(|| {
                        format!("its file {sha} no longer has that content (SHA-256 now {got})")
                    })
                }
            }
        };
        if let Some(m) = msg {
            v.problem(format!("incident {reference}: attachment {entry}: {m}"));
        }
    }
    Ok(())
}

/// A head taken earlier (from a signed export, a bundle, a note): the chain must still hold
/// `hash` at entry `seq`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Anchor {
    pub seq: i64,
    pub hash: String,
}

impl std::str::FromStr for Anchor {
    type Err = String;

    /// `SEQ:HASH`, the hash 64 hex digits.
    fn from_str(s: &str) -> Result<Anchor, String> {
        let expected = "expected SEQ:HASH (an audit entry number, a colon, 64 hex digits)";
        let (seq, hash) = s
            .trim()
            .split_once(':')
            .ok_or_else(|| format!("{expected}, got {s:?}"))?;
        let seq: i64 = seq
            .parse()
            .ok()
            .filter(|n| *n >= 0)
            .ok_or_else(|| format!("{expected}; {seq:?} is not an entry number"))?;
        let hash = hash.to_ascii_lowercase();
        if hash.len() != 64 || !hash.bytes().all(|b| b.is_ascii_hexdigit()) {
            return Err(format!("{expected}; the hash is not 64 hex digits"));
        }
        Ok(Anchor { seq, hash })
    }
}

impl Store {
    /// Each anchor the chain no longer holds, as a sentence: "history was rewritten after
    /// entry N", N the latest anchor before it that still holds (0: the start). A file
    /// cannot witness itself: a rewrite that recomputed every hash passes [`Store::verify`];
    /// only a head kept outside the file finds it.
    pub fn check_anchors(&self, anchors: &[Anchor]) -> Result<Vec<String>, StoreError> {
        let mut sorted: Vec<&Anchor> = anchors.iter().collect();
        sorted.sort_by_key(|a| a.seq);
        let (last_seq, _) = self.audit_head_entry()?;
        let mut held_up_to = 0i64;
        let mut out = Vec::new();
        for a in sorted {
            match self.audit_hash_at(a.seq)? {
                Some(h) if h == a.hash => held_up_to = held_up_to.max(a.seq),
                Some(h) => out.push(format!(
                    "history was rewritten after entry {held_up_to}: entry {} now has hash {h}, the anchor holds {}",
                    a.seq, a.hash
                )),
                None => out.push(format!(
                    "history was rewritten after entry {held_up_to}: entry {} (hash {}) is no longer in the chain, which ends at entry {last_seq}",
                    a.seq, a.hash
                )),
            }
        }
        Ok(out)
    }
}
