//! `shardlog exposure import|list`, the real binary: panes in service from their own CSV.

use std::path::Path;
use std::process::{Command, Output};

fn run(db: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .arg("--db")
        .arg(db)
        .args(args)
        .env("SHARDLOG_USER", "Mirela Sandqvist")
        .output()
        .unwrap()
}

fn text(o: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

const GOOD: &str = "supplier,product,lot,site,installed_on,removed_on,panes
NORTHPANE,FLOAT6,L10,DEPOT-A,2024-01-01,,1200
NORTHPANE,FLOAT6,L11,,2024-06-01,2026-06-01,300
";

#[test]
fn every_mistake_of_an_exposure_file_is_named_and_nothing_is_written() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("x.db");
    assert!(run(&db, &["init"]).status.success());
    let bad = dir.path().join("bad.csv");
    std::fs::write(
        &bad,
        "supplier,product,lot,site,installed_on,removed_on,panes
,FLOAT6,L10,DEPOT-A,2024-01-01,,1200
NORTHPANE,,L11,,2024-13-01,,-3
NORTHPANE,FLOAT6,,,2025-02-01,2024-01-01,ten
",
    )
    .unwrap();
    let o = run(&db, &["exposure", "import", bad.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1), "{}", text(&o));
    let t = text(&o);
    for want in [
        "line 2, column supplier",
        "line 3, column installed_on",
        "line 3, column panes",
        "line 3, column lot",
        "line 4, column removed_on",
        "line 4, column panes",
    ] {
        assert!(t.contains(want), "missing {want}:\n{t}");
    }
    let o = run(&db, &["exposure", "list", "--csv"]);
    assert_eq!(text(&o).lines().count(), 1, "only the header: {}", text(&o));
}

#[test]
fn imported_exposure_is_listed_and_its_csv_reads_back_the_same() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("x.db");
    assert!(run(&db, &["init"]).status.success());
    let file = dir.path().join("exposure.csv");
    std::fs::write(&file, GOOD).unwrap();
    let o = run(&db, &["exposure", "import", file.to_str().unwrap()]);
    assert!(o.status.success(), "{}", text(&o));
    let table = text(&run(&db, &["exposure", "list"]));
    assert!(table.contains("2 rows, 1500 panes"), "{table}");
    assert!(table.contains("in service"), "{table}");
    let listed = run(&db, &["exposure", "list", "--csv"]);
    assert_eq!(String::from_utf8_lossy(&listed.stdout), GOOD);
    // the listed CSV imports into another database as the same rows
    let other = dir.path().join("y.db");
    assert!(run(&other, &["init"]).status.success());
    let again = dir.path().join("again.csv");
    std::fs::write(&again, &listed.stdout).unwrap();
    assert!(
        run(&other, &["exposure", "import", again.to_str().unwrap()])
            .status
            .success()
    );
    assert_eq!(
        run(&other, &["exposure", "list", "--csv"]).stdout,
        listed.stdout
    );
    // strict mode refuses codes the database does not define
    let third = dir.path().join("z.db");
    assert!(run(&third, &["init"]).status.success());
    let o = run(
        &third,
        &["exposure", "import", "--strict", file.to_str().unwrap()],
    );
    assert_eq!(o.status.code(), Some(1));
    assert!(
        text(&o).contains("unknown supplier \"NORTHPANE\""),
        "{}",
        text(&o)
    );
}
