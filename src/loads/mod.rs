//! Service-load hypotheses: impact, plates, thermal, critical flaw curve. Pure.
