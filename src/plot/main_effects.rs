//! Main-effects plot: one small panel per factor on a shared y scale, so the steepest
//! line is the largest effect at a glance and no panel exaggerates a small one.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::PlotError;
use super::style::{self, INK, LegendEntry, Marker, Mesh, REFERENCE, TITLE_PX};

const FIGURE: &str = "main effects";

/// One factor's panel.
#[derive(Debug, Clone, PartialEq)]
pub struct MainEffectPanel {
    /// Factor name, the panel title.
    pub factor: String,
    /// Tick text at the low level, e.g. "33 °C".
    pub low_label: String,
    /// Tick text at the high level, e.g. "37 °C".
    pub high_label: String,
    /// Mean response of the runs at the low level.
    pub mean_low: f64,
    /// Mean response of the runs at the high level.
    pub mean_high: f64,
}

/// Input of [`main_effects`].
#[derive(Debug, Clone, PartialEq)]
pub struct MainEffects {
    /// Panels, drawn left to right and then row by row in this order.
    pub panels: Vec<MainEffectPanel>,
    /// Mean of all runs, drawn as a dashed line in every panel.
    pub grand_mean: f64,
    /// Legend text for the grand-mean line, e.g. "grand mean" (shown as "name = value").
    pub grand_mean_label: String,
    /// y axis title, e.g. "assay (% label claim)".
    pub y_title: String,
}

/// Most panels one figure takes (a Plackett–Burman design for 47 factors has 48 runs).
const MAX_PANELS: usize = 48;
/// Left strip holding the rotated y title.
const STRIP: u32 = 26;
/// Tick label room left of the first panel of each row.
const Y_LABELS: u32 = 46;
const RIGHT: u32 = 12;
const TOP: u32 = 8;
/// Room under the panels for the grand-mean legend.
const BOTTOM: u32 = 30;
const ROW_HEIGHT: u32 = 190;
/// Space above each panel for its title.
const PANEL_TITLE: u32 = 24;

/// Draws the main-effects plot: for each factor a line from the mean response at its
/// low level to the mean at its high level (the main effect is the difference, Box,
/// Hunter & Hunter, Statistics for Experimenters, 2nd ed. 2005, §5.8), all panels on
/// the same y range, with the grand mean dashed.
///
/// Up to 4 panels per row (3 when level texts are long), further factors wrap to new
/// rows; the figure grows in height, not in width.
///
/// Errors: no panels (or more than 48), a non-finite mean.
pub fn main_effects(input: &MainEffects) -> Result<String, PlotError> {
    style::count(FIGURE, "factors", input.panels.len(), MAX_PANELS)?;
    let gm = style::finite(FIGURE, "grand_mean", input.grand_mean)?;
    let mut lo = gm;
    let mut hi = gm;
    for (i, p) in input.panels.iter().enumerate() {
        for (name, v) in [("mean_low", p.mean_low), ("mean_high", p.mean_high)] {
            let v = style::finite(FIGURE, &format!("panels[{i}].{name}"), v)?;
            lo = lo.min(v);
            hi = hi.max(v);
        }
    }
    let (y_lo, y_hi) = style::padded(lo, hi, 0.12);
    let y_ticks = style::nice_ticks(y_lo, y_hi, 5, 0.0).ok_or(PlotError::Invalid {
        figure: FIGURE,
        reason: "the means span no usable axis range".to_string(),
    })?;

    let n = input.panels.len();
    let longest = input
        .panels
        .iter()
        .flat_map(|p| [p.low_label.chars().count(), p.high_label.chars().count()])
        .max()
        .unwrap_or(0);
    let per_row = if longest > 8 { 3 } else { 4 };
    let cols = n.min(per_row);
    let rows = n.div_ceil(cols);
    let height = (TOP + BOTTOM + ROW_HEIGHT * rows as u32).max(260);
    let panel_w = (style::WIDTH - STRIP - Y_LABELS - RIGHT) / cols as u32;

    let y_format = |v: &f64| style::format_number(*v, y_ticks.decimals);
    let no_format = |_: &f64| String::new();

    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, (style::WIDTH, height)).into_drawing_area();
        root.fill(&style::PAPER).map_err(style::backend(FIGURE))?;

        // One y title for the whole figure, centred on the panel rows.
        let title_style = style::font(TITLE_PX, INK)
            .transform(FontTransform::Rotate270)
            .pos(plotters::style::text_anchor::Pos::new(
                HPos::Center,
                VPos::Top,
            ));
        let rows_mid = (TOP + ROW_HEIGHT * rows as u32 / 2) as i32;
        style::draw_text(&root, &input.y_title, (4, rows_mid), &title_style, FIGURE)?;

        for (i, p) in input.panels.iter().enumerate() {
            let (r, c) = (i / cols, i % cols);
            let x = if c == 0 {
                STRIP
            } else {
                STRIP + Y_LABELS + panel_w * c as u32
            };
            let w = if c == 0 { Y_LABELS + panel_w } else { panel_w };
            let y = TOP + ROW_HEIGHT * r as u32;
            let area = root.clone().shrink((x, y), (w, ROW_HEIGHT));

            let levels = [style::clean(&p.low_label), style::clean(&p.high_label)];
            let x_format = |v: &f64| {
                if v.abs() < 1e-9 {
                    levels[0].clone()
                } else if (v - 1.0).abs() < 1e-9 {
                    levels[1].clone()
                } else {
                    String::new()
                }
            };
            let mut chart = ChartBuilder::on(&area)
                .margin_top(PANEL_TITLE)
                .margin_left(0)
                .margin_right(10)
                .margin_bottom(4)
                .x_label_area_size(30)
                .y_label_area_size(if c == 0 { Y_LABELS } else { 0 })
                .build_cartesian_2d(
                    style::axis(-0.45, 1.45, vec![0.0, 1.0]),
                    style::axis(y_lo, y_hi, y_ticks.values.clone()),
                )
                .map_err(style::backend(FIGURE))?;
            style::draw_mesh(
                &mut chart,
                &Mesh {
                    x_format: &x_format,
                    y_format: if c == 0 { &y_format } else { &no_format },
                    x_title: String::new(),
                    y_title: String::new(),
                    x_grid: false,
                    y_grid: true,
                },
                FIGURE,
            )?;

            let (left, top) = chart.backend_coord(&(-0.45, y_hi));
            let (right, bottom) = chart.backend_coord(&(1.45, y_lo));
            // A light frame keeps panels without a y axis from floating.
            root.draw(&Rectangle::new(
                [(left, top), (right, bottom)],
                style::GRID.stroke_width(1),
            ))
            .map_err(style::backend(FIGURE))?;

            let g0 = chart.backend_coord(&(-0.45, gm));
            let g1 = chart.backend_coord(&(1.45, gm));
            style::draw_line(&root, &[g0, g1], REFERENCE, 1, true, FIGURE)?;

            let p0 = chart.backend_coord(&(0.0, p.mean_low));
            let p1 = chart.backend_coord(&(1.0, p.mean_high));
            style::draw_line(&root, &[p0, p1], INK, 2, false, FIGURE)?;
            style::draw_marker(&root, p0, Marker::Circle, INK, FIGURE)?;
            style::draw_marker(&root, p1, Marker::Circle, INK, FIGURE)?;

            let ts = style::anchored(TITLE_PX, INK, HPos::Center, VPos::Center);
            let tx = (left + right) / 2;
            style::draw_text(
                &root,
                &p.factor,
                (tx, top - PANEL_TITLE as i32 / 2),
                &ts,
                FIGURE,
            )?;
        }

        let legend = [LegendEntry {
            text: style::line_label(&input.grand_mean_label, gm),
            color: REFERENCE,
            marker: Marker::None,
            line: Some(true),
        }];
        let lx = style::WIDTH as i32 - RIGHT as i32 - 10 - style::legend_width(&legend);
        let ly = height as i32 - BOTTOM as i32 / 2;
        style::draw_legend(&root, lx, ly, &legend, FIGURE)?;
        root.present().map_err(style::backend(FIGURE))?;
    }
    Ok(style::finish(buf))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plot::testutil::{assert_clean_svg, preview};

    fn panel(f: &str, lo: &str, hi: &str, a: f64, b: f64) -> MainEffectPanel {
        MainEffectPanel {
            factor: f.into(),
            low_label: lo.into(),
            high_label: hi.into(),
            mean_low: a,
            mean_high: b,
        }
    }

    /// Invented demo: five method parameters of a dissolution test.
    fn demo() -> MainEffects {
        MainEffects {
            panels: vec![
                panel("temperature", "36.5 °C", "37.5 °C", 98.9, 99.6),
                panel("paddle speed", "48 rpm", "52 rpm", 98.4, 100.1),
                panel("pH", "6.7", "6.9", 99.3, 99.2),
                panel("degassing", "no", "yes", 99.0, 99.5),
                panel("sampling time", "−1 min", "+1 min", 99.4, 99.1),
            ],
            grand_mean: 99.25,
            grand_mean_label: "grand mean".into(),
            y_title: "dissolved (% label claim)".into(),
        }
    }

    #[test]
    fn main_effects_is_clean_svg() {
        let svg = main_effects(&demo()).unwrap();
        preview("main_effects", &svg);
        assert_clean_svg(&svg);
    }

    #[test]
    fn main_effects_shows_titles_levels_and_grand_mean() {
        let svg = main_effects(&demo()).unwrap();
        for t in [
            "temperature",
            "paddle speed",
            "pH",
            "degassing",
            "sampling time",
            "36.5 °C",
            "52 rpm",
            "dissolved (% label claim)",
            "grand mean = 99.25",
        ] {
            assert!(svg.contains(t), "{t} missing");
        }
    }

    #[test]
    fn main_effects_wraps_after_four_panels() {
        let svg = main_effects(&demo()).unwrap();
        // 5 panels with short level texts: 2 rows of 190 px + margins.
        assert!(
            svg.starts_with("<svg width=\"640\" height=\"418\""),
            "{}",
            &svg[..80]
        );
    }

    #[test]
    fn main_effects_same_input_same_bytes() {
        assert_eq!(
            main_effects(&demo()).unwrap(),
            main_effects(&demo()).unwrap()
        );
    }

    #[test]
    fn main_effects_rejects_empty_input() {
        let mut d = demo();
        d.panels.clear();
        assert!(matches!(main_effects(&d), Err(PlotError::Empty { .. })));
    }

    #[test]
    fn main_effects_rejects_nan_mean() {
        let mut d = demo();
        d.panels[3].mean_high = f64::NAN;
        assert!(matches!(main_effects(&d), Err(PlotError::NotFinite { .. })));
        let mut d = demo();
        d.grand_mean = f64::NEG_INFINITY;
        assert!(matches!(main_effects(&d), Err(PlotError::NotFinite { .. })));
    }

    #[test]
    fn main_effects_of_eleven_factors_draws() {
        let mut d = demo();
        d.panels = (0..11)
            .map(|i| {
                panel(
                    &format!("f{i}"),
                    "low",
                    "high",
                    99.0 + f64::from(i) * 0.1,
                    99.2,
                )
            })
            .collect();
        let svg = main_effects(&d).unwrap();
        preview("main_effects_eleven", &svg);
        assert_clean_svg(&svg);
    }
}
