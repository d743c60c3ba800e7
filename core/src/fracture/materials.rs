//! The material library: mirror constants, toughness and elastic properties, each with its
//! provenance. Values are SI (Pa·√m, Pa, 1/K, kg/m³).
//!
//! `spread` is always **one standard deviation** in the constant's own SI unit. Where the
//! sources give a range rather than a standard deviation (most of the library), half the
//! range is taken as one standard deviation and the provenance note says so. That is wider
//! than a rectangular reading of the range (half-range/√3) on purpose: the studies disagree
//! more than their own scatter suggests.
//!
//! Users add their own materials (the store persists `Material` as JSON) and may override any
//! constant per calculation; an override carries `Provenance::User`.

use serde::{Deserialize, Serialize};
use std::fmt;

use crate::units::{self, Dimension, Unit, UnitError};

/// Where a value comes from.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum Provenance {
    /// A named published source (standard, handbook, paper).
    Published { source: String },
    /// A fact of the trade with no single source.
    CommonPractice { note: String },
    /// Not confirmed against the document; treat with care.
    FromMemory { note: String },
    /// Given by the user (an in-house calibration, a value typed for one calculation).
    User { note: String },
    /// Fitted by `calibrate` from a lab's own specimens: what, by whom, from how many, when
    /// (`note`), and the SHA-256 of the data file it was fitted from.
    Calibrated { note: String, sha256: String },
}

impl Provenance {
    /// The mark shown in tables: "published", "common practice", "from memory", "user".
    pub fn mark(&self) -> &'static str {
        match self {
            Provenance::Published { .. } => "published",
            Provenance::CommonPractice { .. } => "common practice",
            Provenance::FromMemory { .. } => "from memory",
            Provenance::User { .. } => "user",
            Provenance::Calibrated { .. } => "calibrated",
        }
    }

    /// The source or note text.
    pub fn text(&self) -> &str {
        match self {
            Provenance::Published { source } => source,
            Provenance::CommonPractice { note }
            | Provenance::FromMemory { note }
            | Provenance::User { note }
            | Provenance::Calibrated { note, .. } => note,
        }
    }
}

impl fmt::Display for Provenance {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.text().is_empty() {
            f.write_str(self.mark())?;
        } else {
            write!(f, "{}: {}", self.mark(), self.text())?;
        }
        if let Provenance::Calibrated { sha256, .. } = self {
            write!(f, "; data SHA-256 {sha256}")?;
        }
        Ok(())
    }
}

/// One material constant: SI value, optional spread (one standard deviation, SI), provenance.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Constant {
    pub value: f64,
    #[serde(default)]
    pub spread: Option<f64>,
    pub provenance: Provenance,
}

impl Constant {
    /// A value typed by the user for one calculation (no spread known).
    pub fn user(value: f64, note: impl Into<String>) -> Self {
        Constant {
            value,
            spread: None,
            provenance: Provenance::User { note: note.into() },
        }
    }

    /// Relative spread (spread / value), if known.
    pub fn relative_spread(&self) -> Option<f64> {
        self.spread
            .filter(|s| s.is_finite() && *s >= 0.0 && self.value != 0.0)
            .map(|s| s / self.value.abs())
    }
}

/// A material with its constants. Any constant may be missing (`None`): the calculation that
/// needs it then asks for it by name.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Material {
    /// Stable key, e.g. `soda-lime`.
    pub key: String,
    /// Name for people, e.g. "soda-lime-silica glass".
    pub name: String,
    /// Whether this is a glass (temper classes of ASTM C1048 apply to flat glass only).
    #[serde(default)]
    pub glass: bool,
    /// Mirror–mist constant A_i, Pa·√m.
    #[serde(default)]
    pub a_i: Option<Constant>,
    /// Mist–hackle constant A_o, Pa·√m (for ceramics: the mirror–hackle constant).
    #[serde(default)]
    pub a_o: Option<Constant>,
    /// Crack-branching constant A_b, Pa·√m.
    #[serde(default)]
    pub a_b: Option<Constant>,
    /// Fracture toughness K_Ic, Pa·√m.
    #[serde(default)]
    pub k_ic: Option<Constant>,
    /// Young's modulus E, Pa.
    #[serde(default)]
    pub youngs_modulus: Option<Constant>,
    /// Poisson's ratio ν (dimensionless).
    #[serde(default)]
    pub poisson: Option<Constant>,
    /// Linear thermal expansion coefficient α, 1/K.
    #[serde(default)]
    pub expansion: Option<Constant>,
    /// Density ρ, kg/m³.
    #[serde(default)]
    pub density: Option<Constant>,
    /// Free notes (what the constants were measured on, caveats).
    #[serde(default)]
    pub notes: String,
}

const QUINN: &str = "G. D. Quinn, Fractography of Ceramics and Glasses, NIST SP 960-16, App. C \
                     and ch. 7 (quoted second-hand)";
const EN572: &str = "EN 572-1, basic soda-lime silicate glass";

fn published(value: f64, spread: Option<f64>, source: &str) -> Option<Constant> {
    Some(Constant {
        value,
        spread,
        provenance: Provenance::Published {
            source: source.to_string(),
        },
    })
}

fn memory(value: f64, spread: Option<f64>, note: &str) -> Option<Constant> {
    Some(Constant {
        value,
        spread,
        provenance: Provenance::FromMemory {
            note: note.to_string(),
        },
    })
}

fn practice(value: f64, spread: Option<f64>, note: &str) -> Option<Constant> {
    Some(Constant {
        value,
        spread,
        provenance: Provenance::CommonPractice {
            note: note.to_string(),
        },
    })
}

const MPA: f64 = 1e6;
const GPA: f64 = 1e9;

fn aluminosilicate(key: &str, name: &str, notes: &str) -> Material {
    Material {
        key: key.into(),
        name: name.into(),
        glass: true,
        a_i: memory(
            2.3 * MPA,
            Some(0.2 * MPA),
            "about 2.1–2.5 MPa·√m (see Dugnani & Zednik, J. Am. Ceram. Soc. 96 (2013) 3908); \
             half-range as one standard deviation",
        ),
        a_o: None,
        a_b: None,
        k_ic: memory(
            0.8 * MPA,
            Some(0.1 * MPA),
            "0.7–0.9 MPa·√m; half-range as one standard deviation",
        ),
        youngs_modulus: memory(
            72.0 * GPA,
            None,
            "typical of ion-exchangeable aluminosilicates",
        ),
        poisson: memory(0.22, None, "typical of aluminosilicate glasses"),
        expansion: memory(8.0e-6, None, "typical of ion-exchangeable aluminosilicates"),
        density: memory(2450.0, None, "typical of aluminosilicate glasses"),
        notes: notes.into(),
    }
}

/// The built-in library. Keys: soda-lime, borosilicate, fused-silica, aluminosilicate,
/// aluminosilicate-chem, glass-ceramic, alumina, aluminum-oxynitride.
// a table
pub fn library() -> Vec<Material> {
    vec![
        Material {
            key: "soda-lime".into(),
            name: "soda-lime-silica glass".into(),
            glass: true,
            a_i: published(
                1.9 * MPA,
                Some(0.15 * MPA),
                &format!(
                    "{QUINN}: 1.8–2.1 MPa·√m across studies (1.89; 2.06; 1.8); half-range as \
                     one standard deviation"
                ),
            ),
            a_o: published(
                2.2 * MPA,
                Some(0.2 * MPA),
                &format!("{QUINN}: 2.0–2.4 MPa·√m; half-range as one standard deviation"),
            ),
            a_b: published(
                2.3 * MPA,
                Some(0.42 * MPA),
                &format!(
                    "{QUINN}: about 2.3 MPa·√m in flexure; spread computed from the 18 % scatter \
                     of Choi & Gyekenyesi, NASA TM-1998-206536 (3.54 ± 0.64 MPa·√m, four-point \
                     bending)"
                ),
            ),
            k_ic: published(
                0.75 * MPA,
                Some(0.05 * MPA),
                "common handbook value, 0.72–0.82 MPa·√m seen (0.77 in ASME J. Eng. Mater. \
                 Technol. 112 (1990) 151); spread: half of that range, rounded",
            ),
            youngs_modulus: published(70.0 * GPA, None, EN572),
            poisson: published(0.2, None, &format!("{EN572} (0.22–0.23 also quoted)")),
            expansion: published(9.0e-6, None, EN572),
            density: published(2500.0, None, EN572),
            notes: "float and sheet glass for windows, vehicle side glass, building panes".into(),
        },
        Material {
            key: "borosilicate".into(),
            name: "borosilicate glass".into(),
            glass: true,
            a_i: memory(
                1.95 * MPA,
                Some(0.05 * MPA),
                "about 1.9–2.0 MPa·√m; half-range as one standard deviation",
            ),
            a_o: memory(2.1 * MPA, None, "about 2.1 MPa·√m"),
            a_b: None,
            k_ic: published(
                0.75 * MPA,
                Some(0.06 * MPA),
                "chevron-notch tests (abstract level): 0.75 MPa·√m as received, 0.64 annealed; \
                 spread: half that difference",
            ),
            youngs_modulus: memory(64.0 * GPA, None, "typical low-expansion borosilicate"),
            poisson: memory(0.2, None, "typical low-expansion borosilicate"),
            expansion: memory(3.3e-6, None, "typical low-expansion borosilicate"),
            density: memory(2230.0, None, "typical low-expansion borosilicate"),
            notes: "oven doors, laboratory ware, lamp covers".into(),
        },
        Material {
            key: "fused-silica".into(),
            name: "fused silica".into(),
            glass: true,
            a_i: memory(
                2.2 * MPA,
                Some(0.1 * MPA),
                "about 2.1–2.3 MPa·√m; half-range as one standard deviation",
            ),
            a_o: memory(
                2.35 * MPA,
                Some(0.05 * MPA),
                "about 2.3–2.4 MPa·√m; half-range as one standard deviation",
            ),
            a_b: None,
            k_ic: memory(
                0.775 * MPA,
                Some(0.025 * MPA),
                "0.75–0.80 MPa·√m; half-range as one standard deviation",
            ),
            youngs_modulus: memory(72.0 * GPA, None, "typical of fused silica"),
            poisson: memory(0.17, None, "typical of fused silica"),
            expansion: memory(0.55e-6, None, "typical of fused silica"),
            density: memory(2200.0, None, "typical of fused silica"),
            notes: "instrument windows, optics".into(),
        },
        aluminosilicate(
            "aluminosilicate",
            "aluminosilicate glass",
            "before ion exchange; for strengthened parts use aluminosilicate-chem",
        ),
        aluminosilicate(
            "aluminosilicate-chem",
            "chemically strengthened aluminosilicate glass",
            "display cover glass; mirror constants as the base glass; give the temper class \
             chemically-strengthened with the surface compression and layer depth",
        ),
        Material {
            key: "glass-ceramic".into(),
            name: "glass-ceramic".into(),
            glass: false,
            a_i: None,
            a_o: memory(
                4.0 * MPA,
                Some(1.0 * MPA),
                "mirror–hackle, about 2.5–6 MPa·√m depending on the crystal phase; low \
                 confidence; calibrate for your material",
            ),
            a_b: None,
            k_ic: memory(
                1.5 * MPA,
                Some(0.5 * MPA),
                "about 1–2 MPa·√m; low confidence",
            ),
            youngs_modulus: memory(90.0 * GPA, None, "typical, varies widely"),
            poisson: memory(0.25, None, "typical"),
            expansion: memory(0.0, Some(0.5e-6), "near-zero-expansion cooktop grades"),
            density: memory(2550.0, None, "typical"),
            notes: "cooktops, stove windows; mirror boundaries are faint, the constant is the \
                    mirror–hackle one"
                .into(),
        },
        Material {
            key: "alumina".into(),
            name: "polycrystalline alumina".into(),
            glass: false,
            a_i: None,
            a_o: memory(
                8.0 * MPA,
                Some(2.0 * MPA),
                "mirror–hackle, about 6–10 MPa·√m; low confidence; half-range as one \
                 standard deviation",
            ),
            a_b: None,
            k_ic: memory(
                3.75 * MPA,
                Some(0.75 * MPA),
                "about 3–4.5 MPa·√m; half-range as one standard deviation",
            ),
            youngs_modulus: memory(380.0 * GPA, None, "dense 99 % alumina"),
            poisson: memory(0.22, None, "dense alumina"),
            expansion: memory(8.0e-6, None, "dense alumina"),
            density: memory(3950.0, None, "dense alumina"),
            notes: "mirror boundaries are rough in coarse grains; the constant is the \
                    mirror–hackle one"
                .into(),
        },
        Material {
            key: "aluminum-oxynitride".into(),
            name: "aluminum oxynitride (transparent ceramic)".into(),
            glass: false,
            a_i: None,
            a_o: None,
            a_b: None,
            k_ic: practice(2.0 * MPA, None, "about 2.0 MPa·√m"),
            youngs_modulus: memory(320.0 * GPA, None, "typical"),
            poisson: memory(0.24, None, "typical"),
            expansion: memory(5.8e-6, None, "typical"),
            density: memory(3690.0, None, "typical"),
            notes: "no mirror constant in the library: give --constant from your own \
                    calibration; flexure strength about 500 MPa on average (common practice)"
                .into(),
        },
    ]
}

/// A key as compared: trimmed, lower case, `_` and spaces read as `-`.
pub fn normal_key(key: &str) -> String {
    key.trim()
        .chars()
        .map(|c| match c {
            '_' | ' ' => '-',
            c => c.to_ascii_lowercase(),
        })
        .collect()
}

/// The built-in library, made once and kept: a look-up per imported row or per verified
/// result would otherwise format every material's sources again.
fn library_kept() -> &'static [Material] {
    static KEPT: std::sync::OnceLock<Vec<Material>> = std::sync::OnceLock::new();
    KEPT.get_or_init(library)
}

/// Whether `key` names `library_key` by the rule of [`normal_key`], without making a string.
fn key_matches(key: &str, library_key: &str) -> bool {
    let mut typed = key.trim().chars().map(|c| match c {
        '_' | ' ' => '-',
        c => c.to_ascii_lowercase(),
    });
    let mut kept = library_key.chars();
    loop {
        match (typed.next(), kept.next()) {
            (None, None) => return true,
            (Some(a), Some(b)) if a == b => {}
            _ => return false,
        }
    }
}

/// Look a material up by key (case-insensitive; `_` and spaces read as `-`).
pub fn find(key: &str) -> Option<Material> {
    find_ref(key).cloned()
}

/// [`find`] without the copy: the kept library's entry.
pub fn find_ref(key: &str) -> Option<&'static Material> {
    library_kept().iter().find(|m| key_matches(key, &m.key))
}

/// Look a material up in the library, then among a lab's own materials (`own`), by the same
/// rule as [`find`]. Codes are unique across both, so the order only matters for a code that
/// is not.
pub fn find_in(own: &[Material], key: &str) -> Option<Material> {
    find(key).or_else(|| {
        let want = normal_key(key);
        own.iter().find(|m| normal_key(&m.key) == want).cloned()
    })
}

/// The constants of a material, with their symbols, in the order tables show them.
pub fn constants(m: &Material) -> [(&'static str, &Option<Constant>); 8] {
    [
        ("A_i", &m.a_i),
        ("A_o", &m.a_o),
        ("A_b", &m.a_b),
        ("K_Ic", &m.k_ic),
        ("E", &m.youngs_modulus),
        ("ν", &m.poisson),
        ("α", &m.expansion),
        ("ρ", &m.density),
    ]
}

/// The keys of the library, for error messages.
pub fn keys() -> Vec<String> {
    library_kept().iter().map(|m| m.key.clone()).collect()
}

/// How a constant is typed and shown: the quantity it is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Quantity {
    /// A mirror constant or K_Ic (Pa·√m).
    Toughness,
    /// Young's modulus (Pa).
    Modulus,
    /// Poisson's ratio (plain number).
    Ratio,
    /// Expansion coefficient (1/K).
    Expansion,
    /// Density (kg/m³).
    Density,
}

impl Quantity {
    /// Read a value as typed, with its unit, within its physical range.
    pub fn parse(self, text: &str) -> Result<f64, UnitError> {
        match self {
            Quantity::Toughness => units::parse_positive(text, Dimension::Toughness),
            Quantity::Modulus => units::parse_modulus(text),
            Quantity::Ratio => units::parse_poisson(text),
            Quantity::Expansion => units::parse_expansion(text),
            Quantity::Density => units::parse_density(text),
        }
    }

    /// Read a spread (one standard deviation): as a value, zero or more.
    pub fn parse_spread(self, text: &str) -> Result<f64, UnitError> {
        let v = match self {
            Quantity::Toughness => units::parse_non_negative(text, Dimension::Toughness),
            Quantity::Modulus => match units::parse_modulus(text) {
                Err(UnitError::NotPositive { .. }) => Ok(0.0),
                other => other,
            },
            Quantity::Density => units::parse_density(text),
            other => other.parse(text),
        }?;
        if v < 0.0 {
            return Err(UnitError::Negative {
                input: text.trim().to_string(),
            });
        }
        Ok(v)
    }

    /// A value in its display unit, with the unit.
    pub fn show(self, si: f64) -> String {
        match self {
            Quantity::Toughness => units::format_sig(si, Unit::MegapascalRootMetre, 3),
            Quantity::Modulus => units::format_sig(si, Unit::Gigapascal, 3),
            Quantity::Ratio => units::fmt_sig(si, 3),
            Quantity::Expansion => format!("{} ppm/K", units::fmt_sig(si * 1e6, 3)),
            Quantity::Density => format!("{} kg/m³", units::fmt_sig(si, 4)),
        }
    }

    /// The value as it would be typed back (exact enough to read again the same).
    pub fn typed(self, si: f64) -> String {
        match self {
            Quantity::Toughness => units::format_exact(si, Unit::MegapascalRootMetre),
            Quantity::Modulus => units::format_exact(si, Unit::Gigapascal),
            Quantity::Ratio => format!("{si}"),
            Quantity::Expansion => format!("{} ppm/K", si * 1e6),
            Quantity::Density => format!("{si} kg/m³"),
        }
    }
}

/// The eight constants in table order: symbol, flag name, quantity.
pub const CONSTANTS: [(&str, &str, Quantity); 8] = [
    ("A_i", "a-i", Quantity::Toughness),
    ("A_o", "a-o", Quantity::Toughness),
    ("A_b", "a-b", Quantity::Toughness),
    ("K_Ic", "k-ic", Quantity::Toughness),
    ("E", "youngs-modulus", Quantity::Modulus),
    ("ν", "poisson", Quantity::Ratio),
    ("α", "expansion", Quantity::Expansion),
    ("ρ", "density", Quantity::Density),
];

/// The slot of a material that holds the constant at `i` of [`CONSTANTS`].
pub fn slot(m: &mut Material, i: usize) -> &mut Option<Constant> {
    match i {
        0 => &mut m.a_i,
        1 => &mut m.a_o,
        2 => &mut m.a_b,
        3 => &mut m.k_ic,
        4 => &mut m.youngs_modulus,
        5 => &mut m.poisson,
        6 => &mut m.expansion,
        _ => &mut m.density,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keys_are_unique_and_findable() {
        let lib = library();
        assert!(lib.len() >= 8);
        for m in &lib {
            assert_eq!(find(&m.key).as_ref(), Some(m));
            assert_eq!(lib.iter().filter(|o| o.key == m.key).count(), 1);
        }
        assert!(find("Soda_Lime").is_some());
        // the look-up compares by the rule of normal_key without making the string
        for typed in [
            "soda-lime",
            " Soda Lime ",
            "SODA_LIME",
            "soda-lim",
            "soda-limes",
            "",
        ] {
            assert_eq!(
                find(typed).is_some(),
                normal_key(typed) == "soda-lime",
                "{typed:?}"
            );
        }
        assert!(find("unobtainium").is_none());
        let mut own = find("soda-lime").unwrap();
        own.key = "lab_float".into();
        assert_eq!(find_in(&[own.clone()], "Lab-Float"), Some(own.clone()));
        assert_eq!(
            find_in(&[own], "soda_lime").map(|m| m.key),
            Some("soda-lime".into())
        );
    }

    #[test]
    fn calibrated_provenance_names_its_data() {
        let p = Provenance::Calibrated {
            note: "calibrated by Tarn Lab from 12 specimens on 2026-11-30".into(),
            sha256: "ab".repeat(32),
        };
        assert_eq!(p.mark(), "calibrated");
        let shown = p.to_string();
        assert!(
            shown.starts_with("calibrated: calibrated by Tarn Lab from 12"),
            "{shown}"
        );
        assert!(
            shown.ends_with(&format!("data SHA-256 {}", "ab".repeat(32))),
            "{shown}"
        );
        let json = serde_json::to_string(&p).unwrap();
        assert_eq!(serde_json::from_str::<Provenance>(&json).unwrap(), p);
    }

    #[test]
    fn every_constant_has_a_provenance_text_and_sane_spread() {
        for m in library() {
            for c in [
                &m.a_i,
                &m.a_o,
                &m.a_b,
                &m.k_ic,
                &m.youngs_modulus,
                &m.poisson,
                &m.expansion,
                &m.density,
            ]
            .into_iter()
            .flatten()
            {
                assert!(c.value.is_finite(), "{}", m.key);
                assert!(!c.provenance.text().is_empty(), "{}", m.key);
                if let Some(s) = c.spread {
                    assert!(s >= 0.0 && s.is_finite(), "{}", m.key);
                }
            }
        }
    }

    #[test]
    fn serde_round_trip() {
        let lib = library();
        let json = serde_json::to_string(&lib).unwrap();
        let back: Vec<Material> = serde_json::from_str(&json).unwrap();
        assert_eq!(back, lib);
    }
}
