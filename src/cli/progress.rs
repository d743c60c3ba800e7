//! A progress line on standard error for long work (import, demo, verify, dispute, backup):
//! rows done, the rate and the time left, redrawn a few times a second, and wiped when the
//! work ends. Only when standard error is a terminal: to a pipe or a file nothing is written.

use std::io::{IsTerminal, Write};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use crate::store::progress::{Progress, ProgressFn};

/// How often the line is redrawn at most; also how long work runs before a line appears.
const REDRAW: Duration = Duration::from_millis(100);

struct State {
    out: Box<dyn Write + Send>,
    stage: &'static str,
    stage_started: Instant,
    last_draw: Instant,
    drawn: bool,
}

/// The progress line. Wiped when finished or dropped.
pub struct Meter {
    state: Arc<Mutex<State>>,
}

impl Meter {
    /// A meter on standard error, or `None` when standard error is not a terminal.
    pub fn on_stderr() -> Option<Meter> {
        let err = std::io::stderr();
        if !err.is_terminal() {
            return None;
        }
        Some(Meter::to(Box::new(err)))
    }

    /// A meter drawing to `out` (tests).
    pub fn to(out: Box<dyn Write + Send>) -> Meter {
        let now = Instant::now();
        Meter {
            state: Arc::new(Mutex::new(State {
                out,
                stage: "",
                stage_started: now,
                last_draw: now,
                drawn: false,
            })),
        }
    }

    /// The callback the store and the demo tell.
    pub fn callback(&self) -> ProgressFn {
        let state = Arc::clone(&self.state);
        Box::new(move |p: Progress| {
            if let Ok(mut s) = state.lock() {
                s.update(p, Instant::now());
            }
        })
    }

    /// Wipe the line (before the command prints its result).
    pub fn finish(&self) {
        if let Ok(mut s) = self.state.lock() {
            if s.drawn {
                let _ = s.out.write_all(b"\r\x1b[2K");
                let _ = s.out.flush();
                s.drawn = false;
            }
        }
    }
}

impl Drop for Meter {
    fn drop(&mut self) {
        self.finish();
    }
}

impl State {
    fn update(&mut self, p: Progress, now: Instant) {
        if p.stage != self.stage {
            self.stage = p.stage;
            self.stage_started = now;
        }
        if now.duration_since(self.last_draw) < REDRAW {
            return;
        }
        self.last_draw = now;
        let text = line(p, now.duration_since(self.stage_started));
        let _ = write!(self.out, "\r\x1b[2K{text}");
        let _ = self.out.flush();
        self.drawn = true;
    }
}

/// The text of the line: stage, rows done (of the total), rate, time left.
pub fn line(p: Progress, elapsed: Duration) -> String {
    let secs = elapsed.as_secs_f64();
    let mut s = match p.total {
        Some(t) => format!("{} {} of {} rows", p.stage, thousands(p.done), thousands(t)),
        None if p.done == 0 => format!("{}…", p.stage),
        None => format!("{} {} rows", p.stage, thousands(p.done)),
    };
    let rate = if secs > 0.0 {
        p.done as f64 / secs
    } else {
        0.0
    };
    if p.done > 0 && rate > 0.0 {
        s.push_str(&format!(" · {} rows/s", thousands(rate.round() as u64)));
        if let Some(t) = p.total {
            let left = t.saturating_sub(p.done) as f64 / rate;
            s.push_str(&format!(" · {} left", duration_text(left)));
        }
    } else {
        s.push_str(&format!(" · {}", duration_text(secs)));
    }
    s
}

/// 1234567 → "1,234,567".
fn thousands(n: u64) -> String {
    let digits = n.to_string();
    let mut out = String::with_capacity(digits.len() + digits.len() / 3);
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(c);
    }
    out
}

/// Seconds as "4 s", "2 min 05 s", "1 h 03 min".
fn duration_text(secs: f64) -> String {
    let s = secs.max(0.0).round() as u64;
    if s < 60 {
        format!("{s} s")
    } else if s < 3600 {
        format!("{} min {:02} s", s / 60, s % 60)
    } else {
        format!("{} h {:02} min", s / 3600, (s % 3600) / 60)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_line_says_rows_rate_and_time_left() {
        let p = Progress {
            stage: "importing",
            done: 250_000,
            total: Some(1_000_000),
        };
        // 250,000 rows in 50 s: 5,000 rows/s, 750,000 rows left = 150 s
        assert_eq!(
            line(p, Duration::from_secs(50)),
            "importing 250,000 of 1,000,000 rows · 5,000 rows/s · 2 min 30 s left"
        );
        let p = Progress {
            stage: "copying",
            done: 0,
            total: None,
        };
        assert_eq!(line(p, Duration::from_secs(3)), "copying… · 3 s");
        assert_eq!(thousands(999), "999");
        assert_eq!(thousands(1000), "1,000");
        assert_eq!(duration_text(3725.0), "1 h 02 min");
    }

    #[derive(Clone, Default)]
    struct Shared(Arc<Mutex<Vec<u8>>>);
    impl Write for Shared {
        fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
            self.0.lock().unwrap().extend_from_slice(buf);
            Ok(buf.len())
        }
        fn flush(&mut self) -> std::io::Result<()> {
            Ok(())
        }
    }

    #[test]
    fn the_meter_draws_after_a_while_and_wipes_its_line() {
        let out = Shared::default();
        let meter = Meter::to(Box::new(out.clone()));
        let mut tell = meter.callback();
        let p = |done| Progress {
            stage: "verifying",
            done,
            total: Some(10),
        };
        tell(p(1));
        // quick work draws nothing
        assert!(out.0.lock().unwrap().is_empty());
        std::thread::sleep(REDRAW + Duration::from_millis(20));
        tell(p(5));
        let text = String::from_utf8(out.0.lock().unwrap().clone()).unwrap();
        assert!(
            text.starts_with("\r\x1b[2Kverifying 5 of 10 rows · "),
            "{text:?}"
        );
        assert!(text.contains(" left"), "{text:?}");
        meter.finish();
        let text = String::from_utf8(out.0.lock().unwrap().clone()).unwrap();
        assert!(text.ends_with("\r\x1b[2K"), "{text:?}");
    }
}
