//! plateau: robustness studies of analytical methods, from one YAML study file to the typeset
//! robustness chapter of a method-validation report.
//!
//! The pipeline runs in one direction, each stage a function of the one before:
//! 1. [`study::load`] — read and check the study file (schema, types, semantic rules);
//! 2. [`design::plan`] — the coded runs, run order and the contrasts with their alias chains;
//! 3. [`measurements::read`] — the measured values, matched to the planned runs by id;
//! 4. [`analysis::analyse`] — effects, percent effects, verdicts;
//! 5. [`report`] — the template context, the Typst source, and the typesetter call.
#![deny(missing_docs)]
// No unwrap or expect that user data could reach: errors are values (tests may unwrap).
#![cfg_attr(not(test), deny(clippy::unwrap_used, clippy::expect_used))]

pub mod analysis;
pub mod batch;
pub mod design;
pub mod diff;
pub mod files;
pub mod follow_up;
pub mod measurements;
pub mod output;
pub mod pipeline;
pub mod plot;
pub mod protocol;
pub mod report;
pub mod starter;
pub mod study;
pub mod verify;
