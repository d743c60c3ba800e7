//! `shardlog materials`: the material library with the provenance of every constant.

use serde_json::json;

use super::{pad_right_with_gap, CliError, Context};
use shardlog_core::fracture::materials::{self, Constant, Material};
use shardlog_core::text::clean;
use shardlog_core::units::{fmt_sig, Unit};

#[derive(Debug, Clone, Default, clap::Args)]
pub struct MaterialsArgs {
    /// Print JSON (SI values, with the unit of each field named under "units").
    #[arg(long)]
    pub json: bool,
}

pub fn run(args: MaterialsArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let lib = materials::library();
    if args.json {
        let value = json!({
            "units": {
                "a_i": "Pa*m^0.5", "a_o": "Pa*m^0.5", "a_b": "Pa*m^0.5", "k_ic": "Pa*m^0.5",
                "youngs_modulus": "Pa", "poisson": "1", "expansion": "1/K", "density": "kg/m^3",
                "spread": "one standard deviation, same unit as the value",
            },
            "materials": lib,
        });
        let text = serde_json::to_string_pretty(&value)
            .map_err(|e| CliError::work(format!("JSON output: {e}")))?;
        writeln!(ctx.out, "{text}")?;
    } else {
        write!(ctx.out, "{}", render_plain(&lib))?;
    }
    Ok(())
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

/// The plain listing: one table of values, then each material's sources.
pub fn render_plain(lib: &[Material]) -> String {
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
    for m in lib {
        o.push_str(&format!(
            "{}{}{}{}{}{}{}{}{}\n",
            pad_right_with_gap(&clean(&m.key), 22),
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
    for m in lib {
        o.push_str(&format!("\n{} ({})\n", clean(&m.name), clean(&m.key)));
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
        let text = render_plain(&lib);
        for m in &lib {
            assert!(text.contains(&m.key), "{}", m.key);
        }
        assert!(text.contains("published: G. D. Quinn"));
        assert!(text.contains("from memory"));
        assert!(text.contains("1.90±0.15"), "{text}");
    }
}
