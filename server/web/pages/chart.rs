//! Small server-rendered SVG line charts: scales, ticks and paths worked out here, drawn by
//! `templates/chart.html`. Lines differ by dash pattern and carry their own labels, so a chart
//! reads in black and white.
//!
//! Text stays readable however the SVG is scaled into its card: every text is at least
//! [`FONT`] chart units, and each [`Size`] has a CSS class (`static/style.css`) whose
//! `min-width` keeps the drawing from shrinking below `width × 11 / FONT` pixels, so no text
//! is drawn below 11 px on screen (our own floor, no published source; the printed sheet keeps
//! at least 7 pt, checked by the browser test).

/// The chart's text size, in the SVG's own units (the smallest text drawn).
pub const FONT: f64 = 13.0;

/// Length of a legend's stretch of line, chart units.
pub const SWATCH: f64 = 28.0;

/// How large a chart is drawn, by where it sits. Each has a CSS class of the same name whose
/// `min-width` is `width × 11 / FONT` px (a unit test reads the stylesheet; the browser test
/// measures the text at 820 and 1366 px).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Size {
    /// A chart with a card's full width: 720 × 360 (shrinks to 610 px).
    Wide,
    /// One of two charts side by side (the pass page, the launch preview): 560 × 320
    /// (shrinks to 474 px).
    Compact,
    /// The setup sheet's chart in half of a page's width: 400 × 260 (shrinks to 339 px; on
    /// Letter or A4 paper it is printed about 370 px wide, so its text is about 9 pt).
    Paper,
}

impl Size {
    /// Width, height and the right margin (where the lines' labels sit), in chart units.
    fn box_units(self) -> (f64, f64, f64) {
        match self {
            Self::Wide => (720.0, 360.0, 110.0),
            Self::Compact => (560.0, 320.0, 126.0),
            Self::Paper => (400.0, 260.0, 92.0),
        }
    }

    /// The CSS class that sets the drawing's least and greatest width on the page.
    pub fn class(self) -> &'static str {
        match self {
            Self::Wide => "wide",
            Self::Compact => "compact",
            Self::Paper => "paper",
        }
    }
}

/// A line chart ready to draw.
#[derive(Debug, Clone)]
pub struct Chart {
    pub size: Size,
    pub width: f64,
    /// The drawing's height, a legend below the plot included.
    pub height: f64,
    /// Baseline of the x axis's title.
    pub x_title_y: f64,
    pub left: f64,
    pub top: f64,
    pub right: f64,
    pub bottom: f64,
    pub title: String,
    pub x_title: String,
    pub y_title: String,
    pub x_ticks: Vec<Tick>,
    pub y_ticks: Vec<Tick>,
    /// Decimals of the tick labels (values quoted on the chart use the same).
    pub x_decimals: usize,
    pub y_decimals: usize,
    pub series: Vec<Series>,
    /// Shaded regions (closed paths), e.g. where the clutch slips.
    pub bands: Vec<Band>,
    /// Vertical marks at an x value.
    pub marks: Vec<Mark>,
    /// Horizontal marks at a y value.
    pub levels: Vec<Mark>,
}

#[derive(Debug, Clone)]
pub struct Tick {
    pub at: f64,
    pub label: String,
}

#[derive(Debug, Clone)]
pub struct Series {
    /// CSS class: the line's style (`engine`, `capacity`, `static`, `before`, `height`...).
    pub class: &'static str,
    pub label: String,
    pub path: String,
    /// Where the label sits (end of the line, or its place in the legend).
    pub label_x: f64,
    pub label_y: f64,
    /// In a legend: where a short stretch of the line's own style starts, before the label.
    pub swatch: Option<(f64, f64)>,
    /// Points drawn as dots (for measured data), each with its label (shown on hover).
    pub dots: Vec<(f64, f64, String)>,
    /// Where the line leaves the top of the scale, if it does.
    pub off_scale: Option<OffScale>,
}

/// The mark where a line leaves the top of the scale: a triangle on the top edge and the
/// highest value the line reaches, so a clipped line never reads as lower than it is.
#[derive(Debug, Clone)]
pub struct OffScale {
    /// Pixel x of the exit point on the top edge.
    pub x: f64,
    /// E.g. "clutch off scale, up to 1582 at 7000".
    pub label: String,
    /// Text anchor that keeps the label inside the chart (`start` or `end`).
    pub anchor: &'static str,
}

#[derive(Debug, Clone)]
pub struct Band {
    pub class: &'static str,
    pub path: String,
}

#[derive(Debug, Clone)]
pub struct Mark {
    pub class: &'static str,
    pub label: String,
    /// Pixel position along the axis.
    pub at: f64,
    /// Where the label sits: beside the mark, or its place in the legend.
    pub label_x: f64,
    pub label_y: f64,
    /// In a legend: where a short stretch of the mark's own style starts, before the label.
    pub swatch: Option<(f64, f64)>,
}

/// Maps data coordinates to pixels.
#[derive(Debug, Clone, Copy)]
pub struct Frame {
    pub x0: f64,
    pub x1: f64,
    pub y0: f64,
    pub y1: f64,
    left: f64,
    top: f64,
    right: f64,
    bottom: f64,
}

impl Frame {
    pub fn x(&self, v: f64) -> f64 {
        self.left + (v - self.x0) / (self.x1 - self.x0) * (self.right - self.left)
    }
    pub fn y(&self, v: f64) -> f64 {
        self.bottom - (v - self.y0) / (self.y1 - self.y0) * (self.bottom - self.top)
    }
}

impl Chart {
    /// An empty chart a card wide over the data ranges (widened to round tick values).
    pub fn new(
        title: &str,
        x_title: &str,
        y_title: &str,
        x: (f64, f64),
        y: (f64, f64),
    ) -> (Self, Frame) {
        Self::sized(Size::Wide, title, x_title, y_title, x, y)
    }

    /// An empty chart of `size` over the data ranges (widened to round tick values).
    pub fn sized(
        size: Size,
        title: &str,
        x_title: &str,
        y_title: &str,
        x: (f64, f64),
        y: (f64, f64),
    ) -> (Self, Frame) {
        Self::build(size, false, title, x_title, y_title, x, y)
    }

    /// An empty chart of `size` whose x axis runs exactly over `x` (a stretch of time cut out
    /// of a longer record: the edges are the stretch's, ticks only inside it); y as
    /// [`Chart::sized`].
    pub fn over(
        size: Size,
        title: &str,
        x_title: &str,
        y_title: &str,
        x: (f64, f64),
        y: (f64, f64),
    ) -> (Self, Frame) {
        Self::build(size, true, title, x_title, y_title, x, y)
    }

    fn build(
        size: Size,
        exact_x: bool,
        title: &str,
        x_title: &str,
        y_title: &str,
        x: (f64, f64),
        y: (f64, f64),
    ) -> (Self, Frame) {
        let (width, height, right_margin) = size.box_units();
        let (left, top, right, bottom) = (64.0, 20.0, width - right_margin, height - 46.0);
        // As many ticks as their labels leave room for: up to 4.5 characters across, a line
        // of text and more between them up the side.
        let x_n = ((right - left) / (FONT * 4.5)).floor().clamp(3.0, 8.0) as usize;
        let y_n = ((bottom - top) / (FONT * 2.8)).floor().clamp(3.0, 6.0) as usize;
        let mut x_ticks_v = nice_ticks(x.0, x.1, x_n);
        let y_ticks_v = nice_ticks(y.0, y.1, y_n);
        let (x0, x1) = if exact_x && x.1 > x.0 {
            let step = x_ticks_v.windows(2).next().map_or(0.0, |w| w[1] - w[0]);
            let eps = step * 1e-6;
            x_ticks_v.retain(|v| *v >= x.0 - eps && *v <= x.1 + eps);
            x
        } else {
            (
                *x_ticks_v.first().unwrap_or(&x.0),
                *x_ticks_v.last().unwrap_or(&x.1),
            )
        };
        let frame = Frame {
            x0,
            x1,
            y0: *y_ticks_v.first().unwrap_or(&y.0),
            y1: *y_ticks_v.last().unwrap_or(&y.1),
            left,
            top,
            right,
            bottom,
        };
        let x_decimals = decimals_of(&x_ticks_v);
        let y_decimals = decimals_of(&y_ticks_v);
        let x_label = |v: f64| format!("{v:.x_decimals$}");
        let y_label = |v: f64| format!("{v:.y_decimals$}");

        let chart = Self {
            size,
            width,
            height,
            x_title_y: height - 7.0,
            left,
            top,
            right,
            bottom,
            title: title.into(),
            x_title: x_title.into(),
            y_title: y_title.into(),
            x_ticks: x_ticks_v
                .iter()
                .map(|v| Tick {
                    at: frame.x(*v),
                    label: x_label(*v),
                })
                .collect(),
            y_ticks: y_ticks_v
                .iter()
                .map(|v| Tick {
                    at: frame.y(*v),
                    label: y_label(*v),
                })
                .collect(),
            x_decimals,
            y_decimals,
            series: Vec::new(),
            bands: Vec::new(),
            marks: Vec::new(),
            levels: Vec::new(),
        };
        (chart, frame)
    }

    /// The text size, chart units (the SVG's `font-size`).
    pub fn font(&self) -> f64 {
        FONT
    }

    /// Length of a legend's stretch of line, chart units.
    pub fn swatch_len(&self) -> f64 {
        SWATCH
    }

    /// Spreads the labels at the lines' ends apart where they would overlap (lines that end
    /// together), each at least a line of text below the one above it.
    pub fn spread_labels(&mut self) {
        let mut order: Vec<usize> = (0..self.series.len()).collect();
        order.sort_by(|&i, &j| self.series[i].label_y.total_cmp(&self.series[j].label_y));
        for k in 1..order.len() {
            let (above, this) = (order[k - 1], order[k]);
            let least = self.series[above].label_y + FONT * 1.1;
            if self.series[this].label_y < least {
                self.series[this].label_y = least;
            }
        }
    }

    /// Moves every line's and mark's label out of the plot into a legend below the x axis's
    /// title (two to a row), each with a short stretch of its own line style, so no label
    /// lies across another trace. The drawing grows by the legend's height.
    pub fn legend_below(&mut self) {
        let row_h = FONT * 1.5;
        let col_w = (self.right - self.left) / 2.0;
        // The first row's baseline: a line of text below the x axis's title.
        let top = self.height + FONT + 2.0;
        let place = |k: usize| {
            let x = self.left + col_w * (k % 2) as f64;
            let y = top + row_h * (k / 2) as f64;
            (x, y)
        };
        let swatch = |x: f64, y: f64| ((x * 10.0).round() / 10.0, (y - FONT * 0.35).round());
        let mut k = 0;
        for s in &mut self.series {
            let (x, y) = place(k);
            s.swatch = Some(swatch(x, y));
            (s.label_x, s.label_y) = (x + SWATCH + 6.0, y);
            k += 1;
        }
        for m in &mut self.marks {
            let (x, y) = place(k);
            m.swatch = Some(swatch(x, y));
            (m.label_x, m.label_y) = (x + SWATCH + 6.0, y);
            k += 1;
        }
        let rows = k.div_ceil(2).max(1);
        // Room below the last baseline for the descenders.
        self.height = top + row_h * (rows - 1) as f64 + 6.0;
    }

    /// Adds a line through `points` (data coordinates).
    pub fn line(&mut self, f: &Frame, class: &'static str, label: &str, points: &[(f64, f64)]) {
        self.line_with_dots(f, class, label, points, &[]);
    }

    /// Adds a line through measured points, drawn as dots labelled with `tips` (one per point).
    pub fn line_with_dots(
        &mut self,
        f: &Frame,
        class: &'static str,
        label: &str,
        points: &[(f64, f64)],
        tips: &[String],
    ) {
        if points.is_empty() {
            return;
        }
        let px: Vec<(f64, f64)> = points.iter().map(|&(x, y)| (f.x(x), f.y(y))).collect();
        let (lx, ly) = *px.last().unwrap_or(&(0.0, 0.0));
        let dots = px
            .iter()
            .zip(tips)
            .map(|(&(x, y), tip)| (x, y, tip.clone()))
            .collect();
        let off_scale = self.off_scale(f, label, points);
        self.series.push(Series {
            class,
            label: label.into(),
            path: path_of(&px),
            label_x: lx + 6.0,
            // A line that leaves the top of the scale is labelled where it leaves.
            label_y: (ly + FONT * 0.35).clamp(self.top + FONT * 0.7, self.bottom),
            swatch: None,
            dots,
            off_scale,
        });
    }

    /// The off-scale mark of a line that rises above the top of the scale: where it first
    /// leaves (interpolated on the segment that crosses) and its highest point.
    fn off_scale(&self, f: &Frame, label: &str, points: &[(f64, f64)]) -> Option<OffScale> {
        let exit = points.iter().position(|p| p.1 > f.y1)?;
        let x_exit = match exit.checked_sub(1).map(|i| points[i]) {
            Some((x0, y0)) => {
                let (x1, y1) = points[exit];
                x0 + (x1 - x0) * (f.y1 - y0) / (y1 - y0)
            }
            None => points[exit].0,
        };
        let (x_max, y_max) = points
            .iter()
            .copied()
            .fold(
                (f64::NAN, f64::NEG_INFINITY),
                |a, p| if p.1 > a.1 { p } else { a },
            );
        let px = (f.x(x_exit) * 10.0).round() / 10.0;
        Some(OffScale {
            x: px,
            label: format!(
                "{label} off scale, up to {y_max:.yd$} at {x_max:.xd$}",
                yd = self.y_decimals,
                xd = self.x_decimals
            ),
            anchor: if px > (self.left + self.right) / 2.0 {
                "end"
            } else {
                "start"
            },
        })
    }

    /// Shades the area between two lines sampled at the same x values wherever `lower` is
    /// below `upper`.
    pub fn shade_below(
        &mut self,
        f: &Frame,
        class: &'static str,
        lower: &[(f64, f64)],
        upper: &[(f64, f64)],
    ) {
        let mut run: Vec<usize> = Vec::new();
        let flush = |run: &mut Vec<usize>, bands: &mut Vec<Band>| {
            if run.len() >= 2 {
                let mut px: Vec<(f64, f64)> = run
                    .iter()
                    .map(|&i| (f.x(upper[i].0), f.y(upper[i].1)))
                    .collect();
                px.extend(
                    run.iter()
                        .rev()
                        .map(|&i| (f.x(lower[i].0), f.y(lower[i].1))),
                );
                bands.push(Band {
                    class,
                    path: format!("{}Z", path_of(&px)),
                });
            }
            run.clear();
        };
        for i in 0..lower.len().min(upper.len()) {
            if lower[i].1 < upper[i].1 {
                run.push(i);
            } else {
                if let Some(&last) = run.last() {
                    run.push(last + 1);
                }
                flush(&mut run, &mut self.bands);
            }
        }
        flush(&mut run, &mut self.bands);
    }

    /// A vertical mark at `x`, its label beside it at the top, each further mark's a line lower.
    pub fn mark_x(&mut self, f: &Frame, class: &'static str, label: String, x: f64) {
        if x >= f.x0 && x <= f.x1 {
            let at = f.x(x);
            let row = self.marks.len() as f64;
            self.marks.push(Mark {
                class,
                label,
                at,
                label_x: at + 3.0,
                label_y: self.top + FONT * (0.9 + 1.15 * row),
                swatch: None,
            });
        }
    }

    /// A horizontal mark at `y`, its label in the right margin.
    pub fn mark_y(&mut self, f: &Frame, class: &'static str, label: String, y: f64) {
        if y >= f.y0 && y <= f.y1 {
            let at = f.y(y);
            self.levels.push(Mark {
                class,
                label,
                at,
                label_x: self.right + 4.0,
                label_y: at + FONT * 0.35,
                swatch: None,
            });
        }
    }
}

/// Enough decimals to tell neighbouring ticks apart, and no more.
fn decimals_of(ticks: &[f64]) -> usize {
    let step = ticks
        .windows(2)
        .map(|w| w[1] - w[0])
        .next()
        .unwrap_or(1.0)
        .abs();
    (0..6)
        .find(|d| {
            let scaled = step * 10f64.powi(*d as i32);
            (scaled - scaled.round()).abs() < 1e-6
        })
        .unwrap_or(6)
}

fn path_of(px: &[(f64, f64)]) -> String {
    let mut d = String::with_capacity(px.len() * 14);
    for (i, (x, y)) in px.iter().enumerate() {
        d.push_str(if i == 0 { "M" } else { "L" });
        clutch::quantity::push_fixed(&mut d, *x, 1);
        d.push(',');
        clutch::quantity::push_fixed(&mut d, *y, 1);
    }
    d
}

/// Round tick values covering `[lo, hi]` with about `n` intervals (1, 2, 2.5 or 5 x 10^k).
pub fn nice_ticks(lo: f64, hi: f64, n: usize) -> Vec<f64> {
    let (lo, hi) = if (hi - lo).abs() < 1e-12 {
        (lo - 1.0, hi + 1.0)
    } else {
        (lo.min(hi), lo.max(hi))
    };
    let raw = (hi - lo) / n.max(1) as f64;
    let mag = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 2.5, 5.0, 10.0]
        .iter()
        .map(|m| m * mag)
        .find(|s| *s >= raw)
        .unwrap_or(10.0 * mag);
    let start = (lo / step).floor() * step;
    let mut ticks = Vec::new();
    let mut v = start;
    while v < hi + step * 0.999 && ticks.len() < 50 {
        ticks.push((v / step).round() * step);
        v += step;
    }
    ticks
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tick_labels_carry_the_decimals_their_step_needs() {
        let (c, _) = Chart::new("t", "x", "y", (0.0, 100.0), (1.84, 1.875));
        assert_eq!(c.x_ticks[1].label, "20");
        let labels: Vec<&str> = c.y_ticks.iter().map(|t| t.label.as_str()).collect();
        assert_eq!(labels, ["1.84", "1.85", "1.86", "1.87", "1.88"]);
    }

    /// The smallest text a chart may show on screen, CSS px.
    const MIN_TEXT_PX: f64 = 11.0;

    #[test]
    fn each_size_keeps_its_text_at_11_px_through_the_stylesheet() {
        let css = include_str!("../../../static/style.css");
        for size in [Size::Wide, Size::Compact, Size::Paper] {
            let rule = format!("figure.chart.{} svg {{ min-width: ", size.class());
            let at = css.find(&rule).unwrap_or_else(|| panic!("no rule {rule}"));
            let px: f64 = css[at + rule.len()..]
                .split("px")
                .next()
                .and_then(|v| v.trim().parse().ok())
                .unwrap_or_else(|| panic!("{rule} has no px width"));
            // At that width FONT chart units are drawn MIN_TEXT_PX or larger, and not much
            // larger (the least width is the one that keeps the floor, rounded up).
            let text = FONT * px / size.box_units().0;
            assert!(
                (MIN_TEXT_PX..MIN_TEXT_PX + 0.05).contains(&text),
                "{}: {text}",
                size.class()
            );
        }
    }

    #[test]
    fn a_chart_over_a_stretch_keeps_its_edges_and_ticks_only_inside() {
        let (c, f) = Chart::over(Size::Compact, "t", "x", "y", (1.32, 3.9), (0.0, 100.0));
        assert_eq!((f.x0, f.x1), (1.32, 3.9));
        assert_eq!(f.x(1.32), c.left);
        assert_eq!(f.x(3.9), c.right);
        let labels: Vec<&str> = c.x_ticks.iter().map(|t| t.label.as_str()).collect();
        assert_eq!(labels, ["1.5", "2.0", "2.5", "3.0", "3.5"]);
    }

    #[test]
    fn a_legend_puts_every_label_below_the_plot() {
        let (mut c, f) = Chart::new("t", "x", "y", (0.0, 4.0), (0.0, 10.0));
        for class in ["engine", "input", "before", "static"] {
            c.line(&f, class, class, &[(0.0, 9.0), (4.0, 9.5)]);
        }
        c.mark_x(&f, "lockup", "lockup".into(), 2.0);
        let before = c.height;
        c.legend_below();
        for (y, x) in c
            .series
            .iter()
            .map(|s| (s.label_y, s.label_x))
            .chain(c.marks.iter().map(|m| (m.label_y, m.label_x)))
        {
            assert!(y - FONT > c.x_title_y && y <= c.height, "{y}");
            assert!(x > c.left && x < c.right, "{x}");
        }
        // Five entries, two to a row: three rows.
        assert_eq!(c.height, before + FONT + 2.0 + 2.0 * FONT * 1.5 + 6.0);
        let ys: std::collections::BTreeSet<i64> =
            c.series.iter().map(|s| s.label_y as i64).collect();
        assert_eq!(ys.len(), 2, "{ys:?}");
    }

    #[test]
    fn ticks_are_round_and_cover_the_range() {
        assert_eq!(
            nice_ticks(3000.0, 7000.0, 8),
            vec![
                3000.0, 3500.0, 4000.0, 4500.0, 5000.0, 5500.0, 6000.0, 6500.0, 7000.0
            ]
        );
        let t = nice_ticks(0.0, 583.0, 6);
        assert_eq!(t.first(), Some(&0.0));
        assert!(*t.last().unwrap() >= 583.0);
    }

    #[test]
    fn a_line_that_leaves_the_scale_is_marked_where_it_leaves_with_its_top_value() {
        let (mut c, f) = Chart::new("t", "x", "y", (0.0, 4.0), (0.0, 10.0));
        // Crosses y = 10 halfway between x = 2 and x = 3, tops out at 30.
        c.line(
            &f,
            "capacity",
            "clutch",
            &[(0.0, 0.0), (2.0, 8.0), (3.0, 12.0), (4.0, 30.0)],
        );
        c.line(&f, "engine", "engine", &[(0.0, 5.0), (4.0, 5.0)]);
        let off = c.series[0].off_scale.as_ref().expect("marked");
        assert_eq!(off.label, "clutch off scale, up to 30 at 4.0");
        assert!(
            (off.x - f.x(2.5)).abs() <= 0.05 + 1e-9,
            "{} vs {}",
            off.x,
            f.x(2.5)
        );
        assert!(c.series[1].off_scale.is_none());
    }

    #[test]
    fn a_slip_region_is_shaded_only_where_capacity_is_below() {
        let (mut c, f) = Chart::new("t", "x", "y", (0.0, 4.0), (0.0, 10.0));
        let engine = [(0.0, 5.0), (1.0, 5.0), (2.0, 5.0), (3.0, 5.0), (4.0, 5.0)];
        let capacity = [(0.0, 2.0), (1.0, 4.0), (2.0, 6.0), (3.0, 8.0), (4.0, 9.0)];
        c.shade_below(&f, "slip", &capacity, &engine);
        assert_eq!(c.bands.len(), 1);
    }
}
