//! Interaction plots: the model's four cell means of a two-factor interaction, for the
//! interactions that are notable or that the study asks for.

use crate::analysis::{Effect, ResponseAnalysis};
use crate::pipeline::Evaluated;
use crate::plot::{self, PlotError};
use crate::report::format::{Numbers, fixed, percent_effect, setting_of, unit_suffix};
use crate::study::Factor;

use super::{
    Figure, Omitted, basis_text, csv_number, csv_of, level_text, model_intercept, term_effect,
    titled,
};

/// The model's mean of the cell (a, b) (coded ±1) of a two-factor interaction:
/// b0 + a·E_A/2 + b·E_B/2 + a·b·E_AB/2, so that the cell means reproduce E_A, E_B and E_AB of
/// the effects table (Box, Hunter & Hunter 2005, §5.8).
pub(super) fn cell_mean(b0: f64, e_a: f64, e_b: f64, e_ab: f64, a: i8, b: i8) -> f64 {
    let (a, b) = (f64::from(a), f64::from(b));
    b0 + a * e_a / 2.0 + b * e_b / 2.0 + a * b * e_ab / 2.0
}

/// The factor indices of a term mask, lowest first.
fn mask_factors(mask: u64, n: usize) -> Vec<usize> {
    (0..n.min(64)).filter(|i| mask >> i & 1 == 1).collect()
}

/// The term mask of a list of factor ids.
fn ids_mask(study: &crate::study::Study, ids: &[String]) -> u64 {
    ids.iter()
        .filter_map(|id| study.factors.iter().position(|f| &f.id == id))
        .fold(0u64, |m, i| m | 1u64 << i)
}

/// Two-factor interactions worth a picture: estimable (no other term of the orders shown
/// shares the column, so the picture is of this interaction alone) and relevant or
/// significant, or listed under `figures.interactions` in the study. A listed interaction
/// whose column is shared (aliased) or not estimated is not drawn; the chapter says why and
/// names the chain, since four cell means would show the whole chain, not this term.
pub(super) fn interaction_figures(
    evaluated: &Evaluated,
    response: &ResponseAnalysis,
) -> Result<(Vec<Figure>, Vec<Omitted>), PlotError> {
    let study = &evaluated.study;
    let mut drawn = Vec::new();
    let mut omitted = Vec::new();
    let mut wanted: Vec<&Effect> = Vec::new();
    for e in &response.effects {
        let notable = e.relevant == Some(true) || e.significant == Some(true);
        if e.order == 2 && !e.dummy && e.estimable && notable {
            wanted.push(e);
        }
    }
    for &mask in &study.figure_interactions {
        let ids: Vec<&Factor> = mask_factors(mask, study.factors.len())
            .into_iter()
            .filter_map(|i| study.factors.get(i))
            .collect();
        let name = ids
            .iter()
            .map(|f| f.id.as_str())
            .collect::<Vec<_>>()
            .join("×");
        let own = response
            .effects
            .iter()
            .find(|e| e.order == 2 && !e.dummy && ids_mask(study, &e.factors) == mask);
        let sharing = response
            .effects
            .iter()
            .find(|e| e.aliases.iter().any(|chain| ids_mask(study, chain) == mask));
        match (own, sharing) {
            (Some(e), _) if e.estimable => {
                if !wanted.iter().any(|w| std::ptr::eq(*w, e)) {
                    wanted.push(e);
                }
            }
            (Some(e), _) | (None, Some(e)) => omitted.push(Omitted {
                response: response.id.clone(),
                kind: "interaction",
                reason: format!(
                    "No interaction plot of {name} on {}, although the study asks for one: its column is shared with other terms (alias chain {}), so cell means would show the sum of the whole chain, not {name} alone.",
                    response.name, e.label
                ),
            }),
            (None, None) => omitted.push(Omitted {
                response: response.id.clone(),
                kind: "interaction",
                reason: format!(
                    "No interaction plot of {name} on {}, although the study asks for one: the analysis estimates no column for this interaction.",
                    response.name
                ),
            }),
        }
    }
    // Design order of the effects table, whatever order the study listed them in.
    wanted.sort_by_key(|w| {
        response
            .effects
            .iter()
            .position(|e| std::ptr::eq(e, *w))
            .unwrap_or(usize::MAX)
    });
    for e in wanted {
        match interaction_figure(evaluated, response, e)? {
            Ok(f) => drawn.push(f),
            Err(reason) => omitted.push(Omitted {
                response: response.id.clone(),
                kind: "interaction",
                reason,
            }),
        }
    }
    Ok((drawn, omitted))
}

fn interaction_figure(
    evaluated: &Evaluated,
    response: &ResponseAnalysis,
    e: &Effect,
) -> Result<Result<Figure, String>, PlotError> {
    let study = &evaluated.study;
    let design = &evaluated.design;
    let numbers = Numbers::of(study, response);
    let find = |id: &str| study.factors.iter().find(|f| f.id == id);
    let (Some(fa), Some(fb)) = (
        e.factors.first().and_then(|a| find(a)),
        e.factors.get(1).and_then(|b| find(b)),
    ) else {
        return Ok(Err(format!(
            "No interaction plot of {} on {}: it does not name two factors of the study.",
            e.label, response.name
        )));
    };
    let (Some(ea), Some(eb)) = (
        term_effect(response, &[fa.id.as_str()]),
        term_effect(response, &[fb.id.as_str()]),
    ) else {
        return Ok(Err(format!(
            "No interaction plot of {}×{} on {}: the effects table lacks a main effect of {} or {}, which the cell means need.",
            fa.id, fb.id, response.name, fa.id, fb.id
        )));
    };
    let b0 = model_intercept(response);
    let mut cells = [[0.0; 2]; 2];
    let mut rows = Vec::new();
    for (bi, bl) in [-1i8, 1].into_iter().enumerate() {
        for (ai, al) in [-1i8, 1].into_iter().enumerate() {
            let m = cell_mean(b0, ea.effect, eb.effect, e.effect, al, bl);
            cells[bi][ai] = m;
            rows.push(vec![
                setting_of(fa, al),
                setting_of(fb, bl),
                al.to_string(),
                bl.to_string(),
                csv_number(m),
            ]);
        }
    }
    let header_a = format!("{}_level", fa.id);
    let header_b = format!("{}_level", fb.id);
    let coded_a = format!("{}_coded", fa.id);
    let coded_b = format!("{}_coded", fb.id);
    let csv = csv_of(&[&header_a, &header_b, &coded_a, &coded_b, "mean"], &rows);
    let note = if design.complete_factorial {
        "full factorial: no other term shares this column".to_string()
    } else {
        format!(
            "no other term up to order {} shares this column",
            design.structure.alias_order
        )
    };
    let svg = plot::interaction(&plot::Interaction {
        factor_a: fa.name.clone(),
        a_levels: [level_text(fa, -1), level_text(fa, 1)],
        factor_b: fb.name.clone(),
        b_levels: [level_text(fb, -1), level_text(fb, 1)],
        means: cells,
        y_title: titled(response),
        note: Some(note.clone()),
    })?;
    let d = numbers.derived_decimals();
    let alt = format!(
        "Interaction plot of {} and {} on {}: at {} the means are {} and {} for {} and {}; at {} they are {} and {}.",
        fa.name,
        fb.name,
        response.name,
        level_text(fb, -1),
        fixed(cells[0][0], d),
        fixed(cells[0][1], d),
        level_text(fa, -1),
        level_text(fa, 1),
        level_text(fb, 1),
        fixed(cells[1][0], d),
        fixed(cells[1][1], d),
    );
    Ok(Ok(Figure {
        response: response.id.clone(),
        kind: "interaction",
        file: format!("interaction-{}-{}-{}.svg", response.id, fa.id, fb.id),
        svg,
        csv,
        caption: format!(
            "Interaction {}×{} on {}: model means at the four combinations of the two factors' levels{}, intercept ± E({})/2 ± E({})/2 ± E({}×{})/2, so the plot reproduces the tabulated effects ({}; interaction effect {}{}, {} %). Non-parallel lines show the interaction.",
            fa.id,
            fb.id,
            response.name,
            basis_text(response),
            fa.id,
            fb.id,
            fa.id,
            fb.id,
            note,
            numbers.derived(e.effect),
            unit_suffix(response.unit.as_deref()),
            percent_effect(e.percent)
        ),
        alt,
    }))
}
