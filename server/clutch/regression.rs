//! Ordinary least-squares straight line y = b0 + b1·x.
//!
//! Computed from centred sums (two passes: means first, then deviations), which keeps full
//! precision on data with a large offset, unlike the one-pass Σx², Σxy textbook form.

use crate::InputError;

/// A fitted straight line and how well it fits.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LineFit {
    /// b1, in y units per x unit.
    pub slope: f64,
    /// b0, in y units (the line's value at x = 0).
    pub intercept: f64,
    /// Coefficient of determination R² = Sxy²/(Sxx·Syy), 0–1; 1 when all y are equal.
    pub r_squared: f64,
    /// Number of points used.
    pub n: usize,
}

impl LineFit {
    /// The fitted line's value at `x`: b0 + b1·x.
    pub fn predict(&self, x: f64) -> f64 {
        self.intercept + self.slope * x
    }
}

/// Least-squares line through `points` (x, y), with intercept:
/// b1 = Σ(x − x̄)(y − ȳ) / Σ(x − x̄)², b0 = ȳ − b1·x̄, R² = Sxy²/(Sxx·Syy).
///
/// Source: NIST/SEMATECH e-Handbook of Statistical Methods, §4.1.4.1; checked against the
/// NIST StRD "Norris" certified values. Units: whatever x and y carry.
/// Needs at least two distinct, finite x values; `field` names the data in errors.
pub fn fit_line(points: &[(f64, f64)], field: &str) -> Result<LineFit, InputError> {
    let (x_mean, y_mean) = means(points, field)?;
    let (mut sxx, mut sxy, mut syy) = (0.0, 0.0, 0.0);
    for &(x, y) in points {
        let (dx, dy) = (x - x_mean, y - y_mean);
        sxx += dx * dx;
        sxy += dx * dy;
        syy += dy * dy;
    }
    if sxx <= 0.0 {
        return Err(InputError::new(
            field,
            "needs at least two different x values",
        ));
    }
    let slope = sxy / sxx;
    let r_squared = if syy > 0.0 {
        (sxy * sxy / (sxx * syy)).min(1.0)
    } else {
        1.0
    };
    Ok(LineFit {
        slope,
        intercept: y_mean - slope * x_mean,
        r_squared,
        n: points.len(),
    })
}

/// Least-squares line forced through the origin, y = b1·x: b1 = Σxy / Σx².
///
/// Source: NIST/SEMATECH e-Handbook §4.1.4.1 (model without intercept). Use only when the
/// physics guarantees y = 0 at x = 0. Needs at least one non-zero, finite x.
pub fn fit_through_origin(points: &[(f64, f64)], field: &str) -> Result<f64, InputError> {
    means(points, field)?;
    let sxx: f64 = points.iter().map(|&(x, _)| x * x).sum();
    let sxy: f64 = points.iter().map(|&(x, y)| x * y).sum();
    if sxx <= 0.0 {
        return Err(InputError::new(
            field,
            "needs at least one non-zero x value",
        ));
    }
    Ok(sxy / sxx)
}

fn means(points: &[(f64, f64)], field: &str) -> Result<(f64, f64), InputError> {
    if points.is_empty() {
        return Err(InputError::new(field, "needs at least one point"));
    }
    for (i, &(x, y)) in points.iter().enumerate() {
        if !x.is_finite() || !y.is_finite() {
            return Err(InputError::new(
                format!("{field}[{i}]"),
                "must be finite numbers",
            ));
        }
    }
    let n = points.len() as f64;
    let x_mean = points.iter().map(|p| p.0).sum::<f64>() / n;
    let y_mean = points.iter().map(|p| p.1).sum::<f64>() / n;
    Ok((x_mean, y_mean))
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;

    /// NIST StRD linear least squares dataset "Norris" (Norris.dat), 36 (x, y) pairs.
    pub(crate) const NORRIS_X: [f64; 36] = [
        0.2, 337.4, 118.2, 884.6, 10.1, 226.5, 666.3, 996.3, 448.6, 777.0, 558.2, 0.4, 0.6, 775.5,
        666.9, 338.0, 447.5, 11.6, 556.0, 228.1, 995.8, 887.6, 120.2, 0.3, 0.3, 556.8, 339.1,
        887.2, 999.0, 779.0, 11.1, 118.3, 229.2, 669.1, 448.9, 0.5,
    ];
    pub(crate) const NORRIS_Y: [f64; 36] = [
        0.1, 338.8, 118.1, 888.0, 9.2, 228.1, 668.5, 998.5, 449.1, 778.9, 559.2, 0.3, 0.1, 778.1,
        668.8, 339.3, 448.9, 10.8, 557.7, 228.3, 998.0, 888.8, 119.6, 0.3, 0.6, 557.6, 339.3,
        888.0, 998.5, 778.9, 10.2, 117.6, 228.9, 668.4, 449.2, 0.2,
    ];

    fn norris() -> Vec<(f64, f64)> {
        NORRIS_X
            .iter()
            .copied()
            .zip(NORRIS_Y.iter().copied())
            .collect()
    }

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    // NIST StRD "Norris" certified values: B1 = 1.00211681802045, B0 = -0.262323073774029,
    // R² = 0.999993745883712 (lower difficulty; expect ~12 correct digits).
    #[test]
    fn norris_matches_nist_strd_certified_values() {
        let fit = fit_line(&norris(), "norris").expect("Norris fits");
        assert!(rel(fit.slope, 1.00211681802045) < 1e-11, "{}", fit.slope);
        assert!(
            rel(fit.intercept, -0.262323073774029) < 1e-9,
            "{}",
            fit.intercept
        );
        assert!(
            rel(fit.r_squared, 0.999993745883712) < 1e-12,
            "{}",
            fit.r_squared
        );
        assert_eq!(fit.n, 36);
    }

    // Centred sums keep precision under a large x offset: Norris shifted by 1e8 must give the
    // same certified slope (NIST StRD "Norris", shift-invariance of the OLS slope).
    #[test]
    fn norris_shifted_by_a_large_offset_keeps_the_certified_slope() {
        let shifted: Vec<_> = norris().iter().map(|&(x, y)| (x + 1e8, y)).collect();
        let fit = fit_line(&shifted, "norris");
        assert!(fit.is_ok_and(|f| rel(f.slope, 1.00211681802045) < 1e-6));
    }

    // [D] Shop-style wear example checked against the OLS formula: x = 0..40 passes,
    // y = 0, 0.004, 0.009, 0.012, 0.017 in → b1 = 0.00042, b0 = 0.0000, R² = 0.995485.
    #[test]
    fn small_wear_example_fits() {
        let pts = [
            (0.0, 0.0),
            (10.0, 0.004),
            (20.0, 0.009),
            (30.0, 0.012),
            (40.0, 0.017),
        ];
        let fit = fit_line(&pts, "w").expect("example fits");
        assert!((fit.slope - 0.00042).abs() < 1e-12);
        assert!(fit.intercept.abs() < 1e-12);
        assert!((fit.r_squared - 0.995485).abs() < 5e-7);
        assert!(((0.030 - fit.intercept) / fit.slope - 71.43).abs() < 0.005);
    }

    #[test]
    fn through_origin_recovers_an_exact_proportion() {
        let pts = [(1.0, 2.5), (2.0, 5.0), (4.0, 10.0)];
        assert_eq!(fit_through_origin(&pts, "p").ok(), Some(2.5));
    }

    #[test]
    fn one_distinct_x_or_a_nan_is_an_error() {
        assert!(fit_line(&[(1.0, 2.0), (1.0, 3.0)], "p").is_err());
        assert!(fit_line(&[], "p").is_err());
        let e = fit_line(&[(1.0, 2.0), (f64::NAN, 3.0)], "p").err();
        assert_eq!(e.map(|e| e.field), Some("p[1]".to_string()));
    }
}
