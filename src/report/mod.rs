//! Incident summaries and dispute bundles: PDF, HTML, Markdown, JSON, CSV.
