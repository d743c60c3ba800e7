//! Domain types of the record. These are what the rest of shardlog sees: plain data with
//! serde, no database types. Quantities are SI (m, Pa); a measurement that a person typed
//! also keeps the number and unit exactly as typed ([`Measured`]).

use chrono::{DateTime, NaiveDate, Utc};
use serde::{Deserialize, Serialize};

/// Who makes a change and when. Passed in by the caller (the CLI or the interface takes
/// it from the environment and the clock at its edge), never read inside the store.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Stamp {
    pub actor: String,
    pub at: DateTime<Utc>,
}

impl Stamp {
    /// A stamp truncated to whole milliseconds (what the store keeps).
    pub fn new(actor: impl Into<String>, at: DateTime<Utc>) -> Stamp {
        Stamp {
            actor: actor.into(),
            at: truncate_ms(at),
        }
    }
}

/// Truncate a time to whole milliseconds, the precision the store keeps.
pub fn truncate_ms(at: DateTime<Utc>) -> DateTime<Utc> {
    DateTime::from_timestamp_millis(at.timestamp_millis()).unwrap_or(at)
}

/// A measurement as typed (`text` and `unit`, e.g. "1.25" and "mm") and its SI value.
/// The text is what the audit hash covers, so float formatting never changes a hash.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Measured {
    pub text: String,
    pub unit: String,
    pub si: f64,
}

impl Measured {
    /// Parse "1.25 mm" (any unit of the dimension that `units` accepts).
    pub fn parse(input: &str, dim: shardlog_core::units::Dimension) -> Result<Measured, String> {
        let (si, unit) =
            shardlog_core::units::parse_with_unit(input, dim).map_err(|e| e.to_string())?;
        let (number, _) = shardlog_core::units::split_number(input.trim());
        let number = number.to_string();
        Ok(Measured {
            text: number,
            unit: unit.ascii_symbol().to_string(),
            si,
        })
    }

    /// The reading as a person reads it: "1.25 mm".
    pub fn display(&self) -> String {
        format!("{} {}", self.text, self.unit)
    }
}

/// A site: depot, building, plant.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Site {
    pub id: String,
    pub code: String,
    pub name: String,
    #[serde(default)]
    pub region: String,
}

/// An asset: a vehicle, building, machine. `asset_type` is a lookup code (`asset_type`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Asset {
    pub id: String,
    pub code: String,
    pub asset_type: String,
    pub name: String,
    /// Code of the home site, if any.
    pub site: Option<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Supplier {
    pub id: String,
    pub code: String,
    pub name: String,
}

/// A glass product of a supplier. Codes are unique per supplier.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Product {
    pub id: String,
    pub supplier: String,
    pub code: String,
    pub name: String,
}

/// A production lot or batch of a product. Codes are unique per product.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Lot {
    pub id: String,
    pub supplier: String,
    pub product: String,
    pub code: String,
    pub made_on: Option<NaiveDate>,
    /// Whether the lot was heat-soak tested (EN 14179-1); None: not known. Left out of the
    /// audit image while unknown, so that lots written before it existed keep their bytes.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub heat_soak: Option<HeatSoak>,
}

/// The heat-soak record of a lot: tested or not, and when and under which certificate.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct HeatSoak {
    pub soaked: bool,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub on: Option<NaiveDate>,
    /// The certificate or report reference (free text).
    #[serde(default, skip_serializing_if = "String::is_empty")]
    pub reference: String,
}

/// Panes in service, for rates per 1,000 pane-years. `removed_on` None = still in service.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Exposure {
    pub id: String,
    pub supplier: String,
    pub product: Option<String>,
    pub lot: Option<String>,
    pub site: Option<String>,
    pub installed_on: NaiveDate,
    pub removed_on: Option<NaiveDate>,
    pub panes: i64,
}

/// One ply of the make-up. Lookup codes: `material`, `temper_class`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Ply {
    pub material: Option<String>,
    pub temper: Option<String>,
    /// Nominal thickness in m.
    pub thickness_m: Option<f64>,
    #[serde(default)]
    pub coating: String,
    #[serde(default)]
    pub edge_finish: String,
}

/// The broken part's glass. Supplier, product and lot are codes (product within supplier,
/// lot within product). `makeup` is a lookup code (`makeup`: monolithic, laminated, insulating).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
pub struct Glass {
    pub supplier: Option<String>,
    pub product: Option<String>,
    pub lot: Option<String>,
    pub makeup: String,
    #[serde(default)]
    pub plies: Vec<Ply>,
    pub width_m: Option<f64>,
    pub height_m: Option<f64>,
}

/// What the crack pattern shows. `origin_location` is a lookup code (edge, surface, corner,
/// interior); `tension_face` free text (e.g. "inboard", "unknown").
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
pub struct FracturePattern {
    pub crack_count: Option<i64>,
    pub branching: Option<bool>,
    pub fragment_count: Option<i64>,
    pub origin_location: Option<String>,
    #[serde(default)]
    pub tension_face: String,
}

/// Where the part was and what it met.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
pub struct Environment {
    pub temperature_c: Option<f64>,
    #[serde(default)]
    pub sun: String,
    #[serde(default)]
    pub weather: String,
}

/// One fracture-mirror reading. `boundary` is a lookup code (`boundary`: mirror_mist,
/// mist_hackle, branching). The radius is kept as typed.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MirrorReading {
    pub boundary: String,
    pub radius: Measured,
    pub magnification: Option<f64>,
    #[serde(default)]
    pub analyst: String,
    #[serde(default)]
    pub note: String,
    /// How the boundary was viewed: a lookup code (`viewing_mode`), None when not recorded
    /// (and then left out of the audit image, so older images keep their bytes).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub viewing: Option<String>,
}

/// A flaw measured on the fracture surface.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FlawMeasurement {
    pub depth: Option<Measured>,
    pub width: Option<Measured>,
    /// Geometry name as the fracture core spells it (e.g. "semicircular"), free text here.
    #[serde(default)]
    pub shape: String,
}

/// A computed result with what produced it. `analysis` holds the full serialized
/// `fracture::Analysis`; the columns repeat the figures that lists and statistics need.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ComputedResult {
    pub computed_at: DateTime<Utc>,
    /// Code version that computed it, e.g. "shardlog 0.1.0".
    pub code_version: String,
    /// Net stress at the origin from the mirror, Pa.
    pub stress_pa: Option<f64>,
    /// 95 % interval of the net stress, Pa.
    pub stress_low_pa: Option<f64>,
    pub stress_high_pa: Option<f64>,
    /// Residual stress assumed at the origin, Pa (compression negative).
    pub residual_pa: Option<f64>,
    /// Applied (service) stress = net − residual, Pa.
    pub applied_stress_pa: Option<f64>,
    /// Flaw size from the toughness, m.
    pub flaw_size_m: Option<f64>,
    /// Constants used (name → value with its source), as the core reports them.
    pub constants: serde_json::Value,
    /// The whole analysis as JSON.
    pub analysis: serde_json::Value,
}

/// One examination of the fracture surface.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Examination {
    pub id: String,
    pub examined_on: Option<NaiveDate>,
    #[serde(default)]
    pub analyst: String,
    /// Lookup code (`origin_type`).
    pub origin_type: Option<String>,
    /// Lookup code (`material`) of the ply that failed, if it differs from the glass.
    pub material: Option<String>,
    #[serde(default)]
    pub readings: Vec<MirrorReading>,
    pub flaw: Option<FlawMeasurement>,
    pub result: Option<ComputedResult>,
    #[serde(default)]
    pub notes: String,
}

impl Examination {
    /// An examination with nothing in it yet (the store assigns the id).
    pub fn empty() -> Examination {
        Examination {
            id: String::new(),
            examined_on: None,
            analyst: String::new(),
            origin_type: None,
            material: None,
            readings: Vec::new(),
            flaw: None,
            result: None,
            notes: String::new(),
        }
    }
}

/// The cause. Lookup codes: `cause_category`, `confidence`, `responsibility`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Cause {
    pub category: String,
    #[serde(default)]
    pub factors: Vec<String>,
    pub confidence: String,
    pub responsibility: String,
    #[serde(default)]
    pub note: String,
}

/// One movement of the physical specimen. `action` is a lookup code (`custody_action`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CustodyEntry {
    pub id: String,
    pub at: DateTime<Utc>,
    pub action: String,
    pub who: String,
    #[serde(default)]
    pub location: String,
    #[serde(default)]
    pub note: String,
}

/// A file kept in the attachment folder under its SHA-256 (lower-case hex).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Attachment {
    pub id: String,
    pub sha256: String,
    pub file_name: String,
    pub media_type: String,
    pub size_bytes: i64,
    #[serde(default)]
    pub caption: String,
    pub added_at: DateTime<Utc>,
}

/// One broken part with everything recorded about it: the unit that is audited as a whole.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Incident {
    /// UUIDv7, hyphenated lower case. Empty in a draft: the store assigns it.
    pub id: String,
    /// Human reference "BR-YYMMDD-NNNN" (date found, then a number within the day).
    /// Empty in a draft: the store assigns it.
    pub reference: String,
    /// Starts at 1; every saved change adds one. An edit must carry the revision it was made on.
    pub revision: i64,
    pub created_at: DateTime<Utc>,
    pub updated_at: DateTime<Utc>,
    /// Asset code (vehicle number, building), position on it, site code.
    pub asset: Option<String>,
    #[serde(default)]
    pub position: String,
    pub site: Option<String>,
    pub found_on: NaiveDate,
    pub broken_on: Option<NaiveDate>,
    /// The day the broken pane was installed: its time in service runs from here. Left
    /// out of the audit image while unknown.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub installed_on: Option<NaiveDate>,
    #[serde(default)]
    pub environment: Environment,
    #[serde(default)]
    pub reporter: String,
    #[serde(default)]
    pub how_found: String,
    #[serde(default)]
    pub glass: Glass,
    #[serde(default)]
    pub pattern: FracturePattern,
    #[serde(default)]
    pub examinations: Vec<Examination>,
    pub cause: Option<Cause>,
    /// Lookup code (`status`).
    pub status: String,
    #[serde(default)]
    pub description: String,
    #[serde(default)]
    pub notes: String,
    #[serde(default)]
    pub custody: Vec<CustodyEntry>,
    #[serde(default)]
    pub attachments: Vec<Attachment>,
}

impl Incident {
    /// An empty draft found on `found_on`, status "reported".
    pub fn draft(found_on: NaiveDate) -> Incident {
        let epoch = DateTime::<Utc>::UNIX_EPOCH;
        Incident {
            id: String::new(),
            reference: String::new(),
            revision: 0,
            created_at: epoch,
            updated_at: epoch,
            asset: None,
            position: String::new(),
            site: None,
            found_on,
            broken_on: None,
            installed_on: None,
            environment: Environment::default(),
            reporter: String::new(),
            how_found: String::new(),
            glass: Glass {
                makeup: "monolithic".into(),
                ..Glass::default()
            },
            pattern: FracturePattern::default(),
            examinations: Vec::new(),
            cause: None,
            status: "reported".into(),
            description: String::new(),
            notes: String::new(),
            custody: Vec::new(),
            attachments: Vec::new(),
        }
    }

    /// The examination whose result counts: the last one that has a result.
    pub fn current_result(&self) -> Option<(&Examination, &ComputedResult)> {
        self.examinations
            .iter()
            .rev()
            .find_map(|e| e.result.as_ref().map(|r| (e, r)))
    }
}

/// Kinds of lookup list. Each is a table of codes and labels seeded by migration 0001 and
/// editable by a lab.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum LookupKind {
    OriginType,
    OriginLocation,
    CauseCategory,
    TemperClass,
    Material,
    Status,
    Confidence,
    Responsibility,
    CustodyAction,
    Boundary,
    AssetType,
    Makeup,
    /// How a mirror boundary was viewed (reflected light, stereo microscope…).
    ViewingMode,
}

impl LookupKind {
    pub const ALL: [LookupKind; 13] = [
        LookupKind::OriginType,
        LookupKind::OriginLocation,
        LookupKind::CauseCategory,
        LookupKind::TemperClass,
        LookupKind::Material,
        LookupKind::Status,
        LookupKind::Confidence,
        LookupKind::Responsibility,
        LookupKind::CustodyAction,
        LookupKind::Boundary,
        LookupKind::AssetType,
        LookupKind::Makeup,
        LookupKind::ViewingMode,
    ];

    /// The name stored in the `lookup.kind` column.
    pub fn as_str(self) -> &'static str {
        match self {
            LookupKind::OriginType => "origin_type",
            LookupKind::OriginLocation => "origin_location",
            LookupKind::CauseCategory => "cause_category",
            LookupKind::TemperClass => "temper_class",
            LookupKind::Material => "material",
            LookupKind::Status => "status",
            LookupKind::Confidence => "confidence",
            LookupKind::Responsibility => "responsibility",
            LookupKind::CustodyAction => "custody_action",
            LookupKind::Boundary => "boundary",
            LookupKind::AssetType => "asset_type",
            LookupKind::Makeup => "makeup",
            LookupKind::ViewingMode => "viewing_mode",
        }
    }

    pub fn parse(s: &str) -> Option<LookupKind> {
        LookupKind::ALL.iter().copied().find(|k| k.as_str() == s)
    }
}

/// One entry of a lookup list.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct LookupEntry {
    pub kind: LookupKind,
    pub code: String,
    pub label: String,
    pub sort_order: i64,
    #[serde(default)]
    pub note: String,
    /// Hidden from the pick-lists of new work, kept for the records that hold the code. Left
    /// out of the audit image while false, so that the images of entries written before
    /// retiring existed stay the same bytes.
    #[serde(default, skip_serializing_if = "is_false")]
    pub retired: bool,
}

fn is_false(b: &bool) -> bool {
    !*b
}

/// The cause filter's value for the incidents with no cause recorded yet (the review's
/// backlog). No cause code is this word: the lookup codes are checked against it.
pub const NO_CAUSE: &str = "none";

/// Filters for [`crate::store::Store::list`] and exports. All given filters must match.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Filter {
    pub status: Option<String>,
    /// A cause code, or [`NO_CAUSE`] for incidents with no cause recorded.
    pub cause: Option<String>,
    pub origin_type: Option<String>,
    /// Supplier code.
    pub supplier: Option<String>,
    /// Lot code (any supplier's lot with that code unless `supplier` is also given).
    pub lot: Option<String>,
    /// Site code.
    pub site: Option<String>,
    /// Found on or after.
    pub since: Option<NaiveDate>,
    /// Found on or before.
    pub until: Option<NaiveDate>,
    /// Free text over reference, position, description, notes and examination notes.
    pub text: Option<String>,
    /// The owning bench's code (the fleet database; a bench file holds only its own).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bench: Option<String>,
}

/// Where the count of matches under a page stops when the filter has a status or words:
/// neither is counted ahead of time on the fleet database (an exact count there reads every
/// match, millions on a large fleet), so the count reads at most this many and one more, and
/// the page says "more than 1000". A bench file counts the same way, so that both give the
/// same answer for the same records.
pub const COUNT_CAP: u64 = 1_000;

/// The cap in force: [`COUNT_CAP`]; in debug builds only, `SHARDLOG_TEST_COUNT_CAP=N`, so
/// that the test suite reaches it with a few hundred incidents.
pub fn count_cap() -> u64 {
    #[cfg(debug_assertions)]
    if let Some(n) = std::env::var("SHARDLOG_TEST_COUNT_CAP")
        .ok()
        .and_then(|v| v.parse::<u64>().ok())
    {
        return n;
    }
    COUNT_CAP
}

impl Filter {
    /// Whether the count of this filter's matches stops at [`COUNT_CAP`] (a status or words).
    pub fn count_is_capped(&self) -> bool {
        self.status.is_some() || self.text.is_some()
    }

    /// The count of matches a page gives from `counted`, the number of matches read (at most
    /// [`count_cap`] + 1 when the count is capped): (total, whether more than it match).
    pub fn total_of(&self, counted: u64) -> (u64, bool) {
        let cap = count_cap();
        if self.count_is_capped() && counted > cap {
            (cap, true)
        } else {
            (counted, false)
        }
    }
}

/// Columns the log can be sorted by.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SortColumn {
    /// Date found, then reference (the default).
    #[default]
    Found,
    Reference,
    /// Net stress; incidents without a stress come last in either direction.
    Stress,
    Status,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub struct Sort {
    pub column: SortColumn,
    /// Newest / largest first when true.
    pub descending: bool,
}

/// A page request: at most `limit` rows after `after` (the `next` of the previous page).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PageRequest {
    pub limit: u32,
    pub after: Option<Cursor>,
    /// Also count all matching incidents (costs a scan of the matching index range).
    pub with_total: bool,
}

impl Default for PageRequest {
    fn default() -> Self {
        PageRequest {
            limit: 200,
            after: None,
            with_total: true,
        }
    }
}

/// Where a page ended. Opaque to callers: pass it back as `after`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Cursor {
    pub(crate) key: Vec<CursorKey>,
    pub(crate) seq: i64,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub(crate) enum CursorKey {
    Text(String),
    Real(Option<f64>),
}

/// A light row for the incident log.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LogRow {
    pub id: String,
    #[serde(rename = "ref")]
    pub reference: String,
    /// Date found.
    pub occurred: NaiveDate,
    pub asset: Option<String>,
    pub position: String,
    pub site: Option<String>,
    pub product: Option<String>,
    pub supplier: Option<String>,
    pub lot: Option<String>,
    pub status: String,
    pub cause: Option<String>,
    /// Net stress at the origin in MPa, if computed.
    pub stress_mpa: Option<f64>,
    /// The stored date found as it is, when it cannot be read (a damaged row: `occurred` is
    /// then 1970-01-01 and means nothing); the row is still listed, so that it can be found.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub damaged: Option<String>,
    /// The bench that owns the incident, on the fleet database (None from a bench file).
    /// Not part of `list --json`, which a bench file and the fleet answer alike.
    #[serde(skip)]
    pub bench: Option<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Page {
    pub rows: Vec<LogRow>,
    /// Pass back as `PageRequest::after` for the next page; None on the last page.
    pub next: Option<Cursor>,
    /// Number of matching incidents, when asked for (with `more_than_total`: the count
    /// stopped there).
    pub total: Option<u64>,
    /// More than `total` incidents match: the count stopped at [`COUNT_CAP`] (a filter by
    /// status or words; see [`Filter::count_is_capped`]).
    #[serde(default)]
    pub more_than_total: bool,
}

/// One flat row per incident for fleet statistics. [`Store::fleet_rows`] returns them in
/// no particular order (not date order); sort them if an order matters.
///
/// [`Store::fleet_rows`]: crate::store::Store::fleet_rows
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FleetRow {
    pub id: String,
    pub reference: String,
    pub cause: Option<String>,
    pub confidence: Option<String>,
    pub origin_type: Option<String>,
    pub supplier: Option<String>,
    pub product: Option<String>,
    pub lot: Option<String>,
    pub site: Option<String>,
    pub asset_type: Option<String>,
    /// Temper class of the first ply.
    pub temper: Option<String>,
    pub found_on: NaiveDate,
    pub broken_on: Option<NaiveDate>,
    pub applied_stress_pa: Option<f64>,
    pub net_stress_pa: Option<f64>,
    pub has_stress: bool,
}

/// Exposure for fleet rates: panes of one supplier/product/lot at one site.
pub type ExposureRow = Exposure;

/// One entry of an incident's history, from the audit log.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct HistoryEntry {
    pub seq: i64,
    pub at: DateTime<Utc>,
    pub actor: String,
    /// insert, update or delete.
    pub op: String,
    /// Top-level fields whose value changed ("examinations", "cause", "status", ...).
    pub changed: Vec<String>,
    pub before: Option<serde_json::Value>,
    pub after: Option<serde_json::Value>,
    pub hash: String,
}

/// What `verify` found.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct VerifyReport {
    pub audit_rows: u64,
    pub records_checked: u64,
    /// Hash of the last audit row (the chain head), hex.
    pub head: String,
    /// The first problem found, if any.
    pub first_problem: Option<String>,
    /// How many problems were found in all.
    pub problems: u64,
    /// Each record that could not be read (damaged), named by its table, row and field; the
    /// others were checked. Also counted in `problems`.
    #[serde(default)]
    pub damaged: Vec<String>,
}

impl VerifyReport {
    pub fn ok(&self) -> bool {
        self.first_problem.is_none()
    }

    /// Count one more problem (found outside the store's own checks, e.g. an anchor).
    pub fn add_problem(&mut self, msg: String) {
        if self.first_problem.is_none() {
            self.first_problem = Some(msg);
        }
        self.problems += 1;
    }
}

impl FleetRow {
    /// The facts the fleet statistics group, with the stress the caller chose (applied or
    /// net, filtered as it needs). One mapping for every caller (stats, dispute bundles).
    pub fn into_facts(self, stress_pa: Option<f64>) -> shardlog_core::fleet::IncidentFacts {
        shardlog_core::fleet::IncidentFacts {
            // a dispute bundle's figures are one bench's
            bench: None,
            cause: self.cause.map(Into::into),
            origin_type: self.origin_type.map(Into::into),
            supplier: self.supplier.map(Into::into),
            product: self.product.map(Into::into),
            lot: self.lot.map(Into::into),
            site: self.site.map(Into::into),
            asset_type: self.asset_type.map(Into::into),
            temper: self.temper.map(Into::into),
            found: self.found_on,
            stress_pa,
        }
    }
}

impl Exposure {
    /// The same panes as the fleet statistics count them.
    pub fn to_fleet(&self) -> shardlog_core::fleet::Exposure {
        shardlog_core::fleet::Exposure {
            bench: None,
            supplier: Some(self.supplier.clone()),
            product: self.product.clone(),
            lot: self.lot.clone(),
            site: self.site.clone(),
            panes: self.panes as f64,
            from: self.installed_on,
            until: self.removed_on,
        }
    }
}
