//! The JSON codec: an export document (or a bare array of incidents) read into records,
//! each problem named by its JSON path.

use serde_json::Value;

use super::{decode_utf8, ExportDoc, Problem, JSON_FORMAT, JSON_VERSION};

/// The sections of an export document, in order.
/// (`signed_head`, the signed audit head of a signed export, is read by `verify --export`
/// and passed over by import.)
const SECTIONS: [&str; 11] = [
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
    "signed_head",
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
    let repeated = repeated_keys(text);
    if !repeated.is_empty() {
        return Err(repeated);
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

/// Every key that appears twice in one object, by its JSON path. A JSON reader keeps only
/// one of them (serde keeps the last), so a repeated key could hide a record or a section
/// from whoever reads the file by eye; such a file is refused rather than guessed at.
/// Text that is not JSON at all gives nothing here (the parser after this names the place).
fn repeated_keys(text: &str) -> Vec<Problem> {
    let found = std::cell::RefCell::new(Vec::new());
    let mut de = serde_json::Deserializer::from_str(text);
    let _ = serde::de::DeserializeSeed::deserialize(
        KeyWalk {
            path: String::new(),
            found: &found,
        },
        &mut de,
    );
    found.into_inner()
}

/// A walk over a JSON value that notes repeated keys, keeping nothing else.
struct KeyWalk<'a> {
    path: String,
    found: &'a std::cell::RefCell<Vec<Problem>>,
}

impl KeyWalk<'_> {
    fn child(&self, step: String) -> KeyWalk<'_> {
        KeyWalk {
            path: step,
            found: self.found,
        }
    }
}

impl<'de> serde::de::DeserializeSeed<'de> for KeyWalk<'_> {
    type Value = ();
    fn deserialize<D: serde::Deserializer<'de>>(self, d: D) -> Result<(), D::Error> {
        d.deserialize_any(self)
    }
}

impl<'de> serde::de::Visitor<'de> for KeyWalk<'_> {
    type Value = ();
    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        f.write_str("any JSON value")
    }
    fn visit_bool<E>(self, _: bool) -> Result<(), E> {
        Ok(())
    }
    fn visit_i64<E>(self, _: i64) -> Result<(), E> {
        Ok(())
    }
    fn visit_u64<E>(self, _: u64) -> Result<(), E> {
        Ok(())
    }
    fn visit_f64<E>(self, _: f64) -> Result<(), E> {
        Ok(())
    }
    fn visit_str<E>(self, _: &str) -> Result<(), E> {
        Ok(())
    }
    fn visit_unit<E>(self) -> Result<(), E> {
        Ok(())
    }
    fn visit_seq<A: serde::de::SeqAccess<'de>>(self, mut seq: A) -> Result<(), A::Error> {
        let mut i = 0usize;
        while seq
            .next_element_seed(self.child(format!("{}[{i}]", self.path)))?
            .is_some()
        {
            i += 1;
        }
        Ok(())
    }
    fn visit_map<A: serde::de::MapAccess<'de>>(self, mut map: A) -> Result<(), A::Error> {
        let mut keys = std::collections::HashSet::new();
        while let Some(key) = map.next_key::<String>()? {
            let path = if self.path.is_empty() {
                key.clone()
            } else {
                format!("{}.{key}", self.path)
            };
            if !keys.insert(key.clone()) {
                self.found.borrow_mut().push(Problem::new(
                    path.clone(),
                    format!("the key \"{key}\" appears twice in one object; a file must say each thing once"),
                ));
            }
            map.next_value_seed(self.child(path))?;
        }
        Ok(())
    }
}
