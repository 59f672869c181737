//! Small server-rendered SVG line charts: scales, ticks and paths worked out here, drawn by
//! `templates/chart.html`. Lines differ by dash pattern and carry their own labels, so a chart
//! reads in black and white.

/// A line chart ready to draw.
#[derive(Debug, Clone)]
pub struct Chart {
    pub width: f64,
    pub height: f64,
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
    /// Where the label sits (end of the line).
    pub label_x: f64,
    pub label_y: f64,
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
    /// An empty chart over the data ranges (widened to round tick values).
    pub fn new(
        title: &str,
        x_title: &str,
        y_title: &str,
        x: (f64, f64),
        y: (f64, f64),
    ) -> (Self, Frame) {
        let (width, height) = (720.0, 360.0);
        let (left, top, right, bottom) = (64.0, 20.0, width - 110.0, height - 44.0);
        let x_ticks_v = nice_ticks(x.0, x.1, 8);
        let y_ticks_v = nice_ticks(y.0, y.1, 6);
        let frame = Frame {
            x0: *x_ticks_v.first().unwrap_or(&x.0),
            x1: *x_ticks_v.last().unwrap_or(&x.1),
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
            width,
            height,
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
            label_y: (ly + 4.0).clamp(self.top + 8.0, self.bottom),
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

    pub fn mark_x(&mut self, f: &Frame, class: &'static str, label: String, x: f64) {
        if x >= f.x0 && x <= f.x1 {
            self.marks.push(Mark {
                class,
                label,
                at: f.x(x),
            });
        }
    }

    pub fn mark_y(&mut self, f: &Frame, class: &'static str, label: String, y: f64) {
        if y >= f.y0 && y <= f.y1 {
            self.levels.push(Mark {
                class,
                label,
                at: f.y(y),
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
        d.push_str(&format!("{x:.1},{y:.1}"));
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
