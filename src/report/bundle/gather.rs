//! Choosing the incidents of a bundle and gathering everything its files are rendered from.

use std::collections::{BTreeMap, BTreeSet, HashMap};

use super::figures::cover;
use super::{
    BundleAttachment, BundleContent, BundleError, BundleIncident, DisputeOptions, Selection,
};
use crate::report::doc::Paper;
use crate::report::source::{held_file, incident_content_read, HeldFiles, Labels};
use crate::report::summary::{self, Pictures};
use crate::store::{self, Filter, ReportSource};
use shardlog_core::canonical::{digest, Numbers};

/// Incidents read at once (with their histories and files) while a bundle is gathered.
const READ_AT_ONCE: usize = 500;

/// The extension an attachment gets in the bundle: from what its bytes are for photos, from
/// its name only for a few inert kinds, else `.bin` — a file named `x.html` or `x.exe` is
/// never handed to someone under a name their computer would open by running it.
fn safe_ext(name: &str, bytes: Option<&[u8]>) -> String {
    use crate::report::image::{sniff, PictureKind};
    match bytes.map(sniff) {
        Some(PictureKind::Jpeg { .. }) => return ".jpg".into(),
        Some(PictureKind::Png { .. }) => return ".png".into(),
        _ => {}
    }
    const INERT: [&str; 9] = [
        "pdf", "txt", "csv", "tif", "tiff", "gif", "bmp", "webp", "heic",
    ];
    match name.rsplit_once('.') {
        Some((_, e)) if INERT.contains(&e.to_ascii_lowercase().as_str()) => {
            format!(".{}", e.to_ascii_lowercase())
        }
        _ => ".bin".into(),
    }
}

/// A file name for an incident reference (references are short codes, but never trust them).
fn ref_file(reference: &str) -> String {
    let s: String = reference
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect();
    format!(
        "incidents/{}.pdf",
        if s.is_empty() { "incident".into() } else { s }
    )
}

fn resolve_supplier(s: &dyn ReportSource, wanted: &str) -> Result<store::Supplier, BundleError> {
    let all = s.suppliers()?;
    let w = wanted.trim();
    if let Some(x) = all
        .iter()
        .find(|x| x.code == w)
        .or_else(|| all.iter().find(|x| x.code.eq_ignore_ascii_case(w)))
        .or_else(|| all.iter().find(|x| x.name.eq_ignore_ascii_case(w)))
    {
        return Ok(x.clone());
    }
    let known: Vec<String> = all.iter().take(12).map(|x| x.code.clone()).collect();
    Err(BundleError::Usage(format!(
        "--supplier {w}: no such supplier (code or name); known codes: {}",
        if known.is_empty() {
            "none".to_string()
        } else {
            known.join(", ")
        }
    )))
}

/// The store filters a selection stands for: one per claimed cause (an incident has one
/// cause, so their matches never overlap), else one.
pub(super) fn selection_filters(sel: &Selection) -> Vec<Filter> {
    let base = Filter {
        supplier: Some(sel.supplier_code.clone()),
        lot: sel.lot.clone(),
        since: sel.since,
        until: sel.until,
        origin_type: sel.origin_type.clone(),
        ..Filter::default()
    };
    if sel.causes.is_empty() {
        return vec![base];
    }
    sel.causes
        .iter()
        .map(|c| Filter {
            cause: Some(c.clone()),
            ..base.clone()
        })
        .collect()
}

/// The ids of the incidents a selection chooses, in the order of their dates found: what
/// `dispute` put in the bundle, and what a later check runs again against the database.
pub fn selected_ids(s: &dyn ReportSource, sel: &Selection) -> Result<Vec<String>, BundleError> {
    let mut ids = Vec::new();
    for f in selection_filters(sel) {
        ids.extend(s.matching_ids(&f)?);
    }
    ids.dedup();
    Ok(ids)
}

/// Everything the bundle's files are rendered from, gathered from the store.
pub fn gather(
    s: &dyn ReportSource,
    opts: &DisputeOptions,
) -> Result<(BundleContent, Pictures), BundleError> {
    // the head and the incidents it vouches for are read from one snapshot
    store::consistent(s, || gather_in(s, opts))
}

fn gather_in(
    s: &dyn ReportSource,
    opts: &DisputeOptions,
) -> Result<(BundleContent, Pictures), BundleError> {
    if let (Some(a), Some(b)) = (opts.since, opts.until) {
        if a > b {
            return Err(BundleError::Usage(format!(
                "--since {a} is after --until {b}"
            )));
        }
    }
    let sup = resolve_supplier(s, &opts.supplier)?;
    let labels = Labels::load(s)?;
    let (head_seq, head) = s.head_entry()?;
    let selection = Selection {
        supplier_code: sup.code.clone(),
        supplier_name: sup.name.clone(),
        lot: opts.lot.clone(),
        since: opts.since,
        until: opts.until,
        causes: opts.causes.clone(),
        origin_type: opts.origin_type.clone(),
    };
    s.progress("selecting", 0, None);
    let ids = selected_ids(s, &selection)?;
    let total = Some(ids.len() as u64);
    let minimums = s.fragmentation_minimums()?;
    let mut files = HeldFiles::new();
    let mut incidents = Vec::with_capacity(ids.len());
    let mut pictures: Pictures = HashMap::new();
    let mut attachments: BTreeMap<String, BundleAttachment> = BTreeMap::new();
    let mut raw = Vec::with_capacity(ids.len());
    // the incidents, their histories and their files are read a part at a time, each part
    // in a few statements
    for part in ids.chunks(READ_AT_ONCE) {
        s.progress("gathering", raw.len() as u64, total);
        let read = s.incidents_with_history(part)?;
        let wanted: BTreeSet<&String> = read
            .iter()
            .flat_map(|(inc, _)| inc.attachments.iter().map(|a| &a.sha256))
            .filter(|h| !files.contains_key(*h))
            .collect();
        let wanted: Vec<String> = wanted.into_iter().cloned().collect();
        let mut bytes = s.attachments_held(&wanted)?;
        for h in wanted {
            let held = held_file(&h, bytes.remove(&h));
            files.insert(h, held);
        }
        for (inc, history) in read {
            let (content, pics) = incident_content_read(&labels, &inc, history, &minimums, &files);
            for a in &content.attachments {
                let file = pics
                    .get(&a.sha256)
                    .map(|b| format!("attachments/{}{}", a.sha256, safe_ext(&a.name, Some(b))));
                attachments
                    .entry(a.sha256.clone())
                    .or_insert_with(|| BundleAttachment {
                        sha256: a.sha256.clone(),
                        name: a.name.clone(),
                        bytes: a.bytes,
                        file,
                    });
            }
            pictures.extend(pics);
            incidents.push(BundleIncident {
                reference: content.reference.clone(),
                content_sha256: digest(&content, Numbers::Shortest)?,
                file: ref_file(&content.reference),
                content,
            });
            raw.push(inc);
            s.progress("gathering", raw.len() as u64, total);
        }
    }
    incidents.sort_by(|a, b| a.reference.cmp(&b.reference));
    s.progress("comparing", 0, None);
    let cover = cover(s, &labels, &sup, opts, &raw)?;
    let content = BundleContent {
        selection,
        exported_at: opts.exported_at.clone(),
        generator: summary::generator(),
        audit_chain_head: head,
        audit_head_seq: Some(head_seq),
        paper: match opts.paper {
            Paper::A4 => "a4".into(),
            Paper::Letter => "letter".into(),
        },
        cover,
        incidents,
        attachments: attachments.into_values().collect(),
        made_from: s.made_from()?,
    };
    Ok((content, pictures))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn file_names_from_records_stay_inside_the_bundle() {
        assert_eq!(ref_file("BR-260314-0001"), "incidents/BR-260314-0001.pdf");
        assert_eq!(ref_file("../../etc/x"), "incidents/______etc_x.pdf");
        assert_eq!(safe_ext("scan.PDF", None), ".pdf");
        assert_eq!(safe_ext("photo.jpg", Some(b"<script>")), ".bin");
        assert_eq!(safe_ext("page.html", Some(b"<script>")), ".bin");
        assert_eq!(safe_ext("a.tar/../x", None), ".bin");
        assert_eq!(crate::report::chart::fmt_tick(2.0), "2");
    }
}
