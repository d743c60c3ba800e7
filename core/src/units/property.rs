//! The material properties a lab types beside its constants that are not quantities of the
//! bench's dimensions: the linear expansion coefficient (1/K), the density (kg/m³) and
//! Poisson's ratio (a plain number). Each is read with its unit where it has one, turned
//! into SI once, and refused outside its physical range, as [`super::parse_with_unit`] does
//! for the rest.
//!
//! | property | magnitude up to | basis |
//! |---|---|---|
//! | expansion coefficient | 1e-3 /K | ten times the most expansive polymers; glasses and ceramics sit near 1e-6 to 1e-5 /K |
//! | density | 30 000 kg/m³ | above the densest element (about 22 600 kg/m³) |
//! | Poisson's ratio | −1 to 0.5 | the bounds of an isotropic elastic solid (common practice) |
//! | Young's modulus | 2000 GPa | about twice diamond's (about 1050 GPa, from memory); dense alumina is 380 GPa, above the 100 GPa range of a stress |

use super::{split_number, Dimension, Unit, UnitError};

/// A property typed with a unit: its name, an example, its units (spelling → factor to SI)
/// and the largest magnitude.
struct Property {
    name: &'static str,
    example: &'static str,
    units: &'static [(&'static str, f64)],
    shown: &'static str,
    max: f64,
    range: &'static str,
}

const EXPANSION: Property = Property {
    name: "expansion coefficient",
    example: "9e-6/K",
    units: &[
        ("/K", 1.0),
        ("1/K", 1.0),
        ("K^-1", 1.0),
        ("/°C", 1.0),
        ("1/°C", 1.0),
        ("/degC", 1.0),
        ("ppm/K", 1e-6),
        ("ppm/°C", 1e-6),
        ("ppm/degC", 1e-6),
        ("1e-6/K", 1e-6),
        ("10^-6/K", 1e-6),
    ],
    shown: "/K, ppm/K, /°C, ppm/°C",
    max: 1e-3,
    range: "up to 0.001 /K",
};

const DENSITY: Property = Property {
    name: "density",
    example: "2500 kg/m³",
    units: &[
        ("kg/m^3", 1.0),
        ("kg/m3", 1.0),
        ("g/cm^3", 1000.0),
        ("g/cm3", 1000.0),
        ("g/cc", 1000.0),
    ],
    shown: "kg/m³, g/cm³",
    max: 3e4,
    range: "up to 30000 kg/m³",
};

fn normalise(unit: &str) -> String {
    let mut out = String::new();
    for ch in unit.trim().chars() {
        match ch {
            ' ' | '\t' | '·' | '*' => {}
            '³' => out.push_str("^3"),
            '⁻' => out.push_str("^-"),
            '¹' => out.push('1'),
            '⁶' => out.push('6'),
            'µ' | 'μ' => out.push('u'),
            c => out.push(c),
        }
    }
    out
}

fn parse_property(input: &str, p: &Property) -> Result<f64, UnitError> {
    let text = input.trim();
    if text.is_empty() {
        return Err(UnitError::Empty {
            dim: p.name,
            example: p.example,
        });
    }
    let (number, unit) = split_number(text);
    if number.contains(',') {
        return Err(UnitError::DecimalComma {
            input: text.to_string(),
            suggestion: format!("{}{unit}", number.replace(',', ".")),
        });
    }
    let value: f64 = number
        .parse()
        .ok()
        .filter(|_| number.bytes().any(|b| b.is_ascii_digit()))
        .ok_or_else(|| UnitError::NotANumber {
            input: text.to_string(),
            dim: p.name,
            example: p.example,
        })?;
    if unit.is_empty() {
        return Err(UnitError::MissingUnit {
            input: text.to_string(),
            dim: p.name,
            example: p.example,
            units: p.shown.to_string(),
        });
    }
    let key = normalise(unit);
    let factor = p
        .units
        .iter()
        .find(|(spelling, _)| spelling.eq_ignore_ascii_case(&key))
        .map(|(_, f)| *f)
        .ok_or_else(|| UnitError::WrongUnit {
            input: text.to_string(),
            unit: unit.to_string(),
            dim: p.name,
            units: p.shown.to_string(),
        })?;
    let si = value * factor;
    if !si.is_finite() {
        return Err(UnitError::NotFinite {
            input: text.to_string(),
        });
    }
    if si.abs() > p.max {
        return Err(UnitError::OutOfRange {
            input: text.to_string(),
            dim: p.name,
            range: p.range.to_string(),
        });
    }
    Ok(si)
}

/// A linear expansion coefficient, 1/K (`9e-6/K`, `9 ppm/K`, `3.3e-6 /°C`). May be zero or
/// negative (near-zero-expansion glass-ceramics).
pub fn parse_expansion(input: &str) -> Result<f64, UnitError> {
    parse_property(input, &EXPANSION)
}

/// A density, kg/m³ (`2500 kg/m³`, `2.5 g/cm³`), greater than zero.
pub fn parse_density(input: &str) -> Result<f64, UnitError> {
    let si = parse_property(input, &DENSITY)?;
    if si <= 0.0 {
        return Err(UnitError::NotPositive {
            input: input.trim().to_string(),
        });
    }
    Ok(si)
}

/// The largest Young's modulus accepted, Pa.
pub const MAX_MODULUS: f64 = 2e12;

/// Young's modulus, Pa, typed in a unit of stress (`70 GPa`, `10.2e6 psi`), greater than zero
/// and up to 2000 GPa (a modulus is larger than any stress a part bears, so the stress range
/// does not apply).
pub fn parse_modulus(input: &str) -> Result<f64, UnitError> {
    // within the stress range the ordinary reading applies, with all its messages
    match super::parse_positive(input, Dimension::Stress) {
        Err(UnitError::OutOfRange { .. }) => {}
        other => return other,
    }
    let text = input.trim();
    let (number, unit) = split_number(text);
    let value: f64 = number.parse().map_err(|_| UnitError::NotANumber {
        input: text.to_string(),
        dim: "Young's modulus",
        example: "70GPa",
    })?;
    let si = Unit::lookup(unit)
        .filter(|u| u.dimension() == Dimension::Stress)
        .map(|u| u.to_si(value))
        .ok_or_else(|| UnitError::WrongUnit {
            input: text.to_string(),
            unit: unit.to_string(),
            dim: "Young's modulus",
            units: "GPa, MPa, psi, ksi".to_string(),
        })?;
    if !(si > 0.0 && si <= MAX_MODULUS) {
        return Err(UnitError::OutOfRange {
            input: text.to_string(),
            dim: "Young's modulus",
            range: "more than 0, up to 2000 GPa".to_string(),
        });
    }
    Ok(si)
}

/// Poisson's ratio: a plain number from −1 to 0.5.
pub fn parse_poisson(input: &str) -> Result<f64, UnitError> {
    let text = input.trim();
    let not_a_number = || UnitError::NotANumber {
        input: text.to_string(),
        dim: "Poisson's ratio",
        example: "0.22",
    };
    if text.is_empty() {
        return Err(UnitError::Empty {
            dim: "Poisson's ratio",
            example: "0.22",
        });
    }
    if text.contains(',') {
        return Err(UnitError::DecimalComma {
            input: text.to_string(),
            suggestion: text.replace(',', "."),
        });
    }
    let value: f64 = text.parse().map_err(|_| not_a_number())?;
    if !value.is_finite() {
        return Err(UnitError::NotFinite {
            input: text.to_string(),
        });
    }
    if !(-1.0..=0.5).contains(&value) {
        return Err(UnitError::OutOfRange {
            input: text.to_string(),
            dim: "Poisson's ratio",
            range: "-1 to 0.5".to_string(),
        });
    }
    Ok(value)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn expansion_in_its_usual_spellings() {
        // computed: 9 ppm/K = 9 × 10⁻⁶ /K
        for text in [
            "9e-6/K",
            "9e-6 1/K",
            "9 ppm/K",
            "9e-6 K⁻¹",
            "9 ppm/°C",
            "9e-6 /degC",
        ] {
            let si = parse_expansion(text).unwrap_or_else(|e| panic!("{text}: {e}"));
            assert!((si - 9e-6).abs() < 1e-15, "{text}: {si}");
        }
        assert_eq!(parse_expansion("0 /K"), Ok(0.0));
        assert!(parse_expansion("-0.1 ppm/K").is_ok_and(|v| v < 0.0));
        assert!(matches!(
            parse_expansion("9e-6"),
            Err(UnitError::MissingUnit { .. })
        ));
        assert!(matches!(
            parse_expansion("9 MPa"),
            Err(UnitError::WrongUnit { .. })
        ));
        assert!(matches!(
            parse_expansion("9 /K"),
            Err(UnitError::OutOfRange { .. })
        ));
    }

    #[test]
    fn density_and_poisson() {
        // computed: 1 g/cm³ = 1000 kg/m³
        assert_eq!(parse_density("2.5 g/cm³"), Ok(2500.0));
        assert_eq!(parse_density("2500 kg/m^3"), Ok(2500.0));
        assert!(matches!(
            parse_density("0 kg/m3"),
            Err(UnitError::NotPositive { .. })
        ));
        assert!(matches!(
            parse_density("2500 g/cm3"),
            Err(UnitError::OutOfRange { .. })
        ));
        assert!(matches!(
            parse_density("2,5 g/cm3"),
            Err(UnitError::DecimalComma { .. })
        ));
        // dense alumina, 380 GPa (the library's value), is above the stress range
        assert_eq!(parse_modulus("380 GPa"), Ok(380e9));
        assert_eq!(parse_modulus("70GPa"), Ok(70e9));
        assert!(matches!(
            parse_modulus("3000 GPa"),
            Err(UnitError::OutOfRange { .. })
        ));
        assert!(matches!(
            parse_modulus("70"),
            Err(UnitError::MissingUnit { .. })
        ));
        assert_eq!(parse_poisson("0.22"), Ok(0.22));
        assert!(matches!(
            parse_poisson("0.7"),
            Err(UnitError::OutOfRange { .. })
        ));
        assert!(matches!(
            parse_poisson("abc"),
            Err(UnitError::NotANumber { .. })
        ));
    }
}
