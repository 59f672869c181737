//! Savitzky–Golay filtering: a least-squares polynomial fitted to each window of samples, read
//! at one point of the window (its value or a derivative).
//!
//! Source of the method: A. Savitzky and M. J. E. Golay, "Smoothing and Differentiation of Data
//! by Simplified Least Squares Procedures", Anal. Chem. 36(8):1627–1639 (1964). The edge rule
//! (the first and last windows' own fits read at the edge samples) is SciPy's `mode='interp'`
//! (SciPy documentation of `scipy.signal.savgol_filter`); the tests check both against the
//! vectors printed in that documentation and in `scipy.signal.savgol_coeffs`'s.

/// Weights `w` (oldest sample first) such that Σ w_k·x_k is the `deriv`-th derivative, at
/// sample `pos` of the window (0-based), of the degree-`order` polynomial fitted by least
/// squares to `window` samples at unit spacing. Divide by Δt^deriv for time data.
///
/// Valid for `order < window`, `pos < window`, `deriv <= order`; `None` otherwise. The normal
/// equations are solved in coordinates scaled to [−1, 1], which keeps them well conditioned for
/// the low orders used here (≤ 4) and windows of thousands of samples.
pub fn weights(window: usize, order: usize, pos: usize, deriv: usize) -> Option<Vec<f64>> {
    if window == 0 || order >= window || pos >= window || deriv > order {
        return None;
    }
    let p = order + 1;
    let half = ((window - 1) as f64 / 2.0).max(1.0);
    // u_k = (k − pos)/half; A[k][j] = u_k^j.
    let rows: Vec<Vec<f64>> = (0..window)
        .map(|k| {
            let u = (k as f64 - pos as f64) / half;
            (0..p).map(|j| u.powi(j as i32)).collect()
        })
        .collect();
    // (AᵀA) y = e_deriv
    let mut m = vec![vec![0.0; p + 1]; p];
    for (i, row) in m.iter_mut().enumerate() {
        for j in 0..p {
            row[j] = rows.iter().map(|r| r[i] * r[j]).sum();
        }
        row[p] = if i == deriv { 1.0 } else { 0.0 };
    }
    let y = solve(m)?;
    let factorial: f64 = (1..=deriv).map(|v| v as f64).product();
    let scale = factorial / half.powi(deriv as i32);
    Some(
        rows.iter()
            .map(|r| scale * r.iter().zip(&y).map(|(a, b)| a * b).sum::<f64>())
            .collect(),
    )
}

/// Gaussian elimination with partial pivoting on an augmented n × (n+1) matrix.
fn solve(mut m: Vec<Vec<f64>>) -> Option<Vec<f64>> {
    let n = m.len();
    for col in 0..n {
        let pivot = (col..n).max_by(|&a, &b| m[a][col].abs().total_cmp(&m[b][col].abs()))?;
        if m[pivot][col].abs() < 1e-300 {
            return None;
        }
        m.swap(col, pivot);
        let (upper, lower) = m.split_at_mut(col + 1);
        let pivot_row = &upper[col];
        for row in lower {
            let f = row[col] / pivot_row[col];
            for (v, p) in row[col..].iter_mut().zip(&pivot_row[col..]) {
                *v -= f * p;
            }
        }
    }
    let mut x = vec![0.0; n];
    for r in (0..n).rev() {
        let s: f64 = (r + 1..n).map(|c| m[r][c] * x[c]).sum();
        x[r] = (m[r][n] - s) / m[r][r];
    }
    Some(x)
}

/// The filtered signal (`deriv` = 0) or its derivative (`deriv` ≥ 1, per unit of `delta`), with
/// an odd `window` centred on each interior sample and SciPy's 'interp' rule at the edges (the
/// first and last windows' fits read at the samples they cover). `None` when the signal is
/// shorter than the window or the arguments are out of range (see [`weights`]).
pub fn filter(
    x: &[f64],
    window: usize,
    order: usize,
    deriv: usize,
    delta: f64,
) -> Option<Vec<f64>> {
    if window.is_multiple_of(2) || x.len() < window || delta <= 0.0 {
        return None;
    }
    let half = window / 2;
    let scale = 1.0 / delta.powi(deriv as i32);
    let centre = weights(window, order, half, deriv)?;
    let mut out = vec![0.0; x.len()];
    if deriv == 1 && order <= 2 {
        centred_slope(x, half, scale, &mut out);
    } else {
        for i in half..x.len() - half {
            let w = &x[i - half..=i + half];
            out[i] = scale * centre.iter().zip(w).map(|(a, b)| a * b).sum::<f64>();
        }
    }
    let last = x.len() - window;
    for pos in 0..half {
        let w = weights(window, order, pos, deriv)?;
        out[pos] = scale * w.iter().zip(&x[..window]).map(|(a, b)| a * b).sum::<f64>();
        let end_pos = window - 1 - pos;
        let w = weights(window, order, end_pos, deriv)?;
        out[last + end_pos] = scale * w.iter().zip(&x[last..]).map(|(a, b)| a * b).sum::<f64>();
    }
    Some(out)
}

/// Samples between fresh sums in [`centred_slope`]: the running sums' rounding cannot build up
/// over more steps than this.
const RESUM_EVERY: usize = 64;

/// The first derivative of the linear or quadratic fit at the centre of each window of
/// `2·half + 1` samples, into `out[half..len − half]`, times `scale`. Centred, the fits' slope
/// weights are k/Σk² for k = −half..half (the quadratic term is even in k and drops out:
/// Savitzky and Golay 1964; SciPy's `savgol_coeffs(5, 2, deriv=1)` = (−2, −1, 0, 1, 2)/10),
/// so each value is S₁/Σk² with S₁ = Σ k·x[i+k], kept as running sums in O(1) per sample
/// whatever the window: S₁(i) = S₁(i−1) + half·x[i+half] + (half+1)·x[i−1−half] − S₀(i−1) and
/// S₀(i) = S₀(i−1) + x[i+half] − x[i−1−half], S₀ the window's plain sum; both summed afresh
/// every [`RESUM_EVERY`] samples.
fn centred_slope(x: &[f64], half: usize, scale: f64, out: &mut [f64]) {
    let h = half as f64;
    // Σk² over k = −half..half = half(half+1)(2·half+1)/3.
    let k2 = h * (h + 1.0) * (2.0 * h + 1.0) / 3.0;
    let factor = scale / k2;
    let (mut s0, mut s1) = (0.0, 0.0);
    for i in half..x.len() - half {
        if (i - half).is_multiple_of(RESUM_EVERY) {
            let w = &x[i - half..=i + half];
            s0 = w.iter().sum();
            s1 = w.iter().enumerate().map(|(k, v)| (k as f64 - h) * v).sum();
        } else {
            let (enter, leave) = (x[i + half], x[i - 1 - half]);
            s1 += h * enter + (h + 1.0) * leave - s0;
            s0 += enter - leave;
        }
        out[i] = factor * s1;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // SciPy documentation of scipy.signal.savgol_coeffs: savgol_coeffs(5, 2) =
    // [-0.08571429, 0.34285714, 0.48571429, 0.34285714, -0.08571429], i.e. (−3, 12, 17, 12, −3)/35.
    #[test]
    fn five_point_quadratic_smoothing_weights_are_scipys() {
        let w = weights(5, 2, 2, 0).unwrap();
        for (a, b) in w.iter().zip([-3.0, 12.0, 17.0, 12.0, -3.0]) {
            assert!((a - b / 35.0).abs() < 1e-12, "{w:?}");
        }
    }

    // SciPy documentation of scipy.signal.savgol_coeffs: savgol_coeffs(5, 2, deriv=1) =
    // [0.2, 0.1, 0, -0.1, -0.2] in convolution order, so (−2, −1, 0, 1, 2)/10 oldest first.
    #[test]
    fn five_point_first_derivative_weights_are_scipys() {
        let w = weights(5, 2, 2, 1).unwrap();
        for (a, b) in w.iter().zip([-0.2, -0.1, 0.0, 0.1, 0.2]) {
            assert!((a - b).abs() < 1e-12, "{w:?}");
        }
    }

    // SciPy documentation of scipy.signal.savgol_coeffs: x = [1, 0, 1, 4, 9] (t² at t = −1..3),
    // savgol_coeffs(5, 2, pos=4, deriv=1, use='dot').dot(x) = 6, the slope at the last point.
    #[test]
    fn end_point_derivative_of_t_squared_is_six_as_scipy_documents() {
        let w = weights(5, 2, 4, 1).unwrap();
        let d: f64 = w
            .iter()
            .zip([1.0, 0.0, 1.0, 4.0, 9.0])
            .map(|(a, b)| a * b)
            .sum();
        assert!((d - 6.0).abs() < 1e-9, "{d}");
    }

    // SciPy documentation of scipy.signal.savgol_filter:
    // savgol_filter([2, 2, 5, 2, 1, 0, 1, 4, 9], 5, 2) =
    // [1.66, 3.17, 3.54, 2.86, 0.66, 0.17, 1., 4., 9.] (mode 'interp', printed to 2 decimals);
    // the interior 3.5429, 2.8571, 0.6571, 0.1714 from the 35-weights [derived].
    #[test]
    fn smoothing_matches_scipys_documented_vector_edges_included() {
        let x = [2.0, 2.0, 5.0, 2.0, 1.0, 0.0, 1.0, 4.0, 9.0];
        let y = filter(&x, 5, 2, 0, 1.0).unwrap();
        let printed = [1.66, 3.17, 3.54, 2.86, 0.66, 0.17, 1.0, 4.0, 9.0];
        for (a, b) in y.iter().zip(printed) {
            assert!((a - b).abs() <= 0.005 + 1e-12, "{y:?}");
        }
        for (i, v) in [(2, 3.5429), (3, 2.8571), (4, 0.6571), (5, 0.1714)] {
            assert!((y[i] - v).abs() < 5e-5, "{i}: {}", y[i]);
        }
    }

    // N(t) = 6000 − 5000 t + 2000 t² sampled at 100 Hz: a quadratic fit is exact, so the
    // derivative at t = 0.10 s is −5000 + 4000·0.1 = −4600 rpm/s [derived].
    #[test]
    fn the_derivative_of_a_sampled_parabola_is_exact() {
        let n: Vec<f64> = (0..30)
            .map(|k| {
                let t = k as f64 * 0.01;
                6000.0 - 5000.0 * t + 2000.0 * t * t
            })
            .collect();
        let d = filter(&n, 7, 2, 1, 0.01).unwrap();
        assert!((d[10] + 4600.0).abs() < 1e-6, "{}", d[10]);
        // The edges too (their own window's fit).
        assert!((d[0] + 5000.0).abs() < 1e-6, "{}", d[0]);
        assert!(
            (d[29] - (-5000.0 + 4000.0 * 0.29)).abs() < 1e-6,
            "{}",
            d[29]
        );
    }

    // The running sums give what the window's weights give sample by sample, over a long noisy
    // signal and windows up to the largest the analysis uses (401), edges included (those are
    // the weights' own either way).
    #[test]
    fn the_running_sum_slope_is_the_weighted_sum_of_each_window() {
        let mut seed = 0x2545_F491_4F6C_DD1Du64;
        let x: Vec<f64> = (0..20_000)
            .map(|k| {
                seed ^= seed << 13;
                seed ^= seed >> 7;
                seed ^= seed << 17;
                let t = k as f64 * 0.001;
                550.0 + 80.0 * (3.0 * t).sin() + 40.0 * t * t + (seed % 1000) as f64 / 100.0
            })
            .collect();
        for (window, order) in [(5, 2), (7, 1), (61, 2), (401, 2)] {
            let fast = filter(&x, window, order, 1, 0.001).unwrap();
            let w = weights(window, order, window / 2, 1).unwrap();
            let half = window / 2;
            for i in 0..x.len() {
                let expected = if (half..x.len() - half).contains(&i) {
                    w.iter()
                        .zip(&x[i - half..])
                        .map(|(a, b)| a * b)
                        .sum::<f64>()
                        / 0.001
                } else {
                    fast[i]
                };
                // Rounding: 1e-11 of the signal's size (about 600), per 0.001 step; a wrong
                // sum is off by the signal's size over Σk², hundreds of times this.
                assert!(
                    (fast[i] - expected).abs() <= 1e-11 * 600.0 / 0.001,
                    "window {window}, sample {i}: {} against {expected}",
                    fast[i]
                );
            }
        }
    }

    #[test]
    fn impossible_windows_are_refused() {
        assert!(weights(3, 3, 1, 0).is_none());
        assert!(filter(&[1.0, 2.0, 3.0], 5, 2, 0, 1.0).is_none());
        assert!(filter(&[1.0; 10], 4, 2, 0, 1.0).is_none());
    }
}
