//! Disc wear from cover-height measurements: POST /api/v1/calc/wear.
//!
//! As the disc wears the cover height (cover to pressure ring, through the checking hole)
//! grows; shims between cover and flywheel are pulled to bring it back. Total wear is the
//! growth since the baseline plus the shims already pulled. Growth also unloads the springs:
//! clamp loss = springs × rate × growth (Hooke's law for springs in parallel; the same mechanism
//! as Bhandari, Design of Machine Elements, Ex. 11.6, where facing wear becomes spring extension).
//!
//! All lengths are in one unit (in or mm), the rate in that force per that length, so no
//! conversion is needed: clamp loss comes out in lbf or N.

use crate::InputError;
use crate::quantity::{Limit, limits};
use crate::regression::fit_line;
use crate::units::Units;
use serde::{Deserialize, Serialize};

/// Heights, shims and wear closer than this to a limit count as at the limit, in mm
/// (1 nm: far below any gauge, far above float rounding of readings like 1.920 − 1.905).
pub const AT_LIMIT_TOLERANCE_MM: f64 = 1e-6;

/// POST /api/v1/calc/wear body.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct WearRequest {
    /// Unit system of lengths (in / mm) and the spring rate (lbf/in / N/mm).
    pub units: Units,
    /// Cover height at the baseline (new disc, full shim stack).
    pub baseline_cover_height: f64,
    /// Growth at which a shim is due.
    pub shimming_limit: f64,
    /// Shim stack, in the order they are pulled.
    #[serde(default)]
    pub shims: Vec<f64>,
    /// Number of springs, 1–24.
    pub spring_count: u32,
    /// Rate of one spring.
    pub spring_rate: f64,
    /// Total disc wear at which the disc is due.
    pub disc_wear_allowance: f64,
    /// Measurements in pass order, at least one.
    pub measurements: Vec<Measurement>,
}

/// One cover-height measurement.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct Measurement {
    /// Passes since the baseline.
    pub passes: u32,
    /// Measured cover height.
    pub cover_height: f64,
    /// Shims pulled since the baseline (the first `shims_pulled` of the stack).
    #[serde(default)]
    pub shims_pulled: u32,
}

/// Service status at the latest measurement.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
#[serde(rename_all = "snake_case")]
pub enum WearStatus {
    /// Nothing due.
    Ok,
    /// Growth reached the shimming limit and a shim remains: pull the next shim.
    ShimDue,
    /// Total wear reached the allowance, or growth reached the limit with no shim left.
    DiscDue,
}

/// Answer to POST /api/v1/calc/wear.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct WearReport {
    /// Each measurement, analysed.
    pub measurements: Vec<WearPoint>,
    /// Status at the latest measurement.
    pub status: WearStatus,
    /// Thickness of the next shim to pull (null when none remain).
    pub next_shim: Option<f64>,
    /// Least-squares slope of total wear against passes (null with < 2 distinct pass counts).
    pub wear_per_pass: Option<f64>,
    /// Passes until a shim is due at that rate (null: no rate, or no shim left).
    pub passes_to_shim_due: Option<f64>,
    /// Passes until the disc is due at that rate (null: no rate).
    pub passes_to_disc_due: Option<f64>,
}

/// One analysed measurement.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct WearPoint {
    /// Passes since the baseline.
    pub passes: u32,
    /// Growth h − h0.
    pub growth: f64,
    /// Growth + shims pulled.
    pub total_wear: f64,
    /// Static clamp lost: springs × rate × growth (lbf / N).
    pub clamp_loss: f64,
}

/// Analyses the measurements: growth = h − h0; total wear = growth + first k shims;
/// clamp loss = n·k_s·growth; status, next shim, wear per pass (OLS slope, NIST/SEMATECH
/// e-Handbook §4.1.4.1) and passes to the next shim and to the disc at that rate.
///
/// Values within [`AT_LIMIT_TOLERANCE_MM`] of a limit count as at it. Errors name the field.
pub fn analyze(req: &WearRequest) -> Result<WearReport, InputError> {
    let u = req.units;
    let tol = u.mm_to_length(AT_LIMIT_TOLERANCE_MM);
    let shown = |limit: Limit, field: &str, v: f64| limit.check_shown(field, v, u).map(|_| v);
    let h0 = shown(
        limits::COVER_HEIGHT,
        "baseline_cover_height",
        req.baseline_cover_height,
    )?;
    let limit = shown(limits::SHIMMING_LIMIT, "shimming_limit", req.shimming_limit)?;
    let allowance = shown(
        limits::DISC_THICKNESS,
        "disc_wear_allowance",
        req.disc_wear_allowance,
    )?;
    for (i, &s) in req.shims.iter().enumerate() {
        limits::SHIM.check_shown(format_args!("shims[{i}]"), s, u)?;
    }
    limits::SPRING_COUNT.check("spring_count", req.spring_count as f64, u)?;
    let rate = shown(limits::SPRING_RATE, "spring_rate", req.spring_rate)?;
    if req.measurements.is_empty() {
        return Err(InputError::new(
            "measurements",
            "needs at least one measurement",
        ));
    }

    let mut points = Vec::with_capacity(req.measurements.len());
    let mut prev: Option<&Measurement> = None;
    for (i, m) in req.measurements.iter().enumerate() {
        limits::COVER_HEIGHT.check_shown(
            format_args!("measurements[{i}].cover_height"),
            m.cover_height,
            u,
        )?;
        if m.shims_pulled as usize > req.shims.len() {
            return Err(InputError::new(
                format!("measurements[{i}].shims_pulled"),
                format!(
                    "is more than the {} in the stack",
                    crate::quantity::counted(req.shims.len() as f64, "shim", "shims")
                ),
            ));
        }
        if let Some(p) = prev {
            if m.passes < p.passes {
                return Err(InputError::new(
                    format!("measurements[{i}].passes"),
                    "goes backwards from the measurement before",
                ));
            }
            if m.shims_pulled < p.shims_pulled {
                return Err(InputError::new(
                    format!("measurements[{i}].shims_pulled"),
                    "is fewer than at the measurement before",
                ));
            }
        }
        let growth = m.cover_height - h0;
        let pulled: f64 = req.shims[..m.shims_pulled as usize].iter().sum();
        points.push(WearPoint {
            passes: m.passes,
            growth,
            total_wear: growth + pulled,
            clamp_loss: f64::from(req.spring_count) * rate * growth,
        });
        prev = Some(m);
    }

    let (last, last_m) = match (points.last(), req.measurements.last()) {
        (Some(p), Some(m)) => (p, m),
        _ => {
            return Err(InputError::new(
                "measurements",
                "needs at least one measurement",
            ));
        }
    };
    let remaining = &req.shims[last_m.shims_pulled as usize..];
    let at_limit = last.growth >= limit - tol;
    let status = if last.total_wear >= allowance - tol || (at_limit && remaining.is_empty()) {
        WearStatus::DiscDue
    } else if at_limit {
        WearStatus::ShimDue
    } else {
        WearStatus::Ok
    };

    let xy: Vec<(f64, f64)> = points
        .iter()
        .map(|p| (f64::from(p.passes), p.total_wear))
        .collect();
    let distinct = points.iter().any(|p| p.passes != points[0].passes);
    let wear_per_pass = if distinct {
        Some(fit_line(&xy, "measurements")?.slope)
    } else {
        None
    };
    let (to_shim, to_disc) = wear_per_pass.map_or((None, None), |slope| {
        passes_to_due(req, last, last_m.shims_pulled, slope)
    });

    Ok(WearReport {
        next_shim: remaining.first().copied(),
        status,
        wear_per_pass,
        passes_to_shim_due: to_shim,
        passes_to_disc_due: to_disc,
        measurements: points,
    })
}

/// Passes until a shim and until the disc are due, from the latest measurement `last` (with
/// `pulled` shims out), at `slope` of total wear per pass (request length unit); `None` for a
/// rate that is not positive, and for the shim when none remain.
pub fn passes_to_due(
    req: &WearRequest,
    last: &WearPoint,
    pulled: u32,
    slope: f64,
) -> (Option<f64>, Option<f64>) {
    if slope.is_nan() || slope <= 0.0 {
        return (None, None);
    }
    let remaining = &req.shims[(pulled as usize).min(req.shims.len())..];
    let to_limit = req.shimming_limit - last.growth;
    let shims_left: f64 = remaining.iter().sum();
    let to_shim = (!remaining.is_empty()).then(|| (to_limit / slope).max(0.0));
    let to_disc =
        ((req.disc_wear_allowance - last.total_wear).min(to_limit + shims_left) / slope).max(0.0);
    (to_shim, Some(to_disc))
}

/// Disc wear per unit of slip energy, fitted over the intervals between cover heights.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct EnergyWear {
    /// Total wear per MJ of slip energy (request length unit per MJ).
    pub per_mj: f64,
    /// 95 % interval of `per_mj`; null with one interval.
    pub ci95: Option<[f64; 2]>,
    /// Intervals used.
    pub n: usize,
}

/// Wear per unit of slip energy: the least-squares line through the origin of each interval's
/// growth in total wear (shims pulled added back, as [`analyze`] counts it) against the slip
/// energy of the passes in it, `(growth, energy J)` per interval, with its Student t interval
/// (docs/engineering.md §13). Intervals without energy are left out; `None` when none is left.
pub fn wear_per_mj(intervals: &[(f64, f64)]) -> Option<EnergyWear> {
    let (x, y): (Vec<f64>, Vec<f64>) = intervals
        .iter()
        .filter(|(g, e)| g.is_finite() && e.is_finite() && *e > 0.0)
        .map(|(g, e)| (e / 1e6, *g))
        .unzip();
    let fit = crate::calibration::fit_through_origin(&x, &y)?;
    Some(EnergyWear {
        per_mj: fit.slope,
        ci95: fit.ci95(),
        n: fit.n,
    })
}

/// The cover height the trend of `readings` expects at `passes` with the first `pulled` shims
/// of `shims` out: the least-squares line (NIST/SEMATECH e-Handbook §4.1.4.1) of total wear
/// (height plus the shims pulled) against passes through the readings, `(passes, height,
/// shims pulled)` in one length unit, read at `passes`, less the shims then out. A disc does
/// not grow back, so a line that falls (scatter of the readings) counts as flat. `None` with
/// fewer than three readings or all of them at one pass count: there is no trend to hold a
/// reading against.
pub fn expected_height(
    shims: &[f64],
    readings: &[(f64, f64, u32)],
    passes: f64,
    pulled: u32,
) -> Option<f64> {
    let out = |k: u32| -> f64 { shims.iter().take(k as usize).sum() };
    let points: Vec<(f64, f64)> = readings.iter().map(|&(p, h, k)| (p, h + out(k))).collect();
    if points.len() < 3 {
        return None;
    }
    let line = fit_line(&points, "readings").ok()?;
    // The line passes through the readings' mean point; hold that and flatten a fall.
    let x_mean = points.iter().map(|p| p.0).sum::<f64>() / points.len() as f64;
    let slope = line.slope.max(0.0);
    Some(line.predict(x_mean) + slope * (passes - x_mean) - out(pulled))
}

#[cfg(test)]
mod tests {
    use super::*;

    // [D] By hand: readings 48.00 / 48.20 / 48.40 mm at 0 / 20 / 40 passes lie on a line of
    // 0.01 mm per pass, so 60 passes expect 48.60 mm, and 48.35 mm with a 0.25 mm shim out.
    #[test]
    fn the_trend_of_three_readings_expects_the_next() {
        let r = [(0.0, 48.00, 0), (20.0, 48.20, 0), (40.0, 48.40, 0)];
        let at = |p, k| expected_height(&[0.25, 0.25], &r, p, k).unwrap();
        assert!((at(60.0, 0) - 48.60).abs() < 1e-9);
        assert!((at(60.0, 1) - 48.35).abs() < 1e-9);
        // A pulled shim in the readings is wear, not a step down: same line.
        let pulled = [(20.0, 48.20, 0), (40.0, 48.40, 0), (60.0, 48.35, 1)];
        let e = expected_height(&[0.25, 0.25], &pulled, 80.0, 1).unwrap();
        assert!((e - 48.55).abs() < 1e-9, "{e}");
    }

    // [D] A falling line is read as flat: the mean of 48.40 / 48.30 / 48.20 is 48.30 mm.
    #[test]
    fn the_trend_never_expects_a_disc_to_grow_back() {
        let r = [(0.0, 48.40, 0), (10.0, 48.30, 0), (20.0, 48.20, 0)];
        let e = expected_height(&[], &r, 100.0, 0).unwrap();
        assert!((e - 48.30).abs() < 1e-9, "{e}");
        assert_eq!(expected_height(&[], &r[..2], 30.0, 0), None);
        let same = [(5.0, 48.0, 0), (5.0, 48.1, 0), (5.0, 48.2, 0)];
        assert_eq!(expected_height(&[], &same, 30.0, 0), None);
    }

    fn req(measurements: &[(u32, f64, u32)]) -> WearRequest {
        WearRequest {
            units: Units::Imperial,
            baseline_cover_height: 1.905,
            shimming_limit: 0.015,
            shims: vec![0.010, 0.010, 0.020],
            spring_count: 6,
            spring_rate: 390.0,
            disc_wear_allowance: 0.060,
            measurements: measurements
                .iter()
                .map(|&(passes, cover_height, shims_pulled)| Measurement {
                    passes,
                    cover_height,
                    shims_pulled,
                })
                .collect(),
        }
    }

    fn status(measurements: &[(u32, f64, u32)]) -> Option<WearStatus> {
        analyze(&req(measurements)).ok().map(|r| r.status)
    }

    // [D] Clamp loss = springs × rate × growth (Hooke's law, parallel springs): 6 × 390 lbf/in
    // × 0.008 in = 18.72 lbf. Rates: wear 0.008 in over 40 passes = 0.0002 in/pass; 0.007 in to
    // the limit → 35 passes; disc: min(0.052, 0.007 + 0.040) / 0.0002 = 235 passes.
    #[test]
    fn worked_example_clamp_loss_and_forecast() {
        let r = analyze(&req(&[(0, 1.905, 0), (40, 1.913, 0)])).expect("valid");
        assert!((r.measurements[1].clamp_loss - 18.72).abs() < 1e-9);
        assert!((r.wear_per_pass.unwrap_or(0.0) - 0.0002).abs() < 1e-12);
        assert!((r.passes_to_shim_due.unwrap_or(0.0) - 35.0).abs() < 1e-6);
        assert!((r.passes_to_disc_due.unwrap_or(0.0) - 235.0).abs() < 1e-6);
        assert_eq!(r.status, WearStatus::Ok);
        assert_eq!(r.next_shim, Some(0.010));
    }

    // Status boundaries (common shop practice, no published source): growth exactly at the
    // shimming limit is due. In f64, 1.920 - 1.905 = 0.014999999999999902, a hair under the
    // limit, which the tolerance must still count as at it.
    #[test]
    fn growth_exactly_at_the_limit_is_shim_due() {
        let (h0, h) = std::hint::black_box((1.905, 1.920));
        assert!(h - h0 < 0.015);
        assert_eq!(
            status(&[(0, 1.905, 0), (50, 1.920, 0)]),
            Some(WearStatus::ShimDue)
        );
        assert_eq!(
            status(&[(0, 1.905, 0), (50, 1.9199, 0)]),
            Some(WearStatus::Ok)
        );
    }

    #[test]
    fn growth_at_the_limit_after_the_last_shim_is_disc_due() {
        // All three shims (0.040) pulled, growth back at the limit: total 0.055 < 0.060.
        let s = status(&[(0, 1.905, 0), (200, 1.920, 3)]);
        assert_eq!(s, Some(WearStatus::DiscDue));
        let r = analyze(&req(&[(0, 1.905, 0), (200, 1.915, 3)])).expect("valid");
        assert_eq!(
            (r.status, r.next_shim, r.passes_to_shim_due),
            (WearStatus::Ok, None, None)
        );
    }

    #[test]
    fn allowance_reached_before_the_shims_run_out_is_disc_due() {
        let mut r = req(&[(0, 1.905, 0), (100, 1.915, 1)]);
        r.disc_wear_allowance = 0.020; // 0.010 growth + 0.010 shim = allowance exactly
        let out = analyze(&r).expect("valid");
        assert_eq!(out.status, WearStatus::DiscDue);
        assert_eq!(out.next_shim, Some(0.010));
        assert!(out.passes_to_disc_due.is_some_and(|p| p.abs() < 1e-6));
    }

    #[test]
    fn one_pass_count_gives_no_rate_and_no_forecast() {
        let r = analyze(&req(&[(10, 1.907, 0), (10, 1.908, 0)])).expect("valid");
        assert_eq!((r.wear_per_pass, r.passes_to_disc_due), (None, None));
    }

    #[test]
    fn bad_measurements_name_their_field() {
        let field = |r: WearRequest| analyze(&r).err().map(|e| e.field);
        assert_eq!(
            field(req(&[(0, 1.905, 4)])),
            Some("measurements[0].shims_pulled".into())
        );
        assert_eq!(
            field(req(&[(10, 1.905, 0), (5, 1.91, 0)])),
            Some("measurements[1].passes".into())
        );
        assert_eq!(
            field(req(&[(0, -1.0, 0)])),
            Some("measurements[0].cover_height".into())
        );
        assert_eq!(
            field(req(&[(0, f64::NAN, 0)])),
            Some("measurements[0].cover_height".into())
        );
        assert_eq!(field(req(&[])), Some("measurements".into()));
        let mut r = req(&[(0, 1.905, 0)]);
        r.shims[1] = f64::INFINITY;
        assert_eq!(field(r), Some("shims[1]".into()));
    }

    #[test]
    fn status_serializes_in_snake_case() {
        let s = serde_json::to_string(&WearStatus::ShimDue).ok();
        assert_eq!(s.as_deref(), Some("\"shim_due\""));
    }

    // Worked check [derived, season issue]: three intervals of 10 passes at 150, 300 and
    // 450 kJ per pass with growth 0.0150, 0.0300 and 0.0450 mm give 0.0100 mm/MJ exactly, with
    // an interval of zero width.
    #[test]
    fn wear_per_unit_of_slip_energy_fits_through_the_origin() {
        let fit = wear_per_mj(&[(0.0150, 1.5e6), (0.0300, 3.0e6), (0.0450, 4.5e6)]).expect("fits");
        assert!((fit.per_mj - 0.0100).abs() < 1e-15, "{fit:?}");
        assert_eq!(fit.n, 3);
        let [lo, hi] = fit.ci95.expect("interval");
        assert!((hi - lo).abs() < 1e-15, "{fit:?}");
        // One interval: a slope, no interval; no energy: nothing.
        let one = wear_per_mj(&[(0.02, 2.0e6)]).expect("fits");
        assert!((one.per_mj - 0.01).abs() < 1e-15 && one.ci95.is_none());
        assert!(wear_per_mj(&[(0.02, 0.0)]).is_none());
    }

    // A setting that takes twice the energy per pass wears twice as fast per pass: the
    // forecast is half as long [derived from the definition].
    #[test]
    fn twice_the_energy_per_pass_halves_the_forecast() {
        let r = req(&[(0, 1.905, 0), (50, 1.912, 0)]);
        let report = analyze(&r).expect("analyses");
        let last = report.measurements.last().expect("one");
        let (shim_a, disc_a) = passes_to_due(&r, last, 0, 0.0001);
        let (shim_b, disc_b) = passes_to_due(&r, last, 0, 0.0002);
        let (a, b) = (shim_a.expect("shim"), shim_b.expect("shim"));
        assert!((a - 2.0 * b).abs() < 1e-9, "{a} {b}");
        assert!((disc_a.expect("disc") - 2.0 * disc_b.expect("disc")).abs() < 1e-9);
        assert_eq!(passes_to_due(&r, last, 0, 0.0), (None, None));
    }
}
