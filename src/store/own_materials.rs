//! A lab's own materials: records beside the built-in library, each with every constant
//! (value, spread, provenance). A library material is never changed here, only copied into
//! an own one. Codes are unique across the library and the own materials. Each own material
//! is also a `material` lookup entry (label: its name), so that plies and examinations name
//! it as they name a library material, and imports and filters read it.
//!
//! Every change is one transaction with its audit row (entity `material`, by id; the image is
//! the whole [`OwnMaterial`], revision included), so the audit log keeps every revision and
//! the fleet receives them like any other record.
//!
//! Changing a material after examinations used it: a result computed with an own material
//! keeps the constants it was computed with (`own_material` beside the stored analysis; the
//! bench keeps its whole input as `bench_input`), and recomputation (verify, import) uses
//! those, so an edit never makes an earlier result look tampered with. New results use the
//! material's current revision.

use rusqlite::{params, Connection, OptionalExtension};
use serde::{Deserialize, Serialize};

use super::audit::Chain;
use super::canon;
use super::model::*;
use super::refdata::{self, LOOKUP};
use super::{Store, StoreError};
use shardlog_core::fracture::materials::{self, Constant, Material};
use shardlog_core::units::{self, physical_range, Dimension};

/// The audit entity of an own material.
pub(crate) const MATERIAL: &str = "material";

/// One own material as stored and audited.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OwnMaterial {
    pub id: String,
    /// Its code: lower-case letters, digits and `_`, starting with a letter.
    pub code: String,
    /// The library material it was copied from, if any.
    #[serde(default)]
    pub base: Option<String>,
    /// 1 when made, one more at each change.
    pub revision: i64,
    /// The constants; `material.key` is the code.
    pub material: Material,
}

/// The materials a calculation may name: the library, then this bench's own.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct MaterialBook {
    own: Vec<OwnMaterial>,
}

impl MaterialBook {
    /// The built-in library only (no database at hand).
    pub fn library_only() -> MaterialBook {
        MaterialBook::default()
    }

    pub fn new(own: Vec<OwnMaterial>) -> MaterialBook {
        MaterialBook { own }
    }

    /// The library and one material beside it (the constants a stored result kept, for a
    /// material this bench does not have).
    pub fn holding(material: Material) -> MaterialBook {
        MaterialBook {
            own: vec![OwnMaterial {
                id: String::new(),
                code: material.key.clone(),
                base: None,
                revision: 0,
                material,
            }],
        }
    }

    /// A material by key or code (library first; `_`, `-` and case do not matter).
    pub fn find(&self, key: &str) -> Option<Material> {
        materials::find(key).or_else(|| self.own(key).map(|o| o.material.clone()))
    }

    /// The own material of a key, None for a library key or an unknown one.
    pub fn own(&self, key: &str) -> Option<&OwnMaterial> {
        if materials::find_ref(key).is_some() {
            return None;
        }
        let want = materials::normal_key(key);
        self.own
            .iter()
            .find(|o| materials::normal_key(&o.code) == want)
    }

    /// The own materials, in code order.
    pub fn own_materials(&self) -> &[OwnMaterial] {
        &self.own
    }

    /// Every key a calculation accepts: the library's, then the own codes.
    pub fn keys(&self) -> Vec<String> {
        let mut keys = materials::keys();
        keys.extend(self.own.iter().map(|o| o.code.clone()));
        keys
    }
}

/// An own code: 1 to 40 characters, lower-case ASCII letters, digits and `_`, starting with
/// a letter.
pub fn check_material_code(code: &str) -> Result<(), StoreError> {
    let field = "material code";
    let ok_chars = code
        .chars()
        .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '_');
    let starts = code.chars().next().is_some_and(|c| c.is_ascii_lowercase());
    if code.is_empty() || code.len() > 40 || !ok_chars || !starts {
        return Err(StoreError::invalid(
            field,
            format!(
                "\"{}\" is not a code; expected 1 to 40 lower-case letters, digits or _, starting with a letter (e.g. lab_float_2026)",
                shardlog_core::text::sanitize_for_terminal(code, false)
            ),
        ));
    }
    Ok(())
}

fn check_constant(
    field: &str,
    c: &Option<Constant>,
    ok: impl Fn(f64) -> bool,
    expected: &str,
) -> Result<(), StoreError> {
    let Some(c) = c else { return Ok(()) };
    if !c.value.is_finite() || !ok(c.value) {
        return Err(StoreError::invalid(
            field,
            format!("{} is outside its range; expected {expected}", c.value),
        ));
    }
    if let Some(s) = c.spread {
        if !s.is_finite() || s < 0.0 || (s != 0.0 && !ok(s)) {
            return Err(StoreError::invalid(
                format!("{field} spread"),
                format!("{s} is not a spread; expected zero or more, within {expected}"),
            ));
        }
    }
    if c.provenance.text().trim().is_empty() && c.provenance.mark() != "user" {
        return Err(StoreError::invalid(
            format!("{field} provenance"),
            "must say where the value comes from",
        ));
    }
    Ok(())
}

/// Every constant within its physical range (the ranges of `core/src/units`), the name
/// and notes plain text.
pub fn check_material(m: &Material) -> Result<(), StoreError> {
    let name = m.name.trim();
    if name.is_empty() || name.chars().any(char::is_control) || name.chars().count() > 120 {
        return Err(StoreError::invalid(
            "material name",
            "expected 1 to 120 characters of plain text",
        ));
    }
    if m.notes.chars().any(|c| c.is_control() && c != '\n') || m.notes.chars().count() > 2000 {
        return Err(StoreError::invalid(
            "material notes",
            "expected up to 2000 characters of plain text",
        ));
    }
    let toughness = physical_range(Dimension::Toughness);
    let in_toughness = |v: f64| v > 0.0 && toughness.contains(v);
    let tough_text = format!("more than 0, {}", toughness.text());
    for (field, c) in [("A_i", &m.a_i), ("A_o", &m.a_o), ("A_b", &m.a_b)] {
        check_constant(field, c, in_toughness, &tough_text)?;
    }
    check_constant("K_Ic", &m.k_ic, in_toughness, &tough_text)?;
    check_constant(
        "E",
        &m.youngs_modulus,
        |v| v > 0.0 && v <= units::MAX_MODULUS,
        "more than 0, up to 2000 GPa",
    )?;
    check_constant("ν", &m.poisson, |v| (-1.0..=0.5).contains(&v), "-1 to 0.5")?;
    check_constant("α", &m.expansion, |v| v.abs() <= 1e-3, "up to 0.001 /K")?;
    check_constant(
        "ρ",
        &m.density,
        |v| v > 0.0 && v <= 3e4,
        "more than 0, up to 30000 kg/m³",
    )?;
    Ok(())
}

pub(crate) fn load_own_materials(conn: &Connection) -> Result<Vec<OwnMaterial>, StoreError> {
    let mut stmt = conn
        .prepare_cached("SELECT id, code, base, revision, body FROM own_materials ORDER BY code")?;
    let rows = stmt.query_map([], |r| {
        Ok((
            r.get::<_, String>(0)?,
            r.get::<_, String>(1)?,
            r.get::<_, Option<String>>(2)?,
            r.get::<_, i64>(3)?,
            r.get::<_, String>(4)?,
        ))
    })?;
    let mut out = Vec::new();
    for row in rows {
        let (id, code, base, revision, body) = row?;
        let material: Material = serde_json::from_str(&body).map_err(|e| {
            StoreError::Database(format!(
                "own material {code}: its constants cannot be read ({e})"
            ))
        })?;
        out.push(OwnMaterial {
            id,
            code,
            base,
            revision,
            material,
        });
    }
    Ok(out)
}

/// (entity, id, code, image) of every own material, for verify and the fleet.
pub(crate) fn images(
    conn: &Connection,
) -> Result<Vec<(&'static str, String, String, String)>, StoreError> {
    load_own_materials(conn)?
        .into_iter()
        .map(|o| {
            Ok((
                MATERIAL,
                o.id.clone(),
                o.code.clone(),
                canon::canonical(&o)?,
            ))
        })
        .collect()
}

fn load_one(conn: &Connection, code: &str) -> Result<Option<OwnMaterial>, StoreError> {
    Ok(load_own_materials(conn)?
        .into_iter()
        .find(|o| o.code == code))
}

/// A code must name nothing yet: no library material (read with `_` as `-`), no own
/// material, no material lookup entry.
fn check_code_is_free(conn: &Connection, code: &str) -> Result<(), StoreError> {
    if let Some(m) = materials::find(code) {
        return Err(StoreError::invalid(
            "material code",
            format!("{code} is the library's {}; choose another code", m.key),
        ));
    }
    let want = materials::normal_key(code);
    let taken = load_own_materials(conn)?
        .iter()
        .any(|o| materials::normal_key(&o.code) == want)
        || refdata::load_lookups(conn, Some(LookupKind::Material))?
            .iter()
            .any(|e| materials::normal_key(&e.code) == want);
    if taken {
        return Err(StoreError::Duplicate {
            what: "material".into(),
            code: code.into(),
        });
    }
    Ok(())
}

fn write_row(
    conn: &Connection,
    chain: &mut Chain,
    before: Option<&OwnMaterial>,
    after: &OwnMaterial,
    stamp: &Stamp,
) -> Result<(), StoreError> {
    let body = serde_json::to_string(&after.material)?;
    conn.prepare_cached(
        "INSERT INTO own_materials (id, code, base, revision, body) VALUES (?1, ?2, ?3, ?4, ?5)
         ON CONFLICT (id) DO UPDATE SET revision = excluded.revision, body = excluded.body",
    )?
    .execute(params![
        after.id,
        after.code,
        after.base,
        after.revision,
        body
    ])?;
    let before = before.map(canon::canonical).transpose()?;
    chain.record(
        conn,
        stamp,
        MATERIAL,
        &after.id,
        before.as_deref(),
        Some(&canon::canonical(after)?),
    )
}

/// The lookup entry that lets records name the material, its label following the name.
fn write_lookup(
    conn: &Connection,
    chain: &mut Chain,
    code: &str,
    name: &str,
    stamp: &Stamp,
) -> Result<(), StoreError> {
    let entries = refdata::load_lookups(conn, Some(LookupKind::Material))?;
    // imports and filters read a material by code or by name: each must name one material
    let wanted = name.to_lowercase();
    if let Some(other) = entries.iter().find(|e| {
        e.code != code && (e.label.to_lowercase() == wanted || e.code.to_lowercase() == wanted)
    }) {
        return Err(StoreError::invalid(
            "material name",
            format!(
                "\"{name}\" already names {}; choose another name",
                other.code
            ),
        ));
    }
    let existing = entries.into_iter().find(|e| e.code == code);
    match existing {
        None => {
            let last: Option<i64> = conn
                .prepare_cached("SELECT max(sort_order) FROM lookup WHERE kind = ?1")?
                .query_row([LookupKind::Material.as_str()], |r| r.get(0))
                .optional()?
                .flatten();
            let e = LookupEntry {
                kind: LookupKind::Material,
                code: code.to_string(),
                label: name.to_string(),
                sort_order: last.unwrap_or(0) + 10,
                note: "own material".to_string(),
                retired: false,
            };
            refdata::insert_lookup(conn, chain, &e, stamp)
        }
        Some(before) if before.label != name => {
            let after = LookupEntry {
                label: name.to_string(),
                ..before.clone()
            };
            conn.prepare_cached("UPDATE lookup SET label = ?3 WHERE kind = ?1 AND code = ?2")?
                .execute(params![after.kind.as_str(), after.code, after.label])?;
            chain.record(
                conn,
                stamp,
                LOOKUP,
                &refdata::lookup_key(&after),
                Some(&canon::canonical(&before)?),
                Some(&canon::canonical(&after)?),
            )
        }
        Some(_) => Ok(()),
    }
}

impl Store {
    /// This bench's own materials, in code order.
    pub fn own_materials(&self) -> Result<Vec<OwnMaterial>, StoreError> {
        load_own_materials(&self.conn)
    }

    /// One own material by code (exact), None when there is none.
    pub fn own_material(&self, code: &str) -> Result<Option<OwnMaterial>, StoreError> {
        load_one(&self.conn, code)
    }

    /// The library and this bench's own materials, for a calculation.
    pub fn material_book(&self) -> Result<MaterialBook, StoreError> {
        Ok(MaterialBook::new(self.own_materials()?))
    }

    /// Make an own material (revision 1). `material.key` is set to `code`; `base` names the
    /// library material it was copied from, if any.
    pub fn add_own_material(
        &mut self,
        code: &str,
        base: Option<&str>,
        material: &Material,
        stamp: &Stamp,
    ) -> Result<OwnMaterial, StoreError> {
        check_material_code(code)?;
        let mut material = material.clone();
        material.key = code.to_string();
        material.name = material.name.trim().to_string();
        check_material(&material)?;
        let base = match base {
            Some(b) => Some(
                materials::find(b)
                    .ok_or_else(|| {
                        StoreError::invalid(
                            "base material",
                            format!(
                                "\"{b}\" is not in the library; expected one of {}",
                                materials::keys().join(", ")
                            ),
                        )
                    })?
                    .key,
            ),
            None => None,
        };
        let own = OwnMaterial {
            id: self.ids.uuid_v7(stamp.at.timestamp_millis()),
            code: code.to_string(),
            base,
            revision: 1,
            material,
        };
        self.write_one(stamp, |c, ch| {
            check_code_is_free(c, code)?;
            write_row(c, ch, None, &own, stamp)?;
            write_lookup(c, ch, code, &own.material.name, stamp)
        })?;
        self.load_lookups()?;
        Ok(own)
    }

    /// Replace an own material's constants, name and notes (its code and base stay) as its
    /// next revision. `expected_revision`, when given, must be the current one (an edit made
    /// on an older revision is refused). A library material cannot be changed.
    pub fn update_own_material(
        &mut self,
        code: &str,
        expected_revision: Option<i64>,
        material: &Material,
        stamp: &Stamp,
    ) -> Result<OwnMaterial, StoreError> {
        if let Some(m) = materials::find(code) {
            return Err(StoreError::invalid(
                "material code",
                format!(
                    "{} is a library material and cannot be changed; copy it with `shardlog materials add NEW_CODE --from {}`",
                    m.key, m.key
                ),
            ));
        }
        let mut material = material.clone();
        material.key = code.to_string();
        material.name = material.name.trim().to_string();
        check_material(&material)?;
        self.write_one(stamp, |c, ch| {
            let before = load_one(c, code)?.ok_or_else(|| {
                StoreError::invalid("material code", format!("no own material {code}"))
            })?;
            if let Some(r) = expected_revision.filter(|r| *r != before.revision) {
                return Err(StoreError::invalid(
                    "material",
                    format!("{code} was changed meanwhile (it is at revision {}, the edit was made on revision {r}); nothing was saved, reload and edit again", before.revision),
                ));
            }
            if before.material == material {
                return Ok(before);
            }
            let after = OwnMaterial {
                revision: before.revision + 1,
                material,
                ..before.clone()
            };
            write_row(c, ch, Some(&before), &after, stamp)?;
            write_lookup(c, ch, code, &after.material.name, stamp)?;
            Ok(after)
        })
    }
}

/// Take another bench's own material from the fleet (a pull): added when its code names
/// nothing here yet, or brought to the fleet's revision when this bench holds the same
/// material (same key, so it came by an earlier pull) at an older one. A material this bench
/// made itself under that code keeps its own. Returns whether anything was written.
pub(crate) fn put_pulled(
    conn: &Connection,
    chain: &mut Chain,
    pulled: &OwnMaterial,
    stamp: &Stamp,
) -> Result<bool, StoreError> {
    check_material_code(&pulled.code)?;
    check_material(&pulled.material)?;
    let here = load_one(conn, &pulled.code)?;
    match here {
        None => {
            check_code_is_free(conn, &pulled.code)?;
            write_row(conn, chain, None, pulled, stamp)?;
            write_lookup(conn, chain, &pulled.code, &pulled.material.name, stamp)?;
            Ok(true)
        }
        Some(h) if h.id == pulled.id && h.revision < pulled.revision => {
            write_row(conn, chain, Some(&h), pulled, stamp)?;
            write_lookup(conn, chain, &pulled.code, &pulled.material.name, stamp)?;
            Ok(true)
        }
        Some(_) => Ok(false),
    }
}
