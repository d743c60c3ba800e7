//! `shardlog mirror` (not built yet: see the open issue).

use super::{CliError, Context};

#[derive(Debug, clap::Args)]
pub struct MirrorArgs {}

pub fn run(_args: MirrorArgs, _ctx: &mut Context<'_>) -> Result<(), CliError> {
    Err(CliError::work("'mirror' is not built yet"))
}
