//! Cross-crate and reference checks for `qc-core`.
//!
//! - [`reference`](mod@reference): an independent two-pass `f64` reference written from the
//!   published formulas.
//! - [`support`](mod@support): small helpers the test files share (layouts, record
//!   comparison, the tolerances that follow from the core's Q30 angle tables).
//!
//! The checks themselves are in `tests/`: `properties.rs` (proptest invariants),
//! `differential.rs` (core against the reference), `check_values.rs` (published
//! values) and `open_data.rs` (a day of real station data against numpy).

pub mod reference;
pub mod support;
