//! Exposure from its own CSV file: panes in service per supplier, product, lot and site from
//! a date (to a date when removed), the denominator of every rate. Read in one pass (every
//! problem of the file at once, by line and column), then written through the JSON import's
//! checks, all or nothing.

use std::collections::{HashMap, HashSet};

use super::super::dates::{fmt_date, parse_date};
use super::super::model::*;
use super::super::{Store, StoreError};
use super::csv::csv_records;
use super::{decode_utf8, ExportDoc, ImportOptions, ImportRejected, ImportSummary, Problem};

/// The columns of an exposure CSV file, in the order `exposure list --csv` writes them.
pub const EXPOSURE_COLUMNS: &[&str] = &[
    "supplier",
    "product",
    "lot",
    "site",
    "installed_on",
    "removed_on",
    "panes",
];

const REQUIRED: &[&str] = &["supplier", "installed_on", "panes"];

/// One exposure row as CSV text (the same columns the import reads).
pub fn exposure_csv_row(e: &Exposure) -> String {
    let cells = [
        e.supplier.clone(),
        e.product.clone().unwrap_or_default(),
        e.lot.clone().unwrap_or_default(),
        e.site.clone().unwrap_or_default(),
        fmt_date(e.installed_on),
        e.removed_on.map(fmt_date).unwrap_or_default(),
        e.panes.to_string(),
    ];
    cells
        .iter()
        .map(|c| {
            if c.contains([',', '"', '\n']) {
                format!("\"{}\"", c.replace('"', "\"\""))
            } else {
                c.clone()
            }
        })
        .collect::<Vec<_>>()
        .join(",")
}

fn read_rows(bytes: &[u8]) -> Result<Vec<(usize, Exposure)>, Vec<Problem>> {
    let text = decode_utf8(bytes).map_err(|e| vec![e])?;
    let records = csv_records(text).map_err(|e| vec![e])?;
    let mut iter = records.into_iter();
    let Some((_, header)) = iter.next() else {
        return Err(vec![Problem::new(
            "file",
            format!(
                "is empty; expected a header line: {}",
                EXPOSURE_COLUMNS.join(",")
            ),
        )]);
    };
    let mut problems = Vec::new();
    let mut columns: HashMap<&'static str, usize> = HashMap::new();
    for (i, h) in header.iter().enumerate() {
        match EXPOSURE_COLUMNS.iter().find(|c| **c == h.trim()) {
            Some(c) => {
                if columns.insert(c, i).is_some() {
                    problems.push(Problem::new(
                        format!("line 1, column {}", i + 1),
                        format!("column \"{c}\" appears twice"),
                    ));
                }
            }
            None => problems.push(Problem::new(
                format!("line 1, column {}", i + 1),
                format!(
                    "unknown column \"{}\"; the columns are: {}",
                    h.trim(),
                    EXPOSURE_COLUMNS.join(", ")
                ),
            )),
        }
    }
    for r in REQUIRED {
        if !columns.contains_key(r) {
            problems.push(Problem::new(
                "line 1",
                format!("the column \"{r}\" is required"),
            ));
        }
    }
    if !problems.is_empty() {
        return Err(problems);
    }
    let mut out = Vec::new();
    for (line, cells) in iter {
        if cells.len() == 1 && cells[0].trim().is_empty() {
            continue;
        }
        if cells.len() != header.len() {
            problems.push(Problem::new(
                format!("line {line}"),
                format!(
                    "has {} fields; the header has {}",
                    cells.len(),
                    header.len()
                ),
            ));
            continue;
        }
        let cell = |name: &str| {
            columns
                .get(name)
                .map(|&i| cells[i].trim().to_string())
                .filter(|s| !s.is_empty())
        };
        let mut bad = |name: &str, msg: String| {
            problems.push(Problem::new(format!("line {line}, column {name}"), msg))
        };
        let supplier = cell("supplier");
        if supplier.is_none() {
            bad("supplier", "is empty; a supplier code is required".into());
        }
        let date = |name: &str, bad: &mut dyn FnMut(&str, String)| {
            let v = cell(name)?;
            let d = parse_date(&v);
            if d.is_none() {
                bad(
                    name,
                    format!("\"{v}\" is not a date; expected YYYY-MM-DD such as 2026-03-14"),
                );
            }
            d
        };
        let installed_on = date("installed_on", &mut bad);
        if cell("installed_on").is_none() {
            bad("installed_on", "is empty; expected YYYY-MM-DD".into());
        }
        let removed_on = date("removed_on", &mut bad);
        if let (Some(i), Some(r)) = (installed_on, removed_on) {
            if r < i {
                bad("removed_on", format!("{r} is before installed_on {i}"));
            }
        }
        let panes = match cell("panes") {
            None => {
                bad("panes", "is empty; expected a whole number of panes".into());
                None
            }
            Some(v) => match v.parse::<i64>() {
                Ok(n) if n >= 0 => Some(n),
                _ => {
                    bad(
                        "panes",
                        format!("\"{v}\" is not a whole number of panes (0 or more)"),
                    );
                    None
                }
            },
        };
        let (product, lot) = (cell("product"), cell("lot"));
        if lot.is_some() && product.is_none() {
            bad("lot", "a lot needs its product".into());
        }
        if let (Some(supplier), Some(installed_on), Some(panes)) = (supplier, installed_on, panes) {
            out.push((
                line,
                Exposure {
                    id: String::new(),
                    supplier,
                    product,
                    lot,
                    site: cell("site"),
                    installed_on,
                    removed_on,
                    panes,
                },
            ));
        }
    }
    if problems.is_empty() {
        Ok(out)
    } else {
        Err(problems)
    }
}

impl Store {
    /// Import exposure rows from CSV. Suppliers, products, lots and sites the database does
    /// not know are created (refused with `strict`). All or nothing.
    pub fn import_exposure_csv(
        &mut self,
        bytes: &[u8],
        options: ImportOptions,
        stamp: &Stamp,
    ) -> Result<Result<ImportSummary, ImportRejected>, StoreError> {
        let rows = match read_rows(bytes) {
            Ok(rows) => rows,
            Err(problems) => return Ok(Err(ImportRejected { problems })),
        };
        self.import_exposure_rows(rows, options, stamp)
    }

    /// Add one exposure row (the interface's form); codes it names are created. The error
    /// says what was refused.
    pub fn enter_exposure(&mut self, e: Exposure, stamp: &Stamp) -> Result<(), String> {
        match self.import_exposure_rows(vec![(0, e)], ImportOptions::default(), stamp) {
            Ok(Ok(_)) => Ok(()),
            Ok(Err(rej)) => Err(rej
                .problems
                .iter()
                .map(|p| p.message.clone())
                .collect::<Vec<_>>()
                .join("; ")),
            Err(e) => Err(e.to_string()),
        }
    }

    fn import_exposure_rows(
        &mut self,
        rows: Vec<(usize, Exposure)>,
        options: ImportOptions,
        stamp: &Stamp,
    ) -> Result<Result<ImportSummary, ImportRejected>, StoreError> {
        let mut doc = ExportDoc::empty();
        let suppliers: HashSet<String> = self.suppliers()?.into_iter().map(|s| s.code).collect();
        let products: HashSet<(String, String)> = self
            .products(None)?
            .into_iter()
            .map(|p| (p.supplier, p.code))
            .collect();
        let lots: HashSet<(String, String, String)> = self
            .lots(None, None)?
            .into_iter()
            .map(|l| (l.supplier, l.product, l.code))
            .collect();
        let sites: HashSet<String> = self.sites()?.into_iter().map(|s| s.code).collect();
        let mut problems = Vec::new();
        for (line, e) in &rows {
            let mut missing = Vec::new();
            if !suppliers.contains(&e.supplier)
                && !doc.suppliers.iter().any(|s| s.code == e.supplier)
            {
                missing.push(format!("supplier \"{}\"", e.supplier));
                doc.suppliers.push(Supplier {
                    id: String::new(),
                    code: e.supplier.clone(),
                    name: e.supplier.clone(),
                });
            }
            if let Some(p) = &e.product {
                let key = (e.supplier.clone(), p.clone());
                if !products.contains(&key)
                    && !doc
                        .products
                        .iter()
                        .any(|x| x.supplier == key.0 && x.code == key.1)
                {
                    missing.push(format!("product \"{p}\""));
                    doc.products.push(Product {
                        id: String::new(),
                        supplier: key.0,
                        code: key.1,
                        name: p.clone(),
                    });
                }
                if let Some(l) = &e.lot {
                    let key = (e.supplier.clone(), p.clone(), l.clone());
                    if !lots.contains(&key)
                        && !doc
                            .lots
                            .iter()
                            .any(|x| x.supplier == key.0 && x.product == key.1 && x.code == key.2)
                    {
                        missing.push(format!("lot \"{l}\""));
                        doc.lots.push(Lot {
                            id: String::new(),
                            supplier: key.0,
                            product: key.1,
                            code: key.2,
                            made_on: None,
                            heat_soak: None,
                        });
                    }
                }
            }
            if let Some(s) = &e.site {
                if !sites.contains(s) && !doc.sites.iter().any(|x| &x.code == s) {
                    missing.push(format!("site \"{s}\""));
                    doc.sites.push(Site {
                        id: String::new(),
                        code: s.clone(),
                        name: s.clone(),
                        region: String::new(),
                    });
                }
            }
            if options.strict && !missing.is_empty() {
                problems.push(Problem::new(
                    format!("line {line}"),
                    format!("unknown {} (strict mode)", missing.join(", ")),
                ));
            }
        }
        if !problems.is_empty() {
            return Ok(Err(ImportRejected { problems }));
        }
        doc.exposure = rows.into_iter().map(|(_, e)| e).collect();
        self.import_json(doc, options, stamp)
    }
}
