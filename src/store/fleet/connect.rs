//! Reaching the fleet server: a `postgres://` URL (or key=value settings), TLS through rustls
//! when the URL says `sslmode=require`, a bounded connect time, and errors sorted into "cannot
//! reach the server" and everything else.

use std::str::FromStr;
use std::time::Duration;

use postgres::config::SslMode;
use postgres::{Client, Config, NoTls};

use super::FleetError;

/// An open connection to the fleet database.
pub struct Fleet {
    pub(crate) client: Client,
    /// Where it is, for messages (no password).
    pub(crate) shown: String,
}

impl Fleet {
    /// Connect to `url`. `sslmode=require` connects with TLS (rustls, the system's certificate
    /// store); otherwise a Unix socket or a plain connection.
    pub fn connect(url: &str) -> Result<Fleet, FleetError> {
        let mut config = Config::from_str(url.trim()).map_err(|e| {
            FleetError::Usage(format!(
                "fleet URL: {e}; expected postgresql://USER@HOST/DATABASE (add ?sslmode=require for a remote server)"
            ))
        })?;
        if config.get_connect_timeout().is_none() {
            config.connect_timeout(Duration::from_secs(10));
        }
        let shown = describe(&config);
        let client = if config.get_ssl_mode() == SslMode::Require {
            config.connect(tls()?)
        } else {
            config.connect(NoTls)
        }
        .map_err(|e| match classify(&e) {
            FleetError::Unreachable(m) => FleetError::Unreachable(format!("{shown}: {m}")),
            FleetError::Database(m) if m.starts_with("invalid configuration") => {
                FleetError::Usage(format!("fleet URL: {m}"))
            }
            other => other,
        })?;
        Ok(Fleet { client, shown })
    }

    /// Where this connection goes (host and database, no password).
    pub fn shown(&self) -> &str {
        &self.shown
    }
}

fn tls() -> Result<tokio_postgres_rustls::MakeRustlsConnect, FleetError> {
    // the process-wide crypto provider; a second install (already there) is fine
    let _ = rustls::crypto::ring::default_provider().install_default();
    tokio_postgres_rustls::MakeRustlsConnect::with_native_certs()
        .map(|(connector, _unreadable)| connector)
        .map_err(|errors| {
            FleetError::Usage(format!(
                "sslmode=require: no certificate authority could be read from this system's store ({} error(s)); install ca-certificates",
                errors.len()
            ))
        })
}

fn describe(config: &Config) -> String {
    let host = config
        .get_hosts()
        .first()
        .map(|h| match h {
            postgres::config::Host::Tcp(name) => name.clone(),
            #[cfg(unix)]
            postgres::config::Host::Unix(path) => path.display().to_string(),
        })
        .unwrap_or_else(|| "localhost".into());
    format!("{host}/{}", config.get_dbname().unwrap_or("(default)"))
}

/// Sort a client error: the server gone or not there is [`FleetError::Unreachable`] (the
/// caller may try again later); a refusal by the server is [`FleetError::Database`] with its
/// own words.
pub(crate) fn classify(e: &postgres::Error) -> FleetError {
    if let Some(db) = e.as_db_error() {
        let code = db.code().code();
        // class 08: connection exception; 57P01..57P03: the server shuts down or starts
        if code.starts_with("08") || matches!(code, "57P01" | "57P02" | "57P03") {
            return FleetError::Unreachable(db.message().to_string());
        }
        return FleetError::Database(db.message().to_string());
    }
    if e.is_closed() || source_is_io(e) {
        return FleetError::Unreachable(plain(e));
    }
    FleetError::Database(plain(e))
}

fn source_is_io(e: &postgres::Error) -> bool {
    let mut source = std::error::Error::source(e);
    while let Some(s) = source {
        if s.is::<std::io::Error>() {
            return true;
        }
        source = s.source();
    }
    plain(e).contains("connection") || plain(e).contains("timed out")
}

fn plain(e: &postgres::Error) -> String {
    let mut text = e.to_string();
    let mut source = std::error::Error::source(e);
    while let Some(s) = source {
        let more = s.to_string();
        if !text.contains(&more) {
            text = format!("{text}: {more}");
        }
        source = s.source();
    }
    text
}
