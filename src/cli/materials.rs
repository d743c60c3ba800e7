//! `shardlog materials`: the material library and this bench's own materials, with the
//! provenance of every constant; `materials add|edit|show` for the own ones. A library
//! material is never changed, only copied (`materials add CODE --from LIBRARY-KEY`).

use std::path::Path;

use serde_json::json;

use super::records::{edge_stamp, open, open_to_read};
use super::{pad_right_with_gap, CliError, Context};
use crate::store::{MaterialBook, OwnMaterial, StoreError};
use shardlog_core::fracture::materials::{self, Constant, Material, Provenance};
use shardlog_core::text::clean;
use shardlog_core::units::{fmt_sig, Unit};

#[derive(Debug, Clone, Default, clap::Args)]
pub struct MaterialsArgs {
    #[command(subcommand)]
    pub command: Option<MaterialsCommand>,
    /// Print JSON (SI values, with the unit of each field named under "units").
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Clone, clap::Subcommand)]
pub enum MaterialsCommand {
    /// Make an own material: a copy of a library material (--from) or a new one, with any
    /// constant typed with its unit.
    Add(Box<AddArgs>),
    /// Change an own material's constants, name or notes (a new revision; the audit log
    /// keeps every one). A library material cannot be changed, only copied.
    Edit(Box<EditArgs>),
    /// Every constant of one material (library or own) with its spread and provenance.
    Show {
        /// The material's key or code.
        code: String,
        /// Print JSON (SI values).
        #[arg(long)]
        json: bool,
    },
}

#[derive(Debug, Clone, clap::Args)]
pub struct AddArgs {
    /// The new code: lower-case letters, digits and _, starting with a letter (e.g.
    /// lab_float_2026); kept for good, since records hold it.
    pub code: String,
    /// Copy every constant, with its provenance, from this library material.
    #[arg(long, value_name = "LIBRARY-KEY")]
    pub from: Option<String>,
    #[command(flatten)]
    pub values: ConstantFlags,
}

#[derive(Debug, Clone, clap::Args)]
pub struct EditArgs {
    /// The own material's code.
    pub code: String,
    #[command(flatten)]
    pub values: ConstantFlags,
}

/// The constants and texts a user may type. Each value with its unit; `none` removes the
/// constant. A spread is one standard deviation, in a unit of the same kind.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct ConstantFlags {
    /// Name for people (e.g. "float glass, Tarn works, 2026 batch").
    #[arg(long)]
    pub name: Option<String>,
    /// Whether it is a glass (temper classes apply to flat glass only).
    #[arg(long, value_name = "yes|no")]
    pub glass: Option<YesNo>,
    /// Free notes (what the constants were measured on, caveats).
    #[arg(long)]
    pub notes: Option<String>,
    /// Where the values typed here come from (saved as their provenance, marked "user").
    #[arg(long, value_name = "TEXT")]
    pub source: Option<String>,
    /// Mirror–mist constant A_i, e.g. "1.95 MPa√m".
    #[arg(long, allow_hyphen_values = true)]
    pub a_i: Option<String>,
    #[arg(long, allow_hyphen_values = true)]
    pub a_i_spread: Option<String>,
    /// Mist–hackle constant A_o, e.g. "2.2 MPa√m".
    #[arg(long, allow_hyphen_values = true)]
    pub a_o: Option<String>,
    #[arg(long, allow_hyphen_values = true)]
    pub a_o_spread: Option<String>,
    /// Branching constant A_b, e.g. "2.3 MPa√m".
    #[arg(long, allow_hyphen_values = true)]
    pub a_b: Option<String>,
    #[arg(long, allow_hyphen_values = true)]
    pub a_b_spread: Option<String>,
    /// Fracture toughness K_Ic, e.g. "0.75 MPa√m".
    #[arg(long, allow_hyphen_values = true)]
    pub k_ic: Option<String>,
    #[arg(long, allow_hyphen_values = true)]
    pub k_ic_spread: Option<String>,
    /// Young's modulus E, e.g. "70 GPa".
    #[arg(long, allow_hyphen_values = true)]
    pub youngs_modulus: Option<String>,
    #[arg(long, allow_hyphen_values = true)]
    pub youngs_modulus_spread: Option<String>,
    /// Poisson's ratio ν, e.g. 0.22.
    #[arg(long, allow_hyphen_values = true)]
    pub poisson: Option<String>,
    #[arg(long, allow_hyphen_values = true)]
    pub poisson_spread: Option<String>,
    /// Linear expansion coefficient α, e.g. "9 ppm/K" or "9e-6/K".
    #[arg(long, allow_hyphen_values = true)]
    pub expansion: Option<String>,
    #[arg(long, allow_hyphen_values = true)]
    pub expansion_spread: Option<String>,
    /// Density ρ, e.g. "2500 kg/m³" or "2.5 g/cm³".
    #[arg(long, allow_hyphen_values = true)]
    pub density: Option<String>,
    #[arg(long, allow_hyphen_values = true)]
    pub density_spread: Option<String>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum YesNo {
    Yes,
    No,
}

pub use materials::{slot, Quantity as Kind, CONSTANTS};

impl ConstantFlags {
    fn typed(&self) -> [(Option<&String>, Option<&String>); 8] {
        [
            (self.a_i.as_ref(), self.a_i_spread.as_ref()),
            (self.a_o.as_ref(), self.a_o_spread.as_ref()),
            (self.a_b.as_ref(), self.a_b_spread.as_ref()),
            (self.k_ic.as_ref(), self.k_ic_spread.as_ref()),
            (
                self.youngs_modulus.as_ref(),
                self.youngs_modulus_spread.as_ref(),
            ),
            (self.poisson.as_ref(), self.poisson_spread.as_ref()),
            (self.expansion.as_ref(), self.expansion_spread.as_ref()),
            (self.density.as_ref(), self.density_spread.as_ref()),
        ]
    }

    /// Apply what was typed to `m`; every problem is named by its flag.
    fn apply(&self, m: &mut Material, note: &str) -> Result<bool, CliError> {
        let mut changed = false;
        for (i, (value, spread)) in self.typed().into_iter().enumerate() {
            let (_, flag, kind) = CONSTANTS[i];
            let spread = match spread {
                Some(t) if t.trim() == "none" => Some(None),
                Some(t) => {
                    Some(Some(kind.parse_spread(t).map_err(|e| {
                        CliError::usage(format!("--{flag}-spread: {e}"))
                    })?))
                }
                None => None,
            };
            let c = slot(m, i);
            match value {
                Some(t) if t.trim() == "none" => *c = None,
                Some(t) => {
                    let v = kind
                        .parse(t)
                        .map_err(|e| CliError::usage(format!("--{flag}: {e}")))?;
                    *c = Some(Constant {
                        value: v,
                        spread: spread.flatten(),
                        provenance: Provenance::User {
                            note: note.to_string(),
                        },
                    });
                }
                None => match (c.as_mut(), spread) {
                    (Some(c), Some(s)) => c.spread = s,
                    (None, Some(_)) => {
                        return Err(CliError::usage(format!(
                            "--{flag}-spread: the material has no {flag}; give --{flag} too"
                        )))
                    }
                    _ => continue,
                },
            }
            changed = true;
        }
        if let Some(n) = &self.name {
            m.name = n.clone();
            changed = true;
        }
        if let Some(n) = &self.notes {
            m.notes = n.clone();
            changed = true;
        }
        if let Some(g) = self.glass {
            m.glass = g == YesNo::Yes;
            changed = true;
        }
        Ok(changed)
    }
}

/// A refusal of what the user typed is a usage error; anything else a failure of the work.
fn refused(e: StoreError) -> CliError {
    match e {
        StoreError::Invalid { .. } | StoreError::Duplicate { .. } => CliError::usage(e.to_string()),
        other => CliError::work(other.to_string()),
    }
}

/// The library, and the database's own materials when one of `keys` is not in the library
/// and the database exists (a calculation on library materials never opens it).
pub fn book_for(db: &Path, keys: &[&str]) -> Result<MaterialBook, CliError> {
    if keys.iter().all(|k| materials::find(k).is_some()) || !db.exists() {
        return Ok(MaterialBook::library_only());
    }
    open_to_read(db)?
        .material_book()
        .map_err(|e| CliError::work(e.to_string()))
}

pub fn run(args: MaterialsArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    match args.command {
        None => list(args.json, ctx),
        Some(MaterialsCommand::Show { code, json }) => show(&code, json || args.json, ctx),
        Some(MaterialsCommand::Add(a)) => add(*a, ctx),
        Some(MaterialsCommand::Edit(a)) => edit(*a, ctx),
    }
}

fn typed_note(flags: &ConstantFlags, actor: &str, on: chrono::NaiveDate) -> String {
    match &flags.source {
        Some(s) => s.clone(),
        None => format!("typed by {actor} on {on}"),
    }
}

fn add(a: AddArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let stamp = edge_stamp();
    let mut m = match &a.from {
        Some(key) => materials::find(key).ok_or_else(|| {
            CliError::usage(format!(
                "--from: '{}' is not a library material; expected one of {}",
                clean(key),
                materials::keys().join(", ")
            ))
        })?,
        None => Material {
            key: a.code.clone(),
            name: String::new(),
            glass: false,
            a_i: None,
            a_o: None,
            a_b: None,
            k_ic: None,
            youngs_modulus: None,
            poisson: None,
            expansion: None,
            density: None,
            notes: String::new(),
        },
    };
    if a.from.is_some() && a.values.name.is_none() {
        m.name = format!("{} ({}, own copy)", m.name, a.code);
    }
    if a.from.is_none() && a.values.name.is_none() {
        return Err(CliError::usage(
            "--name: a new material needs a name (or copy one with --from LIBRARY-KEY)",
        ));
    }
    let note = typed_note(&a.values, &stamp.actor, stamp.at.date_naive());
    a.values.apply(&mut m, &note)?;
    let mut store = open(&ctx.db)?;
    let base = a.from.as_deref();
    let own = store
        .add_own_material(&a.code, base, &m, &stamp)
        .map_err(refused)?;
    writeln!(
        ctx.out,
        "added own material {} ({}), revision 1{}",
        own.code,
        clean(&own.material.name),
        own.base
            .as_deref()
            .map(|b| format!(", copied from {b}"))
            .unwrap_or_default()
    )?;
    Ok(())
}

fn edit(a: EditArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    if let Some(m) = materials::find(&a.code) {
        return Err(CliError::usage(format!(
            "{} is a library material and cannot be changed; copy it with `shardlog materials add NEW_CODE --from {}` and change the copy",
            m.key, m.key
        )));
    }
    let stamp = edge_stamp();
    let mut store = open(&ctx.db)?;
    let before = own_or_usage(&store.own_materials().map_err(refused)?, &a.code)?;
    let mut m = before.material.clone();
    let note = typed_note(&a.values, &stamp.actor, stamp.at.date_naive());
    if !a.values.apply(&mut m, &note)? {
        return Err(CliError::usage(
            "nothing to change; give a constant (e.g. --a-i \"1.95 MPa√m\"), --name, --notes or --glass",
        ));
    }
    let after = store
        .update_own_material(&before.code, Some(before.revision), &m, &stamp)
        .map_err(refused)?;
    writeln!(
        ctx.out,
        "{} own material {} ({}), revision {}",
        if after.revision == before.revision {
            "unchanged"
        } else {
            "changed"
        },
        after.code,
        clean(&after.material.name),
        after.revision
    )?;
    Ok(())
}

fn own_or_usage(own: &[OwnMaterial], code: &str) -> Result<OwnMaterial, CliError> {
    own.iter().find(|o| o.code == code).cloned().ok_or_else(|| {
        let codes: Vec<&str> = own.iter().map(|o| o.code.as_str()).collect();
        CliError::usage(format!(
            "no own material \"{}\"; {}",
            clean(code),
            if codes.is_empty() {
                "there are none yet (make one with `shardlog materials add CODE --from LIBRARY-KEY`)".to_string()
            } else {
                format!("the own materials are {}", codes.join(", "))
            }
        ))
    })
}

/// The own materials of the database, none when it does not exist yet.
fn own_if_any(db: &Path) -> Result<Vec<OwnMaterial>, CliError> {
    if !db.exists() {
        return Ok(Vec::new());
    }
    open_to_read(db)?
        .own_materials()
        .map_err(|e| CliError::work(e.to_string()))
}

fn list(json: bool, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let lib = materials::library();
    let own = own_if_any(&ctx.db)?;
    if json {
        let value = json!({
            "units": {
                "a_i": "Pa*m^0.5", "a_o": "Pa*m^0.5", "a_b": "Pa*m^0.5", "k_ic": "Pa*m^0.5",
                "youngs_modulus": "Pa", "poisson": "1", "expansion": "1/K", "density": "kg/m^3",
                "spread": "one standard deviation, same unit as the value",
            },
            "materials": lib,
            "own_materials": own,
        });
        let text = serde_json::to_string_pretty(&value)
            .map_err(|e| CliError::work(format!("JSON output: {e}")))?;
        writeln!(ctx.out, "{text}")?;
    } else {
        write!(ctx.out, "{}", render_plain(&lib, &own))?;
    }
    Ok(())
}

fn show(code: &str, json: bool, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let own = match materials::find(code) {
        Some(_) => Vec::new(),
        None => own_if_any(&ctx.db)?,
    };
    let (m, own) = match materials::find(code) {
        Some(m) => (m, None),
        None => {
            let o = own_or_usage(&own, code).map_err(|e| {
                CliError::usage(format!(
                    "{}; the library keys are {}",
                    e.message(),
                    materials::keys().join(", ")
                ))
            })?;
            (o.material.clone(), Some(o))
        }
    };
    if json {
        let value = match &own {
            Some(o) => json!({"library": false, "own_material": o}),
            None => json!({"library": true, "material": m}),
        };
        let text = serde_json::to_string_pretty(&value)
            .map_err(|e| CliError::work(format!("JSON output: {e}")))?;
        writeln!(ctx.out, "{text}")?;
        return Ok(());
    }
    write!(ctx.out, "{}", render_one(&m, own.as_ref()))?;
    Ok(())
}

/// One material in full: each constant with its spread and provenance.
pub fn render_one(m: &Material, own: Option<&OwnMaterial>) -> String {
    let mut o = format!("{} — {}\n", clean(&m.key), clean(&m.name));
    match own {
        Some(own) => o.push_str(&format!(
            "own material, revision {}{}\n",
            own.revision,
            own.base
                .as_deref()
                .map(|b| format!(", copied from the library's {b}"))
                .unwrap_or_default()
        )),
        None => o.push_str(
            "library material (read-only; copy it with `materials add CODE --from KEY`)\n",
        ),
    }
    o.push_str(&format!("glass: {}\n", if m.glass { "yes" } else { "no" }));
    let mut copy = m.clone();
    for (i, (sym, _, kind)) in CONSTANTS.iter().enumerate() {
        let line = match slot(&mut copy, i) {
            Some(c) => format!(
                "{}{}{}\n      {}",
                pad_right_with_gap(sym, 6),
                kind.show(c.value),
                c.spread
                    .map(|s| format!(" ± {} (one standard deviation)", kind.show(s)))
                    .unwrap_or_default(),
                clean(&c.provenance.to_string())
            ),
            None => format!("{}–", pad_right_with_gap(sym, 6)),
        };
        o.push_str(&line);
        o.push('\n');
    }
    if !m.notes.is_empty() {
        o.push_str(&format!("notes: {}\n", clean(&m.notes)));
    }
    o
}

fn cell(c: &Option<Constant>, unit_factor: f64, sig: usize) -> String {
    match c {
        Some(c) => {
            let v = fmt_sig(c.value / unit_factor, sig);
            match c.spread {
                Some(s) => format!("{v}±{}", fmt_sig(s / unit_factor, 2)),
                None => v,
            }
        }
        None => "–".to_string(),
    }
}

/// The plain listing: one table of values (own materials marked "own"), then each
/// material's sources.
pub fn render_plain(lib: &[Material], own: &[OwnMaterial]) -> String {
    let all: Vec<(&Material, Option<&OwnMaterial>)> = lib
        .iter()
        .map(|m| (m, None))
        .chain(own.iter().map(|o| (&o.material, Some(o))))
        .collect();
    let t = Unit::MegapascalRootMetre.symbol();
    let mut o = String::new();
    o.push_str(&format!(
        "{}{}{}{}{}{}{}{}{}\n",
        pad_right_with_gap("key", 22),
        pad_right_with_gap(&format!("A_i {t}"), 14),
        pad_right_with_gap(&format!("A_o {t}"), 14),
        pad_right_with_gap(&format!("A_b {t}"), 14),
        pad_right_with_gap(&format!("K_Ic {t}"), 15),
        pad_right_with_gap("E GPa", 7),
        pad_right_with_gap("ν", 6),
        pad_right_with_gap("α 1e-6/K", 10),
        "ρ kg/m³"
    ));
    for (m, mine) in &all {
        let key = match mine {
            Some(_) => format!("{} (own)", clean(&m.key)),
            None => clean(&m.key),
        };
        o.push_str(&format!(
            "{}{}{}{}{}{}{}{}{}\n",
            pad_right_with_gap(&key, 22),
            pad_right_with_gap(&cell(&m.a_i, 1e6, 3), 14),
            pad_right_with_gap(&cell(&m.a_o, 1e6, 3), 14),
            pad_right_with_gap(&cell(&m.a_b, 1e6, 3), 14),
            pad_right_with_gap(&cell(&m.k_ic, 1e6, 3), 15),
            pad_right_with_gap(&cell(&m.youngs_modulus, 1e9, 3), 7),
            pad_right_with_gap(&cell(&m.poisson, 1.0, 2), 6),
            pad_right_with_gap(&cell(&m.expansion, 1e-6, 2), 10),
            cell(&m.density, 1.0, 4),
        ));
    }
    o.push_str("\n± is one standard deviation. Sources:\n");
    for (m, mine) in &all {
        let what = match mine {
            Some(own) => format!(
                "own, revision {}{}",
                own.revision,
                own.base
                    .as_deref()
                    .map(|b| format!(", copied from {b}"))
                    .unwrap_or_default()
            ),
            None => "library".to_string(),
        };
        o.push_str(&format!(
            "\n{} ({}; {what})\n",
            clean(&m.name),
            clean(&m.key)
        ));
        let items = [
            ("A_i", &m.a_i),
            ("A_o", &m.a_o),
            ("A_b", &m.a_b),
            ("K_Ic", &m.k_ic),
            ("E", &m.youngs_modulus),
            ("ν", &m.poisson),
            ("α", &m.expansion),
            ("ρ", &m.density),
        ];
        for (sym, c) in items {
            if let Some(c) = c {
                o.push_str(&format!(
                    "  {}{}\n",
                    pad_right_with_gap(sym, 6),
                    clean(&c.provenance.to_string())
                ));
            }
        }
        if !m.notes.is_empty() {
            o.push_str(&format!("  note  {}\n", clean(&m.notes)));
        }
    }
    o.push_str(
        "\nValues marked \"from memory\" were not confirmed against the document: calibrate or \
         override them (--constant, --toughness) where it matters.\n",
    );
    o
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn listing_shows_every_key_and_provenance() {
        let lib = materials::library();
        let text = render_plain(&lib, &[]);
        for m in &lib {
            assert!(text.contains(&m.key), "{}", m.key);
        }
        assert!(text.contains("published: G. D. Quinn"));
        assert!(text.contains("from memory"));
        assert!(text.contains("1.90±0.15"), "{text}");
    }
}
