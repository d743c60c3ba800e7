//! `shardlog stats` (not built yet: see the open issue).

use super::{CliError, Context};

#[derive(Debug, clap::Args)]
pub struct StatsArgs {}

pub fn run(_args: StatsArgs, _ctx: &mut Context<'_>) -> Result<(), CliError> {
    Err(CliError::work("'stats' is not built yet"))
}
