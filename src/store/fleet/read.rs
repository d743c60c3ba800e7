//! The fleet database as fleet users read it: the same answers as a bench file gives for
//! the same records ([`RecordSource`]), from the tables schema/fleet/0005_read.sql keeps on
//! ingest (the log and the statistics from `fleet_facts`, text search from `fleet_search`)
//! and the pushed images themselves (one incident, reference data). The session is
//! read-only: nothing a fleet user does writes to the fleet.

use std::cell::RefCell;
use std::collections::{BTreeMap, HashMap};
use std::rc::Rc;

use postgres::types::ToSql;
use postgres::Client;

use super::read_need::Need;
use super::{Fleet, FleetError};
use crate::store::canon;
use crate::store::model::*;
use crate::store::read::{RecordSource, StatsInput};
use crate::store::{OwnMaterial, StoreError};
use shardlog_core::fracture::fragmentation::FragmentationMinimum;

/// A read-only view of the fleet database, of every bench or of one.
pub struct FleetReader {
    pub(super) client: RefCell<Client>,
    shown: String,
    /// Only this bench's incidents and reference data.
    pub(super) scope: Option<String>,
    /// The reference data, read once (as much of it as was needed).
    refdata: RefCell<Option<(Need, Rc<RefData>)>>,
    /// The own materials, read once when needed.
    pub(super) materials: RefCell<Option<Rc<FleetMaterials>>>,
    /// Inside a report's read snapshot (one read-only transaction).
    pub(super) in_snapshot: std::cell::Cell<bool>,
    /// The log's statements, prepared once on this connection (read_page.rs).
    pub(super) statements: RefCell<HashMap<String, postgres::Statement>>,
    /// Told how far a long read (a dispute bundle) has come.
    pub(super) progress: crate::store::progress::ProgressSlot,
}

/// Every revision of every own material the fleet witnessed (current ones first, by bench
/// code), and the current revisions alone (read by `read_materials`).
#[derive(Default)]
pub(super) struct FleetMaterials {
    pub(super) revisions: Vec<OwnMaterial>,
    pub(super) current: Vec<OwnMaterial>,
}

/// The benches' reference data, one entry per code (the first bench in code order gives
/// an entry several benches hold).
#[derive(Default)]
pub(super) struct RefData {
    lookups: Vec<LookupEntry>,
    sites: Vec<Site>,
    suppliers: Vec<Supplier>,
    products: Vec<Product>,
    pub(super) lots: Vec<Lot>,
    pub(super) exposure: Vec<Exposure>,
    /// exposure id -> the bench that entered it
    pub(super) exposure_bench: HashMap<String, String>,
    pub(super) assets: Vec<Asset>,
    /// The fragmentation table (audited as lookup entries keyed `fragmentation_minimum/…`).
    fragmentation: Vec<FragmentationMinimum>,
    /// (bench, asset code) -> asset type
    asset_types: HashMap<(String, String), String>,
}

fn store_error(e: FleetError) -> StoreError {
    match e {
        FleetError::Unreachable(m) | FleetError::Usage(m) | FleetError::Bench(m) => {
            StoreError::Open {
                path: "the fleet database".into(),
                message: m,
            }
        }
        other => StoreError::Database(other.to_string()),
    }
}

pub(super) fn pg(e: postgres::Error) -> StoreError {
    store_error(FleetError::from(e))
}

/// A value bound to a statement.
pub(super) enum Bound {
    Text(String),
    Real(f64),
    Int(i64),
}

impl Bound {
    fn as_sql(&self) -> &(dyn ToSql + Sync) {
        match self {
            Bound::Text(s) => s,
            Bound::Real(x) => x,
            Bound::Int(n) => n,
        }
    }
}

pub(super) fn refs(args: &[Bound]) -> Vec<&(dyn ToSql + Sync)> {
    args.iter().map(Bound::as_sql).collect()
}

impl FleetReader {
    /// Connect to the fleet at `url` in a read-only session; `scope`: one bench's records.
    pub fn open(url: &str, scope: Option<&str>) -> Result<FleetReader, StoreError> {
        let mut fleet = Fleet::connect(url).map_err(store_error)?;
        fleet.check_schema().map_err(store_error)?;
        fleet
            .client
            .batch_execute("SET default_transaction_read_only = on")
            .map_err(pg)?;
        let scope = match scope {
            None => None,
            Some(code) => {
                let code = crate::store::check_bench_code(code)
                    .map_err(|m| StoreError::invalid("--bench", m))?;
                let known: bool = fleet
                    .client
                    .query_one(
                        "SELECT EXISTS (SELECT 1 FROM fleet_benches WHERE code = $1)",
                        &[&code],
                    )
                    .map_err(pg)?
                    .get(0);
                if !known {
                    let benches: Vec<String> = fleet
                        .client
                        .query("SELECT code FROM fleet_benches ORDER BY code", &[])
                        .map_err(pg)?
                        .iter()
                        .map(|r| r.get(0))
                        .collect();
                    return Err(StoreError::invalid(
                        "--bench",
                        format!(
                            "no bench {code} in the fleet database; its benches: {}",
                            if benches.is_empty() {
                                "none yet".to_string()
                            } else {
                                benches.join(", ")
                            }
                        ),
                    ));
                }
                Some(code)
            }
        };
        Ok(FleetReader {
            shown: format!("fleet {}", fleet.shown),
            client: RefCell::new(fleet.client),
            scope,
            refdata: RefCell::new(None),
            materials: RefCell::new(None),
            in_snapshot: std::cell::Cell::new(false),
            statements: RefCell::new(HashMap::new()),
            progress: Default::default(),
        })
    }

    /// The rows of a fixed statement without parameters.
    pub(super) fn query(&self, sql: &str) -> Result<Vec<postgres::Row>, StoreError> {
        self.client.borrow_mut().query(sql, &[]).map_err(pg)
    }

    /// The rows of a statement with its parameters.
    pub(super) fn query_with(
        &self,
        sql: &str,
        params: &[&(dyn ToSql + Sync)],
    ) -> Result<Vec<postgres::Row>, StoreError> {
        self.client.borrow_mut().query(sql, params).map_err(pg)
    }

    /// The one bench this reader is narrowed to.
    pub(super) fn scope(&self) -> Option<&str> {
        self.scope.as_deref()
    }

    /// The exposure rows (panes in service) of the reader's benches, as the statistics
    /// take them.
    pub(super) fn fleet_exposures(
        &self,
    ) -> Result<Vec<shardlog_core::fleet::Exposure>, StoreError> {
        let refdata = self.refdata_with(Need::Exposure)?;
        Ok(refdata
            .exposure
            .iter()
            .map(|e| shardlog_core::fleet::Exposure {
                bench: refdata.exposure_bench.get(&e.id).cloned(),
                ..e.to_fleet()
            })
            .collect())
    }

    /// The codes and lookups (no exposure rows, no assets): ask `refdata_with` for more.
    pub(super) fn refdata(&self) -> Result<Rc<RefData>, StoreError> {
        self.refdata_with(Need::Codes)
    }

    pub(super) fn refdata_with(&self, need: Need) -> Result<Rc<RefData>, StoreError> {
        if let Some((had, r)) = self.refdata.borrow().as_ref() {
            if *had >= need {
                return Ok(r.clone());
            }
        }
        let loaded = Rc::new(self.load_refdata(need)?);
        *self.refdata.borrow_mut() = Some((need, loaded.clone()));
        Ok(loaded)
    }

    fn load_refdata(&self, need: Need) -> Result<RefData, StoreError> {
        let rows = self
            .client
            .borrow_mut()
            .query(
                "SELECT entity, origin, image, id FROM fleet_records
                 WHERE entity = ANY($2) AND image IS NOT NULL AND ($1::text IS NULL OR origin = $1)
                 ORDER BY origin, entity, id",
                &[&self.scope, &need.entities()],
            )
            .map_err(pg)?;
        let mut out = RefData::default();
        // first bench (in code order) wins a code several hold
        let mut lookups = BTreeMap::new();
        let mut sites = BTreeMap::new();
        let mut suppliers = BTreeMap::new();
        let mut products = BTreeMap::new();
        let mut lots = BTreeMap::new();
        let mut assets = BTreeMap::new();
        let mut fragmentation = BTreeMap::new();
        for r in &rows {
            let entity: &str = r.get(0);
            let origin: String = r.get(1);
            let image: &str = r.get(2);
            let value = canon::decanonical(image).ok_or_else(|| {
                StoreError::Database(format!("a {entity} image of bench {origin} is not JSON"))
            })?;
            let bad = |e: serde_json::Error| {
                StoreError::Database(format!("a {entity} image of bench {origin}: {e}"))
            };
            let id: &str = r.get(3);
            match entity {
                "lookup" if id.starts_with("fragmentation_minimum/") => {
                    let m: FragmentationMinimum = serde_json::from_value(value).map_err(bad)?;
                    fragmentation.entry(id.to_string()).or_insert(m);
                }
                "lookup" => {
                    let e: LookupEntry = serde_json::from_value(value).map_err(bad)?;
                    lookups
                        .entry((kind_name(e.kind), e.code.clone()))
                        .or_insert(e);
                }
                "site" => {
                    let s: Site = serde_json::from_value(value).map_err(bad)?;
                    sites.entry(s.code.clone()).or_insert(s);
                }
                "asset" => {
                    let a: Asset = serde_json::from_value(value).map_err(bad)?;
                    out.asset_types
                        .insert((origin, a.code.clone()), a.asset_type.clone());
                    assets.entry(a.code.clone()).or_insert(a);
                }
                "supplier" => {
                    let s: Supplier = serde_json::from_value(value).map_err(bad)?;
                    suppliers.entry(s.code.clone()).or_insert(s);
                }
                "product" => {
                    let p: Product = serde_json::from_value(value).map_err(bad)?;
                    products
                        .entry((p.supplier.clone(), p.code.clone()))
                        .or_insert(p);
                }
                "lot" => {
                    let l: Lot = serde_json::from_value(value).map_err(bad)?;
                    lots.entry((l.supplier.clone(), l.product.clone(), l.code.clone()))
                        .or_insert(l);
                }
                _ => {
                    let e: Exposure = serde_json::from_value(value).map_err(bad)?;
                    out.exposure_bench.insert(e.id.clone(), origin);
                    out.exposure.push(e);
                }
            }
        }
        out.lookups = lookups.into_values().collect();
        // the bench's order: kind, sort order, code
        out.lookups.sort_by(|a, b| {
            (kind_name(a.kind), a.sort_order, &a.code).cmp(&(
                kind_name(b.kind),
                b.sort_order,
                &b.code,
            ))
        });
        out.sites = sites.into_values().collect();
        out.assets = assets.into_values().collect();
        out.suppliers = suppliers.into_values().collect();
        out.products = products.into_values().collect();
        out.lots = lots.into_values().collect();
        out.fragmentation = fragmentation.into_values().collect();
        out.fragmentation.sort_by(|a, b| {
            (a.thickness_from_m, a.thickness_to_m)
                .partial_cmp(&(b.thickness_from_m, b.thickness_to_m))
                .unwrap_or(std::cmp::Ordering::Equal)
        });
        out.exposure.sort_by(|a, b| {
            (
                &a.supplier,
                &a.product,
                &a.lot,
                &a.site,
                a.installed_on,
                &a.id,
            )
                .cmp(&(
                    &b.supplier,
                    &b.product,
                    &b.lot,
                    &b.site,
                    b.installed_on,
                    &b.id,
                ))
        });
        Ok(out)
    }

    /// The conditions of a filter on `fleet_facts f`, with `$n` placeholders from `args`.
    pub(super) fn conditions(&self, filter: &Filter, args: &mut Vec<Bound>) -> Vec<String> {
        let mut conds = Vec::new();
        let mut bind = |column: &str, value: Option<&str>, conds: &mut Vec<String>| {
            if let Some(v) = value {
                args.push(Bound::Text(v.to_string()));
                conds.push(format!("{column} = ${}", args.len()));
            }
        };
        bind("f.owner", self.scope.as_deref(), &mut conds);
        bind("f.owner", filter.bench.as_deref(), &mut conds);
        bind("f.status", filter.status.as_deref(), &mut conds);
        match filter.cause.as_deref() {
            Some(NO_CAUSE) => conds.push("f.cause IS NULL".into()),
            other => bind("f.cause", other, &mut conds),
        }
        bind("f.origin_type", filter.origin_type.as_deref(), &mut conds);
        bind("f.supplier", filter.supplier.as_deref(), &mut conds);
        bind("f.lot", filter.lot.as_deref(), &mut conds);
        bind("f.site", filter.site.as_deref(), &mut conds);
        if let Some(d) = filter.since {
            args.push(Bound::Text(d.format("%Y-%m-%d").to_string()));
            conds.push(format!("f.found_on >= ${}", args.len()));
        }
        if let Some(d) = filter.until {
            args.push(Bound::Text(d.format("%Y-%m-%d").to_string()));
            conds.push(format!("f.found_on <= ${}", args.len()));
        }
        if let Some(q) = filter.text.as_deref().map(text_query) {
            match q {
                Some(q) => {
                    args.push(Bound::Text(q));
                    conds.push(format!(
                        "f.id IN (SELECT s.id FROM fleet_search s WHERE s.doc @@ to_tsquery('simple', ${}))",
                        args.len()
                    ));
                }
                // nothing to search for matches nothing, as on the bench
                None => conds.push("false".into()),
            }
        }
        conds
    }
}

/// A lookup kind's name as the bench's table holds it (its sort key there).
fn kind_name(kind: LookupKind) -> String {
    serde_json::to_value(kind)
        .ok()
        .and_then(|v| v.as_str().map(str::to_string))
        .unwrap_or_default()
}

/// The words of a free-text filter as a tsquery: every word, each as a prefix, all required
/// (the bench's FTS5 query is the same: quoted prefix terms, all required). None when the
/// text has no word.
pub(super) fn text_query(text: &str) -> Option<String> {
    let terms: Vec<String> = text
        .split(|c: char| !c.is_alphanumeric() && c != '_')
        .filter(|w| !w.is_empty())
        .map(|w| format!("'{}':*", w.to_lowercase()))
        .collect();
    (!terms.is_empty()).then(|| terms.join(" & "))
}

pub(super) fn where_clause(conds: &[String]) -> String {
    if conds.is_empty() {
        String::new()
    } else {
        format!("WHERE {}", conds.join(" AND "))
    }
}

impl FleetReader {
    fn incident(&self, key: &str) -> Result<Incident, StoreError> {
        let key = key.trim();
        let rows = self
            .client
            .borrow_mut()
            .query(
                "SELECT r.reference, r.image FROM fleet_records r
                 WHERE r.entity = 'incident' AND r.image IS NOT NULL
                   AND (r.reference = $1 OR r.id = $1 OR r.id = lower($1))
                   AND ($2::text IS NULL OR r.owner = $2)
                 LIMIT 2",
                &[&key, &self.scope],
            )
            .map_err(pg)?;
        let row = match rows.as_slice() {
            [one] => one,
            [] => return Err(StoreError::NotFound(key.to_string())),
            _ => {
                return Err(StoreError::invalid(
                    "reference",
                    format!("{key} names more than one incident in the fleet"),
                ))
            }
        };
        let mut inc = incident_from(row.get(0), row.get(1)).map_err(|reference| {
            StoreError::Database(format!("the fleet's image of {reference} cannot be read"))
        })?;
        self.restore_analyses(&mut inc)?;
        Ok(inc)
    }

    /// The incidents matching `filter` in the order found (the bench's export order), and
    /// those whose image cannot be read.
    fn matching_incidents(
        &self,
        filter: &Filter,
    ) -> Result<(Vec<Incident>, Vec<crate::store::exchange::Damaged>), StoreError> {
        let mut args = Vec::new();
        let conds = self.conditions(filter, &mut args);
        let sql = format!(
            "SELECT r.reference, r.image FROM fleet_facts f
             JOIN fleet_records r ON r.entity = 'incident' AND r.id = f.id {} ORDER BY f.found_on, f.ord",
            where_clause(&conds)
        );
        let rows = self
            .client
            .borrow_mut()
            .query(&sql, &refs(&args))
            .map_err(pg)?;
        let mut good = Vec::with_capacity(rows.len());
        let mut damaged = Vec::new();
        for r in &rows {
            match incident_from(r.get(0), r.get(1)) {
                Ok(mut inc) => {
                    self.restore_analyses(&mut inc)?;
                    good.push(inc)
                }
                Err(reference) => damaged.push(crate::store::exchange::Damaged {
                    reference,
                    why: "the fleet's image of it cannot be read".into(),
                }),
            }
        }
        Ok((good, damaged))
    }

    fn export_doc(
        &self,
        filter: &Filter,
    ) -> Result<
        (
            crate::store::exchange::ExportDoc,
            Vec<crate::store::exchange::Damaged>,
        ),
        StoreError,
    > {
        let (incidents, damaged) = self.matching_incidents(filter)?;
        let refdata = self.refdata_with(Need::Assets)?;
        let mut doc = crate::store::exchange::ExportDoc::empty();
        doc.lookups = refdata.lookups.clone();
        doc.sites = refdata.sites.clone();
        doc.assets = refdata.assets.clone();
        doc.suppliers = refdata.suppliers.clone();
        doc.products = refdata.products.clone();
        doc.lots = refdata.lots.clone();
        doc.exposure = refdata.exposure.clone();
        doc.incidents = incidents;
        Ok((doc, damaged))
    }
}

/// An incident from its fleet image, shown by the fleet's reference; the reference when the
/// image cannot be read.
pub(super) fn incident_from(reference: String, image: &str) -> Result<Incident, String> {
    let Some(mut inc) =
        canon::decanonical(image).and_then(|v| serde_json::from_value::<Incident>(v).ok())
    else {
        return Err(reference);
    };
    inc.reference = reference;
    Ok(inc)
}

impl RecordSource for FleetReader {
    fn shown(&self) -> String {
        match &self.scope {
            Some(code) => format!("{} (bench {code})", self.shown),
            None => self.shown.clone(),
        }
    }
    fn is_fleet(&self) -> bool {
        true
    }
    fn bench_codes(&self) -> Result<Vec<String>, StoreError> {
        if let Some(code) = &self.scope {
            return Ok(vec![code.clone()]);
        }
        Ok(self
            .client
            .borrow_mut()
            .query("SELECT code FROM fleet_benches ORDER BY code", &[])
            .map_err(pg)?
            .iter()
            .map(|r| r.get(0))
            .collect())
    }
    fn lookups(&self, kind: LookupKind) -> Result<Vec<LookupEntry>, StoreError> {
        Ok(self
            .refdata()?
            .lookups
            .iter()
            .filter(|e| e.kind == kind)
            .cloned()
            .collect())
    }
    fn all_lookups(&self) -> Result<Vec<LookupEntry>, StoreError> {
        Ok(self.refdata()?.lookups.clone())
    }
    fn sites(&self) -> Result<Vec<Site>, StoreError> {
        Ok(self.refdata()?.sites.clone())
    }
    fn suppliers(&self) -> Result<Vec<Supplier>, StoreError> {
        Ok(self.refdata()?.suppliers.clone())
    }
    fn products(&self) -> Result<Vec<Product>, StoreError> {
        Ok(self.refdata()?.products.clone())
    }
    fn fragmentation_minimums(&self) -> Result<Vec<FragmentationMinimum>, StoreError> {
        Ok(self.refdata()?.fragmentation.clone())
    }
    fn soak_input(
        &self,
        since: Option<chrono::NaiveDate>,
        until: Option<chrono::NaiveDate>,
    ) -> Result<crate::store::practice::SoakInput, StoreError> {
        self.fleet_soak_input(since, until)
    }
    fn lots(&self) -> Result<Vec<Lot>, StoreError> {
        Ok(self.refdata()?.lots.clone())
    }
    fn list(&self, filter: &Filter, sort: Sort, page: &PageRequest) -> Result<Page, StoreError> {
        self.page(filter, sort, page)
    }
    fn get(&self, key: &str) -> Result<Incident, StoreError> {
        self.incident(key)
    }
    fn owner_of(&self, id: &str) -> Result<Option<String>, StoreError> {
        let row = self
            .client
            .borrow_mut()
            .query_opt("SELECT owner FROM fleet_facts WHERE id = $1", &[&id])
            .map_err(pg)?;
        Ok(row.map(|r| r.get(0)))
    }
    fn export_json_readable(
        &self,
        filter: &Filter,
    ) -> Result<(String, Vec<crate::store::exchange::Damaged>), StoreError> {
        let (doc, damaged) = self.export_doc(filter)?;
        let mut s = serde_json::to_string_pretty(&doc)?;
        s.push('\n');
        Ok((s, damaged))
    }
    fn export_csv_readable(
        &self,
        filter: &Filter,
        out: &mut dyn std::io::Write,
    ) -> Result<(usize, Vec<crate::store::exchange::Damaged>), StoreError> {
        let io = |e: std::io::Error| StoreError::File {
            path: "output".into(),
            message: e.to_string(),
        };
        let (incidents, damaged) = self.matching_incidents(filter)?;
        writeln!(out, "{}", crate::store::exchange::csv_header()).map_err(io)?;
        // each row carries its lot's heat-soak record, as the bench's export does
        let refdata = self.refdata()?;
        let soak = |inc: &Incident| {
            let g = &inc.glass;
            refdata
                .lots
                .iter()
                .find(|l| {
                    Some(&l.supplier) == g.supplier.as_ref()
                        && Some(&l.product) == g.product.as_ref()
                        && Some(&l.code) == g.lot.as_ref()
                })
                .and_then(|l| l.heat_soak.as_ref())
        };
        for inc in &incidents {
            writeln!(out, "{}", crate::store::exchange::csv_row(inc, soak(inc))).map_err(io)?;
        }
        Ok((incidents.len(), damaged))
    }
    fn stats_input(
        &self,
        q: &shardlog_core::fleet::StatsQuery,
        extra: &[shardlog_core::fleet::Key],
    ) -> Result<StatsInput, StoreError> {
        self.facts(q, extra)
    }
    fn stats_counted(
        &self,
        q: &shardlog_core::fleet::StatsQuery,
        today: chrono::NaiveDate,
    ) -> Result<Option<crate::store::read::CountedInput>, StoreError> {
        self.counted(q, today)
    }
}

impl FleetReader {
    /// One row of facts per incident in the bench's order (the order the bench's own table
    /// gives them), with the keys the query groups or filters by; the exposure rows.
    fn facts(
        &self,
        q: &shardlog_core::fleet::StatsQuery,
        extra: &[shardlog_core::fleet::Key],
    ) -> Result<StatsInput, StoreError> {
        use shardlog_core::fleet::{IncidentFacts, Key, StressKind};
        let mut keys: Vec<Key> = q.keys.iter().chain(extra).copied().collect();
        keys.extend(q.only.iter().map(|(k, _)| *k));
        if q.origin_type.is_some() {
            keys.push(Key::OriginType);
        }
        let refdata = self.refdata_with(if keys.contains(&Key::AssetType) {
            Need::Assets
        } else {
            Need::Exposure
        })?;
        let mut args = Vec::new();
        let filter = Filter {
            since: q.since,
            until: q.until,
            ..Filter::default()
        };
        let conds = self.conditions(&filter, &mut args);
        let stress = match q.stress {
            StressKind::Applied => "f.applied_stress_pa",
            StressKind::Net => "f.stress_pa",
        };
        let sql = format!(
            "SELECT f.found_on, {stress}, f.cause, f.origin_type, f.temper, f.supplier, f.product, \
             f.lot, f.site, f.origin, f.asset, f.owner FROM fleet_facts f {} ORDER BY f.ord",
            where_clause(&conds)
        );
        let rows = self
            .client
            .borrow_mut()
            .query(&sql, &refs(&args))
            .map_err(pg)?;
        // texts repeat: one shared copy of each
        let mut texts: HashMap<String, Rc<str>> = HashMap::new();
        let mut shared = |v: Option<String>| -> Option<Rc<str>> {
            v.map(|s| {
                texts
                    .entry(s.clone())
                    .or_insert_with(|| Rc::from(s.as_str()))
                    .clone()
            })
        };
        let wanted = |k: Key| keys.contains(&k);
        let mut out = Vec::with_capacity(rows.len());
        for r in &rows {
            let found: String = r.get(0);
            let found = crate::store::dates::parse_date(&found).ok_or_else(|| {
                StoreError::Database(format!("a fleet fact with the date found {found:?}"))
            })?;
            let mut f = IncidentFacts {
                found,
                stress_pa: r.get(1),
                ..Default::default()
            };
            let col = |k: usize| r.get::<_, Option<String>>(k);
            if wanted(Key::Bench) {
                f.bench = shared(col(11));
            }
            if wanted(Key::Cause) {
                f.cause = shared(col(2));
            }
            if wanted(Key::OriginType) {
                f.origin_type = shared(col(3));
            }
            if wanted(Key::Temper) {
                f.temper = shared(col(4));
            }
            if wanted(Key::Supplier) {
                f.supplier = shared(col(5));
            }
            if wanted(Key::Product) {
                f.product = shared(col(6));
            }
            if wanted(Key::Lot) {
                f.lot = shared(col(7));
            }
            if wanted(Key::Site) {
                f.site = shared(col(8));
            }
            if wanted(Key::AssetType) {
                // the asset as the bench that made the incident knows it
                let origin: String = r.get(9);
                f.asset_type =
                    shared(col(10).and_then(|a| refdata.asset_types.get(&(origin, a)).cloned()));
            }
            out.push(f);
        }
        Ok((out, self.fleet_exposures()?))
    }
}
