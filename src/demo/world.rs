//! The invented world of the demo: the operator's depots, the suppliers and their products
//! and lots, the cars, and which lot is fitted where (the exposure). Every name is invented.

use std::collections::HashMap;

use chrono::{DateTime, Days, NaiveDate, TimeZone, Utc};

use super::rng::Rng;
use super::DemoSummary;
use crate::store::bulk::BulkLoad;
use crate::store::{Asset, Exposure, Lot, Product, Site, Stamp, StoreError, Supplier};

pub(super) const SITES: [(&str, &str, &str); 4] = [
    ("TVL-CEN", "Tarnmoor Central depot", "north"),
    ("TVL-ASH", "Ashgrove depot", "west"),
    ("TVL-PEL", "Pellbridge yard", "south"),
    ("TVL-NOR", "Norwick sidings", "east"),
];

pub(super) const SUPPLIERS: [(&str, &str); 4] = [
    ("ORVALE", "Orvale Glassworks"),
    ("BRELLIN", "Brellin Safety Glass"),
    ("KESTREL", "Kestrel Glazing"),
    ("MARROW", "Marrowfield Float Products"),
];

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
pub(super) enum Kind {
    Side,
    Door,
    Partition,
    Windscreen,
}

impl Kind {
    pub(super) const ALL: [Kind; 4] = [Kind::Side, Kind::Door, Kind::Partition, Kind::Windscreen];
    /// Panes of this kind per car (windscreens: cab cars only, about one car in four).
    pub(super) fn panes_per_car(self) -> f64 {
        match self {
            Kind::Side => 16.0,
            Kind::Door => 4.0,
            Kind::Partition => 2.0,
            Kind::Windscreen => 0.25,
        }
    }
    /// Relative breakage hazard per pane-year.
    pub(super) fn hazard(self) -> f64 {
        match self {
            Kind::Side => 1.0,
            Kind::Door => 1.3,
            Kind::Partition => 0.6,
            Kind::Windscreen => 3.0,
        }
    }
}

pub(super) struct ProductDef {
    pub(super) supplier: &'static str,
    pub(super) code: &'static str,
    pub(super) name: &'static str,
    pub(super) kind: Kind,
    pub(super) makeup: &'static str,
    pub(super) temper: &'static str,
    pub(super) thickness: &'static str,
    pub(super) lot_prefix: &'static str,
}

pub(super) const PRODUCTS: [ProductDef; 8] = [
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
pub(super) const LOT_MONTHS: [(i32, u32); 6] = [
    (2022, 1),
    (2022, 7),
    (2023, 3),
    (2023, 11),
    (2024, 8),
    (2025, 4),
];

/// The lot with nickel sulfide stones.
pub(super) const HOT_LOT: (&str, &str, &str) = ("BRELLIN", "SW6-FT", "BS-2207");

pub(super) fn ymd(y: i32, m: u32, d: u32) -> NaiveDate {
    NaiveDate::from_ymd_opt(y, m, d).unwrap_or_default()
}

pub(super) fn period() -> (NaiveDate, NaiveDate) {
    (ymd(2024, 1, 1), ymd(2026, 10, 31))
}

pub(super) fn lot_code(prefix: &str, (y, m): (i32, u32)) -> String {
    format!("{prefix}-{:02}{m:02}", y % 100)
}

/// Panes of one product lot fitted to one batch of cars at one site.
#[derive(Clone)]
pub(super) struct Slot {
    pub(super) product: usize,
    pub(super) lot: String,
    pub(super) site: usize,
    pub(super) cars: std::ops::Range<usize>,
    pub(super) installed_on: NaiveDate,
    pub(super) removed_on: Option<NaiveDate>,
    pub(super) panes: i64,
}

pub(super) fn at_time(d: NaiveDate, minutes: u32) -> DateTime<Utc> {
    let base = d.and_hms_opt(0, 0, 0).unwrap_or_default();
    Utc.from_utc_datetime(&base) + chrono::Duration::minutes(minutes as i64)
}

pub(super) struct World {
    pub(super) cars: usize,
    pub(super) slots: Vec<Slot>,
    pub(super) lots: Vec<(usize, String, NaiveDate)>,
}

pub(super) fn build_world(rng: &mut Rng, incidents: u64) -> World {
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

/// Keys of the world's records once written, for the incidents that refer to them.
pub(super) struct WorldKeys {
    pub(super) site_ids: Vec<String>,
    pub(super) supplier_ids: HashMap<&'static str, String>,
    pub(super) product_ids: Vec<String>,
    pub(super) lot_ids: HashMap<(usize, String), String>,
    pub(super) asset_ids: Vec<String>,
}

impl World {
    /// Write the reference data (sites, suppliers, products, lots, cars and the exposure),
    /// all entered at `stamp`.
    pub(super) fn write(
        &self,
        load: &mut BulkLoad<'_>,
        stamp: &Stamp,
        summary: &mut DemoSummary,
    ) -> Result<WorldKeys, StoreError> {
        let ms = stamp.at.timestamp_millis();
        let mut site_ids = Vec::new();
        for (code, name, region) in SITES {
            let s = Site {
                id: load.new_id(ms),
                code: code.into(),
                name: name.into(),
                region: region.into(),
            };
            load.add_site(&s, stamp)?;
            site_ids.push(s.id);
        }
        let mut supplier_ids = HashMap::new();
        for (code, name) in SUPPLIERS {
            let s = Supplier {
                id: load.new_id(ms),
                code: code.into(),
                name: name.into(),
            };
            load.add_supplier(&s, stamp)?;
            supplier_ids.insert(code, s.id);
        }
        let mut product_ids = Vec::new();
        for p in &PRODUCTS {
            let pr = Product {
                id: load.new_id(ms),
                supplier: p.supplier.into(),
                code: p.code.into(),
                name: p.name.into(),
            };
            load.add_product(&pr, stamp)?;
            product_ids.push(pr.id);
        }
        let mut lot_ids: HashMap<(usize, String), String> = HashMap::new();
        for (pi, code, made) in &self.lots {
            let p = &PRODUCTS[*pi];
            let l = Lot {
                id: load.new_id(ms),
                supplier: p.supplier.into(),
                product: p.code.into(),
                code: code.clone(),
                made_on: Some(*made),
                heat_soak: None,
            };
            load.add_lot(&l, stamp)?;
            lot_ids.insert((*pi, code.clone()), l.id);
        }
        let mut asset_ids = Vec::with_capacity(self.cars);
        let car_site = |car: usize| (car / 25) % SITES.len();
        for car in 0..self.cars {
            let a = Asset {
                id: load.new_id(ms),
                code: format!("car {}", 101 + car),
                asset_type: "rail_car".into(),
                name: format!("Tarnmoor Valley Lines car {}", 101 + car),
                site: Some(SITES[car_site(car)].0.into()),
            };
            load.add_asset(&a, stamp)?;
            asset_ids.push(a.id);
        }
        for s in &self.slots {
            let p = &PRODUCTS[s.product];
            let e = Exposure {
                id: load.new_id(ms),
                supplier: p.supplier.into(),
                product: Some(p.code.into()),
                lot: Some(s.lot.clone()),
                site: Some(SITES[s.site].0.into()),
                installed_on: s.installed_on,
                removed_on: s.removed_on,
                panes: s.panes,
            };
            load.add_exposure(&e, stamp)?;
            summary.exposure += 1;
        }
        Ok(WorldKeys {
            site_ids,
            supplier_ids,
            product_ids,
            lot_ids,
            asset_ids,
        })
    }
}
