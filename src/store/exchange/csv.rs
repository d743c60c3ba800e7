//! The CSV codec: the flat one-line-per-incident view. Reading keeps the physical line each
//! record starts on (a quoted cell may span lines), so every problem names the line a reader
//! finds in an editor; writing guards text cells against spreadsheet formulas.

use std::collections::HashMap;

use chrono::NaiveDate;
use serde_json::Value;

use super::super::dates::{fmt_date, parse_date};
use super::super::model::*;
use super::Problem;
use shardlog_core::units::{self, Dimension};

mod practice;
mod split;
pub(super) use practice::gather_heat_soak;
pub(super) use split::CsvStream;

/// The CSV columns, in export order. Documented in README ("CSV columns").
pub const CSV_COLUMNS: &[&str] = &[
    "ref",
    "id",
    "found_on",
    "broken_on",
    "site",
    "asset",
    "position",
    "supplier",
    "product",
    "lot",
    "makeup",
    "material",
    "temper",
    "thickness",
    "status",
    "origin_location",
    "origin_type",
    "analyst",
    "examined_on",
    "magnification",
    "mirror_mist",
    "mist_hackle",
    "branching",
    "flaw_depth",
    "stress_mpa",
    "applied_stress_mpa",
    "cause",
    "confidence",
    "responsibility",
    "description",
    "notes",
    // the bench-practice columns (csv_practice.rs)
    "installed_on",
    "fragment_count",
    "heat_soaked",
    "heat_soak_on",
    "heat_soak_ref",
    "viewing",
];

/// Columns whose cells are numbers or dates written by the tool: never formula-guarded (a
/// negative applied stress stays a number a spreadsheet can add up).
const CSV_NUMERIC: &[&str] = &[
    "found_on",
    "broken_on",
    "thickness",
    "examined_on",
    "magnification",
    "mirror_mist",
    "mist_hackle",
    "branching",
    "flaw_depth",
    "stress_mpa",
    "applied_stress_mpa",
    "installed_on",
    "fragment_count",
    "heat_soak_on",
];

/// The mirror boundaries, each a column of `;`-separated radii.
const BOUNDARY_COLUMNS: [&str; 3] = ["mirror_mist", "mist_hackle", "branching"];

/// One incident read from a CSV file, with the physical line its record starts on.
#[derive(Debug, Clone, PartialEq)]
pub struct CsvRecord {
    /// 1-based line of the file where the record begins (the header is line 1).
    pub line: usize,
    /// A draft where `id`/`ref` are empty.
    pub incident: Incident,
    /// The heat-soak record the row gives for its lot (None: the row says nothing).
    pub lot_heat_soak: Option<HeatSoak>,
}

// ------------------------------------------------------------------ writing

/// A number for CSV: 6 significant figures, trailing zeros trimmed (stable when read back).
fn num6(x: f64) -> String {
    let s = units::fmt_sig(x, 6);
    if s.contains('.') && !s.contains('e') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

fn formula_trigger(c: char) -> bool {
    matches!(c, '=' | '+' | '-' | '@' | '\t' | '\r')
}

/// Whether a text cell needs the formula guard: it starts with a character that makes a
/// spreadsheet read a formula (`=`, `+`, `-`, `@`, tab, CR), possibly behind apostrophes
/// that are part of the text (those get the guard too, so that import can tell them apart).
fn needs_formula_guard(s: &str) -> bool {
    s.trim_start_matches('\'').starts_with(formula_trigger)
}

/// The formula guard of CSV export (OWASP "CSV injection"): a text cell that a spreadsheet
/// would run is written with a leading apostrophe, which spreadsheets read as "this is
/// text". Numeric and date columns are never guarded.
pub fn csv_guard(column: &str, s: &str) -> String {
    if !CSV_NUMERIC.contains(&column) && needs_formula_guard(s) {
        format!("'{s}")
    } else {
        s.to_string()
    }
}

/// Undo exactly [`csv_guard`]: one leading apostrophe goes when what follows it would have
/// needed the guard. Any other text is kept as it is.
pub fn csv_unguard(column: &str, s: &str) -> String {
    match s.strip_prefix('\'') {
        Some(rest) if !CSV_NUMERIC.contains(&column) && needs_formula_guard(rest) => {
            rest.to_string()
        }
        _ => s.to_string(),
    }
}

fn csv_field(s: &str, out: &mut String) {
    if s.contains([',', '"', '\n', '\r']) || s.starts_with(' ') || s.ends_with(' ') {
        out.push('"');
        out.push_str(&s.replace('"', "\"\""));
        out.push('"');
    } else {
        out.push_str(s);
    }
}

fn readings_text(e: &Examination, boundary: &str) -> String {
    e.readings
        .iter()
        .filter(|r| r.boundary == boundary)
        .map(|r| r.radius.display())
        .collect::<Vec<_>>()
        .join("; ")
}

/// The cells of the latest examination, in column order from `origin_type` to
/// `applied_stress_mpa`.
fn examination_cells(exam: Option<&Examination>) -> Vec<String> {
    let result = exam.and_then(|e| e.result.as_ref());
    vec![
        exam.and_then(|e| e.origin_type.clone()).unwrap_or_default(),
        exam.map(|e| e.analyst.clone()).unwrap_or_default(),
        exam.and_then(|e| e.examined_on)
            .map(fmt_date)
            .unwrap_or_default(),
        exam.and_then(|e| e.readings.first())
            .and_then(|r| r.magnification)
            .map(num6)
            .unwrap_or_default(),
        exam.map(|e| readings_text(e, "mirror_mist"))
            .unwrap_or_default(),
        exam.map(|e| readings_text(e, "mist_hackle"))
            .unwrap_or_default(),
        exam.map(|e| readings_text(e, "branching"))
            .unwrap_or_default(),
        exam.and_then(|e| e.flaw.as_ref())
            .and_then(|f| f.depth.as_ref())
            .map(Measured::display)
            .unwrap_or_default(),
        result
            .and_then(|r| r.stress_pa)
            .map(|s| num6(s / 1e6))
            .unwrap_or_default(),
        result
            .and_then(|r| r.applied_stress_pa)
            .map(|s| num6(s / 1e6))
            .unwrap_or_default(),
    ]
}

/// One CSV line (without the newline) for an incident, with its lot's heat-soak record.
pub fn csv_row(inc: &Incident, heat_soak: Option<&HeatSoak>) -> String {
    let ply = inc.glass.plies.first();
    let opt = |s: &Option<String>| s.clone().unwrap_or_default();
    let mut cells: Vec<String> = vec![
        inc.reference.clone(),
        inc.id.clone(),
        fmt_date(inc.found_on),
        inc.broken_on.map(fmt_date).unwrap_or_default(),
        opt(&inc.site),
        opt(&inc.asset),
        inc.position.clone(),
        opt(&inc.glass.supplier),
        opt(&inc.glass.product),
        opt(&inc.glass.lot),
        inc.glass.makeup.clone(),
        ply.and_then(|p| p.material.clone()).unwrap_or_default(),
        ply.and_then(|p| p.temper.clone()).unwrap_or_default(),
        ply.and_then(|p| p.thickness_m)
            .map(|t| format!("{} mm", num6(t * 1e3)))
            .unwrap_or_default(),
        inc.status.clone(),
        opt(&inc.pattern.origin_location),
    ];
    cells.extend(examination_cells(inc.examinations.last()));
    let cause = inc.cause.as_ref();
    cells.extend([
        cause.map(|c| c.category.clone()).unwrap_or_default(),
        cause.map(|c| c.confidence.clone()).unwrap_or_default(),
        cause.map(|c| c.responsibility.clone()).unwrap_or_default(),
        inc.description.clone(),
        inc.notes.clone(),
    ]);
    cells.extend(practice::cells(inc, heat_soak));
    debug_assert_eq!(cells.len(), CSV_COLUMNS.len());
    let mut out = String::new();
    for (i, (c, column)) in cells.iter().zip(CSV_COLUMNS).enumerate() {
        if i > 0 {
            out.push(',');
        }
        if !CSV_NUMERIC.contains(column) && needs_formula_guard(c) {
            csv_field(&csv_guard(column, c), &mut out);
        } else {
            csv_field(c, &mut out);
        }
    }
    out
}

pub fn csv_header() -> String {
    CSV_COLUMNS.join(",")
}

// ------------------------------------------------------------------ reading

/// The first characters of a signed CSV export's first line (`# shardlog signed head {…}`:
/// the signed audit head as one line of JSON; see `witness`).
pub const CSV_SIGNED_PREFIX: &str = "# shardlog signed head ";

/// The signed line of a CSV export, if the text starts with one: the head's JSON text (not
/// yet read) and the rest of the text.
pub(crate) fn split_csv_signed_line(text: &str) -> Option<(&str, &str)> {
    let rest = text.strip_prefix(CSV_SIGNED_PREFIX)?;
    match rest.split_once('\n') {
        Some((line, body)) => Some((line.trim_end_matches('\r'), body)),
        None => Some((rest, "")),
    }
}

/// Split CSV text into records of fields, each with the line it starts on.
pub(super) fn csv_records(text: &str) -> Result<Vec<(usize, Vec<String>)>, Problem> {
    csv_records_from(text, 1)
}

/// [`csv_records`] of text that starts on line `first_line` of its file.
fn csv_records_from(text: &str, first_line: usize) -> Result<Vec<(usize, Vec<String>)>, Problem> {
    let mut splitter = split::Splitter::new(text, first_line);
    let mut records = Vec::new();
    while let Some(next) = splitter.next_record() {
        records.push(next?);
    }
    Ok(records)
}

/// Parse a CSV import into incidents (drafts where `id`/`ref` are empty), each with the line
/// its record starts on; any problem refuses the file.
pub fn parse_csv(bytes: &[u8], stamp: &Stamp) -> Result<Vec<CsvRecord>, Vec<Problem>> {
    let (records, problems) = parse_csv_all(bytes, stamp)?;
    if problems.is_empty() {
        Ok(records)
    } else {
        Err(problems)
    }
}

/// [`parse_csv`] that keeps going: the records that could be read and the problems of every
/// line (so that the import's checks can add theirs and report them all at once). `Err` only
/// when the file as a whole cannot be read (encoding, header, an open quote).
pub fn parse_csv_all(
    bytes: &[u8],
    stamp: &Stamp,
) -> Result<(Vec<CsvRecord>, Vec<Problem>), Vec<Problem>> {
    let mut stream = CsvStream::open(bytes)?;
    let mut problems = Vec::new();
    let records = stream
        .next_records(usize::MAX, stamp, &mut problems)
        .map_err(|e| vec![e])?;
    Ok((records, problems))
}

/// The header line: each known column's position, or every problem with it.
fn read_header(
    header: &[String],
    line: usize,
) -> Result<HashMap<&'static str, usize>, Vec<Problem>> {
    let mut problems = Vec::new();
    let mut columns: HashMap<&'static str, usize> = HashMap::new();
    for (i, h) in header.iter().enumerate() {
        let h = h.trim();
        match CSV_COLUMNS.iter().find(|c| **c == h) {
            Some(c) => {
                if columns.insert(c, i).is_some() {
                    problems.push(Problem::new(
                        format!("line {line}, column {}", i + 1),
                        format!("column \"{h}\" appears twice"),
                    ));
                }
            }
            None => problems.push(Problem::new(
                format!("line {line}, column {}", i + 1),
                format!(
                    "unknown column \"{h}\"; the columns are: {}",
                    CSV_COLUMNS.join(", ")
                ),
            )),
        }
    }
    if !columns.contains_key("found_on") {
        problems.push(Problem::new(
            format!("line {line}"),
            "the column \"found_on\" is required",
        ));
    }
    if problems.is_empty() {
        Ok(columns)
    } else {
        Err(problems)
    }
}

/// One data record being read: its cells by column name, and where its problems go (each
/// named by the record's line and the column).
pub(super) struct Row<'a> {
    line: usize,
    cells: &'a [String],
    columns: &'a HashMap<&'static str, usize>,
    problems: &'a mut Vec<Problem>,
}

impl Row<'_> {
    /// The cell of a column as written ("" when the file has no such column).
    pub(super) fn get(&self, name: &str) -> &str {
        self.columns
            .get(name)
            .map_or("", |&i| self.cells[i].as_str())
    }

    /// The trimmed cell of a column, if it is not empty.
    pub(super) fn opt(&self, name: &str) -> Option<String> {
        let v = self.get(name).trim();
        (!v.is_empty()).then(|| v.to_string())
    }

    pub(super) fn bad(&mut self, name: &str, message: impl Into<String>) {
        let line = self.line;
        self.problems
            .push(Problem::new(format!("line {line}, column {name}"), message));
    }

    pub(super) fn date(&mut self, name: &str) -> Option<NaiveDate> {
        let v = self.get(name).trim().to_string();
        if v.is_empty() {
            return None;
        }
        let parsed = parse_date(&v);
        if parsed.is_none() {
            self.bad(
                name,
                format!("\"{v}\" is not a date; expected YYYY-MM-DD such as 2026-03-14"),
            );
        }
        parsed
    }

    /// A stress in MPa, as Pa.
    fn stress(&mut self, name: &str) -> Option<f64> {
        let v = self.opt(name)?;
        match units::parse_number(&v) {
            Ok(x) if x.abs() < 1e6 => Some(x * 1e6),
            Ok(_) => {
                self.bad(name, format!("{v} MPa is not a plausible stress"));
                None
            }
            Err(e) => {
                self.bad(name, format!("{e} (a number in MPa such as 18.8)"));
                None
            }
        }
    }

    /// The incident of this record; `None` (with its problem noted) without a date found.
    fn incident(&mut self, stamp: &Stamp) -> Option<Incident> {
        let Some(found_on) = self.date("found_on") else {
            if self.get("found_on").trim().is_empty() {
                self.bad(
                    "found_on",
                    "is empty; expected YYYY-MM-DD such as 2026-03-14",
                );
            }
            return None;
        };
        let mut inc = Incident::draft(found_on);
        inc.id = self.get("id").trim().to_string();
        inc.reference = self.get("ref").trim().to_string();
        inc.broken_on = self.date("broken_on");
        inc.site = self.opt("site");
        inc.asset = self.opt("asset");
        inc.position = self.get("position").to_string();
        self.read_glass(&mut inc.glass);
        if let Some(s) = self.opt("status") {
            inc.status = s;
        }
        inc.pattern.origin_location = self.opt("origin_location");
        inc.description = self.get("description").to_string();
        inc.notes = self.get("notes").to_string();
        if let Some(exam) = self.examination(stamp) {
            inc.examinations.push(exam);
        }
        inc.cause = self.cause();
        Some(inc)
    }

    /// Supplier, product, lot, makeup and the one ply the flat view has.
    fn read_glass(&mut self, glass: &mut Glass) {
        glass.supplier = self.opt("supplier");
        glass.product = self.opt("product");
        glass.lot = self.opt("lot");
        if let Some(m) = self.opt("makeup") {
            glass.makeup = m;
        }
        let thickness = match self.opt("thickness") {
            Some(t) => match units::parse_positive(&t, Dimension::Length) {
                Ok(v) => Some(v),
                Err(e) => {
                    self.bad("thickness", e.to_string());
                    None
                }
            },
            None => None,
        };
        if self.opt("material").is_some() || self.opt("temper").is_some() || thickness.is_some() {
            glass.plies.push(Ply {
                material: self.opt("material"),
                temper: self.opt("temper"),
                thickness_m: thickness,
                coating: String::new(),
                edge_finish: String::new(),
            });
        }
    }

    fn magnification(&mut self) -> Option<f64> {
        let m = self.opt("magnification")?;
        match units::parse_number(&m) {
            Ok(v) if v > 0.0 => Some(v),
            Ok(_) => {
                self.bad("magnification", "must be greater than zero");
                None
            }
            Err(e) => {
                self.bad("magnification", e.to_string());
                None
            }
        }
    }

    /// The mirror readings of the three boundary columns.
    fn readings(&mut self, magnification: Option<f64>, analyst: &str) -> Vec<MirrorReading> {
        let mut readings = Vec::new();
        for boundary in BOUNDARY_COLUMNS {
            let cell = self.get(boundary).to_string();
            for part in cell.split(';') {
                let part = part.trim();
                if part.is_empty() {
                    continue;
                }
                match Measured::parse(part, Dimension::Length) {
                    Ok(m) if m.si > 0.0 => readings.push(MirrorReading {
                        boundary: boundary.to_string(),
                        radius: m,
                        magnification,
                        analyst: analyst.to_string(),
                        note: String::new(),
                        viewing: None,
                    }),
                    Ok(_) => self.bad(boundary, format!("\"{part}\" must be greater than zero")),
                    Err(e) => self.bad(boundary, e),
                }
            }
        }
        readings
    }

    fn flaw(&mut self) -> Option<FlawMeasurement> {
        let f = self.opt("flaw_depth")?;
        match Measured::parse(&f, Dimension::Length) {
            Ok(m) => Some(FlawMeasurement {
                depth: Some(m),
                width: None,
                shape: String::new(),
            }),
            Err(e) => {
                self.bad("flaw_depth", e);
                None
            }
        }
    }

    /// The one examination the flat view has, when any of its cells is filled.
    fn examination(&mut self, stamp: &Stamp) -> Option<Examination> {
        let magnification = self.magnification();
        let analyst = self.get("analyst").trim().to_string();
        let readings = self.readings(magnification, &analyst);
        let flaw = self.flaw();
        let stress = self.stress("stress_mpa");
        let applied = self.stress("applied_stress_mpa");
        let examined_on = self.date("examined_on");
        let origin_type = self.opt("origin_type");
        let any = origin_type.is_some()
            || !analyst.is_empty()
            || examined_on.is_some()
            || !readings.is_empty()
            || flaw.is_some()
            || stress.is_some()
            || applied.is_some();
        if !any {
            return None;
        }
        let result = (stress.is_some() || applied.is_some()).then(|| ComputedResult {
            computed_at: stamp.at,
            code_version: "as given in a CSV import".into(),
            stress_pa: stress,
            stress_low_pa: None,
            stress_high_pa: None,
            residual_pa: None,
            applied_stress_pa: applied,
            flaw_size_m: None,
            constants: Value::Object(Default::default()),
            analysis: serde_json::json!({ "source": "csv import" }),
        });
        Some(Examination {
            id: String::new(),
            examined_on,
            analyst,
            origin_type,
            material: None,
            readings,
            flaw,
            result,
            notes: String::new(),
        })
    }

    fn cause(&mut self) -> Option<Cause> {
        if let Some(category) = self.opt("cause") {
            return Some(Cause {
                category,
                factors: Vec::new(),
                confidence: self.opt("confidence").unwrap_or_else(|| "possible".into()),
                responsibility: self
                    .opt("responsibility")
                    .unwrap_or_else(|| "undetermined".into()),
                note: String::new(),
            });
        }
        if self.opt("confidence").is_some() || self.opt("responsibility").is_some() {
            self.bad(
                "cause",
                "is empty although confidence or responsibility is given",
            );
        }
        None
    }
}
#[cfg(test)]
mod tests {
    use super::*;

    /// The character-by-character reader that `csv_records` replaced (kept as the reference
    /// the faster scanner is checked against).
    fn csv_records_reference(text: &str) -> Result<Vec<(usize, Vec<String>)>, Problem> {
        let mut records = Vec::new();
        let mut field = String::new();
        let mut record: Vec<String> = Vec::new();
        let mut line = 1usize;
        let mut start_line = 1usize;
        let mut in_quotes = false;
        let mut chars = text.chars().peekable();
        let mut any = false;
        while let Some(c) = chars.next() {
            any = true;
            if in_quotes {
                match c {
                    '"' if chars.peek() == Some(&'"') => {
                        chars.next();
                        field.push('"');
                    }
                    '"' => in_quotes = false,
                    '\n' => {
                        line += 1;
                        field.push('\n');
                    }
                    c => field.push(c),
                }
                continue;
            }
            match c {
                '"' if field.is_empty() => in_quotes = true,
                '"' => return Err(Problem::new(format!("line {line}"), "quote")),
                ',' => record.push(std::mem::take(&mut field)),
                '\r' if chars.peek() == Some(&'\n') => {}
                '\n' => {
                    record.push(std::mem::take(&mut field));
                    records.push((start_line, std::mem::take(&mut record)));
                    line += 1;
                    start_line = line;
                    any = false;
                }
                c => field.push(c),
            }
        }
        if in_quotes {
            return Err(Problem::new(format!("line {start_line}"), "open"));
        }
        if any {
            record.push(field);
            records.push((start_line, record));
        }
        Ok(records)
    }

    #[test]
    fn csv_scanner_matches_the_reference_reader() {
        let cases = [
            "",
            "a",
            "a,b\n",
            "a,b\r\nc,d\r\n",
            "a\rb,c\n",
            "a,\n,\n\n",
            "\"\"\"\",x\n",
            "\"\"x,y\n",
            "\"a\"b,c\n",
            "\"a\"b\"c\n",
            "ab\"c\n",
            "\"multi\nline\r\nfield\",é,日本\n",
            "\"ends in quote\"",
            "\"open",
            "é,\"ü\"\"\",\u{1F600}\r",
            ",,,",
            "=HYPERLINK(\"x\"),1\n",
        ];
        for c in cases {
            let new = csv_records(c);
            let old = csv_records_reference(c);
            match (&new, &old) {
                (Ok(a), Ok(b)) => assert_eq!(a, b, "{c:?}"),
                (Err(a), Err(b)) => assert_eq!(a.place, b.place, "{c:?}"),
                _ => panic!("{c:?}: {new:?} against {old:?}"),
            }
        }
    }

    #[test]
    fn formula_guard_is_undone_exactly() {
        let texts = [
            "", "=1+1", "+1", "-x", "@SUM(A1)", "\tx", "\rx", "'", "''", "'=", "''=x", "'a", "a'",
            "x=1", " =1", "-", "'-'", "é=",
        ];
        for t in texts {
            for column in ["notes", "asset", "ref"] {
                let g = csv_guard(column, t);
                assert_eq!(csv_unguard(column, &g), t, "{column}: {t:?} -> {g:?}");
                assert!(!g.starts_with(formula_trigger), "{g:?}");
            }
            // numbers and dates are never touched
            assert_eq!(csv_guard("applied_stress_mpa", t), t);
            assert_eq!(csv_unguard("applied_stress_mpa", t), t);
        }
        assert_eq!(csv_guard("notes", "-12.5"), "'-12.5");
        assert_eq!(csv_guard("stress_mpa", "-12.5"), "-12.5");
        assert_eq!(csv_guard("notes", "'plain"), "'plain");
        assert_eq!(csv_unguard("notes", "'plain"), "'plain");
    }

    #[test]
    fn csv_records_handle_quotes_and_newlines() {
        let r = csv_records("a,b\n\"x, y\",\"say \"\"hi\"\"\nthere\"\n").unwrap();
        assert_eq!(r.len(), 2);
        assert_eq!(
            r[1].1,
            vec!["x, y".to_string(), "say \"hi\"\nthere".to_string()]
        );
        assert!(csv_records("a\n\"open").is_err());
    }

    #[test]
    fn num6_is_stable() {
        for x in [18.78, 6.0, 0.1 + 0.2, 123456.7, 1e-7] {
            let s = num6(x);
            let back: f64 = s.parse().unwrap();
            assert_eq!(num6(back), s);
        }
        assert_eq!(num6(6.0), "6");
        assert_eq!(num6(0.1 + 0.2), "0.3");
    }
}
