//! Quantities with units: parse what a person types, format what a person reads.
//!
//! Everything inside shardlog is SI (m, Pa, Pa·√m, kg, s, N, K, J). This module is the
//! only place that knows about millimetres, psi or miles per hour. It is pure: no I/O.
//!
//! Parsing rules:
//! - a number, optional white space, then a unit: `1.2 mm`, `850um`, `8700 psi`;
//! - a decimal comma (`1,2 mm`) is refused with a hint, never read as 12 or 1.2;
//! - a bare number is refused where a unit is needed (lengths, stresses, …);
//! - NaN and infinities are refused; `parse_positive` also refuses zero and negatives;
//! - a value outside the physical range of its quantity is refused with the range
//!   (the table is in `range.rs`, beside this parser).

use std::fmt;

mod property;
mod range;
pub use property::{parse_density, parse_expansion, parse_modulus, parse_poisson, MAX_MODULUS};
pub use range::{physical_range, PhysicalRange};

/// What a quantity measures. Stress and pressure share one dimension (Pa).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Dimension {
    Length,
    Stress,
    Toughness,
    Mass,
    Speed,
    Time,
    Force,
    TemperatureDifference,
    Energy,
}

impl Dimension {
    /// Plain-language name used in error messages.
    pub fn name(self) -> &'static str {
        match self {
            Dimension::Length => "length",
            Dimension::Stress => "stress or pressure",
            Dimension::Toughness => "fracture toughness",
            Dimension::Mass => "mass",
            Dimension::Speed => "speed",
            Dimension::Time => "time",
            Dimension::Force => "force",
            Dimension::TemperatureDifference => "temperature difference",
            Dimension::Energy => "energy",
        }
    }

    /// An example the user can copy, used in error messages.
    pub fn example(self) -> &'static str {
        match self {
            Dimension::Length => "1.2mm",
            Dimension::Stress => "60MPa",
            Dimension::Toughness => "0.75MPa√m",
            Dimension::Mass => "1.8kg",
            Dimension::Speed => "11.6m/s",
            Dimension::Time => "40ms",
            Dimension::Force => "1kN",
            Dimension::TemperatureDifference => "30K",
            Dimension::Energy => "5J",
        }
    }

    /// Every unit this dimension accepts, in the order they are listed to users.
    pub fn units(self) -> impl Iterator<Item = Unit> {
        Unit::ALL
            .iter()
            .copied()
            .filter(move |u| u.dimension() == self)
    }
}

impl fmt::Display for Dimension {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// A unit the user may type or read.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Unit {
    // length
    Metre,
    Millimetre,
    Micrometre,
    Inch,
    Centimetre,
    Mil,
    Foot,
    // stress and pressure
    Pascal,
    Kilopascal,
    Megapascal,
    Gigapascal,
    Psi,
    Ksi,
    Bar,
    // fracture toughness
    PascalRootMetre,
    MegapascalRootMetre,
    KsiRootInch,
    // mass
    Kilogram,
    Gram,
    Pound,
    // speed
    MetrePerSecond,
    KilometrePerHour,
    MilePerHour,
    Knot,
    // time
    Second,
    Millisecond,
    Microsecond,
    Minute,
    // force
    Newton,
    Kilonewton,
    PoundForce,
    KilogramForce,
    // temperature difference
    Kelvin,
    CelsiusDifference,
    FahrenheitDifference,
    // energy
    Joule,
}

const INCH: f64 = 0.0254;
const PSI: f64 = 6_894.757_293_168_361; // 1 lbf/in², exact by the definition of lbf and in
const POUND: f64 = 0.453_592_37; // exact by definition
const LBF: f64 = 4.448_221_615_260_5; // exact by definition (pound × standard gravity)
const STANDARD_GRAVITY: f64 = 9.806_65; // m/s², exact by definition (CGPM 1901)

impl Unit {
    pub const ALL: &'static [Unit] = &[
        Unit::Millimetre,
        Unit::Micrometre,
        Unit::Metre,
        Unit::Inch,
        Unit::Megapascal,
        Unit::Kilopascal,
        Unit::Pascal,
        Unit::Gigapascal,
        Unit::Psi,
        Unit::Ksi,
        Unit::MegapascalRootMetre,
        Unit::PascalRootMetre,
        Unit::KsiRootInch,
        Unit::Kilogram,
        Unit::Gram,
        Unit::Pound,
        Unit::MetrePerSecond,
        Unit::KilometrePerHour,
        Unit::MilePerHour,
        Unit::Millisecond,
        Unit::Second,
        Unit::Microsecond,
        Unit::Newton,
        Unit::Kilonewton,
        Unit::PoundForce,
        Unit::Kelvin,
        Unit::CelsiusDifference,
        Unit::FahrenheitDifference,
        Unit::Joule,
        // plain units practitioners also type, listed after the usual ones
        Unit::Centimetre,
        Unit::Mil,
        Unit::Foot,
        Unit::Bar,
        Unit::Knot,
        Unit::Minute,
        Unit::KilogramForce,
    ];

    pub fn dimension(self) -> Dimension {
        use Unit::*;
        match self {
            Metre | Millimetre | Micrometre | Inch | Centimetre | Mil | Foot => Dimension::Length,
            Pascal | Kilopascal | Megapascal | Gigapascal | Psi | Ksi | Bar => Dimension::Stress,
            PascalRootMetre | MegapascalRootMetre | KsiRootInch => Dimension::Toughness,
            Kilogram | Gram | Pound => Dimension::Mass,
            MetrePerSecond | KilometrePerHour | MilePerHour | Knot => Dimension::Speed,
            Second | Millisecond | Microsecond | Minute => Dimension::Time,
            Newton | Kilonewton | PoundForce | KilogramForce => Dimension::Force,
            Kelvin | CelsiusDifference | FahrenheitDifference => Dimension::TemperatureDifference,
            Joule => Dimension::Energy,
        }
    }

    /// How many SI units one of this unit is.
    pub fn factor(self) -> f64 {
        use Unit::*;
        match self {
            Metre => 1.0,
            Millimetre => 1e-3,
            Micrometre => 1e-6,
            Inch => INCH,
            Centimetre => 1e-2,
            Mil => 2.54e-5, // a thousandth of an inch, exact
            Foot => 0.3048, // twelve inches, exact
            Pascal => 1.0,
            Kilopascal => 1e3,
            Megapascal => 1e6,
            Gigapascal => 1e9,
            Psi => PSI,
            Ksi => PSI * 1e3,
            Bar => 1e5, // exact by definition
            PascalRootMetre => 1.0,
            MegapascalRootMetre => 1e6,
            KsiRootInch => PSI * 1e3 * 0.159_373_775_392_898_6, // √0.0254 m
            Kilogram => 1.0,
            Gram => 1e-3,
            Pound => POUND,
            MetrePerSecond => 1.0,
            KilometrePerHour => 1.0 / 3.6,
            MilePerHour => 0.447_04, // exact: 1609.344 m / 3600 s
            Knot => 1852.0 / 3600.0, // exact: one nautical mile (1852 m) per hour
            Second => 1.0,
            Millisecond => 1e-3,
            Microsecond => 1e-6,
            Minute => 60.0,
            Newton => 1.0,
            Kilonewton => 1e3,
            PoundForce => LBF,
            KilogramForce => STANDARD_GRAVITY, // exact: one kilogram under standard gravity
            Kelvin => 1.0,
            CelsiusDifference => 1.0,
            FahrenheitDifference => 5.0 / 9.0,
            Joule => 1.0,
        }
    }

    /// The symbol shardlog prints.
    pub fn symbol(self) -> &'static str {
        use Unit::*;
        match self {
            Metre => "m",
            Millimetre => "mm",
            Micrometre => "µm",
            Inch => "in",
            Centimetre => "cm",
            Mil => "mil",
            Foot => "ft",
            Pascal => "Pa",
            Kilopascal => "kPa",
            Megapascal => "MPa",
            Gigapascal => "GPa",
            Psi => "psi",
            Ksi => "ksi",
            Bar => "bar",
            PascalRootMetre => "Pa·√m",
            MegapascalRootMetre => "MPa·√m",
            KsiRootInch => "ksi·√in",
            Kilogram => "kg",
            Gram => "g",
            Pound => "lb",
            MetrePerSecond => "m/s",
            KilometrePerHour => "km/h",
            MilePerHour => "mph",
            // "kn" is the usual symbol, but it differs from kN (kilonewton) by case alone
            Knot => "knot",
            Second => "s",
            Millisecond => "ms",
            Microsecond => "µs",
            Minute => "min",
            Newton => "N",
            Kilonewton => "kN",
            PoundForce => "lbf",
            KilogramForce => "kgf",
            Kelvin => "K",
            CelsiusDifference => "°C",
            FahrenheitDifference => "°F",
            Joule => "J",
        }
    }

    /// The symbol with only ASCII characters, for CSV headers and plain terminals.
    pub fn ascii_symbol(self) -> &'static str {
        use Unit::*;
        match self {
            Micrometre => "um",
            PascalRootMetre => "Pa*m^0.5",
            MegapascalRootMetre => "MPa*m^0.5",
            KsiRootInch => "ksi*in^0.5",
            Microsecond => "us",
            CelsiusDifference => "degC",
            FahrenheitDifference => "degF",
            other => other.symbol(),
        }
    }

    /// Convert an SI value to this unit.
    pub fn from_si(self, si: f64) -> f64 {
        si / self.factor()
    }

    /// Convert a value in this unit to SI.
    pub fn to_si(self, value: f64) -> f64 {
        value * self.factor()
    }

    /// Recognise a unit as typed. Letters keep their case: SI prefixes are case-sensitive
    /// (`m` is milli, `M` mega; `K` is kelvin, `k` kilo), so `mPa`, `Mm` or `mS` are not read
    /// as MPa, mm or ms. Units with no prefix letters (`psi`, `in`, `mph`, …) are read in any
    /// case. Anything else is `None`; [`Unit::case_hint`] says what was probably meant.
    pub fn lookup(text: &str) -> Option<Unit> {
        let key = normalise_unit(text);
        if let Some(u) = exact_unit(&key) {
            return Some(u);
        }
        word_unit(&key.to_lowercase())
    }

    /// For a unit text that [`Unit::lookup`] refused: the units it matches when case is
    /// ignored (e.g. `mpa` → MPa, `1Mm` → mm, `40k` → K, `kn` → kN and knot).
    pub fn case_hint(text: &str) -> Vec<Unit> {
        let key = normalise_unit(text).to_lowercase();
        let mut out: Vec<Unit> = Vec::new();
        for (spelling, unit) in EXACT_SPELLINGS {
            if spelling.to_lowercase() == key && !out.contains(unit) {
                out.push(*unit);
            }
        }
        // knots are typed "kn" in navigation; kilonewtons are kN
        if key == "kn" && !out.contains(&Unit::Knot) {
            out.push(Unit::Knot);
        }
        out
    }
}

/// Spellings read exactly as written (after white space, multiplication dots and micro signs
/// are folded). Case matters here. A table: the program's own symbols, the ASCII forms it
/// stores, and the other forms in common use.
const EXACT_SPELLINGS: &[(&str, Unit)] = &[
    ("m", Unit::Metre),
    ("mm", Unit::Millimetre),
    ("um", Unit::Micrometre),
    ("cm", Unit::Centimetre),
    ("Pa", Unit::Pascal),
    ("kPa", Unit::Kilopascal),
    ("kN/m^2", Unit::Kilopascal),
    ("kN/m2", Unit::Kilopascal),
    ("MPa", Unit::Megapascal),
    ("N/mm^2", Unit::Megapascal),
    ("N/mm2", Unit::Megapascal),
    ("GPa", Unit::Gigapascal),
    ("Pa√m", Unit::PascalRootMetre),
    ("Pam^0.5", Unit::PascalRootMetre),
    ("Pam^1/2", Unit::PascalRootMetre),
    ("Pasqrt(m)", Unit::PascalRootMetre),
    ("MPa√m", Unit::MegapascalRootMetre),
    ("MPam^0.5", Unit::MegapascalRootMetre),
    ("MPam^1/2", Unit::MegapascalRootMetre),
    ("MPasqrt(m)", Unit::MegapascalRootMetre),
    ("MN/m^1.5", Unit::MegapascalRootMetre),
    ("MN/m^3/2", Unit::MegapascalRootMetre),
    ("MN/m1.5", Unit::MegapascalRootMetre),
    ("kg", Unit::Kilogram),
    ("g", Unit::Gram),
    ("m/s", Unit::MetrePerSecond),
    ("km/h", Unit::KilometrePerHour),
    ("kmh", Unit::KilometrePerHour),
    ("kph", Unit::KilometrePerHour),
    ("s", Unit::Second),
    ("ms", Unit::Millisecond),
    ("us", Unit::Microsecond),
    ("N", Unit::Newton),
    ("kN", Unit::Kilonewton),
    ("kgf", Unit::KilogramForce),
    ("K", Unit::Kelvin),
    ("°C", Unit::CelsiusDifference),
    ("degC", Unit::CelsiusDifference),
    ("C", Unit::CelsiusDifference),
    ("°F", Unit::FahrenheitDifference),
    ("degF", Unit::FahrenheitDifference),
    ("F", Unit::FahrenheitDifference),
    ("J", Unit::Joule),
];

fn exact_unit(key: &str) -> Option<Unit> {
    EXACT_SPELLINGS
        .iter()
        .find(|(spelling, _)| *spelling == key)
        .map(|(_, u)| *u)
}

/// Units whose letters are no SI prefix: case carries no meaning, so any case is read.
fn word_unit(lower: &str) -> Option<Unit> {
    use Unit::*;
    let unit = match lower {
        "micron" | "microns" | "micrometre" | "micrometer" | "micrometres" | "micrometers" => {
            Micrometre
        }
        "in" | "inch" | "inches" | "\"" => Inch,
        "mil" | "mils" | "thou" => Mil,
        "ft" | "foot" | "feet" | "'" => Foot,
        "psi" => Psi,
        "ksi" => Ksi,
        "bar" => Bar,
        "ksi√in" | "ksiin^0.5" | "ksiin^1/2" | "ksisqrt(in)" => KsiRootInch,
        "lb" | "lbs" | "lbm" => Pound,
        "mps" => MetrePerSecond,
        "mph" | "mi/h" => MilePerHour,
        "knot" | "knots" | "kt" | "kts" => Knot,
        "sec" | "secs" | "second" | "seconds" => Second,
        "min" | "mins" | "minute" | "minutes" => Minute,
        "lbf" => PoundForce,
        _ => return None,
    };
    Some(unit)
}

impl fmt::Display for Unit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.symbol())
    }
}

/// Fold the many ways of writing a unit into one key: no spaces or multiplication dots,
/// micro signs to `u`, `½` to `0.5`, `²` to `^2`. Case is kept: it carries meaning.
fn normalise_unit(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for ch in text.trim().chars() {
        match ch {
            ' ' | '\t' | '·' | '⋅' | '*' => {}
            // "MPa.m^0.5": a point between letters is a multiplication dot, not a decimal
            '.' if out.chars().last().is_some_and(|c| c.is_alphabetic()) => {}
            'µ' | 'μ' => out.push('u'),
            '½' => out.push_str("0.5"),
            '²' => out.push_str("^2"),
            c => out.push(c),
        }
    }
    // "MPa·m^½" arrives here as "MPam^0.5"; "MPa·√m" as "MPa√m".
    out
}

/// Why a typed quantity was refused. The caller adds the field name.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum UnitError {
    #[error("nothing was given; expected a {dim} such as {example}")]
    Empty {
        dim: &'static str,
        example: &'static str,
    },
    #[error("'{input}' has no unit; expected a {dim} such as {example} (units: {units})")]
    MissingUnit {
        input: String,
        dim: &'static str,
        example: &'static str,
        units: String,
    },
    #[error("'{input}' uses a decimal comma; write a decimal point instead, e.g. '{suggestion}'")]
    DecimalComma { input: String, suggestion: String },
    #[error("'{input}': '{unit}' is not a unit of {dim}; expected one of {units}")]
    WrongUnit {
        input: String,
        unit: String,
        dim: &'static str,
        units: String,
    },
    #[error(
        "'{input}': '{unit}' is not read as {suggestion}: unit letters are case-sensitive \
         (m is milli, M is mega, k is kilo, K is kelvin); did you mean {suggestion}?"
    )]
    CaseChangesMeaning {
        input: String,
        unit: String,
        suggestion: String,
    },
    #[error("'{input}' is not a number; expected a {dim} such as {example}")]
    NotANumber {
        input: String,
        dim: &'static str,
        example: &'static str,
    },
    #[error("'{input}' is not a finite number")]
    NotFinite { input: String },
    #[error("'{input}' must be greater than zero")]
    NotPositive { input: String },
    #[error("'{input}' must not be negative")]
    Negative { input: String },
    #[error(
        "'{input}' is outside the physical range of a {dim}; expected {range} (check the \
         decimal point, the exponent and the unit)"
    )]
    OutOfRange {
        input: String,
        dim: &'static str,
        range: String,
    },
}

fn unit_list(dim: Dimension) -> String {
    dim.units()
        .map(|u| u.symbol())
        .collect::<Vec<_>>()
        .join(", ")
}

/// Split "1.2 mm" into ("1.2", "mm"). The number part is the longest prefix that
/// looks numeric (sign, digits, point, comma, exponent).
pub fn split_number(text: &str) -> (&str, &str) {
    let bytes = text.as_bytes();
    let mut end = 0;
    let mut seen_digit = false;
    while end < bytes.len() {
        let b = bytes[end];
        let ok = match b {
            b'0'..=b'9' => {
                seen_digit = true;
                true
            }
            b'+' | b'-' => end == 0 || matches!(bytes[end - 1], b'e' | b'E'),
            b'.' | b',' => true,
            b'e' | b'E' => {
                // only an exponent if followed by a digit or sign+digit
                seen_digit
                    && match bytes.get(end + 1) {
                        Some(b'0'..=b'9') => true,
                        Some(b'+' | b'-') => matches!(bytes.get(end + 2), Some(b'0'..=b'9')),
                        _ => false,
                    }
            }
            _ => false,
        };
        if !ok {
            break;
        }
        end += 1;
    }
    (&text[..end], text[end..].trim())
}

/// Parse a plain number (no unit), refusing decimal commas, NaN and infinities.
pub fn parse_number(input: &str) -> Result<f64, UnitError> {
    let text = input.trim();
    if text.is_empty() {
        return Err(UnitError::Empty {
            dim: "number",
            example: "0.8",
        });
    }
    let lower = text.to_ascii_lowercase();
    if lower.contains("nan") || lower.contains("inf") {
        return Err(UnitError::NotFinite {
            input: text.to_string(),
        });
    }
    if text.contains(',') {
        return Err(UnitError::DecimalComma {
            input: text.to_string(),
            suggestion: text.replace(',', "."),
        });
    }
    let value: f64 = text.parse().map_err(|_| UnitError::NotANumber {
        input: text.to_string(),
        dim: "number",
        example: "0.8",
    })?;
    if !value.is_finite() {
        return Err(UnitError::NotFinite {
            input: text.to_string(),
        });
    }
    Ok(value)
}

/// Parse a quantity of the given dimension and return its SI value.
pub fn parse(input: &str, dim: Dimension) -> Result<f64, UnitError> {
    parse_with_unit(input, dim).map(|(si, _)| si)
}

/// Parse a quantity and also return the unit it was typed in (so it can be stored as typed).
pub fn parse_with_unit(input: &str, dim: Dimension) -> Result<(f64, Unit), UnitError> {
    let text = input.trim();
    if text.is_empty() {
        return Err(UnitError::Empty {
            dim: dim.name(),
            example: dim.example(),
        });
    }
    let lower = text.to_ascii_lowercase();
    if lower.starts_with("nan")
        || lower.starts_with("inf")
        || lower.starts_with("-inf")
        || lower.starts_with("+inf")
    {
        return Err(UnitError::NotFinite {
            input: text.to_string(),
        });
    }
    let (number, unit_text) = split_number(text);
    if number.contains(',') {
        let fixed = number.replace(',', ".");
        return Err(UnitError::DecimalComma {
            input: text.to_string(),
            suggestion: format!("{fixed}{unit_text}"),
        });
    }
    if number.is_empty() || !number.bytes().any(|b| b.is_ascii_digit()) {
        return Err(UnitError::NotANumber {
            input: text.to_string(),
            dim: dim.name(),
            example: dim.example(),
        });
    }
    let value: f64 = number.parse().map_err(|_| UnitError::NotANumber {
        input: text.to_string(),
        dim: dim.name(),
        example: dim.example(),
    })?;
    if !value.is_finite() {
        return Err(UnitError::NotFinite {
            input: text.to_string(),
        });
    }
    if unit_text.is_empty() {
        return Err(UnitError::MissingUnit {
            input: text.to_string(),
            dim: dim.name(),
            example: dim.example(),
            units: unit_list(dim),
        });
    }
    let unit = match Unit::lookup(unit_text) {
        Some(u) if u.dimension() == dim => u,
        None => {
            let meant: Vec<&str> = Unit::case_hint(unit_text)
                .into_iter()
                .filter(|u| u.dimension() == dim)
                .map(Unit::symbol)
                .collect();
            if meant.is_empty() {
                return Err(UnitError::WrongUnit {
                    input: text.to_string(),
                    unit: unit_text.to_string(),
                    dim: dim.name(),
                    units: unit_list(dim),
                });
            }
            return Err(UnitError::CaseChangesMeaning {
                input: text.to_string(),
                unit: unit_text.to_string(),
                suggestion: meant.join(" or "),
            });
        }
        _ => {
            return Err(UnitError::WrongUnit {
                input: text.to_string(),
                unit: unit_text.to_string(),
                dim: dim.name(),
                units: unit_list(dim),
            })
        }
    };
    let si = unit.to_si(value);
    if !si.is_finite() {
        return Err(UnitError::NotFinite {
            input: text.to_string(),
        });
    }
    let range = physical_range(dim);
    if !range.contains(si) {
        return Err(UnitError::OutOfRange {
            input: text.to_string(),
            dim: dim.name(),
            range: range.text(),
        });
    }
    Ok((si, unit))
}

/// Parse a quantity that must be greater than zero (lengths, times, masses…).
pub fn parse_positive(input: &str, dim: Dimension) -> Result<f64, UnitError> {
    let si = parse(input, dim)?;
    if si <= 0.0 {
        return Err(UnitError::NotPositive {
            input: input.trim().to_string(),
        });
    }
    Ok(si)
}

/// Parse a quantity that may be zero but not negative.
pub fn parse_non_negative(input: &str, dim: Dimension) -> Result<f64, UnitError> {
    let si = parse(input, dim)?;
    if si < 0.0 {
        return Err(UnitError::Negative {
            input: input.trim().to_string(),
        });
    }
    Ok(si)
}

/// Round to `sig` significant figures and print without exponent for ordinary sizes.
/// Never prints "NaN" or "inf": those come out as "—".
pub fn fmt_sig(x: f64, sig: usize) -> String {
    if !x.is_finite() {
        return "—".to_string();
    }
    if x == 0.0 {
        return "0".to_string();
    }
    let sig = sig.max(1);
    let mag = x.abs().log10().floor() as i32;
    if !(-4..=9).contains(&mag) {
        return format!("{:.*e}", sig - 1, x);
    }
    let decimals = (sig as i32 - 1 - mag).max(0) as usize;
    let s = format!("{:.*}", decimals, x);
    if s.starts_with("-0") && s.trim_start_matches(['-', '0', '.']).is_empty() {
        return s.trim_start_matches('-').to_string();
    }
    s
}

/// Format an SI value in the given unit with three significant figures: "60.1 MPa".
pub fn format(si: f64, unit: Unit) -> String {
    format_sig(si, unit, 3)
}

/// Format with a chosen number of significant figures.
pub fn format_sig(si: f64, unit: Unit, sig: usize) -> String {
    format!("{} {}", fmt_sig(unit.from_si(si), sig), unit.symbol())
}

/// Format so that parsing the text gives back the same SI value (shortest round-trip
/// representation of the value in that unit). Used where figures are written for machines.
pub fn format_exact(si: f64, unit: Unit) -> String {
    format!("{} {}", unit.from_si(si), unit.ascii_symbol())
}

/// Convenience: SI stress in MPa.
pub fn to_mpa(pa: f64) -> f64 {
    pa / 1e6
}

/// Convenience: SI length in µm.
pub fn to_um(m: f64) -> f64 {
    m * 1e6
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12 * b.abs().max(1e-30)
    }

    #[test]
    fn lengths() {
        assert!(close(parse("1.2 mm", Dimension::Length).unwrap(), 1.2e-3));
        assert!(close(parse("850 µm", Dimension::Length).unwrap(), 850e-6));
        assert!(close(parse("850um", Dimension::Length).unwrap(), 850e-6));
        assert!(close(parse("850 μm", Dimension::Length).unwrap(), 850e-6));
        assert!(close(
            parse("0.047 in", Dimension::Length).unwrap(),
            0.047 * 0.0254
        ));
        assert!(close(parse("2e-3 m", Dimension::Length).unwrap(), 2e-3));
    }

    #[test]
    fn stresses_and_toughness() {
        assert!(close(parse("60 MPa", Dimension::Stress).unwrap(), 60e6));
        assert!(close(
            parse("8700 psi", Dimension::Stress).unwrap(),
            8700.0 * PSI
        ));
        assert!(close(
            parse("9 ksi", Dimension::Stress).unwrap(),
            9000.0 * PSI
        ));
        assert!(close(parse("2kPa", Dimension::Stress).unwrap(), 2000.0));
        for t in [
            "0.75 MPa√m",
            "0.75 MPa*m^0.5",
            "0.75MPa·m^½",
            "0.75 MPa m^0.5",
            "0.75 MPa·√m",
        ] {
            assert!(
                close(parse(t, Dimension::Toughness).unwrap(), 0.75e6),
                "{t}"
            );
        }
        // 1 ksi·√in = 1.0988 MPa·√m (common conversion factor)
        let k = parse("1 ksi√in", Dimension::Toughness).unwrap();
        assert!((k / 1e6 - 1.0988).abs() < 1e-4, "{k}");
    }

    #[test]
    fn speeds_and_others() {
        assert!(close(
            parse("26 mph", Dimension::Speed).unwrap(),
            26.0 * 0.44704
        ));
        assert!(close(parse("36 km/h", Dimension::Speed).unwrap(), 10.0));
        assert!(close(parse("40 ms", Dimension::Time).unwrap(), 0.04));
        assert!(close(parse("4 lb", Dimension::Mass).unwrap(), 4.0 * POUND));
        assert!(close(parse("1 kN", Dimension::Force).unwrap(), 1000.0));
        assert!(close(
            parse("30 K", Dimension::TemperatureDifference).unwrap(),
            30.0
        ));
        assert!(close(
            parse("9 °F", Dimension::TemperatureDifference).unwrap(),
            5.0
        ));
    }

    #[test]
    fn refusals() {
        assert!(matches!(
            parse("1,2 mm", Dimension::Length),
            Err(UnitError::DecimalComma { .. })
        ));
        assert!(matches!(
            parse("5", Dimension::Length),
            Err(UnitError::MissingUnit { .. })
        ));
        assert!(matches!(
            parse("5 kg", Dimension::Length),
            Err(UnitError::WrongUnit { .. })
        ));
        assert!(matches!(
            parse("NaN mm", Dimension::Length),
            Err(UnitError::NotFinite { .. })
        ));
        assert!(matches!(
            parse("inf", Dimension::Length),
            Err(UnitError::NotFinite { .. })
        ));
        assert!(matches!(
            parse("1e400 mm", Dimension::Length),
            Err(UnitError::NotFinite { .. })
        ));
        assert!(matches!(
            parse("", Dimension::Length),
            Err(UnitError::Empty { .. })
        ));
        assert!(matches!(
            parse("mm", Dimension::Length),
            Err(UnitError::NotANumber { .. })
        ));
        assert!(matches!(
            parse_positive("0 mm", Dimension::Length),
            Err(UnitError::NotPositive { .. })
        ));
        assert!(matches!(
            parse_positive("-1 mm", Dimension::Length),
            Err(UnitError::NotPositive { .. })
        ));
        let msg = parse("1,2 mm", Dimension::Length).unwrap_err().to_string();
        assert!(msg.contains("1.2mm"), "{msg}");
        let msg = parse("5 kg", Dimension::Length).unwrap_err().to_string();
        assert!(msg.contains("length") && msg.contains("mm"), "{msg}");
    }

    #[test]
    fn formatting() {
        assert_eq!(format(60.08e6, Unit::Megapascal), "60.1 MPa");
        assert_eq!(format(93.6e-6, Unit::Micrometre), "93.6 µm");
        assert_eq!(format(0.75e6, Unit::MegapascalRootMetre), "0.750 MPa·√m");
        assert_eq!(fmt_sig(f64::NAN, 3), "—");
        assert_eq!(fmt_sig(-0.0001, 1), "-0.0001");
        assert_eq!(fmt_sig(1234.6, 3), "1235");
        let s = format_exact(0.98e-3, Unit::Millimetre);
        assert!(close(parse(&s, Dimension::Length).unwrap(), 0.98e-3), "{s}");
    }

    #[test]
    fn case_that_changes_meaning_is_refused_with_a_hint() {
        // SI prefixes are case-sensitive (SI Brochure, 9th ed., 2019, §3: "prefix symbols are
        // printed in roman type… the symbols are case-sensitive"; m = milli, M = mega).
        for (typed, dim, meant) in [
            ("95mPa", Dimension::Stress, "MPa"),
            ("95 mpa", Dimension::Stress, "MPa"),
            ("95 MPA", Dimension::Stress, "MPa"),
            ("2 kpa", Dimension::Stress, "kPa"),
            ("1Mm", Dimension::Length, "mm"),
            ("1 MM", Dimension::Length, "mm"),
            ("40mS", Dimension::Time, "ms"),
            ("40 MS", Dimension::Time, "ms"),
            ("40k", Dimension::TemperatureDifference, "K"),
            ("10M/S", Dimension::Speed, "m/s"),
            ("1.8 KG", Dimension::Mass, "kg"),
            ("0.75 mpa√m", Dimension::Toughness, "MPa·√m"),
            ("3 n", Dimension::Force, "N"),
        ] {
            match parse(typed, dim) {
                Err(e @ UnitError::CaseChangesMeaning { .. }) => {
                    let msg = e.to_string();
                    assert!(
                        msg.contains(&format!("did you mean {meant}?")),
                        "{typed}: {msg}"
                    );
                    assert!(msg.contains("case-sensitive"), "{typed}: {msg}");
                }
                other => panic!("{typed}: expected a refusal with a hint, got {other:?}"),
            }
        }
        // "kn": kilonewton or knot, by case alone: the hint names the one of the dimension
        let msg = parse("3 kn", Dimension::Force).unwrap_err().to_string();
        assert!(msg.contains("did you mean kN?"), "{msg}");
        let msg = parse("3 kn", Dimension::Speed).unwrap_err().to_string();
        assert!(msg.contains("did you mean knot?"), "{msg}");
        // a unit of another dimension is still the wrong unit, not a case slip
        assert!(matches!(
            parse("95 mpa", Dimension::Length),
            Err(UnitError::WrongUnit { .. })
        ));
    }

    #[test]
    fn spellings_people_really_type() {
        for (typed, dim, si) in [
            ("850 um", Dimension::Length, 850e-6),
            ("850 µm", Dimension::Length, 850e-6),
            ("850 μm", Dimension::Length, 850e-6),
            ("850 microns", Dimension::Length, 850e-6),
            ("0.25 in", Dimension::Length, 0.25 * 0.0254),
            ("0.25 IN", Dimension::Length, 0.25 * 0.0254),
            ("0.25\"", Dimension::Length, 0.25 * 0.0254),
            ("8700 psi", Dimension::Stress, 8700.0 * PSI),
            ("8700 PSI", Dimension::Stress, 8700.0 * PSI),
            ("9 KSI", Dimension::Stress, 9000.0 * PSI),
            ("60 N/mm²", Dimension::Stress, 60e6),
            ("26 MPH", Dimension::Speed, 26.0 * 0.447_04),
            ("30 °C", Dimension::TemperatureDifference, 30.0),
            ("30 degC", Dimension::TemperatureDifference, 30.0),
            ("30 K", Dimension::TemperatureDifference, 30.0),
        ] {
            let got = parse(typed, dim).unwrap_or_else(|e| panic!("{typed}: {e}"));
            assert!(close(got, si), "{typed}: {got} against {si}");
        }
    }

    #[test]
    fn plain_units_convert_exactly() {
        // Exact by definition: 1 in = 0.0254 m (international inch, 1959), so 1 ft = 0.3048 m
        // and 1 mil = 25.4 µm; 1 bar = 100 kPa; 1 kgf = 9.80665 N (standard gravity, CGPM
        // 1901); 1 knot = 1852 m per hour (international nautical mile); 1 min = 60 s;
        // 1 kN/m² = 1 kPa. Source: NIST SP 811 (2008), Appendix B.8, where each of these is
        // marked exact (cited from memory of the document; the values are the definitions).
        for (typed, dim, si) in [
            ("2.5 cm", Dimension::Length, 0.025),
            ("12 mil", Dimension::Length, 12.0 * 25.4e-6),
            ("3 ft", Dimension::Length, 3.0 * 0.3048),
            ("1.5 bar", Dimension::Stress, 1.5e5),
            ("2 kN/m²", Dimension::Stress, 2000.0),
            ("2 kN/m2", Dimension::Stress, 2000.0),
            ("5 kgf", Dimension::Force, 5.0 * 9.806_65),
            ("2 min", Dimension::Time, 120.0),
            ("10 knots", Dimension::Speed, 10.0 * 1852.0 / 3600.0),
        ] {
            let got = parse(typed, dim).unwrap_or_else(|e| panic!("{typed}: {e}"));
            assert!(close(got, si), "{typed}: {got} against {si}");
        }
        assert_eq!(Unit::Foot.factor(), 0.3048);
        assert_eq!(Unit::Mil.factor(), 0.0000254);
        assert_eq!(Unit::KilogramForce.factor(), 9.80665);
    }

    #[test]
    fn what_the_store_keeps_reads_back() {
        // Readings are stored as their number and the unit's ASCII symbol: every stored form
        // must stay readable under the case rules.
        for &u in Unit::ALL {
            let text = format_exact(u.to_si(1.25), u);
            let back = parse(&text, u.dimension()).unwrap_or_else(|e| panic!("{text}: {e}"));
            assert!(close(back, u.to_si(1.25)), "{text}");
        }
    }

    #[test]
    fn every_unit_parses_its_own_symbols() {
        for &u in Unit::ALL {
            for sym in [u.symbol(), u.ascii_symbol()] {
                let text = format!("2 {sym}");
                let si = parse(&text, u.dimension()).unwrap_or_else(|e| panic!("{text}: {e}"));
                assert!(close(si, u.to_si(2.0)), "{text}");
            }
        }
    }
}
