//! The effects table of one response from its fitted model: each estimable column with its
//! effect, percent effect, alias chain and the factors it names.

use super::Effect;
use super::model::Fit;
use crate::design::{Design, Word};
use crate::study::Study;

pub(super) fn build_effects<'d>(
    study: &Study,
    design: &'d Design,
    fit: &Fit,
    reference: f64,
    percent_defined: bool,
) -> Vec<(&'d crate::design::Contrast, Effect)> {
    let n = fit.n as f64;
    let mut out = Vec::with_capacity(fit.terms.len());
    for contrast in &design.contrasts {
        let (Some(e), Some(c)) = (fit.effect(contrast.term), fit.c(contrast.term)) else {
            continue;
        };
        let dummy = contrast
            .term
            .factors()
            .iter()
            .any(|&j| j >= study.factors.len());
        let label = if contrast.is_clean() {
            design.label(contrast.term)
        } else {
            design.chain_label(contrast)
        };
        out.push((
            contrast,
            Effect {
                factors: ids(design, contrast.term),
                label,
                order: contrast.term.order(),
                effect: e,
                // Against the reference's magnitude, so the percent effect keeps the sign of
                // the effect when the reference is negative.
                percent: percent_defined.then(|| 100.0 * e / reference.abs()),
                se_ratio: (n * c).sqrt(),
                estimable: contrast.is_clean(),
                dummy,
                aliases: contrast
                    .chain
                    .iter()
                    .skip(1)
                    .map(|m| ids(design, m.word))
                    .collect(),
                relevant: None,
                significant: None,
                e_crit: None,
                significance: Vec::new(),
                exceeds_sme: None,
            },
        ));
    }
    out
}

pub(super) fn ids(design: &Design, t: Word) -> Vec<String> {
    t.factors()
        .into_iter()
        .filter_map(|i| design.column_ids.get(i).cloned())
        .collect()
}
