//! The record commands from outside: the real binary, a temporary database, stdout and
//! exit codes. Also: sample-db/ is what `demo` makes with the default seed.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn bin() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_shardlog"));
    c.env("SHARDLOG_USER", "test-runner");
    c
}

fn run(args: &[&str]) -> Output {
    bin().args(args).output().unwrap()
}

fn text(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn err(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn demo(dir: &Path, n: &str) -> PathBuf {
    let db = dir.join("demo.db");
    let o = run(&[
        "demo",
        "--out",
        db.to_str().unwrap(),
        "--incidents",
        n,
        "--seed",
        "11",
    ]);
    assert!(o.status.success(), "{}", err(&o));
    db
}

#[test]
fn init_then_refuses_foreign_files() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("new.db");
    let o = run(&["--db", db.to_str().unwrap(), "init"]);
    assert!(o.status.success(), "{}", err(&o));
    assert!(text(&o).contains("created"));
    let o = run(&["--db", db.to_str().unwrap(), "init"]);
    assert!(text(&o).contains("already a shardlog database"));
    let foreign = dir.path().join("foreign.db");
    std::fs::write(&foreign, b"plain text, not a database").unwrap();
    let o = run(&["--db", foreign.to_str().unwrap(), "list"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(err(&o).contains("not a shardlog database"), "{}", err(&o));
    let missing = dir.path().join("missing.db");
    let o = run(&["--db", missing.to_str().unwrap(), "list"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(err(&o).contains("init"), "{}", err(&o));
    assert!(!missing.exists());
}

#[test]
fn list_show_json_and_filters() {
    let dir = tempfile::tempdir().unwrap();
    let db = demo(dir.path(), "150");
    let d = db.to_str().unwrap();
    let o = run(&["--db", d, "list", "--json", "--limit", "500"]);
    assert!(o.status.success(), "{}", err(&o));
    let rows: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let rows = rows.as_array().unwrap();
    assert_eq!(rows.len(), 150);
    for key in [
        "ref",
        "occurred",
        "status",
        "cause",
        "supplier",
        "lot",
        "stress_mpa",
    ] {
        assert!(rows[0].get(key).is_some(), "list --json lacks {key}");
    }
    let o = run(&[
        "--db",
        d,
        "list",
        "--supplier",
        "BRELLIN",
        "--json",
        "--limit",
        "500",
    ]);
    let sub: Vec<serde_json::Value> = serde_json::from_slice(&o.stdout).unwrap();
    assert!(!sub.is_empty() && sub.len() < 150);
    assert!(sub.iter().all(|r| r["supplier"] == "BRELLIN"));
    let o = run(&["--db", d, "list", "--limit", "5"]);
    let t = text(&o);
    assert!(t.contains("5 of 150 incidents shown"), "{t}");
    let first = rows[0]["ref"].as_str().unwrap();
    let o = run(&["--db", d, "show", first]);
    assert!(o.status.success());
    assert!(text(&o).starts_with(first));
    let o = run(&["--db", d, "show", first, "--json"]);
    let inc: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(inc["reference"], first);
    let o = run(&["--db", d, "show", "BR-000000-0000"]);
    assert_eq!(o.status.code(), Some(1));
    let o = run(&["--db", d, "list", "--since", "14/03/2026"]);
    assert_eq!(o.status.code(), Some(2), "bad date is a usage error");
    assert!(err(&o).contains("--since"));
}

#[test]
fn import_is_all_or_nothing_from_the_command_line() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("t.db");
    let d = db.to_str().unwrap();
    assert!(run(&["--db", d, "init"]).status.success());
    let good = dir.path().join("good.csv");
    std::fs::write(
        &good,
        "found_on,supplier,mirror_mist\n2026-03-14,ORVALE,1.1 mm\n",
    )
    .unwrap();
    let bad = dir.path().join("bad.csv");
    std::fs::write(
        &bad,
        "found_on,supplier,mirror_mist\n2026-03-15,ORVALE,1.1 mm\n2026-03-16,ORVALE,lots mm\n",
    )
    .unwrap();
    let o = run(&["--db", d, "import", good.to_str().unwrap(), "--dry-run"]);
    assert!(o.status.success());
    assert!(text(&o).contains("nothing was written"));
    let o = run(&["--db", d, "import", good.to_str().unwrap()]);
    assert!(o.status.success(), "{}", err(&o));
    let before = std::fs::read(&db).unwrap();
    let o = run(&["--db", d, "import", bad.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1));
    let e = err(&o);
    assert!(e.contains("line 3, column mirror_mist"), "{e}");
    assert!(e.contains("nothing was written"), "{e}");
    assert_eq!(std::fs::read(&db).unwrap(), before, "database changed");
    let o = run(&["--db", d, "list", "--json"]);
    let rows: Vec<serde_json::Value> = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(rows.len(), 1);
}

#[test]
fn a_command_line_change_is_audited_under_shardlog_user() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("t.db");
    let d = db.to_str().unwrap();
    assert!(run(&["--db", d, "init"]).status.success());
    let file = dir.path().join("one.csv");
    std::fs::write(&file, "found_on,supplier\n2026-03-14,ORVALE\n").unwrap();
    let import = |user: Option<&str>| {
        let mut c = Command::new(env!("CARGO_BIN_EXE_shardlog"));
        c.env_remove("SHARDLOG_USER")
            // the name kept from the interface's first use lives under the data folder: an
            // empty one here, so a name kept on this machine does not stand in for $USER
            .env("XDG_DATA_HOME", dir.path().join("data"))
            .env("USER", "login-name")
            .env("USERNAME", "other-login")
            // an old name for the setting is not read
            .env("SHARDLOG_ACTOR", "not-this-one");
        if let Some(u) = user {
            c.env("SHARDLOG_USER", u);
        }
        let o = c
            .args(["--db", d, "import", file.to_str().unwrap()])
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", err(&o));
    };
    import(Some("  lab analyst 7 "));
    import(None);
    let store = shardlog::store::Store::open_existing(&db).unwrap();
    let o = run(&["--db", d, "list", "--json"]);
    let rows: Vec<serde_json::Value> = serde_json::from_slice(&o.stdout).unwrap();
    let mut actors: Vec<String> = rows
        .iter()
        .flat_map(|r| store.history(r["ref"].as_str().unwrap()).unwrap())
        .map(|h| h.actor)
        .collect();
    actors.sort();
    assert_eq!(actors, ["lab analyst 7", "login-name"]);
}

#[test]
fn export_round_trip_verify_tamper_and_backup() {
    let dir = tempfile::tempdir().unwrap();
    let db = demo(dir.path(), "60");
    let d = db.to_str().unwrap();
    let out = dir.path().join("all.json");
    let o = run(&[
        "--db",
        d,
        "export",
        "--format",
        "json",
        "-o",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", err(&o));
    let copy = dir.path().join("copy.db");
    let c = copy.to_str().unwrap();
    assert!(run(&["--db", c, "init"]).status.success());
    // the attachment rows need their files: refused without them, checked and copied with
    let o = run(&["--db", c, "import", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1));
    assert!(err(&o).contains("--attachments"), "{}", err(&o));
    let files = format!("{d}.files");
    let o = run(&[
        "--db",
        c,
        "import",
        out.to_str().unwrap(),
        "--attachments",
        &files,
    ]);
    assert!(o.status.success(), "{}", err(&o));
    // the same bytes but for the signed head (each database signs its own head)
    let unsigned = |bytes: &[u8]| -> String {
        let t = String::from_utf8(bytes.to_vec()).unwrap();
        let cut = t.find(",\n  \"signed_head\": ").expect("a signed export");
        format!("{}\n}}\n", &t[..cut])
    };
    let again = run(&["--db", c, "export", "--format", "json"]);
    assert_eq!(
        unsigned(&again.stdout),
        unsigned(&std::fs::read(&out).unwrap())
    );
    let csv = run(&["--db", d, "export", "--format", "csv", "--cause", "thermal"]);
    let csv = text(&csv);
    assert!(csv.starts_with("# shardlog signed head {"), "{csv}");
    assert!(csv.lines().skip(2).all(|l| l.contains(",thermal,")));

    let o = run(&["--db", d, "verify"]);
    assert!(o.status.success(), "{}", err(&o));
    assert!(text(&o).starts_with("ok:"));

    let bak = dir.path().join("bak.db");
    let o = run(&["--db", d, "backup", bak.to_str().unwrap()]);
    assert!(o.status.success(), "{}", err(&o));
    assert!(text(&o).contains("integrity check ok"));
    assert!(run(&["--db", bak.to_str().unwrap(), "verify"])
        .status
        .success());
    assert_eq!(
        std::fs::read_dir(dir.path().join("bak.db.files"))
            .unwrap()
            .count(),
        std::fs::read_dir(dir.path().join("demo.db.files"))
            .unwrap()
            .count()
    );
    let o = run(&["--db", d, "backup", bak.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1), "backup over an existing file");

    {
        let conn = rusqlite::Connection::open(&db).unwrap();
        conn.execute("UPDATE incidents SET status = 'closed' WHERE seq = 7", [])
            .unwrap();
    }
    let o = run(&["--db", d, "verify"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(err(&o).contains("changed behind"), "{}", err(&o));
}

#[test]
fn two_processes_importing_into_one_file_lose_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("shared.db");
    let d = db.to_str().unwrap().to_string();
    assert!(run(&["--db", &d, "init"]).status.success());
    let mut children = Vec::new();
    for p in 0..2 {
        for k in 0..6 {
            let f = dir.path().join(format!("p{p}-{k}.csv"));
            let mut body = String::from("found_on,supplier,notes\n");
            for i in 0..20 {
                body.push_str(&format!(
                    "2026-04-{:02},SUP{p},process {p} file {k} row {i}\n",
                    1 + i
                ));
            }
            std::fs::write(&f, body).unwrap();
        }
    }
    for p in 0..2 {
        let d = d.clone();
        let dir = dir.path().to_path_buf();
        children.push(std::thread::spawn(move || {
            for k in 0..6 {
                let f = dir.join(format!("p{p}-{k}.csv"));
                let o = run(&["--db", &d, "import", f.to_str().unwrap()]);
                assert!(o.status.success(), "process {p} file {k}: {}", err(&o));
            }
        }));
    }
    for c in children {
        c.join().unwrap();
    }
    let o = run(&["--db", &d, "list", "--json", "--limit", "1000"]);
    let rows: Vec<serde_json::Value> = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(rows.len(), 240);
    let refs: std::collections::HashSet<&str> =
        rows.iter().map(|r| r["ref"].as_str().unwrap()).collect();
    assert_eq!(refs.len(), 240);
    assert!(run(&["--db", &d, "verify"]).status.success());
}

#[test]
fn demo_refuses_bad_arguments() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("d.db");
    let o = run(&["demo", "--out", db.to_str().unwrap(), "--incidents", "0"]);
    assert_eq!(o.status.code(), Some(2));
    std::fs::write(&db, b"x").unwrap();
    let o = run(&["demo", "--out", db.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    assert_eq!(std::fs::read(&db).unwrap(), b"x");
}

/// sample-db/demo.db is what `shardlog demo` writes with the default seed and count:
/// compared through the canonical JSON export and the attachment files, not bytes.
#[test]
fn sample_db_matches_the_generator() {
    use shardlog::demo;
    use shardlog::store::{Filter, Store};
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-db");
    let dir = tempfile::tempdir().unwrap();
    // copy the committed file so the test never writes into the source tree
    let committed = dir.path().join("committed.db");
    std::fs::copy(root.join("demo.db"), &committed).unwrap();
    // the evidence travels with the database: verify checks every attachment's file
    let files = dir.path().join("committed.db.files");
    std::fs::create_dir(&files).unwrap();
    for e in std::fs::read_dir(root.join("demo.db.files")).unwrap() {
        let e = e.unwrap();
        std::fs::copy(e.path(), files.join(e.file_name())).unwrap();
    }
    let fresh = dir.path().join("fresh.db");
    demo::generate(
        &fresh,
        &demo::DemoOptions {
            incidents: demo::DEFAULT_INCIDENTS,
            seed: demo::DEFAULT_SEED,
        },
    )
    .unwrap();
    let a = Store::open_existing(&committed).unwrap();
    let b = Store::open_existing(&fresh).unwrap();
    let (ea, eb) = (
        a.export_json(&Filter::default()).unwrap(),
        b.export_json(&Filter::default()).unwrap(),
    );
    assert!(
        ea == eb,
        "sample-db/demo.db differs from `shardlog demo`; regenerate it"
    );
    assert_eq!(a.audit_head().unwrap(), b.audit_head().unwrap());
    assert!(a.verify().unwrap().ok());
    let list = |p: &Path| {
        let mut v: Vec<(String, Vec<u8>)> = std::fs::read_dir(p)
            .unwrap()
            .map(|e| {
                let e = e.unwrap();
                (
                    e.file_name().to_string_lossy().into_owned(),
                    std::fs::read(e.path()).unwrap(),
                )
            })
            .collect();
        v.sort();
        v
    };
    assert_eq!(
        list(&root.join("demo.db.files")),
        list(&dir.path().join("fresh.db.files"))
    );
    assert!(std::fs::metadata(root.join("demo.db")).unwrap().len() < 5 * 1024 * 1024);
}

/// The demo log tells a story an analyst would believe: no record holds an event dated
/// after the record itself was entered, nothing is dated after the snapshot (2026-11-30),
/// the audit chain runs forward in time after the set-up, and no thermal break is in a
/// fully tempered pane (a fully tempered pane survives a temperature difference of about
/// 200 K; thermal breakage is an annealed-glass problem — common practice).
#[test]
fn demo_history_is_consistent_in_time() {
    use shardlog::demo;
    use shardlog::store::{Filter, Store};
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("d.db");
    demo::generate(
        &db,
        &demo::DemoOptions {
            incidents: 1500,
            seed: 7,
        },
    )
    .unwrap();
    let store = Store::open_existing(&db).unwrap();
    let export = store.export_json(&Filter::default()).unwrap();
    let v: serde_json::Value = serde_json::from_str(&export).unwrap();
    let incidents = v["incidents"].as_array().unwrap();
    assert_eq!(incidents.len(), 1500);
    let snapshot = "2026-11-30T17:00:00";
    let (mut thermal, mut closed_examined) = (0, 0);
    for inc in incidents {
        let r = inc["reference"].as_str().unwrap();
        let created = inc["created_at"].as_str().unwrap();
        assert!(
            created <= snapshot,
            "{r} entered {created}, after the snapshot"
        );
        assert!(inc["found_on"].as_str().unwrap() <= &created[..10], "{r}");
        for c in inc["custody"].as_array().unwrap() {
            let at = c["at"].as_str().unwrap();
            assert!(at <= created, "{r}: custody at {at} after entry {created}");
        }
        for e in inc["examinations"].as_array().unwrap() {
            let on = e["examined_on"].as_str().unwrap();
            assert!(
                on <= &created[..10],
                "{r}: examined {on} after entry {created}"
            );
        }
        for a in inc["attachments"].as_array().unwrap() {
            let at = a["added_at"].as_str().unwrap();
            assert!(at <= created, "{r}: photo {at} after entry {created}");
        }
        if inc["cause"]["category"] == "thermal" {
            thermal += 1;
            for p in inc["glass"]["plies"].as_array().unwrap() {
                assert_ne!(p["temper"], "fully_tempered", "{r}: thermal break in FT");
            }
        }
        if inc["status"] == "closed" && !inc["examinations"].as_array().unwrap().is_empty() {
            closed_examined += 1;
            let disposed = inc["custody"]
                .as_array()
                .unwrap()
                .iter()
                .any(|c| c["action"] == "disposed");
            assert!(disposed, "{r}: closed examined case without disposal");
        }
    }
    assert!(
        thermal > 10 && closed_examined > 10,
        "{thermal} {closed_examined}"
    );
    // the audit chain after the set-up rows runs forward in time
    // (the lookup rows are seeded by the first migration with a fixed stamp)
    drop(store);
    let conn = rusqlite::Connection::open(&db).unwrap();
    let mut stmt = conn
        .prepare("SELECT at FROM audit WHERE entity <> 'lookup' ORDER BY seq")
        .unwrap();
    let times: Vec<String> = stmt
        .query_map([], |r| r.get(0))
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap();
    assert!(times.len() > 10);
    assert!(times.windows(2).all(|w| w[0] <= w[1]));
}

/// The demo loads without the fleet-facts triggers and fills the copy at the end: the copy
/// matches the incidents (verify), and the triggers are back, so a later edit is followed.
#[test]
fn demo_fleet_facts_are_filled_and_kept_after_the_load() {
    use shardlog::demo;
    use shardlog::store::{Stamp, Store};
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("d.db");
    demo::generate(
        &db,
        &demo::DemoOptions {
            incidents: 300,
            seed: 11,
        },
    )
    .unwrap();
    let conn = rusqlite::Connection::open(&db).unwrap();
    let count = |sql: &str| -> i64 { conn.query_row(sql, [], |r| r.get(0)).unwrap() };
    assert_eq!(
        count(
            "SELECT count(*) FROM sqlite_master WHERE type = 'trigger' AND tbl_name = 'incidents'"
        ),
        3
    );
    assert_eq!(count("SELECT count(*) FROM incident_facts"), 300);
    let mut store = Store::open_existing(&db).unwrap();
    assert!(store.verify().unwrap().ok());
    let first = store.matching_ids(&Default::default()).unwrap()[0].clone();
    let mut inc = store.get(&first).unwrap();
    inc.found_on = inc.found_on - chrono::Days::new(1);
    let stamp = Stamp::new("tester", chrono::Utc::now());
    store.update_incident(&inc, &stamp).unwrap();
    let r = store.verify().unwrap();
    assert!(r.ok(), "{:?}", r.first_problem);
    let on: String = conn
        .query_row(
            "SELECT f.found_on FROM incident_facts f JOIN incidents i ON i.seq = f.seq WHERE i.id = ?1",
            [&first],
            |r| r.get(0),
        )
        .unwrap();
    assert_eq!(on, inc.found_on.to_string());
}
