//! A real PostgreSQL server for the fleet tests.
//!
//! `scripts/test` starts one throwaway cluster and exports `SHARDLOG_TEST_PGHOST` (its socket
//! folder), `SHARDLOG_TEST_PGUSER` and `SHARDLOG_TEST_PGBIN`. Run by plain `cargo test`, the
//! first fleet test starts a cluster itself (as the `postgres` user when the tests run as root,
//! since initdb refuses root), in a temporary folder, and a watcher stops and removes it when
//! the test process ends. A test that cannot reach or start a server fails; it never skips.
//!
//! Every test gets a database of its own ([`fresh_database`]); a test that stops the server
//! (the server-stopped test) starts a private cluster with [`Cluster::start_private`].

use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Child, ChildStdin, Command, Stdio};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Mutex, OnceLock};
use std::time::{Duration, Instant};

/// A running cluster reached through a Unix socket.
pub struct Cluster {
    /// The socket folder.
    pub host: PathBuf,
    /// The superuser.
    pub user: String,
    /// PostgreSQL's programs (initdb, pg_ctl, postgres, psql lives on PATH).
    pub bin: PathBuf,
    /// The data folder, when this process started the cluster.
    data: Option<PathBuf>,
    /// Held open while the cluster should run: the watcher stops it when this closes.
    watcher: Mutex<Option<(Child, ChildStdin)>>,
}

/// PostgreSQL's newest installed program folder.
pub fn pg_bin() -> PathBuf {
    if let Some(b) = std::env::var_os("SHARDLOG_TEST_PGBIN").filter(|v| !v.is_empty()) {
        return PathBuf::from(b);
    }
    let mut found: Vec<(u32, PathBuf)> = std::fs::read_dir("/usr/lib/postgresql")
        .map(|d| {
            d.filter_map(Result::ok)
                .filter_map(|e| {
                    let v = e.file_name().to_string_lossy().parse::<u32>().ok()?;
                    let bin = e.path().join("bin");
                    bin.join("initdb").exists().then_some((v, bin))
                })
                .collect()
        })
        .unwrap_or_default();
    found.sort();
    let (version, bin) = found.pop().expect(
        "PostgreSQL is not installed (no /usr/lib/postgresql/N/bin/initdb): run scripts/test, \
         which installs it, or apt-get install postgresql",
    );
    assert!(
        version >= 15,
        "PostgreSQL {version} found; the fleet needs 15 or later"
    );
    bin
}

fn running_as_root() -> bool {
    // SAFETY: geteuid has no preconditions
    unsafe { libc::geteuid() == 0 }
}

/// `cmd` run as the `postgres` user when we are root.
fn as_server_user(program: &Path) -> Command {
    if running_as_root() {
        let mut c = Command::new("runuser");
        c.args(["-u", "postgres", "--"]).arg(program);
        c
    } else {
        Command::new(program)
    }
}

impl Cluster {
    /// The shared cluster of this test run: the one `scripts/test` started, else one started
    /// here, once.
    pub fn shared() -> &'static Cluster {
        static SHARED: OnceLock<Cluster> = OnceLock::new();
        SHARED.get_or_init(|| {
            match std::env::var_os("SHARDLOG_TEST_PGHOST").filter(|v| !v.is_empty()) {
                Some(host) => Cluster {
                    host: PathBuf::from(host),
                    user: std::env::var("SHARDLOG_TEST_PGUSER")
                        .unwrap_or_else(|_| "postgres".into()),
                    bin: pg_bin(),
                    data: None,
                    watcher: Mutex::new(None),
                },
                None => Cluster::start_private(),
            }
        })
    }

    /// A cluster of its own in a new temporary folder, stopped when the test process ends
    /// (or by [`Cluster::stop`]).
    pub fn start_private() -> Cluster {
        let bin = pg_bin();
        let dir = tempfile::Builder::new()
            .prefix("shardlog-pg.")
            .tempdir()
            .expect("a temporary folder for the test cluster")
            .keep();
        if running_as_root() {
            let ok = Command::new("chown")
                .args(["postgres:postgres"])
                .arg(&dir)
                .status()
                .expect("chown runs");
            assert!(ok.success(), "chown of {} to postgres", dir.display());
        }
        let data = dir.join("data");
        let out = as_server_user(&bin.join("initdb"))
            .arg("-D")
            .arg(&data)
            .args([
                "-U",
                "postgres",
                "--auth=trust",
                "-E",
                "UTF8",
                "--no-locale",
            ])
            .output()
            .expect("initdb runs");
        assert!(
            out.status.success(),
            "initdb failed: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let cluster = Cluster {
            host: dir.clone(),
            user: "postgres".into(),
            bin,
            data: Some(data),
            watcher: Mutex::new(None),
        };
        cluster.start();
        cluster
    }

    /// Start (or restart) a cluster this process made. A watcher shell holds the server: when
    /// its standard input closes (this process ended, or [`Cluster::stop`]) it stops the server
    /// and, at the end of the process, removes the folder.
    pub fn start(&self) {
        let data = self.data.as_ref().expect("a cluster this process started");
        let pg_ctl = self.bin.join("pg_ctl");
        let prefix = if running_as_root() {
            "runuser -u postgres -- "
        } else {
            ""
        };
        // fsync off (a test cluster: only an operating-system crash would lose data), but
        // commits wait for their WAL write: a private cluster is stopped with an immediate
        // shutdown mid-test, and with synchronous_commit off that loses the last commits
        // (a role made just before, say)
        let options = format!(
            "-k {} -c listen_addresses= -c fsync=off -c full_page_writes=off -c max_connections=200",
            self.host.display()
        );
        // `read` returns "keep" from [`Cluster::stop`] (a restart follows) and nothing at the
        // end of this process (the folder goes too)
        let script = format!(
            "{prefix}'{ctl}' -D '{data}' -l '{log}' -w -s -o \"{options}\" start || exit 1\n\
             echo started\n\
             read said\n\
             {prefix}'{ctl}' -D '{data}' -m immediate -s stop >/dev/null 2>&1\n\
             [ \"$said\" = keep ] || rm -rf '{dir}'\n",
            ctl = pg_ctl.display(),
            data = data.display(),
            log = self.host.join("server.log").display(),
            dir = self.host.display(),
        );
        let mut child = Command::new("sh")
            .arg("-c")
            .arg(script)
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .spawn()
            .expect("sh runs");
        let stdin = child.stdin.take().expect("piped stdin");
        let stdout = child.stdout.take().expect("piped stdout");
        let mut said = String::new();
        std::io::BufRead::read_line(&mut std::io::BufReader::new(stdout), &mut said).ok();
        assert!(
            said.starts_with("started"),
            "the test cluster did not start: {}",
            std::fs::read_to_string(self.host.join("server.log")).unwrap_or_default()
        );
        *self.watcher.lock().unwrap_or_else(|e| e.into_inner()) = Some((child, stdin));
        self.wait_ready();
    }

    /// Stop a cluster this process started (immediate shutdown, like a power cut).
    pub fn stop(&self) {
        let taken = self
            .watcher
            .lock()
            .unwrap_or_else(|e| e.into_inner())
            .take();
        if let Some((mut child, mut stdin)) = taken {
            let _ = writeln!(stdin, "keep");
            drop(stdin);
            let _ = child.wait();
        }
    }

    fn wait_ready(&self) {
        let start = Instant::now();
        loop {
            if postgres::Client::connect(&self.url("postgres"), postgres::NoTls).is_ok() {
                return;
            }
            assert!(
                start.elapsed() < Duration::from_secs(60),
                "the test cluster at {} does not answer",
                self.host.display()
            );
            std::thread::sleep(Duration::from_millis(50));
        }
    }

    /// A connection URL for `database` as the superuser.
    pub fn url(&self, database: &str) -> String {
        self.url_as(database, &self.user)
    }

    /// A connection URL for `database` as `user`.
    pub fn url_as(&self, database: &str, user: &str) -> String {
        format!(
            "postgresql:///{database}?host={}&user={user}",
            self.host.display()
        )
    }

    /// A superuser connection to `database`.
    pub fn admin(&self, database: &str) -> postgres::Client {
        postgres::Client::connect(&self.url(database), postgres::NoTls)
            .unwrap_or_else(|e| panic!("connect to the test cluster ({database}): {e}"))
    }

    /// `psql` as `user` on `database` running `sql`: (success, stdout, stderr).
    pub fn psql(&self, database: &str, user: &str, sql: &str) -> (bool, String, String) {
        let psql = self.bin.join("psql");
        let program = if psql.exists() {
            psql
        } else {
            PathBuf::from("psql")
        };
        let out = Command::new(program)
            .args(["-X", "-q", "-v", "ON_ERROR_STOP=1", "-h"])
            .arg(&self.host)
            .args(["-U", user, "-d", database, "-c", sql])
            .output()
            .expect("psql runs");
        (
            out.status.success(),
            String::from_utf8_lossy(&out.stdout).into_owned(),
            String::from_utf8_lossy(&out.stderr).into_owned(),
        )
    }
}

impl Drop for Cluster {
    fn drop(&mut self) {
        self.stop();
        if self.data.is_some() {
            let _ = std::fs::remove_dir_all(&self.host);
        }
    }
}

/// A new, empty database on `cluster` for one test; its name.
pub fn fresh_database(cluster: &Cluster) -> String {
    static N: AtomicU64 = AtomicU64::new(0);
    let name = format!(
        "fleet_{}_{}",
        std::process::id(),
        N.fetch_add(1, Ordering::Relaxed)
    );
    let mut admin = cluster.admin("postgres");
    admin
        .batch_execute(&format!("CREATE DATABASE {name}"))
        .unwrap_or_else(|e| panic!("create database {name}: {e}"));
    name
}
