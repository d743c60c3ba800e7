//! Import and export (JSON and CSV).
