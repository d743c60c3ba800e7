//! A real `shardlog` in a pseudo-terminal for the tests of several processes: keystrokes in,
//! the screen parsed with vt100, waiting on screen conditions with a generous timeout (never
//! a fixed sleep). Every look at the screen also fails the test if it ever speaks of a
//! locked database.

use std::io::Write;
use std::path::Path;
use std::process::Command;
use std::time::{Duration, Instant};

use expectrl::process::unix::WaitStatus;
use expectrl::Session;

pub const ROWS: u16 = 30;
pub const COLS: u16 = 80;
pub const TIMEOUT: Duration = Duration::from_secs(60);
pub const BIN: &str = env!("CARGO_BIN_EXE_shardlog");

pub struct Pty {
    session: expectrl::session::OsSession,
    parser: vt100::Parser,
}

impl Pty {
    pub fn spawn(db: &Path) -> Pty {
        Pty::spawn_with(db, &[])
    }

    pub fn spawn_with(db: &Path, env: &[(&str, &str)]) -> Pty {
        let mut cmd = Command::new(BIN);
        cmd.arg("--db").arg(db);
        for (k, v) in env {
            cmd.env(k, v);
        }
        cmd.env("TERM", "xterm-256color");
        cmd.env("SHARDLOG_USER", "pty-user");
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

    pub fn pump(&mut self) -> bool {
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

    pub fn screen(&self) -> String {
        self.parser.screen().contents()
    }

    /// Wait until the screen satisfies `cond`, failing with the screen shown; and at every
    /// look, fail if the screen ever says the database is locked or busy.
    pub fn wait_for(&mut self, what: &str, cond: impl Fn(&str) -> bool) {
        let start = Instant::now();
        loop {
            while self.pump() {}
            let s = self.screen();
            let low = s.to_lowercase();
            assert!(
                !low.contains("locked") && !low.contains("database is busy"),
                "the screen speaks of a locked database while waiting for {what}:\n{s}"
            );
            if cond(&s) {
                return;
            }
            if start.elapsed() > TIMEOUT {
                panic!("timed out waiting for {what}; screen:\n{s}");
            }
            std::thread::sleep(Duration::from_millis(15));
        }
    }

    pub fn wait_text(&mut self, text: &str) {
        let t = text.to_string();
        self.wait_for(text, move |s| s.contains(&t));
    }

    pub fn send(&mut self, bytes: &str) {
        self.session.write_all(bytes.as_bytes()).expect("write");
        self.session.flush().expect("flush");
    }

    pub fn finish(&mut self) -> i32 {
        let start = Instant::now();
        loop {
            while self.pump() {}
            match self.session.get_process().status() {
                Ok(WaitStatus::Exited(_, code)) => return code,
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

    /// From the log: open the first (newest) incident and return its reference.
    pub fn open_first_incident(&mut self) -> String {
        self.wait_text("incidents match");
        self.send("\r");
        self.wait_text("revision ");
        reference_on(&self.screen())
    }

    /// From the incident screen: edit the intake and move to the position field.
    pub fn edit_position(&mut self) {
        self.send("e");
        self.wait_text("Edit intake");
        self.send("\t");
        self.wait_for("the position field focused", |s| s.contains("▸Position"));
    }
}

pub fn reference_on(screen: &str) -> String {
    let at = screen.find("BR-").expect("a reference on the screen");
    screen[at..at + 14].to_string()
}
