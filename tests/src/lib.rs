//! Shared helpers for the cross-crate and reference checks.
