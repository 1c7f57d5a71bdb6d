//! Response against run order: shows drift of the instrument or the sample over the
//! sequence, which would bias effects of factors that change late in the run list, and
//! lets the nominal (centre) runs be checked for stability.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::style::{self, ACCENT, INK, LABEL_PX, LegendEntry, Marker, Mesh, NEUTRAL, SECOND};
use super::{PlotError, RefLine};

const FIGURE: &str = "run order";

/// One run.
#[derive(Debug, Clone, PartialEq)]
pub struct Run {
    /// Position in the executed sequence (1, 2, ...).
    pub order: u32,
    /// Measured response.
    pub response: f64,
    /// Whether this is a nominal (centre-point) run.
    pub nominal: bool,
    /// Whether the run was left out of the evaluation: drawn as an open circle, apart from
    /// the runs used, and never joined to the nominal-run line.
    pub excluded: bool,
}

/// A second series: the same run's value as measured, before a correction.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RawPoint {
    /// Position in the executed sequence.
    pub order: u32,
    /// Value as measured.
    pub response: f64,
}

/// A straight drift line `response = intercept + slope · order`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Drift {
    /// Response at order 0.
    pub intercept: f64,
    /// Change of response per run.
    pub slope: f64,
}

/// Input of [`run_order`].
#[derive(Debug, Clone, PartialEq)]
pub struct RunOrder {
    /// All runs, in any order.
    pub runs: Vec<Run>,
    /// Values as measured, drawn as open squares behind the runs; empty when the runs' values
    /// are the measured ones (no correction applied).
    pub raw: Vec<RawPoint>,
    /// Optional fitted drift line, drawn across the run range.
    pub drift: Option<Drift>,
    /// Optional horizontal limits (e.g. specification min and max), labelled.
    pub limits: Vec<RefLine>,
    /// x axis title, e.g. "run order".
    pub x_title: String,
    /// y axis title, e.g. "assay (% label claim)".
    pub y_title: String,
    /// Legend text for design runs, e.g. "design run".
    pub run_label: String,
    /// Legend text for nominal runs, e.g. "nominal run".
    pub nominal_label: String,
    /// Legend text for the drift line, e.g. "drift (least squares)".
    pub drift_label: String,
    /// Legend text for excluded runs, e.g. "excluded run".
    pub excluded_label: String,
    /// Legend text for the values as measured, e.g. "as measured".
    pub raw_label: String,
}

/// Most runs one plot takes (10 replicates of a 2^16 with 100 nominal runs stay below).
const MAX_RUNS: usize = 1 << 20;

/// Above this many points a series is drawn as one vertical stroke per pixel column, from the
/// lowest to the highest value falling in it: every run is still shown at the plot's
/// resolution, and the SVG stays small enough to typeset.
pub const DENSE_RUNS: usize = 20_000;

/// Marker radius in pixels for `n` points along a plot about 560 px wide: the standard 4 px
/// while markers stay apart, smaller when they would merge into a band.
fn marker_radius(n: usize) -> i32 {
    match n {
        0..=200 => 4,
        201..=600 => 3,
        601..=2000 => 2,
        _ => 1,
    }
}

/// Draws every run at (order, response): design runs as dark circles, nominal runs as
/// blue-green diamonds joined in sequence, the drift line dashed and the limits as
/// accent-coloured dashed lines labelled "name = value" at their right end.
///
/// The drift line is the caller's (e.g. a least-squares fit to the nominal runs, a
/// common check for time trends, Vander Heyden et al. 2001, J. Pharm. Biomed. Anal. 24,
/// 723–753).
///
/// Errors: no runs (or more than 10 000), a non-finite response, drift or limit.
pub fn run_order(input: &RunOrder) -> Result<String, PlotError> {
    style::count(FIGURE, "runs", input.runs.len(), MAX_RUNS)?;
    if input.limits.len() > MAX_RUNS {
        return Err(PlotError::Invalid {
            figure: FIGURE,
            reason: format!(
                "{} limits given; expected at most {MAX_RUNS}",
                input.limits.len()
            ),
        });
    }
    if input.raw.len() > MAX_RUNS {
        return Err(PlotError::Invalid {
            figure: FIGURE,
            reason: format!(
                "{} raw values given; expected at most {MAX_RUNS}",
                input.raw.len()
            ),
        });
    }
    for (i, r) in input.runs.iter().enumerate() {
        style::finite(FIGURE, &format!("runs[{i}].response"), r.response)?;
    }
    for (i, r) in input.raw.iter().enumerate() {
        style::finite(FIGURE, &format!("raw[{i}].response"), r.response)?;
    }
    if let Some(d) = &input.drift {
        style::finite(FIGURE, "drift.intercept", d.intercept)?;
        style::finite(FIGURE, "drift.slope", d.slope)?;
    }
    for (i, l) in input.limits.iter().enumerate() {
        style::finite(FIGURE, &format!("limits[{i}].value"), l.value)?;
    }

    let mut runs = input.runs.clone();
    runs.sort_by_key(|r| r.order);
    let first = runs.first().map_or(0, |r| r.order);
    let last = runs.last().map_or(0, |r| r.order);
    let (x_lo, x_hi) = (f64::from(first) - 0.6, f64::from(last) + 0.6);

    let drift_at = |d: &Drift, x: f64| d.intercept + d.slope * x;
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    let mut include = |v: f64| {
        lo = lo.min(v);
        hi = hi.max(v);
    };
    runs.iter().for_each(|r| include(r.response));
    input.raw.iter().for_each(|r| include(r.response));
    input.limits.iter().for_each(|l| include(l.value));
    if let Some(d) = &input.drift {
        include(drift_at(d, f64::from(first)));
        include(drift_at(d, f64::from(last)));
    }
    if !lo.is_finite() || !hi.is_finite() {
        return Err(PlotError::Invalid {
            figure: FIGURE,
            reason: "the drift line leaves the representable range".to_string(),
        });
    }
    let (y_lo, y_hi) = style::padded(lo, hi, 0.1);
    let range_error = || PlotError::Invalid {
        figure: FIGURE,
        reason: "the values span no usable axis range".to_string(),
    };
    let x_ticks = style::nice_ticks(x_lo, x_hi, 10, 1.0).ok_or_else(range_error)?;
    let y_ticks = style::nice_ticks(y_lo, y_hi, 5, 0.0).ok_or_else(range_error)?;
    let x_format = |v: &f64| style::format_number(*v, 0);
    let y_format = |v: &f64| style::format_number(*v, y_ticks.decimals);

    let has_nominal = runs.iter().any(|r| r.nominal && !r.excluded);
    let has_design = runs.iter().any(|r| !r.nominal && !r.excluded);
    let has_excluded = runs.iter().any(|r| r.excluded);
    let radius = marker_radius(runs.len() + input.raw.len());
    let mut legend = Vec::new();
    if has_design {
        legend.push(LegendEntry {
            text: style::clean(&input.run_label),
            color: INK,
            marker: Marker::Circle,
            line: None,
        });
    }
    if has_excluded {
        legend.push(LegendEntry {
            text: style::clean(&input.excluded_label),
            color: ACCENT,
            marker: Marker::HollowCircle,
            line: None,
        });
    }
    if !input.raw.is_empty() {
        legend.push(LegendEntry {
            text: style::clean(&input.raw_label),
            color: NEUTRAL,
            marker: Marker::HollowSquare,
            line: None,
        });
    }
    if has_nominal {
        legend.push(LegendEntry {
            text: style::clean(&input.nominal_label),
            color: SECOND,
            marker: Marker::Diamond,
            line: Some(false),
        });
    }
    if input.drift.is_some() {
        legend.push(LegendEntry {
            text: style::clean(&input.drift_label),
            color: SECOND,
            marker: Marker::None,
            line: Some(true),
        });
    }

    let rows = legend_rows(legend, style::WIDTH as i32 - 24);
    let mut buf = String::new();
    {
        let root =
            SVGBackend::with_string(&mut buf, (style::WIDTH, style::HEIGHT)).into_drawing_area();
        root.fill(&style::PAPER).map_err(style::backend(FIGURE))?;
        let mut chart = ChartBuilder::on(&root)
            .margin_top(if rows.len() > 1 { 56 } else { 36 })
            .margin_left(8)
            .margin_right(18)
            .margin_bottom(8)
            .x_label_area_size(48)
            .y_label_area_size(64)
            .build_cartesian_2d(
                style::axis(x_lo, x_hi, x_ticks.values.clone()),
                style::axis(y_lo, y_hi, y_ticks.values.clone()),
            )
            .map_err(style::backend(FIGURE))?;
        style::draw_mesh(
            &mut chart,
            &Mesh {
                x_format: &x_format,
                y_format: &y_format,
                x_title: input.x_title.clone(),
                y_title: input.y_title.clone(),
                x_grid: true,
                y_grid: true,
            },
            FIGURE,
        )?;
        let (left, _) = chart.backend_coord(&(x_lo, y_lo));
        let (right, _) = chart.backend_coord(&(x_hi, y_lo));

        for l in &input.limits {
            let a = chart.backend_coord(&(x_lo, l.value));
            let b = chart.backend_coord(&(x_hi, l.value));
            style::draw_line(&root, &[a, b], ACCENT, 2, true, FIGURE)?;
            let ts = style::anchored(LABEL_PX, ACCENT, HPos::Right, VPos::Bottom);
            let text = style::line_label(&l.name, l.value);
            style::draw_text(&root, &text, (b.0 - 4, b.1 - 4), &ts, FIGURE)?;
        }
        if let Some(d) = &input.drift {
            let a = chart.backend_coord(&(f64::from(first), drift_at(d, f64::from(first))));
            let b = chart.backend_coord(&(f64::from(last), drift_at(d, f64::from(last))));
            style::draw_line(&root, &[a, b], SECOND, 2, true, FIGURE)?;
        }
        let dense = runs.len() + input.raw.len() > DENSE_RUNS;
        if dense {
            let raw: Vec<(i32, i32)> = input
                .raw
                .iter()
                .map(|r| chart.backend_coord(&(f64::from(r.order), r.response)))
                .collect();
            draw_columns(&root, &raw, NEUTRAL)?;
        } else {
            for r in &input.raw {
                let c = chart.backend_coord(&(f64::from(r.order), r.response));
                style::draw_marker_sized(&root, c, Marker::HollowSquare, NEUTRAL, radius, FIGURE)?;
            }
        }
        let nominal: Vec<(i32, i32)> = runs
            .iter()
            .filter(|r| r.nominal && !r.excluded)
            .map(|r| chart.backend_coord(&(f64::from(r.order), r.response)))
            .collect();
        if nominal.len() > 1 {
            style::draw_line(&root, &nominal, SECOND, 1, false, FIGURE)?;
        }
        if dense {
            let used: Vec<(i32, i32)> = runs
                .iter()
                .filter(|r| !r.nominal && !r.excluded)
                .map(|r| chart.backend_coord(&(f64::from(r.order), r.response)))
                .collect();
            draw_columns(&root, &used, INK)?;
        }
        for r in &runs {
            if dense && !r.nominal && !r.excluded {
                continue;
            }
            let c = chart.backend_coord(&(f64::from(r.order), r.response));
            let (marker, color) = match (r.excluded, r.nominal) {
                (true, _) => (Marker::HollowCircle, ACCENT),
                (false, true) => (Marker::Diamond, SECOND),
                (false, false) => (Marker::Circle, INK),
            };
            let r = if r.excluded { radius + 1 } else { radius };
            style::draw_marker_sized(&root, c, marker, color, r, FIGURE)?;
        }

        for (i, row) in rows.iter().enumerate() {
            let width = style::legend_width(row);
            let x = ((left + right) / 2 - width / 2).max(8);
            style::draw_legend(&root, x, 16 + 20 * i as i32, row, FIGURE)?;
        }
        root.present().map_err(style::backend(FIGURE))?;
    }
    Ok(style::finish(buf))
}

/// The legend entries split into rows no wider than `width` pixels, in order (one row when
/// they fit).
fn legend_rows(entries: Vec<LegendEntry>, width: i32) -> Vec<Vec<LegendEntry>> {
    let mut rows: Vec<Vec<LegendEntry>> = vec![Vec::new()];
    for e in entries {
        if let Some(row) = rows.last_mut() {
            row.push(e);
            if row.len() > 1
                && style::legend_width(row) > width
                && let Some(moved) = row.pop()
            {
                rows.push(vec![moved]);
            }
        }
    }
    rows
}

/// One vertical stroke per pixel column from the lowest to the highest of `points` in it.
fn draw_columns(
    root: &style::Root<'_>,
    points: &[(i32, i32)],
    color: RGBColor,
) -> Result<(), PlotError> {
    let mut columns: std::collections::BTreeMap<i32, (i32, i32)> =
        std::collections::BTreeMap::new();
    for &(x, y) in points {
        let e = columns.entry(x).or_insert((y, y));
        e.0 = e.0.min(y);
        e.1 = e.1.max(y);
    }
    for (x, (lo, hi)) in columns {
        style::draw_line(root, &[(x, lo - 1), (x, hi + 1)], color, 1, false, FIGURE)?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plot::testutil::{assert_clean_svg, preview};

    /// Invented demo: 12 design runs with a nominal run before, between and after.
    fn demo() -> RunOrder {
        let responses = [
            99.8, 100.3, 99.1, 100.6, 99.5, 99.9, 100.8, 99.2, 99.7, 100.1, 99.4, 100.5, 99.6,
            100.0, 99.3,
        ];
        let nominal = [1, 8, 15];
        RunOrder {
            runs: responses
                .iter()
                .enumerate()
                .map(|(i, v)| Run {
                    order: i as u32 + 1,
                    response: *v,
                    nominal: nominal.contains(&(i + 1)),
                    excluded: false,
                })
                .collect(),
            raw: Vec::new(),
            drift: Some(Drift {
                intercept: 99.95,
                slope: -0.03,
            }),
            limits: vec![
                RefLine {
                    name: "min".into(),
                    value: 98.0,
                },
                RefLine {
                    name: "max".into(),
                    value: 102.0,
                },
            ],
            x_title: "run order".into(),
            y_title: "assay (% label claim)".into(),
            run_label: "design run".into(),
            nominal_label: "nominal run".into(),
            drift_label: "drift".into(),
            excluded_label: "excluded run".into(),
            raw_label: "as measured".into(),
        }
    }

    #[test]
    fn run_order_is_clean_svg() {
        let svg = run_order(&demo()).unwrap();
        preview("run_order", &svg);
        assert_clean_svg(&svg);
    }

    #[test]
    fn run_order_shows_legend_and_limit_labels() {
        let svg = run_order(&demo()).unwrap();
        for t in [
            "design run",
            "nominal run",
            "drift",
            "min = 98",
            "max = 102",
            "run order",
            "assay (% label claim)",
        ] {
            assert!(svg.contains(t), "{t} missing");
        }
    }

    #[test]
    fn run_order_marks_nominal_runs_with_diamonds() {
        let svg = run_order(&demo()).unwrap();
        // 3 nominal runs plus the legend sample.
        assert_eq!(svg.matches("<polygon").count(), 4);
    }

    #[test]
    fn run_order_same_input_same_bytes() {
        assert_eq!(run_order(&demo()).unwrap(), run_order(&demo()).unwrap());
    }

    #[test]
    fn run_order_rejects_empty_input() {
        let mut d = demo();
        d.runs.clear();
        assert!(matches!(run_order(&d), Err(PlotError::Empty { .. })));
    }

    #[test]
    fn run_order_rejects_nan_response_and_drift() {
        let mut d = demo();
        d.runs[4].response = f64::NAN;
        assert!(matches!(run_order(&d), Err(PlotError::NotFinite { .. })));
        let mut d = demo();
        d.drift = Some(Drift {
            intercept: 1.0,
            slope: f64::NAN,
        });
        assert!(matches!(run_order(&d), Err(PlotError::NotFinite { .. })));
    }

    #[test]
    fn run_order_without_options_draws() {
        let mut d = demo();
        d.drift = None;
        d.limits.clear();
        let svg = run_order(&d).unwrap();
        assert_clean_svg(&svg);
        assert!(!svg.contains("drift"));
    }

    #[test]
    fn an_excluded_run_is_an_open_circle_named_in_the_legend() {
        let mut d = demo();
        d.runs[3].excluded = true;
        let svg = run_order(&d).unwrap();
        assert_clean_svg(&svg);
        assert!(svg.contains("excluded run"));
        // The run and its legend sample: accent circles with a stroke and no fill.
        assert_eq!(
            svg.matches("fill=\"none\" stroke=\"#B0442C\"").count(),
            2,
            "{svg}"
        );
    }

    #[test]
    fn without_excluded_or_nominal_runs_their_legend_entries_are_absent() {
        let mut d = demo();
        d.runs.iter_mut().for_each(|r| r.nominal = false);
        let svg = run_order(&d).unwrap();
        assert!(!svg.contains("excluded run"));
        assert!(!svg.contains("nominal run"));
    }

    #[test]
    fn sixteen_thousand_runs_draw_with_thin_markers() {
        // A 2^14 full factorial has 16,384 runs.
        let mut d = demo();
        d.runs = (1..=16_384u32)
            .map(|i| Run {
                order: i,
                response: 100.0 + f64::from(i % 7) * 0.1,
                nominal: false,
                excluded: false,
            })
            .collect();
        d.drift = None;
        let svg = run_order(&d).unwrap();
        assert_clean_svg(&svg);
        assert!(svg.contains("r=\"1\""));
    }

    #[test]
    fn sixty_five_thousand_runs_draw_as_one_stroke_per_pixel_column() {
        // A 2^16 full factorial has 65,536 runs; the plot area is under 600 px wide.
        let mut d = demo();
        d.runs = (1..=65_536u32)
            .map(|i| Run {
                order: i,
                response: 100.0 + f64::from(i % 7) * 0.1,
                nominal: false,
                excluded: false,
            })
            .collect();
        d.drift = None;
        let svg = run_order(&d).unwrap();
        assert_clean_svg(&svg);
        assert!(svg.len() < 400_000, "{} bytes", svg.len());
    }

    #[test]
    fn run_order_single_run_draws() {
        let mut d = demo();
        d.runs.truncate(1);
        d.drift = None;
        d.limits.clear();
        assert_clean_svg(&run_order(&d).unwrap());
    }
}
