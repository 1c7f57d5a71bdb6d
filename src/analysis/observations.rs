//! From planned runs and measured values to what the model is fitted on: run means, the runs
//! used, the drift correction's error, the fit itself (fast transform, direct contrasts or
//! least squares with a block column) and the error from runs repeated at one setting.

use std::collections::BTreeMap;

use super::model::Fit;
use super::summary::{ErrorEstimate, Repeatability};
use super::{effects, mean};
use crate::design::{Design, Word};
use crate::measurements::Measurements;
use crate::study::{Levels, Study};

/// The runs of one response as the analysis uses them.
pub(super) struct Runs {
    /// Mean of the determinations per run, design order (NaN when missing).
    pub(super) raw: Vec<f64>,
    /// After drift correction (equal to `raw` without one).
    pub(super) values: Vec<f64>,
    /// Not excluded.
    pub(super) used: Vec<bool>,
}

/// Significance level of the drift test that flags an uncorrected drift (common practice).
pub const DRIFT_ALPHA: f64 = 0.05;

/// The fit's column for the block of follow-up runs: −1 in block 1, +1 in block 2 (a term
/// mask above every factor column, so it never names a factor).
pub const BLOCK_TERM: Word = Word(1 << 63);

/// The used two-level runs (coded rows and values) and the used nominal values.
pub(super) fn split_runs<'a>(
    design: &'a Design,
    runs: &Runs,
) -> (Vec<&'a [i8]>, Vec<f64>, Vec<f64>) {
    let mut rows: Vec<&[i8]> = Vec::new();
    let mut y = Vec::new();
    let mut nominal_y = Vec::new();
    for ((run, v), u) in design.runs.iter().zip(&runs.values).zip(&runs.used) {
        if !*u {
            continue;
        }
        if run.nominal {
            nominal_y.push(*v);
        } else {
            rows.push(run.coded.as_slice());
            y.push(*v);
        }
    }
    (rows, y, nominal_y)
}

/// The fit of the two-level run means: by the fast transform or direct contrasts when the
/// runs used are the orthogonal design as planned, by least squares otherwise.
pub(super) fn fit_model(
    design: &Design,
    rows: &[&[i8]],
    blocks: &[u8],
    y: &[f64],
    excluded: bool,
) -> Option<Fit> {
    if y.is_empty() {
        return None;
    }
    let blocked = blocks.iter().any(|b| *b != 1);
    if !design.least_squares && !excluded && !blocked {
        let all = design
            .complete_factorial
            .then(|| fwht_effects(design, y))
            .flatten();
        let mut terms = Vec::with_capacity(design.contrasts.len());
        let mut values = Vec::with_capacity(design.contrasts.len());
        for c in &design.contrasts {
            let e = match &all {
                Some(all) => all.get(c.term.0 as usize).copied(),
                None => effects::effect(rows, y, c.term),
            };
            if let Some(e) = e {
                terms.push(c.term);
                values.push(e);
            }
        }
        return Some(Fit::orthogonal(y, terms, &values));
    }
    // The block column comes first: a factor column confounded with the blocks is the one
    // left out (and named), never the block.
    let block_column = blocked.then(|| {
        (
            BLOCK_TERM,
            blocks
                .iter()
                .map(|b| if *b == 1 { -1.0 } else { 1.0 })
                .collect::<Vec<f64>>(),
        )
    });
    let columns: Vec<(Word, Vec<f64>)> = block_column
        .into_iter()
        .chain(least_squares_terms(design).into_iter().map(|c| {
            (
                c.term,
                rows.iter()
                    .map(|row| f64::from(effects::column_value(row, c.term)))
                    .collect(),
            )
        }))
        .collect();
    Fit::least_squares(&columns, y)
}

/// Most columns a least-squares fit is offered: Gram–Schmidt costs N·p², so a 2^14 with one
/// run excluded (16,383 columns) would take hours; above this, terms above the second order
/// (then above the first) are left out of the fit and pooled into its residual.
pub const MAX_LEAST_SQUARES_TERMS: usize = 256;

/// The design's columns a least-squares fit is offered, in order (see
/// [`MAX_LEAST_SQUARES_TERMS`]).
pub(super) fn least_squares_terms(design: &Design) -> Vec<&crate::design::Contrast> {
    let mut offered: Vec<&crate::design::Contrast> = design.contrasts.iter().collect();
    for order in [2, 1] {
        if offered.len() > MAX_LEAST_SQUARES_TERMS {
            offered.retain(|c| c.term.order() <= order);
        }
    }
    offered
}

/// The model row of the nominal runs: numeric factors (and dummy columns) at 0, a categorical
/// factor at its nominal level, coded −1 — the level the runs really had.
pub(super) fn nominal_point(study: &Study, design: &Design, fit: &Fit) -> Vec<f64> {
    let level = |j: usize| -> f64 {
        match study.factors.get(j).map(|f| &f.levels) {
            Some(Levels::Categorical { .. }) => -1.0,
            _ => 0.0,
        }
    };
    let _ = design;
    fit.terms
        .iter()
        .map(|t| {
            if *t == BLOCK_TERM {
                -1.0 // nominal runs belong to the first runs
            } else {
                t.factors().into_iter().map(level).product()
            }
        })
        .collect()
}

/// Pooled within-run spread of the determinations of the used runs.
pub(super) fn repeatability(
    design: &Design,
    data: &Measurements,
    r: usize,
    used: &[bool],
) -> Option<Repeatability> {
    let mut ss = 0.0;
    let mut df = 0usize;
    let mut most = 0usize;
    for (run, u) in design.runs.iter().zip(used) {
        if !*u {
            continue;
        }
        let Some(vals) = data.values.get(&run.id).and_then(|v| v.get(r)) else {
            continue;
        };
        most = most.max(vals.len());
        if vals.len() >= 2 {
            let m = mean(vals);
            ss += vals.iter().map(|v| (v - m) * (v - m)).sum::<f64>();
            df += vals.len() - 1;
        }
    }
    (df > 0).then(|| Repeatability {
        determinations: most,
        s: (ss / df as f64).sqrt(),
        df,
    })
}

/// Pure error from whole runs repeated at one setting: replicated two-level runs grouped by
/// their coded levels, and the nominal runs — about the drift line when corrected.
pub(super) fn error_estimate(
    design: &Design,
    runs: &Runs,
    nominal_points: &[(f64, f64)],
    corrected: bool,
) -> ErrorEstimate {
    let mut groups: BTreeMap<(u8, &[i8]), Vec<f64>> = BTreeMap::new();
    for ((run, v), u) in design.runs.iter().zip(&runs.values).zip(&runs.used) {
        if *u && !run.nominal {
            groups
                .entry((run.block, run.coded.as_slice()))
                .or_default()
                .push(*v);
        }
    }
    let (mut ss, mut df_rep) = (0.0, 0usize);
    for g in groups.values().filter(|g| g.len() >= 2) {
        let m = mean(g);
        ss += g.iter().map(|v| (v - m) * (v - m)).sum::<f64>();
        df_rep += g.len() - 1;
    }
    let (ss_nom, df_nom) = nominal_error(nominal_points, corrected);
    let df = df_rep + df_nom;
    let total = ss + ss_nom;
    ErrorEstimate {
        ss: total,
        ss_replicates: ss,
        ss_nominal: ss_nom,
        df,
        df_replicates: df_rep,
        df_nominal: df_nom,
        nominal_about_drift: corrected && df_nom > 0,
        s: (df > 0).then(|| (total / df as f64).sqrt()),
    }
}

/// The nominal runs' share of the error: their spread about their mean (n − 1 df), or, when
/// the values were drift-corrected, about their least-squares line over run order (n − 2 df).
pub(super) fn nominal_error(points: &[(f64, f64)], corrected: bool) -> (f64, usize) {
    let n = points.len();
    if corrected {
        if n < 3 {
            return (0.0, 0);
        }
        let nf = n as f64;
        let xm = points.iter().map(|p| p.0).sum::<f64>() / nf;
        let ym = points.iter().map(|p| p.1).sum::<f64>() / nf;
        let sxx: f64 = points.iter().map(|p| (p.0 - xm).powi(2)).sum();
        if sxx <= 0.0 {
            return (0.0, 0);
        }
        let sxy: f64 = points.iter().map(|p| (p.0 - xm) * (p.1 - ym)).sum();
        let b = sxy / sxx;
        let ss = points
            .iter()
            .map(|p| (p.1 - ym - b * (p.0 - xm)).powi(2))
            .sum();
        (ss, n - 2)
    } else {
        if n < 2 {
            return (0.0, 0);
        }
        let m = points.iter().map(|p| p.1).sum::<f64>() / n as f64;
        (points.iter().map(|p| (p.1 - m).powi(2)).sum(), n - 1)
    }
}

/// Effects of a complete factorial by the fast transform, replicates averaged first.
pub(super) fn fwht_effects(design: &Design, two_level_y: &[f64]) -> Option<Vec<f64>> {
    let n = design.base_runs;
    if n == 0 || two_level_y.len() != n * design.replicates {
        return None;
    }
    let mut y = vec![0.0; n];
    for (i, v) in two_level_y.iter().enumerate() {
        y[i % n] += v / design.replicates as f64;
    }
    effects::all_effects_fwht(&y)
}
