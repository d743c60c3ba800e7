//! One planned incident made into a record: what was found, the glass, the pattern, the
//! examination with its mirror readings and computed result, custody, the cause, and now
//! and then a photograph. The draws come in one fixed order, so a seed gives one demo.

use std::collections::HashMap;

use chrono::{Datelike, Days, NaiveDate};

use super::png::tiny_png;
use super::rng::Rng;
use super::story::{
    description, position, target, typed_radius, CauseKind, Plan, ANALYSTS, REPORTERS,
};
use super::world::{at_time, Kind, ProductDef, Slot, World, WorldKeys, PRODUCTS, SITES};
use super::DemoSummary;
use crate::store::bulk::{format_reference, AttachmentFolder, NewIncident, Refs};
use crate::store::{
    analysis, Attachment, Cause, CustodyEntry, Examination, FlawMeasurement, FracturePattern,
    Glass, IdGen, Incident, MaterialBook, Measured, MirrorReading, Ply, Stamp, StoreError,
};
use shardlog_core::fracture::materials::Material;
use shardlog_core::fracture::{self, Boundary};
use shardlog_core::units::Dimension;

/// The incident being made: its plan, the analyst who enters it, and the millisecond its
/// keys carry.
struct Case<'p> {
    plan: &'p Plan,
    analyst: &'static str,
    ms: i64,
}

/// Makes the planned incidents one by one (on the bulk load's maker thread).
pub(super) struct Maker<'a> {
    world: &'a World,
    keys: &'a WorldKeys,
    rng: &'a mut Rng,
    summary: &'a mut DemoSummary,
    attachments: AttachmentFolder,
    /// Incidents found per day so far (their references count up).
    per_day: HashMap<NaiveDate, u32>,
    /// Photographs still to attach.
    attachments_left: u32,
    materials: Option<Material>,
    /// The bench's code, carried by the references.
    pub(super) bench: Option<String>,
}

impl<'a> Maker<'a> {
    pub(super) fn new(
        world: &'a World,
        keys: &'a WorldKeys,
        rng: &'a mut Rng,
        summary: &'a mut DemoSummary,
        attachments: AttachmentFolder,
    ) -> Maker<'a> {
        Maker {
            world,
            keys,
            rng,
            summary,
            attachments,
            per_day: HashMap::new(),
            attachments_left: 8,
            materials: fracture::materials::find("soda-lime"),
            bench: None,
        }
    }

    /// The record of one planned incident, with the keys it refers to and its entry stamp.
    pub(super) fn make(&mut self, plan: &Plan, ids: &mut IdGen) -> Result<NewIncident, StoreError> {
        let slot = &self.world.slots[plan.slot];
        let pdef = &PRODUCTS[slot.product];
        let n = self.per_day.entry(plan.found_on).or_insert(0);
        *n += 1;
        let reference = format_reference(self.bench.as_deref(), plan.found_on, *n)?;
        let analyst = *self.rng.pick(&ANALYSTS);
        let stamp = Stamp::new(analyst, plan.life.entered);
        let ms = stamp.at.timestamp_millis();
        let mut inc = Incident::draft(plan.found_on);
        inc.id = ids.uuid_v7(ms);
        inc.reference = reference;
        inc.revision = 1;
        inc.created_at = stamp.at;
        inc.updated_at = stamp.at;
        inc.asset = Some(format!("car {}", 101 + plan.car));
        inc.site = Some(SITES[slot.site].0.into());
        self.describe(&mut inc, plan, pdef);
        inc.glass = glass(pdef, slot);
        let thickness = inc.glass.plies.first().and_then(|p| p.thickness_m);
        let (sigma, location, origin_type) = target(self.rng, plan.cause, pdef.temper);
        let sigma = sigma.max(8e6);
        inc.pattern = self.pattern(plan, pdef, sigma, location);
        if plan.life.examined {
            let case = Case { plan, analyst, ms };
            let exam = self.examination(&case, sigma, thickness, origin_type, ids);
            self.examine(&mut inc, exam, plan, analyst, ids, ms);
        }
        self.assign_cause(&mut inc, plan, analyst, ids, ms);
        self.attach_photograph(&mut inc, plan, ids, ms)?;
        self.summary.custody += inc.custody.len() as u64;
        let keys = self.keys;
        let refs = Refs {
            asset: Some(keys.asset_ids[plan.car].clone()),
            site: Some(keys.site_ids[slot.site].clone()),
            supplier: keys.supplier_ids.get(pdef.supplier).cloned(),
            product: Some(keys.product_ids[slot.product].clone()),
            lot: keys.lot_ids.get(&(slot.product, slot.lot.clone())).cloned(),
        };
        Ok(NewIncident {
            incident: inc,
            refs,
            stamp,
            rendered: None,
        })
    }

    /// Where and how it was found, what was seen, the weather.
    fn describe(&mut self, inc: &mut Incident, plan: &Plan, pdef: &ProductDef) {
        let rng = &mut *self.rng;
        inc.position = position(rng, pdef.kind);
        if rng.chance(0.7) {
            inc.broken_on = Some(plan.found_on - Days::new(rng.below(2) as u64));
        }
        let (how, desc) = description(rng, plan.cause);
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
    }

    fn pattern(
        &mut self,
        plan: &Plan,
        pdef: &ProductDef,
        sigma: f64,
        location: &str,
    ) -> FracturePattern {
        let fragmented = pdef.temper == "fully_tempered";
        FracturePattern {
            crack_count: if fragmented {
                None
            } else {
                Some(1 + self.rng.below(4) as i64)
            },
            branching: Some(fragmented || sigma > 40e6),
            fragment_count: if fragmented {
                Some(40 + self.rng.below(80) as i64)
            } else {
                None
            },
            origin_location: plan.life.examined.then(|| location.to_string()),
            tension_face: if plan.cause == CauseKind::Thermal {
                "unknown (thermal)".into()
            } else {
                String::new()
            },
        }
    }

    /// Mirror readings drawn from the target stress: R = (A/σ)² plus scatter.
    fn readings(
        &mut self,
        plan: &Plan,
        analyst: &str,
        sigma: f64,
        thickness: Option<f64>,
    ) -> Vec<MirrorReading> {
        let mut readings = Vec::new();
        let Some(m) = &self.materials else {
            return readings;
        };
        let rng = &mut *self.rng;
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
                    radius: typed_radius(rng, r),
                    magnification: Some(if r < 1e-3 {
                        40.0
                    } else if r < 5e-3 {
                        20.0
                    } else {
                        10.0
                    }),
                    analyst: analyst.into(),
                    note: String::new(),
                    viewing: None,
                });
            }
        }
        readings
    }

    /// The lab's examination, its result computed by the fracture core.
    fn examination(
        &mut self,
        case: &Case<'_>,
        sigma: f64,
        thickness: Option<f64>,
        origin_type: &str,
        ids: &mut IdGen,
    ) -> Examination {
        let Case { plan, analyst, ms } = *case;
        let readings = self.readings(plan, analyst, sigma, thickness);
        let stone = self.rng.range(0.08e-3, 0.25e-3);
        let flaw = (plan.cause == CauseKind::NickelSulfide).then(|| FlawMeasurement {
            depth: Some(typed_radius(self.rng, stone)),
            width: None,
            shape: "embedded penny".into(),
        });
        Examination {
            id: ids.uuid_v7(ms),
            examined_on: Some(plan.found_on + Days::new(plan.life.exam_days)),
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
        }
    }

    /// The examination with its computed result goes on the record, and the specimen's
    /// receipt and storage in the lab.
    fn examine(
        &mut self,
        inc: &mut Incident,
        mut exam: Examination,
        plan: &Plan,
        analyst: &str,
        ids: &mut IdGen,
        ms: i64,
    ) {
        let computed_at = at_time(exam.examined_on.unwrap_or(plan.found_on), 15 * 60);
        exam.result =
            analysis::compute(inc, &exam, computed_at, &MaterialBook::library_only()).ok();
        inc.examinations.push(exam);
        self.summary.examinations += 1;
        let received = at_time(plan.found_on + Days::new(1), plan.life.received_min);
        inc.custody.push(CustodyEntry {
            id: ids.uuid_v7(ms),
            at: received,
            action: "received".into(),
            who: (*self.rng.pick(&REPORTERS)).into(),
            location: "lab intake".into(),
            note: String::new(),
        });
        inc.custody.push(CustodyEntry {
            id: ids.uuid_v7(ms),
            at: received + chrono::Duration::minutes(20),
            action: "stored".into(),
            who: analyst.into(),
            location: format!(
                "shelf {}-{}",
                ["A", "B", "C"][self.rng.below(3)],
                1 + self.rng.below(6)
            ),
            note: String::new(),
        });
    }

    /// The cause and status; a closed examined case ends with the specimen disposed of.
    fn assign_cause(
        &mut self,
        inc: &mut Incident,
        plan: &Plan,
        analyst: &str,
        ids: &mut IdGen,
        ms: i64,
    ) {
        let life = plan.life;
        let examined = life.examined;
        if !life.assigned {
            inc.status = if examined {
                "examining".into()
            } else if self.rng.chance(0.5) {
                "received".into()
            } else {
                "reported".into()
            };
            return;
        }
        let confidence = if examined {
            if self.rng.chance(0.6) {
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
            let received = at_time(plan.found_on + Days::new(1), life.received_min);
            inc.custody.push(CustodyEntry {
                id: ids.uuid_v7(ms),
                at: received + chrono::Duration::days(life.dispose_days),
                action: "disposed".into(),
                who: analyst.into(),
                location: "glass recycling skip".into(),
                note: "case closed".into(),
            });
        }
    }

    /// The first few examined impacts, thermal and nickel sulfide breaks get a photograph
    /// of the origin.
    fn attach_photograph(
        &mut self,
        inc: &mut Incident,
        plan: &Plan,
        ids: &mut IdGen,
        ms: i64,
    ) -> Result<(), StoreError> {
        let wanted = plan.life.examined
            && self.attachments_left > 0
            && matches!(
                plan.cause,
                CauseKind::NickelSulfide | CauseKind::Thermal | CauseKind::Impact
            );
        if !wanted {
            return Ok(());
        }
        let bytes = tiny_png(self.attachments_left as u8);
        let hash = self.attachments.put(&bytes)?;
        inc.attachments.push(Attachment {
            id: ids.uuid_v7(ms),
            sha256: hash,
            file_name: format!("origin-{}.png", inc.reference.to_ascii_lowercase()),
            media_type: "image/png".into(),
            size_bytes: bytes.len() as i64,
            caption: "origin under the stereo microscope".into(),
            // photographed at the examination, before the record was entered
            added_at: at_time(plan.found_on + Days::new(plan.life.exam_days), 15 * 60 + 5),
        });
        self.attachments_left -= 1;
        self.summary.attachments += 1;
        Ok(())
    }
}

/// The glass of a pane of this product from this slot's lot.
fn glass(pdef: &ProductDef, slot: &Slot) -> Glass {
    let mut glass = Glass {
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
        glass.plies.push(Ply {
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
    glass
}
