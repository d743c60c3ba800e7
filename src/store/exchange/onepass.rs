//! What a CSV import does before its checks, so that one run reports every problem of the
//! file by its CSV column: lookup cells given by label as well as code (any case), each
//! examination's results computed from its readings as the bench computes them, and possible
//! duplicates of incidents already recorded (same asset, position and date found).

use std::collections::HashMap;

use chrono::{DateTime, NaiveDate, Utc};

use super::super::model::*;
use super::super::StoreError;
use super::Problem;
use shardlog_core::fracture;

/// The CSV column that holds a field of the model (its path as validation names it), when
/// the flat view has one.
pub fn csv_column(path: &str) -> Option<&'static str> {
    let tail = path.rsplit('.').next().unwrap_or(path);
    Some(match path {
        "status" => "status",
        "glass.makeup" => "makeup",
        "glass.supplier" => "supplier",
        "glass.product" => "product",
        "glass.lot" => "lot",
        "pattern.origin_location" => "origin_location",
        "cause.category" => "cause",
        "cause.confidence" => "confidence",
        "cause.responsibility" => "responsibility",
        "broken_on" => "broken_on",
        "found_on" => "found_on",
        "installed_on" => "installed_on",
        "pattern.fragment_count" => "fragment_count",
        "site" => "site",
        "asset" => "asset",
        "reference" => "ref",
        "id" => "id",
        p if p.starts_with("glass.plies[") => match tail {
            "material" => "material",
            "temper" => "temper",
            "thickness_m" => "thickness",
            _ => return None,
        },
        p if p.starts_with("examinations[") && p.contains(".readings[") => match tail {
            "magnification" => "magnification",
            "analyst" => "analyst",
            "viewing" => "viewing",
            // the boundary is the column itself; the radius is in that column
            _ => return None,
        },
        p if p.starts_with("examinations[") => match tail {
            "origin_type" => "origin_type",
            "analyst" => "analyst",
            "examined_on" => "examined_on",
            "material" => "material",
            "depth" => "flaw_depth",
            _ => return None,
        },
        _ => return None,
    })
}

/// The lookup entries of the database by kind, to read labels and list the valid codes.
pub struct Vocabulary {
    by_kind: HashMap<LookupKind, Vec<LookupEntry>>,
}

fn squash(text: &str) -> String {
    text.trim()
        .to_lowercase()
        .replace(['-', '_'], " ")
        .split_whitespace()
        .collect::<Vec<_>>()
        .join(" ")
}

impl Vocabulary {
    pub fn new(entries: Vec<LookupEntry>) -> Vocabulary {
        let mut by_kind: HashMap<LookupKind, Vec<LookupEntry>> = HashMap::new();
        for e in entries {
            by_kind.entry(e.kind).or_default().push(e);
        }
        for list in by_kind.values_mut() {
            list.sort_by(|a, b| a.sort_order.cmp(&b.sort_order).then(a.code.cmp(&b.code)));
        }
        Vocabulary { by_kind }
    }

    /// The code a cell means: the code itself, or a code or label in any case (spaces,
    /// `-` and `_` alike). The text unchanged when nothing matches (validation then says so).
    pub fn code(&self, kind: LookupKind, text: &str) -> String {
        let Some(list) = self.by_kind.get(&kind) else {
            return text.to_string();
        };
        if list.iter().any(|e| e.code == text) {
            return text.to_string();
        }
        let wanted = squash(text);
        list.iter()
            .find(|e| squash(&e.code) == wanted || squash(&e.label) == wanted)
            .map(|e| e.code.clone())
            .unwrap_or_else(|| text.to_string())
    }

    /// "code (label), …" of one kind, for a refusal.
    pub fn listing(&self, kind: LookupKind) -> String {
        self.by_kind
            .get(&kind)
            .map(|list| {
                list.iter()
                    .map(|e| {
                        if squash(&e.code) == squash(&e.label) {
                            e.code.clone()
                        } else {
                            format!("{} ({})", e.code, e.label)
                        }
                    })
                    .collect::<Vec<_>>()
                    .join(", ")
            })
            .unwrap_or_default()
    }

    /// Every lookup cell of a CSV incident read as a code.
    pub fn resolve(&self, inc: &mut Incident) {
        inc.status = self.code(LookupKind::Status, &inc.status);
        inc.glass.makeup = self.code(LookupKind::Makeup, &inc.glass.makeup);
        for ply in &mut inc.glass.plies {
            if let Some(m) = &ply.material {
                ply.material = Some(self.code(LookupKind::Material, m));
            }
            if let Some(t) = &ply.temper {
                ply.temper = Some(self.code(LookupKind::TemperClass, t));
            }
        }
        if let Some(l) = &inc.pattern.origin_location {
            inc.pattern.origin_location = Some(self.code(LookupKind::OriginLocation, l));
        }
        for e in &mut inc.examinations {
            if let Some(o) = &e.origin_type {
                e.origin_type = Some(self.code(LookupKind::OriginType, o));
            }
            for r in &mut e.readings {
                if let Some(v) = &r.viewing {
                    r.viewing = Some(self.code(LookupKind::ViewingMode, v));
                }
            }
        }
        if let Some(c) = &mut inc.cause {
            c.category = self.code(LookupKind::CauseCategory, &c.category);
            c.confidence = self.code(LookupKind::Confidence, &c.confidence);
            c.responsibility = self.code(LookupKind::Responsibility, &c.responsibility);
        }
    }
}

/// The lookup kind of a CSV column, for listing its valid codes.
pub fn column_kind(column: &str) -> Option<LookupKind> {
    Some(match column {
        "status" => LookupKind::Status,
        "makeup" => LookupKind::Makeup,
        "material" => LookupKind::Material,
        "temper" => LookupKind::TemperClass,
        "origin_location" => LookupKind::OriginLocation,
        "origin_type" => LookupKind::OriginType,
        "cause" => LookupKind::CauseCategory,
        "confidence" => LookupKind::Confidence,
        "responsibility" => LookupKind::Responsibility,
        "viewing" => LookupKind::ViewingMode,
        _ => return None,
    })
}

/// What an analysis computed on import says of itself (its `source`).
pub(crate) const COMPUTED_ON_IMPORT: &str = "computed from the readings of a CSV import";

/// Compute each examination's results from its readings, as the bench does, replacing
/// figures typed in the file's stress columns. A refusal of the calculation is a problem of
/// the record's line.
pub fn compute_results(
    inc: &mut Incident,
    line: usize,
    at: DateTime<Utc>,
    book: &crate::store::MaterialBook,
) -> Vec<Problem> {
    compute_results_keeping(inc, line, at, book, Keep::Whole)
}

/// How much of each computed result the reading of a file keeps.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Keep {
    /// The whole result.
    Whole,
    /// Its figures only (stresses, flaw size, time), which the checks read; the analysis
    /// and constants JSON stay null until [`complete_results`] computes the results again
    /// where the incident is written. A large import holds all its incidents at once, and
    /// the whole analyses of 20,000 took most of a 0.9 GB peak.
    Figures,
}

/// The results [`compute_results_keeping`] left as figures, computed whole from the same
/// record, material book and clock (so the same figures). A refusal now of what was taken
/// when the file was read is the machine's failure, not the file's.
pub(super) fn complete_results(
    inc: &mut Incident,
    at: DateTime<Utc>,
    book: &crate::store::MaterialBook,
) -> Result<(), StoreError> {
    match compute_results(inc, 0, at, book).into_iter().next() {
        None => Ok(()),
        Some(p) => Err(StoreError::Database(format!(
            "incident {}: computing its results again: {}",
            inc.reference, p.message
        ))),
    }
}

fn compute_results_keeping(
    inc: &mut Incident,
    line: usize,
    at: DateTime<Utc>,
    book: &crate::store::MaterialBook,
    keep: Keep,
) -> Vec<Problem> {
    let mut problems = Vec::new();
    let snapshot = inc.clone();
    for exam in &mut inc.examinations {
        if exam.readings.is_empty() {
            continue;
        }
        // a material neither in the library nor own, or a boundary it does not know: no result
        let Ok(input) = super::super::analysis::analysis_input(&snapshot, exam, book) else {
            continue;
        };
        match fracture::analyze(&input) {
            Ok(analysis) if keep == Keep::Figures => {
                exam.material = Some(input.material.key.replace('-', "_"));
                exam.result = Some(super::super::analysis::to_figures(&analysis, at));
            }
            Ok(analysis) => match super::super::analysis::to_result(&analysis, at) {
                Ok(mut result) => {
                    super::super::analysis::keep_own_material(&mut result, &input, book);
                    if let serde_json::Value::Object(map) = &mut result.analysis {
                        map.insert("source".to_string(), COMPUTED_ON_IMPORT.into());
                    }
                    exam.material = Some(input.material.key.replace('-', "_"));
                    exam.result = Some(result);
                }
                Err(e) => problems.push(Problem::new(
                    format!("line {line}"),
                    format!("storing the computed results: {e}"),
                )),
            },
            Err(e) => problems.push(Problem::new(
                format!("line {line}, column mirror_mist"),
                format!("the readings cannot be computed: {e}"),
            )),
        }
    }
    problems
}

/// Records at least this many are read on more than one thread by [`read_records`].
const SPLIT_ABOVE: usize = 2_000;

/// Each CSV record's lookup cells read as codes ([`Vocabulary::resolve`]) and its results
/// computed ([`compute_results`]), with the problems of each record beside it, in the file's
/// order. A large file is cut into consecutive parts read on up to four threads (one per
/// core); every record's outcome is the one a single thread gives, as each depends on its
/// own record only.
pub(super) fn read_records(
    records: Vec<super::csv::CsvRecord>,
    vocabulary: &Vocabulary,
    book: &crate::store::MaterialBook,
    at: DateTime<Utc>,
    keep: Keep,
) -> Vec<(super::csv::CsvRecord, Vec<Problem>)> {
    in_parts(records, |_: &mut (), mut r: super::csv::CsvRecord| {
        vocabulary.resolve(&mut r.incident);
        let problems = compute_results_keeping(&mut r.incident, r.line, at, book, keep);
        (r, problems)
    })
}

/// Per examination, the stored texts of its result where one was computed.
pub(super) type Rendered = Vec<Option<crate::store::rendered::RenderedResult>>;

/// Each examination's result computed from its readings as [`compute_results`] computes it
/// (the own material kept, the import's `source` added), the record holding its figures
/// only and the stored texts rendered beside it; `scratch` is a buffer kept by the caller.
pub(super) fn compute_rendered(
    inc: &mut Incident,
    line: usize,
    at: DateTime<Utc>,
    book: &crate::store::MaterialBook,
    scratch: &mut String,
) -> Result<Rendered, StoreError> {
    let snapshot = inc.clone();
    let mut out = Vec::with_capacity(inc.examinations.len());
    for exam in &mut inc.examinations {
        if exam.readings.is_empty() {
            out.push(None);
            continue;
        }
        let Ok(input) = super::super::analysis::analysis_input(&snapshot, exam, book) else {
            out.push(None);
            continue;
        };
        let analysis = fracture::analyze(&input).map_err(|e| {
            StoreError::Database(format!(
                "line {line}: computing its results again: the readings cannot be computed: {e}"
            ))
        })?;
        let texts = crate::store::rendered::render(
            &analysis,
            &input,
            book,
            Some(COMPUTED_ON_IMPORT),
            scratch,
        )?;
        exam.material = Some(input.material.key.replace('-', "_"));
        exam.result = Some(super::super::analysis::to_figures(&analysis, at));
        out.push(Some(texts));
    }
    Ok(out)
}

/// `f` over `items`, in order: a long list cut into consecutive parts done on up to four
/// threads (one per core), each part with its own state `S` (a buffer to reuse); every item's
/// outcome is the one a single thread gives, as each depends on its own item only.
pub(super) fn in_parts<T, U, S, F>(items: Vec<T>, f: F) -> Vec<U>
where
    T: Send,
    U: Send,
    S: Default,
    F: Fn(&mut S, T) -> U + Sync,
{
    let threads = std::thread::available_parallelism()
        .map_or(1, usize::from)
        .clamp(1, 4);
    let run = |part: Vec<T>| {
        let mut state = S::default();
        part.into_iter()
            .map(|x| f(&mut state, x))
            .collect::<Vec<U>>()
    };
    if items.len() < SPLIT_ABOVE || threads == 1 {
        return run(items);
    }
    let per = items.len().div_ceil(threads);
    let mut parts = Vec::with_capacity(threads);
    let mut rest = items;
    while rest.len() > per {
        let tail = rest.split_off(per);
        parts.push(rest);
        rest = tail;
    }
    parts.push(rest);
    std::thread::scope(|scope| {
        let mut parts = parts.into_iter();
        let first = parts.next().unwrap_or_default();
        let run = &run;
        let others: Vec<_> = parts.map(|part| scope.spawn(move || run(part))).collect();
        let mut out = run(first);
        for handle in others {
            match handle.join() {
                Ok(done) => out.extend(done),
                // a panic on a helper thread is the program's fault: raise it here
                Err(panic) => std::panic::resume_unwind(panic),
            }
        }
        out
    })
}

/// An incident's key for the duplicate check: asset, position and date found (none
/// without an asset).
pub fn duplicate_key(inc: &Incident) -> Option<(String, String, NaiveDate)> {
    let asset = inc.asset.as_deref()?.trim().to_lowercase();
    Some((asset, squash(&inc.position), inc.found_on))
}

/// The line number of a problem's place ("line 12, column x" → 12), for sorting.
pub fn line_of(p: &Problem) -> usize {
    p.place
        .strip_prefix("line ")
        .and_then(|r| r.split(|c: char| !c.is_ascii_digit()).next())
        .and_then(|n| n.parse().ok())
        .unwrap_or(0)
}

impl crate::store::Store {
    /// References of incidents already recorded with the same asset, position and date
    /// found as `inc` (position compared without case, spaces, `-` or `_` differences).
    pub fn possible_duplicates(&self, inc: &Incident) -> Result<Vec<String>, StoreError> {
        let Some((asset, position, found_on)) = duplicate_key(inc) else {
            return Ok(Vec::new());
        };
        let mut stmt = self.conn.prepare_cached(
            "SELECT i.reference, i.position FROM incidents i JOIN assets a ON a.id = i.asset_id
             WHERE lower(a.code) = ?1 AND i.found_on = ?2 AND i.id <> ?3 ORDER BY i.seq",
        )?;
        let rows = stmt.query_map(
            rusqlite::params![asset, super::super::dates::fmt_date(found_on), inc.id],
            |r| Ok((r.get::<_, String>(0)?, r.get::<_, String>(1)?)),
        )?;
        let mut out = Vec::new();
        for row in rows {
            let (reference, pos) = row?;
            if squash(&pos) == position {
                out.push(reference);
            }
        }
        Ok(out)
    }
}
