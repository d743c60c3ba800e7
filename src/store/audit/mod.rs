//! The hash-chained audit log: every change to a record appends a row with the record's
//! canonical image before and after, chained by SHA-256 to the row before it.
//!
//! - `chain`: appending inside a writing transaction, a row per change or, for a bulk load,
//!   a row per batch of records listing each one's image digest.
//! - `image`: what is known of audited images: digests, the records a batch lists, compact
//!   keys for verify's map of last images, which fields a change touched.
//! - `listed`: a record's history from its audit rows and the bulk-load row listing it.
//! - `verify`: the chain recomputed, then each record compared with its last image.
//!
//! The audit knows no kind of record: the callers hand it images (incidents, reference
//! data) and read the history of their own records.

mod chain;
mod image;
mod listed;
mod verify;

pub(crate) use chain::{Bulk, Chain, BATCH};
pub(crate) use image::{digest, manifest_records};
pub(crate) use listed::{listed_ids, plain_id, starts_at_a_manifest, AuditRow, Manifest};
pub(crate) use verify::Verification;

/// Entity names used in the audit log.
pub(crate) const INCIDENT: &str = "incident";
