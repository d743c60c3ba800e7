//! The bench-practice columns of the CSV view: the pane's install date, the fragment count,
//! the lot's heat-soak record (on every row of the lot), and the viewing mode of the
//! readings (one code for all of a row's readings, or one per reading, `;`-separated, in
//! the order of the boundary columns).

use super::super::super::dates::fmt_date;
use super::super::super::model::*;
use super::Row;

/// The cells of a row, in the order of the last six CSV columns.
pub fn cells(inc: &Incident, heat_soak: Option<&HeatSoak>) -> [String; 6] {
    let viewing = inc
        .examinations
        .last()
        .map(|e| viewing_cell(&e.readings))
        .unwrap_or_default();
    [
        inc.installed_on.map(fmt_date).unwrap_or_default(),
        inc.pattern
            .fragment_count
            .map(|n| n.to_string())
            .unwrap_or_default(),
        match heat_soak {
            Some(h) if h.soaked => "yes".into(),
            Some(_) => "no".into(),
            None => String::new(),
        },
        heat_soak
            .and_then(|h| h.on)
            .map(fmt_date)
            .unwrap_or_default(),
        heat_soak.map(|h| h.reference.clone()).unwrap_or_default(),
        viewing,
    ]
}

/// The readings in the order the CSV writes them: by boundary column, then as recorded.
fn in_column_order(readings: &[MirrorReading]) -> Vec<&MirrorReading> {
    let mut out = Vec::with_capacity(readings.len());
    for b in ["mirror_mist", "mist_hackle", "branching"] {
        out.extend(readings.iter().filter(|r| r.boundary == b));
    }
    out
}

fn viewing_cell(readings: &[MirrorReading]) -> String {
    let ordered = in_column_order(readings);
    let modes: Vec<&str> = ordered
        .iter()
        .map(|r| r.viewing.as_deref().unwrap_or(""))
        .collect();
    match modes.first() {
        None => String::new(),
        Some(first) if modes.iter().all(|m| m == first) => first.to_string(),
        Some(_) => modes.join(";"),
    }
}

impl Row<'_> {
    /// Read the install date, the fragment count and the viewing modes into `inc` (its
    /// readings already read); return the lot's heat-soak record the row gives.
    pub(in crate::store::exchange) fn practice(&mut self, inc: &mut Incident) -> Option<HeatSoak> {
        inc.installed_on = self.date("installed_on");
        if let Some(n) = self.opt("fragment_count") {
            match n.parse::<i64>() {
                Ok(v) if (0..=100_000).contains(&v) => inc.pattern.fragment_count = Some(v),
                _ => self.bad(
                    "fragment_count",
                    format!("\"{n}\" is not a whole number of fragments (0 to 100000)"),
                ),
            }
        }
        self.viewing(inc);
        self.heat_soak(inc.glass.lot.is_some())
    }

    fn viewing(&mut self, inc: &mut Incident) {
        let Some(cell) = self.opt("viewing") else {
            return;
        };
        let Some(exam) = inc.examinations.last_mut() else {
            self.bad(
                "viewing",
                "gives a viewing mode but the row has no readings",
            );
            return;
        };
        let parts: Vec<&str> = cell.split(';').map(str::trim).collect();
        let mut order: Vec<usize> = Vec::new();
        for b in ["mirror_mist", "mist_hackle", "branching"] {
            order.extend((0..exam.readings.len()).filter(|&i| exam.readings[i].boundary == b));
        }
        if parts.len() == 1 {
            for r in &mut exam.readings {
                r.viewing = Some(parts[0].to_string());
            }
        } else if parts.len() == order.len() {
            for (p, &i) in parts.iter().zip(&order) {
                exam.readings[i].viewing = (!p.is_empty()).then(|| p.to_string());
            }
        } else {
            self.bad(
                "viewing",
                format!(
                    "gives {} modes for {} readings; give one mode for all, or one per reading \
                     in the order of mirror_mist, mist_hackle, branching",
                    parts.len(),
                    order.len()
                ),
            );
        }
    }

    fn heat_soak(&mut self, has_lot: bool) -> Option<HeatSoak> {
        let soaked = self.opt("heat_soaked");
        let on = self.date("heat_soak_on");
        let reference = self.get("heat_soak_ref").trim().to_string();
        let soaked = match soaked.as_deref().map(str::to_ascii_lowercase).as_deref() {
            None => {
                if on.is_some() || !reference.is_empty() {
                    self.bad(
                        "heat_soaked",
                        "is empty but the row gives a heat-soak date or certificate; write yes",
                    );
                }
                return None;
            }
            Some("yes" | "y" | "true" | "1") => true,
            Some("no" | "n" | "false" | "0") => false,
            Some(other) => {
                self.bad(
                    "heat_soaked",
                    format!("\"{other}\" is not yes or no (empty: not known)"),
                );
                return None;
            }
        };
        if !has_lot {
            self.bad(
                "heat_soaked",
                "is a record of a lot, but the row names no lot",
            );
            return None;
        }
        if !soaked && (on.is_some() || !reference.is_empty()) {
            self.bad(
                "heat_soaked",
                "is no, but the row gives a heat-soak date or certificate",
            );
            return None;
        }
        Some(HeatSoak {
            soaked,
            on,
            reference,
        })
    }
}

/// Gather a row's heat-soak record of its lot: one record per lot, and a row that says
/// otherwise than an earlier row of the same lot is a problem of that row.
pub(in crate::store::exchange) fn gather_heat_soak(
    line: usize,
    inc: &Incident,
    h: HeatSoak,
    lots: &mut Vec<Lot>,
    first_line: &mut std::collections::HashMap<(String, String, String), usize>,
    problems: &mut Vec<super::super::Problem>,
) {
    let g = &inc.glass;
    let (Some(s), Some(p), Some(l)) = (&g.supplier, &g.product, &g.lot) else {
        problems.push(super::super::Problem::new(
            format!("line {line}, column heat_soaked"),
            "a heat-soak record belongs to a lot: give the supplier, product and lot",
        ));
        return;
    };
    let key = (s.clone(), p.clone(), l.clone());
    if let Some(&first) = first_line.get(&key) {
        let same = lots
            .iter()
            .find(|x| x.supplier == *s && x.product == *p && x.code == *l)
            .is_some_and(|x| x.heat_soak.as_ref() == Some(&h));
        if !same {
            problems.push(super::super::Problem::new(
                format!("line {line}, column heat_soaked"),
                format!("lot {s}/{p}/{l} has another heat-soak record on line {first}"),
            ));
        }
        return;
    }
    first_line.insert(key, line);
    lots.push(Lot {
        id: String::new(),
        supplier: s.clone(),
        product: p.clone(),
        code: l.clone(),
        made_on: None,
        heat_soak: Some(h),
    });
}
