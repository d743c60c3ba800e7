//! Incident summaries and dispute bundles: PDF, HTML, Markdown, JSON, CSV.
//!
//! Builders turn store records and core results into a [`doc::Document`]; renderers
//! ([`pdf`], [`html`], [`markdown`]) only read it. The digest that proves a summary or bundle
//! unchanged is the core's canonical JSON with floats in their shortest text
//! ([`shardlog_core::canonical::Numbers::Shortest`]): anyone can recompute it from the JSON.

pub mod bundle;
pub mod chart;
pub mod doc;
pub mod font;
pub mod html;
pub mod image;
pub mod markdown;
pub mod pdf;
mod pdf_font;
pub mod source;
pub mod summary;

pub use bundle::{verify_bundle, BundleCheck};
pub use doc::{Block, Document, Paper, Table};

/// Output formats of a single summary.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    Pdf,
    Html,
    Md,
    Json,
}

/// CSV text (RFC 4180: comma, CRLF-free `\n` lines, quotes doubled). A cell that a
/// spreadsheet would run as a formula (starting with `=`, `+`, `-`, `@`, tab or CR and not a
/// number) is prefixed with `'`.
pub fn csv(header: &[String], rows: &[Vec<String>]) -> String {
    let mut out = String::new();
    let line = |out: &mut String, cells: &[String]| {
        for (i, c) in cells.iter().enumerate() {
            if i > 0 {
                out.push(',');
            }
            out.push_str(&csv_cell(c));
        }
        out.push('\n');
    };
    line(&mut out, header);
    for r in rows {
        line(&mut out, r);
    }
    out
}

fn csv_cell(c: &str) -> String {
    let risky = c.starts_with(['=', '+', '-', '@', '\t', '\r']) && c.parse::<f64>().is_err();
    let c = if risky {
        format!("'{c}")
    } else {
        c.to_string()
    };
    if c.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", c.replace('"', "\"\""))
    } else {
        c
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csv_quotes_and_defuses_formulas() {
        let s = csv(
            &["a".into(), "b".into()],
            &[
                vec!["x,\"y\"".into(), "=1+1".into()],
                vec!["-3.5".into(), "ok".into()],
            ],
        );
        assert_eq!(s, "a,b\n\"x,\"\"y\"\"\",'=1+1\n-3.5,ok\n");
    }
}
