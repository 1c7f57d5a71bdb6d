//! The design decision of each kind: which regular fraction (written generators or the
//! catalogue's choice), which Plackett–Burman size, the Youden–Steiner arrangement, and whether
//! fold-over applies — made from the study's checked design request.
//!
//! The study check runs [`problems`] on every study file (it is handed to the loader as the
//! design rules, so the study stage names no later stage), so that a bad design is reported
//! together with every other problem of the file; [`choose`] then gives the construction the
//! plan builds.

use crate::design::fraction::{self, Fraction};
use crate::design::{catalogue, generator, plackett_burman, word};
use crate::study::{DesignKind, DesignRequest, FieldPath, FieldProblem};

/// How the two-level runs of a design are constructed.
#[derive(Debug, Clone)]
pub enum Construction {
    /// All 2^k combinations.
    Full,
    /// A regular fraction: a fractional factorial, or the Youden–Steiner arrangement.
    Fraction {
        /// The fraction.
        fraction: Fraction,
        /// Its generators as written (or as taken from the catalogue).
        generators: Vec<String>,
        /// Where the generators came from, when chosen from the catalogue.
        catalogue: Option<String>,
    },
    /// A Plackett–Burman array of this many runs.
    PlackettBurman {
        /// Runs (a multiple of 4).
        runs: usize,
    },
    /// The runs as listed in the study file.
    Explicit,
}

/// The problems of a design request that only the design can see: generators that do not
/// parse or do not give the resolution or runs asked for, a Plackett–Burman size that does not
/// exist or is too small, too many factors for the Youden–Steiner design, fold-over of a design
/// that is not of resolution III.
pub fn problems(request: &DesignRequest, factor_ids: &[&str]) -> Vec<FieldProblem> {
    let mut out = Vec::new();
    decide(request, factor_ids, &mut out);
    out
}

/// The construction of a design request, or the problems that prevent it.
pub fn choose(
    request: &DesignRequest,
    factor_ids: &[&str],
) -> Result<Construction, Vec<FieldProblem>> {
    let mut out = Vec::new();
    match decide(request, factor_ids, &mut out) {
        Some(c) if out.is_empty() => Ok(c),
        _ => Err(out),
    }
}

fn complain(
    out: &mut Vec<FieldProblem>,
    field: FieldPath,
    problem: String,
    expected: Option<String>,
) {
    out.push(FieldProblem {
        field,
        problem,
        expected,
    });
}

fn decide(
    request: &DesignRequest,
    factor_ids: &[&str],
    out: &mut Vec<FieldProblem>,
) -> Option<Construction> {
    let at = FieldPath::of(&["design"]);
    let k = factor_ids.len();
    match request.kind {
        DesignKind::FullFactorial => Some(Construction::Full),
        DesignKind::Explicit => Some(Construction::Explicit),
        DesignKind::FractionalFactorial => fractional(request, factor_ids, out),
        DesignKind::PlackettBurman => {
            let dummies = request.dummies;
            let needed = k + dummies;
            let sizes = plackett_burman::SIZES
                .iter()
                .map(ToString::to_string)
                .collect::<Vec<_>>()
                .join(", ");
            match request.runs {
                Some(n) if !plackett_burman::SIZES.contains(&n) => {
                    complain(
                        out,
                        at.key("runs"),
                        format!("there is no Plackett–Burman design of {n} runs here"),
                        Some(format!("expected one of {sizes}")),
                    );
                    None
                }
                Some(n) if needed > n - 1 => {
                    complain(
                        out,
                        at.key("runs"),
                        format!(
                            "{k} factors{} need {needed} columns, more than the {} of a {n}-run Plackett–Burman design",
                            if dummies > 0 {
                                format!(" and {dummies} dummies")
                            } else {
                                String::new()
                            },
                            n - 1
                        ),
                        Some(format!(
                            "expected runs of at least {}",
                            plackett_burman::smallest_size(needed)
                                .map_or_else(|| "(none available)".to_string(), |s| s.to_string())
                        )),
                    );
                    None
                }
                Some(n) => Some(Construction::PlackettBurman { runs: n }),
                None => match plackett_burman::smallest_size(needed) {
                    Some(n) => Some(Construction::PlackettBurman { runs: n }),
                    None => {
                        complain(
                            out,
                            at.key("kind"),
                            format!(
                                "{needed} columns are more than the largest Plackett–Burman design here"
                            ),
                            Some(format!(
                                "expected at most {} columns",
                                plackett_burman::SIZES.last().map_or(0, |n| n - 1)
                            )),
                        );
                        None
                    }
                },
            }
        }
        DesignKind::Youden => {
            if k > 7 {
                complain(
                    out,
                    at.key("kind"),
                    format!(
                        "the Youden–Steiner design has 7 columns, but the study has {k} factors"
                    ),
                    Some("expected at most 7 factors; use kind plackett-burman for more".into()),
                );
                return None;
            }
            let fraction = fraction::youden_steiner();
            Some(Construction::Fraction {
                generators: youden_generator_texts(&fraction),
                fraction,
                catalogue: None,
            })
        }
    }
}

/// The Youden–Steiner generators in letters, e.g. `D = −AB`.
fn youden_generator_texts(fraction: &Fraction) -> Vec<String> {
    fraction
        .generators
        .iter()
        .map(|g| {
            format!(
                "{} = {}{}",
                word::factor_label(g.factor),
                if g.sign < 0 { "−" } else { "" },
                word::letters(g.word)
            )
        })
        .collect()
}

/// A fractional factorial from written generators, or from the catalogue by resolution or
/// run count.
fn fractional(
    request: &DesignRequest,
    ids: &[&str],
    out: &mut Vec<FieldProblem>,
) -> Option<Construction> {
    let at = FieldPath::of(&["design"]);
    let k = ids.len();
    let count = request.runs;
    let (built, generator_texts, catalogue_note) = if let Some(texts) = &request.generators {
        let mut generators = Vec::new();
        let mut ok = true;
        for (i, text) in texts.iter().enumerate() {
            match generator::parse_generator(text, ids) {
                Ok(g) => generators.push(g),
                Err(e) => {
                    ok = false;
                    complain(out, at.key("generators").index(i), e.to_string(), None);
                }
            }
        }
        if !ok {
            return None;
        }
        if generators.is_empty() {
            complain(
                out,
                at.key("generators"),
                "no generators are given".into(),
                Some(
                    "expected at least one, e.g. `E = ABCD`; with none, use kind full-factorial"
                        .into(),
                ),
            );
            return None;
        }
        match Fraction::new(k, generators) {
            Ok(f) => (f, texts.clone(), None),
            Err(e) => {
                complain(out, at.key("generators"), e.to_string(), None);
                return None;
            }
        }
    } else {
        match catalogue::choose(k, request.resolution, count) {
            Ok(entry) => {
                let letters: Vec<String> = (0..k).map(word::factor_label).collect();
                let letter_refs: Vec<&str> = letters.iter().map(String::as_str).collect();
                let generators: Result<Vec<_>, _> = entry
                    .generators
                    .iter()
                    .map(|g| generator::parse_generator(g, &letter_refs))
                    .collect();
                match generators
                    .map_err(|e| e.to_string())
                    .and_then(|g| Fraction::new(k, g).map_err(|e| e.to_string()))
                {
                    Ok(f) => (
                        f,
                        entry.generators.iter().map(|g| (*g).to_string()).collect(),
                        Some(format!(
                            "2^({k}−{}) resolution {} from the catalogue (Montgomery, Design and Analysis of Experiments, Table 8-14)",
                            entry.generators.len(),
                            catalogue::roman(entry.resolution)
                        )),
                    ),
                    Err(e) => {
                        complain(
                            out,
                            at.key("kind"),
                            format!("internal catalogue error: {e}"),
                            None,
                        );
                        return None;
                    }
                }
            }
            Err(e) => {
                let field = if request.resolution.is_some() {
                    at.key("resolution")
                } else if count.is_some() {
                    at.key("runs")
                } else {
                    at.key("kind")
                };
                let expected = if request.resolution.is_none() && count.is_none() {
                    Some("give `generators`, `resolution` or `runs`".to_string())
                } else {
                    None
                };
                complain(out, field, e.to_string(), expected);
                return None;
            }
        }
    };
    if let (Some(wanted), Some(got)) = (request.resolution, built.resolution)
        && got < wanted
        && request.generators.is_some()
    {
        complain(
            out,
            at.key("resolution"),
            format!("the generators give resolution {got}, below the {wanted} asked for"),
            Some("expected generators whose shortest defining word is long enough, or a lower resolution".into()),
        );
    }
    if let Some(n) = count
        && request.generators.is_some()
        && n != built.runs()
    {
        complain(
            out,
            at.key("runs"),
            format!("the generators give {} runs, not {n}", built.runs()),
            Some(format!("expected runs: {} or no `runs`", built.runs())),
        );
    }
    if request.foldover && built.resolution != Some(3) {
        complain(
            out,
            at.key("foldover"),
            format!(
                "fold-over is for resolution III designs; this one has resolution {}",
                built
                    .resolution
                    .map_or("(none)".to_string(), |r| r.to_string())
            ),
            Some("expected `foldover` only with a resolution III fraction".into()),
        );
    }
    Some(Construction::Fraction {
        fraction: built,
        generators: generator_texts,
        catalogue: catalogue_note,
    })
}
