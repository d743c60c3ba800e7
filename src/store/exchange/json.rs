//! The JSON codec: an export document (or a bare array of incidents) read into records,
//! each problem named by its JSON path.

use serde_json::Value;

use super::{decode_utf8, ExportDoc, Problem, JSON_FORMAT, JSON_VERSION};

/// The sections of an export document, in order.
const SECTIONS: [&str; 10] = [
    "format",
    "version",
    "lookups",
    "sites",
    "assets",
    "suppliers",
    "products",
    "lots",
    "exposure",
    "incidents",
];

/// Parse a JSON import (an export document, or a bare array of incidents).
pub fn parse_json(bytes: &[u8]) -> Result<ExportDoc, Vec<Problem>> {
    let text = decode_utf8(bytes).map_err(|e| vec![e])?;
    if text.trim().is_empty() {
        return Err(vec![Problem::new(
            "file",
            "is empty; expected a shardlog JSON export",
        )]);
    }
    let v: Value = serde_json::from_str(text).map_err(|e| {
        vec![Problem::new(
            format!("line {}, column {}", e.line(), e.column()),
            format!("not valid JSON: {e}"),
        )]
    })?;
    let mut problems = Vec::new();
    let obj = match v {
        Value::Array(items) => {
            let mut m = serde_json::Map::new();
            m.insert("incidents".into(), Value::Array(items));
            m
        }
        Value::Object(m) => {
            check_header(&m, &mut problems);
            m
        }
        _ => {
            return Err(vec![Problem::new(
                "file",
                "expected a JSON object (a shardlog export) or an array of incidents",
            )])
        }
    };
    let doc = ExportDoc {
        lookups: section(&obj, "lookups", &mut problems),
        sites: section(&obj, "sites", &mut problems),
        assets: section(&obj, "assets", &mut problems),
        suppliers: section(&obj, "suppliers", &mut problems),
        products: section(&obj, "products", &mut problems),
        lots: section(&obj, "lots", &mut problems),
        exposure: section(&obj, "exposure", &mut problems),
        incidents: section(&obj, "incidents", &mut problems),
        ..ExportDoc::empty()
    };
    if problems.is_empty() {
        Ok(doc)
    } else {
        Err(problems)
    }
}

/// The document's format, version and section names.
fn check_header(m: &serde_json::Map<String, Value>, problems: &mut Vec<Problem>) {
    match m.get("format").and_then(Value::as_str) {
        Some(JSON_FORMAT) => {}
        Some(other) => problems.push(Problem::new(
            "format",
            format!("is \"{other}\"; expected \"{JSON_FORMAT}\""),
        )),
        None => problems.push(Problem::new(
            "format",
            format!("missing; expected \"{JSON_FORMAT}\""),
        )),
    }
    match m.get("version").and_then(Value::as_u64) {
        Some(v) if v == JSON_VERSION as u64 => {}
        Some(v) => problems.push(Problem::new(
            "version",
            format!("is {v}; this shardlog reads version {JSON_VERSION}"),
        )),
        None => problems.push(Problem::new("version", "missing; expected 1")),
    }
    for k in m.keys() {
        if !SECTIONS.contains(&k.as_str()) {
            problems.push(Problem::new(k.clone(), "unknown section"));
        }
    }
}

/// The records of one section; each one that does not read is a problem at its path.
fn section<T: serde::de::DeserializeOwned>(
    obj: &serde_json::Map<String, Value>,
    name: &str,
    problems: &mut Vec<Problem>,
) -> Vec<T> {
    let mut out = Vec::new();
    match obj.get(name) {
        None | Some(Value::Null) => {}
        Some(Value::Array(items)) => {
            for (i, item) in items.iter().enumerate() {
                match T::deserialize(item) {
                    Ok(x) => out.push(x),
                    Err(e) => problems.push(Problem::new(format!("{name}[{i}]"), e.to_string())),
                }
            }
        }
        Some(_) => problems.push(Problem::new(name, "expected an array")),
    }
    out
}
