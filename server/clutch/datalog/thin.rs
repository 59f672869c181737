//! A long trace thinned to a bounded number of points for an answer or a chart, keeping its
//! shape and every sample an event sits on.
//!
//! Method: largest-triangle-three-buckets (LTTB, the published downsampling method for time
//! series drawn on screen: the samples between the ends are split into equal buckets, and from
//! each the sample forming the largest triangle with the one kept before it and the mean of the
//! next bucket is kept), extended to several channels: the triangle areas of each channel, its
//! values scaled to its own range, are summed, so one choice of samples serves every channel. The event samples the
//! caller names (launch, lockup, lowest engine speed, the peaks, the tire-spin edges) are then
//! added back, so no event falls between two kept points. Pure: indices in, indices out.

/// Most points of an analysis answer's trace.
pub const TRACE_MAX_POINTS: usize = 5_000;

/// Indices (increasing, distinct) of at most `max` samples of a trace of `time.len()` samples:
/// the first and the last, `forced` (in their order of priority: when they alone pass `max`,
/// the later ones are left out), and the rest chosen by multi-channel LTTB. Every sample when
/// the trace has at most `max`. Channels are as long as `time`; non-finite values count as 0.
/// `max` below 3 is taken as 3.
pub fn thin(time: &[f64], channels: &[&[f64]], forced: &[usize], max: usize) -> Vec<usize> {
    let n = time.len();
    let max = max.max(3);
    if n <= max {
        return (0..n).collect();
    }
    let mut keep: Vec<usize> = vec![0, n - 1];
    for &i in forced {
        if keep.len() >= max {
            break;
        }
        if i < n && !keep.contains(&i) {
            keep.push(i);
        }
    }
    let budget = max - keep.len();
    if budget > 0 {
        keep.extend(lttb(time, channels, budget + 2));
    }
    keep.sort_unstable();
    keep.dedup();
    keep
}

/// Scale of a channel: its range (1 when flat or empty), and its least finite value.
fn scale(v: &[f64]) -> (f64, f64) {
    let (lo, hi) = v
        .iter()
        .filter(|x| x.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        });
    if !lo.is_finite() || hi <= lo {
        (1.0, 0.0)
    } else {
        (hi - lo, lo)
    }
}

/// LTTB choosing `points` samples (at least 3, at most the length) including the first and last.
fn lttb(time: &[f64], channels: &[&[f64]], points: usize) -> Vec<usize> {
    let n = time.len();
    let points = points.clamp(3, n);
    let span = (time[n - 1] - time[0]).abs().max(f64::MIN_POSITIVE);
    let scales: Vec<(f64, f64)> = channels.iter().map(|c| scale(c)).collect();
    let x = |i: usize| (time[i] - time[0]) / span;
    let y = |c: usize, i: usize| {
        let v = channels[c][i];
        if v.is_finite() {
            (v - scales[c].1) / scales[c].0
        } else {
            0.0
        }
    };
    let every = (n - 2) as f64 / (points - 2) as f64;
    let bucket = |b: usize| -> (usize, usize) {
        let from = (b as f64 * every) as usize + 1;
        let to = (((b + 1) as f64 * every) as usize + 1).min(n - 1);
        (from, to.max(from + 1).min(n - 1))
    };
    let mut out = Vec::with_capacity(points);
    out.push(0);
    let mut a = 0;
    for b in 0..points - 2 {
        let (from, to) = bucket(b);
        // The next bucket's mean point (the last sample after the last bucket).
        let (nf, nt) = if b + 1 < points - 2 {
            bucket(b + 1)
        } else {
            (n - 1, n)
        };
        let count = (nt - nf) as f64;
        let avg_x = (nf..nt).map(x).sum::<f64>() / count;
        let avg_y: Vec<f64> = (0..channels.len())
            .map(|c| (nf..nt).map(|i| y(c, i)).sum::<f64>() / count)
            .collect();
        let mut best = from;
        let mut best_area = -1.0;
        for i in from..to {
            let area: f64 = (0..channels.len())
                .map(|c| {
                    ((x(a) - avg_x) * (y(c, i) - y(c, a)) - (x(a) - x(i)) * (avg_y[c] - y(c, a)))
                        .abs()
                })
                .sum();
            if area > best_area {
                best_area = area;
                best = i;
            }
        }
        out.push(best);
        a = best;
    }
    out.push(n - 1);
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn trace(n: usize) -> (Vec<f64>, Vec<f64>) {
        let t: Vec<f64> = (0..n).map(|i| i as f64 * 0.001).collect();
        let v: Vec<f64> = t.iter().map(|x| (x * 7.0).sin() * 1000.0).collect();
        (t, v)
    }

    #[test]
    fn a_short_trace_is_kept_whole() {
        let (t, v) = trace(100);
        assert_eq!(thin(&t, &[&v], &[], 100), (0..100).collect::<Vec<_>>());
    }

    #[test]
    fn a_long_trace_keeps_at_most_max_points_with_its_ends_and_every_event() {
        let (t, mut v) = trace(200_000);
        // A one-sample spike LTTB need not pick, named as an event.
        v[123_457] = 5.0e4;
        let forced = [77_777, 123_457, 150_001, 150_002];
        let k = thin(&t, &[&v], &forced, TRACE_MAX_POINTS);
        assert!(
            k.len() <= TRACE_MAX_POINTS && k.len() > TRACE_MAX_POINTS - 10,
            "{}",
            k.len()
        );
        assert!(k.windows(2).all(|w| w[0] < w[1]));
        assert_eq!((k[0], k[k.len() - 1]), (0, 199_999));
        for f in forced {
            assert!(k.binary_search(&f).is_ok(), "{f}");
        }
    }

    #[test]
    fn more_events_than_room_keeps_the_first_named() {
        let (t, v) = trace(10_000);
        let forced: Vec<usize> = (1..9_000).step_by(2).collect();
        let k = thin(&t, &[&v], &forced, 100);
        assert_eq!(k.len(), 100);
        assert!(k.binary_search(&1).is_ok() && k.binary_search(&195).is_ok());
        assert!(k.binary_search(&8_999).is_err());
    }

    #[test]
    fn lttb_keeps_the_extremes_of_a_smooth_channel() {
        // One slow hump: its top sample lies in one bucket and has the largest triangle.
        let n = 100_001;
        let t: Vec<f64> = (0..n).map(|i| i as f64).collect();
        let v: Vec<f64> = t.iter().map(|x| -(x - 31_337.0).powi(2)).collect();
        let k = thin(&t, &[&v], &[], 500);
        let top = k.iter().map(|&i| v[i]).fold(f64::NEG_INFINITY, f64::max);
        assert!(top > -(200.0f64).powi(2), "{top}");
    }
}
