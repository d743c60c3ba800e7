//! What a user types in a filter flag, turned into the code the records hold.
//!
//! Every filter flag of every command (`--status`, `--cause`, `--origin-type`, `--supplier`,
//! `--lot`, `--site`, `stats --only KEY=VALUE`) accepts a code or its label (a supplier's or
//! a site's name), in any case. A value that is neither is a usage error (exit 2) that
//! lists the valid codes with their labels, or the closest of them when the list is long:
//! a filter never returns nothing silently because of a typing mistake.

use super::CliError;
use crate::store::{LookupKind, RecordSource, NO_CAUSE};

/// What a filter flag selects on.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Field {
    Status,
    Cause,
    OriginType,
    Temper,
    AssetType,
    Supplier,
    Product,
    Lot,
    Site,
}

/// One valid value: the stored code and the label people read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Choice {
    pub code: String,
    pub label: String,
}

/// More choices than this are not all listed in an error: the closest are.
const LIST_ALL_UP_TO: usize = 24;
const CLOSEST: usize = 8;

impl Field {
    fn what(self) -> &'static str {
        match self {
            Field::Status => "case status",
            Field::Cause => "cause",
            Field::OriginType => "origin type",
            Field::Temper => "temper",
            Field::AssetType => "asset type",
            Field::Supplier => "supplier",
            Field::Product => "product",
            Field::Lot => "lot",
            Field::Site => "site",
        }
    }

    /// The valid values of this field in the database.
    pub fn choices(self, store: &dyn RecordSource) -> Result<Vec<Choice>, CliError> {
        let work = |e: crate::store::StoreError| CliError::work(e.to_string());
        let lookup = |kind| -> Result<Vec<Choice>, CliError> {
            Ok(store
                .lookups(kind)
                .map_err(work)?
                .into_iter()
                .map(|e| Choice {
                    code: e.code,
                    label: e.label,
                })
                .collect())
        };
        let mut v = match self {
            Field::Status => lookup(LookupKind::Status)?,
            Field::Cause => lookup(LookupKind::CauseCategory)?,
            Field::OriginType => lookup(LookupKind::OriginType)?,
            Field::Temper => lookup(LookupKind::TemperClass)?,
            Field::AssetType => lookup(LookupKind::AssetType)?,
            Field::Supplier => store
                .suppliers()
                .map_err(work)?
                .into_iter()
                .map(|s| Choice {
                    code: s.code,
                    label: s.name,
                })
                .collect(),
            Field::Product => store
                .products()
                .map_err(work)?
                .into_iter()
                .map(|p| Choice {
                    code: p.code,
                    label: p.name,
                })
                .collect(),
            Field::Lot => store
                .lots()
                .map_err(work)?
                .into_iter()
                .map(|l| Choice {
                    label: format!("{} lot {}", l.supplier, l.code),
                    code: l.code,
                })
                .collect(),
            Field::Site => store
                .sites()
                .map_err(work)?
                .into_iter()
                .map(|s| Choice {
                    code: s.code,
                    label: s.name,
                })
                .collect(),
        };
        if self == Field::Cause {
            v.push(Choice {
                code: NO_CAUSE.into(),
                label: "no cause recorded yet".into(),
            });
        }
        // a lot code can repeat across suppliers: list it once
        v.dedup_by(|a, b| a.code == b.code);
        Ok(v)
    }
}

/// The code `typed` names among `choices` (code first, then label; any case), or a usage
/// error for `flag` listing the valid codes and labels (the closest ones when there are many).
pub fn resolve_in(
    choices: &[Choice],
    field: Field,
    flag: &str,
    typed: &str,
) -> Result<String, CliError> {
    let t = typed.trim();
    let found = choices
        .iter()
        .find(|c| c.code == t)
        .or_else(|| choices.iter().find(|c| c.code.eq_ignore_ascii_case(t)))
        .or_else(|| choices.iter().find(|c| c.label.eq_ignore_ascii_case(t)));
    if let Some(c) = found {
        return Ok(c.code.clone());
    }
    let listed: Vec<&Choice> = if choices.len() <= LIST_ALL_UP_TO {
        choices.iter().collect()
    } else {
        closest(choices, t)
    };
    let items: Vec<String> = listed
        .iter()
        .map(|c| {
            if c.label.is_empty() || c.label == c.code {
                c.code.clone()
            } else {
                format!("{} ({})", c.code, c.label)
            }
        })
        .collect();
    let shown = shardlog_core::text::clean(t);
    let lower = t.to_lowercase();
    let containing: Vec<&Choice> = choices
        .iter()
        .filter(|c| {
            !lower.is_empty()
                && (c.code.to_lowercase().contains(&lower)
                    || c.label.to_lowercase().contains(&lower))
        })
        .collect();
    let hint = match containing.as_slice() {
        [one] => format!(" (did you mean {}?)", one.code),
        _ => String::new(),
    };
    Err(CliError::usage(if items.is_empty() {
        format!(
            "{flag}: '{shown}' is not a {} of this database, which has none recorded",
            field.what()
        )
    } else if listed.len() < choices.len() {
        format!(
            "{flag}: '{shown}' is not a {} code or name{hint}; the closest of the {} known: {}",
            field.what(),
            choices.len(),
            items.join(", ")
        )
    } else {
        format!(
            "{flag}: '{shown}' is not a {} code or name{hint}; expected one of: {}",
            field.what(),
            items.join(", ")
        )
    }))
}

/// [`resolve_in`] over the database's values of `field`.
pub fn resolve(
    store: &dyn RecordSource,
    field: Field,
    flag: &str,
    typed: &str,
) -> Result<String, CliError> {
    resolve_in(&field.choices(store)?, field, flag, typed)
}

/// `resolve` for an optional flag.
pub fn resolve_opt(
    store: &dyn RecordSource,
    field: Field,
    flag: &str,
    typed: &Option<String>,
) -> Result<Option<String>, CliError> {
    typed
        .as_deref()
        .map(|t| resolve(store, field, flag, t))
        .transpose()
}

/// The choices nearest to `typed`: those that contain it or that it contains first, then by
/// edit distance over the code and the label (lower case).
fn closest<'a>(choices: &'a [Choice], typed: &str) -> Vec<&'a Choice> {
    let t = typed.to_lowercase();
    let score = |c: &Choice| {
        let code = c.code.to_lowercase();
        let label = c.label.to_lowercase();
        let contains =
            !t.is_empty() && (code.contains(&t) || label.contains(&t) || t.contains(code.as_str()));
        let d = edit_distance(&t, &code).min(edit_distance(&t, &label));
        (!contains, d)
    };
    let mut v: Vec<(bool, usize, &Choice)> = choices
        .iter()
        .map(|c| {
            let (a, b) = score(c);
            (a, b, c)
        })
        .collect();
    v.sort_by_key(|x| (x.0, x.1));
    v.into_iter().take(CLOSEST).map(|x| x.2).collect()
}

/// Levenshtein distance over characters.
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut prev = row[0];
        row[0] = i + 1;
        for (j, cb) in b.iter().enumerate() {
            let here = row[j + 1];
            row[j + 1] = (prev + usize::from(ca != *cb))
                .min(row[j] + 1)
                .min(here + 1);
            prev = here;
        }
    }
    row[b.len()]
}

#[cfg(test)]
mod tests {
    use super::*;

    fn choices() -> Vec<Choice> {
        [
            ("thermal", "thermal stress"),
            ("nickel_sulfide", "nickel sulfide inclusion"),
            ("none", "no cause recorded yet"),
        ]
        .iter()
        .map(|(c, l)| Choice {
            code: c.to_string(),
            label: l.to_string(),
        })
        .collect()
    }

    #[test]
    fn a_code_or_a_label_in_any_case_is_read() {
        let c = choices();
        let r = |t| resolve_in(&c, Field::Cause, "--cause", t);
        assert_eq!(r("thermal"), Ok("thermal".into()));
        assert_eq!(r("Thermal Stress"), Ok("thermal".into()));
        assert_eq!(r(" NICKEL_SULFIDE "), Ok("nickel_sulfide".into()));
        assert_eq!(r("none"), Ok("none".into()));
        let e = r("nickel").unwrap_err();
        assert_eq!(e.exit_code(), 2);
        assert!(
            e.message()
                .contains("nickel_sulfide (nickel sulfide inclusion)")
                && e.message().contains("thermal (thermal stress)"),
            "{e}"
        );
    }

    #[test]
    fn a_long_list_gives_the_closest() {
        let c: Vec<Choice> = (0..40)
            .map(|i| Choice {
                code: format!("LOT-{i:03}"),
                label: String::new(),
            })
            .collect();
        let e = resolve_in(&c, Field::Lot, "--lot", "lot-0l7").unwrap_err();
        assert!(e.message().contains("closest of the 40"), "{e}");
        assert!(e.message().contains("LOT-017"), "{e}");
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
    }
}
