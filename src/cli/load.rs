//! `shardlog load` (not built yet: see the open issue).

use super::{CliError, Context};

#[derive(Debug, clap::Args)]
pub struct LoadArgs {}

pub fn run(_args: LoadArgs, _ctx: &mut Context<'_>) -> Result<(), CliError> {
    Err(CliError::work("'load' is not built yet"))
}
