//! Interaction plot for one two-factor interaction A×B: non-parallel lines show that the
//! effect of A depends on the level of B, which a single effect number cannot show.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::PlotError;
use super::style::{self, INK, LegendEntry, Marker, Mesh, NOTE, NOTE_PX, SECOND};

const FIGURE: &str = "interaction";

/// Input of [`interaction`].
#[derive(Debug, Clone, PartialEq)]
pub struct Interaction {
    /// Name of factor A, used as the x axis title.
    pub factor_a: String,
    /// Tick labels of A at its low and high level, e.g. `["33 °C", "37 °C"]`.
    pub a_levels: [String; 2],
    /// Name of factor B, shown before the legend ("" for none).
    pub factor_b: String,
    /// Legend entries for the B-low and B-high lines, e.g. `["pH 6.8", "pH 7.2"]`.
    pub b_levels: [String; 2],
    /// Mean response, indexed `means[b][a]` (0 = low, 1 = high).
    pub means: [[f64; 2]; 2],
    /// y axis title, e.g. "assay (% label claim)".
    pub y_title: String,
    /// Small note at the bottom, e.g. "aliased with C" (`None` or "" for none).
    pub note: Option<String>,
}

/// Draws the interaction plot: x = factor A at its two levels, one line per level of B
/// through the cell means (B low solid with circles, B high dashed with squares).
///
/// The cell means are the caller's; for a two-level design they are the averages of the
/// runs at each (A, B) combination (Montgomery, Design and Analysis of Experiments, 8th
/// ed. 2013, §6.2).
///
/// Errors: a non-finite mean.
pub fn interaction(input: &Interaction) -> Result<String, PlotError> {
    for (b, row) in input.means.iter().enumerate() {
        for (a, v) in row.iter().enumerate() {
            style::finite(FIGURE, &format!("means[{b}][{a}]"), *v)?;
        }
    }
    let all = input.means.iter().flatten().copied();
    let lo = all.clone().fold(f64::INFINITY, f64::min);
    let hi = all.fold(f64::NEG_INFINITY, f64::max);
    let (y_lo, y_hi) = style::padded(lo, hi, 0.15);
    let y_ticks = style::nice_ticks(y_lo, y_hi, 5, 0.0).ok_or(PlotError::Invalid {
        figure: FIGURE,
        reason: "the means span no usable axis range".to_string(),
    })?;

    let note = input
        .note
        .as_deref()
        .map(style::clean)
        .filter(|n| !n.trim().is_empty());
    let bottom = if note.is_some() { 28 } else { 8 };

    let a_levels = [
        style::clean(&input.a_levels[0]),
        style::clean(&input.a_levels[1]),
    ];
    let x_format = |v: &f64| {
        if (*v - 0.0).abs() < 1e-9 {
            a_levels[0].clone()
        } else if (*v - 1.0).abs() < 1e-9 {
            a_levels[1].clone()
        } else {
            String::new()
        }
    };
    let y_format = |v: &f64| style::format_number(*v, y_ticks.decimals);

    let series = [(INK, Marker::Circle, false), (SECOND, Marker::Square, true)];
    let legend: Vec<LegendEntry> = series
        .iter()
        .zip(&input.b_levels)
        .map(|((color, marker, dashed), text)| LegendEntry {
            text: style::clean(text),
            color: *color,
            marker: *marker,
            line: Some(*dashed),
        })
        .collect();
    let factor_b = style::clean(&input.factor_b);

    let mut buf = String::new();
    {
        let root =
            SVGBackend::with_string(&mut buf, (style::WIDTH, style::HEIGHT)).into_drawing_area();
        root.fill(&style::PAPER).map_err(style::backend(FIGURE))?;
        let mut chart = ChartBuilder::on(&root)
            .margin_top(36)
            .margin_left(8)
            .margin_right(24)
            .margin_bottom(bottom)
            .x_label_area_size(48)
            .y_label_area_size(64)
            .build_cartesian_2d(
                style::axis(-0.3, 1.3, vec![0.0, 1.0]),
                style::axis(y_lo, y_hi, y_ticks.values.clone()),
            )
            .map_err(style::backend(FIGURE))?;
        style::draw_mesh(
            &mut chart,
            &Mesh {
                x_format: &x_format,
                y_format: &y_format,
                x_title: input.factor_a.clone(),
                y_title: input.y_title.clone(),
                x_grid: false,
                y_grid: true,
            },
            FIGURE,
        )?;

        for (row, (color, marker, dashed)) in input.means.iter().zip(series) {
            let p0 = chart.backend_coord(&(0.0, row[0]));
            let p1 = chart.backend_coord(&(1.0, row[1]));
            style::draw_line(&root, &[p0, p1], color, 2, dashed, FIGURE)?;
            style::draw_marker(&root, p0, marker, color, FIGURE)?;
            style::draw_marker(&root, p1, marker, color, FIGURE)?;
        }

        // Legend centred above the plot, led by the name of B.
        let (left, _) = chart.backend_coord(&(-0.3, y_lo));
        let (right, _) = chart.backend_coord(&(1.3, y_lo));
        let lead = if factor_b.trim().is_empty() {
            0
        } else {
            style::text_width(&factor_b, style::LABEL_PX).ceil() as i32 + 10
        };
        let width = lead + style::legend_width(&legend);
        let x = ((left + right) / 2 - width / 2).max(8);
        if lead > 0 {
            let ts = style::anchored(style::LABEL_PX, INK, HPos::Left, VPos::Center);
            style::draw_text(&root, &format!("{factor_b}:"), (x, 16), &ts, FIGURE)?;
        }
        style::draw_legend(&root, x + lead, 16, &legend, FIGURE)?;

        if let Some(n) = &note {
            let ts = style::anchored(NOTE_PX, NOTE, HPos::Left, VPos::Center);
            let h = style::HEIGHT as i32;
            style::draw_text(&root, n, (left, h - 14), &ts, FIGURE)?;
        }
        root.present().map_err(style::backend(FIGURE))?;
    }
    Ok(style::finish(buf))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plot::testutil::{assert_clean_svg, preview};

    /// Invented demo: incubation temperature × buffer pH on a potency assay.
    fn demo() -> Interaction {
        Interaction {
            factor_a: "incubation temperature".into(),
            a_levels: ["33 °C".into(), "37 °C".into()],
            factor_b: "buffer pH".into(),
            b_levels: ["pH 6.8".into(), "pH 7.2".into()],
            means: [[99.1, 100.4], [99.6, 99.2]],
            y_title: "potency (% label claim)".into(),
            note: Some("temperature×pH is aliased with C×D".into()),
        }
    }

    #[test]
    fn interaction_is_clean_svg() {
        let svg = interaction(&demo()).unwrap();
        preview("interaction", &svg);
        assert_clean_svg(&svg);
    }

    #[test]
    fn interaction_shows_levels_legend_and_note() {
        let svg = interaction(&demo()).unwrap();
        for t in [
            "33 °C",
            "37 °C",
            "pH 6.8",
            "pH 7.2",
            "buffer pH:",
            "incubation temperature",
            "temperature×pH is aliased with C×D",
        ] {
            assert!(svg.contains(t), "{t} missing");
        }
    }

    #[test]
    fn interaction_without_note_draws_no_note() {
        let mut d = demo();
        d.note = None;
        let svg = interaction(&d).unwrap();
        assert_clean_svg(&svg);
        assert!(!svg.contains("aliased"));
    }

    #[test]
    fn interaction_same_input_same_bytes() {
        assert_eq!(interaction(&demo()).unwrap(), interaction(&demo()).unwrap());
    }

    #[test]
    fn interaction_rejects_nan_mean() {
        let mut d = demo();
        d.means[1][0] = f64::NAN;
        assert!(matches!(interaction(&d), Err(PlotError::NotFinite { .. })));
    }

    #[test]
    fn interaction_with_equal_means_still_draws() {
        let mut d = demo();
        d.means = [[100.0, 100.0], [100.0, 100.0]];
        assert_clean_svg(&interaction(&d).unwrap());
    }
}
