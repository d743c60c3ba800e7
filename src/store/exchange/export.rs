//! Export: the database read out as a JSON document or CSV lines.

use super::super::incidents;
use super::super::model::*;
use super::super::{Store, StoreError};
use super::csv::{csv_header, csv_row};
use super::{ExportDoc, JSON_FORMAT, JSON_VERSION};

impl Store {
    /// The full export document for incidents matching `filter` (all reference data).
    pub fn export_doc(&self, filter: &Filter) -> Result<ExportDoc, StoreError> {
        let mut incidents = Vec::new();
        for id in self.matching_ids(filter)? {
            if let Some(inc) = incidents::load(&self.conn, &id)? {
                incidents.push(inc);
            }
        }
        Ok(ExportDoc {
            format: JSON_FORMAT.into(),
            version: JSON_VERSION,
            lookups: self.all_lookups()?,
            sites: self.sites()?,
            assets: self.assets()?,
            suppliers: self.suppliers()?,
            products: self.products(None)?,
            lots: self.lots(None, None)?,
            exposure: self.exposure()?,
            incidents,
        })
    }

    /// JSON export text (pretty, stable order, ends with a newline).
    pub fn export_json(&self, filter: &Filter) -> Result<String, StoreError> {
        let doc = self.export_doc(filter)?;
        let mut s = serde_json::to_string_pretty(&doc)?;
        s.push('\n');
        Ok(s)
    }

    /// Write the CSV export to `out`, one line per incident (header first).
    pub fn export_csv(
        &self,
        filter: &Filter,
        out: &mut dyn std::io::Write,
    ) -> Result<usize, StoreError> {
        let io = |e: std::io::Error| StoreError::File {
            path: "output".into(),
            message: e.to_string(),
        };
        writeln!(out, "{}", csv_header()).map_err(io)?;
        let mut n = 0;
        for id in self.matching_ids(filter)? {
            if let Some(inc) = incidents::load(&self.conn, &id)? {
                writeln!(out, "{}", csv_row(&inc)).map_err(io)?;
                n += 1;
            }
        }
        Ok(n)
    }
}
