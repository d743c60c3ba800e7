//! `shardlog materials` (not built yet: see the open issue).

use super::{CliError, Context};

#[derive(Debug, clap::Args)]
pub struct MaterialsArgs {}

pub fn run(_args: MaterialsArgs, _ctx: &mut Context<'_>) -> Result<(), CliError> {
    Err(CliError::work("'materials' is not built yet"))
}
