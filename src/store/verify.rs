//! [`Store::verify`]: the whole database checked against its audit log: the chain, every
//! record against its last audited image, the fleet statistics' copy, the attachment files.

use std::path::Path;

use rusqlite::Connection;
use sha2::{Digest, Sha256};

use super::audit::{Verification, INCIDENT};
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
        for (entity, id, shown, img) in refdata::all_images(&self.conn)? {
            v.check_record(entity, &id, &shown, &img);
        }
        check_incidents(&self.conn, &mut v)?;
        // the narrow copy the fleet statistics read (schema 3) agrees with the incidents
        for msg in incidents::fleet_facts_problems(&self.conn)? {
            v.problem(msg);
        }
        v.report_missing_records();
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
fn check_incidents(conn: &Connection, v: &mut Verification) -> Result<(), StoreError> {
    let mut bad_derived: Option<String> = None;
    let mut n_bad = 0u64;
    let mut unreadable = Vec::new();
    incidents::for_each_readable_incident(
        conn,
        |inc, derived_ok| {
            let img = canon::incident_image(&inc)?;
            v.check_record(INCIDENT, &inc.id, &inc.reference, &img);
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
        let msg = if !well_formed {
            Some("its hash is not a SHA-256".to_string())
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
