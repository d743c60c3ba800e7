//! `shardlog dispute` and `shardlog verify --bundle` from outside: a fresh bundle verifies,
//! and each kind of edit (a figure, a photo, a removed incident, a PDF, an added file, a
//! record changed after the export) is found and named.

use std::path::{Path, PathBuf};
use std::process::Command;

use crate::support::report::*;
use shardlog::report::bundle::{self, BundleFile};
use shardlog_core::canonical::{digest, sha256_hex, Numbers};

fn shardlog(db: &Path, args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_shardlog"))
        // the signing key of a test database stays beside it, not in the user's data folder
        .env("SHARDLOG_KEY_DIR", db.with_extension("keys"))
        .arg("--db")
        .arg(db)
        .args(args)
        .output()
        .expect("the binary runs")
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        let p = e.path();
        let t = to.join(e.file_name());
        if p.is_dir() {
            copy_dir(&p, &t);
        } else {
            std::fs::copy(&p, &t).unwrap();
        }
    }
}

fn verify(db: &Path, dir: &Path) -> (i32, String) {
    let o = shardlog(db, &["verify", "--bundle", dir.to_str().unwrap()]);
    let text = format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    (o.status.code().unwrap_or(-1), text)
}

fn read_bundle(dir: &Path) -> BundleFile {
    serde_json::from_str(&std::fs::read_to_string(dir.join("bundle.json")).unwrap()).unwrap()
}

/// Write bundle.json back with every digest and file hash made consistent again, as a
/// careful forger would.
fn rewrite_consistently(dir: &Path, mut bf: BundleFile) {
    for i in &mut bf.content.incidents {
        i.content_sha256 = digest(&i.content, Numbers::Shortest).unwrap();
    }
    bf.content_sha256 = digest(&bf.content, Numbers::Shortest).unwrap();
    for f in &mut bf.files {
        if let Ok(b) = std::fs::read(dir.join(&f.path)) {
            f.sha256 = sha256_hex(&b);
            f.bytes = b.len() as u64;
        }
    }
    bf.files.retain(|f| dir.join(&f.path).exists());
    std::fs::write(
        dir.join("bundle.json"),
        serde_json::to_string_pretty(&bf).unwrap(),
    )
    .unwrap();
}

struct Setup {
    _tmp: tempfile::TempDir,
    db: PathBuf,
    bundle: PathBuf,
    work: PathBuf,
    claimed: Vec<String>,
}

fn setup() -> Setup {
    let tmp = tempfile::tempdir().unwrap();
    let demo = demo_db(tmp.path(), 8, 6, false);
    let db = demo.db.clone();
    let claimed = demo.claimed.clone();
    drop(demo.store);
    let bundle = tmp.path().join("claim-2027-03");
    let o = shardlog(
        &db,
        &[
            "dispute",
            "--supplier",
            CLAIMED,
            "-o",
            bundle.to_str().unwrap(),
        ],
    );
    assert!(
        o.status.success(),
        "dispute: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    let out = String::from_utf8_lossy(&o.stdout).to_string();
    assert!(out.contains("8 incident summaries"), "{out}");
    let work = tmp.path().join("work");
    Setup {
        db,
        bundle,
        work,
        claimed,
        _tmp: tmp,
    }
}

impl Setup {
    fn copy(&self, name: &str) -> PathBuf {
        let d = self.work.join(name);
        copy_dir(&self.bundle, &d);
        d
    }
}

#[test]
fn a_fresh_bundle_holds_everything_and_verifies() {
    let s = setup();
    // kept for looking at: target/tmp/report/bundle
    let keep = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join("report")
        .join("bundle");
    let _ = std::fs::remove_dir_all(&keep);
    copy_dir(&s.bundle, &keep);
    for f in ["cover.pdf", "cover.html", "figures.csv", "bundle.json"] {
        assert!(s.bundle.join(f).exists(), "{f} missing");
    }
    for r in &s.claimed {
        assert!(s.bundle.join(format!("incidents/{r}.pdf")).exists());
    }
    let png = sha256_hex(&fixture("mirror-origin.png"));
    assert!(s.bundle.join(format!("attachments/{png}.png")).exists());
    let csv = std::fs::read_to_string(s.bundle.join("figures.csv")).unwrap();
    assert_eq!(csv.lines().count(), 1 + 8);
    assert!(!csv.contains("NaN"));
    let bf = read_bundle(&s.bundle);
    assert_eq!(bf.content.incidents.len(), 8);
    assert_eq!(
        bf.content_sha256,
        digest(&bf.content, Numbers::Shortest).unwrap()
    );
    // cover: the rate against the other supplier and a Weibull row for each
    assert!(bf
        .content
        .cover
        .rates
        .iter()
        .any(|r| r.claimed && r.rate_per_1000.is_some()));
    assert!(bf.content.cover.rates.iter().any(|r| !r.claimed));
    assert!(bf.content.cover.weibull.len() >= 2);
    let cover = Command::new("pdftotext")
        .args(["-layout"])
        .arg(s.bundle.join("cover.pdf"))
        .arg("-")
        .output()
        .unwrap();
    let cover = String::from_utf8_lossy(&cover.stdout);
    for must in [
        "Dispute bundle",
        "Velmara Glassworks",
        "Torsund Panes",
        "Rate per 1,000",
        "Weibull",
        "Incidents by cause",
        "Audit-chain head at export",
        "Cautions",
    ] {
        assert!(cover.contains(must), "cover lacks {must}");
    }
    assert!(!cover.contains("NaN"));

    let (code, text) = verify(&s.db, &s.bundle);
    assert_eq!(code, 0, "{text}");
    assert!(text.contains("ok:") && text.contains("compared with the records"));
    assert!(text.contains("have not changed since the export"));
    // without a database: the bundle alone
    let (code, text) = verify(&s.work.join("no-such.db"), &s.bundle);
    assert_eq!(code, 0, "{text}");
    assert!(text.contains("no database"));
    // the library function the verify command calls
    let check = bundle::verify_bundle(&s.bundle, None).unwrap();
    assert!(check.ok() && check.incidents == 8 && check.files_checked > 8);
}

#[test]
fn each_kind_of_edit_is_found() {
    let s = setup();
    let victim = s.claimed[1].clone();

    // a figure in bundle.json, digests left alone
    let d = s.copy("figure");
    let text = std::fs::read_to_string(d.join("bundle.json")).unwrap();
    let mut bf: BundleFile = serde_json::from_str(&text).unwrap();
    let a = bf.content.incidents[1]
        .content
        .examination
        .analysis
        .as_mut()
        .unwrap();
    a.applied_stress_pa *= 1.5;
    std::fs::write(
        d.join("bundle.json"),
        serde_json::to_string_pretty(&bf).unwrap(),
    )
    .unwrap();
    let (code, out) = verify(&s.db, &d);
    assert_eq!(code, 1, "{out}");
    assert!(out.contains("content was edited"), "{out}");

    // the same figure with every digest recomputed: the PDFs no longer match, and the
    // records say otherwise
    rewrite_consistently(&d, bf.clone());
    let (code, out) = verify(&s.db, &d);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains("differs from what the bundle's content renders to"),
        "{out}"
    );
    // even after re-rendering every file from the forged content, the records disagree
    let pictures = std::collections::HashMap::new();
    for (path, bytes) in bundle::render_files(&bf.content, &pictures, 2) {
        if !path.starts_with("attachments/") {
            std::fs::write(d.join(&path), bytes).unwrap();
        }
    }
    rewrite_consistently(&d, bf);
    let (code, out) = verify(&s.db, &d);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains(&format!(
            "incident {victim}: the bundle does not match the records"
        )) && out.contains("applied_stress_pa"),
        "{out}"
    );

    // a photo
    let d = s.copy("photo");
    let png = sha256_hex(&fixture("mirror-origin.png"));
    let p = d.join(format!("attachments/{png}.png"));
    let mut b = std::fs::read(&p).unwrap();
    let n = b.len();
    b[n / 2] ^= 0x40;
    std::fs::write(&p, b).unwrap();
    let (code, out) = verify(&s.db, &d);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains(&format!("attachments/{png}.png: the file was edited")),
        "{out}"
    );

    // an incident summary PDF, one byte
    let d = s.copy("pdf");
    let p = d.join(format!("incidents/{victim}.pdf"));
    let mut b = std::fs::read(&p).unwrap();
    let k = b.len() - 10;
    b[k] = b[k].wrapping_add(1);
    std::fs::write(&p, b).unwrap();
    let (code, out) = verify(&s.db, &d);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains(&format!("incidents/{victim}.pdf: the file was edited")),
        "{out}"
    );

    // a removed incident: its PDF deleted
    let d = s.copy("removed-pdf");
    std::fs::remove_file(d.join(format!("incidents/{victim}.pdf"))).unwrap();
    let (code, out) = verify(&s.db, &d);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains(&format!("incidents/{victim}.pdf: the file is missing")),
        "{out}"
    );

    // a removed incident, removed from bundle.json too and everything made consistent:
    // only the records can tell, and they do
    let d = s.copy("removed");
    std::fs::remove_file(d.join(format!("incidents/{victim}.pdf"))).unwrap();
    let mut bf = read_bundle(&d);
    bf.content.incidents.retain(|i| i.reference != victim);
    bf.content.cover.incidents -= 1;
    let mut pictures = std::collections::HashMap::new();
    for a in &bf.content.attachments {
        if let Some(f) = &a.file {
            pictures.insert(
                a.sha256.clone(),
                std::sync::Arc::new(std::fs::read(d.join(f)).unwrap()),
            );
        }
    }
    for (path, bytes) in bundle::render_files(&bf.content, &pictures, 2) {
        std::fs::write(d.join(&path), bytes).unwrap();
    }
    // the forger cannot sign the new content: with the signature kept it fails alone
    rewrite_consistently(&d, bf.clone());
    let signed = bundle::verify_bundle(&d, None).unwrap();
    assert!(
        signed
            .problems
            .iter()
            .any(|p| p.contains("the signature was made for other content")),
        "{:?}",
        signed.problems
    );
    // so it drops the signature
    bf.signed_head = None;
    rewrite_consistently(&d, bf);
    let alone = bundle::verify_bundle(&d, None).unwrap();
    assert!(
        alone.ok(),
        "a consistent, unsigned forgery passes without the records: {:?}",
        alone.problems
    );
    assert!(
        alone.notes.iter().any(|n| n.contains("not signed")),
        "{:?}",
        alone.notes
    );
    let (code, out) = verify(&s.db, &d);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains(&format!("incident {victim}: matched the bundle's selection in the records as they stood at its head")),
        "{out}"
    );

    // a file added to the bundle
    let d = s.copy("added");
    std::fs::write(d.join("incidents/BR-999999-0001.pdf"), b"%PDF-1.7 forged").unwrap();
    let (code, out) = verify(&s.db, &d);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains("BR-999999-0001.pdf: a file that is not part of the bundle"),
        "{out}"
    );

    // bundle.json that is not JSON: a clear failure, no panic
    let d = s.copy("garbage");
    std::fs::write(d.join("bundle.json"), b"{\"format\": 3").unwrap();
    let (code, out) = verify(&s.db, &d);
    assert_eq!(code, 1, "{out}");
    assert!(out.contains("bundle.json: not valid JSON"), "{out}");
}

#[test]
fn a_record_changed_after_the_export_is_named() {
    let s = setup();
    let victim = s.claimed[2].clone();
    let mut store = shardlog::store::Store::open_existing(&s.db).unwrap();
    let inc = store.get(&victim).unwrap();
    let mut cause = inc.cause.clone().unwrap();
    cause.responsibility = "installer".into();
    store
        .set_cause(
            &victim,
            inc.revision,
            Some(cause),
            None,
            &shardlog::store::Stamp::new("someone", at("2027-01-01T00:00:00Z")),
        )
        .unwrap();
    drop(store);
    let (code, out) = verify(&s.db, &s.bundle);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains(&format!(
            "incident {victim}: the bundle does not match the records"
        )) && out.contains("content.cause.responsibility"),
        "{out}"
    );
    assert!(
        out.contains("the database has changed since the export"),
        "{out}"
    );
}

#[test]
fn dispute_refuses_bad_input_clearly() {
    let tmp = tempfile::tempdir().unwrap();
    let demo = demo_db(tmp.path(), 1, 1, false);
    drop(demo.store);
    let out = tmp.path().join("b");
    let o = shardlog(
        &demo.db,
        &[
            "dispute",
            "--supplier",
            "NOBODY",
            "-o",
            out.to_str().unwrap(),
        ],
    );
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("--supplier: 'NOBODY'"), "{err}");
    let o = shardlog(
        &demo.db,
        &[
            "dispute",
            "--supplier",
            CLAIMED,
            "--since",
            "14/03/2027",
            "-o",
            out.to_str().unwrap(),
        ],
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("YYYY-MM-DD"));
    // an existing, non-empty folder is never overwritten
    std::fs::create_dir_all(&out).unwrap();
    std::fs::write(out.join("keep.txt"), b"mine").unwrap();
    let o = shardlog(
        &demo.db,
        &[
            "dispute",
            "--supplier",
            CLAIMED,
            "-o",
            out.to_str().unwrap(),
        ],
    );
    assert_eq!(o.status.code(), Some(2));
    assert_eq!(std::fs::read(out.join("keep.txt")).unwrap(), b"mine");
    // by supplier name, case-insensitive, works too
    let out2 = tmp.path().join("c");
    let o = shardlog(
        &demo.db,
        &[
            "dispute",
            "--supplier",
            "velmara glassworks",
            "-o",
            out2.to_str().unwrap(),
        ],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
}

#[test]
fn a_bundle_with_a_hostile_incident_is_safe_and_verifies() {
    let tmp = tempfile::tempdir().unwrap();
    let demo = demo_db(tmp.path(), 2, 1, true);
    drop(demo.store);
    let dir = tmp.path().join("hostile-bundle");
    let o = shardlog(
        &demo.db,
        &[
            "dispute",
            "--supplier",
            CLAIMED,
            "-o",
            dir.to_str().unwrap(),
        ],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    // the text file posing as a photo is kept, under a name nothing would run
    let fake = sha256_hex(b"<script>alert('not a photo')</script>");
    assert!(dir.join(format!("attachments/{fake}.bin")).exists());
    let html = std::fs::read_to_string(dir.join("cover.html")).unwrap();
    assert!(!html.contains("<script"));
    let (code, out) = verify(&demo.db, &dir);
    assert_eq!(code, 0, "{out}");
}

/// The default demo database (what sample-db holds) in a new temporary folder.
fn default_demo() -> (tempfile::TempDir, std::path::PathBuf) {
    let tmp = tempfile::tempdir().unwrap();
    let db = tmp.path().join("demo.db");
    shardlog::demo::generate(
        &db,
        &shardlog::demo::DemoOptions {
            incidents: shardlog::demo::DEFAULT_INCIDENTS,
            seed: shardlog::demo::DEFAULT_SEED,
        },
    )
    .unwrap();
    (tmp, db)
}

/// A claim against one lot compares the lot with every other supplier × lot, for all causes
/// and cause by cause: on the demo fleet the nickel sulfide breakages of lot BS-2207 stand
/// out (10 there, 1 in all the other lots) and are flagged; the figures add up to the
/// fleet's, and `verify --bundle` still passes.
#[test]
fn a_lot_claim_compares_the_lot_cause_by_cause() {
    let (tmp, db) = default_demo();
    let dir = tmp.path().join("claim");
    let args = [
        "dispute",
        "--supplier",
        "BRELLIN",
        "--lot",
        "BS-2207",
        "-o",
        dir.to_str().unwrap(),
    ];
    let o = shardlog(&db, &args);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let bf = read_bundle(&dir);
    let cover = &bf.content.cover;
    let lr = cover.lot_rate.as_ref().expect("a lot rate");
    assert_eq!(lr.rows[0].cause, "all causes");
    assert_eq!(lr.rows[0].incidents, cover.incidents);
    // the lot's rows count the lot's incidents once each
    let by_cause: u64 = lr.rows[1..].iter().map(|r| r.incidents).sum();
    assert_eq!(by_cause, cover.incidents);
    // exposure: the lot plus the rest is the fleet's (the supplier table's sum)
    let fleet_py: f64 = cover.rates.iter().filter_map(|r| r.pane_years).sum();
    assert!(((lr.pane_years + lr.rest_pane_years) - fleet_py).abs() < 1e-6 * fleet_py);
    for r in &lr.rows {
        let rate = r.rate_per_1000.unwrap();
        assert!((rate - r.incidents as f64 / lr.pane_years * 1000.0).abs() < 1e-9 * rate);
        let rest = r.rest_rate_per_1000.unwrap();
        let want = r.rest_incidents as f64 / lr.rest_pane_years * 1000.0;
        assert!((rest - want).abs() <= 1e-9 * rest.max(1e-12));
    }
    let nis = lr
        .rows
        .iter()
        .find(|r| r.cause == "nickel sulfide inclusion")
        .expect("a nickel sulfide row");
    let listed = shardlog(
        &db,
        &[
            "list",
            "--cause",
            "nickel_sulfide",
            "--lot",
            "BS-2207",
            "--json",
        ],
    );
    let listed: serde_json::Value = serde_json::from_slice(&listed.stdout).unwrap();
    assert_eq!(nis.incidents as usize, listed.as_array().unwrap().len());
    assert!(nis.flagged && nis.ratio.unwrap() > 10.0, "{nis:?}");
    assert!(nis.p_adjusted.unwrap() < 1e-3, "{nis:?}");
    // in this fleet the lot's rate for all causes is not significantly above the rest:
    // the lot stands out by its cause only, which the supplier-level table cannot show
    assert!(!lr.rows[0].flagged, "{:?}", lr.rows[0]);
    let cover_text = Command::new("pdftotext")
        .arg(dir.join("cover.pdf"))
        .arg("-")
        .output()
        .unwrap();
    let cover_text = String::from_utf8_lossy(&cover_text.stdout);
    assert!(cover_text.contains("Rate of lot BS-2207 against the rest of the fleet"));
    let (code, text) = verify(&db, &dir);
    assert_eq!(code, 0, "{text}");
}

/// The figures of the cover's comparisons, recomputed by other commands over the same
/// window: every supplier's count, pane-years, rate and rate ratio (with intervals and the
/// Holm-adjusted p) as `stats --by supplier --rates` gives them, each count as `list` reads it
/// from the incidents, and the claimed lot's all-causes row as `stats --by lot --rates` gives
/// it (the demo's lot codes are unique across suppliers, so "supplier/lot" groups as the lot).
#[test]
fn the_cover_comparison_matches_stats_and_list_over_the_window() {
    let (tmp, db) = default_demo();
    let code_of: std::collections::HashMap<String, String> =
        shardlog::store::Store::open_existing(&db)
            .unwrap()
            .suppliers()
            .unwrap()
            .into_iter()
            .map(|s| (s.name, s.code))
            .collect();
    let json = |args: &[&str]| -> serde_json::Value {
        let o = shardlog(&db, args);
        assert!(
            o.status.success(),
            "{args:?}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        serde_json::from_slice(&o.stdout).unwrap()
    };
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-12 * a.abs().max(b.abs()).max(1e-300);
    let same = |a: &Option<f64>, b: &serde_json::Value| match a {
        Some(v) => b.as_f64().is_some_and(|w| close(*v, w)),
        None => b.is_null(),
    };
    let same_ci = |a: &Option<[f64; 2]>, b: &serde_json::Value| match a {
        Some([lo, hi]) => same(&Some(*lo), &b[0]) && same(&Some(*hi), &b[1]),
        None => b.is_null(),
    };
    // (claim, window): with both ends, and with an open start (the earliest record)
    let cases: [(&[&str], &[&str]); 2] = [
        (
            &["--supplier", "KESTREL"],
            &["--since", "2024-01-01", "--until", "2025-06-30"],
        ),
        (
            &["--supplier", "BRELLIN", "--lot", "BS-2207"],
            &["--until", "2026-06-30"],
        ),
    ];
    for (n, (claim, window)) in cases.iter().enumerate() {
        let dir = tmp.path().join(format!("claim-{n}"));
        let mut args = vec!["dispute"];
        args.extend_from_slice(claim);
        args.extend_from_slice(window);
        args.extend_from_slice(&["-o", dir.to_str().unwrap()]);
        let o = shardlog(&db, &args);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        let cover = read_bundle(&dir).content.cover;
        let mut stats_args = vec!["stats", "--by", "supplier", "--rates", "--json"];
        stats_args.extend_from_slice(window);
        let stats = json(&stats_args);
        assert_eq!(
            stats["window"]["since"].as_str(),
            Some(cover.window_since.to_string().as_str()),
            "{:?}",
            stats["window"]
        );
        let groups = stats["groups"].as_array().unwrap();
        assert_eq!(cover.rates.len(), groups.len());
        assert!(cover.rates.len() >= 4, "{:?}", cover.rates);
        for r in &cover.rates {
            let code = &code_of[&r.supplier];
            let g = groups
                .iter()
                .find(|g| g["key"][0].as_str() == Some(code))
                .unwrap_or_else(|| panic!("stats has no group {code}"));
            let what = format!("{code} over {window:?}: {r:?} against {g}");
            assert_eq!(Some(r.incidents), g["count"].as_u64(), "{what}");
            assert!(same(&r.pane_years, &g["pane_years"]), "{what}");
            assert!(
                same(&r.rate_per_1000, &g["rate_per_1000_pane_years"]),
                "{what}"
            );
            assert!(same_ci(&r.rate_ci95, &g["rate_ci95"]), "{what}");
            assert!(same(&r.ratio, &g["rate_ratio"]), "{what}");
            assert!(same_ci(&r.ratio_ci95, &g["rate_ratio_ci95"]), "{what}");
            assert!(same(&r.p_adjusted, &g["p_adjusted"]), "{what}");
            assert_eq!(Some(r.flagged), g["flagged"].as_bool(), "{what}");
            // the count once more, from the incidents themselves
            let mut list_args = vec!["list", "--supplier", code, "--limit", "10000", "--json"];
            list_args.extend_from_slice(window);
            let listed = json(&list_args);
            assert_eq!(
                r.incidents as usize,
                listed.as_array().unwrap().len(),
                "{what}"
            );
        }
        if let Some(i) = claim.iter().position(|a| *a == "--lot") {
            let lot = claim[i + 1];
            let lr = cover.lot_rate.as_ref().expect("a lot rate");
            let mut stats_args = vec!["stats", "--by", "lot", "--rates", "--json"];
            stats_args.extend_from_slice(window);
            let stats = json(&stats_args);
            let g = stats["groups"]
                .as_array()
                .unwrap()
                .iter()
                .find(|g| g["key"][0].as_str() == Some(lot))
                .expect("stats has the lot")
                .clone();
            let all = &lr.rows[0];
            let what = format!("lot {lot}: {all:?} against {g}");
            assert_eq!(Some(all.incidents), g["count"].as_u64(), "{what}");
            assert!(same(&Some(lr.pane_years), &g["pane_years"]), "{what}");
            assert!(
                same(&all.rate_per_1000, &g["rate_per_1000_pane_years"]),
                "{what}"
            );
            assert!(same_ci(&all.rate_ci95, &g["rate_ci95"]), "{what}");
            assert!(same(&all.ratio, &g["rate_ratio"]), "{what}");
            assert!(same(&all.p_adjusted, &g["p_adjusted"]), "{what}");
            assert_eq!(Some(all.rest_incidents), g["rest_count"].as_u64(), "{what}");
        }
    }
}

/// Text of a PDF as pdftotext reads it, with runs of white space made one space (a phrase
/// may wrap at a line end).
fn pdf_words(path: &Path) -> String {
    let o = Command::new("pdftotext")
        .arg(path)
        .arg("-")
        .output()
        .expect("pdftotext runs (poppler-utils)");
    assert!(o.status.success(), "pdftotext {}", path.display());
    String::from_utf8_lossy(&o.stdout)
        .split_whitespace()
        .collect::<Vec<_>>()
        .join(" ")
}

/// A claim on a lot for one failure mode: `--cause nickel_sulfide` on the demo lot BS-2207.
/// The cover leads with that cause and flags the lot for it, says how many incidents of the
/// lot's other causes were left out (and which), fits one Weibull population per cause
/// (never fewer than 3 stresses), and counts the saved hypothesis verdicts; the incident
/// summary's PDF text holds the hypothesis, and `verify --bundle` passes.
#[test]
fn a_cause_claim_leads_with_its_cause_and_counts_what_it_left_out() {
    use shardlog::store::bench_record::{attach_hypotheses, ThermalHypothesis};
    use shardlog_core::loads::verdict::{judge, Measured};
    let (tmp, db) = default_demo();
    let listed = |args: &[&str]| -> Vec<serde_json::Value> {
        let mut a = vec![
            "list",
            "--all",
            "--json",
            "--supplier",
            "BRELLIN",
            "--lot",
            "BS-2207",
        ];
        a.extend_from_slice(args);
        let o = shardlog(&db, &a);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        serde_json::from_slice::<serde_json::Value>(&o.stdout)
            .unwrap()
            .as_array()
            .unwrap()
            .clone()
    };
    let whole_lot = listed(&[]).len() as u64;
    let nis = listed(&["--cause", "nickel_sulfide"]);
    let no_cause = listed(&["--cause", "none"]).len() as u64;
    assert!(nis.len() >= 3 && no_cause > 0, "{} {no_cause}", nis.len());
    // one nickel sulfide incident gets a thermal hypothesis, judged as the bench judges it:
    // 5 MPa against the measured stress and a sound-pane bound of 45 MPa
    let with_hypothesis = {
        let mut s = shardlog::store::Store::open_existing(&db).unwrap();
        let (inc, mut exam) = nis
            .iter()
            .map(|r| s.get(r["id"].as_str().unwrap()).unwrap())
            .find_map(|inc| {
                let e = inc.examinations.iter().rev().find(|e| e.result.is_some())?;
                Some((inc.clone(), e.clone()))
            })
            .expect("a nickel sulfide incident with a result");
        let r = exam.result.as_mut().unwrap();
        let measured = Measured {
            stress: r.stress_pa.unwrap(),
            low: r.stress_low_pa.unwrap(),
            high: r.stress_high_pa.unwrap(),
        };
        let v = judge(&measured, 5e6, Some(45e6)).unwrap();
        let thermal = ThermalHypothesis {
            delta_t_k: 8.0,
            restraint: 1.0,
            stress_pa: 5e6,
            verdict: Some(v.explanation.clone()),
        };
        attach_hypotheses(r, Some(&thermal), None);
        let stamp = shardlog::store::Stamp::new("test", chrono::Utc::now());
        s.put_examination(&inc.id, inc.revision, &exam, &stamp)
            .unwrap();
        inc.reference
    };
    let dir = tmp.path().join("nis-claim");
    let o = shardlog(
        &db,
        &[
            "dispute",
            "--supplier",
            "Brellin Safety Glass",
            "--lot",
            "bs-2207",
            "--cause",
            "NICKEL_SULFIDE",
            "-o",
            dir.to_str().unwrap(),
        ],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let bf = read_bundle(&dir);
    assert_eq!(
        bf.content.selection.causes,
        vec!["nickel_sulfide".to_string()]
    );
    let cover = &bf.content.cover;
    assert_eq!(cover.incidents as usize, nis.len());
    // what was left out, by cause, adds up to the rest of the lot
    let x = cover.excluded.as_ref().expect("the exclusions are stated");
    assert_eq!(
        x.claimed_causes,
        vec!["nickel sulfide inclusion".to_string()]
    );
    assert_eq!(x.before, whole_lot);
    let left: u64 = x.left_out.iter().map(|c| c.count).sum();
    assert_eq!(left, whole_lot - nis.len() as u64);
    let backlog = x
        .left_out
        .iter()
        .find(|c| c.label == "no cause recorded yet")
        .expect("the incidents without a cause are counted as left out");
    assert_eq!(backlog.count, no_cause);
    // the lot is flagged for the claimed cause, and that row leads
    let lr = cover.lot_rate.as_ref().expect("a lot rate");
    assert!(lr.rows[0].claimed, "{:?}", lr.rows[0]);
    assert_eq!(lr.rows[0].cause, "nickel sulfide inclusion");
    assert!(lr.rows[0].flagged, "{:?}", lr.rows[0]);
    // one population per cause: the claim's rows are all nickel sulfide, no fit below 3
    let claimed: Vec<_> = cover.weibull.iter().filter(|w| w.claimed).collect();
    assert_eq!(claimed.len(), 1, "{claimed:?}");
    assert!(claimed[0].group.ends_with("nickel sulfide inclusion"));
    assert!(claimed[0].modulus.is_some());
    // a complete sample inside the pivotal table's range: its bounds say so (ASTM C1239)
    assert_eq!(
        claimed[0].bounds_by.as_deref(),
        Some("pivotal"),
        "{claimed:?}"
    );
    for w in &cover.weibull {
        assert!(w.group.ends_with("nickel sulfide inclusion"), "{}", w.group);
        assert!(w.n >= 3 || w.modulus.is_none(), "{w:?}");
    }
    // the verdicts, counted
    assert_eq!(cover.verdicts.with_hypothesis, 1);
    assert_eq!(cover.verdicts.sound_pane_survives, 1);
    assert_eq!(cover.verdicts.consistent + cover.verdicts.too_weak, 1);
    let text = pdf_words(&dir.join("cover.pdf"));
    for want in [
        "This claim concerns nickel sulfide inclusion only.",
        &format!(
            "Left out: {left} of the {whole_lot} incidents of this selection are of another kind"
        ),
        &format!("{no_cause} no cause recorded yet"),
        "1 broke under a load a sound pane should have survived",
        "below 1 in 100 million",
        "Bounds by: pivotal.",
    ] {
        assert!(text.contains(want), "{want:?} not in the cover: {text}");
    }
    // the lead comes before the tables
    assert!(text.find("This claim concerns") < text.find("Incidents by cause"));
    // kept to look at (pdftoppm), as the other report tests keep theirs
    let keep = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join("report")
        .join("bundle");
    std::fs::create_dir_all(&keep).unwrap();
    std::fs::copy(dir.join("cover.pdf"), keep.join("cause-claim-cover.pdf")).unwrap();
    std::fs::copy(
        dir.join(format!("incidents/{with_hypothesis}.pdf")),
        keep.join("cause-claim-summary.pdf"),
    )
    .unwrap();
    let summary = pdf_words(&dir.join(format!("incidents/{with_hypothesis}.pdf")));
    for want in [
        "Load hypothesis and verdict",
        "temperature difference ΔT 8.00 K, restraint k = 1.00",
        "a sound part should have survived",
    ] {
        assert!(
            summary.contains(want),
            "{want:?} not in the summary: {summary}"
        );
    }
    let (code, out) = verify(&db, &dir);
    assert_eq!(code, 0, "{out}");
    // the same hypothesis in show's text and in the Markdown and HTML summaries
    let shown = shardlog(&db, &["show", &with_hypothesis]);
    let shown = String::from_utf8_lossy(&shown.stdout);
    assert!(
        shown.contains("hypothesis   thermal: temperature difference ΔT 8.00 K")
            && shown.contains("verdict      too weak"),
        "{shown}"
    );
    for fmt in ["md", "html"] {
        let file = tmp.path().join(format!("summary.{fmt}"));
        let o = shardlog(
            &db,
            &[
                "report",
                &with_hypothesis,
                "--format",
                fmt,
                "-o",
                file.to_str().unwrap(),
            ],
        );
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        let t = std::fs::read_to_string(&file).unwrap();
        assert!(
            t.contains("Load hypothesis and verdict") && t.contains("should have survived"),
            "{fmt}: {t}"
        );
    }
}

/// An edited figure in figures.csv (its hash in bundle.json made to match) is named by its
/// row, the incident's reference and the column, with the value in the file and the value
/// the content gives; the CSV's numbers carry no float noise.
#[test]
fn an_edited_csv_figure_is_named_by_row_and_column() {
    let s = setup();
    let d = s.copy("csv");
    let csv = std::fs::read_to_string(d.join("figures.csv")).unwrap();
    let header: Vec<&str> = csv.lines().next().unwrap().split(',').collect();
    let col = header
        .iter()
        .position(|h| *h == "applied_stress_mpa")
        .unwrap();
    let mut lines: Vec<String> = csv.lines().map(String::from).collect();
    // the second incident row; its reference is the first field
    let reference = lines[2].split(',').next().unwrap().to_string();
    // the figures are plain decimals of at most six significant figures
    for l in &lines[1..] {
        for field in l.split(',') {
            if let Ok(v) = field.parse::<f64>() {
                let significant = field
                    .trim_start_matches(['-', '0', '.'])
                    .chars()
                    .filter(|c| c.is_ascii_digit())
                    .count();
                assert!(significant <= 6 || v.fract() == 0.0, "float noise: {field}");
            }
        }
    }
    // the row's fields (a quoted field may hold commas)
    let fields: Vec<String> = {
        let mut out = Vec::new();
        let mut cur = String::new();
        let mut quoted = false;
        for ch in lines[2].chars() {
            match ch {
                '"' => {
                    quoted = !quoted;
                    cur.push(ch)
                }
                ',' if !quoted => out.push(std::mem::take(&mut cur)),
                _ => cur.push(ch),
            }
        }
        out.push(cur);
        out
    };
    let old = fields[col].clone();
    assert!(!old.is_empty(), "{}", lines[2]);
    let mut edited = fields.clone();
    edited[col] = "99.9".into();
    lines[2] = edited.join(",");
    std::fs::write(d.join("figures.csv"), lines.join("\n") + "\n").unwrap();
    let bf = read_bundle(&d);
    rewrite_consistently(&d, bf);
    let (code, out) = verify(&s.db, &d);
    assert_eq!(code, 1, "{out}");
    let want = format!(
        "figures.csv: row 2 ({reference}), column applied_stress_mpa: the file has '99.9', the content gives '{old}'"
    );
    assert!(out.contains(&want), "{want:?} not in:\n{out}");
}
