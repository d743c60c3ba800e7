//! The story the demo's data tells: which cause breaks which pane, when, at what stress,
//! what the analysts find and write, and when each record is entered.

use chrono::{DateTime, Datelike, Days, NaiveDate, Utc};

use super::rng::Rng;
use super::world::{at_time, period, ymd, Kind, World, HOT_LOT, PRODUCTS};
use crate::store::Measured;
use shardlog_core::units::Dimension;

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
pub(super) enum CauseKind {
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
    pub(super) fn code(self) -> &'static str {
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
pub(super) struct Plan {
    pub(super) found_on: NaiveDate,
    pub(super) order: u64,
    pub(super) slot: usize,
    pub(super) car: usize,
    pub(super) cause: CauseKind,
    pub(super) life: Life,
}

/// What happens to a breakage after it is found, decided before it is written so that the
/// record can be entered (and its audit row stamped) after the last event it describes:
/// no record carries a custody entry, examination or attachment dated after its own entry.
#[derive(Clone, Copy)]
pub(super) struct Life {
    /// Sent to the lab and examined.
    pub(super) examined: bool,
    /// Minutes after midnight of the day after finding when the lab received the specimen.
    pub(super) received_min: u32,
    /// Days after finding the examination was made (1..=6).
    pub(super) exam_days: u64,
    /// A cause was assigned (always when examined).
    pub(super) assigned: bool,
    /// The case was closed (an examined specimen is then disposed of).
    pub(super) closed: bool,
    /// Days after receipt an examined specimen was disposed of.
    pub(super) dispose_days: i64,
    /// When the record was entered into the log: after its last event.
    pub(super) entered: DateTime<Utc>,
}

/// The moment the demo log is a snapshot of: nothing in it happens later.
pub(super) fn snapshot() -> DateTime<Utc> {
    at_time(ymd(2026, 11, 30), 17 * 60)
}

/// Share of incidents of a cause that are sent to the lab (before the benchmark-scale cap).
pub(super) fn lab_rate(cause: CauseKind) -> f64 {
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

pub(super) fn plan_life(
    rng: &mut Rng,
    cause: CauseKind,
    found_on: NaiveDate,
    lab_share: f64,
) -> Life {
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

pub(super) fn cause_for(rng: &mut Rng, temper: &str) -> CauseKind {
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
pub(super) fn season(cause: CauseKind, d: NaiveDate) -> f64 {
    match (cause, d.month()) {
        (CauseKind::Thermal, 3 | 11) => 1.0,
        (CauseKind::Thermal, 2 | 4 | 10 | 12) => 0.6,
        (CauseKind::Thermal, _) => 0.2,
        (CauseKind::Vandalism, 6..=8) => 1.0,
        (CauseKind::Vandalism, _) => 0.7,
        _ => 1.0,
    }
}

/// Type a radius the way an analyst would: mm with two decimals, µm for small ones,
/// one decimal for long branching distances.
pub(super) fn typed_radius(rng: &mut Rng, r_m: f64) -> Measured {
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

pub(super) fn position(rng: &mut Rng, kind: Kind) -> String {
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
pub(super) fn target(
    rng: &mut Rng,
    cause: CauseKind,
    temper: &str,
) -> (f64, &'static str, &'static str) {
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

pub(super) fn description(rng: &mut Rng, cause: CauseKind) -> (&'static str, String) {
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

pub(super) const ANALYSTS: [&str; 3] = ["mira", "jules", "anouk"];
pub(super) const REPORTERS: [&str; 4] = [
    "depot staff",
    "driver",
    "cleaning crew",
    "night shift fitter",
];

/// The incidents of the demo, planned: a slot by panes × years in the period × hazard, a
/// cause, a date, and what happens after; in the order they were entered.
pub(super) fn plan_incidents(rng: &mut Rng, world: &World, incidents: u64) -> Vec<Plan> {
    let (start, end) = period();
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
    let lab_share = (20_000.0 / incidents as f64).min(1.0);
    let mut plans = Vec::with_capacity(incidents as usize);
    for n in 0..incidents {
        let (slot, cause) = if !hot.is_empty() && rng.chance(0.03) {
            (*rng.pick(&hot), CauseKind::NickelSulfide)
        } else {
            let slot = rng.weighted(&cum);
            let cause = cause_for(rng, PRODUCTS[world.slots[slot].product].temper);
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
        let life = plan_life(rng, cause, found_on, lab_share);
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
    plans
}
