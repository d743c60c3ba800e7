//! `shardlog calibrate`: a lab's own mirror constants from specimens broken at a known stress.
//! The CSV has a `stress` column and one or more radius columns (`mirror_mist`, `mist_hackle`,
//! `branching`), every value with its unit as typed at the bench (`61.5 MPa`, `1.02 mm`), and
//! optionally `specimen` and `analyst`. Every problem of the file is reported at once.

use std::path::PathBuf;

use serde_json::{json, Value};

use super::{CliError, Context};
use shardlog_core::canonical::sha256_hex;
use shardlog_core::fracture::calibration::{fit_boundary, BoundaryFit, Break, MIN_SPECIMENS};
use shardlog_core::fracture::Boundary;
use shardlog_core::units::{self, fmt_sig, Dimension, Unit};

#[derive(Debug, clap::Args)]
pub struct CalibrateArgs {
    /// CSV file: stress, and one or more of mirror_mist, mist_hackle, branching (values with
    /// their units, e.g. "61.5 MPa", "1.02 mm"); optional specimen, analyst.
    #[arg(long, value_name = "FILE.csv")]
    pub input: PathBuf,
    /// Print JSON instead of a table.
    #[arg(long)]
    pub json: bool,
    /// Store the fitted constants into this own material (updated as its next revision, or
    /// made from --from), with their provenance and the data's SHA-256.
    #[arg(long, value_name = "CODE")]
    pub save: Option<String>,
    /// With --save, the library material a new own material is made from (its other
    /// constants are kept).
    #[arg(long, value_name = "LIBRARY-KEY", requires = "save")]
    pub from: Option<String>,
    /// With --save, who calibrated (default: this bench's code, else the analyst).
    #[arg(long, value_name = "NAME", requires = "save")]
    pub lab: Option<String>,
    /// With --save, save even when the slope check fails (the provenance says so).
    #[arg(long, requires = "save")]
    pub accept_slope: bool,
}

/// How the constant and the slope are fitted, named in every output.
pub const METHOD: &str =
    "least squares of one constant on each specimen's stress x sqrt(R) (their \
     mean), sd = scatter / sqrt(n), 95 % interval with Student's t (n - 1 degrees of freedom)";
pub const METHOD_SLOPE: &str = "ordinary least squares of ln(stress) on ln(R), 95 % interval of \
     the slope with Student's t (n - 2 degrees of freedom); flagged when -1/2 is outside it";

/// The columns the file may have.
const STRESS: &str = "stress";
const SPECIMEN: &str = "specimen";
const ANALYST: &str = "analyst";

/// One row of the file that was read without a problem.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    pub line: usize,
    pub specimen: String,
    pub analyst: Option<String>,
    pub stress_pa: f64,
    /// The radius of each boundary the row gives, m.
    pub radii: Vec<(Boundary, f64)>,
}

/// The file as read: its rows, the boundary columns in file order, the digest of its bytes.
#[derive(Debug, Clone, PartialEq)]
pub struct Breaks {
    pub rows: Vec<Row>,
    pub boundaries: Vec<Boundary>,
    pub sha256: String,
}

impl Breaks {
    /// The (stress, radius) pairs of one boundary, with the rows they came from.
    pub fn of(&self, boundary: Boundary) -> (Vec<Break>, Vec<&Row>) {
        self.rows
            .iter()
            .filter_map(|r| {
                r.radii
                    .iter()
                    .find(|(b, _)| *b == boundary)
                    .map(|(_, radius)| {
                        (
                            Break {
                                stress_pa: r.stress_pa,
                                radius_m: *radius,
                            },
                            r,
                        )
                    })
            })
            .unzip()
    }

    /// The analysts named in the file, each once, in order of appearance.
    pub fn analysts(&self) -> Vec<String> {
        let mut out: Vec<String> = Vec::new();
        for a in self.rows.iter().filter_map(|r| r.analyst.as_ref()) {
            if !out.contains(a) {
                out.push(a.clone());
            }
        }
        out
    }
}

fn boundary_of_column(name: &str) -> Option<Boundary> {
    Boundary::ALL
        .into_iter()
        .find(|b| b.code().eq_ignore_ascii_case(name))
}

fn expected_columns() -> String {
    format!(
        "{STRESS}, {}, {SPECIMEN}, {ANALYST}",
        Boundary::ALL.map(|b| b.code()).join(", ")
    )
}

/// The columns found in the header: index of each known column.
struct Columns {
    names: Vec<String>,
    stress: Option<usize>,
    specimen: Option<usize>,
    analyst: Option<usize>,
    boundaries: Vec<(Boundary, usize)>,
}

fn read_header(line: usize, text: &str, problems: &mut Vec<String>) -> Option<Columns> {
    let names: Vec<String> = match super::weibull::split_csv_line(text) {
        Ok(f) => f.into_iter().map(|s| s.trim().to_string()).collect(),
        Err(e) => {
            problems.push(format!("line {line} (the header): {e}"));
            return None;
        }
    };
    let mut cols = Columns {
        names: names.clone(),
        stress: None,
        specimen: None,
        analyst: None,
        boundaries: Vec::new(),
    };
    for (i, name) in names.iter().enumerate() {
        let lower = name.to_ascii_lowercase();
        let slot = match lower.as_str() {
            STRESS => &mut cols.stress,
            SPECIMEN => &mut cols.specimen,
            ANALYST => &mut cols.analyst,
            _ => {
                if let Some(b) = boundary_of_column(name) {
                    if cols.boundaries.iter().any(|(seen, _)| *seen == b) {
                        problems.push(format!(
                            "line {line} (the header): column '{name}' appears twice"
                        ));
                    } else {
                        cols.boundaries.push((b, i));
                    }
                } else {
                    problems.push(format!(
                        "line {line} (the header): unknown column '{name}'; expected {}",
                        expected_columns()
                    ));
                }
                continue;
            }
        };
        if slot.is_some() {
            problems.push(format!(
                "line {line} (the header): column '{name}' appears twice"
            ));
        } else {
            *slot = Some(i);
        }
    }
    if cols.stress.is_none() {
        problems.push(format!(
            "line {line} (the header): no column '{STRESS}'; expected the stress at the origin \
             of each specimen, e.g. 61.5 MPa"
        ));
    }
    if cols.boundaries.is_empty() {
        problems.push(format!(
            "line {line} (the header): no radius column; expected one or more of {}",
            Boundary::ALL.map(|b| b.code()).join(", ")
        ));
    }
    Some(cols)
}

/// A quantity in one cell, greater than zero.
fn positive_cell(cell: &str, dim: Dimension, at: &str, problems: &mut Vec<String>) -> Option<f64> {
    match units::parse_positive(cell, dim) {
        Ok(v) => Some(v),
        Err(e) => {
            problems.push(format!("{at}: {e}"));
            None
        }
    }
}

fn read_row(n: usize, line: &str, cols: &Columns, problems: &mut Vec<String>) -> Option<Row> {
    let fields = match super::weibull::split_csv_line(line) {
        Ok(f) => f,
        Err(e) => {
            problems.push(format!("line {n}: {e}"));
            return None;
        }
    };
    if fields.len() != cols.names.len() {
        problems.push(format!(
            "line {n}: {} fields, but the header has {} ({})",
            fields.len(),
            cols.names.len(),
            cols.names.join(", ")
        ));
        return None;
    }
    let at = |i: usize| format!("line {n}, column '{}'", cols.names[i]);
    let before = problems.len();
    let stress = cols
        .stress
        .and_then(|i| positive_cell(&fields[i], Dimension::Stress, &at(i), problems));
    let mut radii = Vec::new();
    for &(b, i) in &cols.boundaries {
        if fields[i].trim().is_empty() {
            continue;
        }
        if let Some(r) = positive_cell(&fields[i], Dimension::Length, &at(i), problems) {
            radii.push((b, r));
        }
    }
    let all_blank = cols
        .boundaries
        .iter()
        .all(|&(_, i)| fields[i].trim().is_empty());
    if all_blank && !cols.boundaries.is_empty() {
        problems.push(format!(
            "line {n}: no radius; expected a value in at least one of {}",
            cols.boundaries
                .iter()
                .map(|&(_, i)| cols.names[i].as_str())
                .collect::<Vec<_>>()
                .join(", ")
        ));
    }
    let text_of = |i: Option<usize>| {
        i.map(|i| shardlog_core::text::sanitize_for_terminal(fields[i].trim(), false))
            .filter(|s| !s.is_empty())
    };
    if problems.len() > before {
        return None;
    }
    Some(Row {
        line: n,
        specimen: text_of(cols.specimen).unwrap_or_else(|| format!("line {n}")),
        analyst: text_of(cols.analyst),
        stress_pa: stress?,
        radii,
    })
}

/// Read the file's text. Every problem is collected and returned at once, each naming its
/// line and column.
pub fn read_breaks(bytes: &[u8]) -> Result<Breaks, Vec<String>> {
    let sha256 = sha256_hex(bytes);
    let Ok(text) = std::str::from_utf8(bytes) else {
        return Err(vec![
            "the file is not UTF-8 text; save it as UTF-8 CSV".to_string()
        ]);
    };
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut lines = text
        .lines()
        .enumerate()
        .map(|(i, l)| (i + 1, l))
        .filter(|(_, l)| !l.trim().is_empty());
    let mut problems = Vec::new();
    let Some((hn, header)) = lines.next() else {
        return Err(vec![format!(
            "the file is empty; expected a header line such as '{STRESS},{},{}'",
            Boundary::MirrorMist.code(),
            Boundary::MistHackle.code()
        )]);
    };
    let Some(cols) = read_header(hn, header, &mut problems) else {
        return Err(problems);
    };
    let mut rows = Vec::new();
    for (n, line) in lines {
        if let Some(row) = read_row(n, line, &cols, &mut problems) {
            rows.push(row);
        }
    }
    let boundaries: Vec<Boundary> = cols.boundaries.iter().map(|(b, _)| *b).collect();
    let breaks = Breaks {
        rows,
        boundaries,
        sha256,
    };
    // a boundary with too few specimens, counted over the rows that were read
    if problems.is_empty() {
        for &(b, i) in &cols.boundaries {
            let n = breaks.of(b).0.len();
            if n < MIN_SPECIMENS {
                problems.push(format!(
                    "column '{}': {n} specimen{} with a radius; at least {MIN_SPECIMENS} are needed for the constant, its spread and the slope check",
                    cols.names[i],
                    if n == 1 { "" } else { "s" }
                ));
            }
        }
    }
    if problems.is_empty() {
        Ok(breaks)
    } else {
        Err(problems)
    }
}

/// Every boundary's fit, in the file's column order.
pub fn fit_all(breaks: &Breaks) -> Result<Vec<BoundaryFit>, CliError> {
    breaks
        .boundaries
        .iter()
        .map(|&b| fit_boundary(b, &breaks.of(b).0).map_err(|e| CliError::work(e.to_string())))
        .collect()
}

fn problems_message(file: &str, problems: &[String]) -> String {
    let n = problems.len();
    let mut s = format!(
        "{file}: {n} problem{} (nothing was fitted):",
        if n == 1 { "" } else { "s" }
    );
    for p in problems {
        s.push_str("\n  ");
        s.push_str(p);
    }
    s
}

pub fn run(args: CalibrateArgs, ctx: &mut Context) -> Result<(), CliError> {
    let file = args.input.display().to_string();
    let bytes = std::fs::read(&args.input)
        .map_err(|e| CliError::work(format!("--input {file}: cannot read it: {e}")))?;
    let breaks = read_breaks(&bytes).map_err(|p| CliError::work(problems_message(&file, &p)))?;
    let fits = fit_all(&breaks)?;
    if args.json {
        let v = fits_json(&breaks, &fits);
        writeln!(
            ctx.out,
            "{}",
            serde_json::to_string_pretty(&v).unwrap_or_default()
        )?;
    } else {
        write_table(ctx.out, &file, &breaks, &fits)?;
    }
    if let Some(code) = &args.save {
        let req = super::calibrate_save::SaveRequest {
            code,
            from: args.from.as_deref(),
            lab: args.lab.as_deref(),
            accept_slope: args.accept_slope,
            json: args.json,
            sha256: &breaks.sha256,
        };
        super::calibrate_save::save(&req, &fits, ctx)?;
    }
    Ok(())
}

use std::io::Write;

fn mpa_sqrt_m(si: f64) -> f64 {
    si / 1e6
}

/// The JSON of the fits: constants in MPa·√m, stresses in MPa, radii in mm.
pub fn fits_json(breaks: &Breaks, fits: &[BoundaryFit]) -> Value {
    let boundaries: Vec<Value> = fits
        .iter()
        .map(|f| {
            let rows = breaks.of(f.boundary).1;
            json!({
                "boundary": f.boundary.key(),
                "constant_symbol": f.boundary.constant_symbol(),
                "n": f.n,
                "constant_mpa_sqrt_m": mpa_sqrt_m(f.constant),
                "constant_sd_mpa_sqrt_m": mpa_sqrt_m(f.constant_sd),
                "constant_low_mpa_sqrt_m": mpa_sqrt_m(f.constant_low),
                "constant_high_mpa_sqrt_m": mpa_sqrt_m(f.constant_high),
                "student_t": f.coverage,
                "specimen_sd_mpa_sqrt_m": mpa_sqrt_m(f.specimen_sd),
                "slope": f.slope.as_ref().map(|s| json!({
                    "slope": s.slope,
                    "sd": s.slope_sd,
                    "low": s.slope_low,
                    "high": s.slope_high,
                    "expected": -0.5,
                    "consistent": s.consistent,
                })),
                "slope_flagged": f.slope_flagged(),
                "specimens": f.residuals.iter().zip(rows).map(|(r, row)| json!({
                    "specimen": row.specimen,
                    "line": row.line,
                    "stress_mpa": units::to_mpa(r.stress_pa),
                    "radius_mm": r.radius_m * 1e3,
                    "own_constant_mpa_sqrt_m": mpa_sqrt_m(r.own_constant),
                    "fitted_stress_mpa": units::to_mpa(r.fitted_stress_pa),
                    "residual_mpa": units::to_mpa(r.residual_pa),
                })).collect::<Vec<_>>(),
            })
        })
        .collect();
    json!({
        "specimens": breaks.rows.len(),
        "analysts": breaks.analysts(),
        "input_sha256": breaks.sha256,
        "method": METHOD,
        "method_slope": METHOD_SLOPE,
        "boundaries": boundaries,
    })
}

fn write_table(
    out: &mut dyn Write,
    file: &str,
    breaks: &Breaks,
    fits: &[BoundaryFit],
) -> Result<(), CliError> {
    let k = Unit::MegapascalRootMetre;
    let mpa = Unit::Megapascal;
    let n = breaks.rows.len();
    writeln!(
        out,
        "Mirror constants from {} ({n} specimen{})",
        shardlog_core::text::sanitize_for_terminal(file, false),
        if n == 1 { "" } else { "s" }
    )?;
    writeln!(out, "Method: {METHOD}")?;
    writeln!(out, "Slope check: {METHOD_SLOPE}")?;
    writeln!(out, "Data SHA-256: {}", breaks.sha256)?;
    for f in fits {
        writeln!(out)?;
        writeln!(
            out,
            "{} {} = {}, 95 % interval {} to {}",
            f.boundary.label(),
            f.boundary.constant_symbol(),
            units::format_sig(f.constant, k, 4),
            units::format_sig(f.constant_low, k, 4),
            units::format_sig(f.constant_high, k, 4),
        )?;
        writeln!(
            out,
            "  sd {}, one specimen's scatter {}; n = {}, Student's t = {:.3}",
            units::format_sig(f.constant_sd, k, 2),
            units::format_sig(f.specimen_sd, k, 2),
            f.n,
            f.coverage
        )?;
        match &f.slope {
            Some(s) => writeln!(
                out,
                "  slope of ln σ on ln R: {} (95 % interval {} to {}): {}",
                fmt_sig(s.slope, 3),
                fmt_sig(s.slope_low, 3),
                fmt_sig(s.slope_high, 3),
                if s.consistent {
                    "consistent with −½"
                } else {
                    "NOT consistent with −½\n  the specimens do not follow σ = A/√R: check the \
                     boundaries read and the\n  stress at the origin before using this constant"
                }
            )?,
            None => writeln!(
                out,
                "  slope of ln σ on ln R: not fitted (every radius is the same)"
            )?,
        }
        writeln!(
            out,
            "  {:<14}{:>11} {:>11} {:>15} {:>11} {:>11}",
            "specimen", "stress", "radius", "σ·√R", "fitted", "residual"
        )?;
        for (r, row) in f.residuals.iter().zip(breaks.of(f.boundary).1) {
            writeln!(
                out,
                "  {}{:>11} {:>11} {:>15} {:>11} {:>11}",
                super::pad_right_with_gap(&row.specimen, 14),
                units::format_sig(r.stress_pa, mpa, 4),
                units::format_sig(r.radius_m, Unit::Millimetre, 3),
                units::format_sig(r.own_constant, k, 3),
                units::format_sig(r.fitted_stress_pa, mpa, 4),
                units::format_sig(r.residual_pa, mpa, 3),
            )?;
        }
    }
    Ok(())
}
