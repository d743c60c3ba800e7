//! The invented demo fleet: Tarnmoor Valley Lines, a regional rail operator with four
//! depots and a few hundred cars, glazed by four invented suppliers. Every name here is
//! invented. Deterministic from a seed.
//!
//! The story the data tells: impacts (ballast strikes) and vandalism lead, at high
//! stress; thermal edge breaks in annealed (and a few heat-strengthened) panes peak in
//! March and November, at low stress, and never occur in fully tempered panes; one fully tempered side-window lot of Brellin Safety
//! Glass (BS-2207) shows interior origins at nickel sulfide stones, at low applied stress
//! (spontaneous breakage). Mirror readings are drawn from a target stress with
//! R = (A/σ)² plus scatter, and the stored result is computed by the fracture core.
//!
//! Each record is entered after the last event it describes (the examination, or the
//! disposal of the specimen when the case is closed), so its audit stamp never precedes a
//! custody entry, examination or photograph in it; the log is a snapshot taken on
//! 2026-11-30, so recent breakages are still open.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use chrono::{DateTime, Datelike, Days, NaiveDate, TimeZone, Utc};

use super::audit::{Bulk, Chain, INCIDENT};
use super::incidents::{format_reference, insert_prepared, prepare, Prepared, Refs};
use super::model::*;
use super::{analysis, files, refdata, sqlite, Store, StoreError};
use shardlog_core::fracture::{self, Boundary};
use shardlog_core::units::Dimension;

pub const DEFAULT_INCIDENTS: u64 = 400;
pub const DEFAULT_SEED: u64 = 20_260_314;
/// Up to this many incidents the demo writes one audit row per incident; above it (benchmark
/// databases) one batch row per 1,000.
pub const PER_RECORD_AUDIT_UP_TO: u64 = 10_000;

#[derive(Debug, Clone)]
pub struct DemoOptions {
    pub incidents: u64,
    pub seed: u64,
}

#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct DemoSummary {
    pub incidents: u64,
    pub examinations: u64,
    pub custody: u64,
    pub attachments: u64,
    pub exposure: u64,
}

/// A small deterministic generator (SplitMix64).
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    fn f(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }
    fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.f()
    }
    fn below(&mut self, n: usize) -> usize {
        ((self.f() * n as f64) as usize).min(n.saturating_sub(1))
    }
    fn chance(&mut self, p: f64) -> bool {
        self.f() < p
    }
    /// Standard normal (Box–Muller).
    fn normal(&mut self) -> f64 {
        let u1 = self.f().max(1e-300);
        let u2 = self.f();
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }
    fn pick<'a, T>(&mut self, items: &'a [T]) -> &'a T {
        &items[self.below(items.len())]
    }
    /// Index drawn with the given weights (cumulative table).
    fn weighted(&mut self, cumulative: &[f64]) -> usize {
        let total = cumulative.last().copied().unwrap_or(0.0);
        let x = self.f() * total;
        cumulative
            .partition_point(|c| *c <= x)
            .min(cumulative.len().saturating_sub(1))
    }
}

const SITES: [(&str, &str, &str); 4] = [
    ("TVL-CEN", "Tarnmoor Central depot", "north"),
    ("TVL-ASH", "Ashgrove depot", "west"),
    ("TVL-PEL", "Pellbridge yard", "south"),
    ("TVL-NOR", "Norwick sidings", "east"),
];

const SUPPLIERS: [(&str, &str); 4] = [
    ("ORVALE", "Orvale Glassworks"),
    ("BRELLIN", "Brellin Safety Glass"),
    ("KESTREL", "Kestrel Glazing"),
    ("MARROW", "Marrowfield Float Products"),
];

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
enum Kind {
    Side,
    Door,
    Partition,
    Windscreen,
}

impl Kind {
    const ALL: [Kind; 4] = [Kind::Side, Kind::Door, Kind::Partition, Kind::Windscreen];
    /// Panes of this kind per car (windscreens: cab cars only, about one car in four).
    fn panes_per_car(self) -> f64 {
        match self {
            Kind::Side => 16.0,
            Kind::Door => 4.0,
            Kind::Partition => 2.0,
            Kind::Windscreen => 0.25,
        }
    }
    /// Relative breakage hazard per pane-year.
    fn hazard(self) -> f64 {
        match self {
            Kind::Side => 1.0,
            Kind::Door => 1.3,
            Kind::Partition => 0.6,
            Kind::Windscreen => 3.0,
        }
    }
}

struct ProductDef {
    supplier: &'static str,
    code: &'static str,
    name: &'static str,
    kind: Kind,
    makeup: &'static str,
    temper: &'static str,
    thickness: &'static str,
    lot_prefix: &'static str,
}

const PRODUCTS: [ProductDef; 8] = [
    ProductDef {
        supplier: "ORVALE",
        code: "SW6-FT",
        name: "side window 6 mm fully tempered",
        kind: Kind::Side,
        makeup: "monolithic",
        temper: "fully_tempered",
        thickness: "6 mm",
        lot_prefix: "OS",
    },
    ProductDef {
        supplier: "BRELLIN",
        code: "SW6-FT",
        name: "side window 6 mm fully tempered",
        kind: Kind::Side,
        makeup: "monolithic",
        temper: "fully_tempered",
        thickness: "6 mm",
        lot_prefix: "BS",
    },
    ProductDef {
        supplier: "KESTREL",
        code: "SW5-FT",
        name: "side window 5 mm fully tempered",
        kind: Kind::Side,
        makeup: "monolithic",
        temper: "fully_tempered",
        thickness: "5 mm",
        lot_prefix: "KS",
    },
    ProductDef {
        supplier: "BRELLIN",
        code: "DW6-HS",
        name: "door drop light 6 mm heat-strengthened",
        kind: Kind::Door,
        makeup: "monolithic",
        temper: "heat_strengthened",
        thickness: "6 mm",
        lot_prefix: "BD",
    },
    ProductDef {
        supplier: "MARROW",
        code: "DW6-HS",
        name: "door drop light 6 mm heat-strengthened",
        kind: Kind::Door,
        makeup: "monolithic",
        temper: "heat_strengthened",
        thickness: "6 mm",
        lot_prefix: "MD",
    },
    ProductDef {
        supplier: "ORVALE",
        code: "PT8-AN",
        name: "saloon partition 8 mm annealed",
        kind: Kind::Partition,
        makeup: "monolithic",
        temper: "annealed",
        thickness: "8 mm",
        lot_prefix: "OP",
    },
    ProductDef {
        supplier: "MARROW",
        code: "PT6-AN",
        name: "saloon partition 6 mm annealed",
        kind: Kind::Partition,
        makeup: "monolithic",
        temper: "annealed",
        thickness: "6 mm",
        lot_prefix: "MP",
    },
    ProductDef {
        supplier: "KESTREL",
        code: "WS-LAM",
        name: "cab windscreen, laminated 2 × 6 mm heat-strengthened",
        kind: Kind::Windscreen,
        makeup: "laminated",
        temper: "heat_strengthened",
        thickness: "6 mm",
        lot_prefix: "KW",
    },
];

/// Lot production months (year, month) for every product.
const LOT_MONTHS: [(i32, u32); 6] = [
    (2022, 1),
    (2022, 7),
    (2023, 3),
    (2023, 11),
    (2024, 8),
    (2025, 4),
];

/// The lot with nickel sulfide stones.
const HOT_LOT: (&str, &str, &str) = ("BRELLIN", "SW6-FT", "BS-2207");

fn ymd(y: i32, m: u32, d: u32) -> NaiveDate {
    NaiveDate::from_ymd_opt(y, m, d).unwrap_or_default()
}

fn period() -> (NaiveDate, NaiveDate) {
    (ymd(2024, 1, 1), ymd(2026, 10, 31))
}

fn lot_code(prefix: &str, (y, m): (i32, u32)) -> String {
    format!("{prefix}-{:02}{m:02}", y % 100)
}

/// Panes of one product lot fitted to one batch of cars at one site.
#[derive(Clone)]
struct Slot {
    product: usize,
    lot: String,
    site: usize,
    cars: std::ops::Range<usize>,
    installed_on: NaiveDate,
    removed_on: Option<NaiveDate>,
    panes: i64,
}

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
enum CauseKind {
    Thermal,
    Impact,
    Vandalism,
    HardContact,
    EdgeDamage,
    NickelSulfide,
    Handling,
    Pressure,
    Unknown,
}

impl CauseKind {
    fn code(self) -> &'static str {
        match self {
            CauseKind::Thermal => "thermal",
            CauseKind::Impact => "impact",
            CauseKind::Vandalism => "vandalism",
            CauseKind::HardContact => "hard_contact",
            CauseKind::EdgeDamage => "edge_damage",
            CauseKind::NickelSulfide => "nickel_sulfide",
            CauseKind::Handling => "handling",
            CauseKind::Pressure => "pressure",
            CauseKind::Unknown => "unknown",
        }
    }
}

/// One planned incident before it is written.
struct Plan {
    found_on: NaiveDate,
    order: u64,
    slot: usize,
    car: usize,
    cause: CauseKind,
    life: Life,
}

/// What happens to a breakage after it is found, decided before it is written so that the
/// record can be entered (and its audit row stamped) after the last event it describes:
/// no record carries a custody entry, examination or attachment dated after its own entry.
#[derive(Clone, Copy)]
struct Life {
    /// Sent to the lab and examined.
    examined: bool,
    /// Minutes after midnight of the day after finding when the lab received the specimen.
    received_min: u32,
    /// Days after finding the examination was made (1..=6).
    exam_days: u64,
    /// A cause was assigned (always when examined).
    assigned: bool,
    /// The case was closed (an examined specimen is then disposed of).
    closed: bool,
    /// Days after receipt an examined specimen was disposed of.
    dispose_days: i64,
    /// When the record was entered into the log: after its last event.
    entered: DateTime<Utc>,
}

/// The moment the demo log is a snapshot of: nothing in it happens later.
fn snapshot() -> DateTime<Utc> {
    at_time(ymd(2026, 11, 30), 17 * 60)
}

/// Share of incidents of a cause that are sent to the lab (before the benchmark-scale cap).
fn lab_rate(cause: CauseKind) -> f64 {
    match cause {
        CauseKind::Thermal => 0.75,
        CauseKind::Impact => 0.35,
        CauseKind::Vandalism => 0.2,
        CauseKind::HardContact | CauseKind::EdgeDamage => 0.8,
        CauseKind::NickelSulfide => 1.0,
        CauseKind::Handling => 0.5,
        CauseKind::Pressure => 0.6,
        CauseKind::Unknown => 0.5,
    }
}

fn plan_life(rng: &mut Rng, cause: CauseKind, found_on: NaiveDate, lab_share: f64) -> Life {
    let mut examined = rng.chance(lab_share * lab_rate(cause));
    let received_min = 9 * 60 + rng.below(120) as u32;
    let exam_days = 1 + rng.below(6) as u64;
    let examined_at = at_time(found_on + Days::new(exam_days), 15 * 60);
    if examined && examined_at > snapshot() {
        examined = false;
    }
    let assigned =
        examined || matches!(cause, CauseKind::Impact | CauseKind::Vandalism) && rng.chance(0.7);
    let mut closed = assigned && cause != CauseKind::NickelSulfide && rng.chance(0.4);
    let dispose_days = 30 + rng.below(60) as i64;
    let received = at_time(found_on + Days::new(1), received_min);
    let disposed = received + chrono::Duration::days(dispose_days);
    if examined && closed && disposed > snapshot() {
        closed = false;
    }
    let after = |t: DateTime<Utc>, rng: &mut Rng| {
        (t + chrono::Duration::minutes(10 + rng.below(120) as i64)).min(snapshot())
    };
    let entered = if examined && closed {
        after(disposed, rng)
    } else if examined {
        after(examined_at, rng)
    } else {
        at_time(found_on, 7 * 60 + rng.below(600) as u32)
    };
    Life {
        examined,
        received_min,
        exam_days,
        assigned,
        closed,
        dispose_days,
        entered,
    }
}

fn cause_for(rng: &mut Rng, temper: &str) -> CauseKind {
    // a fully tempered pane survives a temperature difference of about 200 K across it
    // (common practice); thermal breaks are an annealed-glass problem, rare in
    // heat-strengthened panes and left out for fully tempered ones
    let thermal = match temper {
        "annealed" => 0.42,
        "heat_strengthened" => 0.06,
        _ => 0.0,
    };
    let edge = match temper {
        "fully_tempered" => 0.02,
        _ => 0.07,
    };
    let nis = if temper == "fully_tempered" {
        0.006
    } else {
        0.0
    };
    let table = [
        (CauseKind::Thermal, thermal),
        (CauseKind::Impact, 0.26),
        (CauseKind::Vandalism, 0.20),
        (CauseKind::HardContact, 0.06),
        (CauseKind::EdgeDamage, edge),
        (CauseKind::NickelSulfide, nis),
        (CauseKind::Handling, 0.04),
        (CauseKind::Pressure, 0.02),
        (CauseKind::Unknown, 0.05),
    ];
    let mut cum = Vec::with_capacity(table.len());
    let mut acc = 0.0;
    for (_, w) in &table {
        acc += w;
        cum.push(acc);
    }
    table[rng.weighted(&cum)].0
}

/// Seasonal weight of a date for a cause (thermal breaks peak in March and November).
fn season(cause: CauseKind, d: NaiveDate) -> f64 {
    match (cause, d.month()) {
        (CauseKind::Thermal, 3 | 11) => 1.0,
        (CauseKind::Thermal, 2 | 4 | 10 | 12) => 0.6,
        (CauseKind::Thermal, _) => 0.2,
        (CauseKind::Vandalism, 6..=8) => 1.0,
        (CauseKind::Vandalism, _) => 0.7,
        _ => 1.0,
    }
}

/// A tiny valid PNG: 16×16 grey image with a pattern set by `seed` (stored deflate).
pub fn tiny_png(seed: u8) -> Vec<u8> {
    fn crc32(data: &[u8]) -> u32 {
        let mut c = 0xFFFF_FFFFu32;
        for &b in data {
            c ^= b as u32;
            for _ in 0..8 {
                c = if c & 1 != 0 {
                    0xEDB8_8320 ^ (c >> 1)
                } else {
                    c >> 1
                };
            }
        }
        !c
    }
    fn chunk(out: &mut Vec<u8>, kind: &[u8; 4], data: &[u8]) {
        out.extend_from_slice(&(data.len() as u32).to_be_bytes());
        let mut body = kind.to_vec();
        body.extend_from_slice(data);
        out.extend_from_slice(&body);
        out.extend_from_slice(&crc32(&body).to_be_bytes());
    }
    let (w, h) = (16u32, 16u32);
    let mut raw = Vec::new();
    for y in 0..h {
        raw.push(0u8); // filter: none
        for x in 0..w {
            let dx = x as i32 - 8;
            let dy = y as i32 - 8;
            let r2 = (dx * dx + dy * dy) as u32;
            raw.push(((r2 * 7 + seed as u32 * 37) % 256) as u8);
        }
    }
    // zlib stream with one stored block
    let mut z = vec![0x78, 0x01, 0x01];
    z.extend_from_slice(&(raw.len() as u16).to_le_bytes());
    z.extend_from_slice(&(!(raw.len() as u16)).to_le_bytes());
    z.extend_from_slice(&raw);
    let (mut a, mut b) = (1u32, 0u32);
    for &x in &raw {
        a = (a + x as u32) % 65521;
        b = (b + a) % 65521;
    }
    z.extend_from_slice(&((b << 16) | a).to_be_bytes());
    let mut out = vec![0x89, b'P', b'N', b'G', 0x0D, 0x0A, 0x1A, 0x0A];
    let mut ihdr = Vec::new();
    ihdr.extend_from_slice(&w.to_be_bytes());
    ihdr.extend_from_slice(&h.to_be_bytes());
    ihdr.extend_from_slice(&[8, 0, 0, 0, 0]); // 8-bit greyscale
    chunk(&mut out, b"IHDR", &ihdr);
    chunk(&mut out, b"IDAT", &z);
    chunk(&mut out, b"IEND", &[]);
    out
}

fn at_time(d: NaiveDate, minutes: u32) -> DateTime<Utc> {
    let base = d.and_hms_opt(0, 0, 0).unwrap_or_default();
    Utc.from_utc_datetime(&base) + chrono::Duration::minutes(minutes as i64)
}

/// Type a radius the way an analyst would: mm with two decimals, µm for small ones,
/// one decimal for long branching distances.
fn typed_radius(rng: &mut Rng, r_m: f64) -> Measured {
    let mm = r_m * 1e3;
    let text = if mm < 0.5 && rng.chance(0.5) {
        format!("{:.0} um", (mm * 1e3).max(1.0))
    } else if mm >= 10.0 {
        format!("{mm:.1} mm")
    } else {
        format!("{:.2} mm", mm.max(0.01))
    };
    Measured::parse(&text, Dimension::Length).unwrap_or(Measured {
        text: format!("{mm}"),
        unit: "mm".into(),
        si: r_m,
    })
}

struct World {
    cars: usize,
    slots: Vec<Slot>,
    lots: Vec<(usize, String, NaiveDate)>,
}

fn build_world(rng: &mut Rng, incidents: u64) -> World {
    let cars = ((incidents as usize) * 3 / 4).clamp(300, 20_000);
    let batch = 25usize;
    let n_batches = cars.div_ceil(batch);
    let mut lots = Vec::new();
    for (pi, p) in PRODUCTS.iter().enumerate() {
        for &m in &LOT_MONTHS {
            lots.push((pi, lot_code(p.lot_prefix, m), ymd(m.0, m.1, 15)));
        }
    }
    let side: Vec<usize> = (0..PRODUCTS.len())
        .filter(|&i| PRODUCTS[i].kind == Kind::Side)
        .collect();
    let door: Vec<usize> = (0..PRODUCTS.len())
        .filter(|&i| PRODUCTS[i].kind == Kind::Door)
        .collect();
    let part: Vec<usize> = (0..PRODUCTS.len())
        .filter(|&i| PRODUCTS[i].kind == Kind::Partition)
        .collect();
    let ws: Vec<usize> = (0..PRODUCTS.len())
        .filter(|&i| PRODUCTS[i].kind == Kind::Windscreen)
        .collect();
    let mut slots = Vec::new();
    let span_days = (ymd(2025, 6, 30) - ymd(2022, 3, 1)).num_days();
    for b in 0..n_batches {
        let first = b * batch;
        let last = (first + batch).min(cars);
        let site = b % SITES.len();
        let installed = ymd(2022, 3, 1)
            + Days::new(
                (span_days * b as i64 / n_batches.max(1) as i64) as u64 + rng.below(20) as u64,
            );
        for kind in Kind::ALL {
            let choices = match kind {
                Kind::Side => &side,
                Kind::Door => &door,
                Kind::Partition => &part,
                Kind::Windscreen => &ws,
            };
            let product = choices[(b + rng.below(2)) % choices.len()];
            let lot_for = |d: NaiveDate| {
                lots.iter()
                    .rfind(|(pi, _, made)| *pi == product && *made + Days::new(30) <= d)
                    .or_else(|| lots.iter().find(|(pi, _, _)| *pi == product))
                    .map(|(_, code, _)| code.clone())
                    .unwrap_or_default()
            };
            let panes = ((last - first) as f64 * kind.panes_per_car()).ceil() as i64;
            // partitions fitted before 2023 were renewed in a refurbishment in autumn 2025
            if kind == Kind::Partition && installed < ymd(2023, 1, 1) {
                let swap = ymd(2025, 9, 30);
                slots.push(Slot {
                    product,
                    lot: lot_for(installed),
                    site,
                    cars: first..last,
                    installed_on: installed,
                    removed_on: Some(swap),
                    panes,
                });
                let renewed = ymd(2025, 10, 1);
                slots.push(Slot {
                    product,
                    lot: lot_for(renewed),
                    site,
                    cars: first..last,
                    installed_on: renewed,
                    removed_on: None,
                    panes,
                });
            } else {
                slots.push(Slot {
                    product,
                    lot: lot_for(installed),
                    site,
                    cars: first..last,
                    installed_on: installed,
                    removed_on: None,
                    panes,
                });
            }
        }
    }
    World { cars, slots, lots }
}

fn position(rng: &mut Rng, kind: Kind) -> String {
    match kind {
        Kind::Side => format!(
            "{} side, bay {}",
            if rng.chance(0.5) { "left" } else { "right" },
            1 + rng.below(8)
        ),
        Kind::Door => format!(
            "door {}{} drop light",
            ["A", "B"][rng.below(2)],
            1 + rng.below(2)
        ),
        Kind::Partition => format!("saloon partition, car end {}", 1 + rng.below(2)),
        Kind::Windscreen => "cab windscreen".to_string(),
    }
}

/// Target net stress at the origin (Pa), origin location and origin type for a cause.
fn target(rng: &mut Rng, cause: CauseKind, temper: &str) -> (f64, &'static str, &'static str) {
    let cs: f64 = match temper {
        "fully_tempered" => 69e6,
        "heat_strengthened" => 38e6,
        _ => 0.0,
    };
    match cause {
        CauseKind::Thermal => (
            rng.range(14e6, 30e6) + 0.3 * cs.min(38e6) * rng.f(),
            "edge",
            if rng.chance(0.6) {
                "edge_cutting_damage"
            } else {
                "edge_chip"
            },
        ),
        CauseKind::Impact => (rng.range(150e6, 260e6) - cs, "surface", "impact_site"),
        CauseKind::Vandalism => (rng.range(160e6, 300e6) - cs, "surface", "impact_site"),
        CauseKind::HardContact => (
            rng.range(60e6, 110e6) - 0.5 * cs,
            if rng.chance(0.5) { "edge" } else { "corner" },
            "hard_contact",
        ),
        CauseKind::EdgeDamage => (rng.range(22e6, 45e6), "edge", "edge_cutting_damage"),
        CauseKind::NickelSulfide => (cs / 2.0 + rng.range(2e6, 14e6), "interior", "inclusion_nis"),
        CauseKind::Handling => (rng.range(35e6, 70e6), "edge", "edge_chip"),
        CauseKind::Pressure => (rng.range(40e6, 65e6), "surface", "surface_scratch"),
        CauseKind::Unknown => (rng.range(25e6, 110e6), "surface", "unknown"),
    }
}

fn description(rng: &mut Rng, cause: CauseKind) -> (&'static str, String) {
    let d = match cause {
        CauseKind::Thermal => *rng.pick(&[
            "Single crack from the edge, running square to the edge and the faces, then wandering; no impact mark.",
            "Crack starts at the edge under the frame rubber, square to the faces; pane was in low sun after a cold night.",
        ]),
        CauseKind::Impact => *rng.pick(&[
            "Impact mark with a crushed zone on the outboard face; ballast strike suspected.",
            "Small crater with radial cracks on the outboard face, pane fully fragmented.",
        ]),
        CauseKind::Vandalism => *rng.pick(&[
            "Pane smashed from outside while stabled; several impact points.",
            "Impact mark on the inboard face, fragments on the seat; reported as vandalism.",
        ]),
        CauseKind::HardContact => "Origin at the clamping point of the frame; fixing bolt found over-tightened.",
        CauseKind::EdgeDamage => "Origin at a shell chip on the ground edge; edge finish looks rough.",
        CauseKind::NickelSulfide => "Pane broke while stabled with no load; butterfly pattern around an interior origin, small dark stone at the centre.",
        CauseKind::Handling => "Broke during a door overhaul; chip at the lower edge.",
        CauseKind::Pressure => "Crack from a surface scratch near mid-pane after a storm with strong gusts.",
        CauseKind::Unknown => "Pane found broken, origin not found in the remaining fragments.",
    };
    let how = match cause {
        CauseKind::Impact => "reported by driver in service",
        CauseKind::Vandalism => "found at morning inspection",
        CauseKind::Handling => "reported by overhaul shop",
        _ => *rng.pick(&[
            "found at depot inspection",
            "found by cleaning crew",
            "reported by driver in service",
        ]),
    };
    (how, d.to_string())
}

const ANALYSTS: [&str; 3] = ["mira", "jules", "anouk"];
const REPORTERS: [&str; 4] = [
    "depot staff",
    "driver",
    "cleaning crew",
    "night shift fitter",
];

/// Generate the demo database at `out` (which must not exist).
pub fn generate(out: &Path, o: &DemoOptions) -> Result<DemoSummary, StoreError> {
    if out.exists() {
        return Err(StoreError::File {
            path: out.display().to_string(),
            message: "already exists; the demo writes a new file".into(),
        });
    }
    let mut tmp_name = out
        .file_name()
        .map(|n| n.to_os_string())
        .unwrap_or_default();
    tmp_name.push(".part");
    let tmp: PathBuf = out.with_file_name(tmp_name);
    let _ = std::fs::remove_file(&tmp);
    let result = generate_into(&tmp, out, o);
    match result {
        Ok(sum) => {
            std::fs::rename(&tmp, out).map_err(|e| StoreError::File {
                path: out.display().to_string(),
                message: e.to_string(),
            })?;
            Ok(sum)
        }
        Err(e) => {
            let _ = std::fs::remove_file(&tmp);
            Err(e)
        }
    }
}

fn generate_into(tmp: &Path, out: &Path, o: &DemoOptions) -> Result<DemoSummary, StoreError> {
    let mut store = Store::open(tmp)?;
    store.set_id_seed(o.seed ^ 0x5EED_0000_0000_0001);
    let files_dir = files::dir_for(out);
    let mut rng = Rng(o.seed);
    sqlite::set_bulk_pragmas(&store.conn)?;
    let world = build_world(&mut rng, o.incidents);
    let (start, end) = period();
    let setup_stamp = Stamp::new("tomas", at_time(ymd(2023, 12, 15), 9 * 60));

    // drop the indexes for the bulk load; put back the same statements afterwards
    let indexes: Vec<(String, String)> = {
        let mut stmt = store.conn.prepare(
            "SELECT name, sql FROM sqlite_master WHERE type = 'index' AND sql IS NOT NULL
             AND tbl_name IN ('incidents', 'plies', 'examinations', 'mirror_readings', 'custody', 'attachments', 'audit')",
        )?;
        let rows = stmt.query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?;
        rows.collect::<Result<_, _>>()?
    };
    // the fleet statistics' copy (incident_facts) is kept by triggers on every write; the
    // bulk load drops them and fills the copy in one pass at the end, as the migration does
    let triggers: Vec<(String, String)> = {
        let mut stmt = store.conn.prepare(
            "SELECT name, sql FROM sqlite_master WHERE type = 'trigger' AND sql IS NOT NULL
             AND tbl_name = 'incidents'",
        )?;
        let rows = stmt.query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?;
        rows.collect::<Result<_, _>>()?
    };
    let mut summary = DemoSummary::default();
    let tx = store.conn.transaction()?;
    for (name, _) in &indexes {
        // names come from sqlite_master, not from a user
        tx.execute_batch(&format!("DROP INDEX \"{}\"", name.replace('"', "")))?;
    }
    for (name, _) in &triggers {
        // names come from sqlite_master, not from a user
        tx.execute_batch(&format!("DROP TRIGGER \"{}\"", name.replace('"', "")))?;
    }
    let mut chain = Chain::load(&tx)?;
    let ms = setup_stamp.at.timestamp_millis();
    let ids = &mut store.ids;

    // reference data
    let mut site_ids = Vec::new();
    for (code, name, region) in SITES {
        let s = Site {
            id: ids.uuid_v7(ms),
            code: code.into(),
            name: name.into(),
            region: region.into(),
        };
        refdata::insert_site(&tx, &mut chain, &s, &setup_stamp)?;
        site_ids.push(s.id);
    }
    let mut supplier_ids = HashMap::new();
    for (code, name) in SUPPLIERS {
        let s = Supplier {
            id: ids.uuid_v7(ms),
            code: code.into(),
            name: name.into(),
        };
        refdata::insert_supplier(&tx, &mut chain, &s, &setup_stamp)?;
        supplier_ids.insert(code, s.id);
    }
    let mut product_ids = Vec::new();
    for p in &PRODUCTS {
        let pr = Product {
            id: ids.uuid_v7(ms),
            supplier: p.supplier.into(),
            code: p.code.into(),
            name: p.name.into(),
        };
        refdata::insert_product(&tx, &mut chain, &pr, &setup_stamp)?;
        product_ids.push(pr.id);
    }
    let mut lot_ids: HashMap<(usize, String), String> = HashMap::new();
    for (pi, code, made) in &world.lots {
        let p = &PRODUCTS[*pi];
        let l = Lot {
            id: ids.uuid_v7(ms),
            supplier: p.supplier.into(),
            product: p.code.into(),
            code: code.clone(),
            made_on: Some(*made),
        };
        refdata::insert_lot(&tx, &mut chain, &l, &setup_stamp)?;
        lot_ids.insert((*pi, code.clone()), l.id);
    }
    let mut asset_ids = Vec::with_capacity(world.cars);
    let car_site = |car: usize| (car / 25) % SITES.len();
    for car in 0..world.cars {
        let a = Asset {
            id: ids.uuid_v7(ms),
            code: format!("car {}", 101 + car),
            asset_type: "rail_car".into(),
            name: format!("Tarnmoor Valley Lines car {}", 101 + car),
            site: Some(SITES[car_site(car)].0.into()),
        };
        refdata::insert_asset(&tx, &mut chain, &a, &setup_stamp)?;
        asset_ids.push(a.id);
    }
    for s in &world.slots {
        let p = &PRODUCTS[s.product];
        let e = Exposure {
            id: ids.uuid_v7(ms),
            supplier: p.supplier.into(),
            product: Some(p.code.into()),
            lot: Some(s.lot.clone()),
            site: Some(SITES[s.site].0.into()),
            installed_on: s.installed_on,
            removed_on: s.removed_on,
            panes: s.panes,
        };
        refdata::insert_exposure(&tx, &mut chain, &e, &setup_stamp)?;
        summary.exposure += 1;
    }

    // plan incidents: a slot by panes × years in the period × hazard, a cause, a date
    let windows: Vec<Option<(NaiveDate, NaiveDate)>> = world
        .slots
        .iter()
        .map(|s| {
            let a = s.installed_on.max(start);
            let b = s.removed_on.unwrap_or(end).min(end);
            (a < b).then_some((a, b))
        })
        .collect();
    let mut cum = Vec::with_capacity(world.slots.len());
    let mut acc = 0.0;
    for (s, w) in world.slots.iter().zip(&windows) {
        if let Some((a, b)) = w {
            acc += s.panes as f64 * (*b - *a).num_days() as f64 * PRODUCTS[s.product].kind.hazard();
        }
        cum.push(acc);
    }
    let hot: Vec<usize> = (0..world.slots.len())
        .filter(|&i| {
            let s = &world.slots[i];
            let p = &PRODUCTS[s.product];
            (p.supplier, p.code, s.lot.as_str()) == HOT_LOT && windows[i].is_some()
        })
        .collect();
    // a lab examines a few thousand breakages, not a million: at benchmark scale the
    // share examined falls so that about 20,000 examinations are generated at most
    let lab_share = (20_000.0 / o.incidents as f64).min(1.0);
    let mut plans = Vec::with_capacity(o.incidents as usize);
    for n in 0..o.incidents {
        let (slot, cause) = if !hot.is_empty() && rng.chance(0.03) {
            (*rng.pick(&hot), CauseKind::NickelSulfide)
        } else {
            let slot = rng.weighted(&cum);
            let cause = cause_for(&mut rng, PRODUCTS[world.slots[slot].product].temper);
            (slot, cause)
        };
        let Some((a, b)) = windows[slot] else {
            continue;
        };
        let days = (b - a).num_days().max(1) as u64;
        let mut found_on = a + Days::new(rng.below(days as usize) as u64);
        for _ in 0..8 {
            if rng.f() < season(cause, found_on) {
                break;
            }
            found_on = a + Days::new(rng.below(days as usize) as u64);
        }
        let s = &world.slots[slot];
        let car = s.cars.start + rng.below(s.cars.len().max(1));
        let life = plan_life(&mut rng, cause, found_on, lab_share);
        plans.push(Plan {
            found_on,
            order: rng.next() ^ n,
            slot,
            car,
            cause,
            life,
        });
    }
    // written in the order they were entered, so the audit chain runs forward in time
    plans.sort_by_key(|p| (p.life.entered, p.found_on, p.order));

    // write them
    let mut per_day: HashMap<NaiveDate, u32> = HashMap::new();
    let mut attachments_left = 8u32;
    let materials = fracture::materials::find("soda-lime");
    let mut bulk = Bulk::new(INCIDENT, o.seed ^ 0xB0B);
    // a demo log of a real size carries one audit row per incident, stamped by the analyst
    // who entered it when it was entered, as the interface writes them; only at benchmark
    // scale are the rows batched (one per 1,000 incidents, each listing their digests)
    let per_record = o.incidents <= PER_RECORD_AUDIT_UP_TO;
    let mut last_stamp = setup_stamp.clone();
    // The incidents are made (and their audit digests and searchable text computed) on a
    // second thread, in the same order as before; this thread writes them. The output is the
    // same as a single-threaded run: every key, draw and row comes in the same sequence.
    let store_ids = &mut store.ids;
    // batches, not single incidents: fewer wake-ups between the threads
    const BATCH: usize = 256;
    let (to_writer, from_maker) = std::sync::mpsc::sync_channel::<Vec<Box<Prepared>>>(4);
    // what the writer is done with goes back to be freed where it was made (freeing across
    // threads is dear), without its searchable text, which goes to the text thread
    let (spent, spent_back) = std::sync::mpsc::channel::<Vec<Box<Prepared>>>();
    // The text index is built on a third thread in a database of its own, in memory, made by
    // the same statement; its tables are copied in at the end (sqlite::fts_copy_index). The
    // index is the same as inserting every text here, in the same order. The texts queue up
    // without a bound, so the writer never waits for that thread, which catches up while the
    // writer builds the fleet facts and the indexes.
    let text_sql = sqlite::fts_create_sql(&tx)?;
    let (to_text, from_writer) = std::sync::mpsc::channel::<Vec<(i64, String)>>();
    let mut written = 0u64;
    std::thread::scope(|scope| -> Result<(), StoreError> {
        let texter = scope.spawn(move || -> Result<rusqlite::Connection, StoreError> {
            let aside = rusqlite::Connection::open_in_memory()?;
            aside.execute_batch(&text_sql)?;
            let atx = aside.unchecked_transaction()?;
            for batch in from_writer.iter() {
                for (seq, body) in batch {
                    sqlite::fts_insert(&atx, seq, &body)?;
                }
            }
            atx.commit()?;
            Ok(aside)
        });
        let maker = scope.spawn(|| -> Result<(), StoreError> {
            let (to_writer, spent_back) = (to_writer, spent_back);
            let mut batch = Vec::with_capacity(BATCH);
            for plan in &plans {
                let slot = &world.slots[plan.slot];
                let pdef = &PRODUCTS[slot.product];
                let n = per_day.entry(plan.found_on).or_insert(0);
                *n += 1;
                let reference = format_reference(plan.found_on, *n)?;
                let life = plan.life;
                let created = life.entered;
                let analyst = *rng.pick(&ANALYSTS);
                let stamp = Stamp::new(analyst, created);
                let ms = stamp.at.timestamp_millis();
                let mut inc = Incident::draft(plan.found_on);
                inc.id = store_ids.uuid_v7(ms);
                inc.reference = reference;
                inc.revision = 1;
                inc.created_at = stamp.at;
                inc.updated_at = stamp.at;
                inc.asset = Some(format!("car {}", 101 + plan.car));
                inc.site = Some(SITES[slot.site].0.into());
                inc.position = position(&mut rng, pdef.kind);
                if rng.chance(0.7) {
                    inc.broken_on = Some(plan.found_on - Days::new(rng.below(2) as u64));
                }
                let (how, desc) = description(&mut rng, plan.cause);
                inc.how_found = how.into();
                inc.description = desc;
                inc.reporter = (*rng.pick(&REPORTERS)).into();
                let winter = matches!(plan.found_on.month(), 11 | 12 | 1 | 2 | 3);
                inc.environment.temperature_c = Some(if plan.cause == CauseKind::Thermal {
                    (rng.range(-8.0, 5.0) * 10.0).round() / 10.0
                } else if winter {
                    (rng.range(-5.0, 10.0) * 10.0).round() / 10.0
                } else {
                    (rng.range(5.0, 26.0) * 10.0).round() / 10.0
                });
                if plan.cause == CauseKind::Thermal {
                    inc.environment.sun = "sunny afternoon, then a clear cold night".into();
                }
                inc.glass = Glass {
                    supplier: Some(pdef.supplier.into()),
                    product: Some(pdef.code.into()),
                    lot: Some(slot.lot.clone()),
                    makeup: pdef.makeup.into(),
                    plies: Vec::new(),
                    width_m: Some(if pdef.kind == Kind::Windscreen {
                        1.45
                    } else {
                        0.9
                    }),
                    height_m: Some(if pdef.kind == Kind::Windscreen {
                        0.85
                    } else {
                        0.65
                    }),
                };
                let thickness = Measured::parse(pdef.thickness, Dimension::Length)
                    .map(|m| m.si)
                    .ok();
                let plies = if pdef.makeup == "laminated" { 2 } else { 1 };
                for _ in 0..plies {
                    inc.glass.plies.push(Ply {
                        material: Some("soda_lime".into()),
                        temper: Some(pdef.temper.into()),
                        thickness_m: thickness,
                        coating: String::new(),
                        edge_finish: if pdef.temper == "annealed" {
                            "arrissed".into()
                        } else {
                            "ground".into()
                        },
                    });
                }
                let (sigma, location, origin_type) = target(&mut rng, plan.cause, pdef.temper);
                let sigma = sigma.max(8e6);
                let examined = life.examined;
                let fragmented = pdef.temper == "fully_tempered";
                inc.pattern = FracturePattern {
                    crack_count: if fragmented {
                        None
                    } else {
                        Some(1 + rng.below(4) as i64)
                    },
                    branching: Some(fragmented || sigma > 40e6),
                    fragment_count: if fragmented {
                        Some(40 + rng.below(80) as i64)
                    } else {
                        None
                    },
                    origin_location: examined.then(|| location.to_string()),
                    tension_face: if plan.cause == CauseKind::Thermal {
                        "unknown (thermal)".into()
                    } else {
                        String::new()
                    },
                };
                let received = at_time(plan.found_on + Days::new(1), life.received_min);
                if examined {
                    let mut readings = Vec::new();
                    if let Some(m) = &materials {
                        let t = thickness.unwrap_or(0.006);
                        let mut boundaries: Vec<Boundary> = Vec::new();
                        let ri = m.a_i.as_ref().map(|c| (c.value / sigma).powi(2));
                        if ri.is_some_and(|r| r < 0.8 * t || plan.cause == CauseKind::NickelSulfide) {
                            boundaries.push(Boundary::MirrorMist);
                            if rng.chance(0.6) {
                                boundaries.push(Boundary::MistHackle);
                            }
                        } else {
                            boundaries.push(Boundary::Branching);
                        }
                        for b in boundaries {
                            let Some(c) = b.constant_of(m) else { continue };
                            let r_true = (c.value / sigma).powi(2);
                            let n = if b == Boundary::Branching {
                                1 + rng.below(2)
                            } else {
                                2 + rng.below(3)
                            };
                            for _ in 0..n {
                                let r = r_true * (1.0 + 0.06 * rng.normal()).max(0.7);
                                readings.push(MirrorReading {
                                    boundary: b.key().replace('-', "_"),
                                    radius: typed_radius(&mut rng, r),
                                    magnification: Some(if r < 1e-3 {
                                        40.0
                                    } else if r < 5e-3 {
                                        20.0
                                    } else {
                                        10.0
                                    }),
                                    analyst: analyst.into(),
                                    note: String::new(),
                                });
                            }
                        }
                    }
                    let stone = rng.range(0.08e-3, 0.25e-3);
                    let flaw = (plan.cause == CauseKind::NickelSulfide).then(|| FlawMeasurement {
                        depth: Some(typed_radius(&mut rng, stone)),
                        width: None,
                        shape: "embedded penny".into(),
                    });
                    let mut exam = Examination {
                        id: store_ids.uuid_v7(ms),
                        examined_on: Some(plan.found_on + Days::new(life.exam_days)),
                        analyst: analyst.into(),
                        origin_type: Some(origin_type.into()),
                        material: None,
                        readings,
                        flaw,
                        result: None,
                        notes: if plan.cause == CauseKind::NickelSulfide {
                            "Stone at the origin, about the size of the measured flaw; send for composition check.".into()
                        } else {
                            String::new()
                        },
                    };
                    let computed_at = at_time(exam.examined_on.unwrap_or(plan.found_on), 15 * 60);
                    exam.result = analysis::compute(&inc, &exam, computed_at).ok();
                    inc.examinations.push(exam);
                    summary.examinations += 1;
                    inc.custody.push(CustodyEntry {
                        id: store_ids.uuid_v7(ms),
                        at: received,
                        action: "received".into(),
                        who: (*rng.pick(&REPORTERS)).into(),
                        location: "lab intake".into(),
                        note: String::new(),
                    });
                    inc.custody.push(CustodyEntry {
                        id: store_ids.uuid_v7(ms),
                        at: received + chrono::Duration::minutes(20),
                        action: "stored".into(),
                        who: analyst.into(),
                        location: format!(
                            "shelf {}-{}",
                            ["A", "B", "C"][rng.below(3)],
                            1 + rng.below(6)
                        ),
                        note: String::new(),
                    });
                }
                if life.assigned {
                    let confidence = if examined {
                        if rng.chance(0.6) {
                            "confirmed"
                        } else {
                            "probable"
                        }
                    } else {
                        "possible"
                    };
                    let responsibility = match plan.cause {
                        CauseKind::NickelSulfide | CauseKind::EdgeDamage => "supplier",
                        CauseKind::HardContact | CauseKind::Handling => "installer",
                        CauseKind::Vandalism | CauseKind::Impact => "third_party",
                        _ => "undetermined",
                    };
                    let mut factors = Vec::new();
                    if plan.cause == CauseKind::Thermal {
                        factors.push("edge shaded by the frame rubber".to_string());
                    }
                    if plan.cause == CauseKind::NickelSulfide {
                        factors.push("no heat-soak test record for the lot".to_string());
                    }
                    inc.cause = Some(Cause {
                        category: plan.cause.code().into(),
                        factors,
                        confidence: confidence.into(),
                        responsibility: responsibility.into(),
                        note: String::new(),
                    });
                    inc.status = if plan.cause == CauseKind::NickelSulfide {
                        "claim_open".into()
                    } else if life.closed {
                        "closed".into()
                    } else {
                        "cause_assigned".into()
                    };
                    if examined && inc.status == "closed" {
                        inc.custody.push(CustodyEntry {
                            id: store_ids.uuid_v7(ms),
                            at: received + chrono::Duration::days(life.dispose_days),
                            action: "disposed".into(),
                            who: analyst.into(),
                            location: "glass recycling skip".into(),
                            note: "case closed".into(),
                        });
                    }
                } else {
                    inc.status = if examined {
                        "examining".into()
                    } else if rng.chance(0.5) {
                        "received".into()
                    } else {
                        "reported".into()
                    };
                }
                if examined
                    && attachments_left > 0
                    && matches!(
                        plan.cause,
                        CauseKind::NickelSulfide | CauseKind::Thermal | CauseKind::Impact
                    )
                {
                    let bytes = tiny_png(attachments_left as u8);
                    let hash = files::put_bytes(&files_dir, &bytes)?;
                    inc.attachments.push(Attachment {
                        id: store_ids.uuid_v7(ms),
                        sha256: hash,
                        file_name: format!("origin-{}.png", inc.reference.to_ascii_lowercase()),
                        media_type: "image/png".into(),
                        size_bytes: bytes.len() as i64,
                        caption: "origin under the stereo microscope".into(),
                        // photographed at the examination, before the record was entered
                        added_at: at_time(plan.found_on + Days::new(life.exam_days), 15 * 60 + 5),
                    });
                    attachments_left -= 1;
                    summary.attachments += 1;
                }
                summary.custody += inc.custody.len() as u64;
                let pid = &product_ids[slot.product];
                let refs = Refs {
                    asset: Some(asset_ids[plan.car].clone()),
                    site: Some(site_ids[slot.site].clone()),
                    supplier: supplier_ids.get(pdef.supplier).cloned(),
                    product: Some(pid.clone()),
                    lot: lot_ids.get(&(slot.product, slot.lot.clone())).cloned(),
                };
                batch.push(Box::new(prepare(inc, refs, stamp)?));
                if batch.len() == BATCH {
                    drop(spent_back.try_iter().collect::<Vec<_>>());
                    let full = std::mem::replace(&mut batch, Vec::with_capacity(BATCH));
                    if to_writer.send(full).is_err() {
                        return Ok(()); // the writer stopped on an error: it reports it
                    }
                }
            }
            if !batch.is_empty() {
                let _ = to_writer.send(batch); // a stopped writer reports its own error
            }
            Ok(())
        });
        let mut write = || -> Result<(), StoreError> {
            for mut prepared in from_maker.iter() {
                let mut texts = Vec::with_capacity(prepared.len());
                for p in prepared.iter_mut() {
                    let batch = (!per_record).then_some(&mut bulk);
                    let seq = insert_prepared(&tx, &mut chain, p, batch)?;
                    written += 1;
                    texts.push((seq, p.take_body()));
                }
                if let Some(p) = prepared.last() {
                    last_stamp = p.stamp.clone();
                }
                // a stopped maker or text thread reports its own error
                let _ = spent.send(prepared);
                if to_text.send(texts).is_err() {
                    break;
                }
            }
            Ok(())
        };
        let wrote = write();
        drop(from_maker); // lets a maker blocked on a full channel finish
        drop(to_text); // the text thread finishes its index
        let made = maker
            .join()
            .map_err(|_| StoreError::Database("the demo generator thread panicked".into()))?;
        wrote.and(made)?;
        bulk.flush(&tx, &mut chain, &last_stamp)?;
        chain.finish(&tx)?;
        super::incidents::fill_fleet_facts(&tx)?;
        for (_, sql) in &triggers {
            tx.execute_batch(sql)?;
        }
        for (_, sql) in &indexes {
            tx.execute_batch(sql)?;
        }
        let text_index = texter
            .join()
            .map_err(|_| StoreError::Database("the demo text-index thread panicked".into()))??;
        sqlite::fts_copy_index(&text_index, &tx)
    })?;
    summary.incidents += written;
    tx.commit()?;
    // a fresh connection: this one may hold the text index's layout from before the copy
    drop(store);
    let store = Store::open(tmp)?;
    store
        .conn
        // ANALYZE reads every page once: through SQLite's cache, not the read map, which
        // would count the whole file in this process's resident memory
        .execute_batch(
            "PRAGMA mmap_size = 0; PRAGMA journal_mode = DELETE; ANALYZE; PRAGMA optimize;",
        )?;
    // the file's own settings (WAL); the read map set here is this connection's only
    sqlite::set_file_pragmas(&store.conn)?;
    Ok(summary)
}

/// A demo database of `incidents` made from `seed` in a new temporary folder (tests); the
/// folder lives as long as the returned guard.
#[cfg(test)]
pub(crate) fn temp_demo(incidents: u64, seed: u64) -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().expect("a temporary folder");
    let path = dir.path().join("d.db");
    generate(&path, &DemoOptions { incidents, seed }).expect("the demo is written");
    (dir, path)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every row of FTS5's own tables of the text index, in order.
    fn text_index_rows(conn: &rusqlite::Connection) -> Vec<(String, Vec<rusqlite::types::Value>)> {
        let names: Vec<String> = sqlite::fts_shadow_tables(conn)
            .unwrap()
            .into_iter()
            .map(|(name, _)| name)
            .collect();
        assert!(names.len() >= 3, "{names:?}");
        let mut out = Vec::new();
        for n in names {
            let mut stmt = conn.prepare(&format!("SELECT * FROM \"{n}\"")).unwrap();
            let cols = stmt.column_count();
            let mut rows = stmt.query([]).unwrap();
            while let Some(r) = rows.next().unwrap() {
                let v = (0..cols).map(|i| r.get(i).unwrap()).collect();
                out.push((n.clone(), v));
            }
        }
        out
    }

    /// The demo builds its text index on another thread and copies FTS5's tables in: the
    /// result must be the very index that inserting each incident's text here gives.
    #[test]
    fn the_text_index_built_aside_is_the_one_built_in_place() {
        let (_dir, db) = temp_demo(600, 7);
        let demo = rusqlite::Connection::open(&db).unwrap();
        let in_place = rusqlite::Connection::open_in_memory().unwrap();
        in_place
            .execute_batch(&sqlite::fts_create_sql(&demo).unwrap())
            .unwrap();
        // one transaction, as the demo writes it
        in_place.execute_batch("BEGIN").unwrap();
        let mut n = 0;
        super::super::incidents::for_each_incident(&demo, |inc, _| {
            let seq: i64 = demo
                .query_row("SELECT seq FROM incidents WHERE id = ?1", [&inc.id], |r| {
                    r.get(0)
                })
                .unwrap();
            let body = super::super::incidents::search_body(&inc);
            n += 1;
            sqlite::fts_insert(&in_place, seq, &body)
        })
        .unwrap();
        in_place.execute_batch("COMMIT").unwrap();
        assert_eq!(n, 600);
        let (a, b) = (text_index_rows(&demo), text_index_rows(&in_place));
        assert!(a.len() > 600, "{}", a.len());
        let first = a.iter().zip(&b).position(|(x, y)| x != y);
        assert!(
            a == b,
            "the demo's text index differs from one built in place ({} against {} rows; first difference at {first:?}: {:?})",
            a.len(),
            b.len(),
            first.map(|i| (&a[i].0, &b[i].0))
        );
        // and FTS5 finds it whole
        demo.execute_batch("INSERT INTO incident_text (incident_text) VALUES ('integrity-check')")
            .unwrap();
    }
}
