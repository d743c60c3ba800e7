//! `shardlog mirror`: back-calculate stress and flaw size from fracture-mirror readings.
//!
//! `--boundary` opens a group: the `--radius` and `--constant` flags after it belong to it, so
//! `--boundary mirror-mist --radius 0.98mm --radius 1.04mm --boundary branching --radius 15mm`
//! gives two boundaries. With no `--boundary` at all, the radii are mirror–mist radii. Every
//! value is checked here (units, ranges, contradictions) before the core sees it; a problem is
//! one line naming the flag and the expected unit, exit code 2.

use clap::{ArgMatches, FromArgMatches};
use serde_json::json;

use super::{pad_right_with_gap, CliError, Context};
use crate::store::MaterialBook;
use shardlog_core::fracture::{
    self, analyze, Analysis, AnalysisInput, Boundary, BoundaryReadings, Constant, ConstantOverride,
    FlawGeometry, FlawKind, FractureError, LayerProfile, Origin, Temper,
};
use shardlog_core::text::clean;
use shardlog_core::units::{self, fmt_sig, format, Dimension, Unit, UnitError};

/// The flags as clap reads them (strings; checked in [`build_input`]).
#[derive(Debug, Clone, Default, clap::Args)]
pub struct RawMirrorArgs {
    /// Material key or own material code from `shardlog materials`, e.g. soda-lime.
    #[arg(long, value_name = "KEY")]
    pub material: Option<String>,
    /// Start a group of readings: mirror-mist, mist-hackle or branching.
    #[arg(long, value_name = "BOUNDARY", action = clap::ArgAction::Append)]
    pub boundary: Vec<String>,
    /// A radius of the boundary named before it, with its unit (0.98mm, 850um, 0.04in).
    #[arg(long, value_name = "LENGTH", action = clap::ArgAction::Append, allow_hyphen_values = true)]
    pub radius: Vec<String>,
    /// Mirror constant for the boundary named before it, e.g. 2.0MPa√m (replaces the library's).
    #[arg(long, value_name = "TOUGHNESS", action = clap::ArgAction::Append, allow_hyphen_values = true)]
    pub constant: Vec<String>,
    /// Fracture toughness K_Ic, e.g. 0.75MPa√m (replaces the library's).
    #[arg(long, value_name = "TOUGHNESS", allow_hyphen_values = true)]
    pub toughness: Option<String>,
    /// Temper class: annealed, heat-strengthened, fully-tempered, chemically-strengthened.
    #[arg(long, value_name = "CLASS")]
    pub temper: Option<String>,
    /// Measured surface compression (its magnitude), e.g. 95MPa.
    #[arg(long, value_name = "STRESS", allow_hyphen_values = true)]
    pub surface_compression: Option<String>,
    /// Depth of the compressive layer, e.g. 40um (chemically strengthened glass; with
    /// --thickness it gives the central tension an interior origin needs).
    #[arg(long, value_name = "LENGTH", allow_hyphen_values = true)]
    pub layer_depth: Option<String>,
    /// Shape of the compressive layer of chemically strengthened glass: linear (default) or
    /// erfc.
    #[arg(long, value_name = "SHAPE")]
    pub layer_profile: Option<String>,
    /// Where the origin sits: surface (default) or interior.
    #[arg(long, value_name = "WHERE")]
    pub origin: Option<String>,
    /// Flaw geometry: semicircular, semi-elliptical, penny, edge, corner, through,
    /// semicircular-hand (1.12 × penny).
    #[arg(long, value_name = "GEOMETRY")]
    pub flaw: Option<String>,
    /// Flaw aspect ratio a/c (depth over half length), e.g. 0.8.
    #[arg(long, value_name = "A/C", allow_hyphen_values = true)]
    pub aspect: Option<String>,
    /// Flaw depth over thickness a/t when no thickness is given (default 0).
    #[arg(long, value_name = "A/T", allow_hyphen_values = true)]
    pub depth_ratio: Option<String>,
    /// Measured flaw size (depth), e.g. 90um.
    #[arg(long, value_name = "LENGTH", allow_hyphen_values = true)]
    pub measured_flaw: Option<String>,
    /// Part thickness, e.g. 6mm.
    #[arg(long, value_name = "LENGTH", allow_hyphen_values = true)]
    pub thickness: Option<String>,
    /// Print one JSON object instead of the table.
    #[arg(long)]
    pub json: bool,
}

/// The flags plus where each repeated flag stood on the command line (to group radii and
/// constants under the boundary before them).
#[derive(Debug, Clone, Default)]
pub struct MirrorArgs {
    pub raw: Box<RawMirrorArgs>,
    pub boundary_at: Vec<usize>,
    pub radius_at: Vec<usize>,
    pub constant_at: Vec<usize>,
}

fn indices(m: &ArgMatches, id: &str) -> Vec<usize> {
    m.indices_of(id).map(|i| i.collect()).unwrap_or_default()
}

impl FromArgMatches for MirrorArgs {
    fn from_arg_matches(m: &ArgMatches) -> Result<Self, clap::Error> {
        Ok(MirrorArgs {
            raw: Box::new(RawMirrorArgs::from_arg_matches(m)?),
            boundary_at: indices(m, "boundary"),
            radius_at: indices(m, "radius"),
            constant_at: indices(m, "constant"),
        })
    }
    fn update_from_arg_matches(&mut self, m: &ArgMatches) -> Result<(), clap::Error> {
        *self = Self::from_arg_matches(m)?;
        Ok(())
    }
}

impl clap::Args for MirrorArgs {
    fn augment_args(cmd: clap::Command) -> clap::Command {
        RawMirrorArgs::augment_args(cmd)
    }
    fn augment_args_for_update(cmd: clap::Command) -> clap::Command {
        RawMirrorArgs::augment_args_for_update(cmd)
    }
}

fn flag_err(flag: &str, e: UnitError) -> CliError {
    CliError::usage(format!("--{flag}: {e}"))
}

/// A unit error with the expected quantity added where the message lacks it.
fn dim_err(flag: &str, dim: Dimension, e: UnitError) -> CliError {
    let msg = e.to_string();
    if msg.contains("expected") || msg.contains("instead") {
        CliError::usage(format!("--{flag}: {msg}"))
    } else {
        CliError::usage(format!(
            "--{flag}: {msg}; expected a positive {dim} such as {}",
            dim.example()
        ))
    }
}

fn length(flag: &str, text: &str) -> Result<f64, CliError> {
    units::parse_positive(text, Dimension::Length).map_err(|e| dim_err(flag, Dimension::Length, e))
}

fn toughness(flag: &str, text: &str) -> Result<f64, CliError> {
    units::parse_positive(text, Dimension::Toughness)
        .map_err(|e| dim_err(flag, Dimension::Toughness, e))
}

fn ratio(flag: &str, text: &str, expected: &str) -> Result<f64, CliError> {
    let v = units::parse_number(text).map_err(|e| flag_err(flag, e))?;
    if v < 0.0 {
        return Err(CliError::usage(format!(
            "--{flag}: '{}' is negative; expected {expected}",
            text.trim()
        )));
    }
    Ok(v)
}

fn parse_temper(text: &str) -> Result<Temper, CliError> {
    text.parse().map_err(|_| {
        CliError::usage(format!(
            "--temper: '{}' is not a temper class; expected annealed, heat-strengthened, \
             fully-tempered or chemically-strengthened",
            text.trim()
        ))
    })
}

fn parse_origin(text: &str) -> Result<Origin, CliError> {
    text.parse().map_err(|_| {
        CliError::usage(format!(
            "--origin: '{}' is not an origin location; expected surface or interior",
            text.trim()
        ))
    })
}

fn parse_boundary(text: &str) -> Result<Boundary, CliError> {
    text.parse().map_err(|_| {
        CliError::usage(format!(
            "--boundary: '{}' is not a boundary; expected mirror-mist, mist-hackle or branching",
            text.trim()
        ))
    })
}

/// Turn a core error into a usage error naming the flag.
pub fn core_error(e: FractureError) -> CliError {
    CliError::usage(format!("--{e}"))
}

/// Check every flag and build the core's input.
pub fn build_input(args: &MirrorArgs, book: &MaterialBook) -> Result<AnalysisInput, CliError> {
    let raw = &args.raw;
    let key = raw.material.as_deref().ok_or_else(|| {
        CliError::usage(format!(
            "--material: missing; expected a material key ({})",
            book.keys().join(", ")
        ))
    })?;
    let material = book.find(key).ok_or_else(|| {
        CliError::usage(format!(
            "--material: '{}' is not in the library or the own materials; expected one of {} (see `shardlog materials`)",
            clean(key.trim()),
            book.keys().join(", ")
        ))
    })?;
    let mut input = AnalysisInput::new(material);

    let (readings, constants) = grouped_readings(args)?;
    input.readings = readings;
    input.constant_overrides = constants;

    if let Some(t) = &raw.toughness {
        input.toughness_override = Some(Constant::user(
            toughness("toughness", t)?,
            "given on the command line",
        ));
    }
    input.temper = raw.temper.as_deref().map(parse_temper).transpose()?;
    if let Some(cs) = &raw.surface_compression {
        let v = units::parse(cs, Dimension::Stress)
            .map_err(|e| dim_err("surface-compression", Dimension::Stress, e))?;
        if v < 0.0 {
            return Err(CliError::usage(format!(
                "--surface-compression: '{}' is negative; expected its magnitude, such as 95MPa \
                 (compression is understood)",
                cs.trim()
            )));
        }
        if input.temper.is_none() && v > 0.0 {
            return Err(CliError::usage(
                "--surface-compression: given without --temper; expected --temper \
                 heat-strengthened, fully-tempered or chemically-strengthened with it",
            ));
        }
        input.surface_compression_pa = Some(v);
    }
    if let Some(d) = &raw.layer_depth {
        input.layer_depth_m = Some(length("layer-depth", d)?);
    }
    if let Some(p) = &raw.layer_profile {
        input.layer_profile = Some(p.parse::<LayerProfile>().map_err(|_| {
            CliError::usage(format!(
                "--layer-profile: '{}' is not a layer profile; expected linear or erfc",
                clean(p.trim())
            ))
        })?);
    }
    if let Some(o) = &raw.origin {
        input.origin = parse_origin(o)?;
    }
    if let Some(t) = &raw.thickness {
        input.thickness_m = Some(length("thickness", t)?);
    }
    if let Some(a) = &raw.measured_flaw {
        input.measured_flaw_m = Some(length("measured-flaw", a)?);
    }

    input.flaw = flaw_geometry(raw, input.thickness_m.is_some())?;
    Ok(input)
}

/// The `--radius` and `--constant` flags grouped under the `--boundary` before them (all
/// radii under mirror–mist when no boundary is named), each group checked.
fn grouped_readings(
    args: &MirrorArgs,
) -> Result<(Vec<BoundaryReadings>, Vec<ConstantOverride>), CliError> {
    let raw = &args.raw;
    #[derive(Clone, Copy)]
    enum Flag {
        Boundary(usize),
        Radius(usize),
        Constant(usize),
    }
    let mut events: Vec<(usize, Flag)> = Vec::new();
    // a flag whose position clap did not give goes last; the sort is stable, so such flags
    // keep their order (the fallback once was `usize::MAX - 1000 + i`, computed eagerly: it
    // overflowed with more than 1000 readings)
    let at = |v: &Vec<usize>, i: usize| v.get(i).copied().unwrap_or(usize::MAX);
    events.extend((0..raw.boundary.len()).map(|i| (at(&args.boundary_at, i), Flag::Boundary(i))));
    events.extend((0..raw.radius.len()).map(|i| (at(&args.radius_at, i), Flag::Radius(i))));
    events.extend((0..raw.constant.len()).map(|i| (at(&args.constant_at, i), Flag::Constant(i))));
    events.sort_by_key(|(i, _)| *i);

    let implicit = raw.boundary.is_empty();
    let mut groups: Vec<BoundaryReadings> = Vec::new();
    if implicit {
        groups.push(BoundaryReadings {
            boundary: Boundary::MirrorMist,
            radii_m: Vec::new(),
        });
    }
    let mut constants: Vec<ConstantOverride> = Vec::new();
    for (_, ev) in events {
        match ev {
            Flag::Boundary(i) => {
                let b = parse_boundary(&raw.boundary[i])?;
                if groups.iter().any(|g| g.boundary == b) {
                    return Err(CliError::usage(format!(
                        "--boundary: {} is given twice; expected each boundary once, with all \
                         its --radius flags after it",
                        b.key()
                    )));
                }
                groups.push(BoundaryReadings {
                    boundary: b,
                    radii_m: Vec::new(),
                });
            }
            Flag::Radius(i) => {
                let r = length("radius", &raw.radius[i])?;
                match groups.last_mut() {
                    Some(g) => g.radii_m.push(r),
                    None => {
                        return Err(CliError::usage(format!(
                            "--radius: '{}' comes before any --boundary; expected \
                             --boundary mirror-mist (or mist-hackle, branching) first",
                            raw.radius[i].trim()
                        )))
                    }
                }
            }
            Flag::Constant(i) => {
                let a = toughness("constant", &raw.constant[i])?;
                let boundary = match groups.last() {
                    Some(g) => g.boundary,
                    None if raw.boundary.len() == 1 => parse_boundary(&raw.boundary[0])?,
                    None => {
                        return Err(CliError::usage(
                            "--constant: comes before any --boundary while several are given; \
                             expected it after the --boundary it belongs to",
                        ))
                    }
                };
                if constants.iter().any(|c| c.boundary == boundary) {
                    return Err(CliError::usage(format!(
                        "--constant: given twice for {}; expected one constant per boundary",
                        boundary.key()
                    )));
                }
                constants.push(ConstantOverride {
                    boundary,
                    constant: Constant::user(a, "given on the command line"),
                });
            }
        }
    }
    if implicit && groups.iter().all(|g| g.radii_m.is_empty()) {
        return Err(CliError::usage(
            "--radius: missing; expected at least one radius with its unit, such as \
             --radius 1.0mm",
        ));
    }
    if let Some(g) = groups.iter().find(|g| g.radii_m.is_empty()) {
        return Err(CliError::usage(format!(
            "--radius: --boundary {} has no radius; expected at least one --radius (e.g. 1.0mm) \
             after it",
            g.boundary.key()
        )));
    }
    Ok((groups, constants))
}

/// The flaw geometry `--flaw`, `--aspect` and `--depth-ratio` describe (none when no flag
/// names one), checked against each other and against `--thickness`.
fn flaw_geometry(
    raw: &RawMirrorArgs,
    thickness_given: bool,
) -> Result<Option<FlawGeometry>, CliError> {
    let aspect = raw
        .aspect
        .as_deref()
        .map(|a| ratio("aspect", a, "a/c greater than 0 and at most 2, such as 0.8"))
        .transpose()?;
    let depth_ratio = raw
        .depth_ratio
        .as_deref()
        .map(|a| ratio("depth-ratio", a, "a/t from 0 up to 1, such as 0.1"))
        .transpose()?;
    if depth_ratio.is_some() && thickness_given {
        return Err(CliError::usage(
            "--depth-ratio: given with --thickness; expected one of them (with a thickness the \
             depth ratio is solved with the flaw size)",
        ));
    }
    let at = depth_ratio.unwrap_or(0.0);
    let kind = raw.flaw.as_deref().map(flaw_key);
    let kind = match (kind.as_deref(), aspect) {
        (None, Some(_)) => Some("semi-elliptical".to_string()),
        (k, _) => k.map(str::to_string),
    };
    let geometry = match kind.as_deref() {
        None => {
            if depth_ratio.is_some() {
                Some(FlawGeometry::Semicircular { a_over_t: at })
            } else {
                None
            }
        }
        Some(k) => {
            let uses_aspect = matches!(k, "semi-elliptical" | "semielliptical" | "corner");
            if aspect.is_some() && !uses_aspect {
                return Err(CliError::usage(format!(
                    "--aspect: given with --flaw {k}; expected --flaw semi-elliptical or corner \
                     (a semicircular flaw has a/c = 1)"
                )));
            }
            let uses_depth = uses_aspect || k == "semicircular";
            if depth_ratio.is_some() && !uses_depth {
                return Err(CliError::usage(format!(
                    "--depth-ratio: given with --flaw {k}; expected --flaw semicircular, \
                     semi-elliptical or corner"
                )));
            }
            Some(flaw_by_name(k, aspect, at)?)
        }
    };
    if let Some(g) = &geometry {
        g.validate().map_err(core_error)?;
    }
    Ok(geometry)
}

/// A `--flaw` value as the names below spell it ("Semi_Elliptical" → "semi-elliptical").
pub(super) fn flaw_key(name: &str) -> String {
    name.trim().to_ascii_lowercase().replace(['_', ' '], "-")
}

/// The flaw geometry a `--flaw` name (see [`flaw_key`]) stands for; `mirror` and
/// `load critical-flaw` share it. Y itself comes from `fracture::flaw::geometry_factor`.
pub(super) fn flaw_by_name(
    k: &str,
    aspect: Option<f64>,
    a_over_t: f64,
) -> Result<FlawGeometry, CliError> {
    let kind: FlawKind = k.parse().map_err(|_| {
        CliError::usage(format!(
            "--flaw: '{}' is not a flaw geometry; expected semicircular, semi-elliptical, penny, \
             edge, corner, through or semicircular-hand",
            super::sanitize_for_terminal(k, false)
        ))
    })?;
    Ok(match kind {
        FlawKind::Semicircular => FlawGeometry::Semicircular { a_over_t },
        FlawKind::SemiElliptical => FlawGeometry::SemiElliptical {
            a_over_c: aspect.ok_or_else(|| {
                CliError::usage(
                    "--aspect: missing for --flaw semi-elliptical; expected a/c such as \
                     --aspect 0.8",
                )
            })?,
            a_over_t,
        },
        FlawKind::CornerCrack => FlawGeometry::CornerCrack {
            a_over_c: aspect.unwrap_or(1.0),
            a_over_t,
        },
        FlawKind::EmbeddedPenny => FlawGeometry::EmbeddedPenny,
        FlawKind::EdgeCrack => FlawGeometry::EdgeCrack,
        FlawKind::ThroughCrack => FlawGeometry::ThroughCrack,
        FlawKind::SemicircularHand => FlawGeometry::SemicircularIrwin,
    })
}

pub fn run(args: MirrorArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let keys: Vec<&str> = args.raw.material.as_deref().into_iter().collect();
    let book = super::materials::book_for(&ctx.db, &keys)?;
    let input = build_input(&args, &book)?;
    let analysis = analyze(&input).map_err(core_error)?;
    if args.raw.json {
        let text = serde_json::to_string_pretty(&to_json(&analysis))
            .map_err(|e| CliError::work(format!("JSON output: {e}")))?;
        writeln!(ctx.out, "{text}")?;
    } else {
        write!(ctx.out, "{}", render_plain(&analysis))?;
    }
    Ok(())
}

/// A stress in MPa for the JSON output; `None` (null) when it is not a finite number.
fn finite_megapascals(pa: f64) -> Option<f64> {
    pa.is_finite().then_some(pa / 1e6)
}

/// The JSON object of `mirror --json`: headline figures in the units their names say, then
/// every boundary, then the whole analysis in SI under `analysis`.
pub fn to_json(a: &Analysis) -> serde_json::Value {
    let head = a
        .boundaries
        .iter()
        .find(|b| b.boundary == a.headline)
        .or(a.boundaries.first());
    let readings: Vec<_> = a
        .boundaries
        .iter()
        .flat_map(|b| {
            b.readings_m
                .iter()
                .map(move |r| json!({"boundary": b.boundary.key(), "radius_mm": r * 1e3}))
        })
        .collect();
    let boundaries: Vec<_> = a
        .boundaries
        .iter()
        .map(|b| {
            json!({
                "boundary": b.boundary.key(),
                "readings_mm": b.readings_m.iter().map(|r| r * 1e3).collect::<Vec<_>>(),
                "n": b.stats.n,
                "mean_radius_mm": b.stats.mean * 1e3,
                "sd_radius_mm": b.stats.sd.map(|s| s * 1e3),
                "constant_symbol": b.constant.symbol,
                "constant_mpa_sqrt_m": b.constant.value / 1e6,
                "constant_spread_mpa_sqrt_m": b.constant.spread.map(|s| s / 1e6),
                "constant_provenance": b.constant.provenance.to_string(),
                "stress_mpa": finite_megapascals(b.stress_pa),
                "stress_low_mpa": finite_megapascals(b.stress_low_pa),
                "stress_high_mpa": finite_megapascals(b.stress_high_pa),
                "interval_method": b.stats.method,
            })
        })
        .collect();
    let flaw = a.flaw.as_ref();
    json!({
        "material": a.material_key,
        "material_name": a.material_name,
        "stress_from": a.headline.key(),
        "stress_mpa": finite_megapascals(a.stress_pa),
        "stress_low_mpa": finite_megapascals(a.stress_low_pa),
        "stress_high_mpa": finite_megapascals(a.stress_high_pa),
        "residual_stress_mpa": finite_megapascals(a.residual.at_origin_pa),
        "residual_basis": a.residual.basis,
        "applied_stress_mpa": finite_megapascals(a.applied_stress_pa),
        "applied_stress_low_mpa": finite_megapascals(a.applied_low_pa),
        "applied_stress_high_mpa": finite_megapascals(a.applied_high_pa),
        "flaw_size_um": flaw.map(|f| f.size_m * 1e6),
        "flaw_size_low_um": flaw.map(|f| f.size_low_m * 1e6),
        "flaw_size_high_um": flaw.map(|f| f.size_high_m * 1e6),
        "flaw_geometry": flaw.map(|f| f.geometry_label.clone()),
        "constant_mpa_sqrt_m": head.map(|h| h.constant.value / 1e6),
        "toughness_mpa_sqrt_m": flaw.map(|f| f.toughness.value / 1e6),
        "geometry_factor": flaw.map(|f| f.factor.y),
        "geometry_factor_source": flaw.map(|f| f.factor.source.clone()),
        "mirror_flaw_ratios": flaw.map(|f| f.ratios.iter().map(|r| json!({
            "boundary": r.boundary.key(), "ratio": r.ratio, "expected": r.expected,
        })).collect::<Vec<_>>()),
        "measured_flaw_um": flaw.and_then(|f| f.measured_m).map(|m| m * 1e6),
        "measured_over_predicted": flaw.and_then(|f| f.measured_over_predicted),
        "branching_predicted_mm": a.branching.as_ref().map(|b| b.distance_m * 1e3),
        "readings": readings,
        "boundaries": boundaries,
        "consistency": a.consistency.iter().map(|c| json!({
            "inner": c.inner.key(), "outer": c.outer.key(),
            "radius_ratio": c.radius_ratio, "expected_ratio": c.expected_ratio, "agrees": c.agrees,
        })).collect::<Vec<_>>(),
        "warnings": a.warnings,
        "caution": fracture::CAUTION,
        "analysis": a,
    })
}

fn readings_text(b: &fracture::BoundaryResult) -> String {
    let list: Vec<String> = b
        .readings_m
        .iter()
        .take(4)
        .map(|r| fmt_sig(r * 1e3, 3))
        .collect();
    let more = if b.readings_m.len() > 4 { ", …" } else { "" };
    format!("{}{more} mm", list.join(", "))
}

fn spread_text(c: &fracture::ConstantUsed, unit: Unit) -> String {
    match c.spread {
        Some(s) => format!(
            "{} ± {} {} (1 s.d.)",
            fmt_sig(unit.from_si(c.value), 3),
            fmt_sig(unit.from_si(s), 2),
            unit.symbol()
        ),
        None => format!("{} (spread unknown)", format(c.value, unit)),
    }
}

/// The plain table of `mirror`.
pub fn render_plain(a: &Analysis) -> String {
    let mut o = String::new();
    boundary_table(&mut o, a);
    o.push('\n');
    stress_rows(&mut o, a);
    match &a.flaw {
        Some(f) => flaw_rows(&mut o, f),
        None => row(&mut o, "flaw size", "not computed (no toughness)".into()),
    }
    check_rows(&mut o, a);
    constants_used(&mut o, a);
    o.push_str(&format!(
        "\n95 % interval: {}; the constant's spread at 1.96 s.d.; the two combined in quadrature \
         on relative terms, (Δσ/σ)² = (ΔA/A)² + (ΔR/2R)².\n",
        a.boundaries
            .iter()
            .find(|b| b.boundary == a.headline)
            .map(|b| b.stats.method.as_str())
            .unwrap_or("")
    ));
    if !a.warnings.is_empty() {
        o.push_str("\nwarnings\n");
        for w in &a.warnings {
            o.push_str(&format!("  - {}\n", clean(w)));
        }
    }
    o.push_str(&format!("\n{}\n", fracture::CAUTION));
    o
}

/// One labelled line of the figures below the table.
fn row(o: &mut String, label: &str, value: String) {
    o.push_str(&format!("{}{value}\n", pad_right_with_gap(label, 24)));
}

/// The title and one line per boundary: readings, mean radius, constant, stress.
fn boundary_table(o: &mut String, a: &Analysis) {
    let t = Unit::MegapascalRootMetre;
    let s = Unit::Megapascal;
    o.push_str(&format!(
        "Fracture mirror analysis: {} ({})\n\n",
        clean(&a.material_name),
        clean(&a.material_key)
    ));
    o.push_str(&format!(
        "{}{}{}{}{}{}{}\n",
        pad_right_with_gap("boundary", 13),
        pad_right_with_gap("n", 4),
        pad_right_with_gap("readings", 24),
        pad_right_with_gap("mean R", 10),
        pad_right_with_gap("constant", 17),
        pad_right_with_gap("stress", 11),
        "95 % interval"
    ));
    for b in &a.boundaries {
        o.push_str(&format!(
            "{}{}{}{}{}{}{} – {}\n",
            pad_right_with_gap(b.boundary.label(), 13),
            pad_right_with_gap(&b.stats.n.to_string(), 4),
            pad_right_with_gap(&readings_text(b), 24),
            pad_right_with_gap(&format(b.stats.mean, Unit::Millimetre), 10),
            pad_right_with_gap(
                &format!("{} {}", b.constant.symbol, format(b.constant.value, t)),
                17
            ),
            pad_right_with_gap(&format(b.stress_pa, s), 11),
            fmt_sig(b.stress_low_pa / 1e6, 3),
            format(b.stress_high_pa, s),
        ));
    }
}

/// Net, residual and applied stress at the origin.
fn stress_rows(o: &mut String, a: &Analysis) {
    let s = Unit::Megapascal;
    row(
        o,
        "net stress at origin",
        format!(
            "{}  (95 %: {} – {}; from the {} boundary)",
            format(a.stress_pa, s),
            fmt_sig(a.stress_low_pa / 1e6, 3),
            format(a.stress_high_pa, s),
            a.headline.label()
        ),
    );
    row(
        o,
        "residual at origin",
        format!(
            "{}  ({})",
            format(a.residual.at_origin_pa, s),
            a.residual.basis
        ),
    );
    row(
        o,
        "applied stress",
        format!(
            "{}  (95 %: {} – {}; net − residual)",
            format(a.applied_stress_pa, s),
            fmt_sig(a.applied_low_pa / 1e6, 3),
            format(a.applied_high_pa, s)
        ),
    );
}

/// Toughness, geometry factor, flaw size, mirror-to-flaw ratios, a measured flaw.
fn flaw_rows(o: &mut String, f: &fracture::FlawResult) {
    let t = Unit::MegapascalRootMetre;
    row(
        o,
        "toughness",
        format!("K_Ic {}", format(f.toughness.value, t)),
    );
    let point = if f.factor.governing_point.is_empty() {
        String::new()
    } else {
        format!(", {}", f.factor.governing_point)
    };
    row(
        o,
        "geometry factor",
        format!(
            "Y {} ({}{point}, {}; {})",
            fmt_sig(f.factor.y, 4),
            f.geometry_label,
            f.geometry_basis,
            f.factor.source
        ),
    );
    row(
        o,
        "flaw size",
        format!(
            "{}  (95 %: {} – {}; a = (K_Ic / (Y σ))²)",
            format(f.size_m, Unit::Micrometre),
            fmt_sig(f.size_low_m * 1e6, 3),
            format(f.size_high_m, Unit::Micrometre)
        ),
    );
    for r in &f.ratios {
        row(
            o,
            "mirror / flaw",
            format!(
                "{} radius / flaw size = {} (usual about {})",
                r.boundary.label(),
                fmt_sig(r.ratio, 3),
                r.expected
            ),
        );
    }
    if let (Some(m), Some(q)) = (f.measured_m, f.measured_over_predicted) {
        row(
            o,
            "measured flaw",
            format!(
                "{} = {} × predicted",
                format(m, Unit::Micrometre),
                fmt_sig(q, 3)
            ),
        );
    }
}

/// The predicted branching distance and the consistency of the boundaries with each other.
fn check_rows(o: &mut String, a: &Analysis) {
    if let Some(b) = &a.branching {
        let measured = b
            .measured_m
            .map(|m| format!("; measured {}", format(m, Unit::Millimetre)))
            .unwrap_or_default();
        row(
            o,
            "branching predicted",
            format!(
                "{}  (95 %: {} – {}; R_b = (A_b / σ)²{measured})",
                format(b.distance_m, Unit::Millimetre),
                fmt_sig(b.low_m * 1e3, 3),
                format(b.high_m, Unit::Millimetre)
            ),
        );
    }
    for c in &a.consistency {
        row(
            o,
            "consistency",
            format!(
                "R({}) / R({}) = {}, expected ({}/{})² = {}: {}",
                c.outer.key(),
                c.inner.key(),
                fmt_sig(c.radius_ratio, 3),
                a.boundaries
                    .iter()
                    .find(|b| b.boundary == c.outer)
                    .map(|b| b.constant.symbol.as_str())
                    .unwrap_or("A"),
                a.boundaries
                    .iter()
                    .find(|b| b.boundary == c.inner)
                    .map(|b| b.constant.symbol.as_str())
                    .unwrap_or("A"),
                fmt_sig(c.expected_ratio, 3),
                if c.agrees {
                    "agree within the uncertainties"
                } else {
                    "DISAGREE"
                }
            ),
        );
    }
}

/// Each constant used once: its value with its spread, and where it comes from.
fn constants_used(o: &mut String, a: &Analysis) {
    let t = Unit::MegapascalRootMetre;
    o.push_str("\nconstants used\n");
    let mut seen: Vec<String> = Vec::new();
    let mut constant_line = |o: &mut String, c: &fracture::ConstantUsed| {
        if seen.contains(&c.symbol) {
            return;
        }
        seen.push(c.symbol.clone());
        o.push_str(&format!(
            "  {}{}\n      {}\n",
            pad_right_with_gap(&c.symbol, 6),
            spread_text(c, t),
            clean(&c.provenance.to_string())
        ));
    };
    for b in &a.boundaries {
        constant_line(o, &b.constant);
    }
    if let Some(f) = &a.flaw {
        constant_line(o, &f.toughness);
    }
    if let Some(b) = &a.branching {
        constant_line(o, &b.constant);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::Parser;

    fn parse(args: &[&str]) -> Result<AnalysisInput, CliError> {
        let mut v = vec!["shardlog", "mirror"];
        v.extend_from_slice(args);
        let cli = crate::cli::Cli::try_parse_from(v).expect("clap accepts");
        match cli.command {
            Some(crate::cli::Command::Mirror(m)) => build_input(&m, &MaterialBook::library_only()),
            _ => panic!("not mirror"),
        }
    }

    #[test]
    fn groups_follow_boundaries() {
        let i = parse(&[
            "--material",
            "soda-lime",
            "--boundary",
            "mirror-mist",
            "--radius",
            "0.98mm",
            "--radius",
            "1.04mm",
            "--constant",
            "2.0MPa√m",
            "--boundary",
            "branching",
            "--radius",
            "15mm",
        ])
        .unwrap();
        assert_eq!(i.readings.len(), 2);
        assert_eq!(i.readings[0].radii_m.len(), 2);
        assert_eq!(i.readings[1].boundary, Boundary::Branching);
        assert_eq!(i.constant_overrides[0].boundary, Boundary::MirrorMist);
    }

    #[test]
    fn implicit_mirror_mist() {
        let i = parse(&["--material", "soda-lime", "--radius", "1mm"]).unwrap();
        assert_eq!(i.readings[0].boundary, Boundary::MirrorMist);
        let e = parse(&[
            "--material",
            "soda-lime",
            "--radius",
            "1mm",
            "--boundary",
            "branching",
            "--radius",
            "15mm",
        ])
        .unwrap_err();
        assert_eq!(e.exit_code(), 2);
        assert!(e.message().starts_with("--radius"), "{e}");
    }

    #[test]
    fn user_material_text_is_sanitized() {
        let mut m = shardlog_core::fracture::materials::find("soda-lime").unwrap();
        m.name = "lab glass \u{1b}[2J\u{1b}]0;title\u{7}".into();
        let a =
            analyze(&AnalysisInput::new(m).with_readings(Boundary::MirrorMist, &[1e-3])).unwrap();
        let text = render_plain(&a);
        assert!(
            !text.contains('\u{1b}') && !text.contains('\u{7}'),
            "{text:?}"
        );
        assert!(text.contains("lab glass"));
    }

    #[test]
    fn plain_output_has_units_and_caution() {
        let i = parse(&["--material", "soda-lime", "--radius", "1mm"]).unwrap();
        let text = render_plain(&analyze(&i).unwrap());
        assert!(text.contains("60.1 MPa"), "{text}");
        assert!(text.contains("published:"), "{text}");
        assert!(text.trim_end().ends_with(fracture::CAUTION), "{text}");
    }
}
