//! Subcommands. Raw clap arguments are turned into checked domain values here, so the
//! rest of the code never sees an unchecked input.
//!
//! Exit codes: 0 ok, 1 a failure of the work (bad data, a check that failed),
//! 2 a usage error (a flag or value the user typed that cannot be used).

use shardlog_core::text::sanitize_for_terminal;
use std::ffi::OsString;
use std::io::Write;
use std::path::PathBuf;

use clap::{Parser, Subcommand};

pub mod attach;
pub mod calibrate;
mod calibrate_save;
pub mod codes;
pub mod export;
pub mod exposure;
pub mod fleet;
pub mod fleet_demo;
pub mod fragmentation;
pub mod key;
pub mod leftovers;
pub mod load;
pub mod lookups;
pub mod materials;
pub mod mirror;
pub mod practice;
pub mod progress;
pub mod records;
pub mod report;
pub mod stats;
pub mod verify;
pub mod weibull;

/// Fractography and breakage incident log for glass and ceramic parts.
#[derive(Debug, Parser)]
#[command(name = "shardlog", version, about, long_about = None)]
pub struct Cli {
    /// Database file (else $SHARDLOG_DB, else a file in the platform's data folder).
    #[arg(long, global = true, value_name = "PATH")]
    pub db: Option<PathBuf>,

    #[command(subcommand)]
    pub command: Option<Command>,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Back-calculate stress and flaw size from fracture-mirror readings.
    Mirror(mirror::MirrorArgs),
    /// The material library and the lab's own materials: list, show, add, edit.
    Materials(materials::MaterialsArgs),
    /// Service-load hypotheses: impact, plate, thermal, critical-flaw.
    Load(load::LoadArgs),
    /// Fit a two-parameter Weibull distribution to a column of strengths.
    Weibull(weibull::WeibullArgs),
    /// Fit a lab's own mirror constants from specimens broken at a known stress.
    Calibrate(calibrate::CalibrateArgs),
    /// Create an empty database.
    Init(records::InitArgs),
    /// Import incidents from CSV or JSON (all or nothing).
    Import(records::ImportArgs),
    /// Export incidents as CSV or JSON.
    Export(export::ExportArgs),
    /// Panes in service (the denominator of rates): import from CSV, list.
    Exposure(exposure::ExposureArgs),
    /// The lab's own lists (causes, origin types, custody events, statuses, viewing modes):
    /// list, add, rename, retire, restore.
    Lookups(lookups::LookupsArgs),
    /// The least fragment counts of thermally toughened glass per thickness: list, set, remove.
    Fragmentation(fragmentation::FragmentationArgs),
    /// List incidents.
    List(records::ListArgs),
    /// Show one incident.
    Show(records::ShowArgs),
    /// Attach files (photos, micrographs) to an incident.
    Attach(attach::AttachArgs),
    /// Recompute the audit chain (or check a dispute bundle).
    Verify(verify::VerifyArgs),
    /// The database's signing key: fingerprint, public key, where the private key is.
    Key(key::KeyArgs),
    /// Copy the database with SQLite's online backup, then check the copy.
    Backup(records::BackupArgs),
    /// Generate the invented demo fleet.
    Demo(records::DemoArgs),
    /// Fleet recurrence and strength statistics.
    Stats(stats::StatsArgs),
    /// One incident's summary.
    Report(report::ReportArgs),
    /// A dispute bundle for one supplier (and lot).
    Dispute(report::DisputeArgs),
    /// Push this bench's changes to the fleet database, then pull reference data.
    Sync(fleet::SyncArgs),
    /// The fleet database: init, enrol a bench, status, resolve a conflict.
    Fleet(fleet::FleetArgs),
    /// This bench: its code.
    Bench(fleet::BenchArgs),
    /// Send an incident's specimen to another bench of the fleet (it owns the incident once
    /// both have synced).
    Transfer(fleet::TransferArgs),
    /// Print a shell completion script (bash, zsh, fish, elvish, powershell).
    Completions(CompletionsArgs),
    /// Print the manual page (roff), generated from the same argument definitions.
    Manpage,
}

#[derive(Debug, clap::Args)]
pub struct CompletionsArgs {
    /// The shell to complete for.
    #[arg(value_enum)]
    pub shell: clap_complete::Shell,
}

/// A failure a subcommand reports. `Usage` exits 2, `Work` exits 1.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum CliError {
    Usage(String),
    Work(String),
}

impl CliError {
    pub fn usage(msg: impl Into<String>) -> Self {
        CliError::Usage(msg.into())
    }
    pub fn work(msg: impl Into<String>) -> Self {
        CliError::Work(msg.into())
    }
    pub fn exit_code(&self) -> u8 {
        match self {
            CliError::Usage(_) => 2,
            CliError::Work(_) => 1,
        }
    }
    pub fn message(&self) -> &str {
        match self {
            CliError::Usage(m) | CliError::Work(m) => m,
        }
    }
}

impl std::fmt::Display for CliError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.message())
    }
}

impl std::error::Error for CliError {}

/// The message of the error made when the reader of our output went away (`| head`).
/// `main_with_args` exits quietly on it, as command-line tools do.
const OUTPUT_CLOSED: &str = "output closed by the reader";

impl From<std::io::Error> for CliError {
    fn from(e: std::io::Error) -> Self {
        if e.kind() == std::io::ErrorKind::BrokenPipe {
            return CliError::Work(OUTPUT_CLOSED.to_string());
        }
        CliError::Work(format!("output: {e}"))
    }
}

/// A dispute bundle's error: a usage error stays one (exit 2), anything else is a failure of
/// the work (exit 1).
impl From<crate::report::bundle::BundleError> for CliError {
    fn from(e: crate::report::bundle::BundleError) -> Self {
        match e {
            crate::report::bundle::BundleError::Usage(m) => CliError::usage(m),
            other => CliError::work(other.to_string()),
        }
    }
}

/// What every subcommand gets: where the database is and where to print.
pub struct Context<'a> {
    pub db: PathBuf,
    pub out: &'a mut dyn Write,
}

/// The database path: `--db`, else `$SHARDLOG_DB`, else the platform data folder
/// (`$XDG_DATA_HOME/shardlog/shardlog.db`, `~/.local/share/shardlog/shardlog.db`,
/// `~/Library/Application Support/shardlog/shardlog.db` on macOS,
/// `%APPDATA%\shardlog\shardlog.db` on Windows).
pub fn resolve_db(flag: Option<PathBuf>) -> PathBuf {
    if let Some(p) = flag {
        return p;
    }
    if let Some(p) = std::env::var_os("SHARDLOG_DB").filter(|v| !v.is_empty()) {
        return PathBuf::from(p);
    }
    data_dir().join("shardlog").join("shardlog.db")
}

pub(crate) fn data_dir() -> PathBuf {
    if cfg!(windows) {
        if let Some(p) = std::env::var_os("APPDATA") {
            return PathBuf::from(p);
        }
    }
    if let Some(p) = std::env::var_os("XDG_DATA_HOME").filter(|v| !v.is_empty()) {
        return PathBuf::from(p);
    }
    let home = std::env::var_os("HOME")
        .map(PathBuf::from)
        .unwrap_or_else(|| PathBuf::from("."));
    if cfg!(target_os = "macos") {
        home.join("Library").join("Application Support")
    } else {
        home.join(".local").join("share")
    }
}

/// Who is making a change, for the audit log of the interface and the command line alike:
/// `$SHARDLOG_USER`, else the name the analyst gave the interface on first use, else `$USER`,
/// else `$USERNAME`, else "analyst" (the first one set and not blank, trimmed, with control
/// characters removed).
pub fn actor() -> String {
    chosen_name()
        .or_else(|| env_name(&["USER", "USERNAME"]))
        .unwrap_or_else(|| "analyst".to_string())
}

/// The name set on purpose: `$SHARDLOG_USER`, else the one kept from the interface's first use.
fn chosen_name() -> Option<String> {
    env_name(&["SHARDLOG_USER"]).or_else(|| {
        let text = std::fs::read_to_string(name_file()).ok()?;
        let s = sanitize_for_terminal(text.trim(), false);
        (!s.is_empty()).then_some(s)
    })
}

fn env_name(vars: &[&str]) -> Option<String> {
    for var in vars {
        if let Some(v) = std::env::var_os(var) {
            let s = v.to_string_lossy().trim().to_string();
            if !s.is_empty() {
                return Some(sanitize_for_terminal(&s, false));
            }
        }
    }
    None
}

/// Where the interface keeps the name the analyst gave on first use (beside the default
/// database, in the platform data folder).
pub fn name_file() -> PathBuf {
    data_dir().join("shardlog").join("analyst-name")
}

/// The fleet database's URL: the flag, else `$SHARDLOG_FLEET_URL`.
pub(crate) fn fleet_url(flag: Option<String>, name: &str) -> Result<String, CliError> {
    flag.or_else(|| {
        std::env::var("SHARDLOG_FLEET_URL")
            .ok()
            .filter(|v| !v.trim().is_empty())
    })
    .ok_or_else(|| {
        CliError::usage(format!(
            "{name}: expected the fleet database's URL, e.g. postgresql://USER@HOST/DATABASE?sslmode=require (or set SHARDLOG_FLEET_URL)"
        ))
    })
}

/// A fleet failure as the command line reports it (a usage error stays one).
pub(crate) fn fleet_error(e: crate::store::fleet::FleetError) -> CliError {
    match e {
        crate::store::fleet::FleetError::Usage(m) => CliError::usage(m),
        other => CliError::work(other.to_string()),
    }
}

/// A calendar day as `--since` and `--until` take it: `YYYY-MM-DD`, spaces around it ignored.
/// `None` when the text is not one (each command words its own message).
pub(crate) fn parse_day(text: &str) -> Option<chrono::NaiveDate> {
    chrono::NaiveDate::parse_from_str(text.trim(), "%Y-%m-%d").ok()
}

/// `text` padded with spaces to `chars` characters; a text that long or longer gets one space
/// after it, so that the next column never touches it (the tables of `mirror` and `materials`).
pub(crate) fn pad_right_with_gap(text: &str, chars: usize) -> String {
    let n = text.chars().count();
    if n >= chars {
        format!("{text} ")
    } else {
        format!("{text}{}", " ".repeat(chars - n))
    }
}

/// Parse, dispatch, print errors, return the exit code.
pub fn main_with_args<I, T>(args: I) -> u8
where
    I: IntoIterator<Item = T>,
    T: Into<OsString> + Clone,
{
    let cli = match Cli::try_parse_from(args) {
        Ok(c) => c,
        Err(e) => {
            if !e.use_stderr() {
                // --help / --version: our own text, printed with clap's styling
                let _ = e.print();
                return 0;
            }
            // A usage error quotes what the user typed, and clap passes escape sequences
            // through when stderr is a terminal: print it as plain, sanitized text.
            let text = e.render().to_string();
            eprint!("{}", sanitize_for_terminal(&text, true));
            return 2;
        }
    };
    let stdout = std::io::stdout();
    let to_terminal = std::io::IsTerminal::is_terminal(&stdout);
    let mut lock = stdout.lock();
    // On a terminal no byte of user text may act as a control sequence; to a pipe or a file
    // the output stays exact (an export is evidence).
    let mut guard = TerminalGuard::new(&mut lock, to_terminal);
    let result = run(cli, &mut guard);
    let flushed = guard.finish();
    let shown = guard.replaced;
    let code = match result.and(flushed.map_err(CliError::from)) {
        Ok(()) => 0,
        Err(CliError::Work(m)) if m == OUTPUT_CLOSED => 0,
        Err(e) => {
            eprintln!("shardlog: {}", sanitize_for_terminal(e.message(), true));
            e.exit_code()
        }
    };
    if shown > 0 {
        eprintln!(
            "shardlog: note: {shown} control character{} in the output {} shown as symbols (such as ␛) because the output is a terminal; write to a file (-o FILE) or a pipe for the exact data",
            if shown == 1 { "" } else { "s" },
            if shown == 1 { "is" } else { "are" },
        );
    }
    code
}

/// A writer for a terminal: every control character except newline and tab becomes a visible
/// symbol (C0 controls their Unicode control picture, DEL ␡, C1 controls and bidirectional
/// overrides U+FFFD, bytes that are not UTF-8 U+FFFD), so that stored escape sequences are
/// shown, not obeyed. Counts what it replaced. When not `active` it passes bytes unchanged.
pub struct TerminalGuard<'a> {
    inner: &'a mut dyn Write,
    active: bool,
    pending: Vec<u8>,
    /// How many characters were shown as symbols.
    pub replaced: usize,
}

impl<'a> TerminalGuard<'a> {
    pub fn new(inner: &'a mut dyn Write, active: bool) -> Self {
        TerminalGuard {
            inner,
            active,
            pending: Vec::new(),
            replaced: 0,
        }
    }

    /// Write out what is held back (an unfinished UTF-8 sequence becomes U+FFFD) and flush.
    pub fn finish(&mut self) -> std::io::Result<()> {
        self.drain(true)?;
        self.inner.flush()
    }

    fn put(&mut self, s: &str) -> std::io::Result<()> {
        let mut out = String::with_capacity(s.len());
        for c in s.chars() {
            let shown = match c {
                '\n' | '\t' => c,
                '\u{0}'..='\u{1f}' => char::from_u32(0x2400 + c as u32).unwrap_or('\u{fffd}'),
                '\u{7f}' => '\u{2421}',
                '\u{80}'..='\u{9f}' | '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}' => {
                    '\u{fffd}'
                }
                c => c,
            };
            if shown != c {
                self.replaced += 1;
            }
            out.push(shown);
        }
        self.inner.write_all(out.as_bytes())
    }

    fn drain(&mut self, last: bool) -> std::io::Result<()> {
        loop {
            let pending = std::mem::take(&mut self.pending);
            match std::str::from_utf8(&pending) {
                Ok(s) => return self.put(s),
                Err(e) => {
                    let good = e.valid_up_to();
                    // valid_up_to marks a valid prefix
                    self.put(std::str::from_utf8(&pending[..good]).unwrap_or(""))?;
                    match e.error_len() {
                        Some(n) => {
                            self.replaced += 1;
                            self.inner.write_all("\u{fffd}".as_bytes())?;
                            self.pending = pending[good + n..].to_vec();
                        }
                        None if last => {
                            self.replaced += 1;
                            return self.inner.write_all("\u{fffd}".as_bytes());
                        }
                        None => {
                            // an unfinished sequence: wait for the rest
                            self.pending = pending[good..].to_vec();
                            return Ok(());
                        }
                    }
                }
            }
        }
    }
}

impl Write for TerminalGuard<'_> {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        if !self.active {
            return self.inner.write(buf);
        }
        self.pending.extend_from_slice(buf);
        self.drain(false)?;
        Ok(buf.len())
    }

    fn flush(&mut self) -> std::io::Result<()> {
        self.inner.flush()
    }
}

/// The name of a command that cannot work on the fleet database (it writes, or works on one
/// bench file only), None for those that read it or never open a database.
fn fleet_refuses(command: Option<&Command>) -> Option<&'static str> {
    let Some(command) = command else {
        // the interface reads the fleet and says where each edit is made
        return None;
    };
    Some(match command {
        Command::List(_)
        | Command::Show(_)
        | Command::Stats(_)
        | Command::Export(_)
        | Command::Report(_)
        | Command::Dispute(_)
        | Command::Verify(_) => return None,
        Command::Mirror(_)
        | Command::Materials(_)
        | Command::Load(_)
        | Command::Weibull(_)
        | Command::Calibrate(_)
        | Command::Demo(_)
        | Command::Fleet(_)
        | Command::Completions(_)
        | Command::Manpage => return None,
        Command::Init(_) => "`init`",
        Command::Import(_) => "`import`",
        Command::Exposure(_) => "`exposure`",
        Command::Lookups(_) => "`lookups`",
        Command::Attach(_) => "`attach`",
        Command::Key(_) => "`key`",
        Command::Backup(_) => "`backup`",
        Command::Sync(_) => "`sync` (run it with --db naming the bench file)",
        Command::Bench(_) => "`bench`",
        Command::Fragmentation(_) => "`fragmentation`",
        Command::Transfer(_) => "`transfer` (run it with --db naming the bench file)",
    })
}

/// Run a parsed command line, printing to `out`.
pub fn run(cli: Cli, out: &mut dyn Write) -> Result<(), CliError> {
    let db = resolve_db(cli.db);
    if crate::store::is_fleet_url(&db) {
        if let Some(name) = fleet_refuses(cli.command.as_ref()) {
            return Err(CliError::usage(format!(
                "--db names the fleet database, which {name} cannot use: the fleet is read-only for its users (an edit is made at the bench that owns the incident, and reaches the fleet when that bench syncs); on the fleet database: list, show, stats, export, report, dispute, verify"
            )));
        }
    }
    let Some(command) = cli.command else {
        let who = match chosen_name() {
            Some(name) => crate::tui::Analyst::Known(name),
            None => crate::tui::Analyst::Ask {
                suggestion: env_name(&["USER", "USERNAME"]),
                keep_in: name_file(),
            },
        };
        return crate::tui::run(&db, who).map_err(|e| CliError::work(format!("{e:#}")));
    };
    let mut ctx = Context { db, out };
    match command {
        Command::Mirror(a) => mirror::run(a, &mut ctx),
        Command::Materials(a) => materials::run(a, &mut ctx),
        Command::Load(a) => load::run(a, &mut ctx),
        Command::Weibull(a) => weibull::run(a, &mut ctx),
        Command::Calibrate(a) => calibrate::run(a, &mut ctx),
        Command::Init(a) => records::init(a, &mut ctx),
        Command::Import(a) => records::import(a, &mut ctx),
        Command::Export(a) => export::export(a, &mut ctx),
        Command::Exposure(a) => exposure::run(a, &mut ctx),
        Command::Lookups(a) => lookups::run(a, &mut ctx),
        Command::Fragmentation(a) => fragmentation::run(a, &mut ctx),
        Command::List(a) => records::list(a, &mut ctx),
        Command::Show(a) => records::show(a, &mut ctx),
        Command::Attach(a) => attach::attach(a, &mut ctx),
        Command::Verify(a) => verify::verify(a, &mut ctx),
        Command::Key(a) => key::run(a, &mut ctx),
        Command::Backup(a) => records::backup(a, &mut ctx),
        Command::Demo(a) => records::demo(a, &mut ctx),
        Command::Stats(a) => stats::run(a, &mut ctx),
        Command::Report(a) => report::report(a, &mut ctx),
        Command::Dispute(a) => report::dispute(a, &mut ctx),
        Command::Sync(a) => fleet::sync(a, &mut ctx),
        Command::Fleet(a) => fleet::fleet(a, &mut ctx),
        Command::Bench(a) => fleet::bench(a, &mut ctx),
        Command::Transfer(a) => fleet::transfer(a, &mut ctx),
        Command::Completions(a) => {
            use clap::CommandFactory;
            let mut cmd = Cli::command();
            // generate() panics on a write error, so render to memory first.
            let mut buf = Vec::new();
            clap_complete::generate(a.shell, &mut cmd, "shardlog", &mut buf);
            ctx.out.write_all(&buf).map_err(CliError::from)
        }
        Command::Manpage => {
            use clap::CommandFactory;
            clap_mangen::Man::new(Cli::command())
                .render(ctx.out)
                .map_err(CliError::from)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_are_stripped() {
        let s = sanitize_for_terminal(
            "a\u{1b}[31mred\u{1b}[0m b\u{1b}]0;title\u{7}c\u{7}\r",
            false,
        );
        assert_eq!(s, "ared bc");
        assert_eq!(sanitize_for_terminal("x\ny\tz", true), "x\ny z");
        assert_eq!(sanitize_for_terminal("x\ny", false), "xy");
    }

    #[test]
    fn the_terminal_guard_shows_controls_and_passes_text() {
        let mut out = Vec::new();
        let mut g = TerminalGuard::new(&mut out, true);
        // an escape sequence, a bell, a C1 CSI, a bidi override, DEL; the é split across writes
        g.write_all(b"a\x1b]0;owned\x07b\xc2\x9bc\xe2\x80\xaed\x7fe\n\tok \xc3")
            .unwrap();
        g.write_all(b"\xa9 \xff").unwrap();
        g.finish().unwrap();
        let n = g.replaced;
        let s = String::from_utf8(out).unwrap();
        assert_eq!(s, "a␛]0;owned␇b\u{fffd}c\u{fffd}d␡e\n\tok é \u{fffd}");
        assert_eq!(n, 6);
        // not a terminal: exact bytes
        let mut out = Vec::new();
        let mut g = TerminalGuard::new(&mut out, false);
        g.write_all(b"a\x1b[2J\xff").unwrap();
        g.finish().unwrap();
        assert_eq!(g.replaced, 0);
        assert_eq!(out, b"a\x1b[2J\xff");
    }

    #[test]
    fn cli_definition_is_consistent() {
        use clap::CommandFactory;
        Cli::command().debug_assert();
    }
}
