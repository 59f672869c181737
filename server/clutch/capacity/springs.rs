//! Clutch coil springs: rate from a bench test, spread across a set, loss of rate (sag) between
//! tests, and the textbook rate from wire geometry as a cross-check.

use std::fmt::Display;

use crate::InputError;
use crate::regression::{fit_line, fit_through_origin};

/// One bench reading: the spring compressed `compression_mm` from free length carries `force_n`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BenchPoint {
    /// Compression from free length, mm.
    pub compression_mm: f64,
    /// Force at that compression, N.
    pub force_n: f64,
}

/// How several bench points are reduced to one rate.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum RateFit {
    /// Least-squares slope with an intercept (default): a seating offset or a free length that
    /// was read slightly wrong shifts the line but not its slope, so the rate is unaffected.
    #[default]
    WithIntercept,
    /// Least-squares slope forced through zero force at zero compression: right only when the
    /// compressions are measured truly from free length.
    ThroughOrigin,
}

/// Spring rate in N/mm from bench points.
///
/// One point: k = F/x. Several: the least-squares slope of F against x (see [`RateFit`]),
/// NIST/SEMATECH e-Handbook §4.1.4.1. Valid for the linear part of the spring's range;
/// compressions must be > 0 for a single point, forces finite. `field` names the point list.
pub fn rate_from_points(
    points: &[BenchPoint],
    fit: RateFit,
    field: impl Display + Copy,
) -> Result<f64, InputError> {
    let rate = match (points, fit) {
        ([], _) => {
            return Err(InputError::new(
                field.to_string(),
                "needs at least one bench point",
            ));
        }
        ([p], _) => {
            let x = crate::require_positive(
                format_args!("{field}[0].compression"),
                p.compression_mm,
                1e4,
            )?;
            crate::require_finite(format_args!("{field}[0].force"), p.force_n)? / x
        }
        _ => {
            let xy: Vec<(f64, f64)> = points
                .iter()
                .map(|p| (p.compression_mm, p.force_n))
                .collect();
            let field = field.to_string();
            match fit {
                RateFit::WithIntercept => fit_line(&xy, &field)?.slope,
                RateFit::ThroughOrigin => fit_through_origin(&xy, &field)?,
            }
        }
    };
    if rate <= 0.0 {
        return Err(InputError::new(
            field.to_string(),
            "bench points give a rate of zero or less",
        ));
    }
    Ok(rate)
}

/// Statistics of a set of spring rates (any one rate unit).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SetSpread {
    /// Mean rate.
    pub mean: f64,
    /// Lowest rate.
    pub min: f64,
    /// Highest rate.
    pub max: f64,
    /// max − min.
    pub spread: f64,
    /// Spread as a percentage of the mean.
    pub spread_pct: f64,
    /// True when `spread_pct` exceeds the tolerance.
    pub out_of_tolerance: bool,
}

/// Default tolerance on a set's rate spread, percent of mean
/// (common shop practice, no published source).
pub const DEFAULT_SET_TOLERANCE_PCT: f64 = 5.0;

/// Mean, spread (max − min) and spread as percent of mean of a spring set; flags the set when
/// the spread exceeds `tolerance_pct` (e.g. [`DEFAULT_SET_TOLERANCE_PCT`]).
/// Rates must be finite and > 0; `field` names the list (errors point at `field[i]`).
pub fn set_spread(
    rates: &[f64],
    tolerance_pct: f64,
    field: impl Display + Copy,
) -> Result<SetSpread, InputError> {
    if rates.is_empty() {
        return Err(InputError::new(
            field.to_string(),
            "needs at least one spring",
        ));
    }
    for (i, &r) in rates.iter().enumerate() {
        crate::require_positive(format_args!("{field}[{i}]"), r, f64::MAX)?;
    }
    crate::require_range("tolerance_pct", tolerance_pct, 0.0, 100.0)?;
    let mean = rates.iter().sum::<f64>() / rates.len() as f64;
    let min = rates.iter().copied().fold(f64::INFINITY, f64::min);
    let max = rates.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let spread_pct = (max - min) / mean * 100.0;
    Ok(SetSpread {
        mean,
        min,
        max,
        spread: max - min,
        spread_pct,
        out_of_tolerance: spread_pct > tolerance_pct,
    })
}

/// Loss of one spring's load (or rate) at the test height since its previous test.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sag {
    /// (previous − current)/previous × 100; negative when the reading rose.
    pub loss_pct: f64,
    /// True when `loss_pct` exceeds the threshold.
    pub flagged: bool,
}

/// Sag check between two tests of the same spring at the same test height: percent loss of
/// load (or rate) = (previous − current)/previous × 100, flagged above `threshold_pct`.
///
/// Stress relaxation ("loss of load … when a spring is held or cycled under load") is the
/// Spring Manufacturers Institute's term; the retirement threshold is a shop setting (common
/// shop practice, no published source). Both readings must be > 0 and finite.
pub fn sag(previous: f64, current: f64, threshold_pct: f64) -> Result<Sag, InputError> {
    crate::require_positive("previous", previous, f64::MAX)?;
    crate::require_positive("current", current, f64::MAX)?;
    crate::require_range("threshold_pct", threshold_pct, 0.0, 100.0)?;
    let loss_pct = (previous - current) / previous * 100.0;
    Ok(Sag {
        loss_pct,
        flagged: loss_pct > threshold_pct,
    })
}

/// Rate of a helical compression spring from its geometry, N/mm: k = G·d⁴/(8·D³·Na).
///
/// G shear modulus N/mm² (≈ 77 000–83 000 for spring steels), d wire diameter mm,
/// D mean coil diameter mm (= OD − d), Na active coils. Source: Bhandari, Design of Machine
/// Elements, ch. 10 (Springs); Shigley, Mechanical Engineering Design, ch. 10. Valid in the
/// linear range, spring index D/d about 4–12. All inputs > 0.
pub fn rate_from_geometry(
    shear_modulus_n_per_mm2: f64,
    wire_mm: f64,
    mean_coil_mm: f64,
    active_coils: f64,
) -> Result<f64, InputError> {
    let g = crate::require_positive("shear_modulus", shear_modulus_n_per_mm2, 1e6)?;
    let d = crate::require_positive("wire_diameter", wire_mm, 100.0)?;
    let dm = crate::require_positive("mean_coil_diameter", mean_coil_mm, 1000.0)?;
    let na = crate::require_positive("active_coils", active_coils, 1000.0)?;
    Ok(g * d.powi(4) / (8.0 * dm.powi(3) * na))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pt(x: f64, f: f64) -> BenchPoint {
        BenchPoint {
            compression_mm: x,
            force_n: f,
        }
    }

    // Bhandari, Design of Machine Elements, Ex. 10.1 (via FOSSEE Scilab TBC 764):
    // d = 7 mm, D = 42 mm, Na = 8, G = 81 370 N/mm²; printed deflection under 1250 N is
    // 30.337611 mm, i.e. k = 41.2030 N/mm.
    #[test]
    fn geometry_rate_matches_bhandari_ex_10_1() {
        let k = rate_from_geometry(81_370.0, 7.0, 42.0, 8.0).unwrap_or(f64::NAN);
        assert!((k - 41.2030).abs() < 5e-4, "{k}");
        assert!((1250.0 / k - 30.337611).abs() < 1e-5);
    }

    // Bhandari, Ex. 10.3 (via FOSSEE Scilab TBC 764): D = 150 mm, d = 21 mm, G = 81 370 N/mm²
    // and printed Na = 7.814775 give back the specified k = 75 N/mm.
    #[test]
    fn geometry_rate_matches_bhandari_ex_10_3() {
        let k = rate_from_geometry(81_370.0, 21.0, 150.0, 7.814775).unwrap_or(f64::NAN);
        assert!((k - 75.0).abs() < 1e-4, "{k}");
    }

    // Bhandari, Ex. 11.6 (via FOSSEE Scilab TBC 764): 800 N at 5 mm compression → 160 N/mm.
    #[test]
    fn single_point_rate_is_force_over_compression() {
        let k = rate_from_points(&[pt(5.0, 800.0)], RateFit::default(), "bench");
        assert_eq!(k.ok(), Some(160.0));
    }

    #[test]
    fn several_points_with_a_seating_offset_keep_the_slope() {
        let pts = [pt(2.0, 130.0), pt(4.0, 250.0), pt(6.0, 370.0)];
        let k = rate_from_points(&pts, RateFit::WithIntercept, "bench").unwrap_or(f64::NAN);
        assert!((k - 60.0).abs() < 1e-12);
        let k0 = rate_from_points(&pts, RateFit::ThroughOrigin, "bench").unwrap_or(f64::NAN);
        assert!(k0 > 60.0, "the offset inflates a through-origin fit: {k0}");
    }

    #[test]
    fn a_zero_compression_single_point_names_the_field() {
        let e = rate_from_points(&[pt(0.0, 800.0)], RateFit::default(), "bench").err();
        assert_eq!(e.map(|e| e.field), Some("bench[0].compression".to_string()));
    }

    #[test]
    fn set_spread_flags_only_above_tolerance() {
        let ok = set_spread(&[100.0, 102.0, 104.0], 5.0, "rates").expect("valid set");
        assert!((ok.spread_pct - 4.0 / 102.0 * 100.0).abs() < 1e-12);
        assert!(!ok.out_of_tolerance);
        let bad = set_spread(&[100.0, 110.0], 5.0, "rates").expect("valid set");
        assert!(bad.out_of_tolerance);
        let e = set_spread(&[100.0, -1.0], 5.0, "rates").err();
        assert_eq!(e.map(|e| e.field), Some("rates[1]".to_string()));
    }

    #[test]
    fn sag_flags_a_loss_beyond_the_threshold() {
        let s = sag(400.0, 376.0, 5.0).expect("valid");
        assert!((s.loss_pct - 6.0).abs() < 1e-12);
        assert!(s.flagged);
        assert!(!sag(400.0, 390.0, 5.0).expect("valid").flagged);
        assert!(sag(0.0, 390.0, 5.0).is_err());
    }
}
