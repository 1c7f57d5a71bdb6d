//! Planning figure: the minimum detectable effect of each candidate design against its number
//! of runs, with the declared limit, so a protocol shows at a glance whether the planned
//! design can see an effect as large as the limit and what more runs would buy.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::style::{self, ACCENT, AXIS, INK, LABEL_PX, Marker, Mesh, NEUTRAL, TICK_PX};
use super::{PlotError, RefLine};

const FIGURE: &str = "planning power";

/// One candidate design.
#[derive(Debug, Clone, PartialEq)]
pub struct Candidate {
    /// Short label, e.g. `PB 12` or `2^(5−1) V`.
    pub label: String,
    /// Two-level runs.
    pub runs: usize,
    /// Minimum detectable effect at the target power.
    pub mde: f64,
    /// The design the study plans.
    pub planned: bool,
}

/// Input of [`power`].
#[derive(Debug, Clone, PartialEq)]
pub struct Power {
    /// The candidates (at most 64).
    pub candidates: Vec<Candidate>,
    /// The declared limit in response units, if any.
    pub limit: Option<RefLine>,
    /// y axis title, e.g. "MDE (% label claim)".
    pub y_title: String,
}

const MAX_CANDIDATES: usize = 64;

/// Draws MDE against runs (runs on a log₂ axis), the planned design in the accent colour as
/// a diamond, the others as grey circles, each labelled, and the limit as a dashed line.
///
/// Errors: no candidates (or more than 64), a non-finite or negative MDE, zero runs.
pub fn power(input: &Power) -> Result<String, PlotError> {
    style::count(FIGURE, "candidates", input.candidates.len(), MAX_CANDIDATES)?;
    for (i, c) in input.candidates.iter().enumerate() {
        style::finite(FIGURE, &format!("candidates[{i}].mde"), c.mde)?;
        if c.runs == 0 || c.mde < 0.0 {
            return Err(PlotError::Invalid {
                figure: FIGURE,
                reason: format!("candidates[{i}] has no runs or a negative MDE"),
            });
        }
    }
    if let Some(l) = &input.limit {
        style::finite(FIGURE, "limit.value", l.value)?;
    }
    let log2 = |n: usize| (n as f64).log2();
    let (x_lo, x_hi) = input
        .candidates
        .iter()
        .map(|c| log2(c.runs))
        .fold((f64::MAX, f64::MIN), |(a, b), x| (a.min(x), b.max(x)));
    let (x_lo, x_hi) = (x_lo.floor() - 0.4, x_hi.ceil() + 0.6);
    let y_max = input
        .candidates
        .iter()
        .map(|c| c.mde)
        .chain(input.limit.iter().map(|l| l.value.abs()))
        .fold(0.0, f64::max)
        * 1.15;
    let y_max = if y_max > 0.0 { y_max } else { 1.0 };
    let y_ticks = style::nice_ticks(0.0, y_max, 6, 0.0).ok_or(PlotError::Invalid {
        figure: FIGURE,
        reason: "the MDEs span no usable axis range".to_string(),
    })?;
    let x_keys: Vec<f64> = ((x_lo.ceil() as i64)..=(x_hi.floor() as i64))
        .map(|k| k as f64)
        .collect();
    let x_format = |v: &f64| format!("{}", 2f64.powf(*v).round());
    let y_format = |v: &f64| style::format_number(*v, y_ticks.decimals);

    let mut buf = String::new();
    {
        let root =
            SVGBackend::with_string(&mut buf, (style::WIDTH, style::HEIGHT)).into_drawing_area();
        root.fill(&style::PAPER).map_err(style::backend(FIGURE))?;
        let mut chart = ChartBuilder::on(&root)
            .margin(12)
            .margin_top(24)
            .x_label_area_size(44)
            .y_label_area_size(64)
            .build_cartesian_2d(
                style::axis(x_lo, x_hi, x_keys),
                style::axis(0.0, y_max, y_ticks.values.clone()),
            )
            .map_err(style::backend(FIGURE))?;
        style::draw_mesh(
            &mut chart,
            &Mesh {
                x_format: &x_format,
                y_format: &y_format,
                x_title: "two-level runs (log scale)".into(),
                y_title: input.y_title.clone(),
                x_grid: true,
                y_grid: true,
            },
            FIGURE,
        )?;
        if let Some(l) = &input.limit {
            let (x0, y) = chart.backend_coord(&(x_lo, l.value.abs()));
            let (x1, _) = chart.backend_coord(&(x_hi, l.value.abs()));
            style::draw_line(&root, &[(x0, y), (x1, y)], ACCENT, 2, true, FIGURE)?;
            let ts = style::anchored(LABEL_PX, ACCENT, HPos::Right, VPos::Bottom);
            style::draw_text(
                &root,
                &style::line_label(&l.name, l.value),
                (x1 - 4, y - 3),
                &ts,
                FIGURE,
            )?;
        }
        let label_style = style::anchored(TICK_PX, AXIS, HPos::Left, VPos::Center);
        let planned_style = style::anchored(TICK_PX, INK, HPos::Left, VPos::Center);
        // Labels of candidates with the same runs are stacked so they never overprint.
        let mut used: Vec<(i32, i32)> = Vec::new();
        // The planned design last, so no other marker covers it.
        let ordered = input
            .candidates
            .iter()
            .filter(|c| !c.planned)
            .chain(input.candidates.iter().filter(|c| c.planned));
        for c in ordered {
            let (x, y) = chart.backend_coord(&(log2(c.runs), c.mde));
            let (marker, color) = if c.planned {
                (Marker::Diamond, ACCENT)
            } else {
                (Marker::Circle, NEUTRAL)
            };
            style::draw_marker(&root, (x, y), marker, color, FIGURE)?;
            let mut ty = y;
            while used.iter().any(|(ux, uy)| *ux == x && (uy - ty).abs() < 12) {
                ty -= 12;
            }
            used.push((x, ty));
            let text = if c.planned {
                format!("{} (planned)", style::clean(&c.label))
            } else {
                style::clean(&c.label)
            };
            let ts = if c.planned {
                &planned_style
            } else {
                &label_style
            };
            style::draw_text(&root, &text, (x + 7, ty), ts, FIGURE)?;
        }
        root.present().map_err(style::backend(FIGURE))?;
    }
    Ok(style::finish(buf))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plot::testutil::assert_clean_svg;

    fn demo() -> Power {
        // Invented demo: SE(E) = 2·0.7/√N with t-based MDEs of about 3·SE.
        let mde = |n: usize| 3.1 * 1.4 / (n as f64).sqrt();
        Power {
            candidates: vec![
                Candidate {
                    label: "2^(3−1) III".into(),
                    runs: 4,
                    mde: mde(4),
                    planned: false,
                },
                Candidate {
                    label: "full 2^3".into(),
                    runs: 8,
                    mde: mde(8),
                    planned: true,
                },
                Candidate {
                    label: "PB 12".into(),
                    runs: 12,
                    mde: mde(12),
                    planned: false,
                },
            ],
            limit: Some(RefLine {
                name: "limit".into(),
                value: 2.0,
            }),
            y_title: "MDE (% label claim)".into(),
        }
    }

    #[test]
    fn the_planned_design_is_marked_and_the_limit_drawn() {
        let svg = power(&demo()).unwrap();
        assert_clean_svg(&svg);
        assert!(svg.contains("full 2^3 (planned)"));
        assert!(svg.contains("limit = 2"));
    }

    #[test]
    fn a_negative_mde_is_refused() {
        let mut p = demo();
        p.candidates[0].mde = -1.0;
        assert!(power(&p).is_err());
    }
}
