//! `shardlog load`: service-load hypotheses (impact, plate, thermal, critical-flaw).
//!
//! Raw clap strings are parsed here with `units` into SI numbers and range-checked; the
//! calculations are the pure functions of `shardlog_core::loads`. A value that cannot be used is a usage
//! error (exit 2); a calculation that cannot be done for these inputs is a failure of the work
//! (exit 1).

use clap::{Args, Subcommand, ValueEnum};
use serde_json::{json, Map, Value};

use super::{CliError, Context};
use crate::store::MaterialBook;
use shardlog_core::fracture::flaw::{self, FlawGeometry};
use shardlog_core::fracture::materials;
use shardlog_core::loads::{
    contact, critical, impact, plates, thermal, verdict, Elastic, LoadError, Warning,
};
use shardlog_core::units::{self, Dimension, Unit};

#[derive(Debug, Args)]
pub struct LoadArgs {
    #[command(subcommand)]
    pub kind: Box<LoadKind>,
}

#[derive(Debug, Subcommand)]
pub enum LoadKind {
    /// Blunt impact: impulse-momentum force, or Hertz contact of a sphere (with --sphere-diameter).
    Impact(ImpactArgs),
    /// Bending of a circular or rectangular plate under pressure or a central patch load.
    Plate(PlateArgs),
    /// Thermal stress at a cold edge: sigma = k E alpha dT.
    Thermal(ThermalArgs),
    /// Critical flaw size at a stress (or failure stress of a flaw), and the K(a) curve.
    CriticalFlaw(CriticalArgs),
}

/// Compare the result with the stress measured on the fracture surface.
#[derive(Debug, Args, Default)]
pub struct VerdictArgs {
    /// Stress back-calculated from the fracture (e.g. from the mirror), e.g. 19MPa.
    #[arg(long, allow_hyphen_values = true, value_name = "STRESS")]
    pub measured: Option<String>,
    /// Low end of the measured stress interval (default: the measured value).
    #[arg(
        long,
        allow_hyphen_values = true,
        value_name = "STRESS",
        requires = "measured"
    )]
    pub measured_low: Option<String>,
    /// High end of the measured stress interval (default: the measured value).
    #[arg(
        long,
        allow_hyphen_values = true,
        value_name = "STRESS",
        requires = "measured"
    )]
    pub measured_high: Option<String>,
    /// Lower bound of a sound part's strength (a Weibull quantile; for tempered glass the
    /// surface compression plus the annealed strength).
    #[arg(long, allow_hyphen_values = true, value_name = "STRESS")]
    pub strength: Option<String>,
}

#[derive(Debug, Args)]
pub struct ImpactArgs {
    /// Mass of the impacting body, e.g. 1.8kg (optional with --sphere-diameter: a solid sphere).
    #[arg(long, allow_hyphen_values = true)]
    pub mass: Option<String>,
    /// Speed on arrival, e.g. 11.6m/s or 26mph.
    #[arg(long, allow_hyphen_values = true)]
    pub speed: String,
    /// Contact time for the impulse model, e.g. 40ms.
    #[arg(long, allow_hyphen_values = true, conflicts_with = "sphere_diameter")]
    pub contact_time: Option<String>,
    /// Coefficient of restitution, 0 (stops dead) to 1 (elastic rebound).
    #[arg(
        long,
        allow_hyphen_values = true,
        default_value = "1",
        conflicts_with = "sphere_diameter"
    )]
    pub restitution: String,
    /// Diameter of a sphere for the Hertz contact model, e.g. 75mm.
    #[arg(long, allow_hyphen_values = true, requires_all = ["sphere_material", "thickness"])]
    pub sphere_diameter: Option<String>,
    /// Sphere material (steel, aluminium, granite, tungsten-carbide, or a library material).
    #[arg(long, allow_hyphen_values = true, requires = "sphere_diameter")]
    pub sphere_material: Option<String>,
    /// Material of the struck pane (library key or own material code, e.g. soda-lime).
    #[arg(long, allow_hyphen_values = true, default_value = "soda-lime")]
    pub target: String,
    /// Thickness of the struck pane, e.g. 5mm.
    #[arg(long, allow_hyphen_values = true, requires = "sphere_diameter")]
    pub thickness: Option<String>,
    #[command(flatten)]
    pub verdict: VerdictArgs,
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum ShapeArg {
    Circular,
    Rectangular,
}

#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum EdgesArg {
    SimplySupported,
    Clamped,
}

#[derive(Debug, Args)]
pub struct PlateArgs {
    /// Plate outline.
    #[arg(long, value_enum)]
    pub shape: ShapeArg,
    /// Diameter of a circular plate, or one side of a rectangular one, e.g. 600mm.
    #[arg(long, allow_hyphen_values = true)]
    pub span: String,
    /// The other side of a rectangular plate, e.g. 900mm.
    #[arg(long, allow_hyphen_values = true)]
    pub span_b: Option<String>,
    /// Plate thickness, e.g. 5mm.
    #[arg(long, allow_hyphen_values = true)]
    pub thickness: String,
    /// Edge support: simply supported (free to rotate) or clamped (held flat).
    #[arg(long, value_enum)]
    pub edges: EdgesArg,
    /// Uniform pressure over the plate, e.g. 2kPa.
    #[arg(long, allow_hyphen_values = true, conflicts_with_all = ["force", "patch"], required_unless_present = "force")]
    pub pressure: Option<String>,
    /// Total force on a central patch, e.g. 1kN.
    #[arg(long, allow_hyphen_values = true, requires = "patch")]
    pub force: Option<String>,
    /// Diameter of the central loaded circle, e.g. 10mm.
    #[arg(long, allow_hyphen_values = true, requires = "force")]
    pub patch: Option<String>,
    /// Plate material (library key or own material code).
    #[arg(long, allow_hyphen_values = true, default_value = "soda-lime")]
    pub material: String,
    #[command(flatten)]
    pub verdict: VerdictArgs,
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct ThermalArgs {
    /// Material (library key or own material code), e.g. soda-lime.
    #[arg(long, allow_hyphen_values = true, default_value = "soda-lime")]
    pub material: String,
    /// Temperature difference between the hot centre and the cold edge, e.g. 40K.
    #[arg(long, allow_hyphen_values = true)]
    pub delta_t: String,
    /// Restraint factor k: 1 = fully restrained edge strip (0 < k <= 2).
    #[arg(long, allow_hyphen_values = true, default_value = "1")]
    pub restraint: String,
    /// Edge strength: also report the temperature difference it survives, e.g. 40MPa.
    #[arg(long, allow_hyphen_values = true)]
    pub edge_strength: Option<String>,
    #[command(flatten)]
    pub verdict: VerdictArgs,
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct CriticalArgs {
    /// Applied stress: report the critical flaw size, e.g. 60MPa.
    #[arg(
        long,
        allow_hyphen_values = true,
        required_unless_present = "flaw_size",
        conflicts_with = "flaw_size"
    )]
    pub stress: Option<String>,
    /// Flaw size: report the stress at which it fails, e.g. 100um.
    #[arg(long, allow_hyphen_values = true)]
    pub flaw_size: Option<String>,
    /// Fracture toughness K_Ic, e.g. 0.75MPa√m (default: the library value of --material).
    #[arg(long, allow_hyphen_values = true)]
    pub toughness: Option<String>,
    /// Material for the toughness when --toughness is not given.
    #[arg(long, allow_hyphen_values = true, default_value = "soda-lime")]
    pub material: String,
    /// Flaw geometry: semicircular, semi-elliptical, penny, edge, corner, through,
    /// semicircular-hand (1.12 x penny).
    #[arg(
        long,
        allow_hyphen_values = true,
        required_unless_present = "y",
        conflicts_with = "y"
    )]
    pub flaw: Option<String>,
    /// Flaw aspect ratio a/c (depth over half length) for semi-elliptical and corner flaws.
    #[arg(long, allow_hyphen_values = true)]
    pub aspect: Option<String>,
    /// Flaw depth over part thickness a/t (default 0, a thick part).
    #[arg(long, allow_hyphen_values = true, default_value = "0")]
    pub depth_ratio: String,
    /// Geometry factor Y given directly (K = Y sigma sqrt(a), sqrt(pi) included).
    #[arg(long, allow_hyphen_values = true)]
    pub y: Option<String>,
    /// Number of points of the K(a) curve in --json output.
    #[arg(long, allow_hyphen_values = true, default_value = "25")]
    pub points: String,
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
}

pub fn run(args: LoadArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    // the database's own materials are read only when a key is not in the library
    let keys: Vec<&str> = match &*args.kind {
        LoadKind::Impact(a) => vec![
            a.target.as_str(),
            a.sphere_material.as_deref().unwrap_or(""),
        ],
        LoadKind::Plate(a) => vec![a.material.as_str()],
        LoadKind::Thermal(a) => vec![a.material.as_str()],
        LoadKind::CriticalFlaw(a) => vec![a.material.as_str()],
    };
    let keys: Vec<&str> = keys
        .into_iter()
        .filter(|k| !k.is_empty() && contact::find_impactor(k).is_none())
        .collect();
    let book = super::materials::book_for(&ctx.db, &keys)?;
    let out = match *args.kind {
        LoadKind::Impact(a) => impact_cmd(a, &book)?,
        LoadKind::Plate(a) => plate_cmd(a, &book)?,
        LoadKind::Thermal(a) => thermal_cmd(a, &book)?,
        LoadKind::CriticalFlaw(a) => critical_cmd(a, &book)?,
    };
    if out.json {
        let text = serde_json::to_string_pretty(&out.object)
            .map_err(|e| CliError::work(format!("output: {e}")))?;
        writeln!(ctx.out, "{text}")?;
    } else {
        for line in &out.lines {
            writeln!(ctx.out, "{line}")?;
        }
        for w in &out.warnings {
            writeln!(ctx.out, "warning: {}", w.message)?;
        }
        writeln!(ctx.out, "method: {}", out.method)?;
    }
    Ok(())
}

/// What one command produced, ready to print as text or JSON.
struct Output {
    json: bool,
    object: Map<String, Value>,
    lines: Vec<String>,
    warnings: Vec<Warning>,
    method: String,
}

impl Output {
    fn new(json: bool, method: impl Into<String>) -> Self {
        let method = method.into();
        let mut object = Map::new();
        object.insert("method".into(), json!(method));
        Output {
            json,
            object,
            lines: Vec::new(),
            warnings: Vec::new(),
            method,
        }
    }
    /// A figure: into the JSON under `key` (in `unit`), and a text line "label: value unit".
    fn figure(&mut self, key: &str, label: &str, si: f64, unit: Unit) {
        self.object.insert(key.into(), json!(unit.from_si(si)));
        self.lines
            .push(format!("{label}: {}", units::format(si, unit)));
    }
    fn finish(mut self) -> Self {
        let w: Vec<Value> = self
            .warnings
            .iter()
            .map(|w| json!({"code": w.code, "message": w.message}))
            .collect();
        self.object.insert("warnings".into(), Value::Array(w));
        self
    }
}

// ---- parsing helpers: every message names the flag ----

fn positive(flag: &str, text: &str, dim: Dimension) -> Result<f64, CliError> {
    units::parse_positive(text, dim).map_err(|e| CliError::usage(format!("--{flag}: {e}")))
}

fn number_in(flag: &str, text: &str, lo: f64, hi: f64, expected: &str) -> Result<f64, CliError> {
    let v = units::parse_number(text).map_err(|e| CliError::usage(format!("--{flag}: {e}")))?;
    if v < lo || v > hi {
        return Err(CliError::usage(format!(
            "--{flag}: '{}' is out of range; expected {expected}",
            text.trim()
        )));
    }
    Ok(v)
}

/// A calculation refused its input: name the flag.
fn load_err(e: LoadError) -> CliError {
    match e {
        LoadError::OutOfRange { .. } => CliError::usage(format!("--{e}")),
        LoadError::NotAvailable { field, reason } => CliError::work(format!("--{field}: {reason}")),
    }
}

// ---- materials ----

/// The properties of a library material that the load models need.
struct GlassProps {
    name: String,
    elastic: Elastic,
    expansion: Option<f64>,
    toughness: Option<f64>,
    density: Option<f64>,
}

/// A material of the core library (`fracture::materials`) or an own material of the
/// database, with the constants the load models use. A missing elastic constant is a failure
/// of the work (the material lacks it).
fn library_material(flag: &str, key: &str, book: &MaterialBook) -> Result<GlassProps, CliError> {
    let Some(m) = book.find(key) else {
        return Err(CliError::usage(format!(
            "--{flag}: no material '{}' in the library or the own materials; expected one of {}",
            super::sanitize_for_terminal(key, false),
            book.keys().join(", ")
        )));
    };
    let need = |c: &Option<materials::Constant>, what: &str| {
        c.as_ref().map(|c| c.value).ok_or_else(|| {
            CliError::work(format!(
                "--{flag}: the library has no {what} for '{}'",
                m.key
            ))
        })
    };
    Ok(GlassProps {
        elastic: Elastic {
            youngs_modulus: need(&m.youngs_modulus, "Young's modulus")?,
            poisson: need(&m.poisson, "Poisson's ratio")?,
        },
        expansion: m.expansion.as_ref().map(|c| c.value),
        toughness: m.k_ic.as_ref().map(|c| c.value),
        density: m.density.as_ref().map(|c| c.value),
        name: m.name.clone(),
    })
}

/// A flaw geometry by the names `shardlog mirror --flaw` uses (one list, in cli/mirror.rs).
fn flaw_geometry(
    name: &str,
    aspect: Option<f64>,
    depth_ratio: f64,
) -> Result<FlawGeometry, CliError> {
    let k = super::mirror::flaw_key(name);
    let g = super::mirror::flaw_by_name(&k, aspect, depth_ratio)?;
    if aspect.is_some()
        && !matches!(
            g,
            FlawGeometry::SemiElliptical { .. } | FlawGeometry::CornerCrack { .. }
        )
    {
        return Err(CliError::usage(format!(
            "--aspect: given with --flaw {k}; expected --flaw semi-elliptical or corner"
        )));
    }
    g.validate()
        .map_err(|e| CliError::usage(format!("--flaw: {e}")))?;
    Ok(g)
}

// ---- verdict ----

fn add_verdict(out: &mut Output, args: &VerdictArgs, stress: Option<f64>) -> Result<(), CliError> {
    let Some(m) = &args.measured else {
        if args.strength.is_some() {
            // strength alone: the sound-part question only
            let Some(s) = stress else {
                return Err(CliError::usage(
                    "--strength: this model gives a force, not a stress; run `load plate` with \
                     the force as a patch load",
                ));
            };
            let b = positive(
                "strength",
                args.strength.as_deref().unwrap_or(""),
                Dimension::Stress,
            )?;
            let v = verdict::judge(
                &verdict::Measured {
                    stress: s,
                    low: s,
                    high: s,
                },
                s,
                Some(b),
            )
            .map_err(load_err)?;
            sound_part_out(out, &v);
        }
        return Ok(());
    };
    let Some(s) = stress else {
        return Err(CliError::usage(
            "--measured: this model gives a force, not a stress; run `load plate` with the force \
             as a patch load to compare stresses",
        ));
    };
    let measured = positive("measured", m, Dimension::Stress)?;
    let low = match &args.measured_low {
        Some(t) => positive("measured-low", t, Dimension::Stress)?,
        None => measured,
    };
    let high = match &args.measured_high {
        Some(t) => positive("measured-high", t, Dimension::Stress)?,
        None => measured,
    };
    if low > measured || high < measured {
        return Err(CliError::usage(
            "--measured-low/--measured-high: expected low <= measured <= high",
        ));
    }
    let strength = match &args.strength {
        Some(t) => Some(positive("strength", t, Dimension::Stress)?),
        None => None,
    };
    let v = verdict::judge(
        &verdict::Measured {
            stress: measured,
            low,
            high,
        },
        s,
        strength,
    )
    .map_err(load_err)?;
    out.object.insert(
        "verdict".into(),
        json!({
            "finding": v.finding.label(),
            "ratio": v.ratio,
            "measured_mpa": units::to_mpa(measured),
            "measured_low_mpa": units::to_mpa(low),
            "measured_high_mpa": units::to_mpa(high),
            "sound_part": v.sound_part.map(sound_label),
            "strength_ratio": v.strength_ratio,
            "explanation": v.explanation,
        }),
    );
    out.lines.push(format!("verdict: {}", v.explanation));
    Ok(())
}

fn sound_label(s: verdict::SoundPart) -> &'static str {
    match s {
        verdict::SoundPart::WouldBreak => "would break",
        verdict::SoundPart::WouldSurvive => "would survive",
    }
}

fn sound_part_out(out: &mut Output, v: &verdict::Verdict) {
    if let (Some(sp), Some(r)) = (v.sound_part, v.strength_ratio) {
        out.object.insert(
            "sound_part".into(),
            json!({"finding": sound_label(sp), "strength_ratio": r}),
        );
        out.lines.push(match sp {
            verdict::SoundPart::WouldBreak => format!(
                "sound part: the load alone reaches {} times the strength lower bound: it should \
                 break a sound part",
                units::fmt_sig(r, 3)
            ),
            verdict::SoundPart::WouldSurvive => format!(
                "sound part: the load alone reaches {} times the strength lower bound: a sound \
                 part should have survived it",
                units::fmt_sig(r, 3)
            ),
        });
    }
}

// ---- commands ----

fn impact_cmd(a: ImpactArgs, book: &MaterialBook) -> Result<Output, CliError> {
    let speed = positive("speed", &a.speed, Dimension::Speed)?;
    let mass = match &a.mass {
        Some(t) => Some(positive("mass", t, Dimension::Mass)?),
        None => None,
    };
    if let Some(d) = &a.sphere_diameter {
        let d = positive("sphere-diameter", d, Dimension::Length)?;
        let t = positive(
            "thickness",
            a.thickness.as_deref().unwrap_or(""),
            Dimension::Length,
        )?;
        let sm = a.sphere_material.as_deref().unwrap_or("");
        let (sphere, density, sphere_name) = match contact::find_impactor(sm) {
            Some(i) => (i.elastic, i.density, i.name.to_string()),
            None => {
                let g = library_material("sphere-material", sm, book).map_err(|_| {
                    CliError::usage(format!(
                        "--sphere-material: no impactor or library material '{sm}'; impactors: {}",
                        contact::IMPACTORS
                            .iter()
                            .map(|i| i.key)
                            .collect::<Vec<_>>()
                            .join(", ")
                    ))
                })?;
                if mass.is_none() && g.density.is_none() {
                    return Err(CliError::usage(format!(
                        "--mass: needed (the library has no density for '{sm}')"
                    )));
                }
                (g.elastic, g.density.unwrap_or(0.0), g.name)
            }
        };
        let target = library_material("target", &a.target, book)?;
        let r = contact::sphere_impact(&contact::SphereImpact {
            sphere_diameter: d,
            sphere,
            sphere_density: density,
            mass,
            speed,
            target: target.elastic,
            thickness: t,
        })
        .map_err(load_err)?;
        let mut out = Output::new(a.json, contact::HERTZ_METHOD);
        out.lines.push(format!(
            "sphere of {sphere_name} on {}: Hertz contact at the deepest point of the impact",
            target.name
        ));
        out.figure(
            "force_n",
            "peak contact force",
            r.contact.force,
            Unit::Newton,
        );
        out.figure(
            "stress_mpa",
            "tension at the contact rim",
            r.contact.rim_tension,
            Unit::Megapascal,
        );
        out.figure(
            "contact_radius_mm",
            "contact radius",
            r.contact.contact_radius,
            Unit::Millimetre,
        );
        out.figure(
            "peak_pressure_mpa",
            "peak contact pressure",
            r.contact.peak_pressure,
            Unit::Megapascal,
        );
        out.figure(
            "contact_time_ms",
            "contact time",
            r.contact_time,
            Unit::Millisecond,
        );
        out.figure("mass_kg", "mass", r.mass, Unit::Kilogram);
        out.figure("energy_j", "impact energy", r.energy, Unit::Joule);
        out.warnings = r.warnings;
        add_verdict(&mut out, &a.verdict, Some(r.contact.rim_tension))?;
        return Ok(out.finish());
    }
    let Some(mass) = mass else {
        return Err(CliError::usage("--mass: needed for the impulse model"));
    };
    let Some(ct) = &a.contact_time else {
        return Err(CliError::usage(
            "--contact-time: needed for the impulse model (or give --sphere-diameter for Hertz)",
        ));
    };
    let dt = positive("contact-time", ct, Dimension::Time)?;
    let e = number_in(
        "restitution",
        &a.restitution,
        0.0,
        1.0,
        "a coefficient of restitution from 0 to 1",
    )?;
    let r = impact::impulse(&impact::Impulse {
        mass,
        speed,
        contact_time: dt,
        restitution: e,
    })
    .map_err(load_err)?;
    let mut out = Output::new(a.json, impact::IMPULSE_METHOD);
    out.figure("force_n", "mean contact force", r.force, Unit::Newton);
    out.figure(
        "peak_force_half_sine_n",
        "peak force of a half-sine pulse",
        r.peak_force_half_sine,
        Unit::Newton,
    );
    out.object.insert("impulse_ns".into(), json!(r.impulse));
    out.lines
        .push(format!("impulse: {} N·s", units::fmt_sig(r.impulse, 3)));
    out.figure("energy_j", "impact energy", r.energy, Unit::Joule);
    out.warnings = r.warnings;
    add_verdict(&mut out, &a.verdict, None)?;
    Ok(out.finish())
}

fn plate_cmd(a: PlateArgs, book: &MaterialBook) -> Result<Output, CliError> {
    let span = positive("span", &a.span, Dimension::Length)?;
    let span_b = match &a.span_b {
        Some(t) => Some(positive("span-b", t, Dimension::Length)?),
        None => None,
    };
    let t = positive("thickness", &a.thickness, Dimension::Length)?;
    let load = match (&a.pressure, &a.force, &a.patch) {
        (Some(p), _, _) => plates::PlateLoad::Pressure(positive("pressure", p, Dimension::Stress)?),
        (None, Some(f), Some(d)) => plates::PlateLoad::Patch {
            force: positive("force", f, Dimension::Force)?,
            diameter: positive("patch", d, Dimension::Length)?,
        },
        _ => {
            return Err(CliError::usage(
                "--pressure or --force with --patch: one load is needed",
            ))
        }
    };
    let shape = match a.shape {
        ShapeArg::Circular => plates::Shape::Circular,
        ShapeArg::Rectangular => plates::Shape::Rectangular,
    };
    if matches!(shape, plates::Shape::Rectangular) && span_b.is_none() {
        return Err(CliError::usage(
            "--span-b: a rectangular plate needs both sides",
        ));
    }
    let edges = match a.edges {
        EdgesArg::SimplySupported => plates::Edges::SimplySupported,
        EdgesArg::Clamped => plates::Edges::Clamped,
    };
    let mat = library_material("material", &a.material, book)?;
    let r = plates::bend(&plates::Plate {
        shape,
        edges,
        span,
        span_b,
        thickness: t,
        material: mat.elastic,
        load,
    })
    .map_err(load_err)?;
    let mut out = Output::new(a.json, r.method);
    out.figure(
        "stress_mpa",
        &format!("largest bending stress ({})", r.stress_at),
        r.stress,
        Unit::Megapascal,
    );
    out.object.insert("stress_at".into(), json!(r.stress_at));
    out.figure(
        "deflection_mm",
        "largest deflection",
        r.deflection,
        Unit::Millimetre,
    );
    out.figure("force_n", "total load", r.force, Unit::Newton);
    out.warnings = r.warnings;
    add_verdict(&mut out, &a.verdict, Some(r.stress))?;
    Ok(out.finish())
}

fn thermal_cmd(a: ThermalArgs, book: &MaterialBook) -> Result<Output, CliError> {
    let dt = positive("delta-t", &a.delta_t, Dimension::TemperatureDifference)?;
    let k = number_in(
        "restraint",
        &a.restraint,
        f64::MIN_POSITIVE,
        2.0,
        "a restraint factor above 0 and at most 2 (1 = fully restrained edge strip)",
    )?;
    let mat = library_material("material", &a.material, book)?;
    let alpha = match mat.expansion {
        Some(x) if x > 0.0 => x,
        Some(_) => {
            return Err(CliError::work(format!(
                "--material: {} has an expansion coefficient of about zero in the library: a \
                 temperature difference gives it no thermal stress to speak of",
                mat.name
            )))
        }
        None => {
            return Err(CliError::work(format!(
                "--material: the library has no expansion coefficient for '{}'",
                a.material
            )))
        }
    };
    let r = thermal::edge_stress(&thermal::Thermal {
        youngs_modulus: mat.elastic.youngs_modulus,
        expansion: alpha,
        delta_t: dt,
        restraint: k,
    })
    .map_err(load_err)?;
    let mut out = Output::new(a.json, thermal::THERMAL_METHOD);
    out.figure("stress_mpa", "edge tension", r.stress, Unit::Megapascal);
    out.object.insert(
        "stress_per_kelvin_mpa".into(),
        json!(units::to_mpa(r.stress_per_kelvin)),
    );
    out.lines.push(format!(
        "per kelvin: {} MPa/K ({})",
        units::fmt_sig(units::to_mpa(r.stress_per_kelvin), 3),
        mat.name
    ));
    if let Some(s) = &a.edge_strength {
        let s = positive("edge-strength", s, Dimension::Stress)?;
        let allow = thermal::allowable_delta_t(mat.elastic.youngs_modulus, alpha, k, s)
            .map_err(load_err)?;
        out.figure(
            "allowable_delta_t_k",
            "temperature difference the edge survives",
            allow,
            Unit::Kelvin,
        );
    }
    out.warnings = r.warnings;
    add_verdict(&mut out, &a.verdict, Some(r.stress))?;
    Ok(out.finish())
}

fn critical_cmd(a: CriticalArgs, book: &MaterialBook) -> Result<Output, CliError> {
    let (y, geometry) = match (&a.y, &a.flaw) {
        (Some(t), _) => (
            number_in("y", t, 0.1, 10.0, "a geometry factor from 0.1 to 10")?,
            None,
        ),
        (None, Some(name)) => {
            let aspect = match &a.aspect {
                Some(t) => Some(number_in(
                    "aspect",
                    t,
                    f64::MIN_POSITIVE,
                    2.0,
                    "a/c greater than 0 and at most 2, such as 0.8",
                )?),
                None => None,
            };
            let at = number_in(
                "depth-ratio",
                &a.depth_ratio,
                0.0,
                0.999_999,
                "a/t from 0 up to 1, such as 0.1",
            )?;
            let g = flaw_geometry(name, aspect, at)?;
            let detail = flaw::geometry_factor_detail(&g);
            (detail.y, Some((g, detail)))
        }
        (None, None) => return Err(CliError::usage("--flaw or --y: a flaw geometry is needed")),
    };
    let toughness = match &a.toughness {
        Some(t) => positive("toughness", t, Dimension::Toughness)?,
        None => library_material("material", &a.material, book)?
            .toughness
            .ok_or_else(|| {
                CliError::work(format!(
                    "--toughness: the library has no K_Ic for '{}'",
                    a.material
                ))
            })?,
    };
    let points = number_in(
        "points",
        &a.points,
        2.0,
        2000.0,
        "a whole number from 2 to 2000",
    )?;
    if points.fract() != 0.0 {
        return Err(CliError::usage(
            "--points: expected a whole number from 2 to 2000",
        ));
    }
    let mut out = Output::new(a.json, critical::CRITICAL_METHOD);
    out.object.insert("y".into(), json!(y));
    match &geometry {
        Some((g, d)) => {
            out.object.insert("flaw".into(), json!(g.label()));
            out.object.insert("y_source".into(), json!(d.source));
            let point = if d.governing_point.is_empty() {
                String::new()
            } else {
                format!(", {}", d.governing_point)
            };
            out.object
                .insert("governing_point".into(), json!(d.governing_point));
            out.lines.push(format!(
                "geometry factor Y: {} ({}{point}; {})",
                units::fmt_sig(y, 4),
                g.label(),
                d.source
            ));
        }
        None => out.lines.push(format!(
            "geometry factor Y: {} (given)",
            units::fmt_sig(y, 4)
        )),
    }
    out.figure(
        "toughness_mpa_sqrt_m",
        "toughness K_Ic",
        toughness,
        Unit::MegapascalRootMetre,
    );
    let stress = match (&a.stress, &a.flaw_size) {
        (Some(s), _) => {
            let s = positive("stress", s, Dimension::Stress)?;
            let ac = critical::critical_size(s, toughness, y).map_err(load_err)?;
            out.figure("stress_mpa", "applied stress", s, Unit::Megapascal);
            out.figure(
                "critical_flaw_um",
                "critical flaw size",
                ac,
                Unit::Micrometre,
            );
            s
        }
        (None, Some(f)) => {
            let f = positive("flaw-size", f, Dimension::Length)?;
            let s = critical::failure_stress(f, toughness, y).map_err(load_err)?;
            out.figure("critical_flaw_um", "flaw size", f, Unit::Micrometre);
            out.figure("stress_mpa", "failure stress", s, Unit::Megapascal);
            s
        }
        (None, None) => {
            return Err(CliError::usage("--stress or --flaw-size: one is needed"));
        }
    };
    let curve = critical::curve(stress, toughness, y, 10.0, points as usize).map_err(load_err)?;
    let pts: Vec<Value> = curve
        .points
        .iter()
        .map(|p| json!({"flaw_um": units::to_um(p.flaw_size), "k_mpa_sqrt_m": units::to_mpa(p.stress_intensity)}))
        .collect();
    out.object.insert("curve".into(), Value::Array(pts));
    out.lines.push("K(a) at this stress:".into());
    for p in curve.points.iter().step_by((curve.points.len() / 6).max(1)) {
        out.lines.push(format!(
            "  a = {:>10}   K = {}{}",
            units::format(p.flaw_size, Unit::Micrometre),
            units::format(p.stress_intensity, Unit::MegapascalRootMetre),
            if p.stress_intensity >= toughness {
                "  (>= K_Ic)"
            } else {
                ""
            }
        ));
    }
    Ok(out.finish())
}
