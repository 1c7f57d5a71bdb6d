//! plateau: robustness studies of analytical methods, from one YAML study file to the typeset
//! robustness chapter of a method-validation report.
//!
//! The pipeline runs in one direction; each stage uses only the stages before it:
//! 1. [`files`] — where inputs come from: the working folder, a git revision, memory;
//! 2. [`study`] — the study file read and checked (schema, types, semantic rules), with
//!    positioned diagnostics;
//! 3. [`protocol`] — the approved plan: the lock of the planning content and the deviations
//!    of the study from it;
//! 4. [`design`] — the coded runs, the run order and the contrasts with their alias chains;
//! 5. [`measurements`] — the measured values, matched to the planned runs by id;
//! 6. [`analysis`] — one fitted model per response: effects, criteria, verdicts, ranges;
//! 7. [`pipeline`] — the stages above run in order for one study file;
//! 8. [`plot`] — the figures as SVG, pure functions of the numbers they draw;
//! 9. [`report`] — the chapter's words, tables and figures, the Typst source, the typesetter
//!    call and the record of inputs.
//!
//! On top of the pipeline: [`batch`] (many studies, current or stale), [`diff`] (two versions
//! of a study), [`verify`] (the reference cases of an installation), [`follow_up`] (fold-over
//! runs) and [`starter`] (a new study file); [`output`] is the one writer of every file and
//! folder plateau produces. The `plateau` executable (`src/cli/`) parses the command line and
//! calls these.
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
