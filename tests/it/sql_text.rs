//! No SQL is built by string formatting from user data in src/store.
//!
//! The scan reads every source file under src/store and finds each `format!` whose text is
//! SQL (a keyword such as SELECT, INSERT, UPDATE, DELETE, WHERE, PRAGMA, VALUES, SET, MATCH,
//! ORDER BY, LIMIT, JOIN). Each one must be on the reviewed list below, with what it
//! interpolates and why that is fixed text (column lists, `?` placeholders, integers from the
//! code). A new SQL `format!` fails this test until someone has looked at it. Separately, the
//! SQL handed to rusqlite (`prepare`, `prepare_cached`, `execute`, `execute_batch`,
//! `query_row`, `query_map`) must be a string literal, a constant, or a variable built by one
//! of the reviewed sites — never a `format!` written inline.

use std::path::{Path, PathBuf};

/// (file name, a fragment of the format string, what is interpolated and why it is safe)
const REVIEWED: &[(&str, &str, &str)] = &[
    ("incidents/write.rs", "INSERT INTO incidents ({cols}) VALUES", "cols: the COLS constant; the values are ?N placeholders"),
    ("incidents/write.rs", "?{i}", "i: a loop counter making ?1..?N placeholders"),
    ("incidents/write.rs", "UPDATE incidents SET {} WHERE id = ?1", "sets: COLS names with ?N placeholders"),
    ("incidents/write.rs", "{c} = ?{}", "c: a name from the COLS constant, then a placeholder number"),
    ("incidents/list.rs", "WHERE {}", "conds: fixed condition texts with ? placeholders (filter_sql pushes only literals)"),
    ("incidents/list.rs", "{} ORDER BY", "select: a literal; where_clause of fixed condition texts; order_cols and dir from the SortColumn/direction enums; limit an integer"),
    ("incidents/list.rs", "ORDER BY i.stress_pa {dir}", "dir from the sort-direction enum, limit an integer"),
    ("incidents/list.rs", "({}) {cmp} ({qs})", "key expressions from the sort column match, cmp '<' or '>' from the direction, qs '?' placeholders"),
    ("incidents/list.rs", "(i.stress_pa, i.seq) {cmp} (?, ?)", "cmp '<' or '>' from the direction"),
    ("incidents/list.rs", "i.seq {cmp} ?", "cmp '<' or '>' from the direction"),
    ("incidents/list.rs", "FROM {from}", "from: the literal \"incidents i\" or the sqlite::FTS_FROM constant"),
    ("incidents/list.rs", "SELECT count(*) FROM {from} {}", "from as above; where_clause of fixed condition texts"),
    ("incidents/list.rs", "i.lot_id IN ({})", "one '?' placeholder per resolved lot id"),
    ("incidents/facts.rs", "FROM {from}", "from: the literal \"incidents i\" or the sqlite::FTS_FROM constant (from filter_sql); where_clause of fixed condition texts"),
    ("incidents/facts.rs", "{stress_col}{columns} FROM incident_facts", "stress_col: one of two literal column names by the StressKind enum; columns: names from the COLUMNS constant; where_clause of fixed condition texts"),
    ("incidents/children.rs", "SELECT count(*) FROM {t}", "test code: t one of the schema's child-table names written in the test"),
    ("bulk.rs", "SELECT * FROM \"{n}\"", "test code: n an incident_text_* table name read from sqlite_master"),
    ("bulk.rs", "DROP INDEX \"{}\"", "index names read from sqlite_master (the schema's own), quotes removed"),
    ("bulk.rs", "DROP TRIGGER \"{}\"", "trigger names read from sqlite_master (the schema's own), quotes removed"),
    ("sqlite/search.rs", "SELECT * FROM {quoted}", "quoted: an incident_text_* table name read from sqlite_master (FTS5's own tables), quotes removed"),
    ("sqlite/search.rs", "DELETE FROM {quoted}", "quoted: as above"),
    ("sqlite/search.rs", "INSERT INTO {quoted} VALUES ({marks})", "quoted: as above; marks: one '?' per column"),
    ("sqlite/schema.rs", "PRAGMA user_version = {v}", "v: an i64 schema version from the migration table in the code"),
    ("sqlite/schema.rs", "PRAGMA application_id = {APPLICATION_ID}", "a constant"),
    ("fleet/read.rs", "to_tsquery('simple', ${})", "a $n placeholder number; the query text is bound"),
    ("fleet/read.rs", "WHERE {}", "conds: fixed condition texts with $n placeholders (conditions pushes only literals)"),
    ("fleet/read_page.rs", "(f.stress_pa, f.ord) {cmp} (${}, ${})", "cmp '<' or '>' from the direction; placeholder numbers"),
    ("fleet/read_page.rs", "ORDER BY f.stress_pa {dir}", "LOG_COLUMNS a constant; where_clause of fixed texts; dir from the direction; limit an integer"),
    ("fleet/read_page.rs", "f.ord {cmp} ${}", "cmp '<' or '>' from the direction; a placeholder number"),
    ("fleet/read_page.rs", "ORDER BY f.ord {dir} LIMIT {}", "LOG_COLUMNS a constant; where_clause of fixed texts; dir from the direction; an integer"),
    ("fleet/read_page.rs", "({}) {cmp} ({})", "key columns from the sort column match, cmp from the direction, $n placeholders"),
    ("fleet/read_page.rs", "{LOG_COLUMNS} {} ORDER BY {} LIMIT {limit}", "LOG_COLUMNS a constant; where_clause of fixed texts; the order from the SortColumn match; limit an integer"),
    ("fleet/read.rs", "JOIN fleet_records r ON r.entity = 'incident' AND r.id = f.id {}", "where_clause of fixed condition texts"),
    ("fleet/read.rs", "SELECT f.found_on, {stress}", "stress: one of two literal column names by the StressKind enum; where_clause of fixed texts"),
    ("fleet/read_report.rs", "SELECT {column} FROM fleet_facts f {}{order}", "column, order: fixed texts of matching_ids and causes_matching; where_clause of fixed condition texts with $n placeholders"),
    ("fleet/read_report.rs", "{} ORDER BY f.ord", "where_clause of fixed condition texts with $n placeholders"),
    ("fleet/bulk_fill.rs", "DROP INDEX {name}", "name: an index of the fleet's own tables read from pg_index, quoted by quote_ident"),
    ("fleet/bulk_fill.rs", "ALTER TABLE fleet_records DROP CONSTRAINT {name}", "name: a foreign key of fleet_records read from pg_constraint, quoted by quote_ident"),
    ("fleet/bulk_fill.rs", "ALTER TABLE fleet_records ADD CONSTRAINT {name} {def}", "name: as above; def: that constraint's pg_get_constraintdef, read before it was dropped"),
    ("fleet/read_total.rs", "SELECT count(*) FROM (SELECT 1 FROM fleet_facts f {} LIMIT {}) x", "where_clause of fixed condition texts with $n placeholders; count_cap(): the COUNT_CAP constant (a test setting in debug builds) plus one"),
    ("fleet/read_total.rs", "SELECT count(*) FROM fleet_facts f {}", "where_clause of fixed condition texts with $n placeholders"),
    ("incidents/list.rs", "SELECT count(*) FROM (SELECT 1 FROM {from} {} LIMIT {})", "from: the literal \"incidents i\" or the sqlite::FTS_FROM constant; where_clause of fixed condition texts; count_cap(): the COUNT_CAP constant (a test setting in debug builds) plus one"),
    ("fleet/read_stats.rs", "{column} = ${}", "column: a name from the column() match of the Key enum; a placeholder number"),
    ("fleet/read_stats.rs", "{col} IS NULL", "col: a name from the column() match of the Key enum"),
    ("fleet/read_stats.rs", ", {c}", "c: a name from the column() match of the Key enum"),
    ("fleet/read_stats.rs", "SELECT min(month) FROM fleet_fact_months WHERE {}", "fixed condition texts with $n placeholders; a placeholder number"),
    ("fleet/read_stats.rs", "SELECT min(found_on) FROM fleet_facts WHERE {}", "fixed condition texts with $n placeholders; placeholder numbers"),
    ("fleet/read_stats.rs", "SELECT month{cols}, sum(n)::bigint", "cols: names from the column() match; fixed condition texts; a placeholder number"),
    ("fleet/read_stats.rs", "SELECT found_on{cols}, count(*) FROM fleet_facts", "cols: names from the column() match; fixed condition texts; placeholder numbers"),
    ("fleet/read_stats.rs", "SELECT found_on, {stress}{cols} FROM fleet_facts", "stress: one of two literal column names by the StressKind enum; cols: names from the column() match; fixed condition texts; placeholder numbers"),
    ("fleet/read_stats.rs", "SELECT count(*) FROM (SELECT 1 FROM fleet_facts", "stress: one of two literal column names by the StressKind enum; fixed condition texts; placeholder numbers; stress_cap(): a constant (a test setting in debug builds) plus one"),
    ("fleet/read_stats.rs", "month >= ${}", "a placeholder number"),
    ("fleet/read_stats.rs", "month < ${}", "a placeholder number"),
    ("fleet/read_stats.rs", "SELECT coalesce(sum(n), 0)::bigint FROM fleet_fact_months WHERE {}", "fixed condition texts with $n placeholders"),
    ("fleet/read_stats.rs", "SELECT count(*) FROM fleet_facts WHERE {}", "fixed condition texts with $n placeholders; placeholder numbers"),
    ("sqlite/open.rs", "PRAGMA max_page_count = {n}", "n: a u32 parsed from SHARDLOG_TEST_MAX_PAGE_COUNT, debug builds only"),
];

const SQL_WORDS: &[&str] = &[
    "SELECT", "INSERT", "UPDATE", "DELETE", "WHERE", "PRAGMA", "VALUES", " SET ", "MATCH",
    "ORDER BY", "LIMIT", "JOIN", "CREATE", "DROP",
];

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let p = e.path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

/// Each `format!(` in the text with the text of its first argument (the literal, raw or
/// not) and the line it starts on. Test modules (`#[cfg(test)]` to the end) are skipped.
fn format_calls(src: &str) -> Vec<(usize, String)> {
    let body = match src.find("#[cfg(test)]") {
        Some(at) => &src[..at],
        None => src,
    };
    let mut out = Vec::new();
    let mut rest = body;
    let mut offset = 0;
    while let Some(at) = rest.find("format!(") {
        let start = offset + at;
        let after = &body[start + "format!(".len()..];
        let lit = first_literal(after);
        let line = body[..start].matches('\n').count() + 1;
        out.push((line, lit));
        offset = start + "format!(".len();
        rest = &body[offset..];
    }
    out
}

/// The first string literal at the start of `s` (after white space), "" if none.
fn first_literal(s: &str) -> String {
    let t = s.trim_start();
    if let Some(r) = t.strip_prefix("r#\"") {
        return r.split("\"#").next().unwrap_or("").to_string();
    }
    if let Some(r) = t.strip_prefix("r\"") {
        return r.split('"').next().unwrap_or("").to_string();
    }
    if let Some(r) = t.strip_prefix('"') {
        let mut lit = String::new();
        let mut escaped = false;
        for c in r.chars() {
            if escaped {
                lit.push(c);
                escaped = false;
            } else if c == '\\' {
                escaped = true;
            } else if c == '"' {
                break;
            } else {
                lit.push(c);
            }
        }
        return lit;
    }
    String::new()
}

fn is_sql(lit: &str) -> bool {
    // an English message may contain "deleted" or "set"; SQL keywords here are upper case
    SQL_WORDS.iter().any(|w| lit.contains(w))
        || lit.starts_with('?')
        || ["?{", "= ?", "(?", "{cmp}"].iter().any(|p| lit.contains(p))
}

/// SQL `format!` sites that are not on the reviewed list: (file, line, literal).
fn unreviewed(files: &[(String, String)]) -> Vec<String> {
    let mut bad = Vec::new();
    for (name, src) in files {
        for (line, lit) in format_calls(src) {
            if !is_sql(&lit) {
                continue;
            }
            let known = REVIEWED
                .iter()
                .any(|(f, frag, _)| name.ends_with(f) && lit.contains(frag));
            if !known {
                bad.push(format!("{name}:{line}: format!(\"{lit}\")"));
            }
        }
    }
    bad
}

/// Calls that hand SQL to rusqlite with a `format!` written straight into the call.
fn inline_format_sql(files: &[(String, String)]) -> Vec<String> {
    let calls = [
        ".prepare(&format!",
        ".prepare_cached(&format!",
        ".execute(&format!",
        ".execute_batch(&format!",
        ".query_row(&format!",
    ];
    let mut bad = Vec::new();
    for (name, src) in files {
        for (i, l) in src.lines().enumerate() {
            let squeezed: String = l.chars().filter(|c| !c.is_whitespace()).collect();
            for c in calls {
                if squeezed.contains(c) {
                    let lit = first_literal(l.split("format!(").nth(1).unwrap_or(""));
                    let reviewed = REVIEWED
                        .iter()
                        .any(|(f, frag, _)| name.ends_with(f) && lit.contains(frag));
                    if !reviewed {
                        bad.push(format!("{name}:{}: {}", i + 1, l.trim()));
                    }
                }
            }
        }
    }
    bad
}

fn store_sources() -> Vec<(String, String)> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("src")
        .join("store");
    let mut paths = Vec::new();
    rust_files(&root, &mut paths);
    paths.sort();
    paths
        .into_iter()
        .map(|p| {
            let text = std::fs::read_to_string(&p).expect("source readable");
            (p.display().to_string(), text)
        })
        .collect()
}

#[test]
fn store_builds_no_sql_from_user_data() {
    let files = store_sources();
    assert!(
        files.iter().any(|(n, _)| n.ends_with("incidents/list.rs")),
        "the scan found the store's sources"
    );
    let sql_sites: usize = files
        .iter()
        .map(|(_, s)| format_calls(s).iter().filter(|(_, l)| is_sql(l)).count())
        .sum();
    assert!(
        sql_sites >= 3,
        "the scan sees the known SQL builders ({sql_sites})"
    );
    let bad = unreviewed(&files);
    assert!(
        bad.is_empty(),
        "SQL built with format! and not reviewed:\n{}",
        bad.join("\n")
    );
    let inline = inline_format_sql(&files);
    assert!(
        inline.is_empty(),
        "format! inside a rusqlite call:\n{}",
        inline.join("\n")
    );
}

/// The condition texts of the list filter are literals: no `format!` pushed into them.
#[test]
fn filter_conditions_are_literal_text() {
    let files = store_sources();
    let (_, src) = files
        .iter()
        .find(|(n, _)| n.ends_with("incidents/list.rs"))
        .expect("incidents/list.rs");
    // every fn filter_sql… (the filter and the variants it delegates to)
    let body: String = src
        .match_indices("fn filter_sql")
        .map(|(start, _)| {
            let end = src[start..].find("\n}\n").map_or(src.len(), |e| start + e);
            &src[start..end]
        })
        .collect::<Vec<_>>()
        .join("\n");
    assert!(body.contains("c.push("), "filter_sql pushes conditions");
    for (at, _) in body.match_indices("c.push(") {
        let arg = body[at + "c.push(".len()..].trim_start();
        let line = arg.lines().next().unwrap_or("");
        assert!(
            arg.starts_with('"')
                || arg.starts_with("sqlite::FTS_CONDITION")
                // placeholders only: one "?" per resolved id
                || arg.starts_with(r#"format!("i.lot_id IN ({})", vec!["?"; "#),
            "a condition that is not literal text: {line}"
        );
    }
}

/// The scan flags what it must: a planted user value in SQL text, inline or not.
#[test]
fn the_scan_catches_a_planted_injection() {
    let planted = vec![(
        "src/store/planted.rs".to_string(),
        r#"fn f(conn: &Connection, name: &str) {
    let sql = format!("SELECT * FROM incidents WHERE reference = '{name}'");
    conn.execute(&format!("DELETE FROM sites WHERE code = '{}'", name), []).ok();
}"#
        .to_string(),
    )];
    assert_eq!(unreviewed(&planted).len(), 2);
    assert_eq!(inline_format_sql(&planted).len(), 1);
    let harmless = vec![(
        "src/store/planted.rs".to_string(),
        r#"fn g(n: usize) -> String { format!("{n} incidents were deleted") }"#.to_string(),
    )];
    assert!(unreviewed(&harmless).is_empty());
}
