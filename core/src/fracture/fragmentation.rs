//! The fragmentation check of thermally toughened glass: the fragment count in a
//! 50 mm × 50 mm square against the least count a table gives for the nominal thickness
//! (EN 12150-1 gives such a table; the rows are data a lab keeps, passed in here).

use serde::{Deserialize, Serialize};

/// One row of a minimum-count table: a nominal thickness range (m, both ends included) and
/// the least fragment count in the 50 mm × 50 mm square, with where the row comes from.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FragmentationMinimum {
    pub thickness_from_m: f64,
    pub thickness_to_m: f64,
    pub min_count: i64,
    pub provenance: String,
}

/// The outcome of the check.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub enum FragmentationCheck {
    /// The count reaches the minimum of `row`.
    Pass {
        count: i64,
        row: FragmentationMinimum,
    },
    /// The count is below the minimum of `row`.
    Fail {
        count: i64,
        row: FragmentationMinimum,
    },
    /// No row of the table covers the thickness.
    NoMinimum { count: i64, thickness_m: f64 },
}

impl FragmentationCheck {
    /// "pass", "fail" or "no minimum for this thickness".
    pub fn verdict(&self) -> &'static str {
        match self {
            FragmentationCheck::Pass { .. } => "pass",
            FragmentationCheck::Fail { .. } => "fail",
            FragmentationCheck::NoMinimum { .. } => "no minimum for this thickness",
        }
    }

    /// The verdict with the count and the minimum used, without the provenance:
    /// "pass: 52 fragments, minimum 40 for 4 – 12 mm".
    pub fn summary(&self) -> String {
        match self {
            FragmentationCheck::Pass { count, row } | FragmentationCheck::Fail { count, row } => {
                format!(
                    "{}: {count} fragments, minimum {} for {}",
                    self.verdict(),
                    row.min_count,
                    range_text(row)
                )
            }
            FragmentationCheck::NoMinimum { count, thickness_m } => format!(
                "{count} fragments; no minimum for {} mm in the table",
                trim_mm(*thickness_m)
            ),
        }
    }

    /// The table row used, if any.
    pub fn row(&self) -> Option<&FragmentationMinimum> {
        match self {
            FragmentationCheck::Pass { row, .. } | FragmentationCheck::Fail { row, .. } => {
                Some(row)
            }
            FragmentationCheck::NoMinimum { .. } => None,
        }
    }

    /// One line for a screen or report: the count, the minimum used with its thickness range
    /// and provenance, and the verdict.
    pub fn describe(&self) -> String {
        match self {
            FragmentationCheck::Pass { count, row } | FragmentationCheck::Fail { count, row } => {
                format!(
                    "{count} fragments in 50 mm × 50 mm; minimum {} for {} ({}): {}",
                    row.min_count,
                    range_text(row),
                    row.provenance,
                    self.verdict()
                )
            }
            FragmentationCheck::NoMinimum { count, thickness_m } => format!(
                "{count} fragments in 50 mm × 50 mm; the table has no minimum for {} mm",
                trim_mm(*thickness_m)
            ),
        }
    }
}

fn trim_mm(m: f64) -> String {
    let s = format!("{:.2}", m * 1e3);
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// "4 – 12 mm" or "3 mm".
pub fn range_text(row: &FragmentationMinimum) -> String {
    if (row.thickness_to_m - row.thickness_from_m).abs() < 1e-7 {
        format!("{} mm", trim_mm(row.thickness_from_m))
    } else {
        format!(
            "{} – {} mm",
            trim_mm(row.thickness_from_m),
            trim_mm(row.thickness_to_m)
        )
    }
}

/// Check `count` for a nominal `thickness_m` against `table`. A thickness matches a row when
/// it lies in the row's range, within 0.05 mm either side (nominal thicknesses are typed in
/// mm and may carry rounding). Rows are tried in the order given; the first match is used.
pub fn check(count: i64, thickness_m: f64, table: &[FragmentationMinimum]) -> FragmentationCheck {
    const SLACK_M: f64 = 0.05e-3;
    let row = table.iter().find(|r| {
        thickness_m >= r.thickness_from_m - SLACK_M && thickness_m <= r.thickness_to_m + SLACK_M
    });
    match row {
        Some(r) if count >= r.min_count => FragmentationCheck::Pass {
            count,
            row: r.clone(),
        },
        Some(r) => FragmentationCheck::Fail {
            count,
            row: r.clone(),
        },
        None => FragmentationCheck::NoMinimum { count, thickness_m },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn table() -> Vec<FragmentationMinimum> {
        // the rows the bench seeds: EN 12150-1, soda-lime float, from memory
        [(0.003, 0.003, 15), (0.004, 0.012, 40), (0.015, 0.019, 30)]
            .iter()
            .map(|&(a, b, n)| FragmentationMinimum {
                thickness_from_m: a,
                thickness_to_m: b,
                min_count: n,
                provenance: "from memory".into(),
            })
            .collect()
    }

    #[test]
    fn a_count_at_the_minimum_passes_and_one_below_fails() {
        let t = table();
        assert_eq!(check(40, 0.006, &t).verdict(), "pass");
        assert_eq!(check(39, 0.006, &t).verdict(), "fail");
        assert_eq!(check(15, 0.003, &t).verdict(), "pass");
        assert_eq!(check(14, 0.003, &t).verdict(), "fail");
        assert_eq!(check(30, 0.019, &t).verdict(), "pass");
    }

    #[test]
    fn a_thickness_between_rows_has_no_minimum() {
        let t = table();
        assert!(matches!(
            check(100, 0.0135, &t),
            FragmentationCheck::NoMinimum { .. }
        ));
        assert!(check(100, 0.0135, &t).describe().contains("13.5 mm"));
    }

    #[test]
    fn the_description_names_the_minimum_its_range_and_provenance() {
        let d = check(52, 0.008, &table()).describe();
        assert_eq!(
            d,
            "52 fragments in 50 mm × 50 mm; minimum 40 for 4 – 12 mm (from memory): pass"
        );
    }
}
