//! One incident: its sections, and the forms that edit them. A form is built from the
//! incident as loaded (its revision is kept) and applied back onto a copy of it; the store's
//! revision check refuses the save if the record changed meanwhile.

use std::collections::HashMap;

use super::field::{Field, FieldKind, FieldValue};
use super::form::Form;
use super::picklist::{PickItem, PickList};
use crate::store::model::{
    Cause, CustodyEntry, Examination, FlawMeasurement, Glass, HistoryEntry, Incident, LookupKind,
    Measured, Ply,
};
use shardlog_core::units::{self, Dimension, Unit};

/// The sections of one incident, in the order Tab visits them.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Section {
    Intake,
    Glass,
    Pattern,
    Examination,
    Cause,
    Evidence,
    History,
}

impl Section {
    pub const ALL: [Section; 7] = [
        Section::Intake,
        Section::Glass,
        Section::Pattern,
        Section::Examination,
        Section::Cause,
        Section::Evidence,
        Section::History,
    ];

    pub fn title(self) -> &'static str {
        match self {
            Section::Intake => "Intake",
            Section::Glass => "Glass",
            Section::Pattern => "Pattern",
            Section::Examination => "Examination",
            Section::Cause => "Cause",
            Section::Evidence => "Evidence",
            Section::History => "History",
        }
    }

    pub fn next(self) -> Section {
        let i = Section::ALL.iter().position(|s| *s == self).unwrap_or(0);
        Section::ALL[(i + 1) % Section::ALL.len()]
    }

    pub fn prev(self) -> Section {
        let i = Section::ALL.iter().position(|s| *s == self).unwrap_or(0);
        Section::ALL[(i + Section::ALL.len() - 1) % Section::ALL.len()]
    }

    /// Whether `e` edits this section.
    pub fn editable(self) -> bool {
        !matches!(self, Section::Evidence | Section::History)
    }
}

/// An incident on screen.
#[derive(Debug)]
pub struct IncidentState {
    pub incident: Incident,
    /// Newest first.
    pub history: Vec<HistoryEntry>,
    pub section: Section,
    pub scroll: u16,
    /// The history entry highlighted in the History section (0: the newest).
    pub history_cursor: usize,
    /// The largest useful `scroll` for the section shown, as the last frame measured it.
    pub scroll_max: std::cell::Cell<u16>,
    /// On the fleet database: the bench that owns the incident (where it is edited, and
    /// whose file keeps its history).
    pub owner: Option<String>,
}

/// What a form edits.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EditKind {
    /// A new incident (intake and glass).
    New,
    Section(Section),
    Custody,
    Attach,
    /// The log's filters (no incident).
    Filter,
    /// The log's bench (the fleet database): one pick, applied when chosen.
    BenchFilter,
    /// Panes in service (from the review; no incident).
    Exposure,
    /// A new entry of a lookup list.
    LookupAdd(crate::store::model::LookupKind),
    /// A new label for the highlighted entry of a lookup list.
    LookupRename(crate::store::model::LookupKind),
}

/// A form open over an incident (or a new one).
#[derive(Debug)]
pub struct EditState {
    pub kind: EditKind,
    pub form: Form,
    /// The incident as loaded: its revision is what the save is checked against.
    pub base: Option<Incident>,
    /// The last save was refused because the record changed meanwhile.
    pub conflict: bool,
}

impl EditState {
    pub fn title(&self) -> String {
        let r = self
            .base
            .as_ref()
            .map(|b| b.reference.clone())
            .unwrap_or_default();
        match self.kind {
            EditKind::New => "New incident".to_string(),
            EditKind::Section(s) => format!("Edit {} · {r}", s.title().to_lowercase()),
            EditKind::Custody => format!("Add custody entry · {r}"),
            EditKind::Attach => format!("Attach a file · {r}"),
            EditKind::Filter => "Filter the log".to_string(),
            EditKind::BenchFilter => "Show one bench's incidents".to_string(),
            EditKind::Exposure => "Panes in service (exposure)".to_string(),
            EditKind::LookupAdd(k) => format!("Add to the {} list", k.as_str().replace('_', " ")),
            EditKind::LookupRename(k) => {
                format!("Rename in the {} list", k.as_str().replace('_', " "))
            }
        }
    }
}

/// Pick-list contents loaded from the store when the interface opens (small tables).
#[derive(Debug, Default, Clone)]
pub struct Lists {
    /// The entries in use, per lookup kind: what pick-lists of new work offer.
    pub lookups: HashMap<String, Vec<PickItem>>,
    /// Retired entries, per lookup kind: not offered, but still named on the records that
    /// hold them and offered by the log's filter.
    pub retired: HashMap<String, Vec<PickItem>>,
    pub suppliers: Vec<PickItem>,
    pub products: Vec<PickItem>,
    pub lots: Vec<PickItem>,
    /// The heat-soak records of the lots that have one.
    pub lot_heat_soak: crate::app::practice::LotHeatSoak,
    /// The least fragment counts of thermally toughened glass, per thickness.
    pub fragmentation: Vec<crate::store::practice::FragmentationMinimum>,
    /// The codes of the benches the records come from (the fleet: every bench's).
    pub benches: Vec<String>,
    pub sites: Vec<PickItem>,
    pub assets: Vec<PickItem>,
}

impl Lists {
    pub fn lookup(&self, kind: LookupKind) -> Vec<PickItem> {
        self.lookups.get(kind.as_str()).cloned().unwrap_or_default()
    }

    /// The entries in use, and the record's own value when it is a retired one (marked so):
    /// editing an old record neither loses its value nor offers the retired entry to others.
    pub fn lookup_keeping(&self, kind: LookupKind, current: Option<&str>) -> Vec<PickItem> {
        let mut items = self.lookup(kind);
        if let Some(old) = current.and_then(|c| self.retired_item(kind, c)) {
            items.push(old);
        }
        items
    }

    /// Every entry, the retired ones last and marked: what a filter of old records offers.
    pub fn lookup_with_retired(&self, kind: LookupKind) -> Vec<PickItem> {
        let mut items = self.lookup(kind);
        if let Some(old) = self.retired.get(kind.as_str()) {
            items.extend(
                old.iter()
                    .map(|i| PickItem::new(i.code.clone(), format!("{} (retired)", i.label))),
            );
        }
        items
    }

    fn retired_item(&self, kind: LookupKind, code: &str) -> Option<PickItem> {
        self.retired
            .get(kind.as_str())
            .and_then(|v| v.iter().find(|i| i.code == code))
            .map(|i| PickItem::new(i.code.clone(), format!("{} (retired)", i.label)))
    }

    /// The label of a lookup code (retired ones included), or the code itself.
    pub fn label(&self, kind: LookupKind, code: &str) -> String {
        [&self.lookups, &self.retired]
            .iter()
            .filter_map(|m| m.get(kind.as_str()))
            .find_map(|v| v.iter().find(|i| i.code == code))
            .map(|i| i.label.clone())
            .unwrap_or_else(|| code.to_string())
    }
}

fn text(key: &'static str, label: &'static str, value: &str) -> Field {
    Field::new(key, label, FieldKind::Text { required: false }).with_text(value)
}

fn length(key: &'static str, label: &'static str, value: Option<f64>, hint: &'static str) -> Field {
    Field::new(
        key,
        label,
        FieldKind::Quantity {
            dim: Dimension::Length,
            positive: true,
            optional: true,
        },
    )
    .with_hint(hint)
    .with_text(
        &value
            .map(|v| units::format_exact(v, Unit::Millimetre))
            .unwrap_or_default(),
    )
}

fn measured_text(m: &Option<Measured>) -> String {
    m.as_ref().map(Measured::display).unwrap_or_default()
}

fn date_text(d: Option<chrono::NaiveDate>) -> String {
    d.map(|d| d.to_string()).unwrap_or_default()
}

fn pick(
    key: &'static str,
    label: &'static str,
    items: Vec<PickItem>,
    current: Option<&str>,
) -> PickList {
    let mut items = items;
    if let Some(c) = current {
        if !c.is_empty() && !items.iter().any(|i| i.code == c) {
            items.push(PickItem::new(c, c));
        }
    }
    let p = PickList::new(key, label, items);
    match current {
        Some(c) => p.with_choice(c),
        None => p,
    }
}

fn intake_items(form: &mut Form, inc: &Incident, lists: &Lists) {
    form.push_pick(pick("asset", "Asset", lists.assets.clone(), inc.asset.as_deref()).open_ended());
    form.push_field(text("position", "Position", &inc.position).with_hint("e.g. left side, bay 3"));
    form.push_pick(pick("site", "Site", lists.sites.clone(), inc.site.as_deref()).open_ended());
    form.push_field(
        Field::new("found_on", "Found on", FieldKind::Date { optional: false })
            .with_hint("YYYY-MM-DD")
            .with_text(&inc.found_on.to_string()),
    );
    form.push_field(
        Field::new("broken_on", "Broken on", FieldKind::Date { optional: true })
            .with_hint("YYYY-MM-DD if known")
            .with_text(&date_text(inc.broken_on)),
    );
    form.push_field(
        Field::new(
            "temperature",
            "Temperature °C",
            FieldKind::Float { optional: true },
        )
        .with_hint("e.g. -4")
        .with_text(
            &inc.environment
                .temperature_c
                .map(|t| t.to_string())
                .unwrap_or_default(),
        ),
    );
    form.push_field(text("sun", "Sun", &inc.environment.sun).with_hint("e.g. sunny afternoon"));
    form.push_field(text("weather", "Weather", &inc.environment.weather));
    form.push_field(text("reporter", "Reporter", &inc.reporter));
    form.push_field(text("how_found", "How found", &inc.how_found));
    form.push_field(text("description", "Description", &inc.description));
}

fn glass_items(form: &mut Form, inc: &Incident, lists: &Lists) {
    let g = &inc.glass;
    form.push_pick(
        pick(
            "supplier",
            "Supplier",
            lists.suppliers.clone(),
            g.supplier.as_deref(),
        )
        .open_ended(),
    );
    form.push_pick(
        pick(
            "product",
            "Product",
            lists.products.clone(),
            g.product.as_deref(),
        )
        .open_ended(),
    );
    form.push_pick(pick("lot", "Lot", lists.lots.clone(), g.lot.as_deref()).open_ended());
    form.push_pick(pick(
        "makeup",
        "Make-up",
        lists.lookup(LookupKind::Makeup),
        Some(g.makeup.as_str()),
    ));
    // ply 1 under its plain names; a second ply always offered (laminated and insulating
    // make-ups have two or more), and every further ply the record already holds
    for i in 0..shown_plies(g) {
        ply_items(form, g.plies.get(i), i, lists);
    }
    form.push_field(length("width", "Width", g.width_m, "e.g. 1200 mm"));
    form.push_field(length("height", "Height", g.height_m, "e.g. 800 mm"));
    crate::app::practice::glass_items(form, inc, &lists.lot_heat_soak);
}

/// Plies the Glass form edits (a triple laminate has three; a fourth covers an insulating
/// unit with a laminated pane). Plies beyond these stay as recorded.
const EDITABLE_PLIES: usize = 4;

/// (key, label) of the five fields of each editable ply: `material` for ply 1, `ply2_material`
/// for ply 2, …
const PLY_FIELDS: [[(&str, &str); 5]; EDITABLE_PLIES] = [
    [
        ("material", "Ply material"),
        ("temper", "Temper class"),
        ("thickness", "Thickness"),
        ("coating", "Coating"),
        ("edge_finish", "Edge finish"),
    ],
    [
        ("ply2_material", "Ply 2 material"),
        ("ply2_temper", "Ply 2 temper"),
        ("ply2_thickness", "Ply 2 thickness"),
        ("ply2_coating", "Ply 2 coating"),
        ("ply2_edge_finish", "Ply 2 edge"),
    ],
    [
        ("ply3_material", "Ply 3 material"),
        ("ply3_temper", "Ply 3 temper"),
        ("ply3_thickness", "Ply 3 thickness"),
        ("ply3_coating", "Ply 3 coating"),
        ("ply3_edge_finish", "Ply 3 edge"),
    ],
    [
        ("ply4_material", "Ply 4 material"),
        ("ply4_temper", "Ply 4 temper"),
        ("ply4_thickness", "Ply 4 thickness"),
        ("ply4_coating", "Ply 4 coating"),
        ("ply4_edge_finish", "Ply 4 edge"),
    ],
];

/// How many plies the Glass form shows: those recorded, at least two (laminated and
/// insulating make-ups have two or more), at most [`EDITABLE_PLIES`].
fn shown_plies(g: &Glass) -> usize {
    g.plies.len().clamp(2, EDITABLE_PLIES)
}

fn ply_items(form: &mut Form, ply: Option<&Ply>, i: usize, lists: &Lists) {
    let [material, temper, thickness, coating, edge] = PLY_FIELDS[i];
    form.push_pick(pick(
        material.0,
        material.1,
        lists.lookup(LookupKind::Material),
        ply.and_then(|p| p.material.as_deref()),
    ));
    form.push_pick(pick(
        temper.0,
        temper.1,
        lists.lookup(LookupKind::TemperClass),
        ply.and_then(|p| p.temper.as_deref()),
    ));
    form.push_field(length(
        thickness.0,
        thickness.1,
        ply.and_then(|p| p.thickness_m),
        "e.g. 6 mm",
    ));
    form.push_field(text(
        coating.0,
        coating.1,
        ply.map(|p| p.coating.as_str()).unwrap_or(""),
    ));
    form.push_field(text(
        edge.0,
        edge.1,
        ply.map(|p| p.edge_finish.as_str()).unwrap_or(""),
    ));
}

fn count_text(v: Option<i64>) -> String {
    v.map(|v| v.to_string()).unwrap_or_default()
}

fn pattern_items(form: &mut Form, inc: &Incident, lists: &Lists) {
    let p = &inc.pattern;
    form.push_pick(pick(
        "origin_location",
        "Origin location",
        lists.lookup(LookupKind::OriginLocation),
        p.origin_location.as_deref(),
    ));
    form.push_field(
        text("tension_face", "Tension face", &p.tension_face).with_hint("e.g. unknown"),
    );
    form.push_field(
        Field::new(
            "crack_count",
            "Crack count",
            FieldKind::Count { optional: true },
        )
        .with_text(&count_text(p.crack_count)),
    );
    form.push_pick(pick(
        "branching",
        "Branching",
        vec![
            PickItem::new("", "not recorded"),
            PickItem::new("yes", "yes"),
            PickItem::new("no", "no"),
        ],
        Some(match p.branching {
            Some(true) => "yes",
            Some(false) => "no",
            None => "",
        }),
    ));
    form.push_field(
        Field::new(
            "fragments",
            "Fragments 50×50",
            FieldKind::Count { optional: true },
        )
        .with_text(&count_text(p.fragment_count)),
    );
}

fn examination_items(form: &mut Form, inc: &Incident, lists: &Lists) {
    let e = inc.examinations.last();
    form.push_pick(pick(
        "origin_type",
        "Origin type",
        lists.lookup_keeping(
            LookupKind::OriginType,
            e.and_then(|e| e.origin_type.as_deref()),
        ),
        e.and_then(|e| e.origin_type.as_deref()),
    ));
    form.push_field(text(
        "analyst",
        "Analyst",
        e.map(|e| e.analyst.as_str()).unwrap_or(""),
    ));
    form.push_field(
        Field::new(
            "examined_on",
            "Examined on",
            FieldKind::Date { optional: true },
        )
        .with_hint("YYYY-MM-DD")
        .with_text(&date_text(e.and_then(|e| e.examined_on))),
    );
    let flaw = e.and_then(|e| e.flaw.as_ref());
    form.push_field(
        Field::new(
            "flaw_depth",
            "Flaw depth",
            FieldKind::Quantity {
                dim: Dimension::Length,
                positive: true,
                optional: true,
            },
        )
        .with_hint("measured, e.g. 90 µm")
        .with_text(&measured_text(&flaw.and_then(|f| f.depth.clone()))),
    );
    form.push_field(
        Field::new(
            "flaw_width",
            "Flaw width",
            FieldKind::Quantity {
                dim: Dimension::Length,
                positive: true,
                optional: true,
            },
        )
        .with_text(&measured_text(&flaw.and_then(|f| f.width.clone()))),
    );
    form.push_field(text(
        "exam_notes",
        "Notes",
        e.map(|e| e.notes.as_str()).unwrap_or(""),
    ));
}

fn cause_items(form: &mut Form, inc: &Incident, lists: &Lists) {
    let c = inc.cause.as_ref();
    form.push_pick(
        pick(
            "cause",
            "Cause",
            lists.lookup_keeping(LookupKind::CauseCategory, c.map(|c| c.category.as_str())),
            c.map(|c| c.category.as_str()),
        )
        .required(),
    );
    form.push_pick(
        pick(
            "confidence",
            "Confidence",
            lists.lookup(LookupKind::Confidence),
            Some(c.map(|c| c.confidence.as_str()).unwrap_or("possible")),
        )
        .required(),
    );
    form.push_pick(
        pick(
            "responsibility",
            "Responsibility",
            lists.lookup(LookupKind::Responsibility),
            Some(
                c.map(|c| c.responsibility.as_str())
                    .unwrap_or("undetermined"),
            ),
        )
        .required(),
    );
    form.push_field(
        text(
            "factors",
            "Contributing",
            &c.map(|c| c.factors.join(", ")).unwrap_or_default(),
        )
        .with_hint("comma-separated"),
    );
    form.push_field(text(
        "cause_note",
        "Note",
        c.map(|c| c.note.as_str()).unwrap_or(""),
    ));
    form.push_pick(
        pick(
            "status",
            "Case status",
            lists.lookup_keeping(LookupKind::Status, Some(inc.status.as_str())),
            Some(inc.status.as_str()),
        )
        .required(),
    );
}

/// The form for a section of `inc`.
pub fn section_form(section: Section, inc: &Incident, lists: &Lists) -> Form {
    let mut form = Form::default();
    match section {
        Section::Intake => intake_items(&mut form, inc, lists),
        Section::Glass => glass_items(&mut form, inc, lists),
        Section::Pattern => pattern_items(&mut form, inc, lists),
        Section::Examination => examination_items(&mut form, inc, lists),
        Section::Cause => cause_items(&mut form, inc, lists),
        Section::Evidence | Section::History => {}
    }
    form.mark_clean();
    form
}

/// The form for a new incident: intake, then glass.
pub fn new_form(today: chrono::NaiveDate, lists: &Lists) -> Form {
    let inc = Incident::draft(today);
    let mut form = Form::default();
    intake_items(&mut form, &inc, lists);
    glass_items(&mut form, &inc, lists);
    if let Some(found_on) = form.field_mut("found_on") {
        found_on.suggest(&today.to_string());
    }
    form.mark_clean();
    form
}

pub fn custody_form(now: chrono::DateTime<chrono::Utc>, actor: &str, lists: &Lists) -> Form {
    let mut form = Form::default();
    form.push_pick(
        pick(
            "action",
            "Action",
            lists.lookup(LookupKind::CustodyAction),
            Some("received"),
        )
        .required(),
    );
    form.push_field(
        Field::new("at", "When (UTC)", FieldKind::DateTime { optional: false })
            .with_suggestion(&now.format("%Y-%m-%d %H:%M").to_string()),
    );
    form.push_field(
        Field::new("who", "Who", FieldKind::Text { required: true })
            .with_hint("e.g. depot staff")
            .with_suggestion(actor),
    );
    form.push_field(text("location", "Location", "").with_hint("e.g. shelf B"));
    form.push_field(text("note", "Note", ""));
    form.mark_clean();
    form
}

/// Panes in service of a supplier (product, lot, site) from a day: the denominator of rates.
pub fn exposure_form(today: chrono::NaiveDate, lists: &Lists) -> Form {
    let mut form = Form::default();
    form.push_pick(
        pick("supplier", "Supplier", lists.suppliers.clone(), None)
            .required()
            .open_ended(),
    );
    form.push_pick(pick("product", "Product", lists.products.clone(), None).open_ended());
    form.push_pick(pick("lot", "Lot", lists.lots.clone(), None).open_ended());
    form.push_pick(pick("site", "Site", lists.sites.clone(), None).open_ended());
    form.push_field(
        Field::new(
            "installed_on",
            "Installed on",
            FieldKind::Date { optional: false },
        )
        .with_suggestion(&today.to_string()),
    );
    form.push_field(
        Field::new(
            "removed_on",
            "Removed on",
            FieldKind::Date { optional: true },
        )
        .with_hint("empty: still in service"),
    );
    form.push_field(
        Field::new("panes", "Panes", FieldKind::Count { optional: false })
            .with_hint("how many, e.g. 1200"),
    );
    form.mark_clean();
    form
}

/// The exposure row a filled [`exposure_form`] describes.
pub fn exposure_entry(form: &Form) -> Result<crate::store::model::Exposure, String> {
    let code = |k: &str| {
        let t = form.text(k).trim().to_string();
        (!t.is_empty()).then_some(t)
    };
    let supplier = code("supplier").ok_or("Supplier: pick or type one")?;
    let date = |k: &str| match form.field(k).map(|f| f.value()) {
        Some(Ok(FieldValue::Date(d))) => Ok(Some(d)),
        Some(Err(e)) => Err(e),
        _ => Ok(None),
    };
    let installed_on = date("installed_on")?.ok_or("Installed on: a date is needed")?;
    let removed_on = date("removed_on")?;
    let panes = match form.field("panes").map(|f| f.value()) {
        Some(Ok(FieldValue::Count(n))) => {
            i64::try_from(n).map_err(|_| "Panes: too many".to_string())?
        }
        Some(Err(e)) => return Err(e),
        _ => return Err("Panes: a whole number, 0 or more".into()),
    };
    Ok(crate::store::model::Exposure {
        id: String::new(),
        supplier,
        product: code("product"),
        lot: code("lot"),
        site: code("site"),
        installed_on,
        removed_on,
        panes,
    })
}

pub fn attach_form() -> Form {
    let mut form = Form::default();
    form.push_field(
        Field::new("path", "File path", FieldKind::Text { required: true })
            .with_hint("e.g. /home/mira/photos/origin-1.jpg"),
    );
    form.push_field(text("caption", "Caption", "").with_hint("e.g. origin at 40 mm from corner"));
    form.mark_clean();
    form
}

fn opt_text(form: &Form, key: &str) -> Option<String> {
    let t = form.text(key);
    if t.is_empty() {
        None
    } else {
        Some(t)
    }
}

fn value(form: &Form, key: &str) -> Result<FieldValue, String> {
    match form.field(key) {
        Some(f) => f.value(),
        None => Ok(FieldValue::Empty),
    }
}

fn opt_quantity(form: &Form, key: &str) -> Result<Option<f64>, String> {
    Ok(match value(form, key)? {
        FieldValue::Quantity(q) => Some(q),
        _ => None,
    })
}

fn opt_count(form: &Form, key: &str) -> Result<Option<i64>, String> {
    Ok(match value(form, key)? {
        FieldValue::Count(c) => Some(i64::try_from(c).unwrap_or(i64::MAX)),
        _ => None,
    })
}

fn opt_date(form: &Form, key: &str) -> Result<Option<chrono::NaiveDate>, String> {
    Ok(match value(form, key)? {
        FieldValue::Date(d) => Some(d),
        _ => None,
    })
}

fn opt_measured(form: &Form, key: &str) -> Result<Option<Measured>, String> {
    let t = form.text(key);
    if t.is_empty() {
        return Ok(None);
    }
    let label = form.field(key).map(|f| f.label).unwrap_or(key);
    Measured::parse(&t, Dimension::Length)
        .map(Some)
        .map_err(|e| format!("{label}: {e}"))
}

fn apply_intake(form: &Form, inc: &mut Incident) -> Result<(), String> {
    inc.asset = opt_text(form, "asset");
    inc.position = form.text("position");
    inc.site = opt_text(form, "site");
    if let Some(d) = opt_date(form, "found_on")? {
        inc.found_on = d;
    }
    inc.broken_on = opt_date(form, "broken_on")?;
    inc.environment.temperature_c = match value(form, "temperature")? {
        FieldValue::Number(t) => Some(t),
        _ => None,
    };
    inc.environment.sun = form.text("sun");
    inc.environment.weather = form.text("weather");
    inc.reporter = form.text("reporter");
    inc.how_found = form.text("how_found");
    inc.description = form.text("description");
    Ok(())
}

fn apply_glass(form: &Form, inc: &mut Incident) -> Result<(), String> {
    let g = &mut inc.glass;
    g.supplier = opt_text(form, "supplier");
    g.product = opt_text(form, "product");
    g.lot = opt_text(form, "lot");
    if let Some(m) = opt_text(form, "makeup") {
        g.makeup = m;
    }
    g.width_m = opt_quantity(form, "width")?;
    g.height_m = opt_quantity(form, "height")?;
    let shown = shown_plies(g);
    let mut plies = Vec::with_capacity(g.plies.len().max(shown));
    for [material, temper, thickness, coating, edge] in PLY_FIELDS.iter().take(shown) {
        plies.push(Ply {
            material: opt_text(form, material.0),
            temper: opt_text(form, temper.0),
            thickness_m: opt_quantity(form, thickness.0)?,
            coating: form.text(coating.0),
            edge_finish: form.text(edge.0),
        });
    }
    // plies beyond what the form shows stay as recorded
    plies.extend(g.plies.iter().skip(shown).cloned());
    // a ply left wholly empty at the end of the make-up is no ply
    while plies.last().is_some_and(ply_is_empty) {
        plies.pop();
    }
    g.plies = plies;
    crate::app::practice::apply_installed(form, inc)?;
    // the lot's heat-soak record is written after the incident; its typing is checked now
    crate::app::practice::heat_soak_of(form, inc).map(|_| ())
}

fn ply_is_empty(p: &Ply) -> bool {
    p.material.is_none()
        && p.temper.is_none()
        && p.thickness_m.is_none()
        && p.coating.is_empty()
        && p.edge_finish.is_empty()
}

fn apply_pattern(form: &Form, inc: &mut Incident) -> Result<(), String> {
    let p = &mut inc.pattern;
    p.origin_location = opt_text(form, "origin_location");
    p.tension_face = form.text("tension_face");
    p.crack_count = opt_count(form, "crack_count")?;
    p.fragment_count = opt_count(form, "fragments")?;
    p.branching = match form.text("branching").as_str() {
        "yes" => Some(true),
        "no" => Some(false),
        _ => None,
    };
    Ok(())
}

fn apply_examination(form: &Form, inc: &mut Incident) -> Result<(), String> {
    let depth = opt_measured(form, "flaw_depth")?;
    let width = opt_measured(form, "flaw_width")?;
    if inc.examinations.is_empty() {
        inc.examinations.push(Examination::empty());
    }
    let Some(e) = inc.examinations.last_mut() else {
        return Ok(());
    };
    e.origin_type = opt_text(form, "origin_type");
    e.analyst = form.text("analyst");
    e.examined_on = opt_date(form, "examined_on")?;
    e.notes = form.text("exam_notes");
    e.flaw = if depth.is_none() && width.is_none() {
        e.flaw.take().filter(|f| !f.shape.is_empty()).map(|mut f| {
            f.depth = None;
            f.width = None;
            f
        })
    } else {
        let shape = e.flaw.as_ref().map(|f| f.shape.clone()).unwrap_or_default();
        Some(FlawMeasurement {
            depth,
            width,
            shape,
        })
    };
    Ok(())
}

fn apply_cause(form: &Form, inc: &mut Incident) -> Result<(), String> {
    let category = form.text("cause");
    if category.is_empty() {
        return Err("Cause: pick one: type to narrow, Enter to choose".into());
    }
    inc.cause = Some(Cause {
        category,
        factors: form
            .text("factors")
            .split(',')
            .map(|s| s.trim().to_string())
            .filter(|s| !s.is_empty())
            .collect(),
        confidence: form.text("confidence"),
        responsibility: form.text("responsibility"),
        note: form.text("cause_note"),
    });
    if let Some(s) = opt_text(form, "status") {
        inc.status = s;
    }
    Ok(())
}

/// Apply a section form (or the new-incident form) onto `inc`.
pub fn apply(kind: EditKind, form: &Form, inc: &mut Incident) -> Result<(), String> {
    if let Some((_, e)) = form.first_error() {
        return Err(e);
    }
    match kind {
        EditKind::New => {
            apply_intake(form, inc)?;
            apply_glass(form, inc)
        }
        EditKind::Section(Section::Intake) => apply_intake(form, inc),
        EditKind::Section(Section::Glass) => apply_glass(form, inc),
        EditKind::Section(Section::Pattern) => apply_pattern(form, inc),
        EditKind::Section(Section::Examination) => apply_examination(form, inc),
        EditKind::Section(Section::Cause) => apply_cause(form, inc),
        _ => Ok(()),
    }
}

/// The custody entry a custody form describes.
pub fn custody_entry(form: &Form) -> Result<CustodyEntry, String> {
    if let Some((_, e)) = form.first_error() {
        return Err(e);
    }
    let at = match value(form, "at")? {
        FieldValue::DateTime(t) => t,
        _ => return Err("When: required".into()),
    };
    Ok(CustodyEntry {
        id: String::new(),
        at,
        action: form.text("action"),
        who: form.text("who"),
        location: form.text("location"),
        note: form.text("note"),
    })
}
