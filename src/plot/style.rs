//! One place for the look of every figure (palette, type sizes, number format), so the
//! plots in a report agree with each other and with the report body.
//!
//! Rules that shape this file:
//! - Every colour is opaque. plotters writes `opacity="<alpha>"` on each element, and any
//!   value below 1 breaks PDF/A-1b, so light tones are mixed by hand instead.
//! - Text uses the family "Libertinus Serif", which typst embeds; a generic family would
//!   be resolved differently from machine to machine.
//! - plotters writes `font-size` as size / 1.24, so sizes here are the pixel sizes wanted
//!   in the SVG and [`font`] scales them up.

use plotters::coord::Shift;
use plotters::coord::ranged1d::{DefaultFormatting, KeyPointHint, Ranged};
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// Font family written into every `<text>` element.
pub const FONT_FAMILY: &str = "Libertinus Serif";

/// Width of every figure in SVG pixels (the report scales it to the column width).
pub const WIDTH: u32 = 640;
/// Default height of a single-panel figure in SVG pixels.
pub const HEIGHT: u32 = 400;

/// Data points, lines and main text: a dark blue-grey.
pub const INK: RGBColor = RGBColor(0x27, 0x33, 0x44);
/// Secondary series (second line, nominal runs): a muted blue-green.
pub const SECOND: RGBColor = RGBColor(0x2E, 0x7D, 0x78);
/// The single accent for anything beyond a limit and for limit lines: a brick red.
pub const ACCENT: RGBColor = RGBColor(0xB0, 0x44, 0x2C);
/// Bars and marks that do not exceed the limit.
pub const NEUTRAL: RGBColor = RGBColor(0x9A, 0xA3, 0xAE);
/// Axis lines and tick labels.
pub const AXIS: RGBColor = RGBColor(0x4A, 0x53, 0x60);
/// Grid lines: a solid light grey, never a transparent black.
pub const GRID: RGBColor = RGBColor(0xE3, 0xE6, 0xEA);
/// Reference lines that are not limits (grand mean, drift).
pub const REFERENCE: RGBColor = RGBColor(0x6B, 0x74, 0x80);
/// Small notes under a figure.
pub const NOTE: RGBColor = RGBColor(0x5C, 0x64, 0x70);
/// Figure background.
pub const PAPER: RGBColor = RGBColor(0xFF, 0xFF, 0xFF);

/// Tick label size in SVG pixels.
pub const TICK_PX: f64 = 13.0;
/// Axis title size in SVG pixels.
pub const TITLE_PX: f64 = 14.0;
/// Size of labels placed next to data (term labels, line labels, legend).
pub const LABEL_PX: f64 = 13.0;
/// Size of the note under a figure.
pub const NOTE_PX: f64 = 12.0;

/// Dash length and gap, in pixels, for dashed reference lines.
pub const DASH: (u32, u32) = (6, 4);

/// Ratio between the size plotters is given and the `font-size` it writes.
const PLOTTERS_FONT_SCALE: f64 = 1.24;

/// The size to give plotters so that it writes exactly `px` (not 12.999999999999998).
fn plotters_size(px: f64) -> f64 {
    let s = px * PLOTTERS_FONT_SCALE;
    [s, s.next_up(), s.next_down()]
        .into_iter()
        .find(|c| c / PLOTTERS_FONT_SCALE == px)
        .unwrap_or(s)
}

/// A text style in [`FONT_FAMILY`] that comes out as `px` pixels in the SVG.
pub fn font(px: f64, color: RGBColor) -> TextStyle<'static> {
    TextStyle {
        color: color.to_backend_color(),
        ..TextStyle::from((FONT_FAMILY, plotters_size(px)).into_font())
    }
}

/// [`font`] with an explicit anchor, for text placed in pixel coordinates.
pub fn anchored(px: f64, color: RGBColor, h: HPos, v: VPos) -> TextStyle<'static> {
    font(px, color).pos(Pos::new(h, v))
}

/// Rough width in pixels of `text` set in Libertinus Serif at `px`.
///
/// Used only for layout decisions (room for labels). Counts characters, not bytes, and
/// uses 0.55 em, a little above the average advance of a serif text face, so labels get
/// a safe margin. plotters' own estimate (0.7 em per byte) is used by plotters itself for
/// its label areas.
pub fn text_width(text: &str, px: f64) -> f64 {
    text.chars().count() as f64 * 0.55 * px
}

/// Longest text drawn; longer input is cut and ends in "…" (keeps pixel arithmetic
/// far from overflow whatever the input).
pub const MAX_TEXT_CHARS: usize = 200;

/// Removes control characters, which XML 1.0 does not allow in text, and cuts text
/// longer than [`MAX_TEXT_CHARS`].
pub fn clean(text: &str) -> String {
    let mut out: String = text
        .chars()
        .filter(|c| !c.is_control())
        .take(MAX_TEXT_CHARS + 1)
        .collect();
    if out.chars().count() > MAX_TEXT_CHARS {
        out = out.chars().take(MAX_TEXT_CHARS - 1).collect();
        out.push('…');
    }
    out
}

/// Checks that a list is not empty and not longer than a figure can show.
pub fn count(
    figure: &'static str,
    what: &'static str,
    n: usize,
    max: usize,
) -> Result<(), super::PlotError> {
    if n == 0 {
        Err(super::PlotError::Empty { figure, what })
    } else if n > max {
        Err(super::PlotError::Invalid {
            figure,
            reason: format!("{n} {what} given; expected at most {max}"),
        })
    } else {
        Ok(())
    }
}

/// Axis ticks chosen by [`nice_ticks`].
#[derive(Debug, Clone, PartialEq)]
pub struct Ticks {
    /// Tick positions, ascending, all inside the requested range.
    pub values: Vec<f64>,
    /// Decimals that show the tick step exactly.
    pub decimals: usize,
}

/// Tick positions at a "nice" step (1, 2, 2.5 or 5 × 10^k) giving about `target` ticks
/// in `[lo, hi]`, and the number of decimals that shows that step.
///
/// Step choice as in Heckbert, "Nice numbers for graph labels", Graphics Gems (1990),
/// with 2.5 added. `min_step` keeps integer axes (run order) on whole numbers. Returns
/// `None` for a non-finite or empty range.
pub fn nice_ticks(lo: f64, hi: f64, target: usize, min_step: f64) -> Option<Ticks> {
    if !lo.is_finite() || !hi.is_finite() || hi <= lo {
        return None;
    }
    let raw = (hi - lo) / target.max(1) as f64;
    let mag = 10f64.powf(raw.log10().floor());
    if !mag.is_finite() || mag <= 0.0 {
        return None;
    }
    let norm = raw / mag;
    let (nice, extra_decimal) = if norm < 1.5 {
        (1.0, false)
    } else if norm < 2.25 {
        (2.0, false)
    } else if norm < 3.5 {
        (2.5, true)
    } else if norm < 7.5 {
        (5.0, false)
    } else {
        (10.0, false)
    };
    let mut step = nice * mag;
    let mut extra = extra_decimal;
    if step < min_step {
        step = min_step;
        extra = false;
    }
    let exponent = step.log10().floor();
    let mut decimals = if exponent < 0.0 {
        (-exponent) as usize
    } else {
        0
    };
    if extra && exponent <= 0.0 {
        decimals += 1;
    }
    // The small slack keeps a tick that sits exactly on a range end despite rounding.
    let first = (lo / step - 1e-9).ceil() as i64;
    let last = (hi / step + 1e-9).floor() as i64;
    if last < first || last - first > 1000 {
        return None;
    }
    // Multiplying the integer index avoids drift from repeated addition.
    let values = (first..=last).map(|k| k as f64 * step).collect();
    Some(Ticks {
        values,
        decimals: decimals.min(12),
    })
}

/// Formats `v` with `decimals` decimals, a real minus sign (U+2212), never "−0" and never
/// "NaN"/"inf" (a non-finite value gives an empty string).
pub fn format_number(v: f64, decimals: usize) -> String {
    if !v.is_finite() {
        return String::new();
    }
    let body = format!("{:.*}", decimals, v.abs());
    let is_zero = body.chars().all(|c| c == '0' || c == '.');
    if v < 0.0 && !is_zero {
        format!("\u{2212}{body}")
    } else {
        body
    }
}

/// Formats `v` with `sig` significant digits (at most 6 decimals), trailing zeros
/// removed, for values printed beside lines ("E_crit = 0.42").
pub fn format_significant(v: f64, sig: usize) -> String {
    if !v.is_finite() {
        return String::new();
    }
    if v == 0.0 {
        return "0".to_string();
    }
    let exponent = v.abs().log10().floor() as i64;
    let decimals = (sig as i64 - 1 - exponent).clamp(0, 6) as usize;
    let mut s = format_number(v, decimals);
    if s.contains('.') {
        while s.ends_with('0') {
            s.pop();
        }
        if s.ends_with('.') {
            s.pop();
        }
    }
    if s == "\u{2212}0" { "0".to_string() } else { s }
}

/// "name = value", the text beside a reference or limit line (value to 4 significant
/// digits, trailing zeros dropped).
pub fn line_label(name: &str, value: f64) -> String {
    let name = clean(name);
    let value = format_significant(value, 4);
    if name.trim().is_empty() {
        value
    } else {
        format!("{name} = {value}")
    }
}

/// `[lo, hi]` widened by `fraction` of its span on both sides, or by a unit-sized margin
/// when the span is zero (a flat response must still give a drawable axis).
pub fn padded(lo: f64, hi: f64, fraction: f64) -> (f64, f64) {
    let span = hi - lo;
    if span > 0.0 {
        (lo - span * fraction, hi + span * fraction)
    } else {
        let m = if lo.abs() > 0.0 { lo.abs() * 0.1 } else { 1.0 };
        (lo - m, hi + m)
    }
}

/// Checks that `v` is finite, naming the offending field in the error.
pub fn finite(figure: &'static str, field: &str, v: f64) -> Result<f64, super::PlotError> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(super::PlotError::NotFinite {
            figure,
            field: field.to_string(),
            value: v,
        })
    }
}

/// Turns any plotters drawing error into a [`super::PlotError`].
pub fn backend<E: std::fmt::Display>(figure: &'static str) -> impl Fn(E) -> super::PlotError {
    move |e| super::PlotError::Backend {
        figure,
        message: e.to_string(),
    }
}

/// An f64 axis whose ticks are chosen by [`nice_ticks`] (or by the figure, for
/// categories), so plotters' own tick algorithm never shows, and which has no minor grid.
/// (plotters' `WithKeyPoints` does the same but cannot take a label formatter.)
pub struct Axis {
    inner: RangedCoordf64,
    ticks: Vec<f64>,
}

impl Ranged for Axis {
    type FormatOption = DefaultFormatting;
    type ValueType = f64;

    fn map(&self, value: &f64, limit: (i32, i32)) -> i32 {
        self.inner.map(value, limit)
    }

    fn key_points<Hint: KeyPointHint>(&self, hint: Hint) -> Vec<f64> {
        if hint.weight().allow_light_points() {
            Vec::new()
        } else {
            self.ticks.clone()
        }
    }

    fn range(&self) -> std::ops::Range<f64> {
        self.inner.range()
    }
}

/// The drawing surface every figure draws on.
pub type Root<'b> = DrawingArea<SVGBackend<'b>, Shift>;

/// The chart type shared by all figures.
pub type Chart<'a, 'b> = ChartContext<'a, SVGBackend<'b>, Cartesian2d<Axis, Axis>>;

/// An axis over `[lo, hi]` with ticks (and grid lines) at `keys` only.
pub fn axis(lo: f64, hi: f64, keys: Vec<f64>) -> Axis {
    Axis {
        inner: (lo..hi).into(),
        ticks: keys,
    }
}

/// What [`draw_mesh`] draws.
pub struct Mesh<'f> {
    /// Tick label text for an x value.
    pub x_format: &'f dyn Fn(&f64) -> String,
    /// Tick label text for a y value.
    pub y_format: &'f dyn Fn(&f64) -> String,
    /// Title under the x axis ("" for none).
    pub x_title: String,
    /// Title left of the y axis ("" for none).
    pub y_title: String,
    /// Vertical grid lines at the x ticks.
    pub x_grid: bool,
    /// Horizontal grid lines at the y ticks.
    pub y_grid: bool,
}

/// Draws grid, axes, ticks and axis titles in the shared style: solid light grid lines
/// (plotters' default grid is a transparent black, which breaks PDF/A-1b), no minor lines.
pub fn draw_mesh(
    chart: &mut Chart<'_, '_>,
    mesh: &Mesh<'_>,
    figure: &'static str,
) -> Result<(), super::PlotError> {
    let mut m = chart.configure_mesh();
    m.bold_line_style(GRID.stroke_width(1))
        .light_line_style(TRANSPARENT)
        .axis_style(AXIS.stroke_width(1))
        .set_all_tick_mark_size(4)
        .label_style(font(TICK_PX, AXIS))
        .axis_desc_style(font(TITLE_PX, INK))
        .x_label_formatter(mesh.x_format)
        .y_label_formatter(mesh.y_format);
    if !mesh.x_title.is_empty() {
        m.x_desc(clean(&mesh.x_title));
    }
    if !mesh.y_title.is_empty() {
        m.y_desc(clean(&mesh.y_title));
    }
    if !mesh.x_grid {
        m.disable_x_mesh();
    }
    if !mesh.y_grid {
        m.disable_y_mesh();
    }
    m.draw().map_err(backend(figure))
}

/// Marker shapes; each series gets its own so figures survive grey-scale printing.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Marker {
    /// Filled circle.
    Circle,
    /// Filled square.
    Square,
    /// Filled diamond.
    Diamond,
    /// Open circle (outline only): a point shown but not used, e.g. an excluded run.
    HollowCircle,
    /// Open square (outline only): a second series of the same points, e.g. values as
    /// measured before a drift correction.
    HollowSquare,
    /// No marker (a line-only legend entry).
    None,
}

/// Draws `marker` centred on the pixel `c` at the standard size.
pub fn draw_marker(
    root: &Root<'_>,
    c: (i32, i32),
    marker: Marker,
    color: RGBColor,
    figure: &'static str,
) -> Result<(), super::PlotError> {
    draw_marker_sized(root, c, marker, color, 4, figure)
}

/// Draws `marker` centred on the pixel `c` with radius `r` pixels (thin markers for plots of
/// thousands of points, which would otherwise merge into a solid band).
pub fn draw_marker_sized(
    root: &Root<'_>,
    c: (i32, i32),
    marker: Marker,
    color: RGBColor,
    r: i32,
    figure: &'static str,
) -> Result<(), super::PlotError> {
    let (x, y) = c;
    let r = r.max(1);
    match marker {
        Marker::HollowCircle => root.draw(&Circle::new(c, r, color.stroke_width(1))),
        Marker::HollowSquare => root.draw(&Rectangle::new(
            [(x - r + 1, y - r + 1), (x + r - 1, y + r - 1)],
            color.stroke_width(1),
        )),
        Marker::Circle => root.draw(&Circle::new(c, r, color.filled())),
        Marker::Square => root.draw(&Rectangle::new(
            [(x - r + 1, y - r + 1), (x + r, y + r)],
            color.filled(),
        )),
        Marker::Diamond => root.draw(&Polygon::new(
            vec![
                (x, y - r - 1),
                (x + r + 1, y),
                (x, y + r + 1),
                (x - r - 1, y),
            ],
            color.filled(),
        )),
        Marker::None => Ok(()),
    }
    .map_err(backend(figure))
}

/// Colours that may be drawn dashed. plotters writes integer coordinates, so its own
/// dashed lines come out visibly stepped on a slope; instead a dashed line is drawn solid
/// in a stand-in colour one blue step away from the real one, and [`finish`] rewrites that
/// stroke into the real colour with an SVG `stroke-dasharray` (exact at any zoom, and
/// fine for usvg/typst and PDF/A).
const DASHABLE: [RGBColor; 5] = [INK, SECOND, ACCENT, NEUTRAL, REFERENCE];

fn hex(c: RGBColor) -> String {
    format!("#{:02X}{:02X}{:02X}", c.0, c.1, c.2)
}

/// The stand-in colour for a dashed stroke in `c`.
fn dash_tag(c: RGBColor) -> RGBColor {
    RGBColor(c.0, c.1, c.2 ^ 1)
}

/// Final pass over a figure's SVG: turns stand-in dashed strokes into real dashes.
pub fn finish(svg: String) -> String {
    let mut out = svg;
    for c in DASHABLE {
        let from = format!("stroke=\"{}\"", hex(dash_tag(c)));
        let to = format!(
            "stroke=\"{}\" stroke-dasharray=\"{} {}\"",
            hex(c),
            DASH.0,
            DASH.1
        );
        out = out.replace(&from, &to);
    }
    out
}

/// Draws a solid or dashed polyline through pixel points.
pub fn draw_line(
    root: &Root<'_>,
    points: &[(i32, i32)],
    color: RGBColor,
    width: u32,
    dashed: bool,
    figure: &'static str,
) -> Result<(), super::PlotError> {
    let color = if dashed && DASHABLE.contains(&color) {
        dash_tag(color)
    } else {
        color
    };
    root.draw(&PathElement::new(
        points.to_vec(),
        color.stroke_width(width),
    ))
    .map_err(backend(figure))
}

/// Draws `text`, on a white box when one of the vertical lines at pixel x `crossing`
/// runs through it, so a reference line does not cut through the glyphs. (Boxing every
/// label would also cut the light grid, which looks worse than it helps.) The box uses
/// [`text_width`], which errs on the wide side.
pub fn draw_text_backed(
    root: &Root<'_>,
    text: &str,
    at: (i32, i32),
    style: &TextStyle<'_>,
    crossing: &[i32],
    figure: &'static str,
) -> Result<(), super::PlotError> {
    let px = style.font.get_size() / PLOTTERS_FONT_SCALE;
    let w = text_width(text, px).ceil() as i32;
    let h = px.ceil() as i32;
    let (x, y) = at;
    let x0 = match style.pos.h_pos {
        HPos::Left => x - 2,
        HPos::Center => x - w / 2 - 2,
        HPos::Right => x - w - 2,
    };
    if !crossing.iter().any(|c| (x0..=x0 + w + 4).contains(c)) {
        return draw_text(root, text, at, style, figure);
    }
    let yc = match style.pos.v_pos {
        VPos::Top => y + h / 2,
        VPos::Center => y,
        VPos::Bottom => y - h / 2,
    };
    root.draw(&Rectangle::new(
        [(x0, yc - h / 2 - 1), (x0 + w + 4, yc + h / 2 + 2)],
        PAPER.filled(),
    ))
    .map_err(backend(figure))?;
    draw_text(root, text, at, style, figure)
}

/// Draws `text` at the pixel `at` with the given style.
pub fn draw_text(
    root: &Root<'_>,
    text: &str,
    at: (i32, i32),
    style: &TextStyle<'_>,
    figure: &'static str,
) -> Result<(), super::PlotError> {
    root.draw(&Text::new(clean(text), at, style.clone()))
        .map_err(backend(figure))
}

/// One entry of a legend row.
pub struct LegendEntry {
    /// Text shown after the sample.
    pub text: String,
    /// Colour of line and marker.
    pub color: RGBColor,
    /// Marker in the sample.
    pub marker: Marker,
    /// Whether the sample shows a line, and whether it is dashed.
    pub line: Option<bool>,
}

/// Draws a one-line legend starting at pixel `(x, y)` (y = vertical centre); entries are
/// laid out left to right. Drawn outside the plot area so it can never hide data.
pub fn draw_legend(
    root: &Root<'_>,
    x: i32,
    y: i32,
    entries: &[LegendEntry],
    figure: &'static str,
) -> Result<(), super::PlotError> {
    let style = anchored(LABEL_PX, INK, HPos::Left, VPos::Center);
    let mut cx = x;
    for e in entries {
        if let Some(dashed) = e.line {
            draw_line(root, &[(cx, y), (cx + 26, y)], e.color, 2, dashed, figure)?;
        }
        draw_marker(root, (cx + 13, y), e.marker, e.color, figure)?;
        draw_text(root, &e.text, (cx + 32, y), &style, figure)?;
        cx += 32 + text_width(&e.text, LABEL_PX).ceil() as i32 + 22;
    }
    Ok(())
}

/// Width in pixels that [`draw_legend`] needs for `entries`.
pub fn legend_width(entries: &[LegendEntry]) -> i32 {
    entries
        .iter()
        .map(|e| 32 + text_width(&e.text, LABEL_PX).ceil() as i32 + 22)
        .sum::<i32>()
        - 22
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn format_number_uses_unicode_minus() {
        assert_eq!(format_number(-1.5, 1), "\u{2212}1.5");
    }

    #[test]
    fn format_number_never_writes_negative_zero() {
        assert_eq!(format_number(-0.0001, 2), "0.00");
        assert_eq!(format_number(-0.0, 0), "0");
    }

    #[test]
    fn format_number_of_nan_is_empty() {
        assert_eq!(format_number(f64::NAN, 2), "");
        assert_eq!(format_number(f64::INFINITY, 2), "");
    }

    #[test]
    fn nice_ticks_on_unit_range_step_two_tenths() {
        // 0..1 with about 5 ticks: step 0.2 (Heckbert 1990 nice numbers), one decimal.
        let t = nice_ticks(0.0, 1.0, 5, 0.0).unwrap();
        assert_eq!(t.decimals, 1);
        let shown: Vec<String> = t.values.iter().map(|v| format_number(*v, 1)).collect();
        assert_eq!(shown, ["0.0", "0.2", "0.4", "0.6", "0.8", "1.0"]);
    }

    #[test]
    fn nice_ticks_step_two_and_a_half_gets_extra_decimal() {
        // span 1.25 / 5 = 0.25 → step 0.25 needs two decimals.
        let t = nice_ticks(0.0, 1.25, 5, 0.0).unwrap();
        assert_eq!(t.decimals, 2);
        assert_eq!(format_number(t.values[1], t.decimals), "0.25");
    }

    #[test]
    fn nice_ticks_respects_minimum_step() {
        let t = nice_ticks(0.5, 3.5, 10, 1.0).unwrap();
        assert_eq!(t.values, vec![1.0, 2.0, 3.0]);
        assert_eq!(t.decimals, 0);
    }

    #[test]
    fn nice_ticks_rejects_empty_and_nan_ranges() {
        assert!(nice_ticks(1.0, 1.0, 5, 0.0).is_none());
        assert!(nice_ticks(f64::NAN, 1.0, 5, 0.0).is_none());
    }

    #[test]
    fn format_significant_trims_trailing_zeros() {
        assert_eq!(format_significant(0.42, 3), "0.42");
        assert_eq!(format_significant(2.0, 3), "2");
        assert_eq!(format_significant(-12.345, 3), "\u{2212}12.3");
    }

    #[test]
    fn clean_drops_control_characters() {
        assert_eq!(clean("a\u{0}b\nc"), "abc");
    }

    #[test]
    fn clean_cuts_overlong_text() {
        let long = "x".repeat(1000);
        let c = clean(&long);
        assert_eq!(c.chars().count(), MAX_TEXT_CHARS);
        assert!(c.ends_with('…'));
    }

    #[test]
    fn padded_gives_room_for_flat_data() {
        let (lo, hi) = padded(5.0, 5.0, 0.1);
        assert!(lo < 5.0 && hi > 5.0);
    }
}
