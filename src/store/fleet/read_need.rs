//! How much of the fleet's reference data a command reads.

/// How much of the reference data a command needs: the codes and lookups (a few hundred
/// records), with the exposure rows (thousands), or with the assets too (one per vehicle or
/// building: tens of thousands on a large fleet, read only for an export or asset types).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub(super) enum Need {
    Codes,
    Exposure,
    Assets,
}

impl Need {
    pub(super) fn entities(self) -> Vec<String> {
        let mut e: Vec<&str> = vec!["lookup", "site", "supplier", "product", "lot"];
        if self >= Need::Exposure {
            e.push("exposure");
        }
        if self >= Need::Assets {
            e.push("asset");
        }
        e.into_iter().map(str::to_string).collect()
    }
}
