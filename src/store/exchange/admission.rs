//! What an import must show before anything of it is written, beyond each record's own
//! validity: keys in their one spelling, references that cannot pose as others by case,
//! creation times not in the future, stored results that follow from their readings, and
//! the files of attachment rows supplied with the hash they claim.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use chrono::{DateTime, Duration, Utc};
use sha2::{Digest, Sha256};

use super::super::analysis;
use super::super::canon::hex;
use super::super::dates::{date_in_range, out_of_range_message};
use super::super::files::MAX_ATTACHMENT_BYTES;
use super::super::model::*;
use super::super::safe_file::read_regular;
use super::super::{Store, StoreError};
use super::{ExportDoc, Problem};

/// How far ahead of this machine's clock a recorded time may be (another bench's clock
/// running fast); anything later is refused as a time in the future.
const CLOCK_SKEW_MINUTES: i64 = 5;

/// Relative difference below which a stored figure is the recomputed one (JSON keeps every
/// digit of a double; this leaves room for a different order of floating-point sums only).
const SAME_FIGURE: f64 = 1e-6;

/// A key in the one form the store keeps: a UUID in lower case with hyphens. Upper case,
/// braces, a `urn:uuid:` prefix or no hyphens name the same record. None when it is no UUID.
pub(crate) fn canonical_uuid(key: &str) -> Option<String> {
    uuid::Uuid::parse_str(key.trim())
        .ok()
        .map(|u| u.hyphenated().to_string())
}

/// Bring every key of an incident and its children to the one form (keys that are no UUID
/// are left for the checks to refuse or to keep, as before).
pub(crate) fn normalize_keys(inc: &mut Incident) {
    let fix = |k: &mut String| {
        if let Some(c) = canonical_uuid(k) {
            *k = c;
        }
    };
    fix(&mut inc.id);
    inc.examinations.iter_mut().for_each(|e| fix(&mut e.id));
    inc.custody.iter_mut().for_each(|c| fix(&mut c.id));
    inc.attachments.iter_mut().for_each(|a| fix(&mut a.id));
}

/// References compared without case: an import may not bring `br-240401-0001` beside
/// `BR-240401-0001`. The database's references are read once, when first needed.
#[derive(Default)]
pub(crate) struct ReferenceCase {
    in_database: Option<HashMap<String, String>>,
    in_file: HashMap<String, (String, String)>,
}

impl ReferenceCase {
    /// A problem message when `reference` differs only in case from one already taken.
    pub(crate) fn clash(
        &mut self,
        store: &Store,
        reference: &str,
        at: &str,
    ) -> Result<Option<String>, StoreError> {
        let folded = reference.to_lowercase();
        if self.in_database.is_none() {
            self.in_database = Some(
                store
                    .all_references()?
                    .into_iter()
                    .map(|r| (r.to_lowercase(), r))
                    .collect(),
            );
        }
        if let Some(other) = self.in_database.as_ref().and_then(|m| m.get(&folded)) {
            if other != reference {
                return Ok(Some(format!(
                    "{reference} differs only in case from {other}, already in the database; references are compared without case"
                )));
            }
        }
        match self.in_file.get(&folded) {
            Some((first, first_at)) if first != reference => Ok(Some(format!(
                "{reference} differs only in case from {first} ({first_at}) in this file; references are compared without case"
            ))),
            Some(_) => Ok(None),
            None => {
                self.in_file
                    .insert(folded, (reference.to_string(), at.to_string()));
                Ok(None)
            }
        }
    }
}

/// Times the tool itself stamps on an incident (created, updated, computed, attached) that
/// lie in the future of the import's clock. A custody entry's time is typed by a person and
/// accepted as typed, here as in the interface.
pub(crate) fn future_times(inc: &Incident, now: DateTime<Utc>) -> Vec<(String, String)> {
    let limit = now + Duration::minutes(CLOCK_SKEW_MINUTES);
    let mut times = vec![
        ("created_at".to_string(), inc.created_at),
        ("updated_at".to_string(), inc.updated_at),
    ];
    for (i, e) in inc.examinations.iter().enumerate() {
        if let Some(r) = &e.result {
            times.push((
                format!("examinations[{i}].result.computed_at"),
                r.computed_at,
            ));
        }
    }
    for (i, a) in inc.attachments.iter().enumerate() {
        times.push((format!("attachments[{i}].added_at"), a.added_at));
    }
    times
        .into_iter()
        .filter(|(_, t)| *t > limit)
        .map(|(field, t)| {
            (
                field,
                format!(
                    "{} is in the future (this machine's clock says {}); a record cannot have been made later than it is imported",
                    t.to_rfc3339(),
                    now.to_rfc3339()
                ),
            )
        })
        .collect()
}

fn mpa(pa: f64) -> String {
    format!("{} MPa", shardlog_core::units::fmt_sig(pa / 1e6, 4))
}

fn micrometres(m: f64) -> String {
    format!("{} µm", shardlog_core::units::fmt_sig(m * 1e6, 4))
}

fn differs(stored: f64, computed: f64) -> bool {
    !(stored.is_finite()
        && (stored - computed).abs() <= SAME_FIGURE * stored.abs().max(computed.abs()))
}

/// Each stored result of an incident that does not follow from its readings and constants:
/// (field, message naming the incident and both figures).
pub(crate) fn results_that_do_not_follow(
    inc: &Incident,
    book: &super::super::MaterialBook,
) -> Vec<(String, String)> {
    let mut out = Vec::new();
    for (i, e) in inc.examinations.iter().enumerate() {
        let Some(stored) = &e.result else { continue };
        let Some(recomputed) = analysis::recompute_stored(inc, e, book) else {
            continue;
        };
        let field = format!("examinations[{i}].result");
        let who = &inc.reference;
        let a = match recomputed {
            Ok(a) => a,
            Err(err) => {
                out.push((
                    field,
                    format!("incident {who}: a stored result whose readings cannot be analysed ({err}); remove the result or correct the readings"),
                ));
                continue;
            }
        };
        let pairs = [
            ("stress_pa", stored.stress_pa, Some(a.stress_pa), true),
            (
                "applied_stress_pa",
                stored.applied_stress_pa,
                Some(a.applied_stress_pa),
                true,
            ),
            (
                "flaw_size_m",
                stored.flaw_size_m,
                a.flaw.as_ref().map(|f| f.size_m),
                false,
            ),
        ];
        for (name, s, c, is_stress) in pairs {
            let (Some(s), Some(c)) = (s, c) else { continue };
            if differs(s, c) {
                let show = |x: f64| if is_stress { mpa(x) } else { micrometres(x) };
                out.push((
                    format!("{field}.{name}"),
                    format!(
                        "incident {who}: the stored figure {} does not follow from its readings, which give {}; refused rather than fed into the statistics",
                        show(s),
                        show(c)
                    ),
                ));
            }
        }
    }
    out
}

/// The files of an import's attachment rows: where each one comes from, checked.
pub(crate) struct AttachmentFiles {
    /// The folder named by `--attachments`.
    source: Option<PathBuf>,
    /// The database's own attachment folder (a file already there needs no copy).
    own: Option<PathBuf>,
    /// Files to copy in once everything is checked: hash → path.
    pub(crate) to_copy: HashMap<String, PathBuf>,
}

impl AttachmentFiles {
    pub(crate) fn new(source: Option<&Path>, own: Option<&Path>) -> AttachmentFiles {
        AttachmentFiles {
            source: source.map(Path::to_path_buf),
            own: own.map(Path::to_path_buf),
            to_copy: HashMap::new(),
        }
    }

    /// Problems with the file of each attachment row of `inc` (the row's field, the message).
    pub(crate) fn check(&mut self, inc: &Incident) -> Vec<(String, String)> {
        let mut out = Vec::new();
        for (i, a) in inc.attachments.iter().enumerate() {
            if let Some(m) = self.check_one(a) {
                out.push((format!("attachments[{i}]"), m));
            }
        }
        out
    }

    fn check_one(&mut self, a: &Attachment) -> Option<String> {
        let sha = a.sha256.as_str();
        if self.to_copy.contains_key(sha) {
            return None;
        }
        if let Some(own) = &self.own {
            if hash_of(&own.join(sha)).is_ok_and(|h| h == sha) {
                return None;
            }
        }
        let Some(dir) = &self.source else {
            return Some(format!(
                "the file of {} ({sha}) is not supplied; import with --attachments DIR, a folder of the files named by their SHA-256 (such as the source database's .files folder)",
                a.file_name
            ));
        };
        let path = dir.join(sha);
        match hash_of(&path) {
            Err(e) => Some(format!("the file of {} cannot be used: {e}", a.file_name)),
            Ok(h) if h != sha => Some(format!(
                "{} does not have the content its row names (SHA-256 {h}, expected {sha})",
                path.display()
            )),
            Ok(_) => {
                self.to_copy.insert(sha.to_string(), path);
                None
            }
        }
    }
}

/// SHA-256 (lower-case hex) of a regular file of at most the attachment limit.
fn hash_of(path: &Path) -> Result<String, String> {
    read_regular(path, MAX_ATTACHMENT_BYTES)
        .map(|bytes| hex(&Sha256::digest(&bytes)))
        .map_err(|e| e.to_string())
}

/// Dates of the reference data outside the range the store keeps.
pub(crate) fn reference_dates_out_of_range(doc: &ExportDoc) -> Vec<Problem> {
    let mut out = Vec::new();
    let mut check = |place: String, d: Option<chrono::NaiveDate>| {
        if let Some(d) = d.filter(|d| !date_in_range(*d)) {
            out.push(Problem::new(place, out_of_range_message(d)));
        }
    };
    for (i, l) in doc.lots.iter().enumerate() {
        check(format!("lots[{i}].made_on"), l.made_on);
        check(
            format!("lots[{i}].heat_soak.on"),
            l.heat_soak.as_ref().and_then(|h| h.on),
        );
    }
    for (i, e) in doc.exposure.iter().enumerate() {
        check(format!("exposure[{i}].installed_on"), Some(e.installed_on));
        check(format!("exposure[{i}].removed_on"), e.removed_on);
    }
    out
}
