//! The fleet's read-table rows of one incident worked out from its image on the client, for a
//! bulk fill: the same values `fleet_facts_source` (schema/fleet/0005_read.sql) gives on the
//! server, without parsing every image again there. `verify` on the fleet compares the two.

use std::borrow::Cow;

use serde::Deserialize;
use serde_json::Value;

/// One incident's row of `fleet_facts` (without origin, owner and order, which the fill
/// knows) and the text whose words `fleet_search` holds (`to_tsvector('simple', text)`).
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct FactRow {
    pub reference: String,
    pub found_on: String,
    pub asset: Option<String>,
    pub position: String,
    pub site: Option<String>,
    pub product: Option<String>,
    pub supplier: Option<String>,
    pub lot: Option<String>,
    pub status: String,
    pub cause: Option<String>,
    pub origin_type: Option<String>,
    pub temper: Option<String>,
    pub stress_pa: Option<f64>,
    pub applied_stress_pa: Option<f64>,
    pub words: String,
}

/// The reference the fleet shows for an incident image of bench `origin`, as
/// `fleet_reference()` reads it: the text after the first `"reference":"` up to the next
/// quote, qualified by the bench when it is an uncoded `BR-YYMMDD-N…` reference.
pub(crate) fn fleet_reference(origin: &str, image: &str) -> String {
    const KEY: &str = "\"reference\":\"";
    let r = match image.find(KEY) {
        Some(at) => {
            let rest = &image[at + KEY.len()..];
            rest.split('"').next().unwrap_or("")
        }
        None => "",
    };
    if uncoded(r) {
        format!("{origin}/{r}")
    } else {
        r.to_string()
    }
}

/// `^BR-[0-9]{6}-[0-9]+$`
fn uncoded(r: &str) -> bool {
    let Some(rest) = r.strip_prefix("BR-") else {
        return false;
    };
    let b = rest.as_bytes();
    b.len() >= 8
        && b[..6].iter().all(u8::is_ascii_digit)
        && b[6] == b'-'
        && b[7..].iter().all(u8::is_ascii_digit)
}

/// A text the view reads with `->>`: borrowed from the image when it has no escapes.
#[derive(Debug, Clone, PartialEq)]
struct Text<'a>(Cow<'a, str>);

impl<'de: 'a, 'a> Deserialize<'de> for Text<'a> {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct Visit<'a>(std::marker::PhantomData<&'a ()>);
        impl<'de: 'a, 'a> serde::de::Visitor<'de> for Visit<'a> {
            type Value = Text<'a>;
            fn expecting(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
                f.write_str("a string")
            }
            fn visit_borrowed_str<E>(self, v: &'de str) -> Result<Text<'a>, E> {
                Ok(Text(Cow::Borrowed(v)))
            }
            fn visit_str<E>(self, v: &str) -> Result<Text<'a>, E> {
                Ok(Text(Cow::Owned(v.to_string())))
            }
            fn visit_string<E>(self, v: String) -> Result<Text<'a>, E> {
                Ok(Text(Cow::Owned(v)))
            }
        }
        d.deserialize_str(Visit(std::marker::PhantomData))
    }
}

type Field<'a> = Option<Text<'a>>;

/// What the view reads of an incident image. Read straight from the text when every part
/// read has the type the images give it (strings, objects, arrays; see [`fact_row`]), else
/// from a JSON value with the view's rules ([`Image::of_value`]).
#[derive(Debug, Default, Deserialize)]
struct Image<'a> {
    #[serde(borrow)]
    reference: Field<'a>,
    #[serde(borrow)]
    found_on: Field<'a>,
    #[serde(borrow)]
    asset: Field<'a>,
    #[serde(borrow)]
    position: Field<'a>,
    #[serde(borrow)]
    site: Field<'a>,
    #[serde(borrow)]
    status: Field<'a>,
    #[serde(borrow)]
    description: Field<'a>,
    #[serde(borrow)]
    notes: Field<'a>,
    #[serde(borrow)]
    reporter: Field<'a>,
    #[serde(borrow)]
    how_found: Field<'a>,
    #[serde(borrow)]
    glass: Option<GlassPart<'a>>,
    /// Present only when the image's cause is an object.
    #[serde(borrow)]
    cause: Option<CausePart<'a>>,
    #[serde(borrow)]
    examinations: Option<Vec<ExamPart<'a>>>,
    #[serde(borrow)]
    custody: Option<Vec<NotePart<'a>>>,
    #[serde(borrow)]
    attachments: Option<Vec<CaptionPart<'a>>>,
}

#[derive(Debug, Default, Deserialize)]
struct GlassPart<'a> {
    #[serde(borrow)]
    product: Field<'a>,
    #[serde(borrow)]
    supplier: Field<'a>,
    #[serde(borrow)]
    lot: Field<'a>,
    /// The first ply's temper (`plies->0->>'temper'`).
    #[serde(borrow)]
    plies: Option<Vec<PlyPart<'a>>>,
}

#[derive(Debug, Default, Deserialize)]
struct PlyPart<'a> {
    #[serde(borrow)]
    temper: Field<'a>,
}

#[derive(Debug, Default, Deserialize)]
struct CausePart<'a> {
    #[serde(borrow)]
    category: Field<'a>,
    #[serde(borrow)]
    note: Field<'a>,
    #[serde(borrow)]
    factors: Option<Vec<Field<'a>>>,
}

#[derive(Debug, Default, Deserialize)]
struct ExamPart<'a> {
    #[serde(borrow)]
    origin_type: Field<'a>,
    #[serde(borrow)]
    notes: Field<'a>,
    /// Present only when the examination's result is an object.
    #[serde(borrow)]
    result: Option<ResultPart<'a>>,
}

#[derive(Debug, Default, Deserialize)]
struct ResultPart<'a> {
    #[serde(borrow)]
    stress_pa: Field<'a>,
    #[serde(borrow)]
    applied_stress_pa: Field<'a>,
}

#[derive(Debug, Default, Deserialize)]
struct NotePart<'a> {
    #[serde(borrow)]
    note: Field<'a>,
}

#[derive(Debug, Default, Deserialize)]
struct CaptionPart<'a> {
    #[serde(borrow)]
    caption: Field<'a>,
}

/// `j->>'key'`: a string as it is, JSON null or a missing key as nothing, anything else as
/// its JSON text.
fn text_of(v: Option<&Value>) -> Field<'static> {
    match v {
        None | Some(Value::Null) => None,
        Some(Value::String(s)) => Some(Text(Cow::Owned(s.clone()))),
        Some(other) => Some(Text(Cow::Owned(other.to_string()))),
    }
}

/// The elements of `v` when it is an array (`jsonb_array_elements` of the view's CASE).
fn elements(v: Option<&Value>) -> &[Value] {
    match v {
        Some(Value::Array(a)) => a,
        _ => &[],
    }
}

impl Image<'static> {
    /// The parts of any JSON value as the view reads them: `->` of a key of something that
    /// is not an object is nothing, an array that is not one has no elements.
    fn of_value(j: &Value) -> Image<'static> {
        let at = |key: &str| text_of(j.get(key));
        let glass = j.get("glass");
        let in_glass = |key: &str| text_of(glass.and_then(|g| g.get(key)));
        let first_ply = glass.and_then(|g| g.get("plies")).and_then(|p| p.get(0));
        let cause = j.get("cause");
        Image {
            reference: at("reference"),
            found_on: at("found_on"),
            asset: at("asset"),
            position: at("position"),
            site: at("site"),
            status: at("status"),
            description: at("description"),
            notes: at("notes"),
            reporter: at("reporter"),
            how_found: at("how_found"),
            glass: Some(GlassPart {
                product: in_glass("product"),
                supplier: in_glass("supplier"),
                lot: in_glass("lot"),
                plies: Some(vec![PlyPart {
                    temper: text_of(first_ply.and_then(|p| p.get("temper"))),
                }]),
            }),
            cause: Some(CausePart {
                // the category only of a cause that is an object; its note and factors as
                // `j->'cause'->…` reads them
                category: text_of(
                    cause
                        .filter(|c| c.is_object())
                        .and_then(|c| c.get("category")),
                ),
                note: text_of(cause.and_then(|c| c.get("note"))),
                factors: Some(
                    elements(cause.and_then(|c| c.get("factors")))
                        .iter()
                        .map(|f| text_of(Some(f)))
                        .collect(),
                ),
            }),
            examinations: Some(
                elements(j.get("examinations"))
                    .iter()
                    .map(|e| ExamPart {
                        origin_type: text_of(e.get("origin_type")),
                        notes: text_of(e.get("notes")),
                        result: e
                            .get("result")
                            .filter(|r| r.is_object())
                            .map(|r| ResultPart {
                                stress_pa: text_of(r.get("stress_pa")),
                                applied_stress_pa: text_of(r.get("applied_stress_pa")),
                            }),
                    })
                    .collect(),
            ),
            custody: Some(
                elements(j.get("custody"))
                    .iter()
                    .map(|c| NotePart {
                        note: text_of(c.get("note")),
                    })
                    .collect(),
            ),
            attachments: Some(
                elements(j.get("attachments"))
                    .iter()
                    .map(|a| CaptionPart {
                        caption: text_of(a.get("caption")),
                    })
                    .collect(),
            ),
        }
    }
}

/// A number as the images write it (`f64:` and 16 hex digits of its bits), as `fleet_f64`.
fn f64_of(v: &Field<'_>) -> Option<f64> {
    let t = v.as_ref()?.0.as_ref();
    let hex = t.strip_prefix("f64:")?;
    if hex.len() != 16
        || !hex
            .bytes()
            .all(|c| c.is_ascii_digit() || (b'a'..=b'f').contains(&c))
    {
        return None;
    }
    u64::from_str_radix(hex, 16).ok().map(f64::from_bits)
}

fn owned(v: &Field<'_>) -> Option<String> {
    v.as_ref().map(|t| t.0.to_string())
}

/// `string_agg` of the texts (nothing for none).
fn joined<'t>(texts: impl Iterator<Item = &'t Field<'t>>) -> Option<String> {
    let all: Vec<&str> = texts.flatten().map(|t| t.0.as_ref()).collect();
    (!all.is_empty()).then(|| all.join(" "))
}

/// The read-table row of an incident image of bench `origin` (None when the view leaves it
/// out: no image, an empty one, or one without a found date).
pub(crate) fn fact_row(origin: &str, image: &str) -> Result<Option<FactRow>, serde_json::Error> {
    if image.is_empty() {
        return Ok(None);
    }
    // jsonb holds no NUL character: the view reads an escaped one as the symbol showing it
    let text: Cow<'_, str> = if image.contains("\\u0000") {
        Cow::Owned(image.replace("\\u0000", "\\u2400"))
    } else {
        Cow::Borrowed(image)
    };
    // The parts as the images give them read straight from the text; anything else (another
    // type, a key twice) through a JSON value, read by the view's rules.
    let value;
    let j = match serde_json::from_str::<Image<'_>>(&text) {
        Ok(j) => j,
        Err(_) => {
            value = serde_json::from_str::<Value>(&text)?;
            Image::of_value(&value)
        }
    };
    Ok(row_of(origin, image, &j))
}

/// The row of the parts read (None without a found date).
fn row_of(origin: &str, image: &str, j: &Image<'_>) -> Option<FactRow> {
    let found_on = owned(&j.found_on)?;
    let exams: &[ExamPart<'_>] = j.examinations.as_deref().unwrap_or_default();
    let current = exams.iter().rev().find(|e| e.result.is_some());
    let origin_type = current
        .and_then(|c| owned(&c.origin_type))
        .or_else(|| exams.iter().rev().find_map(|e| owned(&e.origin_type)));
    let glass = j.glass.as_ref();
    let result = current.and_then(|c| c.result.as_ref());
    let cause = j.cause.as_ref();
    let reference = fleet_reference(origin, image);
    let none = None;
    let words = [
        owned(&j.reference),
        Some(reference.clone()),
        owned(&j.position),
        owned(&j.description),
        owned(&j.notes),
        owned(&j.asset),
        owned(&j.reporter),
        owned(&j.how_found),
        owned(cause.map_or(&none, |c| &c.note)),
        joined(
            cause
                .and_then(|c| c.factors.as_deref())
                .unwrap_or_default()
                .iter(),
        ),
        joined(exams.iter().map(|e| &e.notes)),
        joined(
            j.custody
                .as_deref()
                .unwrap_or_default()
                .iter()
                .map(|c| &c.note),
        ),
        joined(
            j.attachments
                .as_deref()
                .unwrap_or_default()
                .iter()
                .map(|a| &a.caption),
        ),
    ]
    .into_iter()
    .flatten()
    .collect::<Vec<_>>()
    .join(" ");
    let first_ply = glass
        .and_then(|g| g.plies.as_deref())
        .and_then(<[_]>::first);
    Some(FactRow {
        reference,
        found_on,
        asset: owned(&j.asset),
        position: owned(&j.position).unwrap_or_default(),
        site: owned(&j.site),
        product: glass.and_then(|g| owned(&g.product)),
        supplier: glass.and_then(|g| owned(&g.supplier)),
        lot: glass.and_then(|g| owned(&g.lot)),
        status: owned(&j.status).unwrap_or_default(),
        cause: cause.and_then(|c| owned(&c.category)),
        origin_type,
        temper: first_ply.and_then(|p| owned(&p.temper)),
        stress_pa: result.and_then(|r| f64_of(&r.stress_pa)),
        applied_stress_pa: result.and_then(|r| f64_of(&r.applied_stress_pa)),
        words,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_reference_is_read_and_qualified_as_the_fleet_does() {
        assert_eq!(
            fleet_reference(
                "WEST",
                r#"{"asset":"x","reference":"BR-260314-0007","z":1}"#
            ),
            "WEST/BR-260314-0007"
        );
        assert_eq!(
            fleet_reference("WEST", r#"{"reference":"NORTH-260314-0007"}"#),
            "NORTH-260314-0007"
        );
        assert_eq!(
            fleet_reference("WEST", r#"{"reference":"BR-2603-1"}"#),
            "BR-2603-1"
        );
        assert_eq!(fleet_reference("WEST", "{}"), "");
    }

    #[test]
    fn numbers_are_read_bit_for_bit() {
        let t = |s: String| Some(Text(Cow::Owned(s)));
        assert_eq!(
            f64_of(&t(format!("f64:{:016x}", 41.5e6f64.to_bits()))),
            Some(41.5e6)
        );
        assert_eq!(f64_of(&t("f64:12".into())), None);
        assert_eq!(f64_of(&t("f64:ABCDEF0123456789".into())), None);
    }

    /// The row by the view's rules from a JSON value (the way any image can be read).
    fn by_value(origin: &str, image: &str) -> Option<FactRow> {
        let text = image.replace("\\u0000", "\\u2400");
        let v: Value = serde_json::from_str(&text).expect("JSON");
        row_of(origin, image, &Image::of_value(&v))
    }

    /// An image with every part the view reads, escapes, nulls, a result that is null, and an
    /// examination after the one with the result.
    fn full_image() -> String {
        let stress = format!("f64:{:016x}", 41.5e6f64.to_bits());
        format!(
            r#"{{"asset":"car 101","attachments":[{{"caption":"edge, \"close\" up","sha256":"ab"}},{{"caption":null}}],"cause":{{"category":"impact","factors":["ballast",null,"speed"],"note":"stone\nstrike"}},"custody":[{{"note":""}},{{"note":"kept \u0000 here"}}],"description":"d","examinations":[{{"notes":"first","origin_type":"edge","result":null}},{{"notes":"second","origin_type":null,"result":{{"analysis":"sha256:00","applied_stress_pa":null,"stress_pa":"{stress}"}}}},{{"notes":"third","origin_type":"surface","readings":[{{"radius":{{"value":"f64:3f50624dd2f1a9fc"}}}}]}}],"found_on":"2026-03-14","glass":{{"lot":"L1","plies":[{{"temper":"annealed"}},{{"temper":"fully_tempered"}}],"product":"P","supplier":"S"}},"how_found":"h","notes":"n","position":"left","reference":"BR-260314-0007","reporter":"r","revision":1,"site":"WEST","status":"open"}}"#
        )
    }

    #[test]
    fn an_image_read_straight_gives_the_row_its_json_value_gives() {
        let image = full_image();
        let text = image.replace("\\u0000", "\\u2400");
        assert!(
            serde_json::from_str::<Image<'_>>(&text).is_ok(),
            "read straight"
        );
        let row = fact_row("WEST", &image).expect("read").expect("a row");
        assert_eq!(Some(row.clone()), by_value("WEST", &image));
        assert_eq!(row.reference, "WEST/BR-260314-0007");
        // the examination with a result counts; its own origin type is null, so the last
        // examination that names one gives it
        assert_eq!(row.origin_type.as_deref(), Some("surface"));
        assert_eq!(row.stress_pa, Some(41.5e6));
        assert_eq!(row.applied_stress_pa, None);
        assert_eq!(row.temper.as_deref(), Some("annealed"));
        assert_eq!(row.cause.as_deref(), Some("impact"));
        assert_eq!(
            row.words,
            "BR-260314-0007 WEST/BR-260314-0007 left d n car 101 r h stone\nstrike \
             ballast speed first second third  kept \u{2400} here edge, \"close\" up"
        );
    }

    #[test]
    fn parts_of_other_types_are_read_as_the_view_reads_them() {
        // a number where a text is, a cause that is not an object, a key twice (the last
        // counts, as in jsonb), an examination whose result is not an object
        let image = r#"{"asset":7,"cause":"weather","found_on":"2026-01-01","found_on":"2026-01-02","examinations":[{"origin_type":"edge","result":"none"}],"glass":{"plies":[]},"status":"open"}"#;
        assert!(serde_json::from_str::<Image<'_>>(image).is_err());
        let row = fact_row("B01", image).expect("read").expect("a row");
        assert_eq!(Some(row.clone()), by_value("B01", image));
        assert_eq!(row.found_on, "2026-01-02");
        assert_eq!(row.asset.as_deref(), Some("7"));
        assert_eq!(row.cause, None);
        assert_eq!(row.origin_type.as_deref(), Some("edge"));
        assert_eq!(row.stress_pa, None);
        assert_eq!(row.temper, None);
        assert_eq!(row.words, " 7");
    }

    #[test]
    fn an_image_without_a_found_date_has_no_row() {
        assert_eq!(fact_row("B01", "").expect("read"), None);
        assert_eq!(
            fact_row("B01", r#"{"found_on":null,"status":"open"}"#).expect("read"),
            None
        );
        assert!(fact_row("B01", "{").is_err());
    }
}
