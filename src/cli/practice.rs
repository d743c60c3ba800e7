//! The bench-practice lines of `show`: the install date and time in service, the lot's
//! heat-soak record, and the fragmentation check.

use std::io::Write;

use super::CliError;
use crate::store::practice::{days_in_service, fragmentation_check};
use crate::store::{Incident, Store};
use shardlog_core::text::sanitize_for_terminal as clean_text;
use shardlog_core::units::fmt_sig;

fn work(e: crate::store::StoreError) -> CliError {
    CliError::work(e.to_string())
}

/// Write the lines; nothing for what is not recorded.
pub fn write_practice(out: &mut dyn Write, s: &Store, inc: &Incident) -> Result<(), CliError> {
    if let Some(i) = inc.installed_on {
        let service = days_in_service(inc)
            .map(|d| {
                format!(
                    " ({} years in service when it broke)",
                    fmt_sig(d as f64 / 365.25, 3)
                )
            })
            .unwrap_or_default();
        writeln!(out, "  installed   {i}{service}")?;
    }
    if let (Some(sup), Some(prod), Some(code)) =
        (&inc.glass.supplier, &inc.glass.product, &inc.glass.lot)
    {
        let lot = s
            .lots(Some(sup), Some(prod))
            .map_err(work)?
            .into_iter()
            .find(|l| &l.code == code);
        if let Some(h) = lot.and_then(|l| l.heat_soak) {
            let text = if h.soaked {
                let on = h.on.map(|d| format!(" on {d}")).unwrap_or_default();
                let cert = if h.reference.is_empty() {
                    String::new()
                } else {
                    format!(", certificate {}", clean_text(&h.reference, false))
                };
                format!("lot heat-soak tested (EN 14179-1){on}{cert}")
            } else {
                "lot not heat-soak tested".to_string()
            };
            writeln!(out, "  heat-soak   {text}")?;
        }
    }
    if let Some(c) = fragmentation_check(inc, &s.fragmentation_minimums().map_err(work)?) {
        writeln!(out, "  fragments   {}", clean_text(&c.describe(), false))?;
    }
    Ok(())
}
