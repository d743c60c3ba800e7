//! Progress on long work: a line on standard error with rows, rate and time left when it is
//! a terminal (a real pseudo-terminal here), nothing at all when it is a pipe.

use std::io::Read;
use std::process::Command;
use std::time::{Duration, Instant};

use expectrl::process::unix::WaitStatus;
use expectrl::Session;

use crate::support::pty::{BIN, TIMEOUT};

/// Run `shardlog ARGS` in a pseudo-terminal; every byte it wrote, and its exit code.
pub(crate) fn in_a_terminal(args: &[&str]) -> (String, i32) {
    let mut cmd = Command::new(BIN);
    cmd.args(args).env("SHARDLOG_USER", "pty-user");
    let mut session = Session::spawn(cmd).expect("spawn shardlog in a pty");
    let mut seen = Vec::new();
    let start = Instant::now();
    let mut buf = [0u8; 8192];
    loop {
        while let Ok(n) = session.try_read(&mut buf) {
            if n == 0 {
                break;
            }
            seen.extend_from_slice(&buf[..n]);
        }
        match session.get_process().status() {
            Ok(WaitStatus::StillAlive) => {}
            Ok(WaitStatus::Exited(_, code)) => {
                // what is still in the terminal's buffer
                let _ = session.read_to_end(&mut seen);
                return (String::from_utf8_lossy(&seen).into_owned(), code);
            }
            Ok(other) => panic!("shardlog ended abnormally: {other:?}"),
            Err(e) => panic!("process status: {e}"),
        }
        assert!(start.elapsed() < TIMEOUT, "shardlog did not exit: {seen:?}");
        std::thread::sleep(Duration::from_millis(10));
    }
}

#[test]
fn a_terminal_sees_progress_and_a_pipe_does_not() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("demo.db");
    let db_text = db.to_str().unwrap();
    // the demo's default 400 incidents take well over the meter's first tenth of a second
    let (text, code) = in_a_terminal(&["demo", "--out", db_text]);
    assert_eq!(code, 0, "{text}");
    assert!(text.contains("generating "), "{text:?}");
    assert!(text.contains(" of 400 rows · "), "{text:?}");
    assert!(text.contains(" rows/s · "), "{text:?}");
    assert!(text.contains(" left"), "{text:?}");
    // the line is wiped before the result is printed
    let result_at = text.find("wrote ").expect("the result");
    assert!(text[..result_at].ends_with("\r\x1b[2K"), "{text:?}");

    let (text, code) = in_a_terminal(&["--db", db_text, "verify"]);
    assert_eq!(code, 0, "{text}");
    assert!(text.contains("verifying "), "{text:?}");
    assert!(text.contains("ok: "), "{text:?}");

    // piped: the same work, not a byte of progress
    let out = Command::new(BIN)
        .args(["--db", db_text, "verify"])
        .output()
        .unwrap();
    assert!(out.status.success());
    assert!(
        out.stderr.is_empty(),
        "{:?}",
        String::from_utf8_lossy(&out.stderr)
    );
    let export = dir.path().join("all.json");
    let out = Command::new(BIN)
        .args(["--db", db_text, "export", "--format", "json", "-o"])
        .arg(&export)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let db2 = dir.path().join("again.db");
    init(&db2);
    // the photos travel beside the export, in the source database's attachment folder
    let files = dir.path().join("demo.db.files");
    let out = Command::new(BIN)
        .arg("--db")
        .arg(&db2)
        .arg("import")
        .arg(&export)
        .arg("--attachments")
        .arg(&files)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(
        out.stderr.is_empty(),
        "{:?}",
        String::from_utf8_lossy(&out.stderr)
    );
    let out = Command::new(BIN)
        .args(["demo", "--incidents", "50", "--out"])
        .arg(dir.path().join("small.db"))
        .output()
        .unwrap();
    assert!(out.status.success());
    assert!(
        out.stderr.is_empty(),
        "{:?}",
        String::from_utf8_lossy(&out.stderr)
    );

    // and the import of the same file in a terminal shows its stages
    let db3 = dir.path().join("third.db");
    init(&db3);
    let (text, code) = in_a_terminal(&[
        "--db",
        db3.to_str().unwrap(),
        "import",
        export.to_str().unwrap(),
        "--attachments",
        files.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{text}");
    assert!(
        text.contains("checking ") || text.contains("importing "),
        "{text:?}"
    );
}

fn init(db: &std::path::Path) {
    let out = Command::new(BIN)
        .arg("--db")
        .arg(db)
        .arg("init")
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}
