//! The health of a spring set across its bench tests: each spring's rate, the set's spread
//! against the shop's tolerance, and springs whose rate fell since the previous test (sag).

use super::InputError;
use super::springs::{BenchPoint, RateFit, SetSpread, rate_from_points, sag, set_spread};

/// One bench test as the shop records it: a reading per spring tested, each with the spring's
/// place in the set (1-based; a test may leave springs out).
#[derive(Debug, Clone, PartialEq)]
pub struct BenchTest {
    pub readings: Vec<(usize, BenchPoint)>,
}

/// What one test says about the set.
#[derive(Debug, Clone, PartialEq)]
pub struct TestReview {
    /// Rate of each spring, N/mm, by position (single point: F/x).
    pub rates: Vec<f64>,
    /// Mean, spread and the tolerance flag of the set.
    pub spread: SetSpread,
    /// Positions (1-based) whose rate fell by more than the sag threshold since the previous
    /// test of the same spring, with the percent loss.
    pub sagged: Vec<(usize, f64)>,
    /// Per reading, the rate's change since the same spring's latest earlier test, percent
    /// (negative: the rate fell); `None` for a spring tested for the first time.
    pub change_pct: Vec<Option<f64>>,
}

/// Reviews a build's bench tests, oldest first: per test the spring rates (k = F/x at the test
/// compression), the set spread ((max − min)/mean, flagged above `tolerance_pct`), and sag:
/// a spring whose rate fell by more than `sag_pct` percent against the latest earlier test of
/// the same position. Thresholds are shop settings (common shop practice, no published source);
/// stress relaxation itself is described by the Spring Manufacturers Institute.
pub fn review(
    tests: &[BenchTest],
    tolerance_pct: f64,
    sag_pct: f64,
) -> Result<Vec<TestReview>, InputError> {
    let mut out: Vec<TestReview> = Vec::with_capacity(tests.len());
    // The latest rate seen for each position, from the tests before the current one.
    let mut latest: Vec<(usize, f64)> = Vec::new();
    for (t, test) in tests.iter().enumerate() {
        let rates = test
            .readings
            .iter()
            .enumerate()
            .map(|(i, (_, p))| {
                rate_from_points(
                    std::slice::from_ref(p),
                    RateFit::WithIntercept,
                    &format!("tests[{t}].springs[{i}]"),
                )
            })
            .collect::<Result<Vec<f64>, InputError>>()?;
        let spread = set_spread(&rates, tolerance_pct, &format!("tests[{t}].springs"))?;
        let mut sagged = Vec::new();
        let mut change_pct = Vec::with_capacity(rates.len());
        for ((position, _), now) in test.readings.iter().zip(&rates) {
            let before = latest.iter().find(|(p, _)| p == position).map(|e| e.1);
            change_pct.push(before.map(|b| (now - b) / b * 100.0));
            if let Some(before) = before {
                let s = sag(before, *now, sag_pct)?;
                if s.flagged {
                    sagged.push((*position, s.loss_pct));
                }
            }
        }
        for ((position, _), now) in test.readings.iter().zip(&rates) {
            match latest.iter_mut().find(|(p, _)| p == position) {
                Some(entry) => entry.1 = *now,
                None => latest.push((*position, *now)),
            }
        }
        out.push(TestReview {
            rates,
            spread,
            sagged,
            change_pct,
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
                .enumerate()
                .map(|(i, k)| {
                    let p = BenchPoint {
                        compression_mm: 10.0,
                        force_n: k * 10.0,
                    };
                    (i + 1, p)
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

    // Same definitions; a test that leaves springs out compares each spring it did test with
    // that spring's latest earlier reading, not with whichever spring sat at its list index.
    #[test]
    fn a_partial_test_compares_each_spring_with_its_own_last_reading() {
        let full = test_of(&[66.0, 66.5, 67.0]);
        let only_third = BenchTest {
            readings: vec![(
                3,
                BenchPoint {
                    compression_mm: 10.0,
                    force_n: 640.0,
                },
            )],
        };
        let r = review(&[full, only_third], 5.0, 3.0).unwrap();
        // spring 3: 67.0 -> 64.0 N/mm, 4.48 % > 3 %; compared by index it would have been
        // spring 1 (66.0 -> 64.0, 3.03 %) and named the wrong spring.
        assert_eq!(r[1].sagged.len(), 1);
        assert_eq!(r[1].sagged[0].0, 3);
        assert!((r[1].sagged[0].1 - 300.0 / 67.0).abs() < 1e-9);
        assert_eq!(r[0].change_pct, vec![None, None, None]);
        assert!((r[1].change_pct[0].unwrap() + 300.0 / 67.0).abs() < 1e-9);
    }
}
