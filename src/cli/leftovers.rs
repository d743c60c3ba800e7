//! What a killed run left behind, removed by the next one, with a word on stderr.

use std::path::Path;

use super::sanitize_for_terminal;
use crate::store;

/// Remove what an interrupted run left beside `target` (a killed backup, bundle or demo),
/// and say so on stderr, with the space given back.
pub(crate) fn clear_leftovers(target: &Path) {
    for (p, bytes) in store::remove_stale_partials(target) {
        eprintln!(
            "removed the leftover of an interrupted run: {} ({:.1} MB)",
            sanitize_for_terminal(&p.display().to_string(), false),
            bytes as f64 / 1_048_576.0
        );
    }
}
