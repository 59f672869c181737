//! Friction against heat over a season (docs/engineering.md §27).
//!
//! The facing temperature at each launch of a day, from the ambient, the previous passes' bulk
//! rises and Newton's law of cooling between them; and the straight line μ = μ₀ + k·(θ − θ_ref)
//! through the passes' calibrated μ against those temperatures, with 95 % intervals. Units:
//! °C (or K for differences), seconds, J, kg.

use crate::calibration::student_t_quantile;

/// Passes needed before the μ-against-temperature line is fitted (the rule).
pub const MIN_PASSES: usize = 5;

/// Spread of launch temperatures needed before the line is fitted, K (the rule).
pub const MIN_SPREAD_K: f64 = 50.0;

/// Cooling time constant used when the car gives no better figure, s: about 25 minutes for a
/// flywheel and cover in a closed bellhousing, cooling by natural convection (from memory; a
/// shop default, not a measured value).
pub const DEFAULT_TAU_S: f64 = 25.0 * 60.0;

/// Newton cooling time constant τ = m·c/(h·A), s. `h_a_w_k` is the film coefficient times the
/// wetted area, W/K. `None` unless every figure is positive and finite.
pub fn time_constant_s(mass_kg: f64, specific_heat_j_kg_k: f64, h_a_w_k: f64) -> Option<f64> {
    let ok = |v: f64| v.is_finite() && v > 0.0;
    (ok(mass_kg) && ok(specific_heat_j_kg_k) && ok(h_a_w_k))
        .then(|| mass_kg * specific_heat_j_kg_k / h_a_w_k)
}

/// Bulk temperature rise of a part taking `share` of `energy_j`, K: share·E/(m·c) (Shigley
/// ch. 16, "Temperature rise"; adiabatic over a launch of seconds).
pub fn bulk_rise_k(energy_j: f64, share: f64, mass_kg: f64, specific_heat_j_kg_k: f64) -> f64 {
    share * energy_j / (mass_kg * specific_heat_j_kg_k)
}

/// Newton's law of cooling: θ(t) = θ_amb + (θ₀ − θ_amb)·e^(−t/τ).
pub fn cooled_c(start_c: f64, ambient_c: f64, elapsed_s: f64, tau_s: f64) -> f64 {
    ambient_c + (start_c - ambient_c) * (-elapsed_s.max(0.0) / tau_s).exp()
}

/// A time of day written `HH:MM` (24-hour clock, 00:00–23:59), in seconds after midnight.
pub fn time_of_day_s(text: &str) -> Option<f64> {
    let (h, m) = text.trim().split_once(':')?;
    let ok = |s: &str| s.len() == 2 && s.bytes().all(|b| b.is_ascii_digit());
    if !ok(h) || !ok(m) {
        return None;
    }
    let (h, m): (u32, u32) = (h.parse().ok()?, m.parse().ok()?);
    (h < 24 && m < 60).then(|| f64::from(h * 3600 + m * 60))
}

/// One pass, as far as its launch temperature goes.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HeatPass {
    /// The day the pass was run on (any number that is equal for passes of the same day).
    pub day: i64,
    /// Time of day, seconds after midnight.
    pub at_s: f64,
    /// Ambient temperature, °C.
    pub ambient_c: f64,
    /// Bulk rise the pass gave the facing's mating parts, K; `None` when unknown.
    pub rise_k: Option<f64>,
}

/// The facing temperature at each pass's launch, °C, for passes sorted by day and time.
///
/// A day's first pass launches at its ambient. Each next pass launches at the previous one's
/// launch temperature plus its bulk rise, cooled by Newton's law towards this pass's ambient
/// over the time between them. `None` for a pass whose previous pass of the day has an unknown
/// rise or an unknown temperature (the chain is broken until the next day).
pub fn launch_temperatures(passes: &[HeatPass], tau_s: f64) -> Vec<Option<f64>> {
    let mut out: Vec<Option<f64>> = Vec::with_capacity(passes.len());
    for (i, p) in passes.iter().enumerate() {
        let theta = match i.checked_sub(1).map(|j| (&passes[j], out[j])) {
            Some((prev, before)) if prev.day == p.day => before
                .zip(prev.rise_k)
                .map(|(t, rise)| cooled_c(t + rise, p.ambient_c, p.at_s - prev.at_s, tau_s)),
            _ => Some(p.ambient_c),
        };
        out.push(theta);
    }
    out
}

/// μ against launch temperature: μ = μ₀ + k·(θ − θ_ref) (°C, μ per K).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct HeatFit {
    /// Passes used.
    pub n: usize,
    /// μ at θ_ref.
    pub mu0: f64,
    /// 95 % interval on μ₀ (the line's mean at θ_ref).
    pub mu0_ci95: [f64; 2],
    /// Change of μ per kelvin.
    pub k_per_k: f64,
    /// 95 % interval on k.
    pub k_ci95: [f64; 2],
    /// Reference temperature, the mean of the launch temperatures, °C.
    pub theta_ref_c: f64,
    /// Highest minus lowest launch temperature, K.
    pub spread_k: f64,
}

impl HeatFit {
    /// The line's μ at `theta_c`.
    pub fn mu_at(&self, theta_c: f64) -> f64 {
        self.mu0 + self.k_per_k * (theta_c - self.theta_ref_c)
    }
}

/// Why the line is not fitted yet.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum NotFitted {
    /// Fewer than [`MIN_PASSES`] passes with a launch temperature and a μ.
    TooFewPasses { n: usize },
    /// The launch temperatures span less than [`MIN_SPREAD_K`]; `more_k` is what is missing.
    TooLittleSpread { spread_k: f64, more_k: f64 },
}

/// Least squares μ = μ₀ + k·(θ − θ_ref) through `points` (θ °C, μ), θ_ref the mean θ.
///
/// k = Sθμ/Sθθ, μ₀ = μ̄, s² = Σ residual²/(n − 2), SE(k) = s/√Sθθ, SE(μ₀) = s/√n, intervals
/// ± t(0.975, n − 2)·SE (NIST/SEMATECH e-Handbook §4.1.4.1 and §1.3.6.7.2). Needs at least
/// [`MIN_PASSES`] finite points spanning at least [`MIN_SPREAD_K`].
pub fn fit_mu_vs_temperature(points: &[(f64, f64)]) -> Result<HeatFit, NotFitted> {
    let pts: Vec<(f64, f64)> = points
        .iter()
        .copied()
        .filter(|(t, m)| t.is_finite() && m.is_finite())
        .collect();
    let n = pts.len();
    if n < MIN_PASSES {
        return Err(NotFitted::TooFewPasses { n });
    }
    let lo = pts.iter().map(|p| p.0).fold(f64::INFINITY, f64::min);
    let hi = pts.iter().map(|p| p.0).fold(f64::NEG_INFINITY, f64::max);
    let spread_k = hi - lo;
    if spread_k < MIN_SPREAD_K {
        return Err(NotFitted::TooLittleSpread {
            spread_k,
            more_k: MIN_SPREAD_K - spread_k,
        });
    }
    let nf = n as f64;
    let theta_ref_c = pts.iter().map(|p| p.0).sum::<f64>() / nf;
    let mu0 = pts.iter().map(|p| p.1).sum::<f64>() / nf;
    let sxx: f64 = pts.iter().map(|p| (p.0 - theta_ref_c).powi(2)).sum();
    let sxy: f64 = pts.iter().map(|p| (p.0 - theta_ref_c) * (p.1 - mu0)).sum();
    let k = sxy / sxx;
    let sse: f64 = pts
        .iter()
        .map(|p| (p.1 - mu0 - k * (p.0 - theta_ref_c)).powi(2))
        .sum();
    let s = (sse / (nf - 2.0)).sqrt();
    let t = student_t_quantile(0.975, nf - 2.0);
    let (se_k, se_mu0) = (s / sxx.sqrt(), s / nf.sqrt());
    Ok(HeatFit {
        n,
        mu0,
        mu0_ci95: [mu0 - t * se_mu0, mu0 + t * se_mu0],
        k_per_k: k,
        k_ci95: [k - t * se_k, k + t * se_k],
        theta_ref_c,
        spread_k,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64, tol: f64) {
        assert!((a - b).abs() <= tol, "{a} vs {b} (tol {tol})");
    }

    #[test]
    fn newton_cooling_leaves_one_e_th_of_the_excess_after_one_time_constant() {
        // Derived from θ(t) = θ_amb + (θ₀ − θ_amb)·e^(−t/τ): after τ, 100 K of excess is
        // 100/e = 36.788 K; after 0 s nothing changes; after a long time, the ambient.
        close(cooled_c(120.0, 20.0, 900.0, 900.0), 20.0 + 36.787_944, 1e-5);
        close(cooled_c(120.0, 20.0, 0.0, 900.0), 120.0, 1e-12);
        close(cooled_c(120.0, 20.0, 1e6, 900.0), 20.0, 1e-9);
    }

    #[test]
    fn time_of_day_reads_the_24_hour_clock() {
        assert_eq!(time_of_day_s("00:00"), Some(0.0));
        assert_eq!(time_of_day_s("10:15"), Some(36_900.0));
        assert_eq!(time_of_day_s("23:59"), Some(86_340.0));
        for bad in ["24:00", "12:60", "9:15", "12:5", "", "ab:cd", "12-15"] {
            assert_eq!(time_of_day_s(bad), None, "{bad}");
        }
    }

    #[test]
    fn time_constant_is_mass_times_specific_heat_over_h_a() {
        // Derived: 12 kg of steel at 460 J/(kg·K) losing 4 W/K: τ = 5520/4 = 1380 s.
        close(time_constant_s(12.0, 460.0, 4.0).unwrap(), 1380.0, 1e-9);
        assert_eq!(time_constant_s(12.0, 460.0, 0.0), None);
    }

    #[test]
    fn bulk_rise_matches_the_launch_models_share_of_the_energy() {
        // Derived: 100 kJ, a quarter to an 8 kg plate at 460 J/(kg·K): 25000/3680 = 6.7935 K.
        close(bulk_rise_k(100_000.0, 0.25, 8.0, 460.0), 6.793_478, 1e-6);
    }

    #[test]
    fn a_days_passes_start_at_ambient_and_carry_the_cooled_rise() {
        // Derived: day 1 at 20 °C; pass 1 at 10:00 rises 60 K; pass 2 at 10:15 (τ = 15 min)
        // launches at 20 + 60/e = 42.0728 °C and rises 30 K; pass 3 at 10:45 launches at
        // 20 + (72.0728 − 20)·e^(−2) = 27.0473 °C. Day 2 starts over at its own ambient.
        let p = |day, hh: f64, mm: f64, amb, rise| HeatPass {
            day,
            at_s: hh * 3600.0 + mm * 60.0,
            ambient_c: amb,
            rise_k: rise,
        };
        let passes = [
            p(1, 10.0, 0.0, 20.0, Some(60.0)),
            p(1, 10.0, 15.0, 20.0, Some(30.0)),
            p(1, 10.0, 45.0, 20.0, None),
            p(1, 11.0, 0.0, 20.0, Some(10.0)),
            p(2, 9.0, 0.0, 12.0, Some(40.0)),
        ];
        let t = launch_temperatures(&passes, 900.0);
        close(t[0].unwrap(), 20.0, 1e-12);
        let second = 20.0 + 60.0 / std::f64::consts::E;
        close(t[1].unwrap(), second, 1e-9);
        close(t[1].unwrap(), 42.072_766, 1e-5);
        close(
            t[2].unwrap(),
            20.0 + (second + 30.0 - 20.0) * (-2.0f64).exp(),
            1e-9,
        );
        close(t[2].unwrap(), 27.047_283, 1e-5);
        assert_eq!(
            t[3], None,
            "after a pass of unknown rise the chain is broken"
        );
        close(t[4].unwrap(), 12.0, 1e-12);
    }

    #[test]
    fn line_through_constructed_points_gives_the_known_slope_and_interval() {
        // Derived: θ = 20..100 °C, μ = 0.40 − 0.0001·(θ − 60) + e with residuals
        // e = (0, +0.002, −0.004, +0.002, 0), which sum to zero and are orthogonal to θ, so
        // k = −0.0001 /K and μ₀ = 0.40 exactly. SSE = 24e-6, s² = 8e-6, Sθθ = 4000,
        // SE(k) = √(2e-9) = 4.4721e-5; t(0.975, 3) = 3.182 (NIST/SEMATECH §1.3.6.7.2 table),
        // so k ∈ −0.0001 ± 1.4232e-4.
        let e = [0.0, 0.002, -0.004, 0.002, 0.0];
        let pts: Vec<(f64, f64)> = (0..5)
            .map(|i| {
                let theta = 20.0 + 20.0 * i as f64;
                (theta, 0.40 - 0.0001 * (theta - 60.0) + e[i])
            })
            .collect();
        let f = fit_mu_vs_temperature(&pts).unwrap();
        assert_eq!(f.n, 5);
        close(f.theta_ref_c, 60.0, 1e-12);
        close(f.mu0, 0.40, 1e-12);
        close(f.k_per_k, -0.0001, 1e-12);
        close(f.spread_k, 80.0, 1e-12);
        let half = 3.182_446 * (2e-9f64).sqrt();
        close(f.k_ci95[0], -0.0001 - half, 1e-8);
        close(f.k_ci95[1], -0.0001 + half, 1e-8);
        // μ₀'s interval: ± t·s/√n = 3.182446·√(8e-6/5).
        close(
            f.mu0_ci95[1] - f.mu0,
            3.182_446 * (8e-6f64 / 5.0).sqrt(),
            1e-8,
        );
        close(f.mu_at(160.0), 0.39, 1e-12);
    }

    #[test]
    fn the_line_waits_for_five_passes_spanning_fifty_kelvin() {
        // The rule: at least 5 passes spanning at least 50 K.
        let four = [(20.0, 0.4), (40.0, 0.39), (60.0, 0.38), (80.0, 0.37)];
        assert_eq!(
            fit_mu_vs_temperature(&four),
            Err(NotFitted::TooFewPasses { n: 4 })
        );
        let narrow = [
            (20.0, 0.4),
            (25.0, 0.39),
            (30.0, 0.38),
            (40.0, 0.37),
            (50.0, 0.36),
        ];
        match fit_mu_vs_temperature(&narrow) {
            Err(NotFitted::TooLittleSpread { spread_k, more_k }) => {
                close(spread_k, 30.0, 1e-12);
                close(more_k, 20.0, 1e-12);
            }
            other => panic!("expected too little spread, got {other:?}"),
        }
        let wide = [
            (20.0, 0.4),
            (25.0, 0.39),
            (30.0, 0.38),
            (40.0, 0.37),
            (70.0, 0.36),
        ];
        assert!(fit_mu_vs_temperature(&wide).is_ok());
    }
}
