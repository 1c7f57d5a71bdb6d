//! The comparison itself: two evaluated studies in, every difference a reviewer must see out.
//!
//! Inputs are compared exactly (they are what the user wrote); computed numbers are compared
//! with [`RELATIVE_TOLERANCE`] so floating-point noise in the last bits is not reported as a
//! change.

use std::collections::BTreeMap;

use serde::Serialize;
use serde_json::Value;

use super::{
    AddedRemoved, Change, EffectChange, EffectValue, Inputs, NumberChange, Outputs,
    RELATIVE_TOLERANCE, ResultChange, SentenceChanges, StudyDiff, VerdictFlip, Version,
};
use crate::analysis::{Effect, ResponseAnalysis};
use crate::pipeline::Evaluated;
use crate::report::conclusion;
use crate::study::{Levels, Study};

/// Compares an old and a new evaluated version of a study.
///
/// Inputs: study metadata, factors (added, removed, changed levels, ranges, units), design
/// (kind, generators, runs, centre points, replicates, seed), acceptance criteria (limits,
/// methods, alpha), exclusions and every result per run and response. Outputs: each effect
/// whose value or percent effect moved by more than [`RELATIVE_TOLERANCE`] of its scale, each
/// verdict that flipped, each criterion number (E_crit, ME, SME, PSE, s_E, df) that changed, and
/// the conclusion sentences ([`conclusion::sentences`]) removed or added. Identical inputs give
/// an empty diff ([`StudyDiff::is_empty`]).
pub fn compare(old: &Evaluated, new: &Evaluated) -> StudyDiff {
    StudyDiff {
        old: version(old),
        new: version(new),
        inputs: inputs(old, new),
        outputs: outputs(old, new),
        reason: None,
    }
}

fn version(e: &Evaluated) -> Version {
    let file = e.study.path.display().to_string();
    Version {
        label: file.clone(),
        file,
        id: e.study.info.id.clone(),
        title: e.study.info.title.clone(),
        date: e.study.info.date.clone(),
        sha256: e.study.sha256.clone(),
        data_file: e.data.data_file.clone(),
    }
}

/// A value as JSON, `null` when it cannot be represented (never fails the diff).
fn json<T: Serialize>(value: &T) -> Value {
    serde_json::to_value(value).unwrap_or(Value::Null)
}

type Fields = Vec<(String, Value)>;

fn field(name: &str, value: Value) -> (String, Value) {
    (name.to_string(), value)
}

/// The fields of `old` and `new` that differ, in order of first appearance; a field missing on
/// one side counts as `null` there.
pub(super) fn changed_fields(item: &str, old: &Fields, new: &Fields) -> Vec<Change> {
    let mut names: Vec<&str> = old.iter().map(|(n, _)| n.as_str()).collect();
    for (n, _) in new {
        if !names.contains(&n.as_str()) {
            names.push(n);
        }
    }
    let get = |fields: &Fields, name: &str| {
        fields
            .iter()
            .find(|(n, _)| n == name)
            .map_or(Value::Null, |(_, v)| v.clone())
    };
    names
        .into_iter()
        .filter_map(|name| {
            let (o, n) = (get(old, name), get(new, name));
            (o != n).then(|| Change {
                item: item.to_string(),
                field: name.to_string(),
                old: o,
                new: n,
            })
        })
        .collect()
}

/// Ids in `new` but not `old` (new order), and in `old` but not `new` (old order).
pub(super) fn added_removed(old: &[String], new: &[String]) -> AddedRemoved {
    AddedRemoved {
        added: new.iter().filter(|id| !old.contains(id)).cloned().collect(),
        removed: old.iter().filter(|id| !new.contains(id)).cloned().collect(),
    }
}

fn metadata(s: &Study) -> Fields {
    let i = &s.info;
    let r = &s.report;
    vec![
        field("id", json(&i.id)),
        field("title", json(&i.title)),
        field("method", json(&i.method)),
        field("analyst", json(&i.analyst)),
        field("date", json(&i.date)),
        field("objective", json(&i.objective)),
        field("source", json(&s.source)),
        field("source-reference", json(&i.source_reference)),
        field("report section", json(&r.section)),
        field("report document", json(&r.document)),
        field("report version", json(&r.version)),
        field("report header", json(&r.header)),
        field("report footer", json(&r.footer)),
        field("report logo", json(&r.logo)),
        field("notes", json(&s.notes)),
        field("protocol", json(&s.protocol)),
    ]
}

fn factor_fields(f: &crate::study::Factor) -> Fields {
    let mut out = vec![field("name", json(&f.name)), field("unit", json(&f.unit))];
    match &f.levels {
        Levels::Numeric { nominal, low, high } => {
            out.push(field("low", json(low)));
            out.push(field("nominal", json(nominal)));
            out.push(field("high", json(high)));
        }
        Levels::Categorical {
            nominal,
            alternative,
        } => {
            out.push(field("nominal level", json(nominal)));
            out.push(field("alternative level", json(alternative)));
        }
    }
    out.push(field("justification", json(&f.justification)));
    out.push(field("routine", json(&f.routine.map(|(a, _)| a))));
    out.push(field("distribution", json(&f.routine.map(|(_, d)| d))));
    out
}

fn design_fields(e: &Evaluated) -> Fields {
    let d = &e.analysis.design;
    let r = &e.study.design;
    let factor_order: Vec<&str> = e.study.factors.iter().map(|f| f.id.as_str()).collect();
    vec![
        field("kind", json(&d.kind)),
        field("factor order", json(&factor_order)),
        field("runs", json(&d.counts.runs)),
        field("two-level runs", json(&d.counts.two_level_runs)),
        field("center points", json(&d.counts.center_points)),
        field(
            "nominal runs",
            json(&format!("{:?}", r.nominal_runs).to_lowercase()),
        ),
        field("replicates", json(&d.counts.replicates)),
        field("seed", json(&d.seed)),
        field("generators", json(&d.structure.generators)),
        field("catalogue", json(&d.structure.catalogue)),
        field("resolution", json(&d.structure.resolution)),
        field("youden", json(&d.structure.youden)),
        field("foldover", json(&d.structure.folded)),
        field("dummies", json(&d.dummies)),
        field("least squares", json(&d.least_squares)),
        field("alias order", json(&d.structure.alias_order)),
        field("drift correction", json(&r.drift_correction)),
    ]
}

/// The coded settings of each run of an explicit design, by factor id (explicit designs are
/// edited run by run, so a changed run must be named).
fn explicit_settings(e: &Evaluated) -> BTreeMap<String, Value> {
    e.design
        .runs
        .iter()
        .map(|run| {
            let settings: BTreeMap<&str, i8> = e
                .design
                .column_ids
                .iter()
                .map(String::as_str)
                .zip(run.coded.iter().copied())
                .collect();
            (run.id.0.clone(), json(&settings))
        })
        .collect()
}

fn response_fields(r: &crate::study::Response) -> Fields {
    vec![
        field("name", json(&r.name)),
        field("unit", json(&r.unit)),
        field("percent-of", json(&r.percent_of)),
        field("decimals", json(&r.decimals)),
        field("role", json(&r.role)),
    ]
}

/// The declared acceptance rules of response `index`, one field per number or word.
fn acceptance_fields(s: &Study, index: usize) -> Fields {
    let mut out = Vec::new();
    let nth = |name: &str, k: usize| {
        if k == 0 {
            name.to_string()
        } else {
            format!("{name} {}", k + 1)
        }
    };
    for (k, l) in s.limits.iter().filter(|l| l.response == index).enumerate() {
        out.push((nth("effect-limit", k), json(&l.limit)));
        out.push((nth("effect-limit unit", k), json(&l.unit)));
        out.push((nth("effect-limit basis", k), json(&l.basis)));
    }
    for (k, rule) in s
        .significance
        .iter()
        .filter(|r| r.response == index)
        .enumerate()
    {
        let terms: Vec<&str> = rule.terms.iter().map(|(t, _)| t.as_str()).collect();
        out.push((nth("significance method", k), json(&rule.method)));
        out.push((nth("alpha", k), json(&rule.alpha)));
        out.push((nth("s", k), json(&rule.s)));
        out.push((nth("df", k), json(&rule.df)));
        out.push((nth("source of s", k), json(&rule.source)));
        out.push((nth("determinations", k), json(&rule.determinations)));
        out.push((nth("negligible terms", k), json(&terms)));
    }
    for (k, lim) in s
        .suitability
        .iter()
        .filter(|l| l.response == index)
        .enumerate()
    {
        out.push((nth("min", k), json(&lim.min)));
        out.push((nth("max", k), json(&lim.max)));
    }
    out
}

fn response_index(s: &Study, id: &str) -> Option<usize> {
    s.responses.iter().position(|r| r.id == id)
}

fn inputs(old: &Evaluated, new: &Evaluated) -> Inputs {
    let (os, ns) = (&old.study, &new.study);
    let mut out = Inputs {
        study: changed_fields("", &metadata(os), &metadata(ns)),
        design: changed_fields("", &design_fields(old), &design_fields(new)),
        ..Inputs::default()
    };

    let ids = |s: &Study| s.factors.iter().map(|f| f.id.clone()).collect::<Vec<_>>();
    out.factors_added_removed = added_removed(&ids(os), &ids(ns));
    for nf in &ns.factors {
        if let Some(of) = os.factors.iter().find(|f| f.id == nf.id) {
            out.factors.extend(changed_fields(
                &nf.id,
                &factor_fields(of),
                &factor_fields(nf),
            ));
        }
    }

    if old.design.kind == crate::study::DesignKind::Explicit
        && new.design.kind == crate::study::DesignKind::Explicit
    {
        let (o, n) = (explicit_settings(old), explicit_settings(new));
        for (run, nv) in &n {
            if let Some(ov) = o.get(run)
                && ov != nv
            {
                out.design.push(Change {
                    item: run.clone(),
                    field: "coded settings".to_string(),
                    old: ov.clone(),
                    new: nv.clone(),
                });
            }
        }
    }

    let rids = |s: &Study| s.responses.iter().map(|r| r.id.clone()).collect::<Vec<_>>();
    out.responses_added_removed = added_removed(&rids(os), &rids(ns));
    for (ni, nr) in ns.responses.iter().enumerate() {
        if let Some(oi) = response_index(os, &nr.id) {
            let or = &os.responses[oi];
            out.responses.extend(changed_fields(
                &nr.id,
                &response_fields(or),
                &response_fields(nr),
            ));
            out.acceptance.extend(changed_fields(
                &nr.id,
                &acceptance_fields(os, oi),
                &acceptance_fields(ns, ni),
            ));
        }
    }

    let excluded = |s: &Study| -> Fields {
        s.excluded
            .iter()
            .map(|e| {
                // A run excluded for one response only is its own entry (`3 (assay)`).
                let key = match e.response.and_then(|r| s.responses.get(r)) {
                    Some(r) => format!("{} ({})", e.run.0, r.id),
                    None => e.run.0.clone(),
                };
                (key, json(&e.reason))
            })
            .collect()
    };
    for c in changed_fields("", &excluded(os), &excluded(ns)) {
        out.excluded.push(Change {
            item: c.field,
            field: "excluded".to_string(),
            old: c.old,
            new: c.new,
        });
    }

    let (oruns, nruns) = (&old.data.values, &new.data.values);
    let keys = |m: &BTreeMap<crate::study::RunId, Vec<Vec<f64>>>| -> Vec<String> {
        run_sorted(m.keys().map(|k| k.0.clone()).collect())
    };
    out.runs_added_removed = added_removed(&keys(oruns), &keys(nruns));
    for run in keys(nruns) {
        let id = crate::study::RunId(run.clone());
        let (Some(ov), Some(nv)) = (oruns.get(&id), nruns.get(&id)) else {
            continue;
        };
        for (ni, nr) in ns.responses.iter().enumerate() {
            let Some(oi) = response_index(os, &nr.id) else {
                continue;
            };
            let a = ov.get(oi).cloned().unwrap_or_default();
            let b = nv.get(ni).cloned().unwrap_or_default();
            if !same_values(&a, &b) {
                out.results.push(ResultChange {
                    run: run.clone(),
                    response: nr.id.clone(),
                    old: a,
                    new: b,
                });
            }
        }
    }
    out
}

/// Run ids in numeric order when they are numbers (run 2 before run 10), else as text.
fn run_sorted(mut ids: Vec<String>) -> Vec<String> {
    ids.sort_by(|a, b| match (a.parse::<u64>(), b.parse::<u64>()) {
        (Ok(x), Ok(y)) => x.cmp(&y),
        (Ok(_), Err(_)) => std::cmp::Ordering::Less,
        (Err(_), Ok(_)) => std::cmp::Ordering::Greater,
        (Err(_), Err(_)) => a.cmp(b),
    });
    ids
}

/// Measured values compared exactly (they are data as written), NaN equal to NaN.
fn same_values(a: &[f64], b: &[f64]) -> bool {
    a.len() == b.len()
        && a.iter()
            .zip(b)
            .all(|(x, y)| x == y || (x.is_nan() && y.is_nan()))
}

/// True when `a` and `b` agree within [`RELATIVE_TOLERANCE`] of max(|a|, |b|, `scale`).
///
/// `scale` is the size of the quantity's natural unit (the response's reference for effects):
/// an effect that is zero up to rounding in both versions (1e-15 of the response) must not
/// count as changed just because its own relative change is large.
pub(super) fn same_number(a: f64, b: f64, scale: f64) -> bool {
    if a.is_nan() || b.is_nan() {
        return a.is_nan() && b.is_nan();
    }
    if !a.is_finite() || !b.is_finite() {
        return a == b;
    }
    let size = a
        .abs()
        .max(b.abs())
        .max(if scale.is_finite() { scale.abs() } else { 0.0 });
    (a - b).abs() <= RELATIVE_TOLERANCE * size
}

fn same_option(a: Option<f64>, b: Option<f64>, scale: f64) -> bool {
    match (a, b) {
        (Some(x), Some(y)) => same_number(x, y, scale),
        (None, None) => true,
        _ => false,
    }
}

fn outputs(old: &Evaluated, new: &Evaluated) -> Outputs {
    let mut out = Outputs::default();
    for nr in &new.analysis.responses {
        let Some(or) = old.analysis.responses.iter().find(|r| r.id == nr.id) else {
            continue;
        };
        response_outputs(or, nr, &mut out);
    }
    let before = conclusion::sentences(&old.study, &old.analysis);
    let after = conclusion::sentences(&new.study, &new.analysis);
    out.conclusion = sentence_changes(&before, &after);
    out
}

fn response_outputs(or: &ResponseAnalysis, nr: &ResponseAnalysis, out: &mut Outputs) {
    let scale = or.reference.abs().max(nr.reference.abs());
    let value = |e: &Effect| EffectValue {
        effect: e.effect,
        percent: e.percent.unwrap_or(f64::NAN),
    };
    let flip = |effect: Option<&str>, verdict: &str, a: Option<bool>, b: Option<bool>| {
        (a != b).then(|| VerdictFlip {
            response: nr.id.clone(),
            effect: effect.map(str::to_string),
            verdict: verdict.to_string(),
            old: a,
            new: b,
        })
    };

    let mut effect_flips = Vec::new();
    for ne in &nr.effects {
        match or.effects.iter().find(|e| e.label == ne.label) {
            Some(oe) => {
                // Percent effects live on a scale of 100 (% of the reference).
                if !same_number(oe.effect, ne.effect, scale)
                    || !same_number(
                        oe.percent.unwrap_or(f64::NAN),
                        ne.percent.unwrap_or(f64::NAN),
                        100.0,
                    )
                {
                    out.effects.push(EffectChange {
                        response: nr.id.clone(),
                        label: ne.label.clone(),
                        old: Some(value(oe)),
                        new: Some(value(ne)),
                    });
                }
                effect_flips.extend(flip(Some(&ne.label), "relevant", oe.relevant, ne.relevant));
                effect_flips.extend(flip(
                    Some(&ne.label),
                    "significant",
                    oe.significant,
                    ne.significant,
                ));
            }
            None => out.effects.push(EffectChange {
                response: nr.id.clone(),
                label: ne.label.clone(),
                old: None,
                new: Some(value(ne)),
            }),
        }
    }
    for oe in or
        .effects
        .iter()
        .filter(|oe| !nr.effects.iter().any(|e| e.label == oe.label))
    {
        out.effects.push(EffectChange {
            response: nr.id.clone(),
            label: oe.label.clone(),
            old: Some(value(oe)),
            new: None,
        });
    }
    out.verdicts.extend(effect_flips);
    out.verdicts
        .extend(flip(None, "robust", or.verdict.robust, nr.verdict.robust));
    out.verdicts.extend(flip(
        None,
        "no significant effect",
        or.verdict.no_significant_effect,
        nr.verdict.no_significant_effect,
    ));
    out.verdicts.extend(flip(
        None,
        "worst case meets limit",
        or.worst_case.as_ref().and_then(|w| w.meets),
        nr.worst_case.as_ref().and_then(|w| w.meets),
    ));

    if !same_number(or.reference, nr.reference, 0.0) {
        out.numbers.push(NumberChange {
            response: nr.id.clone(),
            criterion: "percent reference".to_string(),
            quantity: format!("reference ({})", nr.reference_kind),
            old: Some(or.reference),
            new: Some(nr.reference),
        });
    }
    // Criteria are paired by method and by their position among those of the same method, so
    // a criterion added in front of another does not shift every later pair.
    let mut seen: BTreeMap<&str, usize> = BTreeMap::new();
    for nc in &nr.criteria {
        let k = seen.entry(nc.method.as_str()).or_insert(0);
        let Some(oc) = or.criteria.iter().filter(|c| c.method == nc.method).nth(*k) else {
            *k += 1;
            continue;
        };
        *k += 1;
        let quantities = [
            ("s_E", oc.se, nc.se),
            ("df", oc.df, nc.df),
            ("E_crit", oc.e_crit, nc.e_crit),
            ("PSE", oc.pse, nc.pse),
            ("ME", oc.me, nc.me),
            ("SME", oc.sme, nc.sme),
            ("limit", oc.limit, nc.limit),
        ];
        for (quantity, a, b) in quantities {
            if !same_option(a, b, 0.0) {
                out.numbers.push(NumberChange {
                    response: nr.id.clone(),
                    criterion: nc.method.clone(),
                    quantity: quantity.to_string(),
                    old: a,
                    new: b,
                });
            }
        }
    }
}

/// Sentences of `old` missing from `new` and of `new` missing from `old`, as multisets: a
/// sentence that appears twice in one version and once in the other is listed once.
pub(super) fn sentence_changes(old: &[String], new: &[String]) -> SentenceChanges {
    fn count(list: &[String]) -> BTreeMap<&str, usize> {
        let mut m: BTreeMap<&str, usize> = BTreeMap::new();
        for s in list {
            *m.entry(s.as_str()).or_default() += 1;
        }
        m
    }
    let only = |list: &[String], other: &[String]| -> Vec<String> {
        let mut budget = count(other);
        let mut out = Vec::new();
        for s in list {
            match budget.get_mut(s.as_str()) {
                Some(n) if *n > 0 => *n -= 1,
                _ => out.push(s.clone()),
            }
        }
        out
    };
    SentenceChanges {
        removed: only(old, new),
        added: only(new, old),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn strings(items: &[&str]) -> Vec<String> {
        items.iter().map(|s| (*s).to_string()).collect()
    }

    #[test]
    fn rounding_noise_in_an_effect_is_not_a_change() {
        // −2.3 computed two ways differs in the last bits (about 4e-15); the response is ~100.
        assert!(same_number(-2.3000000000000043, -2.3, 100.0));
    }

    #[test]
    fn an_effect_that_is_zero_up_to_rounding_stays_unchanged() {
        // Both near-zero effects are noise on a response of size 100: their own relative
        // change is 100 %, but against the response's scale it is nothing.
        assert!(same_number(-7.1e-15, 3.0e-15, 100.0));
    }

    #[test]
    fn a_change_in_the_last_data_decimal_is_a_change() {
        assert!(!same_number(-2.30, -2.25, 100.0));
    }

    #[test]
    fn nan_equals_nan_but_not_a_number() {
        assert!(same_number(f64::NAN, f64::NAN, 1.0));
        assert!(!same_number(f64::NAN, 1.0, 1.0));
    }

    #[test]
    fn a_value_present_on_one_side_only_is_a_change() {
        assert!(!same_option(Some(1.0), None, 1.0));
        assert!(same_option(None, None, 1.0));
    }

    #[test]
    fn sentences_are_compared_as_lists_ignoring_order() {
        let c = sentence_changes(&strings(&["a", "b", "c"]), &strings(&["c", "a", "d"]));
        assert_eq!(c.removed, strings(&["b"]));
        assert_eq!(c.added, strings(&["d"]));
    }

    #[test]
    fn a_repeated_sentence_is_counted() {
        let c = sentence_changes(&strings(&["a", "a"]), &strings(&["a"]));
        assert_eq!(c.removed, strings(&["a"]));
        assert!(c.added.is_empty());
    }

    #[test]
    fn a_field_missing_on_one_side_is_null_there() {
        let old = vec![field("unit", json(&"°C"))];
        let new: Fields = vec![];
        let c = changed_fields("temp", &old, &new);
        assert_eq!(c.len(), 1);
        assert_eq!(c[0].new, Value::Null);
        assert_eq!(c[0].item, "temp");
    }

    #[test]
    fn equal_fields_give_no_change() {
        let f = vec![field("nominal", json(&35.0))];
        assert!(changed_fields("temp", &f, &f).is_empty());
    }

    #[test]
    fn added_and_removed_ids_keep_file_order() {
        let a = added_removed(
            &strings(&["temp", "ph", "flow"]),
            &strings(&["flow", "lot", "temp"]),
        );
        assert_eq!(a.added, strings(&["lot"]));
        assert_eq!(a.removed, strings(&["ph"]));
    }

    #[test]
    fn numeric_run_ids_sort_as_numbers() {
        assert_eq!(
            run_sorted(strings(&["10", "2", "1"])),
            strings(&["1", "2", "10"])
        );
    }
}
