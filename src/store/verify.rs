//! [`Store::verify`]: the whole database checked against its audit log: the chain, every
//! record against its last audited image, the fleet statistics' copy, the attachment files.

use std::path::Path;

use rusqlite::Connection;
use sha2::{Digest, Sha256};

use super::audit::{Verification, INCIDENT};
use super::progress::ProgressSlot;
use super::{canon, incidents, refdata, Store, StoreError, VerifyReport};

impl Store {
    /// Recompute the audit chain and compare every record with its last audited image.
    /// Finds audit rows changed, deleted or inserted, and record rows changed, deleted or
    /// inserted without going through the store.
    pub fn verify(&self) -> Result<VerifyReport, StoreError> {
        // 1. the chain
        let mut v = Verification::read_chain(&self.conn)?;
        // 2. the records against their last images
        for e in refdata::load_lookups(&self.conn, None)? {
            let img = canon::canonical(&e)?;
            let key = refdata::lookup_key(&e);
            v.check_record(refdata::LOOKUP, &key, &key, &img);
        }
        let own = super::own_materials::images(&self.conn)?;
        for (entity, id, shown, img) in refdata::all_images(&self.conn)?.into_iter().chain(own) {
            v.check_record(entity, &id, &shown, &img);
        }
        for (entity, id, shown, img) in super::moves::all_images(&self.conn)? {
            v.check_record(entity, &id, &shown, &img);
        }
        let book = self.material_book()?;
        check_incidents(&self.conn, &mut v, &self.progress, &book)?;
        // the narrow copy the fleet statistics read (schema 3) agrees with the incidents
        for msg in incidents::fleet_facts_problems(&self.conn)? {
            v.problem(msg);
        }
        v.report_missing_records();
        // the text index holds every incident and nothing else
        for msg in super::sqlite::fts_out_of_step(&self.conn)? {
            v.problem(msg);
        }
        // 3. the evidence: every attachment's file is in the attachment folder and still has
        // the content its hash names (skipped for a database with no folder, i.e. in memory)
        if let Some(dir) = self.files_dir() {
            check_attachment_files(&self.conn, dir, &mut v)?;
        }
        Ok(v.into_report())
    }
}

/// Every incident against its last audited image, and its derived columns against its
/// examinations.
fn check_incidents(
    conn: &Connection,
    v: &mut Verification,
    progress: &ProgressSlot,
    book: &super::MaterialBook,
) -> Result<(), StoreError> {
    let mut bad_derived: Option<String> = None;
    let mut n_bad = 0u64;
    let total: i64 = conn.query_row("SELECT count(*) FROM incidents", [], |r| r.get(0))?;
    let total = Some(total.max(0) as u64);
    let mut done = 0u64;
    let mut unreadable = Vec::new();
    incidents::for_each_readable_incident(
        conn,
        |inc, derived_ok| {
            progress.tell("verifying", done, total);
            done += 1;
            let img = canon::incident_image(&inc)?;
            v.check_record(INCIDENT, &inc.id, &inc.reference, &img);
            for (n, exam) in inc.examinations.iter().enumerate() {
                if let Some(why) = super::analysis::stored_result_differs(&inc, exam, book) {
                    v.problem(format!(
                        "incident {}: examination {}: {why}",
                        inc.reference,
                        n + 1
                    ));
                }
            }
            if !derived_ok {
                n_bad += 1;
                if bad_derived.is_none() {
                    bad_derived = Some(inc.reference.clone());
                }
            }
            Ok(())
        },
        |reference, why| {
            unreadable.push(format!(
                "incident {reference}: damaged, its row cannot be read ({why}); the other records were checked"
            ));
            Ok(())
        },
    )?;
    for m in unreadable {
        v.problem(m);
    }
    if let Some(r) = bad_derived {
        for _ in 0..n_bad {
            v.problem(format!("incident {r}: its listed stress, origin type or temper does not follow from its examinations (changed behind shardlog's back)"));
        }
    }
    Ok(())
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
