//! The terminal interface (not built yet: see the open issue).

use std::path::Path;

/// Open the terminal interface on the database at `db`.
pub fn run(db: &Path) -> anyhow::Result<()> {
    anyhow::bail!(
        "the terminal interface is not built yet (database {}); try 'shardlog --help'",
        db.display()
    )
}
