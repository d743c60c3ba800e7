//! `verify --bundle DIR --db postgres://…`: a bundle checked against the fleet database. Its
//! head must be in a chain the fleet witnessed (a bench's, for a bundle made at a bench once
//! it synced; the fleet's receipts, for one made on the fleet), and each of its incidents
//! must match the fleet's records. The fleet keeps each record's current image, not the
//! records as they stood at every head, so the selection is run again on the records as
//! they are now and an incident the bundle lacks is judged by when it was recorded.

use std::collections::BTreeSet;
use std::path::Path;

use super::super::{BundleContent, BundleError};
use super::{compare_incidents, missing_one, note_added_later, BundleCheck};
use crate::store::{ReportSource, StoreError};

/// The bench whose witnessed chain holds the head of the bundle in `dir` (None: another
/// chain, none, or no readable bundle): a bench's bundle is checked against that bench's
/// records and reference data.
pub fn head_bench(s: &dyn ReportSource, dir: &Path) -> Result<Option<String>, BundleError> {
    let mut scratch = BundleCheck::default();
    let Some((_, bf)) = super::read_bundle_file(dir, &mut scratch) else {
        return Ok(None);
    };
    let Some(seq) = bf.content.audit_head_seq else {
        return Ok(None);
    };
    Ok(s.chain_holding(seq, &bf.content.audit_chain_head)?
        .and_then(|h| h.bench))
}

/// An incident of the bundle in the fleet: by its reference, else (a reference the bench
/// made before it had a code) by the reference the fleet qualifies with the bench's code.
fn find(
    s: &dyn ReportSource,
    reference: &str,
    bench: Option<&str>,
) -> Result<Option<crate::store::Incident>, StoreError> {
    match s.get(reference) {
        Ok(i) => return Ok(Some(i)),
        Err(StoreError::NotFound(_)) => {}
        Err(e) => return Err(e),
    }
    let Some(code) = bench else {
        return Ok(None);
    };
    match s.get(&format!("{code}/{reference}")) {
        Ok(mut i) => {
            i.reference = reference.to_string();
            Ok(Some(i))
        }
        Err(StoreError::NotFound(_)) => Ok(None),
        Err(e) => Err(e),
    }
}

pub(super) fn compare_with_fleet(
    s: &dyn ReportSource,
    c: &BundleContent,
    check: &mut BundleCheck,
) -> Result<(), BundleError> {
    let holder = match c.audit_head_seq {
        Some(seq) => s.chain_holding(seq, &c.audit_chain_head)?,
        None => None,
    };
    match (&holder, c.audit_head_seq) {
        (Some(h), _) => check
            .notes
            .push(format!("the bundle's audit head is in {}", h.shown)),
        (None, Some(seq)) => check.problems.push(format!(
            "the bundle's audit head (entry {seq}, {}) is in no chain the fleet database witnessed: the bench has not synced since the bundle was made, or the bundle was made from a rewritten copy",
            c.audit_chain_head
        )),
        (None, None) => check.problems.push(
            "the bundle records no entry number for its head (made by an earlier shardlog), so it cannot be found in the fleet's chains".into(),
        ),
    }
    let bench = holder.as_ref().and_then(|h| h.bench.clone());
    compare_incidents(
        s,
        c,
        |reference| Ok(find(s, reference, bench.as_deref())?),
        "in the bundle but not in the fleet database",
        "the fleet's records",
        check,
    )?;
    // the selection run again on the records as they are now
    let in_bundle: BTreeSet<&str> = c.incidents.iter().map(|i| i.reference.as_str()).collect();
    let qualifier = bench.as_ref().map(|b| format!("{b}/"));
    let mut added_later = 0;
    for f in super::super::gather::selection_filters(&c.selection) {
        for id in s.matching_ids(&f)? {
            let inc = s.get(&id)?;
            let reference = match &qualifier {
                Some(q) => inc
                    .reference
                    .strip_prefix(q.as_str())
                    .unwrap_or(&inc.reference),
                None => &inc.reference,
            };
            if in_bundle.contains(reference) {
                continue;
            }
            missing_one(
                &inc.created_at,
                &c.exported_at,
                &mut added_later,
                check,
                || {
                    format!(
                    "incident {}: matches the bundle's selection in the fleet's records and was recorded before the export, but is missing from the bundle",
                    inc.reference
                )
                },
            );
        }
    }
    note_added_later(check, added_later);
    check.notes.push(
        "compared with the fleet database's current records (`verify --db` on the fleet checks its witnessed chains)".into(),
    );
    Ok(())
}
