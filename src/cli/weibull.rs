//! `shardlog weibull`: fit a two-parameter Weibull distribution to a column of strengths
//! read from a CSV file (a header line is required), with optional right-censoring.

use std::path::PathBuf;

use serde_json::{json, Value};

use super::{CliError, Context};
use shardlog_core::fleet::weibull::{fit, Specimen, WeibullError, WeibullFit};
use shardlog_core::units::{self, fmt_sig, Dimension, Unit};

#[derive(Debug, clap::Args)]
pub struct WeibullArgs {
    /// CSV file with a header line.
    #[arg(long, value_name = "FILE.csv")]
    pub input: PathBuf,
    /// Column of strengths (default: stress_mpa, or the only column).
    #[arg(long, value_name = "NAME")]
    pub column: Option<String>,
    /// Column that is true/false, yes/no or 1/0; true = the part survived that stress.
    #[arg(long, value_name = "NAME")]
    pub censored_column: Option<String>,
    /// Unit of bare numbers (default: from the column name's suffix such as _mpa, _kpa, _bar,
    /// _psi or _ksi, else MPa when the name has no unit; it must agree with a suffix, and an
    /// unknown suffix needs it). Cells may also carry their own unit, e.g. "36 ksi".
    #[arg(long, value_name = "UNIT")]
    pub unit: Option<String>,
    /// Print JSON instead of a table.
    #[arg(long)]
    pub json: bool,
}

/// Methods, named in every output.
pub const METHOD_FIT: &str =
    "two-parameter Weibull, maximum likelihood (ASTM C1239 / ISO 20501 equations), right-censoring allowed";
pub const METHOD_BOUNDS: &str = "complete samples: pivotal quantities (ASTM C1239) with quantiles from a Monte Carlo table (fixed seed, 200 000 samples per N); censored samples or N over 200: Wald intervals on ln m and ln sigma_theta from the observed information (large-sample)";
pub const METHOD_PLOT: &str = "Johnson's adjusted ranks, P = (rank - 0.5) / N";
pub const METHOD_UNBIASED: &str =
    "unbiasing factor 1 / E[m_hat / m] from the same Monte Carlo table (complete samples)";

/// Why a censored fit has no unbiased modulus. ASTM C1239 (scope: 1.1 of C1239-00, 1.4 of
/// C1239-07) gives its bias correction and confidence bounds for samples whose failures all
/// come from one flaw population, and says they are not applicable to competing flaw
/// populations; its unbiasing factors are tabulated by the number of specimens of a complete
/// sample.
pub const NOTE_UNBIASED_CENSORED: &str = "not given: ASTM C1239 tabulates its unbiasing factors for complete samples from one flaw population and says its bias correction does not apply to competing flaw populations; no factor for censored samples is given there, and none is made up here";
pub const NOTE_UNBIASED_SMALL: &str = "not given: the unbiasing table starts at 3 specimens";
/// Why a censored fit has no Anderson-Darling statistic.
pub const NOTE_AD_CENSORED: &str = "not given: the Anderson-Darling statistic and its 5 % critical value (modified A* against 0.757) are for complete samples; with censored values they do not apply and no censored-sample critical values are used";
/// What the bounds of a censored fit are.
pub const NOTE_BOUNDS_CENSORED: &str = "large-sample Wald bounds from the censored likelihood; ASTM C1239 says its confidence-bound method does not apply to competing flaw populations, so these are approximate, the more so with few failures";

/// Split one CSV record (RFC 4180 quoting: "a, b" and "" for a quote inside quotes).
pub fn split_csv_line(line: &str) -> Result<Vec<String>, String> {
    let mut out = Vec::new();
    let mut field = String::new();
    let mut chars = line.chars().peekable();
    let mut in_quotes = false;
    let mut was_quoted = false;
    while let Some(c) = chars.next() {
        if in_quotes {
            if c == '"' {
                if chars.peek() == Some(&'"') {
                    chars.next();
                    field.push('"');
                } else {
                    in_quotes = false;
                }
            } else {
                field.push(c);
            }
        } else {
            match c {
                ',' => {
                    out.push(std::mem::take(&mut field));
                    was_quoted = false;
                }
                '"' if field.trim().is_empty() && !was_quoted => {
                    field.clear();
                    in_quotes = true;
                    was_quoted = true;
                }
                '"' => return Err("a quote in the middle of an unquoted field".into()),
                c => field.push(c),
            }
        }
    }
    if in_quotes {
        return Err("a quoted field is not closed on this line".into());
    }
    out.push(field);
    Ok(out)
}

/// Read true/false, yes/no, 1/0 (also t/f, y/n), any case.
pub fn parse_flag(text: &str) -> Option<bool> {
    match text.trim().to_ascii_lowercase().as_str() {
        "true" | "t" | "yes" | "y" | "1" => Some(true),
        "false" | "f" | "no" | "n" | "0" => Some(false),
        _ => None,
    }
}

/// What a strength column's name says about the unit of its bare numbers.
#[derive(Debug, Clone, Copy, PartialEq)]
enum ColumnUnit {
    /// A suffix or bracket that names a stress unit: `stress_mpa`, `strength (psi)`.
    Named(Unit),
    /// No unit in the name (`stress`, `strength`, `max_stress`).
    Unnamed,
    /// A suffix or bracket that is not a stress unit shardlog knows (`stress_furlong`).
    Unknown,
}

/// Column-name suffixes and what they mean. Column names are written in lower case by
/// convention, so a suffix is read in any case (`_mpa` is MPa: nobody heads a column with
/// millipascals). Each is an exact unit.
const COLUMN_SUFFIXES: &[(&str, Unit)] = &[
    ("pa", Unit::Pascal),
    ("kpa", Unit::Kilopascal),
    ("mpa", Unit::Megapascal),
    ("gpa", Unit::Gigapascal),
    ("bar", Unit::Bar),
    ("psi", Unit::Psi),
    ("ksi", Unit::Ksi),
    ("kpsi", Unit::Ksi),
    ("n_mm2", Unit::Megapascal),
    ("mn_m2", Unit::Megapascal),
    ("kn_m2", Unit::Kilopascal),
    ("lbf_in2", Unit::Psi),
    ("klbf_in2", Unit::Ksi),
];

/// Last words of a column name that say what it holds, not its unit.
const NOT_A_UNIT: &[&str] = &[
    "stress",
    "strength",
    "strengths",
    "sigma",
    "value",
    "values",
    "load",
    "failure",
    "fracture",
    "mor",
    "s",
    "sf",
    "observed",
    "measured",
];

fn unit_from_column(name: &str) -> ColumnUnit {
    let trimmed = name.trim();
    // "strength (MPa)", "stress [psi]": the unit in brackets, read like a typed unit
    if let Some(open) = trimmed.rfind(['(', '[']) {
        let inner = trimmed[open + 1..].trim_end_matches([')', ']']).trim();
        let lower = inner.to_ascii_lowercase().replace(['/', '^', ' '], "_");
        return match Unit::lookup(inner)
            .or_else(|| {
                COLUMN_SUFFIXES
                    .iter()
                    .find(|(s, _)| *s == lower.trim_matches('_'))
                    .map(|(_, u)| *u)
            })
            .filter(|u| u.dimension() == Dimension::Stress)
        {
            Some(u) => ColumnUnit::Named(u),
            None => ColumnUnit::Unknown,
        };
    }
    let lower = trimmed.to_ascii_lowercase();
    // the longest known suffix after an underscore
    let named = COLUMN_SUFFIXES
        .iter()
        .filter(|(suffix, _)| {
            lower
                .strip_suffix(suffix)
                .is_some_and(|rest| rest.ends_with('_'))
        })
        .max_by_key(|(suffix, _)| suffix.len());
    if let Some((_, u)) = named {
        return ColumnUnit::Named(*u);
    }
    match lower.rsplit_once('_') {
        None => ColumnUnit::Unnamed,
        Some((_, last)) if NOT_A_UNIT.contains(&last) => ColumnUnit::Unnamed,
        Some(_) => ColumnUnit::Unknown,
    }
}

/// The unit of a column's bare numbers: `--unit` and the column name must agree; a name
/// with no unit means MPa unless `--unit` says otherwise; an unknown suffix needs `--unit`.
fn column_unit(col_name: &str, given: Option<Unit>) -> Result<Unit, CliError> {
    match (unit_from_column(col_name), given) {
        (ColumnUnit::Named(named), Some(given)) if named != given => Err(CliError::usage(format!(
            "--unit {} conflicts with column '{col_name}', whose name says {}; \
             drop --unit or rename the column",
            given.symbol(),
            named.symbol()
        ))),
        (ColumnUnit::Named(named), _) => Ok(named),
        (_, Some(given)) => Ok(given),
        (ColumnUnit::Unnamed, None) => Ok(Unit::Megapascal),
        (ColumnUnit::Unknown, None) => Err(CliError::usage(format!(
            "column '{col_name}': its name ends in a unit shardlog does not know; \
             give the unit of its numbers with --unit (MPa, kPa, Pa, GPa, bar, psi, ksi) \
             or name the column with a known suffix such as _mpa, _kpa, _bar, _psi, _ksi"
        ))),
    }
}

/// Strengths read from a CSV text, SI (Pa).
#[derive(Debug, Clone, PartialEq)]
pub struct StrengthColumn {
    pub column: String,
    pub unit: Unit,
    pub specimens: Vec<Specimen>,
    /// Line number of each specimen (1 = the header).
    pub lines: Vec<usize>,
}

/// Parse the CSV text. Errors name the line and the column.
pub fn read_strengths(
    text: &str,
    column: Option<&str>,
    censored_column: Option<&str>,
    unit: Option<Unit>,
) -> Result<StrengthColumn, CliError> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut lines = text.lines().enumerate().map(|(i, l)| (i + 1, l));
    let header = loop {
        match lines.next() {
            None => return Err(CliError::work(
                "the file is empty; expected a header line naming the columns, e.g. 'stress_mpa'",
            )),
            Some((_, l)) if l.trim().is_empty() => continue,
            // a signed export's first line: the head it was signed at, not data
            Some((_, l)) if l.starts_with(crate::store::exchange::CSV_SIGNED_PREFIX) => continue,
            Some((n, l)) => break (n, l),
        }
    };
    let names: Vec<String> = split_csv_line(header.1)
        .map_err(|e| CliError::work(format!("line {}: {e}", header.0)))?
        .into_iter()
        .map(|s| s.trim().to_string())
        .collect();
    let find = |want: &str| {
        names
            .iter()
            .position(|n| n.eq_ignore_ascii_case(want.trim()))
    };
    let list = names.join(", ");
    let col = match column {
        Some(c) => find(c).ok_or_else(|| {
            CliError::usage(format!(
                "--column: the file has no column '{c}' (its columns: {list})"
            ))
        })?,
        None => match find("stress_mpa") {
            Some(i) => i,
            None if names.len() == 1 => 0,
            None => {
                return Err(CliError::usage(format!(
                    "the file has no column 'stress_mpa'; name the strength column with --column (its columns: {list})"
                )))
            }
        },
    };
    let cens = match censored_column {
        Some(c) => Some(find(c).ok_or_else(|| {
            CliError::usage(format!(
                "--censored-column: the file has no column '{c}' (its columns: {list})"
            ))
        })?),
        None => None,
    };
    let col_name = names[col].clone();
    let unit = column_unit(&col_name, unit)?;
    let mut specimens = Vec::new();
    let mut where_ = Vec::new();
    for (n, line) in lines {
        if line.trim().is_empty() {
            continue;
        }
        let fields = split_csv_line(line).map_err(|e| CliError::work(format!("line {n}: {e}")))?;
        if fields.len() != names.len() {
            return Err(CliError::work(format!(
                "line {n}: {} fields, but the header has {}",
                fields.len(),
                names.len()
            )));
        }
        let cell = fields[col].trim();
        let at = || format!("line {n}, column '{col_name}'");
        if cell.is_empty() {
            return Err(CliError::work(format!(
                "{}: empty cell; expected a strength such as 250 (read as {})",
                at(),
                unit.symbol()
            )));
        }
        let si = match units::parse_number(cell) {
            Ok(v) => unit.to_si(v),
            Err(units::UnitError::NotANumber { .. }) => units::parse(cell, Dimension::Stress)
                .map_err(|e| CliError::work(format!("{}: {e}", at())))?,
            Err(e) => return Err(CliError::work(format!("{}: {e}", at()))),
        };
        if si <= 0.0 {
            return Err(CliError::work(format!(
                "{}: '{cell}' must be greater than zero (a strength)",
                at()
            )));
        }
        let censored = match cens {
            Some(ci) => {
                let c = fields[ci].trim();
                parse_flag(c).ok_or_else(|| {
                    CliError::work(format!(
                        "line {n}, column '{}': '{c}' is not true/false, yes/no or 1/0 (true = survived)",
                        names[ci]
                    ))
                })?
            }
            None => false,
        };
        specimens.push(Specimen {
            stress: si,
            censored,
        });
        where_.push(n);
    }
    Ok(StrengthColumn {
        column: col_name,
        unit,
        specimens,
        lines: where_,
    })
}

/// Explain a fit failure for the user, naming the column and lines.
pub fn explain(e: &WeibullError, col: &StrengthColumn) -> String {
    let c = &col.column;
    match e {
        WeibullError::Empty => format!("column '{c}' has no values"),
        WeibullError::NotPositive { index, value } => format!(
            "line {}, column '{c}': {value} must be greater than zero",
            col.lines.get(*index).copied().unwrap_or(0)
        ),
        WeibullError::AllCensored => format!(
            "column '{c}': all {} values are censored (survived); a fit needs at least three failures",
            col.specimens.len()
        ),
        WeibullError::TooFewFailures { failures } => format!(
            "column '{c}': only {failures} failure value(s); a Weibull fit needs at least three (two points always lie on a line; ASTM C1239 asks for 30)"
        ),
        WeibullError::AllEqual { value } => format!(
            "column '{c}': all failure values are equal ({}); the Weibull modulus is unbounded",
            units::format_sig(*value, col.unit, 4)
        ),
        WeibullError::NoConvergence => {
            format!("column '{c}': the likelihood equation did not converge")
        }
    }
}

fn interval_mpa(i: shardlog_core::fleet::Interval) -> Value {
    json!([units::to_mpa(i.low), units::to_mpa(i.high)])
}

/// The JSON object of a fit whose stresses are in Pa (`scale` and bounds printed in MPa).
pub fn fit_json(f: &WeibullFit) -> Value {
    let ad = f.anderson_darling;
    let mut v = json!({
        "n": f.n,
        "n_failures": f.n_failures,
        "n_censored": f.n_censored,
        "modulus": f.modulus,
        "modulus_unbiased": f.modulus_unbiased,
        "unbiasing_factor": f.unbiasing_factor,
        "scale": units::to_mpa(f.scale),
        "unit": "MPa",
        "modulus_ci90": f.modulus_ci90.as_array(),
        "modulus_ci95": f.modulus_ci95.as_array(),
        "scale_ci90": interval_mpa(f.scale_ci90),
        "scale_ci95": interval_mpa(f.scale_ci95),
        "modulus_bounds_method": f.modulus_bounds_method,
        "scale_bounds_method": f.scale_bounds_method,
        "warnings": f.warnings,
        "anderson_darling": ad.map(|a| a.a2),
        "anderson_darling_modified": ad.map(|a| a.a2_modified),
        "anderson_darling_critical_5pct": ad.map(|a| a.critical_5pct),
        "anderson_darling_rejected_5pct": ad.map(|a| a.rejected_at_5pct),
        "method": {
            "fit": METHOD_FIT,
            "bounds": METHOD_BOUNDS,
            "plot_positions": METHOD_PLOT,
            "unbiased_modulus": METHOD_UNBIASED,
        },
        "plot": f.plot.iter().map(|p| json!({
            "stress_mpa": units::to_mpa(p.stress),
            "rank": p.rank,
            "probability": p.probability,
        })).collect::<Vec<_>>(),
    });
    // why a figure is null (or approximate): only present when one is
    let mut notes = serde_json::Map::new();
    if f.modulus_unbiased.is_none() {
        let why = if f.n_censored > 0 {
            NOTE_UNBIASED_CENSORED
        } else {
            NOTE_UNBIASED_SMALL
        };
        notes.insert("modulus_unbiased".into(), json!(why));
    }
    if ad.is_none() {
        notes.insert("anderson_darling".into(), json!(NOTE_AD_CENSORED));
    }
    if f.n_censored > 0 {
        notes.insert("bounds".into(), json!(NOTE_BOUNDS_CENSORED));
    }
    if !notes.is_empty() {
        if let Some(m) = v.as_object_mut() {
            m.insert("notes".into(), Value::Object(notes));
        }
    }
    v
}

fn iv(i: shardlog_core::fleet::Interval, unit: Unit) -> String {
    format!(
        "[{}, {}]",
        fmt_sig(unit.from_si(i.low), 4),
        fmt_sig(unit.from_si(i.high), 4)
    )
}

/// The readable table of a fit (stresses in Pa, printed in `unit`).
pub fn fit_table(f: &WeibullFit, unit: Unit, indent: &str) -> String {
    let u = unit.symbol();
    let mut s = String::new();
    let line = |s: &mut String, label: &str, value: String| {
        s.push_str(&format!("{indent}{label:<28}{value}\n"));
    };
    line(
        &mut s,
        "specimens",
        format!(
            "{} ({} failures, {} censored)",
            f.n, f.n_failures, f.n_censored
        ),
    );
    line(&mut s, "Weibull modulus m", fmt_sig(f.modulus, 4));
    line(&mut s, "  90 % bounds", iv(f.modulus_ci90, Unit::Pascal));
    line(&mut s, "  95 % bounds", iv(f.modulus_ci95, Unit::Pascal));
    line(
        &mut s,
        "  bounds by",
        f.modulus_bounds_method.label().to_string(),
    );
    match (f.modulus_unbiased, f.unbiasing_factor) {
        (Some(m), Some(b)) => line(
            &mut s,
            "unbiased modulus",
            format!(
                "{} (factor {:.4} for N = {}, 1/E[m̂/m] by Monte Carlo)",
                fmt_sig(m, 4),
                b,
                f.n
            ),
        ),
        _ => line(
            &mut s,
            "unbiased modulus",
            if f.n_censored > 0 {
                "not given: C1239's factors are for complete samples from one flaw population"
                    .to_string()
            } else {
                "not given: the factors start at N = 3".to_string()
            },
        ),
    }
    line(
        &mut s,
        "characteristic strength",
        format!("{} {u}", fmt_sig(unit.from_si(f.scale), 4)),
    );
    line(
        &mut s,
        "  90 % bounds",
        format!("{} {u}", iv(f.scale_ci90, unit)),
    );
    line(
        &mut s,
        "  95 % bounds",
        format!("{} {u}", iv(f.scale_ci95, unit)),
    );
    line(
        &mut s,
        "  bounds by",
        f.scale_bounds_method.label().to_string(),
    );
    match f.anderson_darling {
        Some(a) => line(
            &mut s,
            "Anderson-Darling",
            format!(
                "A² {}, modified A* {} (5 % critical value 0.757)\n{indent}{:<28}{}",
                fmt_sig(a.a2, 3),
                fmt_sig(a.a2_modified, 3),
                "",
                if a.rejected_at_5pct {
                    "the Weibull fit is rejected at 5 %"
                } else {
                    "no evidence against the Weibull fit at 5 %"
                }
            ),
        ),
        None => line(
            &mut s,
            "Anderson-Darling",
            "not given for censored samples (its critical values are for complete ones)"
                .to_string(),
        ),
    }
    if f.n_censored > 0 {
        line(
            &mut s,
            "bounds",
            "large-sample Wald, approximate: C1239's bounds do not cover censored samples"
                .to_string(),
        );
    }
    for w in &f.warnings {
        line(&mut s, "warning", w.clone());
    }
    s
}

/// The `--unit` flag: a unit of stress as typed, with the case rules of every other unit.
fn stress_unit_flag(typed: &str) -> Result<Unit, CliError> {
    if let Some(u) = Unit::lookup(typed).filter(|u| u.dimension() == Dimension::Stress) {
        return Ok(u);
    }
    let meant: Vec<&str> = Unit::case_hint(typed)
        .into_iter()
        .filter(|u| u.dimension() == Dimension::Stress)
        .map(Unit::symbol)
        .collect();
    if meant.is_empty() {
        return Err(CliError::usage(format!(
            "--unit: '{typed}' is not a unit of stress; expected one of MPa, kPa, Pa, GPa, bar, psi, ksi"
        )));
    }
    Err(CliError::usage(format!(
        "--unit: '{typed}' is not read as {0}: unit letters are case-sensitive; did you mean {0}?",
        meant.join(" or ")
    )))
}

/// Method lines printed under a table.
pub fn method_notes(indent: &str) -> String {
    format!(
        "{indent}method: {METHOD_FIT}\n{indent}bounds: {METHOD_BOUNDS}\n{indent}plot positions: {METHOD_PLOT}\n"
    )
}

pub fn run(args: WeibullArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let unit = match &args.unit {
        Some(u) => Some(stress_unit_flag(u)?),
        None => None,
    };
    let bytes = std::fs::read(&args.input).map_err(|e| {
        CliError::work(format!(
            "--input: cannot read {}: {e}",
            args.input.display()
        ))
    })?;
    let text = String::from_utf8(bytes).map_err(|_| {
        CliError::work(format!(
            "--input: {} is not UTF-8 text",
            args.input.display()
        ))
    })?;
    let col = read_strengths(
        &text,
        args.column.as_deref(),
        args.censored_column.as_deref(),
        unit,
    )?;
    let f = fit(&col.specimens).map_err(|e| CliError::work(explain(&e, &col)))?;
    if args.json {
        let mut v = fit_json(&f);
        if let Value::Object(m) = &mut v {
            m.insert("column".into(), json!(col.column));
            m.insert("input_unit".into(), json!(col.unit.ascii_symbol()));
        }
        let text = serde_json::to_string_pretty(&v)
            .map_err(|e| CliError::work(format!("JSON output: {e}")))?;
        writeln!(ctx.out, "{text}")?;
        return Ok(());
    }
    let shown = if col.unit == Unit::Pascal {
        Unit::Megapascal
    } else {
        col.unit
    };
    let mut s = String::new();
    s.push_str(&format!(
        "Weibull fit of column '{}' in {} (values read in {})\n",
        super::sanitize_for_terminal(&col.column, false),
        super::sanitize_for_terminal(&args.input.display().to_string(), false),
        col.unit.symbol()
    ));
    s.push_str(&fit_table(&f, shown, "  "));
    s.push_str(&method_notes("  "));
    write!(ctx.out, "{s}")?;
    Ok(())
}
