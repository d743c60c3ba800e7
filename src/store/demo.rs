//! The invented demo fleet.

use std::path::Path;

use super::StoreError;

pub const DEFAULT_INCIDENTS: u64 = 400;
pub const DEFAULT_SEED: u64 = 20_260_314;

#[derive(Debug, Clone)]
pub struct DemoOptions {
    pub incidents: u64,
    pub seed: u64,
}

#[derive(Debug, Clone, Default)]
pub struct DemoSummary {
    pub incidents: u64,
    pub examinations: u64,
    pub custody: u64,
    pub attachments: u64,
    pub exposure: u64,
}

pub fn generate(_out: &Path, _o: &DemoOptions) -> Result<DemoSummary, StoreError> {
    Err(StoreError::Database("demo generator not built yet".into()))
}
