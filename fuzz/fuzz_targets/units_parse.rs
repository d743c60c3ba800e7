//! The quantity parser on arbitrary text: every dimension, every entry point.
//! Properties: never panics; an accepted quantity is finite, carries a unit of the asked
//! dimension, respects the sign rule of its entry point, and `format_exact` of it parses back
//! to (nearly) the same SI value in the same unit.
#![no_main]

use libfuzzer_sys::fuzz_target;
use shardlog_core::units::{self, Dimension, Unit};

const DIMENSIONS: [Dimension; 9] = [
    Dimension::Length,
    Dimension::Stress,
    Dimension::Toughness,
    Dimension::Mass,
    Dimension::Speed,
    Dimension::Time,
    Dimension::Force,
    Dimension::TemperatureDifference,
    Dimension::Energy,
];

fn close(a: f64, b: f64) -> bool {
    a == b || (a - b).abs() <= 1e-12 * a.abs().max(b.abs()) || (a - b).abs() < 1e-300
}

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Ok(v) = units::parse_number(text) {
        assert!(v.is_finite(), "parse_number({text:?}) gave {v}");
    }
    for dim in DIMENSIONS {
        match units::parse_with_unit(text, dim) {
            Ok((si, unit)) => {
                assert!(si.is_finite(), "parse({text:?}, {dim}) gave {si}");
                assert_eq!(unit.dimension(), dim, "{text:?}");
                // the text written for machines reads back as the same value
                let exact = units::format_exact(si, unit);
                match units::parse_with_unit(&exact, dim) {
                    Ok((back, u2)) => {
                        assert_eq!(u2, unit, "{text:?} -> {exact:?}");
                        assert!(close(si, back), "{text:?} -> {exact:?} -> {back} (was {si})");
                    }
                    // a value near the top of f64 may not survive the unit's division
                    Err(e) => assert!(
                        !unit.from_si(si).is_finite() || si.abs() > 1e300,
                        "{text:?} -> {exact:?} refused: {e}"
                    ),
                }
                // the display text never says NaN or inf
                for u in dim.units() {
                    let shown = units::format(si, u);
                    assert!(!shown.contains("NaN") && !shown.contains("inf"), "{shown}");
                }
            }
            Err(e) => {
                // every refusal is a sentence, never empty
                assert!(!e.to_string().is_empty());
            }
        }
        if let Ok(v) = units::parse_positive(text, dim) {
            assert!(v.is_finite() && v > 0.0, "parse_positive({text:?}) gave {v}");
        }
        if let Ok(v) = units::parse_non_negative(text, dim) {
            assert!(v.is_finite() && v >= 0.0, "parse_non_negative({text:?}) gave {v}");
        }
    }
    let _ = Unit::lookup(text);
});
