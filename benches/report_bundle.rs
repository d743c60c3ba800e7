//! Benchmark of issue 6: a dispute bundle for a supplier with 500 incidents (goal: under
//! 10 s), and its verification. Run: `cargo bench --bench report_bundle`.
//! The database is made through the store's API with the invented demo suppliers of the
//! report tests (500 incidents of the claimed supplier, 200 of another; 40 with photos).

#[path = "../tests/it/support/report.rs"]
#[allow(dead_code)]
mod report_common;

use std::time::Instant;

use shardlog::report::bundle::{gather, render_files, verify_bundle, write_bundle, DisputeOptions};
use shardlog::report::Paper;

fn main() {
    let tmp = tempfile::tempdir().expect("temporary folder");
    let t0 = Instant::now();
    let demo = report_common::demo_db(tmp.path(), 500, 200, false);
    println!(
        "setup: 700 incidents written through the store in {:.2} s",
        t0.elapsed().as_secs_f64()
    );
    let opts = DisputeOptions {
        supplier: report_common::CLAIMED.into(),
        lot: None,
        causes: Vec::new(),
        origin_type: None,
        since: None,
        until: None,
        paper: Paper::A4,
        exported_at: "2027-03-14 10:00:00 UTC".into(),
        today: report_common::day(2027, 3, 14),
        key_dir: None,
        allow_missing_attachments: false,
    };
    let mut best = f64::INFINITY;
    for run in 0..3 {
        let dir = tmp.path().join(format!("bundle-{run}"));
        let t = Instant::now();
        let w = write_bundle(&demo.store, &opts, &dir).expect("bundle written");
        let s = t.elapsed().as_secs_f64();
        best = best.min(s);
        let bytes: u64 = walk(&dir);
        println!(
            "dispute bundle, run {}: {} incidents, {} attachments, {} files, {:.1} MB in {:.2} s",
            run + 1,
            w.incidents,
            w.attachments,
            w.files,
            bytes as f64 / 1e6,
            s
        );
    }
    println!("best: {best:.2} s (goal: under 10 s)");
    // where the time goes
    let t = Instant::now();
    let (content, pictures) = gather(&demo.store, &opts).expect("gathered");
    let g = t.elapsed().as_secs_f64();
    for threads in [1, 2] {
        let t = Instant::now();
        let files = render_files(&content, &pictures, threads);
        println!(
            "  parts: gather from the store {g:.2} s; render {} files on {threads} thread(s) {:.2} s",
            files.len(),
            t.elapsed().as_secs_f64()
        );
    }
    let dir = tmp.path().join("bundle-0");
    let t = Instant::now();
    let check = verify_bundle(&dir, None).expect("verify runs");
    println!(
        "verify --bundle without the database: {} in {:.2} s",
        if check.ok() { "ok" } else { "FAILED" },
        t.elapsed().as_secs_f64()
    );
    let t = Instant::now();
    let check = verify_bundle(
        &dir,
        Some(&demo.store as &dyn shardlog::store::ReportSource),
    )
    .expect("verify runs");
    println!(
        "verify --bundle with the database: {} in {:.2} s",
        if check.ok() { "ok" } else { "FAILED" },
        t.elapsed().as_secs_f64()
    );
}

fn walk(dir: &std::path::Path) -> u64 {
    let mut n = 0;
    for e in std::fs::read_dir(dir).into_iter().flatten().flatten() {
        let p = e.path();
        if p.is_dir() {
            n += walk(&p);
        } else {
            n += e.metadata().map(|m| m.len()).unwrap_or(0);
        }
    }
    n
}
