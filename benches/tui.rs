//! Interface figures (issue 4): first frame, keystroke-to-frame latency, resident memory.
//!
//!   SHARDLOG_BENCH_DB=/path/to/demo.db cargo bench --bench tui
//!
//! Without SHARDLOG_BENCH_DB a small database of invented incidents is made in a temporary
//! folder (set SHARDLOG_BENCH_N for its size). For the figures use a 1,000,000-incident
//! database from `shardlog demo --incidents 1000000`.
//!
//! 1. First frame: the real binary in a pseudo-terminal (100×30), from spawn until the log's
//!    status line is on the screen.
//! 2. Keystroke to frame: in process, `update()` plus a full draw into a 100×30 TestBackend,
//!    for log moves (↓, PgDn, PgUp, End, Home), a sort change and a filter change.
//! 3. Resident memory: peak RSS (VmHWM) of the real binary after paging through the log.
//!
//! SHARDLOG_BENCH_DB may also be a fleet database's URL (postgres://…): the same figures
//! for the interface on the fleet (read only), e.g. after `shardlog fleet demo --url URL`.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

use chrono::{NaiveDate, TimeZone, Utc};
use ratatui::backend::TestBackend;
use ratatui::crossterm::event::KeyCode;
use ratatui::Terminal;
use shardlog::app::App;
use shardlog::store::model::{Glass, Incident, Stamp};
use shardlog::store::Store;
use shardlog::tui::harness::{key, send};

fn make_db(dir: &Path, n: usize) -> PathBuf {
    let path = dir.join("bench.db");
    let mut store = Store::open(&path).expect("open");
    let stamp = Stamp::new("bench", Utc.with_ymd_and_hms(2027, 1, 1, 0, 0, 0).unwrap());
    for i in 0..n {
        let day =
            NaiveDate::from_ymd_opt(2025, 1, 1).unwrap() + chrono::Days::new((i % 700) as u64);
        let mut d = Incident::draft(day);
        d.asset = Some(format!("car {}", 100 + i % 300));
        d.position = "side window".into();
        d.glass = Glass {
            supplier: Some(["NORTHPANE", "GLASBRUECKE", "LAKESIDE"][i % 3].into()),
            product: Some("FLOAT6".into()),
            lot: Some(format!("L{}", i % 9)),
            makeup: "monolithic".into(),
            ..Glass::default()
        };
        d.status = ["reported", "closed", "examining"][i % 3].into();
        store.create_incident(&d, &stamp).expect("create");
    }
    path
}

/// A one-row page that asks for the count of matches.
fn count_only() -> shardlog::store::model::PageRequest {
    shardlog::store::model::PageRequest {
        limit: 1,
        after: None,
        with_total: true,
    }
}

fn percentile(sorted: &[Duration], p: f64) -> Duration {
    if sorted.is_empty() {
        return Duration::ZERO;
    }
    let i = ((sorted.len() as f64 - 1.0) * p).round() as usize;
    sorted[i.min(sorted.len() - 1)]
}

fn ms(d: Duration) -> String {
    format!("{:.2} ms", d.as_secs_f64() * 1e3)
}

/// The same spawn-and-wait through the pseudo-terminal for a program that prints at once:
/// the harness's own share of the first-frame figure.
fn spawn_baseline() -> Duration {
    let mut cmd = Command::new("printf");
    cmd.arg("match");
    let start = Instant::now();
    let mut s = expectrl::Session::spawn(cmd).expect("spawn printf");
    let mut buf = [0u8; 256];
    let mut seen = Vec::new();
    loop {
        if let Ok(n) = s.try_read(&mut buf) {
            seen.extend_from_slice(&buf[..n]);
        }
        if seen.windows(5).any(|w| w == b"match") {
            return start.elapsed();
        }
        if start.elapsed() > Duration::from_secs(10) {
            return start.elapsed();
        }
        std::thread::sleep(Duration::from_micros(200));
    }
}

fn first_frame_and_rss(db: &Path) -> (Duration, Duration, Option<u64>) {
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_shardlog"));
    cmd.arg("--db").arg(db).env("TERM", "xterm-256color");
    let start = Instant::now();
    let mut s = expectrl::Session::spawn(cmd).expect("spawn");
    s.get_process_mut().set_window_size(100, 30).expect("size");
    let mut parser = vt100::Parser::new(
        std::num::NonZeroU16::new(30).unwrap(),
        std::num::NonZeroU16::new(100).unwrap(),
        0,
    );
    let mut buf = [0u8; 65536];
    // the first frame has the log's status line ("sort: …"); the count of matches follows
    // in the frame after it
    let mut first = None;
    let counted = loop {
        if let Ok(n) = s.try_read(&mut buf) {
            parser.process(&buf[..n]);
        }
        let screen = parser.screen().contents();
        if first.is_none() && screen.contains("sort:") {
            first = Some(start.elapsed());
        }
        if screen.contains("match") {
            break start.elapsed();
        }
        if start.elapsed() > Duration::from_secs(60) {
            panic!("no first frame:\n{}", parser.screen().contents());
        }
        std::thread::sleep(Duration::from_micros(200));
    };
    let first = first.unwrap_or(counted);
    // page through the log a little, then read the peak resident set
    for _ in 0..50 {
        let _ = s.write_all(b"\x1b[6~"); // PgDn
    }
    let _ = s.write_all(b"G");
    let _ = s.flush();
    let t = Instant::now();
    while t.elapsed() < Duration::from_millis(1500) {
        if let Ok(n) = s.try_read(&mut buf) {
            parser.process(&buf[..n]);
        }
        std::thread::sleep(Duration::from_millis(5));
    }
    let pid = s.get_process().pid();
    let rss = std::fs::read_to_string(format!("/proc/{pid}/status"))
        .ok()
        .and_then(|st| {
            st.lines()
                .find(|l| l.starts_with("VmHWM:"))
                .and_then(|l| l.split_whitespace().nth(1))
                .and_then(|v| v.parse::<u64>().ok())
        });
    let _ = s.write_all(b"q");
    let _ = s.flush();
    let t = Instant::now();
    while t.elapsed() < Duration::from_secs(5) {
        if let Ok(expectrl::process::unix::WaitStatus::Exited(..)) = s.get_process().status() {
            break;
        }
        let _ = s.try_read(&mut buf);
        std::thread::sleep(Duration::from_millis(10));
    }
    (first, counted, rss)
}

fn keystrokes(db: &Path) {
    let (mut app, t_open, t_app) = if shardlog::store::is_fleet_url(db) {
        // connecting and the first page come together on the fleet
        let t = Instant::now();
        let app = App::open_fleet(db).expect("open the fleet database");
        (app, Duration::ZERO, t.elapsed())
    } else {
        let t = Instant::now();
        let store = Store::open_existing(db).expect("open");
        let t_open = t.elapsed();
        let t = Instant::now();
        let app = App::with_store(store, db).expect("app");
        (app, t_open, t.elapsed())
    };
    let mut term = match Terminal::new(TestBackend::new(100, 30)) {
        Ok(t) => t,
        Err(e) => match e {},
    };
    let t = Instant::now();
    app.update(shardlog::app::Action::Resize {
        width: 100,
        height: 30,
    });
    let _ = term.draw(|f| shardlog::tui::view::draw(&app, f));
    let t_draw = t.elapsed();
    let t = Instant::now();
    if app.after_draw() {
        let _ = term.draw(|f| shardlog::tui::view::draw(&app, f));
    }
    let t_count = t.elapsed();
    println!(
        "  start-up in process: open store {}, lists + first page {}, resize + first frame {}, \
         then the count + frame {}",
        ms(t_open),
        ms(t_app),
        ms(t_draw),
        ms(t_count)
    );
    let plan: Vec<(&str, Vec<KeyCode>)> = vec![
        ("move ↓", vec![KeyCode::Down; 400]),
        ("page PgDn", vec![KeyCode::PageDown; 200]),
        ("page PgUp", vec![KeyCode::PageUp; 200]),
        ("End/Home", [KeyCode::End, KeyCode::Home].repeat(20)),
        ("sort change s", vec![KeyCode::Char('s'); 20]),
    ];
    let mut all = Vec::new();
    let mut counts = Vec::new();
    for (name, keys) in plan {
        let mut times = Vec::with_capacity(keys.len());
        for k in keys {
            let t = Instant::now();
            send(&mut app, &key(k));
            let _ = term.draw(|f| shardlog::tui::view::draw(&app, f));
            times.push(t.elapsed());
            // the deferred count and the frame that shows it
            let t = Instant::now();
            if app.after_draw() {
                let _ = term.draw(|f| shardlog::tui::view::draw(&app, f));
                counts.push(t.elapsed());
            }
        }
        times.sort();
        println!(
            "  {name:<16} n={:<4} p50 {}  p95 {}  max {}",
            times.len(),
            ms(percentile(&times, 0.5)),
            ms(percentile(&times, 0.95)),
            ms(*times.last().unwrap_or(&Duration::ZERO))
        );
        all.extend(times);
    }
    // a filter change: status, then cleared (each a new first page with its count)
    let mut times = Vec::new();
    for status in ["closed", "reported", "examining", "closed", "reported"] {
        app.log.filter.status = Some(status.into());
        // a filter change is a reload, as the filter form's save does: with the status filter
        // (S reverses the sort and reloads), then cleared (x)
        for k in [KeyCode::Char('S'), KeyCode::Char('x')] {
            let t = Instant::now();
            send(&mut app, &key(k));
            let _ = term.draw(|f| shardlog::tui::view::draw(&app, f));
            times.push(t.elapsed());
            let t = Instant::now();
            if app.after_draw() {
                let _ = term.draw(|f| shardlog::tui::view::draw(&app, f));
                counts.push(t.elapsed());
            }
        }
    }
    times.sort();
    println!(
        "  {:<16} n={:<4} p50 {}  p95 {}  max {}",
        "filter change",
        times.len(),
        ms(percentile(&times, 0.5)),
        ms(percentile(&times, 0.95)),
        ms(*times.last().unwrap_or(&Duration::ZERO))
    );
    all.extend(times);
    all.sort();
    println!(
        "  all keystrokes    n={:<4} p95 {}",
        all.len(),
        ms(percentile(&all, 0.95))
    );
    counts.sort();
    println!(
        "  count of matches, drawn in the frame after (reloads only): n={} p50 {}  p95 {}",
        counts.len(),
        ms(percentile(&counts, 0.5)),
        ms(percentile(&counts, 0.95))
    );
}

fn main() {
    // `cargo bench` passes --bench; `cargo test --benches` runs this too: keep that quick
    let quick = std::env::args().all(|a| a != "--bench");
    let tmp = tempfile::tempdir().expect("tempdir");
    let db = match std::env::var_os("SHARDLOG_BENCH_DB") {
        Some(p) => PathBuf::from(p),
        None => {
            let n: usize = std::env::var("SHARDLOG_BENCH_N")
                .ok()
                .and_then(|v| v.parse().ok())
                .unwrap_or(if quick { 50 } else { 2000 });
            println!("making a {n}-incident database (set SHARDLOG_BENCH_DB for a real one)");
            make_db(tmp.path(), n)
        }
    };
    let count = if shardlog::store::is_fleet_url(&db) {
        shardlog::store::open_records(&db, None)
            .and_then(|f| f.list(&Default::default(), Default::default(), &count_only()))
            .ok()
            .and_then(|p| p.total)
            .unwrap_or(0)
    } else {
        Store::open_existing(&db)
            .and_then(|s| s.incident_count())
            .unwrap_or(0)
    };
    println!("database {} ({count} incidents)", db.display());
    let base = spawn_baseline();
    let (first, counted, rss) = first_frame_and_rss(&db);
    println!(
        "first frame (real binary, pty 100×30): {} from spawn; the pty harness alone (printf) \
         takes {}, so the program's share is about {}",
        ms(first),
        ms(base),
        ms(first.saturating_sub(base))
    );
    println!(
        "count of incidents on screen (the frame after): {} from spawn",
        ms(counted)
    );
    match rss {
        Some(kb) => println!(
            "peak resident memory after paging: {:.1} MB",
            kb as f64 / 1024.0
        ),
        None => println!("peak resident memory: not available (no /proc)"),
    }
    println!("keystroke → frame (update + draw to a 100×30 TestBackend):");
    keystrokes(&db);
}
