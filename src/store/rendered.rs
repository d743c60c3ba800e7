//! A computed result rendered for storage straight from the fracture core's `Analysis`: the
//! two stored JSON texts (the analysis, with what an import adds to it, and the constants)
//! and what the audit image takes of them (the constants' canonical text, the analysis'
//! digest), written by serde into a reused buffer without a `serde_json::Value` tree. The
//! texts are byte for byte those of `analysis::to_result` stored through a value tree (the
//! tests below compare them). Pure: no database here.

use std::collections::BTreeMap;

use serde::Serialize;
use shardlog_core::canonical::{self, Numbers};
use shardlog_core::fracture::{Analysis, AnalysisInput, ConstantUsed, Material, Residual};

use super::canon;
use super::model::ComputedResult;
use super::own_materials::MaterialBook;

/// A result's two stored texts and what the audit image takes of them.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RenderedResult {
    /// `constants_json` as stored.
    pub constants: String,
    /// `analysis_json` as stored.
    pub analysis: String,
    /// The constants as the audit image writes them (canonical, floats as bit patterns).
    pub constants_image: String,
    /// The analysis as the audit image pins it: `"sha256:<hex>"`, a JSON string literal.
    pub analysis_pin: String,
}

/// The own material kept beside an analysis (`analysis::keep_own_material`).
#[derive(Serialize)]
struct OwnMaterialView<'a> {
    code: &'a str,
    revision: i64,
    material: &'a Material,
}

/// The stored analysis: the core's, with the own material it used and where it came from.
#[derive(Serialize)]
struct StoredAnalysis<'a> {
    #[serde(flatten)]
    analysis: &'a Analysis,
    #[serde(skip_serializing_if = "Option::is_none")]
    own_material: Option<OwnMaterialView<'a>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    source: Option<&'a str>,
}

/// One entry of the stored constants: a constant used, or the residual stress.
#[derive(Serialize)]
#[serde(untagged)]
enum ConstantEntry<'a> {
    Used(&'a ConstantUsed),
    Residual(&'a Residual),
}

/// The stored constants, by name, as `analysis::to_result` gathers them (a later entry of
/// the same name replaces an earlier one).
fn constants_view(a: &Analysis) -> BTreeMap<&str, ConstantEntry<'_>> {
    let mut m = BTreeMap::new();
    for b in &a.boundaries {
        m.insert(b.constant.symbol.as_str(), ConstantEntry::Used(&b.constant));
    }
    if let Some(f) = &a.flaw {
        m.insert(
            f.toughness.symbol.as_str(),
            ConstantEntry::Used(&f.toughness),
        );
    }
    m.insert("residual", ConstantEntry::Residual(&a.residual));
    m
}

/// The canonical text of `v` by `numbers`, rendered in `scratch` and copied out at its size.
fn text<T: Serialize>(
    v: &T,
    numbers: Numbers,
    scratch: &mut String,
) -> Result<String, serde_json::Error> {
    scratch.clear();
    canonical::to_canonical_into(v, numbers, scratch)?;
    Ok(scratch.as_str().to_owned())
}

/// `"sha256:<hex>"` (with its quotes) of the canonical text of `v`, floats as bit patterns.
fn pin<T: Serialize>(v: &T, scratch: &mut String) -> Result<String, serde_json::Error> {
    scratch.clear();
    canonical::to_canonical_into(v, Numbers::BitPattern, scratch)?;
    Ok(format!(
        "\"sha256:{}\"",
        canonical::sha256_hex(scratch.as_bytes())
    ))
}

/// `analysis` rendered as `analysis::to_result` and `keep_own_material` store it (computed
/// with `input`; the own material of `book` it used is kept beside it), with `source` added
/// when given (an import says where its results came from). `scratch` is a buffer the
/// caller keeps from one result to the next.
pub(crate) fn render(
    analysis: &Analysis,
    input: &AnalysisInput,
    book: &MaterialBook,
    source: Option<&str>,
    scratch: &mut String,
) -> Result<RenderedResult, serde_json::Error> {
    let stored = StoredAnalysis {
        analysis,
        own_material: book.own(&input.material.key).map(|o| OwnMaterialView {
            code: &o.code,
            revision: o.revision,
            material: &input.material,
        }),
        source,
    };
    let constants = constants_view(analysis);
    Ok(RenderedResult {
        constants: text(&constants, Numbers::Shortest, scratch)?,
        analysis: text(&stored, Numbers::Shortest, scratch)?,
        constants_image: text(&constants, Numbers::BitPattern, scratch)?,
        analysis_pin: pin(&stored, scratch)?,
    })
}

/// The same texts of a result held as JSON values (one read from a file, not computed here).
pub(crate) fn from_values(r: &ComputedResult) -> Result<RenderedResult, serde_json::Error> {
    Ok(RenderedResult {
        constants: serde_json::to_string(&r.constants)?,
        analysis: serde_json::to_string(&r.analysis)?,
        constants_image: canon::canonical_value(&r.constants),
        analysis_pin: format!(
            "\"sha256:{}\"",
            canon::sha256_hex(canon::canonical_value(&r.analysis).as_bytes())
        ),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::store::analysis;
    use crate::store::exchange::onepass::COMPUTED_ON_IMPORT;
    use crate::store::model::Incident;
    use crate::store::own_materials::OwnMaterial;

    /// `inc` with one result only, `result`, on examination `i`.
    fn holding(inc: &Incident, i: usize, result: ComputedResult) -> Incident {
        let mut one = inc.clone();
        for (k, e) in one.examinations.iter_mut().enumerate() {
            e.result = (k == i).then(|| result.clone());
        }
        one
    }

    /// Every examination with readings of a demo fleet, computed as the bench computes it and
    /// stored by the value path (`to_result`, `keep_own_material`, the import's `source`),
    /// against the texts rendered here: the same bytes, and the same audit image.
    #[test]
    fn rendered_texts_are_the_value_paths_bytes() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("d.db");
        crate::demo::generate(
            &path,
            &crate::demo::DemoOptions {
                incidents: 150,
                seed: 9,
            },
        )
        .unwrap();
        let s = crate::store::Store::open_existing(&path).unwrap();
        let doc = s.export_doc(&crate::store::Filter::default()).unwrap();
        // an own material too: its constants are kept beside the analysis
        let mut own_mat = shardlog_core::fracture::materials::find("soda-lime").unwrap();
        own_mat.key = "lab_float".into();
        let own = OwnMaterial {
            id: "x".into(),
            code: "lab_float".into(),
            base: Some("soda_lime".into()),
            revision: 3,
            material: own_mat,
        };
        let books = [MaterialBook::new(Vec::new()), MaterialBook::new(vec![own])];
        let at = chrono::DateTime::parse_from_rfc3339("2026-11-02T08:00:00Z")
            .unwrap()
            .with_timezone(&chrono::Utc);
        let mut scratch = String::new();
        let (mut compared, mut own_kept) = (0, 0);
        for (k, book) in books.iter().enumerate() {
            for inc in &doc.incidents {
                let mut inc = inc.clone();
                if k == 1 {
                    for e in &mut inc.examinations {
                        e.material = Some("lab_float".into());
                    }
                }
                for (i, exam) in inc.examinations.iter().enumerate() {
                    let Ok(input) = analysis::analysis_input(&inc, exam, book) else {
                        continue;
                    };
                    let Ok(a) = shardlog_core::fracture::analyze(&input) else {
                        continue;
                    };
                    for source in [None, Some(COMPUTED_ON_IMPORT)] {
                        let mut old = analysis::to_result(&a, at).unwrap();
                        analysis::keep_own_material(&mut old, &input, book);
                        if let (Some(src), serde_json::Value::Object(map)) =
                            (source, &mut old.analysis)
                        {
                            map.insert("source".to_string(), src.into());
                        }
                        let new = render(&a, &input, book, source, &mut scratch).unwrap();
                        assert_eq!(new, from_values(&old).unwrap());
                        assert_eq!(new.analysis, serde_json::to_string(&old.analysis).unwrap());
                        assert_eq!(
                            new.constants,
                            serde_json::to_string(&old.constants).unwrap()
                        );
                        own_kept += new.analysis.contains("\"own_material\":{") as usize;
                        // the audit image of a record holding it, and of one holding its
                        // figures only with the rendered texts given
                        let image = canon::incident_image(&holding(&inc, i, old.clone())).unwrap();
                        let figures = ComputedResult {
                            constants: serde_json::Value::Null,
                            analysis: serde_json::Value::Null,
                            ..old
                        };
                        let given =
                            canon::incident_image_rendered(&holding(&inc, i, figures), &[&new])
                                .unwrap();
                        assert_eq!(given, image);
                        compared += 1;
                    }
                }
            }
        }
        assert!(compared > 200, "{compared}");
        assert!(own_kept > 100, "{own_kept}");
    }
}
