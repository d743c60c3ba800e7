//! The texts a caller gives for fields ([`super::to_canonical_with_given`]): the audit image
//! of a record whose large parts were rendered beforehand.

use super::*;
use serde_json::json;

#[test]
fn given_texts_stand_in_for_their_fields_in_the_order_written() {
    let v = json!({"r": [
        {"analysis": {"b": 2.5, "a": 1}, "constants": {"k": 0.5}, "z": 1},
        {"analysis": {"c": "x"}, "constants": [1], "z": 2}
    ]});
    let bits = Numbers::BitPattern;
    // texts equal to what the fields hold: the same as the digested form
    let pin = |x: &Value| {
        format!(
            "\"sha256:{}\"",
            sha256_hex(value_to_canonical(x, bits).as_bytes())
        )
    };
    let (a0, a1) = (pin(&v["r"][0]["analysis"]), pin(&v["r"][1]["analysis"]));
    let (c0, c1) = (
        value_to_canonical(&v["r"][0]["constants"], bits),
        value_to_canonical(&v["r"][1]["constants"], bits),
    );
    let fields: [(&'static str, &[&str]); 2] = [
        ("analysis", &[a0.as_str(), a1.as_str()]),
        ("constants", &[c0.as_str(), c1.as_str()]),
    ];
    assert_eq!(
        to_canonical_with_given(&v, bits, &fields).unwrap(),
        to_canonical_with_digested_field(&v, bits, "analysis").unwrap()
    );
    // whatever the fields hold, the texts are written, in order
    let fields: [(&'static str, &[&str]); 1] = [("constants", &["7", "null"])];
    assert_eq!(
        to_canonical_with_given(&v, Numbers::Shortest, &fields).unwrap(),
        r#"{"r":[{"analysis":{"a":1,"b":2.5},"constants":7,"z":1},{"analysis":{"c":"x"},"constants":null,"z":2}]}"#
    );
    // too few or too many texts: an error, not a text
    let few: [(&'static str, &[&str]); 1] = [("z", &["3"])];
    assert!(to_canonical_with_given(&v, bits, &few).is_err());
    let many: [(&'static str, &[&str]); 1] = [("z", &["3", "4", "5"])];
    assert!(to_canonical_with_given(&v, bits, &many).is_err());
    // into a buffer kept by the caller: appended
    let mut out = String::from("[");
    to_canonical_into(&v["r"][1], bits, &mut out).unwrap();
    assert_eq!(out, r#"[{"analysis":{"c":"x"},"constants":[1],"z":2}"#);
}
