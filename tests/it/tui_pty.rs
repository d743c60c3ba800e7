//! The real binary in a pseudo-terminal: keystrokes in, the screen parsed with vt100,
//! waiting on screen conditions with a generous timeout (never a fixed sleep).

#![cfg(unix)]

use std::io::Write;
use std::path::Path;
use std::process::Command;
use std::time::{Duration, Instant};

use expectrl::process::unix::WaitStatus;
use expectrl::Session;

const ROWS: u16 = 30;
const COLS: u16 = 100;
const TIMEOUT: Duration = Duration::from_secs(30);

struct Pty {
    session: expectrl::session::OsSession,
    parser: vt100::Parser,
}

impl Pty {
    fn spawn(db: &Path) -> Pty {
        Pty::spawn_with(db, &[])
    }

    fn spawn_with(db: &Path, env: &[(&str, &str)]) -> Pty {
        let mut cmd = Command::new(env!("CARGO_BIN_EXE_shardlog"));
        cmd.arg("--db").arg(db);
        // a named analyst and a data folder of the test's own, unless the test says otherwise
        // (an empty value removes the variable)
        cmd.env("SHARDLOG_USER", "Ines Varga-Holm");
        if let Some(dir) = db.parent() {
            cmd.env("XDG_DATA_HOME", dir.join("data"));
        }
        for (k, v) in env {
            if v.is_empty() {
                cmd.env_remove(k);
            } else {
                cmd.env(k, v);
            }
        }
        cmd.env("TERM", "xterm-256color");
        cmd.env_remove("NO_COLOR");
        let mut session = Session::spawn(cmd).expect("spawn shardlog in a pty");
        session
            .get_process_mut()
            .set_window_size(COLS, ROWS)
            .expect("window size");
        Pty {
            session,
            parser: vt100::Parser::new(
                std::num::NonZeroU16::new(ROWS).unwrap(),
                std::num::NonZeroU16::new(COLS).unwrap(),
                0,
            ),
        }
    }

    /// Read what is available into the screen parser.
    fn pump(&mut self) -> bool {
        let mut buf = [0u8; 8192];
        match self.session.try_read(&mut buf) {
            Ok(0) => false,
            Ok(n) => {
                self.parser.process(&buf[..n]);
                true
            }
            Err(_) => false,
        }
    }

    fn screen(&self) -> String {
        self.parser.screen().contents()
    }

    /// Wait until the screen satisfies `cond`, or fail with the screen shown.
    fn wait_for(&mut self, what: &str, cond: impl Fn(&vt100::Screen) -> bool) {
        let start = Instant::now();
        loop {
            while self.pump() {}
            if cond(self.parser.screen()) {
                return;
            }
            if start.elapsed() > TIMEOUT {
                panic!("timed out waiting for {what}; screen:\n{}", self.screen());
            }
            std::thread::sleep(Duration::from_millis(20));
        }
    }

    fn wait_text(&mut self, text: &str) {
        let t = text.to_string();
        self.wait_for(text, move |s| s.contents().contains(&t));
    }

    fn send(&mut self, bytes: &str) {
        self.session.write_all(bytes.as_bytes()).expect("write");
        self.session.flush().expect("flush");
    }

    /// Wait for the process to end and return its exit code, reading the rest of its output.
    fn finish(&mut self) -> i32 {
        let start = Instant::now();
        loop {
            while self.pump() {}
            match self.session.get_process().status() {
                Ok(WaitStatus::Exited(_, code)) => {
                    // drain whatever is left
                    while self.pump() {}
                    return code;
                }
                Ok(WaitStatus::StillAlive) => {}
                Ok(other) => panic!("shardlog ended abnormally: {other:?}"),
                Err(e) => panic!("process status: {e}"),
            }
            if start.elapsed() > TIMEOUT {
                panic!("shardlog did not exit; screen:\n{}", self.screen());
            }
            std::thread::sleep(Duration::from_millis(20));
        }
    }
}

#[test]
fn help_opens_and_the_terminal_is_restored_on_quit() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("pty.db");
    let mut pty = Pty::spawn(&db);
    pty.wait_for("the first frame in the alternate screen", |s| {
        s.alternate_screen() && s.contents().contains("shardlog")
    });
    assert_ne!(
        pty.parser.screen().mouse_protocol_mode(),
        vt100::MouseProtocolMode::None,
        "mouse capture is on while running"
    );
    // F1 works in every context (ESC O P)
    pty.send("\u{1b}OP");
    pty.wait_text("Cautions");
    // the cautions follow the keys: scroll to them (PgDn)
    pty.send("\u{1b}[6~");
    pty.wait_text("cut-resistant gloves");
    // Esc closes help (crossterm needs a moment to tell a lone Esc from a sequence)
    pty.send("\u{1b}");
    pty.wait_for("help closed", |s| !s.contents().contains("Cautions"));
    // Ctrl-C quits from anywhere when nothing is unsaved
    pty.send("\u{3}");
    let code = pty.finish();
    assert_eq!(code, 0, "exit code; screen:\n{}", pty.screen());
    let s = pty.parser.screen();
    assert!(!s.alternate_screen(), "left the alternate screen");
    assert_eq!(
        s.mouse_protocol_mode(),
        vt100::MouseProtocolMode::None,
        "mouse capture turned off"
    );
    assert!(!s.bracketed_paste(), "bracketed paste turned off");
    assert!(!s.hide_cursor(), "cursor shown again");
}

#[test]
fn create_an_incident_by_keystrokes_and_find_it_after_quitting() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("pty-new.db");
    let mut pty = Pty::spawn(&db);
    pty.wait_text("No incidents yet");
    pty.send("n");
    pty.wait_text("New incident");
    // asset: a new code, Enter takes it and moves on; then the position
    pty.send("car 214\r");
    pty.wait_text("car 214 (new)");
    pty.send("left side, bay 3");
    pty.wait_text("left side, bay 3");
    // Ctrl-S saves; the incident opens
    pty.send("\u{13}");
    pty.wait_text("created BR-");
    // back to the log: the new row is there, with the count
    pty.send("\u{1b}");
    pty.wait_text("1 incident matches");
    pty.send("q");
    let code = pty.finish();
    assert_eq!(code, 0, "screen:\n{}", pty.screen());
    assert!(!pty.parser.screen().alternate_screen());

    // the record is in the database: `shardlog list --json` finds it
    let out = Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .arg("--db")
        .arg(&db)
        .args(["list", "--json"])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let rows: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let rows = rows.as_array().expect("a JSON array");
    assert_eq!(rows.len(), 1, "{rows:?}");
    assert_eq!(rows[0]["asset"], "car 214");
    assert_eq!(rows[0]["position"], "left side, bay 3");
    assert!(rows[0]["ref"].as_str().unwrap().starts_with("BR-"));
}

#[test]
fn no_color_turns_colour_off() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("pty-mono.db");
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_shardlog"));
    cmd.arg("--db").arg(&db);
    cmd.env("TERM", "xterm-256color");
    cmd.env("NO_COLOR", "1");
    cmd.env("SHARDLOG_USER", "Ines Varga-Holm");
    cmd.env("XDG_DATA_HOME", dir.path().join("data"));
    let mut session = Session::spawn(cmd).expect("spawn");
    session
        .get_process_mut()
        .set_window_size(COLS, ROWS)
        .unwrap();
    let mut pty = Pty {
        session,
        parser: vt100::Parser::new(
            std::num::NonZeroU16::new(ROWS).unwrap(),
            std::num::NonZeroU16::new(COLS).unwrap(),
            0,
        ),
    };
    pty.wait_text("No incidents yet");
    let s = pty.parser.screen();
    for row in 0..ROWS {
        for col in 0..COLS {
            if let Some(cell) = s.cell(row, col) {
                assert_eq!(
                    cell.fgcolor(),
                    vt100::Color::Default,
                    "colour at {row},{col}"
                );
                assert_eq!(
                    cell.bgcolor(),
                    vt100::Color::Default,
                    "colour at {row},{col}"
                );
            }
        }
    }
    pty.send("q");
    assert_eq!(pty.finish(), 0);
}

#[test]
fn a_panic_restores_the_terminal() {
    // debug builds panic right after the first frame when this variable is set
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("pty-panic.db");
    let mut pty = Pty::spawn_with(&db, &[("SHARDLOG_TEST_PANIC_AFTER_FIRST_FRAME", "1")]);
    let code = pty.finish();
    assert_eq!(
        code,
        101,
        "a panic exits with 101; screen:\n{}",
        pty.screen()
    );
    let s = pty.parser.screen();
    assert!(!s.alternate_screen(), "left the alternate screen");
    assert_eq!(
        s.mouse_protocol_mode(),
        vt100::MouseProtocolMode::None,
        "mouse capture turned off"
    );
    assert!(!s.bracketed_paste(), "bracketed paste turned off");
    assert!(
        pty.screen().contains("test panic"),
        "the panic message is readable:\n{}",
        pty.screen()
    );
}

#[test]
fn the_analysts_name_is_asked_on_first_use_kept_and_written_in_the_history() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("pty-name.db");
    let env = [("SHARDLOG_USER", ""), ("USER", "ivh")];
    let mut pty = Pty::spawn_with(&db, &env);
    pty.wait_text("Your name");
    // the login name is offered; typing replaces it
    assert!(pty.screen().contains("ivh"), "{}", pty.screen());
    pty.send("Ines Varga-Holm\r");
    pty.wait_text("recorded as Ines Varga-Holm");
    // the header names the analyst
    let header = pty.screen().lines().next().unwrap_or("").to_string();
    assert!(header.contains("Ines Varga-Holm"), "{header}");
    pty.send("n");
    pty.wait_text("New incident");
    pty.send("car 77\r");
    pty.wait_text("car 77 (new)");
    pty.send("\u{13}");
    pty.wait_text("created BR-");
    pty.send("\u{3}");
    assert_eq!(pty.finish(), 0, "{}", pty.screen());

    // the next start does not ask again, and the history says the name
    let mut pty = Pty::spawn_with(&db, &env);
    pty.wait_text("1 incident matches");
    assert!(!pty.screen().contains("Your name"), "{}", pty.screen());
    assert!(pty
        .screen()
        .lines()
        .next()
        .unwrap_or("")
        .contains("Ines Varga-Holm"));
    pty.send("\u{3}");
    assert_eq!(pty.finish(), 0);
    let out = Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .arg("--db")
        .arg(&db)
        .args(["list", "--json"])
        .output()
        .unwrap();
    let rows: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let reference = rows[0]["ref"].as_str().unwrap().to_string();
    let store = shardlog::store::Store::open(&db).unwrap();
    let history = store.history(&reference).unwrap();
    assert!(!history.is_empty());
    for h in &history {
        assert_eq!(h.actor, "Ines Varga-Holm");
    }
}
