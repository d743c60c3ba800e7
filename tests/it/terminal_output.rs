//! Stored escape sequences and the terminal: when standard output is a terminal, user text
//! never reaches it raw (every control character is shown as a symbol and a note on standard
//! error says so); to a pipe or a file, an export stays byte-exact.
#![cfg(unix)]

use std::path::Path;
use std::process::Command;
use std::time::{Duration, Instant};

use expectrl::process::unix::WaitStatus;
use expectrl::Session;

const BIN: &str = env!("CARGO_BIN_EXE_shardlog");
/// A window title change, a clear screen, a bell, a C1 CSI and a bidirectional override.
const HOSTILE: &str = "before \u{1b}]0;owned\u{7} \u{1b}[2J \u{9b}31m \u{202e}desrever after";

fn database(dir: &Path) -> std::path::PathBuf {
    let db = dir.join("esc.db");
    let o = Command::new(BIN)
        .arg("--db")
        .arg(&db)
        .arg("init")
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let f = dir.join("esc.csv");
    std::fs::write(&f, format!("found_on,notes\n2026-03-14,\"{HOSTILE}\"\n")).unwrap();
    let o = Command::new(BIN)
        .arg("--db")
        .arg(&db)
        .arg("import")
        .arg(&f)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    db
}

/// Everything the program writes to a pty (standard output and error both) until it exits.
fn run_in_pty(db: &Path, args: &[&str]) -> (i32, Vec<u8>) {
    let mut cmd = Command::new(BIN);
    cmd.arg("--db")
        .arg(db)
        .args(args)
        .env("TERM", "xterm-256color");
    let mut s = Session::spawn(cmd).expect("spawn in a pty");
    let mut bytes = Vec::new();
    let start = Instant::now();
    let mut code = None;
    loop {
        let mut buf = [0u8; 8192];
        let mut got = false;
        while let Ok(n @ 1..) = s.try_read(&mut buf) {
            bytes.extend_from_slice(&buf[..n]);
            got = true;
        }
        if code.is_some() && !got {
            break;
        }
        if code.is_none() {
            match s.get_process().status() {
                Ok(WaitStatus::Exited(_, c)) => code = Some(c),
                Ok(WaitStatus::StillAlive) => {}
                other => panic!("{other:?}"),
            }
        }
        assert!(start.elapsed() < Duration::from_secs(30), "did not end");
        std::thread::sleep(Duration::from_millis(20));
    }
    (code.unwrap_or(-1), bytes)
}

fn find(hay: &[u8], needle: &[u8]) -> bool {
    hay.windows(needle.len()).any(|w| w == needle)
}

#[test]
fn export_to_a_pipe_is_exact() {
    let dir = tempfile::tempdir().unwrap();
    let db = database(dir.path());
    let o = Command::new(BIN)
        .arg("--db")
        .arg(&db)
        .args(["export", "--format", "csv"])
        .output()
        .unwrap();
    assert!(o.status.success());
    let csv = String::from_utf8(o.stdout).unwrap();
    assert!(
        csv.contains(HOSTILE),
        "the CSV keeps the note exactly: {csv:?}"
    );
    assert!(o.stderr.is_empty(), "no note for a pipe");
    let o = Command::new(BIN)
        .arg("--db")
        .arg(&db)
        .args(["export", "--format", "json"])
        .output()
        .unwrap();
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["incidents"][0]["notes"], HOSTILE);
    // and the CSV round-trips through a file byte for byte
    let f = dir.path().join("out.csv");
    let o = Command::new(BIN)
        .arg("--db")
        .arg(&db)
        .args(["export", "--format", "csv", "-o"])
        .arg(&f)
        .output()
        .unwrap();
    assert!(o.status.success());
    assert_eq!(std::fs::read_to_string(&f).unwrap(), csv);
}

#[test]
fn export_to_a_terminal_shows_controls_as_symbols() {
    let dir = tempfile::tempdir().unwrap();
    let db = database(dir.path());
    for format in ["csv", "json"] {
        let (code, bytes) = run_in_pty(&db, &["export", "--format", format]);
        assert_eq!(code, 0, "{}", String::from_utf8_lossy(&bytes));
        for raw in [
            &b"\x1b"[..],
            b"\x07",
            "\u{9b}".as_bytes(),
            "\u{202e}".as_bytes(),
        ] {
            assert!(
                !find(&bytes, raw),
                "{format}: {raw:?} reached the terminal: {:?}",
                String::from_utf8_lossy(&bytes)
            );
        }
        let text = String::from_utf8_lossy(&bytes);
        if format == "csv" {
            assert!(text.contains("before ␛]0;owned␇ ␛[2J"), "{text}");
        } else {
            // JSON escapes C0 itself; C1 and the override are shown as symbols
            assert!(text.contains("\\u001b]0;owned\\u0007"), "{text}");
        }
        assert!(text.contains("desrever after"), "{text}");
        assert!(
            text.contains("note: ") && text.contains("a pipe for the exact data"),
            "{format}: {text}"
        );
    }
}

#[test]
fn report_markdown_and_list_json_to_a_terminal_stay_inert() {
    let dir = tempfile::tempdir().unwrap();
    let db = database(dir.path());
    let o = Command::new(BIN)
        .arg("--db")
        .arg(&db)
        .args(["list", "--json"])
        .output()
        .unwrap();
    let rows: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let reference = rows[0]["ref"].as_str().unwrap().to_string();
    for args in [
        vec!["report", reference.as_str(), "--format", "md"],
        vec!["show", reference.as_str(), "--json"],
        vec!["show", reference.as_str()],
    ] {
        let (code, bytes) = run_in_pty(&db, &args);
        assert_eq!(code, 0, "{args:?}: {}", String::from_utf8_lossy(&bytes));
        for raw in [
            &b"\x1b"[..],
            b"\x07",
            "\u{9b}".as_bytes(),
            "\u{202e}".as_bytes(),
        ] {
            assert!(!find(&bytes, raw), "{args:?}: {raw:?} reached the terminal");
        }
    }
}

#[test]
fn show_and_list_write_the_stored_bytes_to_a_pipe_and_symbols_to_a_terminal() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("esc.db");
    let o = Command::new(BIN)
        .arg("--db")
        .arg(&db)
        .arg("init")
        .output()
        .unwrap();
    assert!(o.status.success());
    let f = dir.path().join("esc.csv");
    std::fs::write(
        &f,
        format!("found_on,position,notes\n2026-03-14,\"{HOSTILE}\",\"{HOSTILE}\"\n"),
    )
    .unwrap();
    let o = Command::new(BIN)
        .arg("--db")
        .arg(&db)
        .arg("import")
        .arg(&f)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let o = Command::new(BIN)
        .arg("--db")
        .arg(&db)
        .args(["list", "--json"])
        .output()
        .unwrap();
    let rows: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let reference = rows[0]["ref"].as_str().unwrap().to_string();
    // to a pipe: the stored bytes, escape sequences and all, and no note
    for args in [
        vec!["show", reference.as_str()],
        vec!["list", "--limit", "5"],
    ] {
        let o = Command::new(BIN)
            .arg("--db")
            .arg(&db)
            .args(&args)
            .output()
            .unwrap();
        assert!(o.status.success());
        assert!(
            find(&o.stdout, "\u{1b}]0;owned\u{7}".as_bytes())
                && find(&o.stdout, "\u{1b}[2J".as_bytes()),
            "{args:?} to a pipe: {:?}",
            String::from_utf8_lossy(&o.stdout)
        );
        assert!(o.stderr.is_empty(), "{args:?}: a note for a pipe");
    }
    let o = Command::new(BIN)
        .arg("--db")
        .arg(&db)
        .args(["show", reference.as_str()])
        .output()
        .unwrap();
    assert!(
        find(&o.stdout, HOSTILE.as_bytes()),
        "show keeps the notes whole"
    );
    // on a terminal: every control shown as a symbol, with the note
    for args in [
        vec!["show", reference.as_str()],
        vec!["list", "--limit", "5"],
    ] {
        let (code, bytes) = run_in_pty(&db, &args);
        assert_eq!(code, 0);
        assert!(
            !find(&bytes, b"\x1b]0;owned"),
            "{args:?}: the title escape reached the terminal"
        );
        let text = String::from_utf8_lossy(&bytes);
        assert!(text.contains("␛]0;owned␇"), "{args:?}: {text}");
        assert!(text.contains("note: "), "{args:?}: {text}");
    }
}
