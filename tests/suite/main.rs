//! plateau's integration tests, one binary (one link instead of fourteen): each module is one
//! part of the specification, run against the real `plateau` executable or the library.
//!
//! Modules under `typeset` need typst 0.15 (`bash .ci/ensure-typst` installs it) and read the
//! PDFs it writes; the others need no typesetter.

mod common;

mod bad_inputs;
mod batch;
mod cli;
mod designs;
mod diff;
mod effects_agree;
mod faults;
mod figures;
mod fuzz_smoke;
mod lab_tools;
mod one_model;
mod protocol;
mod report;
mod templates;
mod verify;
