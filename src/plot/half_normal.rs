//! Half-normal plot of absolute effects: the picture a robustness reviewer reads first,
//! because effects that are pure noise fall on a line through the origin and real ones
//! stand off to the right of it.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::style::{self, ACCENT, INK, LABEL_PX, Mesh, REFERENCE, SECOND};
use super::{PlotError, RefLine};

const FIGURE: &str = "half-normal";

/// One effect in the half-normal plot.
#[derive(Debug, Clone, PartialEq)]
pub struct HalfNormalPoint {
    /// Term label written beside the point ("temp", "temp×ph", "d1").
    pub label: String,
    /// Absolute effect |E| (x axis), ≥ 0.
    pub abs_effect: f64,
    /// Half-normal score (y axis), supplied by the caller.
    pub score: f64,
}

/// Input of [`half_normal`].
#[derive(Debug, Clone, PartialEq)]
pub struct HalfNormal {
    /// The effects, in any order.
    pub points: Vec<HalfNormalPoint>,
    /// Vertical reference lines (critical effect, ME, SME...). Points with |E| above the
    /// first line are drawn in the accent colour.
    pub lines: Vec<RefLine>,
    /// x axis title, e.g. "|effect| (% label claim)".
    pub x_title: String,
    /// y axis title, e.g. "half-normal score".
    pub y_title: String,
}

const MARGIN_LEFT: u32 = 8;
const MARGIN_RIGHT: u32 = 18;
const Y_LABEL_AREA: u32 = 58;
const X_LABEL_AREA: u32 = 48;
/// Gap between a point and the start of its label.
const LABEL_GAP: i32 = 8;
/// Size of the term labels beside the points: a little under the other labels, because
/// a half-normal plot of a 16-run design puts many points close together.
const POINT_LABEL_PX: f64 = 12.0;
/// Vertical pitch of stacked term labels.
const LABEL_PITCH: i32 = 14;
/// Most effects one plot takes (a 2^8 full factorial has 255).
const MAX_POINTS: usize = 255;
/// Most reference lines (each needs its own label row).
const MAX_LINES: usize = 6;
/// Tallest the figure grows for crowded points.
const MAX_HEIGHT: u32 = 520;
/// Vertical pitch of the reference-line labels above the plot.
const LINE_LABEL_PITCH: u32 = 17;

/// Draws the half-normal plot (Daniel, Technometrics 1 (1959) 311–341): x = |E|,
/// y = the caller's half-normal score, typically Φ⁻¹(0.5 + 0.5·(i − 0.5)/m) for the
/// i-th smallest of m absolute effects; each point is labelled with its term.
///
/// Labels sit to the right of their points; crowded labels are spread apart (tied
/// effects stack one line apart) and joined to their points by thin leaders, and the
/// figure grows from 400 up to 520 px high when points are closer than a label line.
/// Reference lines are drawn full height and labelled "name = value" above the plot,
/// one row each.
///
/// Errors: no points (or more than 255), more than 6 lines, a non-finite value, or a
/// negative |E|.
pub fn half_normal(input: &HalfNormal) -> Result<String, PlotError> {
    style::count(FIGURE, "effects", input.points.len(), MAX_POINTS)?;
    if input.lines.len() > MAX_LINES {
        return Err(PlotError::Invalid {
            figure: FIGURE,
            reason: format!(
                "{} reference lines given; expected at most {MAX_LINES}",
                input.lines.len()
            ),
        });
    }
    for (i, p) in input.points.iter().enumerate() {
        let e = style::finite(FIGURE, &format!("points[{i}].abs_effect"), p.abs_effect)?;
        style::finite(FIGURE, &format!("points[{i}].score"), p.score)?;
        if e < 0.0 {
            return Err(PlotError::Invalid {
                figure: FIGURE,
                reason: format!("points[{i}].abs_effect is negative; expected |effect| ≥ 0"),
            });
        }
    }
    for (i, l) in input.lines.iter().enumerate() {
        style::finite(FIGURE, &format!("lines[{i}].value"), l.value)?;
    }

    let labels: Vec<String> = input
        .points
        .iter()
        .map(|p| style::clean(&p.label))
        .collect();
    let top = 14 + LINE_LABEL_PITCH * input.lines.len() as u32;
    let plot_w = f64::from(style::WIDTH - MARGIN_LEFT - MARGIN_RIGHT - Y_LABEL_AREA);

    // Widen the x range until the longest label right of its point still fits.
    let mut x_max: f64 = 0.0;
    for (p, label) in input.points.iter().zip(&labels) {
        let room = plot_w - f64::from(LABEL_GAP) - style::text_width(label, POINT_LABEL_PX) - 4.0;
        let need = if room > plot_w * 0.3 {
            p.abs_effect * plot_w / room
        } else {
            p.abs_effect / 0.7
        };
        x_max = x_max.max(need).max(p.abs_effect * 1.05);
    }
    for l in &input.lines {
        x_max = x_max.max(l.value.abs() * 1.08);
    }
    if x_max <= 0.0 {
        x_max = 1.0;
    }
    let x_ticks = style::nice_ticks(0.0, x_max, 6, 0.0).ok_or_else(range_error)?;

    let score_min = input.points.iter().map(|p| p.score).fold(0.0, f64::min);
    let score_max = input.points.iter().map(|p| p.score).fold(0.0, f64::max);
    let (y_lo, y_hi) = if score_max > score_min {
        let span = score_max - score_min;
        (score_min.min(0.0), score_max + 0.08 * span)
    } else {
        (score_min - 1.0, score_max + 1.0)
    };
    let y_ticks = style::nice_ticks(y_lo, y_hi, 5, 0.0).ok_or_else(range_error)?;

    // Grow the figure (up to MAX_HEIGHT) until neighbouring points are a label pitch
    // apart, so labels in the crowded low end need not be pushed far from their points.
    let mut scores: Vec<f64> = input.points.iter().map(|p| p.score).collect();
    scores.sort_by(f64::total_cmp);
    let min_gap = scores
        .windows(2)
        .map(|w| w[1] - w[0])
        .filter(|g| *g > 1e-9)
        .fold(f64::INFINITY, f64::min);
    let frame = top + 8 + X_LABEL_AREA;
    let needed = if min_gap.is_finite() {
        let plot_h = f64::from(LABEL_PITCH) * (y_hi - y_lo) / min_gap;
        // Capped in f64 first: a tiny gap must not overflow the u32.
        plot_h.min(f64::from(MAX_HEIGHT)).ceil() as u32 + frame
    } else {
        0
    };
    let height = needed.clamp(style::HEIGHT, MAX_HEIGHT);

    let x_format = |v: &f64| style::format_number(*v, x_ticks.decimals);
    let y_format = |v: &f64| style::format_number(*v, y_ticks.decimals);

    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, (style::WIDTH, height)).into_drawing_area();
        root.fill(&style::PAPER).map_err(style::backend(FIGURE))?;
        let mut chart = ChartBuilder::on(&root)
            .margin_top(top)
            .margin_left(MARGIN_LEFT)
            .margin_right(MARGIN_RIGHT)
            .margin_bottom(8)
            .x_label_area_size(X_LABEL_AREA)
            .y_label_area_size(Y_LABEL_AREA)
            .build_cartesian_2d(
                style::axis(0.0, x_max, x_ticks.values.clone()),
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

        let (right, bottom) = chart.backend_coord(&(x_max, y_lo));
        let (_, plot_top) = chart.backend_coord(&(0.0, y_hi));

        let line_xs: Vec<i32> = input
            .lines
            .iter()
            .map(|l| chart.backend_coord(&(l.value, y_lo)).0)
            .collect();
        // Reference lines, each labelled on its own row above the plot.
        for (i, l) in input.lines.iter().enumerate() {
            let (x, _) = chart.backend_coord(&(l.value, y_lo));
            let row = 8 + (LINE_LABEL_PITCH * i as u32) as i32 + 6;
            let (color, dashed) = line_look(i);
            style::draw_line(
                &root,
                &[(x, bottom), (x, row + 5)],
                color,
                2,
                dashed,
                FIGURE,
            )?;
            let text = style::line_label(&l.name, l.value);
            let w = style::text_width(&text, LABEL_PX) as i32;
            let (anchor, tx) = if x + 5 + w > right {
                (HPos::Right, x - 5)
            } else {
                (HPos::Left, x + 5)
            };
            let ts = style::anchored(LABEL_PX, color, anchor, VPos::Center);
            // Lines labelled on higher rows pass through lower rows: box the label then.
            let others: Vec<i32> = line_xs[..i].to_vec();
            style::draw_text_backed(&root, &text, (tx, row), &ts, &others, FIGURE)?;
        }

        let threshold = input.lines.first().map(|l| l.value);
        let items: Vec<((i32, i32), i32)> = input
            .points
            .iter()
            .zip(&labels)
            .map(|(p, label)| {
                let c = chart.backend_coord(&(p.abs_effect, p.score));
                (c, style::text_width(label, POINT_LABEL_PX).ceil() as i32)
            })
            .collect();
        let bounds = Bounds {
            top: plot_top,
            bottom,
        };
        // Only points with a label take part in the placement: a large design labels its
        // few largest effects and leaves the crowded rest unlabelled.
        let labelled: Vec<usize> = (0..labels.len())
            .filter(|&i| !labels[i].is_empty())
            .collect();
        let placed = place_labels(
            &labelled.iter().map(|&i| items[i]).collect::<Vec<_>>(),
            bounds,
        );
        let colors: Vec<RGBColor> = input
            .points
            .iter()
            .map(|p| match threshold {
                Some(t) if p.abs_effect > t => ACCENT,
                _ => INK,
            })
            .collect();
        // Leaders first, then markers, then labels: a label never hides a marker because
        // placement keeps label boxes off every marker.
        for at in &placed {
            if let Some(from) = at.leader {
                let to = (at.x - 2, at.y);
                style::draw_line(&root, &[from, to], style::NEUTRAL, 1, false, FIGURE)?;
            }
        }
        for ((c, _), color) in items.iter().zip(&colors) {
            style::draw_marker(&root, *c, style::Marker::Circle, *color, FIGURE)?;
        }
        for (&i, at) in labelled.iter().zip(&placed) {
            let color = colors.get(i).copied().unwrap_or(INK);
            let ts = style::anchored(POINT_LABEL_PX, color, HPos::Left, VPos::Center);
            style::draw_text_backed(&root, &labels[i], (at.x, at.y), &ts, &line_xs, FIGURE)?;
        }
        root.present().map_err(style::backend(FIGURE))?;
    }
    Ok(style::finish(buf))
}

/// Colour and dash of the i-th reference line: the first (the decision line) in the
/// accent colour, further ones in quieter tones, alternating dash so they stay apart in
/// grey-scale print.
fn line_look(i: usize) -> (RGBColor, bool) {
    match i % 3 {
        0 => (ACCENT, true),
        1 => (REFERENCE, false),
        _ => (SECOND, true),
    }
}

/// Top and bottom of the plot area in pixels, which labels must stay between.
#[derive(Debug, Clone, Copy)]
struct Bounds {
    top: i32,
    bottom: i32,
}

/// Where one label goes (text anchored at its left end, vertically centred).
#[derive(Debug, Clone, Copy, PartialEq)]
struct Placement {
    /// Left edge of the text.
    x: i32,
    /// Vertical centre.
    y: i32,
    /// Start of a leader line when the label had to move away from its point.
    leader: Option<(i32, i32)>,
}

/// Half size of the square kept free around each marker.
const MARKER_CLEARANCE: i32 = 5;

/// Places each label (items: point pixel and label width) right of its point.
///
/// Vertically, labels are spread like beads on a string: sorted by height, any run of
/// labels closer than one line pitch is merged into a block centred on the mean of its
/// points' heights, repeated until no blocks overlap; tied points thus stack one line
/// apart around their common height. Horizontally, a label that would cover another
/// point's marker is moved right past it. A label that moved gets a leader line.
fn place_labels(items: &[((i32, i32), i32)], bounds: Bounds) -> Vec<Placement> {
    let pitch = f64::from(LABEL_PITCH);
    let mut order: Vec<usize> = (0..items.len()).collect();
    // Top first (smallest pixel y); equal heights keep input order.
    order.sort_by(|&a, &b| items[a].0.1.cmp(&items[b].0.1).then(a.cmp(&b)));
    let lo = f64::from(bounds.top + LABEL_PITCH / 2);
    let hi = f64::from(bounds.bottom - LABEL_PITCH / 2).max(lo);

    // Blocks of consecutive labels (in `order`): (first position, count, top y).
    let mut blocks: Vec<(usize, usize, f64)> = Vec::new();
    let block_top = |first: usize, count: usize| {
        let mean = order[first..first + count]
            .iter()
            .map(|&i| f64::from(items[i].0.1))
            .sum::<f64>()
            / count as f64;
        let top = mean - (count as f64 - 1.0) * pitch / 2.0;
        let max_top = (hi - (count as f64 - 1.0) * pitch).max(lo);
        top.clamp(lo, max_top)
    };
    for k in 0..order.len() {
        blocks.push((k, 1, block_top(k, 1)));
        while blocks.len() >= 2 {
            let (f1, c1, t1) = blocks[blocks.len() - 2];
            let (_, c2, t2) = blocks[blocks.len() - 1];
            if t1 + c1 as f64 * pitch <= t2 + 1e-9 {
                break;
            }
            blocks.truncate(blocks.len() - 2);
            blocks.push((f1, c1 + c2, block_top(f1, c1 + c2)));
        }
    }

    let mut ys = vec![0; items.len()];
    for (first, count, top) in blocks {
        for j in 0..count {
            ys[order[first + j]] = (top + j as f64 * pitch).round() as i32;
        }
    }

    let half = LABEL_PITCH / 2;
    let hit = |a: (i32, i32, i32, i32), b: (i32, i32, i32, i32)| {
        a.0 < b.2 && b.0 < a.2 && a.1 < b.3 && b.1 < a.3
    };
    items
        .iter()
        .zip(ys)
        .map(|(((px, py), w), y)| {
            let mut x = px + LABEL_GAP;
            // Each pass moves the label past one marker; at most one pass per point.
            for _ in 0..items.len() {
                let bx = (x - 2, y - half, x + w + 2, y + half);
                let blocking = items
                    .iter()
                    .map(|((mx, my), _)| {
                        (
                            mx - MARKER_CLEARANCE,
                            my - MARKER_CLEARANCE,
                            mx + MARKER_CLEARANCE,
                            my + MARKER_CLEARANCE,
                        )
                    })
                    .filter(|m| hit(bx, *m))
                    .map(|m| m.2)
                    .max();
                match blocking {
                    Some(right) => x = right + 3,
                    None => break,
                }
            }
            let moved = (y - py).abs() > 2 || x > px + LABEL_GAP;
            Placement {
                x,
                y,
                leader: moved.then_some((px + MARKER_CLEARANCE, *py)),
            }
        })
        .collect()
}

fn range_error() -> PlotError {
    PlotError::Invalid {
        figure: FIGURE,
        reason: "the values span no usable axis range".to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plot::testutil::{assert_clean_svg, preview};

    /// Invented demo study: 7 factors in 8 runs, absolute effects in % label claim.
    fn demo() -> HalfNormal {
        let terms = [
            ("temp", 0.05),
            ("ph", 0.11),
            ("flow", 0.14),
            ("d1", 0.14),
            ("wavelength", 0.21),
            ("temp×ph", 0.48),
            ("column", 0.83),
        ];
        // Scores Φ⁻¹(0.5 + 0.5(i − 0.5)/7), i = 1..7, from scipy 1.17.1:
        // `scipy.stats.norm.ppf(0.5 + 0.5*(np.arange(1, 8) - 0.5)/7)`, rounded to 4 places
        // (layout input only; nothing here checks them).
        let scores = [0.0896, 0.2719, 0.4637, 0.6745, 0.9208, 1.2419, 1.8027];
        HalfNormal {
            points: terms
                .iter()
                .zip(scores)
                .map(|((l, e), s)| HalfNormalPoint {
                    label: l.to_string(),
                    abs_effect: *e,
                    score: s,
                })
                .collect(),
            lines: vec![
                RefLine {
                    name: "ME".into(),
                    value: 0.42,
                },
                RefLine {
                    name: "SME".into(),
                    value: 0.88,
                },
            ],
            x_title: "|effect| (% label claim)".into(),
            y_title: "half-normal score".into(),
        }
    }

    #[test]
    fn half_normal_is_clean_svg() {
        let svg = half_normal(&demo()).unwrap();
        preview("half_normal", &svg);
        assert_clean_svg(&svg);
    }

    #[test]
    fn half_normal_shows_every_term_and_line_label() {
        let svg = half_normal(&demo()).unwrap();
        for t in [
            "temp",
            "ph",
            "flow",
            "d1",
            "wavelength",
            "temp×ph",
            "column",
        ] {
            assert!(svg.contains(&format!("\n{t}\n")), "{t} missing");
        }
        assert!(svg.contains("ME = 0.42"));
        assert!(svg.contains("SME = 0.88"));
    }

    #[test]
    fn half_normal_same_input_same_bytes() {
        assert_eq!(half_normal(&demo()).unwrap(), half_normal(&demo()).unwrap());
    }

    #[test]
    fn half_normal_rejects_empty_input() {
        let mut d = demo();
        d.points.clear();
        assert!(matches!(half_normal(&d), Err(PlotError::Empty { .. })));
    }

    #[test]
    fn half_normal_rejects_nan_effect() {
        let mut d = demo();
        d.points[2].abs_effect = f64::NAN;
        assert!(matches!(half_normal(&d), Err(PlotError::NotFinite { .. })));
    }

    #[test]
    fn half_normal_rejects_infinite_line() {
        let mut d = demo();
        d.lines[0].value = f64::INFINITY;
        assert!(matches!(half_normal(&d), Err(PlotError::NotFinite { .. })));
    }

    #[test]
    fn half_normal_rejects_negative_effect() {
        let mut d = demo();
        d.points[0].abs_effect = -0.1;
        assert!(matches!(half_normal(&d), Err(PlotError::Invalid { .. })));
    }

    const BOUNDS: Bounds = Bounds {
        top: 20,
        bottom: 380,
    };

    #[test]
    fn tied_labels_are_stacked_not_overprinted() {
        // Two points at the same pixel: the second label must move a full line away.
        let p = place_labels(&[((100, 200), 40), ((100, 200), 40)], BOUNDS);
        assert_eq!((p[1].y - p[0].y).abs(), LABEL_PITCH);
        // Centred on the common height, half a pitch either side.
        assert!((p[0].y + p[1].y - 400).abs() <= 1);
    }

    /// Invented 2^4 full-factorial demo: 15 effects, several tied and crowded near zero.
    fn dense() -> HalfNormal {
        let effects = [
            ("A", 0.02),
            ("B", 0.03),
            ("C", 0.03),
            ("D", 0.03),
            ("A×B", 0.05),
            ("A×C", 0.06),
            ("A×D", 0.06),
            ("B×C", 0.08),
            ("B×D", 0.09),
            ("C×D", 0.11),
            ("A×B×C", 0.12),
            ("A×B×D", 0.15),
            ("A×C×D", 0.19),
            ("B×C×D", 0.44),
            ("A×B×C×D", 0.95),
        ];
        // Φ⁻¹(0.5 + 0.5(i − 0.5)/15), i = 1..15, from scipy 1.17.1:
        // `scipy.stats.norm.ppf(0.5 + 0.5*(np.arange(1, 16) - 0.5)/15)`, 4 places.
        let scores = [
            0.0418, 0.1257, 0.2104, 0.2967, 0.3853, 0.4770, 0.5730, 0.6745, 0.7835, 0.9027, 1.0364,
            1.1918, 1.3830, 1.6449, 2.1280,
        ];
        HalfNormal {
            points: effects
                .iter()
                .zip(scores)
                .map(|((l, e), s)| HalfNormalPoint {
                    label: l.to_string(),
                    abs_effect: *e,
                    score: s,
                })
                .collect(),
            lines: vec![RefLine {
                name: "E_crit".into(),
                value: 0.42,
            }],
            x_title: "|effect| (% label claim)".into(),
            y_title: "half-normal score".into(),
        }
    }

    #[test]
    fn half_normal_dense_is_clean_svg() {
        let svg = half_normal(&dense()).unwrap();
        preview("half_normal_dense", &svg);
        assert_clean_svg(&svg);
        assert!(svg.contains("E_crit = 0.42"));
    }

    #[test]
    fn crowded_labels_do_not_overlap_each_other_or_markers() {
        // Ten points 3 px apart on a slight slope, labels 40 px wide.
        let items: Vec<((i32, i32), i32)> = (0..10).map(|i| ((100 + i, 300 - 3 * i), 40)).collect();
        let p = place_labels(&items, BOUNDS);
        let half = LABEL_PITCH / 2 - 1;
        let bx = |k: usize| (p[k].x, p[k].y - half, p[k].x + items[k].1, p[k].y + half);
        let hit = |a: (i32, i32, i32, i32), b: (i32, i32, i32, i32)| {
            a.0 < b.2 && b.0 < a.2 && a.1 < b.3 && b.1 < a.3
        };
        for i in 0..items.len() {
            for j in 0..i {
                assert!(!hit(bx(i), bx(j)), "labels {i} and {j} overlap");
            }
            for ((mx, my), _) in &items {
                let m = (mx - 4, my - 4, mx + 4, my + 4);
                assert!(!hit(bx(i), m), "label {i} covers a marker");
            }
        }
    }

    #[test]
    fn half_normal_of_all_zero_effects_still_draws() {
        let mut d = demo();
        for p in &mut d.points {
            p.abs_effect = 0.0;
        }
        d.lines.clear();
        assert_clean_svg(&half_normal(&d).unwrap());
    }
}
