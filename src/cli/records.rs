//! Record commands: init, import, export, list, show, verify, backup, demo (not built yet).

use super::{CliError, Context};

#[derive(Debug, clap::Args)]
pub struct InitArgs {}

pub fn init(_args: InitArgs, _ctx: &mut Context<'_>) -> Result<(), CliError> {
    Err(CliError::work("'init' is not built yet"))
}

#[derive(Debug, clap::Args)]
pub struct ImportArgs {}

pub fn import(_args: ImportArgs, _ctx: &mut Context<'_>) -> Result<(), CliError> {
    Err(CliError::work("'import' is not built yet"))
}

#[derive(Debug, clap::Args)]
pub struct ExportArgs {}

pub fn export(_args: ExportArgs, _ctx: &mut Context<'_>) -> Result<(), CliError> {
    Err(CliError::work("'export' is not built yet"))
}

#[derive(Debug, clap::Args)]
pub struct ListArgs {}

pub fn list(_args: ListArgs, _ctx: &mut Context<'_>) -> Result<(), CliError> {
    Err(CliError::work("'list' is not built yet"))
}

#[derive(Debug, clap::Args)]
pub struct ShowArgs {}

pub fn show(_args: ShowArgs, _ctx: &mut Context<'_>) -> Result<(), CliError> {
    Err(CliError::work("'show' is not built yet"))
}

#[derive(Debug, clap::Args)]
pub struct VerifyArgs {
    /// Check a dispute bundle folder instead (and compare it with the database if present).
    #[arg(long, value_name = "DIR")]
    pub bundle: Option<std::path::PathBuf>,
}

pub fn verify(args: VerifyArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    if let Some(dir) = &args.bundle {
        return super::report::verify_bundle_cmd(dir, ctx);
    }
    Err(CliError::work("'verify' is not built yet"))
}

#[derive(Debug, clap::Args)]
pub struct BackupArgs {}

pub fn backup(_args: BackupArgs, _ctx: &mut Context<'_>) -> Result<(), CliError> {
    Err(CliError::work("'backup' is not built yet"))
}

#[derive(Debug, clap::Args)]
pub struct DemoArgs {}

pub fn demo(_args: DemoArgs, _ctx: &mut Context<'_>) -> Result<(), CliError> {
    Err(CliError::work("'demo' is not built yet"))
}
