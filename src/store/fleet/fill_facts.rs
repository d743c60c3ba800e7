//! The fleet's read-table rows of one incident worked out from its image on the client, for a
//! bulk fill: the same values `fleet_facts_source` (schema/fleet/0005_read.sql) gives on the
//! server, without parsing every image again there. `verify` on the fleet compares the two.

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

/// `j->>'key'`: a string as it is, JSON null or a missing key as nothing, anything else as
/// its JSON text.
fn text_of(v: Option<&Value>) -> Option<String> {
    match v {
        None | Some(Value::Null) => None,
        Some(Value::String(s)) => Some(s.clone()),
        Some(other) => Some(other.to_string()),
    }
}

/// The elements of `v` when it is an array (`jsonb_array_elements` of the view's CASE).
fn elements(v: Option<&Value>) -> &[Value] {
    match v {
        Some(Value::Array(a)) => a,
        _ => &[],
    }
}

/// A number as the images write it (`f64:` and 16 hex digits of its bits), as `fleet_f64`.
fn f64_of(v: Option<&Value>) -> Option<f64> {
    let t = v?.as_str()?;
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

/// `string_agg` of the texts (nothing for none).
fn joined(texts: impl Iterator<Item = Option<String>>) -> Option<String> {
    let all: Vec<String> = texts.flatten().collect();
    (!all.is_empty()).then(|| all.join(" "))
}

/// The read-table row of an incident image of bench `origin` (None when the view leaves it
/// out: no image, an empty one, or one without a found date).
pub(crate) fn fact_row(origin: &str, image: &str) -> Result<Option<FactRow>, serde_json::Error> {
    if image.is_empty() {
        return Ok(None);
    }
    // jsonb holds no NUL character: the view reads an escaped one as the symbol showing it
    let j: Value = if image.contains("\\u0000") {
        serde_json::from_str(&image.replace("\\u0000", "\\u2400"))?
    } else {
        serde_json::from_str(image)?
    };
    let Some(found_on) = text_of(j.get("found_on")) else {
        return Ok(None);
    };
    let exams = elements(j.get("examinations"));
    let current = exams
        .iter()
        .rev()
        .find(|e| e.get("result").is_some_and(Value::is_object));
    let origin_type = current
        .and_then(|c| text_of(c.get("origin_type")))
        .or_else(|| {
            exams
                .iter()
                .rev()
                .find_map(|e| text_of(e.get("origin_type")))
        });
    let glass = j.get("glass");
    let result = current.and_then(|c| c.get("result"));
    let cause = j.get("cause").filter(|c| c.is_object());
    let reference = fleet_reference(origin, image);
    let factors = joined(
        elements(j.get("cause").and_then(|c| c.get("factors")))
            .iter()
            .map(|f| text_of(Some(f))),
    );
    let words = [
        text_of(j.get("reference")),
        Some(reference.clone()),
        text_of(j.get("position")),
        text_of(j.get("description")),
        text_of(j.get("notes")),
        text_of(j.get("asset")),
        text_of(j.get("reporter")),
        text_of(j.get("how_found")),
        text_of(j.get("cause").and_then(|c| c.get("note"))),
        factors,
        joined(exams.iter().map(|e| text_of(e.get("notes")))),
        joined(
            elements(j.get("custody"))
                .iter()
                .map(|c| text_of(c.get("note"))),
        ),
        joined(
            elements(j.get("attachments"))
                .iter()
                .map(|a| text_of(a.get("caption"))),
        ),
    ]
    .into_iter()
    .flatten()
    .collect::<Vec<_>>()
    .join(" ");
    Ok(Some(FactRow {
        reference,
        found_on,
        asset: text_of(j.get("asset")),
        position: text_of(j.get("position")).unwrap_or_default(),
        site: text_of(j.get("site")),
        product: text_of(glass.and_then(|g| g.get("product"))),
        supplier: text_of(glass.and_then(|g| g.get("supplier"))),
        lot: text_of(glass.and_then(|g| g.get("lot"))),
        status: text_of(j.get("status")).unwrap_or_default(),
        cause: cause.and_then(|c| text_of(c.get("category"))),
        origin_type,
        temper: text_of(
            glass
                .and_then(|g| g.get("plies"))
                .and_then(|p| p.get(0))
                .and_then(|p| p.get("temper")),
        ),
        stress_pa: f64_of(result.and_then(|r| r.get("stress_pa"))),
        applied_stress_pa: f64_of(result.and_then(|r| r.get("applied_stress_pa"))),
        words,
    }))
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
        let v = Value::String(format!("f64:{:016x}", 41.5e6f64.to_bits()));
        assert_eq!(f64_of(Some(&v)), Some(41.5e6));
        assert_eq!(f64_of(Some(&Value::String("f64:12".into()))), None);
        assert_eq!(
            f64_of(Some(&Value::String("f64:ABCDEF0123456789".into()))),
            None
        );
    }
}
