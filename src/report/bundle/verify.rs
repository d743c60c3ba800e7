//! `verify --bundle`: the digest, every file, a fresh rendering, and (given the database) the
//! records.

use std::collections::{BTreeSet, HashMap};
use std::path::Path;
use std::sync::Arc;

use serde::Serialize;

mod fleet;

pub use fleet::head_bench;

use super::write::{render_files, threads};
use super::{io, BundleContent, BundleError, BundleFile, BUNDLE_FORMAT};
use crate::report::source::{incident_content, Labels};
use crate::report::summary::Pictures;
use crate::store::safe_file::{is_missing, read_regular_within, SafeReadError};
use crate::store::signing::{normalise_fingerprint, PublicKey};
use crate::store::{Anchor, Filter, ReportSource, Store};
use shardlog_core::canonical::{digest, digest_value, sha256_hex, Numbers};

#[derive(Debug, Clone, Default, Serialize)]
pub struct BundleCheck {
    pub incidents: usize,
    pub files_checked: usize,
    /// Whether the records of a database were compared too.
    pub compared_with_records: bool,
    pub audit_chain_head: String,
    /// Every difference found; empty when the bundle is intact.
    pub problems: Vec<String>,
    /// Facts worth knowing that are not failures (e.g. records added since the export).
    pub notes: Vec<String>,
}

impl BundleCheck {
    pub fn ok(&self) -> bool {
        self.problems.is_empty()
    }
}

/// The first JSON path where two values differ, with both values (shortened).
pub fn first_difference(
    a: &serde_json::Value,
    b: &serde_json::Value,
    path: &str,
) -> Option<String> {
    use serde_json::Value;
    if a == b {
        return None;
    }
    match (a, b) {
        (Value::Object(x), Value::Object(y)) => {
            let keys: BTreeSet<&String> = x.keys().chain(y.keys()).collect();
            for k in keys {
                let p = format!("{path}.{k}");
                match (x.get(k), y.get(k)) {
                    (Some(u), Some(v)) => {
                        if let Some(d) = first_difference(u, v, &p) {
                            return Some(d);
                        }
                    }
                    (Some(_), None) => return Some(format!("{p}: only in the bundle")),
                    (None, Some(_)) => return Some(format!("{p}: only in the records")),
                    (None, None) => {}
                }
            }
            None
        }
        (Value::Array(x), Value::Array(y)) => {
            for (i, (u, v)) in x.iter().zip(y).enumerate() {
                if let Some(d) = first_difference(u, v, &format!("{path}[{i}]")) {
                    return Some(d);
                }
            }
            Some(format!(
                "{path}: {} entries in the bundle, {} in the records",
                x.len(),
                y.len()
            ))
        }
        _ => {
            let short = |v: &serde_json::Value| {
                let s = v.to_string();
                if s.chars().count() > 60 {
                    format!("{}…", s.chars().take(60).collect::<String>())
                } else {
                    s
                }
            };
            Some(format!(
                "{path}: the bundle has {}, the records have {}",
                short(a),
                short(b)
            ))
        }
    }
}

fn rel_files(dir: &Path) -> Result<BTreeSet<String>, BundleError> {
    let mut out = BTreeSet::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).map_err(|e| io(&d, e))? {
            let e = e.map_err(|e| io(&d, e))?;
            let p = e.path();
            let ft = e.file_type().map_err(|e| io(&p, e))?;
            if ft.is_dir() {
                stack.push(p);
            } else if let Ok(r) = p.strip_prefix(dir) {
                out.insert(r.to_string_lossy().replace('\\', "/"));
            }
        }
    }
    Ok(out)
}

/// Largest file `verify` reads into memory (a bundle's PDFs and photos are far smaller).
const MAX_FILE: u64 = 512 * 1024 * 1024;

/// A file of the bundle: a regular file (no link, no FIFO, no device, no linked folder on
/// the way), at most [`MAX_FILE`] bytes counted as they are read.
fn read_limited(dir: &Path, relative: &str) -> Result<Vec<u8>, SafeReadError> {
    read_regular_within(dir, relative, MAX_FILE)
}

/// The key a bundle must be signed with (`verify --bundle DIR --key …`).
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ExpectedKey {
    /// A fingerprint as `shardlog key` prints it.
    Fingerprint(String),
    /// A public key (read from a public key file).
    Public(PublicKey),
}

impl ExpectedKey {
    /// A fingerprint, or the text of a public key file; None when it is neither.
    pub fn parse(fingerprint_or_file_text: &str) -> Option<ExpectedKey> {
        if let Some(k) = PublicKey::parse_file_text(fingerprint_or_file_text) {
            return Some(ExpectedKey::Public(k));
        }
        normalise_fingerprint(fingerprint_or_file_text).map(ExpectedKey::Fingerprint)
    }

    pub fn fingerprint(&self) -> String {
        match self {
            ExpectedKey::Fingerprint(f) => f.clone(),
            ExpectedKey::Public(k) => k.fingerprint(),
        }
    }
}

/// [`verify_bundle_with`] without an expected key.
pub fn verify_bundle(
    dir: &Path,
    store: Option<&dyn ReportSource>,
) -> Result<BundleCheck, BundleError> {
    verify_bundle_with(dir, store, None)
}

/// Check a bundle folder: its digest, every file's hash and size, every rendered file against
/// a fresh rendering of the content, the attachments against their names, the signature of
/// its audit head (against `key` when given); and, given the database, the head against the
/// chain, each incident's content against the records and the selection re-run over the
/// records as they stood at the bundle's head.
pub fn verify_bundle_with(
    dir: &Path,
    store: Option<&dyn ReportSource>,
    key: Option<&ExpectedKey>,
) -> Result<BundleCheck, BundleError> {
    if !dir.is_dir() {
        return Err(BundleError::Usage(format!(
            "--bundle {}: not a folder",
            dir.display()
        )));
    }
    let mut check = BundleCheck::default();
    let Some((value, bf)) = read_bundle_file(dir, &mut check) else {
        return Ok(check);
    };
    if bf.format != BUNDLE_FORMAT {
        check.problems.push(format!(
            "bundle.json: format \"{}\" is not \"{BUNDLE_FORMAT}\"",
            bf.format
        ));
    }
    let c = &bf.content;
    check.incidents = c.incidents.len();
    check.audit_chain_head = c.audit_chain_head.clone();
    // 1. the digest over the content
    check_digests(&value, &bf, &mut check);
    // 2. the files on disk against the file list
    let on_disk = rel_files(dir)?;
    let listed: BTreeSet<String> = bf.files.iter().map(|f| f.path.clone()).collect();
    let disk_bytes = check_files(dir, &bf, &on_disk, &listed, &mut check);
    // 3. attachments are what their names say
    let pictures = check_attachments(c, &listed, &disk_bytes, &mut check);
    // every incident has its summary, every summary its incident
    check_summaries(c, &on_disk, &listed, &mut check);
    // 4. every rendered file equals a fresh rendering of the content
    if check.problems.is_empty() {
        check_rendering(c, &pictures, &disk_bytes, &mut check);
    }
    // the signature over the digest and the head (after the rendering, which runs only on
    // a bundle with no problem so far)
    check_signature(&bf, key, &mut check);
    // 5. the records
    if let Some(s) = store {
        check.compared_with_records = true;
        match s.signing_store() {
            Some(bench) => {
                check_signer(bench, &bf, &mut check)?;
                compare_with_records(bench, c, &mut check)?;
            }
            // the fleet holds no bench's key: the signature was checked alone above
            None => fleet::compare_with_fleet(s, c, &mut check)?,
        }
    }
    Ok(check)
}

/// The signed head: it checks, it names the bundle's own head and digest, and (given `key`)
/// it was made with that key.
fn check_signature(bf: &BundleFile, key: Option<&ExpectedKey>, check: &mut BundleCheck) {
    let c = &bf.content;
    let Some(h) = &bf.signed_head else {
        match key {
            Some(k) => check.problems.push(format!(
                "bundle.json: not signed, so it cannot be checked against key {}",
                k.fingerprint()
            )),
            None => check.notes.push(
                "the bundle is not signed (made where the database's private key was not at hand)"
                    .into(),
            ),
        }
        return;
    };
    match h.check() {
        Err(e) => check.problems.push(format!(
            "bundle.json: the signed audit head does not check: {e}"
        )),
        Ok(signer) => {
            if let Some(k) = key {
                let ok = match k {
                    ExpectedKey::Fingerprint(f) => signer.fingerprint() == *f,
                    ExpectedKey::Public(p) => signer == *p,
                };
                if !ok {
                    check.problems.push(format!(
                        "bundle.json: signed with key {}, not with the expected key {}",
                        signer.fingerprint(),
                        k.fingerprint()
                    ));
                }
            }
            check.notes.push(format!(
                "signed with key {}: audit head entry {}, {}",
                signer.fingerprint(),
                h.seq,
                h.hash
            ));
        }
    }
    if h.hash != c.audit_chain_head || Some(h.seq) != c.audit_head_seq {
        check.problems.push(format!(
            "bundle.json: the signed head (entry {}, {}) is not the head the content records",
            h.seq, h.hash
        ));
    }
    if h.content_sha256 != bf.content_sha256 {
        check.problems.push(
            "bundle.json: the signature was made for other content (its content digest differs)"
                .into(),
        );
    }
}

/// A signed bundle was signed with the database's own key.
fn check_signer(s: &Store, bf: &BundleFile, check: &mut BundleCheck) -> Result<(), BundleError> {
    let (Some(h), Some(db_key)) = (&bf.signed_head, s.public_key()?) else {
        return Ok(());
    };
    if h.public_key != db_key.hex() {
        check.problems.push(format!(
            "bundle.json: signed with key {}, but this database's key is {}",
            h.fingerprint,
            db_key.fingerprint()
        ));
    }
    Ok(())
}

/// bundle.json read as JSON and as a bundle file; `None` (with the problem noted) when it
/// cannot be read or is not a bundle.
pub(super) fn read_bundle_file(
    dir: &Path,
    check: &mut BundleCheck,
) -> Option<(serde_json::Value, BundleFile)> {
    let text = match read_limited(dir, "bundle.json") {
        Ok(b) => b,
        Err(e) => {
            check
                .problems
                .push(format!("bundle.json: cannot be read ({e})"));
            return None;
        }
    };
    let value: serde_json::Value = match serde_json::from_slice(&text) {
        Ok(v) => v,
        Err(e) => {
            check
                .problems
                .push(format!("bundle.json: not valid JSON ({e})"));
            return None;
        }
    };
    let bf: BundleFile = match serde_json::from_value(value.clone()) {
        Ok(b) => b,
        Err(e) => {
            check
                .problems
                .push(format!("bundle.json: not a shardlog dispute bundle ({e})"));
            return None;
        }
    };
    Some((value, bf))
}

/// The digest over the content, each incident's digest, and the cover's count.
fn check_digests(value: &serde_json::Value, bf: &BundleFile, check: &mut BundleCheck) {
    let c = &bf.content;
    let content_value = value.get("content").cloned().unwrap_or_default();
    let recomputed = digest_value(&content_value, Numbers::Shortest);
    if recomputed != bf.content_sha256 {
        check.problems.push(format!(
            "bundle.json: its content was edited (SHA-256 of the content is {recomputed}, the bundle records {})",
            bf.content_sha256
        ));
    }
    for i in &c.incidents {
        match digest(&i.content, Numbers::Shortest) {
            Ok(d) if d == i.content_sha256 => {}
            _ => check.problems.push(format!(
                "incident {}: its content in bundle.json was edited (digest differs from the one recorded)",
                i.reference
            )),
        }
    }
    if c.cover.incidents as usize != c.incidents.len() {
        check.problems.push(format!(
            "bundle.json: the cover counts {} incidents but {} are listed",
            c.cover.incidents,
            c.incidents.len()
        ));
    }
}

/// Every listed file against its hash and size, and no file added: the bytes read, by path.
fn check_files(
    dir: &Path,
    bf: &BundleFile,
    on_disk: &BTreeSet<String>,
    listed: &BTreeSet<String>,
    check: &mut BundleCheck,
) -> HashMap<String, Vec<u8>> {
    let mut disk_bytes: HashMap<String, Vec<u8>> = HashMap::new();
    for f in &bf.files {
        if f.path.contains("..") || f.path.starts_with('/') || f.path.contains('\\') {
            check.problems.push(format!(
                "bundle.json: file path {} leaves the bundle",
                f.path
            ));
            continue;
        }
        match read_limited(dir, &f.path) {
            Ok(b) => {
                check.files_checked += 1;
                let h = sha256_hex(&b);
                if h != f.sha256 || b.len() as u64 != f.bytes {
                    check.problems.push(format!(
                        "{}: the file was edited (its SHA-256 is {h}, the bundle records {})",
                        f.path, f.sha256
                    ));
                }
                disk_bytes.insert(f.path.clone(), b);
            }
            Err(e) if is_missing(&e) => check
                .problems
                .push(format!("{}: the file is missing", f.path)),
            Err(e) => check.problems.push(format!("{}: not read: {e}", f.path)),
        }
    }
    for extra in on_disk.difference(listed) {
        if extra != "bundle.json" {
            check.problems.push(format!(
                "{extra}: a file that is not part of the bundle was added"
            ));
        }
    }
    disk_bytes
}

/// Each attachment is listed and has the hash its name says: the photos that do, by hash.
fn check_attachments(
    c: &BundleContent,
    listed: &BTreeSet<String>,
    disk_bytes: &HashMap<String, Vec<u8>>,
    check: &mut BundleCheck,
) -> Pictures {
    let mut pictures: Pictures = HashMap::new();
    for a in &c.attachments {
        let Some(path) = &a.file else { continue };
        if !listed.contains(path) {
            check.problems.push(format!(
                "{path}: attachment {} is not in the file list",
                a.name
            ));
        }
        if let Some(b) = disk_bytes.get(path) {
            if sha256_hex(b) != a.sha256 {
                check.problems.push(format!(
                    "{path}: the photo or file was changed (its content no longer has SHA-256 {})",
                    a.sha256
                ));
            } else {
                pictures.insert(a.sha256.clone(), Arc::new(b.clone()));
            }
        }
    }
    pictures
}

/// Every incident has its summary, every summary its incident.
fn check_summaries(
    c: &BundleContent,
    on_disk: &BTreeSet<String>,
    listed: &BTreeSet<String>,
    check: &mut BundleCheck,
) {
    let expected_pdfs: BTreeSet<String> = c.incidents.iter().map(|i| i.file.clone()).collect();
    for i in &c.incidents {
        if !listed.contains(&i.file) {
            check.problems.push(format!(
                "incident {}: its summary {} is not in the file list",
                i.reference, i.file
            ));
        }
    }
    for f in on_disk.iter().filter(|f| f.starts_with("incidents/")) {
        if !expected_pdfs.contains(f) {
            check.problems.push(format!(
                "{f}: an incident summary with no incident in bundle.json (was an incident removed?)"
            ));
        }
    }
}

/// The fields of one CSV line (quoted fields with doubled quotes, as figures.csv writes them).
fn csv_fields(line: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut cur = String::new();
    let mut quoted = false;
    let mut chars = line.chars().peekable();
    while let Some(c) = chars.next() {
        match (c, quoted) {
            ('"', true) if chars.peek() == Some(&'"') => {
                cur.push('"');
                chars.next();
            }
            ('"', _) => quoted = !quoted,
            (',', false) => out.push(std::mem::take(&mut cur)),
            _ => cur.push(c),
        }
    }
    out.push(cur);
    out
}

/// Where an edited CSV first differs from its rendering: the row (with its first field, the
/// reference) and the column by name, with both values.
fn csv_difference(expected: &[u8], found: &[u8]) -> Option<String> {
    let e = String::from_utf8_lossy(expected);
    let f = String::from_utf8_lossy(found);
    let header = csv_fields(e.lines().next()?);
    let (mut el, mut fl) = (e.lines(), f.lines());
    let mut row = 0;
    loop {
        match (el.next(), fl.next()) {
            (None, None) => return None,
            (Some(_), None) => return Some(format!("row {row} and after are missing")),
            (None, Some(_)) => return Some(format!("row {row} was added")),
            (Some(a), Some(b)) if a == b => {}
            (Some(a), Some(b)) => {
                let (fa, fb) = (csv_fields(a), csv_fields(b));
                let col = (0..fa.len().max(fb.len())).find(|i| fa.get(*i) != fb.get(*i))?;
                let name = header
                    .get(col)
                    .cloned()
                    .unwrap_or_else(|| format!("{}", col + 1));
                let shown = |v: Option<&String>| {
                    v.map(|s| format!("'{}'", shardlog_core::text::clean(s)))
                        .unwrap_or_else(|| "nothing".into())
                };
                return Some(if row == 0 {
                    format!(
                        "the header, column {}: the file has {}",
                        col + 1,
                        shown(fb.get(col))
                    )
                } else {
                    format!(
                        "row {row} ({}), column {name}: the file has {}, the content gives {}",
                        shardlog_core::text::clean(fa.first().map(String::as_str).unwrap_or("")),
                        shown(fb.get(col)),
                        shown(fa.get(col))
                    )
                });
            }
        }
        row += 1;
    }
}

/// The first line where an edited text file differs from its rendering.
fn line_difference(expected: &[u8], found: &[u8]) -> Option<String> {
    let e = String::from_utf8_lossy(expected);
    let f = String::from_utf8_lossy(found);
    let n = e
        .lines()
        .zip(f.lines())
        .position(|(a, b)| a != b)
        .unwrap_or_else(|| e.lines().count().min(f.lines().count()));
    Some(format!("line {} differs", n + 1))
}

/// Every rendered file equals a fresh rendering of the content.
fn check_rendering(
    c: &BundleContent,
    pictures: &Pictures,
    disk_bytes: &HashMap<String, Vec<u8>>,
    check: &mut BundleCheck,
) {
    for (path, bytes) in render_files(c, pictures, threads()) {
        match disk_bytes.get(&path) {
            Some(b) if *b == bytes => {}
            Some(b) => {
                let where_ = if path.ends_with(".csv") {
                    csv_difference(&bytes, b)
                } else if path.ends_with(".html") {
                    line_difference(&bytes, b)
                } else {
                    None
                };
                check.problems.push(match where_ {
                    Some(w) => format!(
                        "{path}: {w} (the file was edited after export; the bundle's content gives the value shown)"
                    ),
                    None => format!(
                        "{path}: differs from what the bundle's content renders to (the file was edited after export)"
                    ),
                })
            }
            None => check.problems.push(format!("{path}: the file is missing")),
        }
    }
}

fn compare_with_records(
    s: &Store,
    c: &BundleContent,
    check: &mut BundleCheck,
) -> Result<(), BundleError> {
    let chain = s.verify()?;
    if !chain.ok() {
        check.problems.push(format!(
            "database: the audit chain is broken ({})",
            chain.first_problem.clone().unwrap_or_default()
        ));
    }
    compare_incidents(
        s,
        c,
        |reference| Ok(s.find(reference)?),
        "in the bundle but no longer in the database",
        "the records",
        check,
    )?;
    let filters = super::gather::selection_filters(&c.selection);
    if let Some(seq) = c.audit_head_seq {
        compare_at_head(s, c, &filters, seq, check)?;
    } else {
        compare_by_time(s, c, &filters, check)?;
    }
    if chain.head == c.audit_chain_head {
        check
            .notes
            .push("the records have not changed since the export (same audit-chain head)".into());
    } else {
        check.notes.push(format!(
            "the database has changed since the export (audit-chain head now {}); the bundle's incidents were compared one by one",
            chain.head
        ));
    }
    Ok(())
}

/// The bundle's head is in the chain, its selection re-run over the records as they stood
/// then gives exactly its incidents, and none of them was stamped after the export.
/// Each incident of the bundle against the same incident as `find` gives it now: one that
/// is gone is said to be `absent`, one that differs does not match `records` (with the first
/// difference).
fn compare_incidents(
    s: &dyn ReportSource,
    c: &BundleContent,
    mut find: impl FnMut(&str) -> Result<Option<crate::store::Incident>, BundleError>,
    absent: &str,
    records: &str,
    check: &mut BundleCheck,
) -> Result<(), BundleError> {
    let labels = Labels::load(s)?;
    for i in &c.incidents {
        let Some(inc) = find(&i.reference)? else {
            check
                .problems
                .push(format!("incident {}: {absent}", i.reference));
            continue;
        };
        let (now, _) = incident_content(s, &labels, &inc)?;
        if now != i.content {
            let a = serde_json::to_value(&i.content)?;
            let b = serde_json::to_value(&now)?;
            let diff =
                first_difference(&a, &b, "content").unwrap_or_else(|| "a value differs".into());
            check.problems.push(format!(
                "incident {}: the bundle does not match {records}: {diff}",
                i.reference
            ));
        }
    }
    Ok(())
}

fn compare_at_head(
    s: &Store,
    c: &BundleContent,
    filters: &[Filter],
    seq: i64,
    check: &mut BundleCheck,
) -> Result<(), BundleError> {
    let anchor = Anchor {
        seq,
        hash: c.audit_chain_head.clone(),
    };
    for p in s.check_anchors(&[anchor])? {
        check.problems.push(format!(
            "the bundle's audit head is not in this database's chain: {p} (or the bundle was made from a rewritten copy)"
        ));
    }
    let mut then = BTreeSet::new();
    for f in filters {
        then.extend(s.matching_references_at(f, seq)?);
    }
    let in_bundle: BTreeSet<String> = c.incidents.iter().map(|i| i.reference.clone()).collect();
    for r in then.difference(&in_bundle) {
        check.problems.push(format!(
            "incident {r}: matched the bundle's selection in the records as they stood at its head (entry {seq}) but is missing from the bundle"
        ));
    }
    for r in in_bundle.difference(&then) {
        check.problems.push(format!(
            "incident {r}: in the bundle but did not match its selection in the records as they stood at its head (entry {seq})"
        ));
    }
    // in the chain before the head, yet recorded after the export: a clock or a stamp lies
    for r in &then {
        let Some(inc) = s.find(r)? else { continue };
        let stamped = inc.created_at.format("%Y-%m-%d %H:%M:%S UTC").to_string();
        if stamped.as_str() > c.exported_at.as_str() {
            check.problems.push(format!(
                "incident {r}: recorded {stamped}, after the bundle's own export time {}, although it is in the chain before the bundle's head",
                c.exported_at
            ));
        }
    }
    let mut now = 0;
    for f in filters {
        now += s.matching_ids(f)?.len();
    }
    let later = now.saturating_sub(then.len());
    if later > 0 {
        check.notes.push(format!(
            "the selection matches {later} more incident{} in the records now than at the bundle's head",
            if later == 1 { "" } else { "s" }
        ));
    }
    Ok(())
}

/// A bundle without the sequence number of its head (made by an earlier shardlog): the
/// incidents that match the selection now and are missing, by the time they were recorded.
fn compare_by_time(
    s: &Store,
    c: &BundleContent,
    filters: &[Filter],
    check: &mut BundleCheck,
) -> Result<(), BundleError> {
    let in_bundle: BTreeSet<&str> = c.incidents.iter().map(|i| i.reference.as_str()).collect();
    let mut added_later = 0;
    // the bundle's selection run again: every field that chose the incidents is in it
    let mut ids = Vec::new();
    for f in filters {
        ids.extend(s.matching_ids(f)?);
    }
    for id in ids {
        let inc = s.get(&id)?;
        if in_bundle.contains(inc.reference.as_str()) {
            continue;
        }
        missing_one(
            &inc.created_at,
            &c.exported_at,
            &mut added_later,
            check,
            || {
                format!(
                "incident {}: matches the bundle's selection in the records but is missing from the bundle",
                inc.reference
            )
            },
        );
    }
    note_added_later(check, added_later);
    Ok(())
}

/// One incident that matches the bundle's selection now but is missing from it: recorded
/// after the export (counted in `added_later`), or before it (the problem `missing` words).
fn missing_one(
    created_at: &chrono::DateTime<chrono::Utc>,
    exported_at: &str,
    added_later: &mut usize,
    check: &mut BundleCheck,
    missing: impl FnOnce() -> String,
) {
    let created = created_at.format("%Y-%m-%d %H:%M:%S UTC").to_string();
    if created.as_str() > exported_at {
        *added_later += 1;
    } else {
        check.problems.push(missing());
    }
}

/// The note of how many matching incidents were recorded after the export, when any were.
fn note_added_later(check: &mut BundleCheck, added_later: usize) {
    if added_later > 0 {
        check.notes.push(format!(
            "{added_later} incident{} matching the selection were recorded after the export",
            if added_later == 1 { "" } else { "s" }
        ));
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn first_difference_names_the_path() {
        let a = json!({"x": {"y": [1, 2, 3]}, "z": "a"});
        let b = json!({"x": {"y": [1, 5, 3]}, "z": "a"});
        assert_eq!(
            first_difference(&a, &b, "content").unwrap(),
            "content.x.y[1]: the bundle has 2, the records have 5"
        );
        assert!(first_difference(&a, &a, "c").is_none());
    }
}
