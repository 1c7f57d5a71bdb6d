//! The stages run in order for one study file: load → plan → read results → analyse.

use std::path::Path;

use crate::analysis::{self, Analysis};
use crate::design::{self, Design};
use crate::study::results::{self, Measurements};
use crate::study::{self, Diagnostics, Study};

/// Everything known about one study after analysis.
#[derive(Debug, Clone)]
pub struct Evaluated {
    /// The checked study.
    pub study: Study,
    /// Its planned design.
    pub design: Design,
    /// Its measurements.
    pub data: Measurements,
    /// The analysis.
    pub analysis: Analysis,
}

/// Checks a study file up to its plan (no results needed).
pub fn plan(path: &Path) -> Result<(Study, Design), Diagnostics> {
    let study = study::load(path)?;
    let design = design::plan(&study)?;
    Ok((study, design))
}

/// Runs the whole analysis of a study file.
pub fn evaluate(path: &Path) -> Result<Evaluated, Diagnostics> {
    let (study, design) = plan(path)?;
    let data = results::read(&study, &design)?;
    let analysis = analysis::analyse(&study, &design, &data)?;
    Ok(Evaluated {
        study,
        design,
        data,
        analysis,
    })
}
