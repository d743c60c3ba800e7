//! Free-text search with FTS5: the text index of the incidents kept in step on every
//! write, the query a user's words become, and the SQL that joins a match to the log.

use rusqlite::Connection;

use crate::store::StoreError;

/// Replace the searchable text of one incident.
pub fn fts_put(tx: &Connection, seq: i64, body: &str) -> Result<(), StoreError> {
    tx.prepare_cached("DELETE FROM incident_text WHERE rowid = ?1")?
        .execute([seq])?;
    tx.prepare_cached("INSERT INTO incident_text (rowid, body) VALUES (?1, ?2)")?
        .execute(rusqlite::params![seq, body])?;
    Ok(())
}

/// Add the searchable text of a new incident (no delete first: bulk loads).
pub fn fts_insert(tx: &Connection, seq: i64, body: &str) -> Result<(), StoreError> {
    tx.prepare_cached("INSERT INTO incident_text (rowid, body) VALUES (?1, ?2)")?
        .execute(rusqlite::params![seq, body])?;
    Ok(())
}

pub fn fts_delete(tx: &Connection, seq: i64) -> Result<(), StoreError> {
    tx.prepare_cached("DELETE FROM incident_text WHERE rowid = ?1")?
        .execute([seq])?;
    Ok(())
}

/// The statement that made the text index, as SQLite keeps it (to build the same index in
/// another database: [`fts_copy_index`]).
pub fn fts_create_sql(conn: &Connection) -> Result<String, StoreError> {
    Ok(conn.query_row(
        "SELECT sql FROM sqlite_master WHERE type = 'table' AND name = 'incident_text'",
        [],
        |r| r.get(0),
    )?)
}

/// The tables in which FTS5 keeps the text index (`incident_text_data`, `_idx`, …), by name,
/// with their columns (name, type, key position).
type ShadowTable = (String, Vec<(String, String, i64)>);
pub(crate) fn fts_shadow_tables(conn: &Connection) -> Result<Vec<ShadowTable>, StoreError> {
    let names: Vec<String> = {
        let mut stmt = conn.prepare(
            "SELECT name FROM sqlite_master WHERE type = 'table'
             AND name LIKE 'incident\\_text\\_%' ESCAPE '\\' ORDER BY name",
        )?;
        let rows = stmt.query_map([], |r| r.get(0))?;
        rows.collect::<Result<_, _>>()?
    };
    let mut out = Vec::with_capacity(names.len());
    for name in names {
        let mut stmt =
            conn.prepare("SELECT name, type, pk FROM pragma_table_info(?1) ORDER BY cid")?;
        let cols = stmt.query_map([&name], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))?;
        let cols = cols.collect::<Result<_, _>>()?;
        out.push((name, cols));
    }
    Ok(out)
}

/// Replace the text index of `dst` by the one built in `src` (a database whose text index was
/// made by the same [`fts_create_sql`] and that holds nothing else of ours): the rows of
/// FTS5's own tables are copied as they are, which is the same index as inserting every text
/// into `dst`. Refused when the two indexes are not laid out alike. The connection to `dst`
/// must not search its text index before it is reopened (FTS5 may keep the old index's
/// layout in memory).
pub fn fts_copy_index(src: &Connection, dst: &Connection) -> Result<(), StoreError> {
    let (from, to) = (fts_shadow_tables(src)?, fts_shadow_tables(dst)?);
    if from.is_empty() || from != to || fts_create_sql(src)? != fts_create_sql(dst)? {
        return Err(StoreError::Database(
            "the text index built aside is not laid out like this database's".into(),
        ));
    }
    for (name, _) in &from {
        // names come from sqlite_master and match incident_text_*, not from a user
        let quoted = format!("\"{}\"", name.replace('"', ""));
        let mut read = src.prepare(&format!("SELECT * FROM {quoted}"))?;
        let columns = read.column_count();
        let marks = vec!["?"; columns].join(", ");
        dst.execute_batch(&format!("DELETE FROM {quoted}"))?;
        let mut write = dst.prepare(&format!("INSERT INTO {quoted} VALUES ({marks})"))?;
        let mut rows = read.query([])?;
        while let Some(r) = rows.next()? {
            let values: Vec<rusqlite::types::ToSqlOutput<'_>> = (0..columns)
                .map(|i| r.get_ref(i).map(rusqlite::types::ToSqlOutput::Borrowed))
                .collect::<Result<_, _>>()?;
            write.execute(rusqlite::params_from_iter(values))?;
        }
    }
    Ok(())
}

/// FROM clause for a text match: the text index drives (CROSS JOIN fixes the join order in
/// SQLite), then the incidents by row number.
pub const FTS_FROM: &str = "incident_text CROSS JOIN incidents i ON i.seq = incident_text.rowid";

/// SQL condition for a text match with [`FTS_FROM`]; bind [`fts_query`] of the user text.
pub const FTS_CONDITION: &str = "incident_text MATCH ?";

/// SQL condition for a text match over `incidents i` alone: the set of matching row
/// numbers, built once; the unary `+` keeps it from driving the query (see
/// `TextPlan::LogDrives` in the incidents' list). Bind [`fts_query`] of the user text.
pub const FTS_IN_SET: &str =
    "+i.seq IN (SELECT rowid FROM incident_text WHERE incident_text MATCH ?)";

/// How many incidents a text query matches (read from the text index alone).
pub fn fts_count(conn: &Connection, query: &str) -> Result<u64, StoreError> {
    let n: i64 = conn
        .prepare_cached("SELECT count(*) FROM incident_text WHERE incident_text MATCH ?1")?
        .query_row([query], |r| r.get(0))?;
    Ok(n as u64)
}

/// Where the text index is out of step with the incidents: rows in it with no incident, and
/// incidents with no row in it (one ordered walk of each).
pub fn fts_out_of_step(conn: &Connection) -> Result<Vec<String>, StoreError> {
    let mut idx = conn.prepare("SELECT rowid FROM incident_text ORDER BY rowid")?;
    let mut inc = conn.prepare("SELECT seq FROM incidents ORDER BY seq")?;
    let mut a = idx.query([])?;
    let mut b = inc.query([])?;
    let (mut extra, mut missing) = (Vec::<i64>::new(), Vec::<i64>::new());
    let mut x: Option<i64> = a.next()?.map(|r| r.get(0)).transpose()?;
    let mut y: Option<i64> = b.next()?.map(|r| r.get(0)).transpose()?;
    loop {
        match (x, y) {
            (None, None) => break,
            (Some(i), Some(s)) if i == s => {
                x = a.next()?.map(|r| r.get(0)).transpose()?;
                y = b.next()?.map(|r| r.get(0)).transpose()?;
            }
            (Some(i), Some(s)) if i < s => {
                extra.push(i);
                x = a.next()?.map(|r| r.get(0)).transpose()?;
            }
            (Some(i), None) => {
                extra.push(i);
                x = a.next()?.map(|r| r.get(0)).transpose()?;
            }
            (_, Some(s)) => {
                missing.push(s);
                y = b.next()?.map(|r| r.get(0)).transpose()?;
            }
        }
    }
    let mut out = Vec::new();
    if !extra.is_empty() {
        out.push(format!(
            "the text index has {} entr{} with no incident (first: row {}); rows were inserted in it behind shardlog's back",
            extra.len(),
            if extra.len() == 1 { "y" } else { "ies" },
            extra[0]
        ));
    }
    if !missing.is_empty() {
        out.push(format!(
            "the text index lacks {} incident{} (first: row {}); rows were deleted from it behind shardlog's back, so searches miss them",
            missing.len(),
            if missing.len() == 1 { "" } else { "s" },
            missing[0]
        ));
    }
    Ok(out)
}

/// Turn what a user typed into an FTS5 query that cannot be a syntax error: every word
/// becomes a quoted prefix term, all must match. None when nothing searchable is left.
pub fn fts_query(text: &str) -> Option<String> {
    let terms: Vec<String> = text
        .split(|c: char| !c.is_alphanumeric() && c != '_')
        .filter(|w| !w.is_empty())
        .map(|w| format!("\"{w}\"*"))
        .collect();
    if terms.is_empty() {
        None
    } else {
        Some(terms.join(" "))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_text_index_laid_out_otherwise_is_not_copied_in() {
        let make = |sql: &str| {
            let c = Connection::open_in_memory().unwrap();
            c.execute_batch(sql).unwrap();
            fts_insert(&c, 1, "edge chip at the corner").unwrap();
            c
        };
        let ours = "CREATE VIRTUAL TABLE incident_text USING fts5 (body, tokenize = 'unicode61 remove_diacritics 2')";
        let dst = make(ours);
        let other = make("CREATE VIRTUAL TABLE incident_text USING fts5 (body)");
        assert!(fts_copy_index(&other, &dst).is_err());
        let none = Connection::open_in_memory().unwrap();
        assert!(fts_copy_index(&none, &dst).is_err());
        // the same layout copies, and the copy is what is searched
        let src = make(ours);
        fts_insert(&src, 2, "thermal break from a shaded edge").unwrap();
        fts_copy_index(&src, &dst).unwrap();
        let n: i64 = dst
            .query_row("SELECT count(*) FROM incident_text_docsize", [], |r| {
                r.get(0)
            })
            .unwrap();
        assert_eq!(n, 2);
    }

    #[test]
    fn fts_query_quotes_everything() {
        assert_eq!(
            fts_query("edge \"chip\" OR 1=1; --").as_deref(),
            Some("\"edge\"* \"chip\"* \"OR\"* \"1\"* \"1\"*")
        );
        assert_eq!(fts_query("  ;; "), None);
    }
}
