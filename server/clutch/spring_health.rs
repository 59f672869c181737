//! The health of a spring set across its bench tests: each spring's rate, the set's spread
//! against the shop's tolerance, and springs whose rate fell since the previous test (sag).

use super::InputError;
use super::springs::{BenchPoint, RateFit, SetSpread, rate_from_points, sag, set_spread};

/// One bench test as the shop records it: one reading per spring, by position.
#[derive(Debug, Clone, PartialEq)]
pub struct BenchTest {
    pub readings: Vec<BenchPoint>,
}

/// What one test says about the set.
#[derive(Debug, Clone, PartialEq)]
pub struct TestReview {
    /// Rate of each spring, N/mm, by position (single point: F/x).
    pub rates: Vec<f64>,
    /// Mean, spread and the tolerance flag of the set.
    pub spread: SetSpread,
    /// Positions (1-based) whose rate fell by more than the sag threshold since the previous
    /// test, with the percent loss.
    pub sagged: Vec<(usize, f64)>,
}

/// Reviews a build's bench tests, oldest first: per test the spring rates (k = F/x at the test
/// compression), the set spread ((max − min)/mean, flagged above `tolerance_pct`), and sag:
/// a spring whose rate fell by more than `sag_pct` percent against the same position in the
/// previous test. Thresholds are shop settings (common shop practice, no published source);
/// stress relaxation itself is described by the Spring Manufacturers Institute.
pub fn review(
    tests: &[BenchTest],
    tolerance_pct: f64,
    sag_pct: f64,
) -> Result<Vec<TestReview>, InputError> {
    let mut out: Vec<TestReview> = Vec::with_capacity(tests.len());
    for (t, test) in tests.iter().enumerate() {
        let rates = test
            .readings
            .iter()
            .enumerate()
            .map(|(i, p)| {
                rate_from_points(
                    std::slice::from_ref(p),
                    RateFit::WithIntercept,
                    &format!("tests[{t}].springs[{i}]"),
                )
            })
            .collect::<Result<Vec<f64>, InputError>>()?;
        let spread = set_spread(&rates, tolerance_pct, &format!("tests[{t}].springs"))?;
        let mut sagged = Vec::new();
        if let Some(previous) = out.last() {
            for (i, (before, now)) in previous.rates.iter().zip(&rates).enumerate() {
                let s = sag(*before, *now, sag_pct)?;
                if s.flagged {
                    sagged.push((i + 1, s.loss_pct));
                }
            }
        }
        out.push(TestReview {
            rates,
            spread,
            sagged,
        });
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn test_of(rates: &[f64]) -> BenchTest {
        BenchTest {
            readings: rates
                .iter()
                .map(|k| BenchPoint {
                    compression_mm: 10.0,
                    force_n: k * 10.0,
                })
                .collect(),
        }
    }

    // Arithmetic of the definitions above (spread = (max − min)/mean; sag = relative loss);
    // the 5 % and 3 % thresholds are common shop practice, no published source.
    #[test]
    fn a_wide_set_is_flagged_and_a_tired_spring_is_named() {
        let tests = [test_of(&[66.0, 66.5, 67.0]), test_of(&[66.0, 62.0, 70.0])];
        let r = review(&tests, 5.0, 3.0).unwrap();
        assert!(!r[0].spread.out_of_tolerance);
        assert!((r[0].rates[0] - 66.0).abs() < 1e-12);
        // second test: spread 8 / 66 = 12.1 % > 5 %
        assert!(r[1].spread.out_of_tolerance);
        // spring 2 fell from 66.5 to 62.0 N/mm: 6.77 % > 3 %
        assert_eq!(r[1].sagged.len(), 1);
        assert_eq!(r[1].sagged[0].0, 2);
        assert!((r[1].sagged[0].1 - 6.766_917_293).abs() < 1e-6);
    }
}
