//! Export: the database read out as a JSON document or CSV lines.

use super::super::incidents;
use super::super::model::*;
use super::super::{Store, StoreError};
use super::csv::{csv_header, csv_row};
use super::{ExportDoc, JSON_FORMAT, JSON_VERSION};

/// An incident an export left out because its stored rows cannot be read: its reference
/// (or key) and why.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Damaged {
    pub reference: String,
    pub why: String,
}

impl std::fmt::Display for Damaged {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "incident {}: damaged, cannot be read ({}); left out",
            self.reference, self.why
        )
    }
}

impl Store {
    /// Hand each incident matching `filter` that can be read to `each` as it is read (in
    /// the order of the export, one at a time: memory stays flat however many there are);
    /// returns how many were handed and the damaged ones, named.
    pub(super) fn each_readable_incident(
        &self,
        filter: &Filter,
        mut each: impl FnMut(Incident) -> Result<(), StoreError>,
    ) -> Result<(usize, Vec<Damaged>), StoreError> {
        let mut n = 0;
        let mut damaged = Vec::new();
        for id in self.matching_ids(filter)? {
            match incidents::load(&self.conn, &id) {
                Ok(Some(inc)) => {
                    each(inc)?;
                    n += 1;
                }
                Ok(None) => {}
                Err(e @ StoreError::Storage(_)) => return Err(e),
                Err(e) => damaged.push(Damaged {
                    reference: self.reference_of(&id).unwrap_or(id),
                    why: e.to_string(),
                }),
            }
        }
        Ok((n, damaged))
    }

    /// The export document without its incidents: the reference data, all of it.
    pub(super) fn reference_doc(&self) -> Result<ExportDoc, StoreError> {
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
            incidents: vec![],
            signed_head: None,
            lot_heat_soak: vec![],
        })
    }

    /// The full export document for incidents matching `filter` (all reference data). An
    /// incident that cannot be read fails it; [`Store::export_doc_readable`] leaves it out.
    pub fn export_doc(&self, filter: &Filter) -> Result<ExportDoc, StoreError> {
        let (doc, damaged) = self.export_doc_readable(filter)?;
        match damaged.first() {
            Some(d) => Err(StoreError::Database(d.to_string())),
            None => Ok(doc),
        }
    }

    /// The export document of every incident that can be read, and the damaged ones left
    /// out (named by reference): one unreadable row does not keep the others from export.
    pub fn export_doc_readable(
        &self,
        filter: &Filter,
    ) -> Result<(ExportDoc, Vec<Damaged>), StoreError> {
        let mut doc = self.reference_doc()?;
        let (_, damaged) = self.each_readable_incident(filter, |inc| {
            doc.incidents.push(inc);
            Ok(())
        })?;
        Ok((doc, damaged))
    }

    /// [`Store::export_json`] of the incidents that can be read, and the damaged ones.
    pub fn export_json_readable(
        &self,
        filter: &Filter,
    ) -> Result<(String, Vec<Damaged>), StoreError> {
        let (doc, damaged) = self.export_doc_readable(filter)?;
        let mut s = serde_json::to_string_pretty(&doc)?;
        s.push('\n');
        Ok((s, damaged))
    }

    /// [`Store::export_csv`] of the incidents that can be read: the lines written, and the
    /// damaged incidents left out.
    pub fn export_csv_readable(
        &self,
        filter: &Filter,
        out: &mut dyn std::io::Write,
    ) -> Result<(usize, Vec<Damaged>), StoreError> {
        let io = |e: std::io::Error| StoreError::File {
            path: "output".into(),
            message: e.to_string(),
        };
        writeln!(out, "{}", csv_header()).map_err(io)?;
        let soak = self.lot_heat_soaks()?;
        self.each_readable_incident(filter, |inc| {
            writeln!(out, "{}", csv_row(&inc, heat_soak_of(&soak, &inc))).map_err(io)
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
        let soak = self.lot_heat_soaks()?;
        let mut n = 0;
        for id in self.matching_ids(filter)? {
            if let Some(inc) = incidents::load(&self.conn, &id)? {
                writeln!(out, "{}", csv_row(&inc, heat_soak_of(&soak, &inc))).map_err(io)?;
                n += 1;
            }
        }
        Ok(n)
    }
}

/// The heat-soak records of the lots, by (supplier, product, lot).
pub(super) type SoakMap = std::collections::HashMap<(String, String, String), HeatSoak>;

impl Store {
    pub(super) fn lot_heat_soaks(&self) -> Result<SoakMap, StoreError> {
        Ok(self
            .lots(None, None)?
            .into_iter()
            .filter_map(|l| {
                let h = l.heat_soak?;
                Some(((l.supplier, l.product, l.code), h))
            })
            .collect())
    }
}

pub(super) fn heat_soak_of<'a>(map: &'a SoakMap, inc: &Incident) -> Option<&'a HeatSoak> {
    let g = &inc.glass;
    let key = (g.supplier.clone()?, g.product.clone()?, g.lot.clone()?);
    map.get(&key)
}
