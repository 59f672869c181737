//! Engine torque against speed from dyno points, linear between points.

use crate::InputError;
use crate::quantity::limits::{CURVE_POINTS, CURVE_TORQUE, ENGINE_SPEED};
use crate::units::Units;

/// A validated torque curve: at least 3 points, strictly rising rpm within 500–15 000,
/// positive finite torque in N·m.
#[derive(Debug, Clone, PartialEq)]
pub struct TorqueCurve {
    rpm: Vec<f64>,
    nm: Vec<f64>,
}

impl TorqueCurve {
    /// Builds a curve from (rpm, N·m) points in any order. Exact duplicate points are dropped;
    /// two different torques at one rpm are an error. `field` is the JSON path of the list;
    /// errors point at `field[i]` (index as given) and quote limits in `units`.
    pub fn new(points: &[(f64, f64)], field: &str, units: Units) -> Result<Self, InputError> {
        if points.len() > CURVE_POINTS {
            return Err(InputError::new(
                field,
                format!("has more than {CURVE_POINTS} points"),
            ));
        }
        for (i, &(rpm, nm)) in points.iter().enumerate() {
            let at = || format!("{field}[{i}]");
            if !ENGINE_SPEED.admits(rpm) {
                let m = ENGINE_SPEED.message(units);
                return Err(InputError::new(
                    at(),
                    format!("point {}: engine speed {m}", i + 1),
                ));
            }
            if !CURVE_TORQUE.admits(nm) {
                let m = CURVE_TORQUE.message(units);
                return Err(InputError::new(
                    at(),
                    format!("point {}: torque {m}", i + 1),
                ));
            }
        }
        let mut order: Vec<usize> = (0..points.len()).collect();
        order.sort_by(|&a, &b| points[a].0.total_cmp(&points[b].0));
        let (mut rpm, mut nm) = (
            Vec::with_capacity(order.len()),
            Vec::with_capacity(order.len()),
        );
        for i in order {
            let (r, t) = points[i];
            if rpm.last() == Some(&r) {
                if nm.last() != Some(&t) {
                    return Err(InputError::new(
                        format!("{field}[{i}]"),
                        format!("point {}: a second, different torque at {r} rpm", i + 1),
                    ));
                }
                continue;
            }
            rpm.push(r);
            nm.push(t);
        }
        if rpm.len() < 3 {
            return Err(InputError::new(
                field,
                "needs at least 3 points at different engine speeds",
            ));
        }
        Ok(Self { rpm, nm })
    }

    /// First and last engine speed of the curve, rev/min.
    pub fn range(&self) -> (f64, f64) {
        (self.rpm[0], self.rpm[self.rpm.len() - 1])
    }

    /// True when `rpm` lies inside the curve's range (ends included).
    #[inline]
    pub fn contains(&self, rpm: f64) -> bool {
        let (lo, hi) = self.range();
        rpm >= lo && rpm <= hi
    }

    /// The points, sorted by rpm: (rev/min, N·m).
    pub fn points(&self) -> impl Iterator<Item = (f64, f64)> + '_ {
        self.rpm.iter().copied().zip(self.nm.iter().copied())
    }

    /// Number of points after de-duplication.
    pub fn len(&self) -> usize {
        self.rpm.len()
    }

    /// Always false: a valid curve has at least 3 points.
    pub fn is_empty(&self) -> bool {
        self.rpm.is_empty()
    }

    /// Engine torque at `rpm`, N·m, by linear interpolation between the neighbouring points;
    /// `None` outside the curve's range.
    pub fn torque_at(&self, rpm: f64) -> Option<f64> {
        if !self.contains(rpm) {
            return None;
        }
        let i = self.segment_of(rpm);
        Some(self.on_segment(i, rpm))
    }

    /// Index `i` of the segment [rpm[i], rpm[i+1]] holding `rpm` (clamped to the ends).
    pub(crate) fn segment_of(&self, rpm: f64) -> usize {
        let upper = self.rpm.partition_point(|&r| r <= rpm);
        upper.saturating_sub(1).min(self.rpm.len() - 2)
    }

    /// The same segment as [`Self::segment_of`] finds, tried first as `last` (where the
    /// previous speed was; start from `segment(0)`): a run along the curve stays in one
    /// segment for many steps.
    #[inline]
    pub(crate) fn segment_from(&self, last: Segment, rpm: f64) -> Segment {
        // Every point up to `last`'s first is ≤ rpm and every one after is > rpm, as
        // `partition_point` would find.
        if last.0 <= rpm && rpm < last.2 {
            last
        } else {
            self.segment(self.segment_of(rpm))
        }
    }

    /// Linear interpolation on segment `i`, also used to extrapolate just past its ends.
    pub(crate) fn on_segment(&self, i: usize, rpm: f64) -> f64 {
        interpolate(self.segment(i), rpm)
    }

    /// Segment `i` as (rpm0, N·m0, rpm1, N·m1).
    #[inline]
    pub(crate) fn segment(&self, i: usize) -> Segment {
        (self.rpm[i], self.nm[i], self.rpm[i + 1], self.nm[i + 1])
    }
}

/// A segment of the curve: (rpm0, N·m0, rpm1, N·m1).
pub(crate) type Segment = (f64, f64, f64, f64);

/// The torque on `segment` at `rpm`, linearly (also just past its ends).
#[inline]
pub(crate) fn interpolate((r0, t0, r1, t1): Segment, rpm: f64) -> f64 {
    t0 + (t1 - t0) * (rpm - r0) / (r1 - r0)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn demo() -> TorqueCurve {
        let pts = [
            (5000.0, 480.0),
            (3000.0, 410.0),
            (4000.0, 455.0),
            (4000.0, 455.0),
        ];
        TorqueCurve::new(&pts, "engine.torque_curve", Units::Metric).expect("valid curve")
    }

    // The launch run's look-up from the previous segment finds what the binary search finds,
    // from any segment, at every speed: below, on and between the points, and past both ends.
    #[test]
    fn the_segment_from_the_last_one_is_the_one_the_search_finds() {
        let pts: Vec<(f64, f64)> = (0..9).map(|i| (3000.0 + 500.0 * i as f64, 400.0)).collect();
        let c = TorqueCurve::new(&pts, "engine.torque_curve", Units::Metric).expect("valid curve");
        for k in 0..=1000 {
            let rpm = 2000.0 + 6.25 * k as f64;
            for last in 0..pts.len() - 1 {
                assert_eq!(
                    c.segment_from(c.segment(last), rpm),
                    c.segment(c.segment_of(rpm)),
                    "{rpm} from {last}"
                );
            }
        }
    }

    #[test]
    fn sorts_drops_exact_duplicates_and_interpolates() {
        let c = demo();
        assert_eq!(c.len(), 3);
        assert_eq!(c.range(), (3000.0, 5000.0));
        assert_eq!(c.torque_at(3500.0), Some(432.5));
        assert_eq!(c.torque_at(5000.0), Some(480.0));
        assert_eq!(c.torque_at(3000.0), Some(410.0));
        assert_eq!(c.torque_at(5000.1), None);
    }

    #[test]
    fn bad_points_name_their_index() {
        let field = |pts: &[(f64, f64)]| {
            TorqueCurve::new(pts, "c", Units::Metric)
                .err()
                .map(|e| e.field)
        };
        assert_eq!(field(&[(3000.0, 1.0), (4000.0, 2.0)]), Some("c".into()));
        assert_eq!(
            field(&[(3000.0, 1.0), (4000.0, 2.0), (4000.0, 3.0)]),
            Some("c[2]".into())
        );
        assert_eq!(
            field(&[(3000.0, 1.0), (400.0, 2.0), (5000.0, 3.0)]),
            Some("c[1]".into())
        );
        assert_eq!(
            field(&[(3000.0, 1.0), (4000.0, -2.0), (5000.0, 3.0)]),
            Some("c[1]".into())
        );
        assert_eq!(
            field(&[(f64::NAN, 1.0), (4000.0, 2.0), (5000.0, 3.0)]),
            Some("c[0]".into())
        );
    }
}
