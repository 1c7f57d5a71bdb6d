//! The ANOVA table of a response's fitted model, with pure error from whole runs repeated at
//! one setting, for studies that judge effects by F tests.
//!
//! Each term's sum of squares is the extra sum of squares from dropping that term from the
//! model ("type III"), read from the fit as b²/[(XᵀX)⁻¹]_jj; for an orthogonal balanced design
//! this equals N·E²/4 with N the number of two-level runs. F = MS_term / MS_pure error
//! (METHODS.md, "Replicated designs"; Montgomery, Design and Analysis of Experiments, ch. 6),
//! so F > t² exactly when |E| exceeds the ANOVA criterion's critical effect.

use serde::Serialize;

use super::curvature::Curvature;
use super::mean;
use super::model::Fit;
use super::observations::{BLOCK_TERM, Runs};
use super::quantile::{StatError, f_sf};
use super::summary::ErrorEstimate;
use crate::design::Design;

/// One line of the ANOVA table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AnovaRow {
    /// Source of variation: the term name, or "residual", "lack of fit", "pure error", "total".
    pub source: String,
    /// Sum of squares.
    pub ss: f64,
    /// Degrees of freedom.
    pub df: usize,
    /// Mean square SS/df; `None` when df = 0.
    pub ms: Option<f64>,
    /// F ratio against pure error; `None` when there is no usable pure error.
    pub f: Option<f64>,
    /// Upper-tail p-value of F; `None` with `f`.
    pub p: Option<f64>,
}

/// ANOVA table with the residual split into lack of fit and pure error.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AnovaTable {
    /// One row per model term, in the order given.
    pub terms: Vec<AnovaRow>,
    /// Curvature (nominal runs against the model's prediction at the nominal setting).
    pub curvature: Option<AnovaRow>,
    /// Residual of the full model (= lack of fit + pure error).
    pub residual: AnovaRow,
    /// Lack of fit, tested against pure error.
    pub lack_of_fit: AnovaRow,
    /// Pure error: scatter of whole runs repeated at one setting (replicates, nominal runs).
    pub pure_error: AnovaRow,
    /// Corrected total Σ(y − ȳ)².
    pub total: AnovaRow,
    /// Number of run means used.
    pub n_observations: usize,
    /// Why F and p are missing, if they are.
    pub note: Option<String>,
    /// Conditions the reader must know, e.g. lost orthogonality.
    pub warnings: Vec<String>,
}

/// The sums of squares of a fitted model, as [`table`] needs them.
#[derive(Debug, Clone)]
pub struct Parts {
    /// Type III sum of squares per term (one degree of freedom each), in display order.
    pub terms: Vec<(String, f64)>,
    /// Curvature sum of squares (one degree of freedom), when there are nominal runs.
    pub curvature_ss: Option<f64>,
    /// Residual of the two-level fit and its df.
    pub residual_ss: f64,
    /// Its df.
    pub residual_df: usize,
    /// Scatter of replicated two-level runs and its df (a part of the residual).
    pub replicate_ss: f64,
    /// Its df.
    pub replicate_df: usize,
    /// The nominal runs' error and its df (beside the two-level residual).
    pub nominal_ss: f64,
    /// Its df.
    pub nominal_df: usize,
    /// Corrected total over every run used.
    pub total_ss: f64,
    /// Run means used.
    pub n_observations: usize,
}

/// The ANOVA table: the terms and the curvature tested against pure error (replicate scatter
/// plus nominal-run scatter), the residual split into lack of fit (two-level residual minus
/// replicate scatter) and pure error. Without pure error, F and p are `None` and the note
/// says why.
pub fn table(mut parts: Parts) -> Result<AnovaTable, StatError> {
    // Sums of squares at rounding level (an effect of exactly 0 computed as 1e-15) are zero:
    // printing 1.0 × 10⁻²⁸ would suggest a measured quantity.
    let noise = 1e-12 * parts.total_ss.abs();
    for (_, ss) in &mut parts.terms {
        if ss.abs() <= noise {
            *ss = 0.0;
        }
    }
    if let Some(ss) = parts.curvature_ss.as_mut()
        && ss.abs() <= noise
    {
        *ss = 0.0;
    }
    let df_pe = parts.replicate_df + parts.nominal_df;
    let ss_pe = parts.replicate_ss.max(0.0) + parts.nominal_ss.max(0.0);
    let ms_pe = (df_pe > 0).then(|| ss_pe / df_pe as f64);
    let mut note = None;
    let usable = match ms_pe {
        Some(ms) if ms > 0.0 => Some(ms),
        Some(_) => {
            note = Some(
                "pure error is zero (repeated runs are identical): F and p cannot be computed"
                    .to_string(),
            );
            None
        }
        None => {
            note = Some(
                "no pure error: no run was repeated at one setting, so F and p cannot be computed"
                    .to_string(),
            );
            None
        }
    };
    let test = |ss: f64, df: usize| -> Result<(Option<f64>, Option<f64>), StatError> {
        match usable {
            Some(pe) if df > 0 => {
                let f = ss / df as f64 / pe;
                Ok((Some(f), Some(f_sf(f, df as f64, df_pe as f64)?)))
            }
            _ => Ok((None, None)),
        }
    };
    let row = |source: &str, ss: f64, df: usize| AnovaRow {
        source: source.to_string(),
        ss,
        df,
        ms: (df > 0).then(|| ss / df as f64),
        f: None,
        p: None,
    };
    let tested = |source: &str, ss: f64, df: usize| -> Result<AnovaRow, StatError> {
        let (f, p) = test(ss, df)?;
        Ok(AnovaRow {
            f,
            p,
            ..row(source, ss, df)
        })
    };
    let mut terms = Vec::with_capacity(parts.terms.len());
    for (name, ss) in &parts.terms {
        terms.push(tested(name, *ss, 1)?);
    }
    let curvature = match parts.curvature_ss {
        Some(ss) => Some(tested("curvature", ss, 1)?),
        None => None,
    };
    let ss_lof = (parts.residual_ss - parts.replicate_ss).max(0.0);
    let df_lof = parts.residual_df.saturating_sub(parts.replicate_df);
    let lack_of_fit = tested("lack of fit", ss_lof, df_lof)?;
    Ok(AnovaTable {
        terms,
        curvature,
        residual: row(
            "residual",
            parts.residual_ss + parts.nominal_ss.max(0.0),
            parts.residual_df + parts.nominal_df,
        ),
        lack_of_fit,
        pure_error: row("pure error", ss_pe, df_pe),
        total: row(
            "total",
            parts.total_ss,
            parts.n_observations.saturating_sub(1),
        ),
        n_observations: parts.n_observations,
        note,
        warnings: Vec::new(),
    })
}

/// The ANOVA of the fit: type III sums of squares of the terms, curvature, lack of fit and
/// pure error, F against pure error (Montgomery, Design and Analysis of Experiments, ch. 6).
pub(super) fn from_fit(
    design: &Design,
    fit: &Fit,
    error: &ErrorEstimate,
    curvature: Option<&Curvature>,
    runs: &Runs,
) -> Result<AnovaTable, StatError> {
    let terms: Vec<(String, f64)> = fit
        .terms
        .iter()
        .filter_map(|t| {
            let label = if *t == BLOCK_TERM {
                "block".to_string()
            } else {
                design.label(*t)
            };
            fit.term_ss(*t).map(|ss| (label, ss))
        })
        .collect();
    let all_used: Vec<f64> = runs
        .values
        .iter()
        .zip(&runs.used)
        .filter(|(_, u)| **u)
        .map(|(v, _)| *v)
        .collect();
    let m = mean(&all_used);
    let total: f64 = all_used.iter().map(|v| (v - m).powi(2)).sum();
    table(Parts {
        terms,
        curvature_ss: curvature.map(|c| c.ss_curvature),
        residual_ss: fit.rss,
        residual_df: fit.df_residual(),
        replicate_ss: error.ss_replicates,
        replicate_df: error.df_replicates,
        nominal_ss: error.ss_nominal,
        nominal_df: error.df_nominal,
        total_ss: total,
        n_observations: all_used.len(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::model::Fit;
    use crate::design::Word;
    use serde_json::Value;

    // Reference values from statsmodels OLS + anova_lm(typ=3) and a pandas groupby for pure
    // error: tests/fixtures/stats/make_stats_fixtures.py, function anova(); versions in file.
    // Each observation is taken as one whole run, so the fixtures' replicated observations
    // are replicated runs.
    const FIXTURE: &str = include_str!("../../tests/fixtures/stats/anova.json");

    fn case(name: &str) -> Value {
        let v: Value = serde_json::from_str(FIXTURE).unwrap();
        v["cases"][name].clone()
    }

    fn close(got: f64, want: f64) -> bool {
        (got - want).abs() <= 1e-9 * want.abs().max(1.0)
    }

    /// The fixture's model fitted by [`Fit`] and tabulated by [`table`].
    fn tabulate(c: &Value) -> AnovaTable {
        let names: Vec<String> = c["terms"]
            .as_array()
            .unwrap()
            .iter()
            .map(|t| t.as_str().unwrap().to_string())
            .collect();
        let obs: Vec<(usize, f64)> = c["observations"]
            .as_array()
            .unwrap()
            .iter()
            .map(|o| (o[0].as_u64().unwrap() as usize, o[1].as_f64().unwrap()))
            .collect();
        let col = |name: &str, run: usize| c["columns"][name][run].as_f64().unwrap();
        let columns: Vec<(Word, Vec<f64>)> = names
            .iter()
            .enumerate()
            .map(|(j, n)| {
                (
                    Word(1u64 << j),
                    obs.iter().map(|(run, _)| col(n, *run)).collect(),
                )
            })
            .collect();
        let y: Vec<f64> = obs.iter().map(|o| o.1).collect();
        let fit = Fit::least_squares(&columns, &y).unwrap();
        // Pure error groups observations at identical settings, as the fixture's groupby.
        let mut groups: std::collections::BTreeMap<Vec<u64>, Vec<f64>> = Default::default();
        for (run, v) in &obs {
            let key = names
                .iter()
                .map(|n| (col(n, *run) + 0.0).to_bits())
                .collect();
            groups.entry(key).or_default().push(*v);
        }
        let (mut ss, mut df) = (0.0, 0);
        for g in groups.values().filter(|g| g.len() > 1) {
            let m = g.iter().sum::<f64>() / g.len() as f64;
            ss += g.iter().map(|v| (v - m).powi(2)).sum::<f64>();
            df += g.len() - 1;
        }
        let m = y.iter().sum::<f64>() / y.len() as f64;
        table(Parts {
            terms: names
                .iter()
                .enumerate()
                .map(|(j, n)| (n.clone(), fit.term_ss(Word(1u64 << j)).unwrap()))
                .collect(),
            curvature_ss: None,
            residual_ss: fit.rss,
            residual_df: fit.df_residual(),
            replicate_ss: ss,
            replicate_df: df,
            nominal_ss: 0.0,
            nominal_df: 0,
            total_ss: y.iter().map(|v| (v - m).powi(2)).sum(),
            n_observations: y.len(),
        })
        .unwrap()
    }

    fn check_terms(name: &str) -> AnovaTable {
        let c = case(name);
        let t = tabulate(&c);
        for (row, want) in t.terms.iter().zip(c["table"].as_array().unwrap()) {
            assert_eq!(row.source, want["term"].as_str().unwrap());
            assert!(
                close(row.ss, want["ss"].as_f64().unwrap()),
                "{name} {row:?} vs {want}"
            );
            assert!(
                close(row.f.unwrap(), want["f_pure_error"].as_f64().unwrap()),
                "{row:?}"
            );
            assert!(
                close(row.p.unwrap(), want["p_pure_error"].as_f64().unwrap()),
                "{row:?}"
            );
        }
        assert!(close(
            t.pure_error.ss,
            c["pure_error"]["ss"].as_f64().unwrap()
        ));
        assert_eq!(
            t.pure_error.df as u64,
            c["pure_error"]["df"].as_u64().unwrap()
        );
        t
    }

    #[test]
    fn replicated_2_3_with_a_missing_run_matches_statsmodels_type_3() {
        let name = "replicated_2_3_one_run_missing";
        let t = check_terms(name);
        let c = case(name);
        for (row, key) in [
            (&t.residual, "residual"),
            (&t.lack_of_fit, "lack_of_fit"),
            (&t.total, "total"),
        ] {
            assert!(
                close(row.ss, c[key]["ss"].as_f64().unwrap()),
                "{key} {row:?}"
            );
            assert_eq!(row.df as u64, c[key]["df"].as_u64().unwrap(), "{key}");
        }
        let lof = &c["lack_of_fit"]["test"];
        assert!(close(t.lack_of_fit.f.unwrap(), lof["f"].as_f64().unwrap()));
        assert!(close(t.lack_of_fit.p.unwrap(), lof["p"].as_f64().unwrap()));
    }

    #[test]
    fn balanced_design_ss_equals_n_e_squared_over_4() {
        let t = check_terms("balanced_replicated_2_2");
        // Effect of A by hand from the fixture responses: ȳ(+) = (7.1+6.7+8.8+8.2)/4 = 7.7,
        // ȳ(−) = (5.0+5.4+5.9+6.1)/4 = 5.6, E = 2.1; N = 8 runs: 8·2.1²/4 = 8.82.
        assert!(close(t.terms[0].ss, 8.82));
    }

    #[test]
    fn centre_points_terms_match_statsmodels() {
        let t = check_terms("2_2_with_3_centre_points");
        assert_eq!(t.pure_error.df, 2);
    }

    #[test]
    fn without_repeated_runs_there_is_no_f_and_the_note_says_why() {
        let t = table(Parts {
            terms: vec![("A".into(), 2.0)],
            curvature_ss: None,
            residual_ss: 0.5,
            residual_df: 1,
            replicate_ss: 0.0,
            replicate_df: 0,
            nominal_ss: 0.0,
            nominal_df: 0,
            total_ss: 2.5,
            n_observations: 4,
        })
        .unwrap();
        assert!(t.terms.iter().all(|r| r.f.is_none() && r.p.is_none()));
        assert!(t.note.unwrap().contains("no pure error"));
    }
}
