//! Bench practice in the forms: the install date of the broken pane and the heat-soak record
//! of its lot (Glass section), the fragmentation check (Pattern section), the viewing mode
//! of the readings (bench calculator).

use std::collections::HashMap;

use crate::app::field::{Field, FieldKind, FieldValue};
use crate::app::form::Form;
use crate::app::picklist::{PickItem, PickList};
use crate::store::model::{HeatSoak, Incident};

/// A lot's key: (supplier, product, lot code).
pub type LotKey = (String, String, String);

/// The heat-soak records of the lots, as the forms show them.
pub type LotHeatSoak = HashMap<LotKey, HeatSoak>;

fn lot_key(inc: &Incident) -> Option<LotKey> {
    let g = &inc.glass;
    Some((g.supplier.clone()?, g.product.clone()?, g.lot.clone()?))
}

/// The Glass section's practice items: install date, and the lot's heat-soak record.
pub fn glass_items(form: &mut Form, inc: &Incident, lots: &LotHeatSoak) {
    form.push_field(
        Field::new(
            "installed_on",
            "Installed on",
            FieldKind::Date { optional: true },
        )
        .with_hint("the day this pane went into service")
        .with_text(&inc.installed_on.map(|d| d.to_string()).unwrap_or_default()),
    );
    let soak = lot_key(inc).and_then(|k| lots.get(&k));
    let choice = match soak {
        Some(h) if h.soaked => "yes",
        Some(_) => "no",
        None => "",
    };
    form.push_pick(
        PickList::new(
            "heat_soaked",
            "Lot heat-soaked",
            vec![
                PickItem::new("", "not recorded"),
                PickItem::new("yes", "yes, heat-soak tested (EN 14179-1)"),
                PickItem::new("no", "no"),
            ],
        )
        .with_choice(choice),
    );
    form.push_field(
        Field::new(
            "heat_soak_on",
            "Heat-soak date",
            FieldKind::Date { optional: true },
        )
        .with_hint("of the lot's test, if known")
        .with_text(
            &soak
                .and_then(|h| h.on)
                .map(|d| d.to_string())
                .unwrap_or_default(),
        ),
    );
    form.push_field(
        Field::new(
            "heat_soak_ref",
            "Heat-soak cert.",
            FieldKind::Text { required: false },
        )
        .with_hint("certificate or report reference")
        .with_text(soak.map(|h| h.reference.as_str()).unwrap_or("")),
    );
}

/// The install date the form gives.
pub fn apply_installed(form: &Form, inc: &mut Incident) -> Result<(), String> {
    inc.installed_on = match form.field("installed_on").map(|f| f.value()) {
        Some(Ok(FieldValue::Date(d))) => Some(d),
        Some(Err(e)) => return Err(e),
        _ => None,
    };
    Ok(())
}

/// The heat-soak record the form gives for the incident's lot: None when the form has no
/// such items (other sections); Some(None) for "not recorded".
pub fn heat_soak_of(form: &Form, inc: &Incident) -> Result<Option<Option<HeatSoak>>, String> {
    let Some(pick) = form.pick("heat_soaked") else {
        return Ok(None);
    };
    let on = match form.field("heat_soak_on").map(|f| f.value()) {
        Some(Ok(FieldValue::Date(d))) => Some(d),
        Some(Err(e)) => return Err(e),
        _ => None,
    };
    let reference = form.text("heat_soak_ref").trim().to_string();
    let soaked = match pick.chosen_item().map(|i| i.code.as_str()) {
        Some("yes") => true,
        Some("no") => false,
        _ => {
            if on.is_some() || !reference.is_empty() {
                return Err(
                    "Lot heat-soaked: choose yes to keep a heat-soak date or certificate".into(),
                );
            }
            return Ok(Some(None));
        }
    };
    if lot_key(inc).is_none() {
        return Err(
            "Lot heat-soaked: the record belongs to a lot; give the supplier, product and lot"
                .into(),
        );
    }
    if !soaked && (on.is_some() || !reference.is_empty()) {
        return Err("Lot heat-soaked: a lot not soaked has no test date or certificate".into());
    }
    Ok(Some(Some(HeatSoak {
        soaked,
        on,
        reference,
    })))
}

/// What to write for the lot after the incident is saved: (lot, record), when the form
/// changes the lot's record.
pub fn lot_change(
    form: &Form,
    inc: &Incident,
    lots: &LotHeatSoak,
) -> Result<Option<(LotKey, Option<HeatSoak>)>, String> {
    let Some(wanted) = heat_soak_of(form, inc)? else {
        return Ok(None);
    };
    let Some(key) = lot_key(inc) else {
        return Ok(None);
    };
    if lots.get(&key) == wanted.as_ref() {
        return Ok(None);
    }
    Ok(Some((key, wanted)))
}
