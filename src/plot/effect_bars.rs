//! Bar chart of absolute effects against the acceptance limit: the figure that answers
//! the robustness question directly ("does any deliberate change move the result by more
//! than we allow?").

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::style::{self, ACCENT, AXIS, LABEL_PX, Mesh, NEUTRAL, TICK_PX};
use super::{PlotError, RefLine};

const FIGURE: &str = "effect bars";

/// One bar: a term and its effect.
#[derive(Debug, Clone, PartialEq)]
pub struct Bar {
    /// Term label shown on the axis (kept as given).
    pub label: String,
    /// Effect in % (its absolute value is drawn).
    pub value: f64,
}

/// Input of [`effect_bars`].
#[derive(Debug, Clone, PartialEq)]
pub struct EffectBars {
    /// Bars in any order; they are drawn largest |value| first (top).
    pub bars: Vec<Bar>,
    /// Acceptance limit; bars with |value| above it are drawn in the accent colour.
    /// `None` draws no line and every bar neutral.
    pub limit: Option<RefLine>,
    /// x axis title, e.g. "|effect| (%)".
    pub x_title: String,
}

const TOP: u32 = 30;
const MARGIN_RIGHT: u32 = 18;
const X_LABEL_AREA: u32 = 44;
/// Most bars one chart takes (a 2^8 full factorial has 255 effects).
const MAX_BARS: usize = 255;
/// Vertical room per bar in pixels; the figure grows when there are many terms.
const BAR_PITCH: u32 = 24;

/// Draws horizontal bars of |effect| per term, sorted largest first (ties keep the
/// caller's order), with the value printed at the end of each bar (all with the same
/// decimals, one more than the axis ticks) and the acceptance
/// limit as a dashed vertical line labelled "name = value".
///
/// A bar is "above the limit" when |value| > limit, strictly (common practice: an effect
/// equal to the limit still meets it).
///
/// Errors: no bars (or more than 255), a non-finite value or limit.
pub fn effect_bars(input: &EffectBars) -> Result<String, PlotError> {
    style::count(FIGURE, "bars", input.bars.len(), MAX_BARS)?;
    for (i, b) in input.bars.iter().enumerate() {
        style::finite(FIGURE, &format!("bars[{i}].value"), b.value)?;
    }
    if let Some(l) = &input.limit {
        style::finite(FIGURE, "limit.value", l.value)?;
    }

    let mut bars: Vec<(String, f64)> = input
        .bars
        .iter()
        .map(|b| (style::clean(&b.label), b.value.abs()))
        .collect();
    // Stable sort: equal effects keep the caller's order.
    bars.sort_by(|a, b| b.1.total_cmp(&a.1));
    let n = bars.len();

    let height = style::HEIGHT.max(TOP + X_LABEL_AREA + 16 + BAR_PITCH * n as u32);
    let y_label_area = bars
        .iter()
        .map(|(l, _)| style::text_width(l, TICK_PX))
        .fold(40.0, f64::max)
        .ceil() as u32
        + 16;
    let y_label_area = y_label_area.min(style::WIDTH / 3);
    let plot_w = f64::from(style::WIDTH - 8 - MARGIN_RIGHT - y_label_area);

    // First pass for the tick step, so every printed value gets the same decimals
    // (one more than the ticks show).
    let rough_max = bars.first().map_or(0.0, |b| b.1);
    let rough_max = match &input.limit {
        Some(l) => rough_max.max(l.value.abs()),
        None => rough_max,
    };
    let decimals = style::nice_ticks(0.0, if rough_max > 0.0 { rough_max } else { 1.0 }, 6, 0.0)
        .map_or(2, |t| t.decimals + 1);
    let values: Vec<String> = bars
        .iter()
        .map(|(_, v)| style::format_number(*v, decimals))
        .collect();
    // Room for the value text after the longest bar.
    let mut x_max: f64 = 0.0;
    for ((_, v), text) in bars.iter().zip(&values) {
        let room = plot_w - 6.0 - style::text_width(text, TICK_PX);
        x_max = x_max.max(v * plot_w / room.max(plot_w * 0.5));
    }
    if let Some(l) = &input.limit {
        x_max = x_max.max(l.value.abs() * 1.08);
    }
    if x_max <= 0.0 {
        x_max = 1.0;
    }
    let x_ticks = style::nice_ticks(0.0, x_max, 6, 0.0).ok_or(PlotError::Invalid {
        figure: FIGURE,
        reason: "the values span no usable axis range".to_string(),
    })?;

    // Category axis: bar k (0 = largest) sits at y = n − 1 − k so it is drawn on top.
    let y_of = |k: usize| (n - 1 - k) as f64;
    let labels: Vec<&str> = bars.iter().map(|(l, _)| l.as_str()).collect();
    let y_format = |v: &f64| {
        let idx = (n as f64 - 1.0 - v.round()) as i64;
        usize::try_from(idx)
            .ok()
            .and_then(|i| labels.get(i))
            .map(|s| s.to_string())
            .unwrap_or_default()
    };
    let x_format = |v: &f64| style::format_number(*v, x_ticks.decimals);

    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, (style::WIDTH, height)).into_drawing_area();
        root.fill(&style::PAPER).map_err(style::backend(FIGURE))?;
        let mut chart = ChartBuilder::on(&root)
            .margin_top(TOP)
            .margin_left(8)
            .margin_right(MARGIN_RIGHT)
            .margin_bottom(8)
            .x_label_area_size(X_LABEL_AREA)
            .y_label_area_size(y_label_area)
            .build_cartesian_2d(
                style::axis(0.0, x_max, x_ticks.values.clone()),
                style::axis(-0.5, n as f64 - 0.5, (0..n).map(|k| k as f64).collect()),
            )
            .map_err(style::backend(FIGURE))?;
        style::draw_mesh(
            &mut chart,
            &Mesh {
                x_format: &x_format,
                y_format: &y_format,
                x_title: input.x_title.clone(),
                y_title: String::new(),
                x_grid: true,
                y_grid: false,
            },
            FIGURE,
        )?;

        if let Some(l) = &input.limit {
            let (x, bottom) = chart.backend_coord(&(l.value.abs(), -0.5));
            let (right, _) = chart.backend_coord(&(x_max, -0.5));
            let row = (TOP / 2) as i32;
            style::draw_line(&root, &[(x, bottom), (x, row + 6)], ACCENT, 2, true, FIGURE)?;
            let text = style::line_label(&l.name, l.value);
            let w = style::text_width(&text, LABEL_PX) as i32;
            let (anchor, tx) = if x + 5 + w > right {
                (HPos::Right, x - 5)
            } else {
                (HPos::Left, x + 5)
            };
            let ts = style::anchored(LABEL_PX, ACCENT, anchor, VPos::Center);
            style::draw_text(&root, &text, (tx, row), &ts, FIGURE)?;
        }
        let limit = input.limit.as_ref().map(|l| l.value.abs());
        let limit_x: Vec<i32> = limit
            .iter()
            .map(|l| chart.backend_coord(&(*l, -0.5)).0)
            .collect();
        let value_style = style::anchored(TICK_PX, AXIS, HPos::Left, VPos::Center);
        for (k, ((_, v), text)) in bars.iter().zip(&values).enumerate() {
            let y = y_of(k);
            let (x0, y0) = chart.backend_coord(&(0.0, y + 0.3));
            let (x1, y1) = chart.backend_coord(&(*v, y - 0.3));
            let color = match limit {
                Some(l) if *v > l => ACCENT,
                _ => NEUTRAL,
            };
            // Zero-width bars are skipped by the renderer, so give them one pixel.
            let x1 = x1.max(x0 + 1);
            root.draw(&Rectangle::new([(x0 + 1, y0), (x1, y1)], color.filled()))
                .map_err(style::backend(FIGURE))?;
            let (_, yc) = chart.backend_coord(&(0.0, y));
            style::draw_text_backed(&root, text, (x1 + 5, yc), &value_style, &limit_x, FIGURE)?;
        }

        root.present().map_err(style::backend(FIGURE))?;
    }
    Ok(style::finish(buf))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plot::testutil::{assert_clean_svg, preview};

    /// Invented demo: Plackett–Burman screening of an assay, effects in % label claim.
    fn demo() -> EffectBars {
        let bars = [
            ("temp", 0.35),
            ("ph", -1.42),
            ("flow", 0.08),
            ("column lot", 2.31),
            ("wavelength", -0.61),
            ("d1", 0.12),
            ("d2", -0.05),
        ];
        EffectBars {
            bars: bars
                .iter()
                .map(|(l, v)| Bar {
                    label: l.to_string(),
                    value: *v,
                })
                .collect(),
            limit: Some(RefLine {
                name: "acceptance limit".into(),
                value: 1.5,
            }),
            x_title: "|effect| (% label claim)".into(),
        }
    }

    #[test]
    fn effect_bars_is_clean_svg() {
        let svg = effect_bars(&demo()).unwrap();
        preview("effect_bars", &svg);
        assert_clean_svg(&svg);
    }

    #[test]
    fn effect_bars_shows_every_label_and_the_limit() {
        let svg = effect_bars(&demo()).unwrap();
        for t in ["temp", "ph", "flow", "column lot", "wavelength", "d1", "d2"] {
            assert!(svg.contains(&format!("\n{t}\n")), "{t} missing");
        }
        // Values at the bar ends, all with two decimals (ticks step 0.5 → one decimal).
        for v in ["2.31", "1.42", "0.61", "0.35", "0.12", "0.08", "0.05"] {
            assert!(svg.contains(&format!("\n{v}\n")), "{v} missing");
        }
        assert!(svg.contains("acceptance limit = 1.5"));
    }

    /// y pixel of the text element whose content is `label`.
    fn text_y(svg: &str, label: &str) -> i32 {
        let end = svg.find(&format!(">\n{label}\n</text>")).unwrap();
        let start = svg[..end].rfind("<text").unwrap();
        let tag = &svg[start..end];
        let y = tag.split(" y=\"").nth(1).unwrap();
        y[..y.find('"').unwrap()].parse().unwrap()
    }

    #[test]
    fn effect_bars_sorts_largest_first() {
        let svg = effect_bars(&demo()).unwrap();
        // |values|: column lot 2.31 > ph 1.42 > wavelength 0.61 > ... > d2 0.05.
        assert!(text_y(&svg, "column lot") < text_y(&svg, "ph"));
        assert!(text_y(&svg, "ph") < text_y(&svg, "wavelength"));
        assert!(text_y(&svg, "wavelength") < text_y(&svg, "d2"));
    }

    #[test]
    fn effect_bars_colours_only_bars_above_limit() {
        let svg = effect_bars(&demo()).unwrap();
        // Only "column lot" (2.31) exceeds 1.5; ph (1.42) stays neutral.
        let accent = svg
            .split("<rect")
            .filter(|r| r.split("/>").next().unwrap().contains("fill=\"#B0442C\""))
            .count();
        assert_eq!(accent, 1);
    }

    #[test]
    fn effect_bars_without_limit_has_no_accent() {
        let mut d = demo();
        d.limit = None;
        let svg = effect_bars(&d).unwrap();
        assert_clean_svg(&svg);
        assert!(!svg.contains("#B0442C"));
        assert!(!svg.contains("acceptance limit"));
    }

    #[test]
    fn effect_bars_same_input_same_bytes() {
        assert_eq!(effect_bars(&demo()).unwrap(), effect_bars(&demo()).unwrap());
    }

    #[test]
    fn effect_bars_rejects_empty_input() {
        let mut d = demo();
        d.bars.clear();
        assert!(matches!(effect_bars(&d), Err(PlotError::Empty { .. })));
    }

    #[test]
    fn effect_bars_rejects_nan_value() {
        let mut d = demo();
        d.bars[1].value = f64::NAN;
        assert!(matches!(effect_bars(&d), Err(PlotError::NotFinite { .. })));
    }

    #[test]
    fn effect_bars_rejects_nan_limit() {
        let mut d = demo();
        d.limit = Some(RefLine {
            name: "limit".into(),
            value: f64::NAN,
        });
        assert!(matches!(effect_bars(&d), Err(PlotError::NotFinite { .. })));
    }

    #[test]
    fn effect_bars_rejects_too_many_bars() {
        let d = EffectBars {
            bars: (0..300)
                .map(|i| Bar {
                    label: format!("t{i}"),
                    value: 1.0,
                })
                .collect(),
            limit: None,
            x_title: String::new(),
        };
        assert!(matches!(effect_bars(&d), Err(PlotError::Invalid { .. })));
    }

    #[test]
    fn effect_bars_grows_for_many_terms() {
        let d = EffectBars {
            bars: (0..31)
                .map(|i| Bar {
                    label: format!("t{i}"),
                    value: f64::from(i) * 0.1,
                })
                .collect(),
            limit: None,
            x_title: "|effect| (%)".into(),
        };
        let svg = effect_bars(&d).unwrap();
        preview("effect_bars_many", &svg);
        assert_clean_svg(&svg);
        assert!(!svg.starts_with("<svg width=\"640\" height=\"400\""));
    }
}
