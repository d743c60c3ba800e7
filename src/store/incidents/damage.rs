//! A stored child row that cannot be read (a date that is not one, a text where a number
//! belongs): named by its table, its row and the field, so that the incident it belongs to
//! is reported as damaged and the others are read on.

/// The column a failure to read a value names; None for an error that is not about a value
/// (the machine failing, say), which is passed on as it is.
fn column_of(e: &rusqlite::Error) -> Option<usize> {
    match e {
        rusqlite::Error::FromSqlConversionFailure(i, _, _)
        | rusqlite::Error::IntegralValueOutOfRange(i, _)
        | rusqlite::Error::Utf8Error(i, _)
        | rusqlite::Error::InvalidColumnType(i, _, _) => Some(*i),
        _ => None,
    }
}

/// Why the value could not be read, in words.
fn reason(e: &rusqlite::Error) -> String {
    match e {
        rusqlite::Error::FromSqlConversionFailure(_, _, why) => why.to_string(),
        rusqlite::Error::IntegralValueOutOfRange(_, v) => format!("{v} is out of range"),
        rusqlite::Error::Utf8Error(_, _) => "not UTF-8 text".into(),
        rusqlite::Error::InvalidColumnType(_, _, t) => {
            format!("holds {t} where another type belongs")
        }
        other => other.to_string(),
    }
}

/// `read` of the row `r` of `table`: the value, or (when a value of the row cannot be read)
/// a message naming the table, the row (`row()`, asked only then) and the field. Errors
/// that are not about a value are returned as errors.
pub(super) fn decode<T>(
    r: &rusqlite::Row<'_>,
    table: &str,
    row: impl FnOnce() -> String,
    read: fn(&rusqlite::Row<'_>) -> rusqlite::Result<T>,
) -> rusqlite::Result<Result<T, String>> {
    match read(r) {
        Ok(v) => Ok(Ok(v)),
        Err(e) => match column_of(&e) {
            Some(i) => {
                let stmt: &rusqlite::Statement<'_> = r.as_ref();
                let field = stmt.column_name(i).unwrap_or("?");
                Ok(Err(format!(
                    "table {table}, {}, field {field}: {}",
                    row(),
                    reason(&e)
                )))
            }
            None => Err(e),
        },
    }
}

/// A text column as a row label, or "?" when it cannot be read either.
pub(super) fn text_at(r: &rusqlite::Row<'_>, i: usize) -> String {
    r.get::<_, String>(i).unwrap_or_else(|_| "?".into())
}

/// A number column as a row label, or "?".
pub(super) fn number_at(r: &rusqlite::Row<'_>, i: usize) -> String {
    r.get::<_, i64>(i)
        .map(|n| n.to_string())
        .unwrap_or_else(|_| "?".into())
}
