//! Least-squares ANOVA of a replicated two-level design with pure error, for studies that
//! judge effects by F tests instead of a critical effect.
//!
//! Each term's sum of squares is the extra sum of squares from dropping that term from the
//! full model ("type III"); for an orthogonal balanced design this equals N·E²/4 with N the
//! number of factorial determinations. F = MS_term / MS_pure error (METHODS.md, "Replicated
//! designs"; Montgomery, Design and Analysis of Experiments, ch. 6).

use nalgebra::{DMatrix, DVector};
use serde::Serialize;

use super::quantile::{StatError, f_sf};

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
    /// Residual of the full model (= lack of fit + pure error).
    pub residual: AnovaRow,
    /// Lack of fit, tested against pure error.
    pub lack_of_fit: AnovaRow,
    /// Pure error: scatter of determinations at identical settings.
    pub pure_error: AnovaRow,
    /// Corrected total Σ(y − ȳ)².
    pub total: AnovaRow,
    /// Number of determinations used.
    pub n_observations: usize,
    /// Of those, determinations in two-level (non-nominal) runs; set by the caller, who knows
    /// which runs are nominal (0 until then).
    pub n_observations_two_level: usize,
    /// Why F and p are missing, if they are.
    pub note: Option<String>,
    /// Conditions the reader must know, e.g. lost orthogonality.
    pub warnings: Vec<String>,
}

/// ANOVA of individual determinations by least squares, F tests against pure error.
///
/// - `model_columns`: one `(name, values)` per term, `values[run]` the coded ±1 level or
///   product of levels (0 for centre runs); the intercept is added here.
/// - `observations`: `(run index, y)`, several per run allowed (determinations).
/// - `n_runs`: number of runs in the design; every column has that length.
///
/// Pure error groups determinations whose model rows are identical, so replicated runs and
/// centre points pool together; pass every main-factor column so that different settings
/// never share a row. SS_term = RSS(model without term) − RSS(full model), df = 1;
/// F = MS_term/MS_pe with ν_pe = Σ(n_g − 1); lack of fit = residual − pure error, tested
/// the same way. With no replicated setting (ν_pe = 0) F and p are `None` and `note` says
/// so. A warning is added when XᵀX is not diagonal (orthogonality lost, e.g. a missing run).
pub fn anova(
    model_columns: &[(String, Vec<f64>)],
    observations: &[(usize, f64)],
    n_runs: usize,
) -> Result<AnovaTable, StatError> {
    validate(model_columns, observations, n_runs)?;
    let n = observations.len();
    let k = model_columns.len();
    let p = k + 1;
    if n < p {
        return Err(StatError::TooFew {
            what: "determinations for the model terms plus intercept",
            got: n,
            need: p,
        });
    }

    let x = DMatrix::from_fn(n, p, |i, j| {
        if j == 0 {
            1.0
        } else {
            // Indices were validated above.
            model_columns[j - 1].1[observations[i].0]
        }
    });
    let y = DVector::from_iterator(n, observations.iter().map(|o| o.1));

    let rss_full = rss(&x).map(|f| f(&y)).ok_or_else(|| {
        StatError::RankDeficient(format!(
            "{p} columns (intercept and {k} terms) but fewer independent ones among {n} determinations"
        ))
    })?;

    let mean = y.mean();
    let ss_total: f64 = y.iter().map(|v| (v - mean) * (v - mean)).sum();
    let df_res = n - p;

    let (ss_pe, df_pe) = pure_error(model_columns, observations);
    let ss_lof = (rss_full - ss_pe).max(0.0);
    let df_lof = df_res.saturating_sub(df_pe);
    let ms_pe = if df_pe > 0 {
        Some(ss_pe / df_pe as f64)
    } else {
        None
    };

    let mut note = None;
    let usable_pe = match ms_pe {
        Some(ms) if ms > 0.0 => Some(ms),
        Some(_) => {
            note = Some(
                "pure error is zero (replicates are identical): F and p cannot be computed"
                    .to_string(),
            );
            None
        }
        None => {
            note = Some(
                "no pure error: no setting was replicated, so F and p cannot be computed"
                    .to_string(),
            );
            None
        }
    };

    let test = |ms: f64, df: usize| -> Result<(Option<f64>, Option<f64>), StatError> {
        match usable_pe {
            Some(pe) if df > 0 => {
                let f = ms / pe;
                Ok((Some(f), Some(f_sf(f, df as f64, df_pe as f64)?)))
            }
            _ => Ok((None, None)),
        }
    };

    let mut terms = Vec::with_capacity(k);
    for (j, (name, _)) in model_columns.iter().enumerate() {
        let reduced = x.clone().remove_column(j + 1);
        // Dropping a column from a full-rank matrix keeps it full rank.
        let rss_red = rss(&reduced)
            .map(|f| f(&y))
            .ok_or_else(|| StatError::RankDeficient(format!("the model without {name}")))?;
        let ss = (rss_red - rss_full).max(0.0);
        let (f, pv) = test(ss, 1)?;
        terms.push(AnovaRow {
            source: name.clone(),
            ss,
            df: 1,
            ms: Some(ss),
            f,
            p: pv,
        });
    }

    let (f_lof, p_lof) = if df_lof > 0 {
        test(ss_lof / df_lof as f64, df_lof)?
    } else {
        (None, None)
    };
    let row = |source: &str, ss: f64, df: usize| AnovaRow {
        source: source.to_string(),
        ss,
        df,
        ms: if df > 0 { Some(ss / df as f64) } else { None },
        f: None,
        p: None,
    };
    let mut lack_of_fit = row("lack of fit", ss_lof, df_lof);
    lack_of_fit.f = f_lof;
    lack_of_fit.p = p_lof;

    Ok(AnovaTable {
        terms,
        residual: row("residual", rss_full, df_res),
        lack_of_fit,
        pure_error: row("pure error", ss_pe, df_pe),
        total: row("total", ss_total, n - 1),
        n_observations: n,
        n_observations_two_level: 0,
        note,
        warnings: orthogonality_warnings(&x, model_columns),
    })
}

fn validate(
    cols: &[(String, Vec<f64>)],
    obs: &[(usize, f64)],
    n_runs: usize,
) -> Result<(), StatError> {
    if obs.is_empty() {
        return Err(StatError::TooFew {
            what: "determinations",
            got: 0,
            need: 1,
        });
    }
    for (i, (name, values)) in cols.iter().enumerate() {
        if values.len() != n_runs {
            return Err(StatError::Shape(format!(
                "model column {name} has {} values, expected one per run ({n_runs})",
                values.len()
            )));
        }
        if let Some(v) = values.iter().find(|v| !v.is_finite()) {
            return Err(StatError::Shape(format!(
                "model column {name} holds a non-finite value ({v})"
            )));
        }
        if cols[..i].iter().any(|(other, _)| other == name) {
            return Err(StatError::Shape(format!("model term {name} appears twice")));
        }
    }
    for &(run, y) in obs {
        if run >= n_runs {
            return Err(StatError::Shape(format!(
                "determination refers to run index {run}, expected 0 to {}",
                n_runs.saturating_sub(1)
            )));
        }
        if !y.is_finite() {
            return Err(StatError::NotFinite {
                what: "a determination",
                value: y,
            });
        }
    }
    Ok(())
}

/// Residual sum of squares of y on the columns of `x`, or `None` if `x` is rank deficient.
fn rss(x: &DMatrix<f64>) -> Option<impl Fn(&DVector<f64>) -> f64 + '_> {
    let svd = x.clone().svd(true, true);
    let max = svd.singular_values.max();
    let tol = max * f64::EPSILON * (x.nrows().max(x.ncols()) as f64) * 10.0;
    if max.is_nan() || max <= 0.0 || svd.singular_values.iter().any(|s| *s <= tol) {
        return None;
    }
    Some(move |y: &DVector<f64>| {
        // Projection onto the column space through U: RSS = |y|² − |Uᵀy|², but the direct
        // residual is better conditioned for the small RSS of a good fit.
        match svd.solve(y, tol) {
            Ok(beta) => (y - x * beta).norm_squared(),
            Err(_) => f64::NAN,
        }
    })
}

/// Pure error: Σ over groups of identical model rows of Σ(y − ȳ_g)², df Σ(n_g − 1).
fn pure_error(cols: &[(String, Vec<f64>)], obs: &[(usize, f64)]) -> (f64, usize) {
    // + 0.0 turns −0.0 into 0.0 so that the bit patterns compare equal.
    let key =
        |run: usize| -> Vec<u64> { cols.iter().map(|(_, v)| (v[run] + 0.0).to_bits()).collect() };
    let mut groups: Vec<(Vec<u64>, Vec<f64>)> = Vec::new();
    for &(run, y) in obs {
        let k = key(run);
        match groups.iter_mut().find(|(g, _)| *g == k) {
            Some((_, ys)) => ys.push(y),
            None => groups.push((k, vec![y])),
        }
    }
    let mut ss = 0.0;
    let mut df = 0;
    for (_, ys) in &groups {
        let m = ys.iter().sum::<f64>() / ys.len() as f64;
        ss += ys.iter().map(|y| (y - m) * (y - m)).sum::<f64>();
        df += ys.len() - 1;
    }
    (ss, df)
}

fn orthogonality_warnings(x: &DMatrix<f64>, cols: &[(String, Vec<f64>)]) -> Vec<String> {
    let xtx = x.transpose() * x;
    let name = |j: usize| {
        if j == 0 {
            "intercept".to_string()
        } else {
            cols[j - 1].0.clone()
        }
    };
    let mut pairs = Vec::new();
    for i in 0..xtx.nrows() {
        for j in (i + 1)..xtx.ncols() {
            let scale = (xtx[(i, i)] * xtx[(j, j)]).sqrt();
            if xtx[(i, j)].abs() > 1e-9 * scale {
                pairs.push(format!("{}–{}", name(i), name(j)));
            }
        }
    }
    if pairs.is_empty() {
        Vec::new()
    } else {
        vec![format!(
            "orthogonality lost (XᵀX is not diagonal: {}), e.g. a run is missing; effects are \
             correlated and each sum of squares is adjusted for all other terms (type III)",
            pairs.join(", ")
        )]
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::Value;

    // Reference values from statsmodels OLS + anova_lm(typ=3) and a pandas groupby for pure
    // error: tests/fixtures/stats/make_stats_fixtures.py, function anova(); versions in file.
    const FIXTURE: &str = include_str!("../../tests/fixtures/stats/anova.json");

    fn case(name: &str) -> Value {
        let v: Value = serde_json::from_str(FIXTURE).unwrap();
        v["cases"][name].clone()
    }

    type Inputs = (Vec<(String, Vec<f64>)>, Vec<(usize, f64)>, usize);

    fn inputs(c: &Value) -> Inputs {
        let cols = c["terms"]
            .as_array()
            .unwrap()
            .iter()
            .map(|t| {
                let t = t.as_str().unwrap().to_string();
                let v = c["columns"][&t]
                    .as_array()
                    .unwrap()
                    .iter()
                    .map(|x| x.as_f64().unwrap())
                    .collect();
                (t, v)
            })
            .collect();
        let obs = c["observations"]
            .as_array()
            .unwrap()
            .iter()
            .map(|o| (o[0].as_u64().unwrap() as usize, o[1].as_f64().unwrap()))
            .collect();
        (cols, obs, c["n_runs"].as_u64().unwrap() as usize)
    }

    fn close(got: f64, want: f64) -> bool {
        (got - want).abs() <= 1e-9 * want.abs().max(1.0)
    }

    fn check_against_fixture(name: &str) -> AnovaTable {
        let c = case(name);
        let (cols, obs, n_runs) = inputs(&c);
        let t = anova(&cols, &obs, n_runs).unwrap();
        assert_eq!(t.terms.len(), c["table"].as_array().unwrap().len());
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
        for (row, key) in [
            (&t.residual, "residual"),
            (&t.pure_error, "pure_error"),
            (&t.lack_of_fit, "lack_of_fit"),
            (&t.total, "total"),
        ] {
            assert!(
                close(row.ss, c[key]["ss"].as_f64().unwrap()),
                "{name} {key} {row:?}"
            );
            assert_eq!(
                row.df as u64,
                c[key]["df"].as_u64().unwrap(),
                "{name} {key}"
            );
        }
        t
    }

    #[test]
    fn replicated_2_3_with_a_missing_run_matches_statsmodels_type_3() {
        let t = check_against_fixture("replicated_2_3_one_run_missing");
        let c = case("replicated_2_3_one_run_missing");
        let lof = &c["lack_of_fit"]["test"];
        assert!(close(t.lack_of_fit.f.unwrap(), lof["f"].as_f64().unwrap()));
        assert!(close(t.lack_of_fit.p.unwrap(), lof["p"].as_f64().unwrap()));
    }

    #[test]
    fn missing_run_warns_that_orthogonality_is_lost() {
        let t = check_against_fixture("replicated_2_3_one_run_missing");
        assert_eq!(t.warnings.len(), 1);
        assert!(
            t.warnings[0].contains("orthogonality lost"),
            "{:?}",
            t.warnings
        );
    }

    #[test]
    fn centre_points_give_pure_error_and_match_statsmodels() {
        let t = check_against_fixture("2_2_with_3_centre_points");
        assert_eq!(t.pure_error.df, 2);
        assert!(t.warnings.is_empty(), "{:?}", t.warnings);
    }

    #[test]
    fn balanced_design_ss_equals_n_e_squared_over_4() {
        let t = check_against_fixture("balanced_replicated_2_2");
        // Effect of A by hand from the fixture responses: ȳ(+) = (7.1+6.7+8.8+8.2)/4 = 7.7,
        // ȳ(−) = (5.0+5.4+5.9+6.1)/4 = 5.6, E = 2.1; N = 8 determinations: 8·2.1²/4 = 8.82.
        assert!(close(t.terms[0].ss, 8.82));
    }

    #[test]
    fn unreplicated_design_has_no_f_and_says_why() {
        let cols = vec![
            ("A".to_string(), vec![-1.0, 1.0, -1.0, 1.0]),
            ("B".to_string(), vec![-1.0, -1.0, 1.0, 1.0]),
        ];
        let obs = vec![(0, 1.0), (1, 2.0), (2, 1.5), (3, 2.8)];
        let t = anova(&cols, &obs, 4).unwrap();
        assert_eq!(t.pure_error.df, 0);
        assert!(t.terms.iter().all(|r| r.f.is_none() && r.p.is_none()));
        assert!(t.note.unwrap().contains("no pure error"));
    }

    #[test]
    fn aliased_columns_are_rank_deficient() {
        let a = vec![-1.0, 1.0, -1.0, 1.0];
        let cols = vec![("A".to_string(), a.clone()), ("A again".to_string(), a)];
        let obs = vec![(0, 1.0), (1, 2.0), (2, 1.5), (3, 2.8), (0, 1.1)];
        assert!(matches!(
            anova(&cols, &obs, 4),
            Err(StatError::RankDeficient(_))
        ));
    }

    #[test]
    fn bad_run_index_and_column_length_are_errors() {
        let cols = vec![("A".to_string(), vec![-1.0, 1.0])];
        assert!(matches!(
            anova(&cols, &[(0, 1.0), (5, 2.0)], 2),
            Err(StatError::Shape(_))
        ));
        assert!(matches!(
            anova(&cols, &[(0, 1.0), (1, 2.0)], 3),
            Err(StatError::Shape(_))
        ));
        assert!(matches!(
            anova(&cols, &[(0, f64::NAN), (1, 2.0)], 2),
            Err(StatError::NotFinite { .. })
        ));
        assert!(anova(&cols, &[], 2).is_err());
    }
}
