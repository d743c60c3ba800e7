//! Rendering every file of a bundle from its content, and writing the folder.

use std::path::{Path, PathBuf};

use super::{
    cover_document, gather, io, BundleContent, BundleError, BundleFile, BundleIncident,
    DisputeOptions, FileEntry, Written, BUNDLE_FORMAT,
};
use crate::report::doc::Paper;
use crate::report::summary::{self, Pictures, Proof};
use crate::store::ReportSource;
use shardlog_core::canonical::{digest, sha256_hex, Numbers};

/// figures.csv: one row per incident.
/// A figure of figures.csv: six significant figures in plain decimal, trailing zeros
/// dropped (1.805, not 1.8050000000000002; 44.7214, not 44.721359549995796). bundle.json
/// keeps every digit; six figures are far finer than any reading or constant behind them.
fn csv_number(v: f64) -> String {
    if !v.is_finite() {
        return String::new();
    }
    if v == 0.0 {
        return "0".into();
    }
    let magnitude = v.abs().log10().floor() as i32;
    let decimals = (5 - magnitude).clamp(0, 17) as usize;
    let mut t = format!("{v:.decimals$}");
    if t.contains('.') {
        while t.ends_with('0') {
            t.pop();
        }
        if t.ends_with('.') {
            t.pop();
        }
    }
    if t == "-0" {
        t = "0".into();
    }
    t
}

pub fn figures_csv(c: &BundleContent) -> String {
    let header: Vec<String> = [
        "reference",
        "found_on",
        "supplier",
        "product",
        "lot",
        "origin_location",
        "origin_type",
        "temper",
        "thickness_mm",
        "readings",
        "boundary",
        "mean_radius_mm",
        "constant_mpa_sqrt_m",
        "constant_provenance",
        "net_stress_mpa",
        "net_low_mpa",
        "net_high_mpa",
        "residual_at_origin_mpa",
        "applied_stress_mpa",
        "applied_low_mpa",
        "applied_high_mpa",
        "flaw_size_um",
        "flaw_low_um",
        "flaw_high_um",
        "cause",
        "confidence",
        "responsibility",
        "status",
        "content_sha256",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    let num = csv_number;
    let mut rows = Vec::new();
    for i in &c.incidents {
        let ct = &i.content;
        let a = ct.examination.analysis.as_ref();
        let b = a.and_then(|a| a.boundaries.iter().find(|b| b.boundary == a.headline));
        let f = a.and_then(|a| a.flaw.as_ref());
        let ply = ct.glass.plies.first();
        rows.push(vec![
            i.reference.clone(),
            ct.identification.found_on.clone().unwrap_or_default(),
            ct.glass.supplier.clone().unwrap_or_default(),
            ct.glass.product.clone().unwrap_or_default(),
            ct.glass.lot.clone().unwrap_or_default(),
            ct.pattern.origin_location.clone().unwrap_or_default(),
            ct.examination.origin_type.clone().unwrap_or_default(),
            ply.and_then(|p| p.temper.clone()).unwrap_or_default(),
            ply.and_then(|p| p.thickness_m)
                .map(|t| num(t * 1e3))
                .unwrap_or_default(),
            ct.examination.readings.len().to_string(),
            b.map(|b| b.boundary.label().to_string())
                .unwrap_or_default(),
            b.map(|b| num(b.stats.mean * 1e3)).unwrap_or_default(),
            b.map(|b| num(b.constant.value / 1e6)).unwrap_or_default(),
            b.map(|b| b.constant.provenance.to_string())
                .unwrap_or_default(),
            a.map(|a| num(a.stress_pa / 1e6)).unwrap_or_default(),
            a.map(|a| num(a.stress_low_pa / 1e6)).unwrap_or_default(),
            a.map(|a| num(a.stress_high_pa / 1e6)).unwrap_or_default(),
            a.map(|a| num(a.residual.at_origin_pa / 1e6))
                .unwrap_or_default(),
            a.map(|a| num(a.applied_stress_pa / 1e6))
                .unwrap_or_default(),
            a.map(|a| num(a.applied_low_pa / 1e6)).unwrap_or_default(),
            a.map(|a| num(a.applied_high_pa / 1e6)).unwrap_or_default(),
            f.map(|f| num(f.size_m * 1e6)).unwrap_or_default(),
            f.map(|f| num(f.size_low_m * 1e6)).unwrap_or_default(),
            f.map(|f| num(f.size_high_m * 1e6)).unwrap_or_default(),
            ct.cause.category.clone().unwrap_or_default(),
            ct.cause.confidence.clone().unwrap_or_default(),
            ct.cause.responsibility.clone().unwrap_or_default(),
            ct.cause.status.clone().unwrap_or_default(),
            i.content_sha256.clone(),
        ]);
    }
    crate::report::csv(&header, &rows)
}

fn paper_of(c: &BundleContent) -> Paper {
    if c.paper == "letter" {
        Paper::Letter
    } else {
        Paper::A4
    }
}

fn incident_proof(c: &BundleContent, i: &BundleIncident) -> Proof {
    Proof {
        content_sha256: i.content_sha256.clone(),
        audit_chain_head: Some(c.audit_chain_head.clone()),
        exported_at: c.exported_at.clone(),
        generator: c.generator.clone(),
        signed_head: None,
        made_from: c.made_from.clone(),
    }
}

/// Every file of the bundle except bundle.json, rendered from the content (deterministic).
/// Incident summaries are rendered on up to `threads` threads.
pub fn render_files(
    c: &BundleContent,
    pictures: &Pictures,
    threads: usize,
) -> Vec<(String, Vec<u8>)> {
    render_files_told(c, pictures, threads, None)
}

/// [`render_files`], telling `tell` (done, total) how many summaries are rendered, a few
/// times a second, from the calling thread.
pub fn render_files_told(
    c: &BundleContent,
    pictures: &Pictures,
    threads: usize,
    tell: Option<&mut dyn FnMut(u64, u64)>,
) -> Vec<(String, Vec<u8>)> {
    render_each(c, pictures, threads, tell, &|path, bytes| (path, bytes))
}

/// Render every file of the bundle except bundle.json and hand each to `each` (path, bytes)
/// as it is made, the summaries on up to `threads` threads (each handed on by the thread
/// that rendered it); what `each` returned, in the bundle's order.
fn render_each<T: Send>(
    c: &BundleContent,
    pictures: &Pictures,
    threads: usize,
    mut tell: Option<&mut dyn FnMut(u64, u64)>,
    each: &(dyn Fn(String, Vec<u8>) -> T + Sync),
) -> Vec<T> {
    let paper = paper_of(c);
    let cover = cover_document(c);
    let mut files = vec![
        each(
            "cover.pdf".to_string(),
            crate::report::pdf::render(&cover, paper),
        ),
        each(
            "cover.html".to_string(),
            crate::report::html::render(&cover, paper).into_bytes(),
        ),
        each("figures.csv".to_string(), figures_csv(c).into_bytes()),
    ];
    let threads = threads.clamp(1, 16);
    let chunk = c.incidents.len().div_ceil(threads).max(1);
    let total = c.incidents.len() as u64;
    let done = std::sync::atomic::AtomicU64::new(0);
    let rendered: Vec<Vec<T>> = std::thread::scope(|scope| {
        let done = &done;
        let handles: Vec<_> = c
            .incidents
            .chunks(chunk)
            .map(|part| {
                scope.spawn(move || {
                    part.iter()
                        .map(|i| {
                            let doc =
                                summary::document(&i.content, &incident_proof(c, i), pictures);
                            let file =
                                each(i.file.clone(), crate::report::pdf::render(&doc, paper));
                            done.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                            file
                        })
                        .collect::<Vec<_>>()
                })
            })
            .collect();
        if let Some(tell) = tell.as_mut() {
            while handles.iter().any(|h| !h.is_finished()) {
                tell(done.load(std::sync::atomic::Ordering::Relaxed), total);
                std::thread::sleep(std::time::Duration::from_millis(50));
            }
        }
        handles
            .into_iter()
            .map(|h| h.join().unwrap_or_default())
            .collect()
    });
    for r in rendered {
        files.extend(r);
    }
    for a in &c.attachments {
        if let (Some(path), Some(bytes)) = (&a.file, pictures.get(&a.sha256)) {
            files.push(each(path.clone(), bytes.as_ref().clone()));
        }
    }
    files
}

pub(super) fn threads() -> usize {
    std::thread::available_parallelism()
        .map(|n| n.get())
        .unwrap_or(1)
}

/// Write the bundle into `dir` (which must not exist, or be an empty folder). The files are
/// written into a sibling temporary folder first and moved into place at the end, so an
/// interrupted export leaves no half bundle under the requested name.
pub fn write_bundle(
    s: &dyn ReportSource,
    opts: &DisputeOptions,
    dir: &Path,
) -> Result<Written, BundleError> {
    if dir.exists() {
        let empty = std::fs::read_dir(dir)
            .map_err(|e| io(dir, e))?
            .next()
            .is_none();
        if !empty || !dir.is_dir() {
            return Err(BundleError::Usage(format!(
                "-o {}: already exists and is not an empty folder; choose a new name",
                dir.display()
            )));
        }
    }
    let (content, pictures) = gather(s, opts)?;
    if content.incidents.is_empty() {
        return Err(BundleError::Usage(format!(
            "no incidents match supplier {}{}; nothing was written",
            content.selection.supplier_code,
            content
                .selection
                .lot
                .as_ref()
                .map(|l| format!(", lot {l}"))
                .unwrap_or_default()
        )));
    }
    let missing = missing_attachments(&content);
    if !missing.is_empty() && !opts.allow_missing_attachments {
        return Err(BundleError::Io {
            path: dir.display().to_string(),
            message: format!(
                "not written: {} attachment file{} missing or changed ({}); restore them, or pass --allow-missing-attachments to write the bundle without them (its cover then names each one)",
                missing.len(),
                if missing.len() == 1 { " is" } else { "s are" },
                missing.join("; ")
            ),
        });
    }
    let signed_head = sign(s, opts, &content)?;
    let parent = match dir.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = dir
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "bundle".into());
    let tmp = parent.join(format!(".{name}.partial-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&tmp);
    // the bundle holds copies of the records and photos: owner-only, whatever the umask
    for d in [tmp.clone(), tmp.join("incidents"), tmp.join("attachments")] {
        std::fs::create_dir_all(&d).map_err(|e| io(&d, e))?;
        crate::store::make_dir_private(&d).map_err(|e| io(&d, e))?;
    }
    let mut entries = Vec::new();
    let result = (|| -> Result<(), BundleError> {
        // each file is written by the thread that rendered it, then all are flushed at once
        let write = |path: String, bytes: Vec<u8>| -> Result<FileEntry, BundleError> {
            let p = tmp.join(&path);
            crate::store::write_new(&p, &bytes, true).map_err(|e| io(&p, e))?;
            Ok(FileEntry {
                sha256: sha256_hex(&bytes),
                bytes: bytes.len() as u64,
                path,
            })
        };
        let mut tell = |done: u64, total: u64| s.progress("rendering", done, Some(total));
        for entry in render_each(&content, &pictures, threads(), Some(&mut tell), &write) {
            entries.push(entry?);
        }
        let written: Vec<PathBuf> = entries.iter().map(|e| tmp.join(&e.path)).collect();
        s.progress("writing", 0, None);
        crate::store::sync_written(&tmp, &written).map_err(|e| io(&tmp, e))?;
        entries.sort_by(|a, b| a.path.cmp(&b.path));
        let content_sha256 = digest(&content, Numbers::Shortest)?;
        let bf = BundleFile {
            format: BUNDLE_FORMAT.into(),
            content_sha256,
            content: content.clone(),
            files: entries.clone(),
            signed_head: signed_head.clone(),
        };
        let mut json = serde_json::to_string_pretty(&bf)?;
        json.push('\n');
        let p = tmp.join("bundle.json");
        crate::store::write_new_synced(&p, json.as_bytes(), true).map_err(|e| io(&p, e))?;
        for d in [tmp.join("incidents"), tmp.join("attachments"), tmp.clone()] {
            crate::store::sync_dir(&d).map_err(|e| io(&d, e))?;
        }
        if dir.exists() {
            std::fs::remove_dir(dir).map_err(|e| io(dir, e))?;
        }
        std::fs::rename(&tmp, dir).map_err(|e| io(dir, e))?;
        crate::store::sync_dir(&parent).map_err(|e| io(&parent, e))?;
        Ok(())
    })();
    if let Err(e) = result {
        let _ = std::fs::remove_dir_all(&tmp);
        // name the bundle and the file inside it, never the temporary folder
        return Err(match e {
            BundleError::Io { path, message } => {
                let inner = Path::new(&path)
                    .strip_prefix(&tmp)
                    .map(|p| p.display().to_string())
                    .unwrap_or(path);
                BundleError::Io {
                    path: dir.display().to_string(),
                    message: format!(
                        "bundle not written ({inner}: {message}); nothing was left there"
                    ),
                }
            }
            other => other,
        });
    }
    Ok(Written {
        dir: dir.to_path_buf(),
        incidents: content.incidents.len(),
        attachments: content
            .attachments
            .iter()
            .filter(|a| a.file.is_some())
            .count(),
        files: entries.len() + 1,
        content_sha256: digest(&content, Numbers::Shortest)?,
        audit_chain_head: content.audit_chain_head.clone(),
        audit_head_seq: content.audit_head_seq,
        signed_head,
    })
}

/// The bundle's audit head signed with its content digest, when the key is here.
fn sign(
    s: &dyn ReportSource,
    opts: &DisputeOptions,
    content: &BundleContent,
) -> Result<Option<crate::store::signing::SignedHead>, BundleError> {
    // the fleet holds no bench's key: what it reports is not signed
    let (Some(s), Some(dir), Some(seq)) =
        (s.signing_store(), &opts.key_dir, content.audit_head_seq)
    else {
        return Ok(None);
    };
    let content_sha256 = digest(content, Numbers::Shortest)?;
    Ok(s.sign_head_at(dir, seq, &content.audit_chain_head, &content_sha256)?)
}

/// Each attachment of the content whose file is not in the bundle, named with its hash.
pub(crate) fn missing_attachments(c: &BundleContent) -> Vec<String> {
    c.attachments
        .iter()
        .filter(|a| a.file.is_none())
        .map(|a| format!("{} (SHA-256 {})", a.name, a.sha256))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csv_numbers_have_no_float_noise() {
        assert_eq!(csv_number(1.8050000000000002), "1.805");
        assert_eq!(csv_number(44.721359549995796), "44.7214");
        assert_eq!(csv_number(332.16281312803267), "332.163");
        assert_eq!(csv_number(6.0), "6");
        assert_eq!(csv_number(-3.66), "-3.66");
        assert_eq!(csv_number(0.000123456789), "0.000123457");
        assert_eq!(csv_number(123456789.0), "123456789");
        assert_eq!(csv_number(-0.0000001), "-0.0000001");
        assert_eq!(csv_number(f64::NAN), "");
    }
}
