//! The stages run in order for one study file: load → plan → read results → analyse.

use std::path::Path;

use crate::analysis::{self, Analysis};
use crate::design::{self, Design};
use crate::files::{Disk, Files};
use crate::measurements::{self, Measurements};
use crate::protocol::deviations::{self, OrderChange, ProtocolRecord};
use crate::study::{self, Diagnostics, Study};

/// Everything known about one study after analysis.
#[derive(Debug, Clone)]
pub struct Evaluated {
    /// The checked study.
    pub study: Study,
    /// Its design, with each run at the position it was performed at (the planned position
    /// unless the results give another).
    pub design: Design,
    /// Its measurements.
    pub data: Measurements,
    /// The analysis.
    pub analysis: Analysis,
    /// Runs performed at another position than planned.
    pub order_changes: Vec<OrderChange>,
    /// The comparison with the approved protocol, when the study names its lock.
    pub protocol: Option<ProtocolRecord>,
}

/// Loads and checks a study file of the working folder (`-`: standard input), with the design
/// stage's rules for its design request; no protocol lock, no plan.
pub fn load(path: &Path) -> Result<Study, Diagnostics> {
    load_in(&Disk, path)
}

/// [`load`] with the study and the files it names read through `files`.
pub fn load_in(files: &dyn Files, path: &Path) -> Result<Study, Diagnostics> {
    study::load::load_from(design::construction::problems, files, path)
}

/// Checks a study file of the working folder up to its plan (no results needed), including
/// its protocol lock.
pub fn plan(path: &Path) -> Result<(Study, Design), Diagnostics> {
    plan_in(&Disk, path)
}

/// [`plan`] with the study and the files it names read through `files`.
pub fn plan_in(files: &dyn Files, path: &Path) -> Result<(Study, Design), Diagnostics> {
    let mut study = load_in(files, path)?;
    study.lock = crate::protocol::read_lock(files, &study).map_err(|d| in_context(d, &study))?;
    let design = design::plan(&study).map_err(|d| in_context(d, &study))?;
    Ok((study, design))
}

/// Runs the whole analysis of a study file of the working folder.
pub fn evaluate(path: &Path) -> Result<Evaluated, Diagnostics> {
    evaluate_in(&Disk, path)
}

/// [`evaluate`] with the study and the files it names read through `files`.
pub fn evaluate_in(files: &dyn Files, path: &Path) -> Result<Evaluated, Diagnostics> {
    let (study, planned) = plan_in(files, path)?;
    let data = measurements::read(files, &study, &planned).map_err(|d| in_context(d, &study))?;
    let (design, order_changes) = executed(&planned, &data);
    let analysis = analysis::analyse(&study, &design, &data).map_err(|d| in_context(d, &study))?;
    let protocol = deviations::record(&study, &order_changes);
    Ok(Evaluated {
        study,
        design,
        data,
        analysis,
        order_changes,
        protocol,
    })
}

/// Problems found after loading, with the study lines they point at (see
/// [`Diagnostic::render`]).
fn in_context(diagnostics: Diagnostics, study: &Study) -> Diagnostics {
    diagnostics.with_source(&study.file_name, &study.text)
}

/// The design as executed: each run at the position the results give it (so that the drift
/// check and every run-order figure use the real sequence), and the runs that moved.
pub fn executed(planned: &Design, data: &Measurements) -> (Design, Vec<OrderChange>) {
    let mut design = planned.clone();
    let mut changes = Vec::new();
    for run in &mut design.runs {
        if let Some(order) = data.executed_order.get(&run.id) {
            changes.push(OrderChange {
                run: run.id.0.clone(),
                planned: run.order,
                executed: *order,
                time: data.times.get(&run.id).cloned(),
            });
            run.order = *order;
        }
    }
    changes.sort_by_key(|c| c.planned);
    (design, changes)
}
