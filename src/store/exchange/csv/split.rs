//! Reading CSV text record by record: the byte scanner that splits records into fields, and
//! an import file read through it a chunk of records at a time (a large import never holds
//! the whole file's records at once).

use std::collections::HashMap;

use super::super::super::model::*;
use super::super::{decode_utf8, Problem};
use super::{csv_header, csv_unguard, read_header, split_csv_signed_line, CsvRecord, Row};

/// The records of CSV text, one at a time, each with the line it starts on.
pub(in crate::store::exchange) struct Splitter<'t> {
    text: &'t str,
    /// Where the next record starts.
    at: usize,
    /// The physical line at `at`.
    line: usize,
    /// Fields of the last record (room for as many in the next).
    width: usize,
}

impl<'t> Splitter<'t> {
    /// Records of `text`, which starts on line `first_line` of its file.
    pub(in crate::store::exchange) fn new(text: &'t str, first_line: usize) -> Splitter<'t> {
        Splitter {
            text,
            at: 0,
            line: first_line,
            width: 0,
        }
    }

    /// The next record with the line it starts on; None at the end of the text. A byte
    /// scanner: every character that ends a run (quote, comma, CR, LF) is ASCII, so the
    /// runs between them are copied as whole slices on character boundaries. An error ends
    /// the text (nothing after it is read).
    pub(in crate::store::exchange) fn next_record(
        &mut self,
    ) -> Option<Result<(usize, Vec<String>), Problem>> {
        let text = self.text;
        let b = text.as_bytes();
        if self.at >= b.len() {
            return None;
        }
        let mut field = String::new();
        let mut record: Vec<String> = Vec::with_capacity(self.width);
        let start_line = self.line;
        let mut in_quotes = false;
        let mut i = self.at;
        while i < b.len() {
            if in_quotes {
                let run = b[i..]
                    .iter()
                    .position(|&c| c == b'"' || c == b'\n')
                    .map_or(b.len(), |k| i + k);
                field.push_str(&text[i..run]);
                i = run;
                match b.get(i) {
                    Some(b'"') if b.get(i + 1) == Some(&b'"') => {
                        field.push('"');
                        i += 2;
                    }
                    Some(b'"') => {
                        in_quotes = false;
                        i += 1;
                    }
                    Some(_) => {
                        self.line += 1;
                        field.push('\n');
                        i += 1;
                    }
                    None => {}
                }
                continue;
            }
            let run = b[i..]
                .iter()
                .position(|&c| matches!(c, b'"' | b',' | b'\r' | b'\n'))
                .map_or(b.len(), |k| i + k);
            if run > i {
                field.push_str(&text[i..run]);
                i = run;
                continue;
            }
            match b[i] {
                b'"' if field.is_empty() => in_quotes = true,
                b'"' => {
                    self.at = b.len();
                    return Some(Err(Problem::new(
                        format!("line {}", self.line),
                        "a quote inside an unquoted field; quote the whole field and double the quote",
                    )));
                }
                b',' => record.push(std::mem::take(&mut field)),
                b'\r' if b.get(i + 1) == Some(&b'\n') => {}
                b'\r' => field.push('\r'),
                _ => {
                    record.push(std::mem::take(&mut field));
                    self.width = record.len();
                    self.line += 1;
                    self.at = i + 1;
                    return Some(Ok((start_line, record)));
                }
            }
            i += 1;
        }
        self.at = b.len();
        if in_quotes {
            return Some(Err(Problem::new(
                format!("line {start_line}"),
                "a quoted field is not closed before the end of the file (truncated file?)",
            )));
        }
        record.push(field);
        Some(Ok((start_line, record)))
    }
}

/// A CSV import file read a chunk of records at a time.
pub(in crate::store::exchange) struct CsvStream<'t> {
    splitter: Splitter<'t>,
    columns: HashMap<&'static str, usize>,
    width: usize,
}

impl<'t> CsvStream<'t> {
    /// The file checked as a whole (encoding, not empty) and its header read; Err: every
    /// problem that stops the file being read at all.
    pub(in crate::store::exchange) fn open(bytes: &'t [u8]) -> Result<CsvStream<'t>, Vec<Problem>> {
        let text = decode_utf8(bytes).map_err(|e| vec![e])?;
        if text.trim().is_empty() {
            return Err(vec![Problem::new(
                "file",
                format!("is empty; expected a header line: {}", csv_header()),
            )]);
        }
        // a signed export's first line (its signed audit head, checked by `verify --export`)
        let mut splitter = match split_csv_signed_line(text) {
            Some((_, body)) => Splitter::new(body, 2),
            None => Splitter::new(text, 1),
        };
        let (header_line, header) = match splitter.next_record() {
            None => return Err(vec![Problem::new("file", "is empty")]),
            Some(first) => first.map_err(|e| vec![e])?,
        };
        let columns = read_header(&header, header_line)?;
        Ok(CsvStream {
            splitter,
            columns,
            width: header.len(),
        })
    }

    /// Up to `max` more records that could be read (fewer only at the end of the file), the
    /// problems of the lines read added to `problems`. Err: a problem that stops the rest of
    /// the file being read (a quote out of place), which is then the file's only problem.
    pub(in crate::store::exchange) fn next_records(
        &mut self,
        max: usize,
        stamp: &Stamp,
        problems: &mut Vec<Problem>,
    ) -> Result<Vec<CsvRecord>, Problem> {
        let width = self.width;
        let mut out = Vec::with_capacity(max.min(4096));
        while out.len() < max {
            let Some(next) = self.splitter.next_record() else {
                break;
            };
            let (line, mut cells) = next?;
            if cells.len() == 1 && cells[0].trim().is_empty() {
                continue; // blank line
            }
            if cells.len() != width {
                problems.push(Problem::new(
                    format!("line {line}"),
                    format!("has {} fields; the header has {width}", cells.len()),
                ));
                continue;
            }
            // undo the export's formula guard on text cells (a leading apostrophe)
            for (name, &i) in &self.columns {
                if cells[i].starts_with('\'') {
                    cells[i] = csv_unguard(name, &cells[i]);
                }
            }
            let mut row = Row {
                line,
                cells: &cells,
                columns: &self.columns,
                problems: &mut *problems,
            };
            if let Some(mut incident) = row.incident(stamp) {
                let lot_heat_soak = row.practice(&mut incident);
                out.push(CsvRecord {
                    line,
                    incident,
                    lot_heat_soak,
                });
            }
        }
        Ok(out)
    }
}

#[cfg(test)]
mod tests {
    use super::super::parse_csv_all;
    use super::*;

    fn stamp() -> Stamp {
        Stamp::new(
            "reader",
            chrono::DateTime::parse_from_rfc3339("2026-11-02T08:00:00Z")
                .unwrap()
                .with_timezone(&chrono::Utc),
        )
    }

    /// A file read a few records at a time gives the records and problems of the file read
    /// whole: quoted line breaks and quotes, a blank line, a short and a long row, a bad date,
    /// CR LF, no newline at the end.
    #[test]
    fn chunks_read_what_the_whole_file_reads() {
        let text = "found_on,asset,position,description\n\
                    2025-01-02,car 1,\"left\nside\",one\n\
                    \n\
                    2025-01-03,car 2,bay 2,two,extra\n\
                    2025-13-01,car 3,bay 3,three\n\
                    2025-01-04,car 4,\"bay \"\"4\"\"\",four\r\n\
                    2025-01-05,car 5\n\
                    2025-01-06,car 6,bay 6,six";
        let (whole, whole_problems) = parse_csv_all(text.as_bytes(), &stamp()).unwrap();
        assert_eq!(whole.first().map(|r| r.line), Some(2));
        assert_eq!(whole.last().map(|r| r.line), Some(9));
        assert_eq!(whole[0].incident.position, "left\nside");
        for line in ["line 5", "line 6", "line 8"] {
            assert!(
                whole_problems.iter().any(|p| p.place.starts_with(line)),
                "{line}: {whole_problems:?}"
            );
        }
        for max in [1, 2, 3, 100] {
            let mut stream = CsvStream::open(text.as_bytes()).unwrap();
            let (mut records, mut problems) = (Vec::new(), Vec::new());
            loop {
                let chunk = stream.next_records(max, &stamp(), &mut problems).unwrap();
                if chunk.is_empty() {
                    break;
                }
                assert!(chunk.len() <= max);
                records.extend(chunk);
            }
            assert_eq!(records, whole, "{max} at a time");
            assert_eq!(problems, whole_problems, "{max} at a time");
        }
        // a quote left open: the file's one problem, by either reading
        let open = "found_on,asset\n2025-01-02,car 1\n2025-01-03,\"car 2\n";
        let whole = parse_csv_all(open.as_bytes(), &stamp()).unwrap_err();
        let mut stream = CsvStream::open(open.as_bytes()).unwrap();
        let first = stream.next_records(1, &stamp(), &mut Vec::new()).unwrap();
        assert_eq!(first.len(), 1);
        let rest = stream
            .next_records(1, &stamp(), &mut Vec::new())
            .unwrap_err();
        assert_eq!(whole, vec![rest]);
    }
}
