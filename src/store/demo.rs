//! The invented demo fleet.
