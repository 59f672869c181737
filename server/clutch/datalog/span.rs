//! The stretch of a logged pass a chart opens on: the launch and the lockup with a second of
//! log either side, cut out of the whole file so the traces fill the chart's width.

use crate::datalog::request::LogResult;

/// Seconds of log shown before the launch and after the lockup. Our own choice, no published
/// source: enough to see the engine held at its launch speed before and the two speeds turning
/// together after, short enough that the slip fills most of the chart.
pub const EDGE_S: f64 = 1.0;

/// A stretch of a log, seconds from the file's first sample.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TimeSpan {
    pub from_s: f64,
    pub to_s: f64,
}

impl TimeSpan {
    /// From [`EDGE_S`] before `launch_s` to [`EDGE_S`] after `lockup_s`, kept within `whole`;
    /// `whole` itself when either instant is missing (not a finite time) or falls outside it,
    /// or when the lockup comes before the launch.
    pub fn around(whole: TimeSpan, launch_s: Option<f64>, lockup_s: Option<f64>) -> TimeSpan {
        let inside = |t: f64| t.is_finite() && t >= whole.from_s && t <= whole.to_s;
        match (launch_s, lockup_s) {
            (Some(a), Some(b)) if inside(a) && inside(b) && a <= b => TimeSpan {
                from_s: (a - EDGE_S).max(whole.from_s),
                to_s: (b + EDGE_S).min(whole.to_s),
            },
            _ => whole,
        }
    }
}

impl LogResult {
    /// The file from its first sample to its last.
    pub fn whole_span(&self) -> TimeSpan {
        let t = &self.series.time_s;
        TimeSpan {
            from_s: t.first().copied().unwrap_or(0.0),
            to_s: t.last().copied().unwrap_or(0.0),
        }
    }

    /// The launch and the lockup the analysis found with [`EDGE_S`] either side, within the
    /// file ([`TimeSpan::around`]).
    pub fn launch_span(&self) -> TimeSpan {
        let a = &self.analysis;
        TimeSpan::around(self.whole_span(), Some(a.launch_s), Some(a.lockup_s))
    }

    /// The same result with its per-sample channels cut to the samples within `span`, and the
    /// one just outside each end where the file has one (so a line drawn from them reaches the
    /// span's edges, and a cut that reaches an end of the file ends on its sample). Figures
    /// and event times are the whole analysis's, times stay seconds from the file's start.
    pub fn cut(&self, span: TimeSpan) -> LogResult {
        let t = &self.series.time_s;
        let n = t.len();
        let first = t.partition_point(|&x| x < span.from_s).saturating_sub(1);
        let last = t
            .partition_point(|&x| x <= span.to_s)
            .min(n.saturating_sub(1));
        let idx: Vec<usize> = (first.min(last)..(last + 1).min(n)).collect();
        self.picked(&idx)
    }

    /// Whether this result (whole, or cut to `span` by [`LogResult::cut`]) holds the file's
    /// first and its last sample: whether `span` reaches each end of the file.
    pub fn reaches_ends(&self, span: TimeSpan) -> (bool, bool) {
        let t = &self.series.time_s;
        (
            t.first().is_none_or(|&x| x >= span.from_s - 1e-9),
            t.last().is_none_or(|&x| x <= span.to_s + 1e-9),
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const FILE: TimeSpan = TimeSpan {
        from_s: 0.0,
        to_s: 6.0,
    };

    #[test]
    fn the_span_runs_from_a_second_before_the_launch_to_a_second_after_the_lockup() {
        let s = TimeSpan::around(FILE, Some(2.0), Some(2.97));
        assert_eq!((s.from_s, s.to_s), (1.0, 2.97 + EDGE_S));
    }

    #[test]
    fn the_span_stops_at_the_ends_of_the_file() {
        let s = TimeSpan::around(FILE, Some(0.3), Some(5.5));
        assert_eq!((s.from_s, s.to_s), (0.0, 6.0));
    }

    #[test]
    fn without_a_launch_or_a_lockup_the_span_is_the_whole_file() {
        for (a, b) in [
            (None, Some(3.0)),
            (Some(2.0), None),
            (Some(f64::NAN), Some(3.0)),
            (Some(2.0), Some(7.5)),
            (Some(3.0), Some(2.0)),
        ] {
            assert_eq!(TimeSpan::around(FILE, a, b), FILE, "{a:?} {b:?}");
        }
    }

    /// A flat 4800 rpm engine and an input shaft rising at 4800 rpm/s from 2 s: 6 s at 100 Hz.
    fn long_log() -> LogResult {
        let mut csv = String::from("t,engine,input\n");
        for k in 0..=600 {
            let t = k as f64 / 100.0;
            let n = (4800.0 * (t - 2.0)).clamp(0.0, 4800.0);
            csv.push_str(&format!("{t:.2},4800,{n}\n"));
        }
        let req: crate::datalog::request::LogAnalysisRequest =
            serde_json::from_value(serde_json::json!({
                "units": "metric", "csv": csv,
                "columns": { "time": "t", "engine_rpm": "engine", "input_rpm": "input" },
                "engine": { "torque_curve": [[3000, 600], [8000, 600]], "inertia": 0.25 }
            }))
            .unwrap();
        req.validate().unwrap().run(req.csv.as_bytes()).unwrap()
    }

    #[test]
    fn a_cut_log_keeps_the_samples_of_its_span_and_one_either_side() {
        let r = long_log();
        // 3 % slip at 2 + 0.97 s [derived: 4800·(t − 2) = 0.97·4800].
        let span = r.launch_span();
        assert!(
            (span.from_s - (r.analysis.launch_s - 1.0)).abs() < 1e-9,
            "{span:?}"
        );
        assert!(
            (span.to_s - (r.analysis.lockup_s + 1.0)).abs() < 1e-9,
            "{span:?}"
        );
        let c = r.cut(span);
        let t = &c.series.time_s;
        assert!(t[0] < span.from_s && t[1] >= span.from_s, "{:?}", &t[..2]);
        let n = t.len();
        assert!(
            t[n - 1] > span.to_s && t[n - 2] <= span.to_s,
            "{:?}",
            &t[n - 2..]
        );
        for v in [
            &c.series.engine_rpm,
            &c.series.input_rpm,
            &c.analysis.slip_pct,
        ] {
            assert_eq!(v.len(), n);
        }
        let first = r.series.time_s.iter().position(|&x| x == t[0]).unwrap();
        assert_eq!(c.series.input_rpm, r.series.input_rpm[first..first + n]);
        // The figures are the whole file's; the energy window points at the same samples.
        assert_eq!(c.analysis.slip_energy_j, r.analysis.slip_energy_j);
        assert_eq!(c.analysis.samples, 601);
        assert_eq!(
            c.series.time_s[c.analysis.window.0],
            r.series.time_s[r.analysis.window.0]
        );
        assert_eq!(
            c.series.time_s[c.analysis.window.1],
            r.series.time_s[r.analysis.window.1]
        );
    }

    #[test]
    fn a_cut_says_which_ends_of_the_file_its_span_reaches() {
        let r = long_log();
        let span = r.launch_span();
        assert_eq!(r.cut(span).reaches_ends(span), (false, false));
        let late = TimeSpan {
            from_s: 4.5,
            to_s: 6.0,
        };
        assert_eq!(r.cut(late).reaches_ends(late), (false, true));
        let whole = r.whole_span();
        assert_eq!(r.cut(whole).reaches_ends(whole), (true, true));
        assert_eq!(r.thinned(100).reaches_ends(whole), (true, true));
    }

    #[test]
    fn the_whole_span_cuts_nothing() {
        let r = long_log();
        let c = r.cut(r.whole_span());
        assert_eq!(c.series, r.series);
        assert_eq!(c.analysis, r.analysis);
    }
}
