use super::*;

fn flat_curve(nm: f64) -> TorqueCurve {
    TorqueCurve::new(
        &[(3000.0, nm), (5500.0, nm), (8000.0, nm)],
        "engine.torque_curve",
        crate::units::Units::Metric,
    )
    .unwrap()
}

/// The worked file of docs/engineering.md §24 ([derived]): engine 6000 rpm throughout,
/// input 6000·t/0.8 up to 0.8 s then 6000, 100 Hz from 0 to 1 s, flat 600 N·m.
fn worked_file() -> Series {
    let time_s: Vec<f64> = (0..=100).map(|k| k as f64 / 100.0).collect();
    Series {
        engine_rpm: vec![6000.0; time_s.len()],
        input_rpm: time_s
            .iter()
            .map(|&t| if t <= 0.8 { 6000.0 * t / 0.8 } else { 6000.0 })
            .collect(),
        time_s,
        ..Series::default()
    }
}

#[test]
fn the_worked_file_locks_up_at_0_776_s_with_150_796_joules() {
    let series = worked_file();
    let engine = EngineModel {
        curve: flat_curve(600.0),
        inertia_kgm2: 0.25,
    };
    let a = analyze(&series, 0.01, LockupRule::default(), Some(&engine)).unwrap();
    // slip(0.77) = 3.75 %, slip(0.78) = 2.5 %: crossing 0.776 s [derived, docs/engineering.md §24].
    assert!((a.slip_pct[77] - 3.75).abs() < 1e-9);
    assert!((a.slip_pct[78] - 2.5).abs() < 1e-9);
    assert!((a.lockup_s - 0.776).abs() < 1e-9, "{}", a.lockup_s);
    // The line through 0.02–0.07 s goes through the origin: launch at 0 [derived].
    assert!(a.launch_s.abs() < 1e-9, "{}", a.launch_s);
    // 600 N·m × 628.3185 rad/s × 0.4 s = 150 796 J (trapezoid exact on a straight line) [derived].
    let e = a.slip_energy_j.unwrap();
    assert!(
        (e - 600.0 * 200.0 * std::f64::consts::PI * 0.4).abs() < 1e-6,
        "{e}"
    );
    assert!((e - 150_796.0).abs() < 1.0);
    // Peak slip power 600 × 628.3185 = 377.0 kW at launch [derived].
    assert!((a.peak_slip_power_w.unwrap() - 376_991.1).abs() < 0.1);
    assert_eq!(
        (a.launch_engine_rpm, a.min_engine_rpm, a.lockup_engine_rpm),
        (6000.0, 6000.0, 6000.0)
    );
    assert_eq!(a.samples, 101);
    assert!((a.sample_rate_hz - 100.0).abs() < 1e-9);
    // The energy window runs to the end of the hold: 0.78 + 0.10 s.
    assert_eq!(a.window, (0, 88));
}

#[test]
fn without_an_engine_there_is_no_torque_or_energy_but_the_events_stand() {
    let a = analyze(&worked_file(), 0.01, LockupRule::default(), None).unwrap();
    assert!(a.slip_energy_j.is_none() && a.clutch_torque_nm.is_none());
    assert!((a.lockup_s - 0.776).abs() < 1e-9);
    // The missing engine, and (issue 21) the hold the launch and minimum are read with.
    assert_eq!(a.notes.len(), 2);
    assert!(a.notes[0].starts_with("The launch and the lowest engine speed"));
}

#[test]
fn a_longer_hold_than_the_file_allows_finds_no_lockup() {
    let rule = LockupRule {
        slip_on_pct: 3.0,
        hold_s: 0.5,
    };
    let err = analyze(&worked_file(), 0.01, rule, None).unwrap_err();
    assert_eq!(err.field, "columns.input_rpm");
    assert!(err.message.contains("no lockup found"), "{}", err.message);
}

#[test]
fn an_input_that_never_turns_has_no_launch() {
    let mut s = worked_file();
    s.input_rpm.fill(50.0);
    let err = analyze(&s, 0.01, LockupRule::default(), None).unwrap_err();
    assert!(err.message.contains("no launch found"), "{}", err.message);
}

#[test]
fn too_few_samples_are_refused() {
    let mut s = worked_file();
    s.time_s.truncate(9);
    let err = analyze(&s, 0.01, LockupRule::default(), None).unwrap_err();
    assert_eq!(err.field, "csv");
}

/// A small launch generator (the project's own, for these tests only): two inertias joined by
/// a clutch whose torque ramps linearly from 0 at launch to `clutch_nm` over `ramp_s`, the
/// engine making a flat `engine_nm` (docs/engineering.md §16, slip mode, no road load), run at
/// 10 µs with the midpoint rule and sampled every `dt`. Locked, both accelerate together.
/// Returns the samples, the true crossing of 3 % slip and the true slip energy ∫T·Δω dt.
struct Launch {
    engine_nm: f64,
    clutch_nm: f64,
    ramp_s: f64,
    i_engine: f64,
    j_driven: f64,
    start_rpm: f64,
    launch_s: f64,
}

impl Launch {
    fn run(&self, dt: f64, end_s: f64) -> (Series, f64, f64) {
        let h = 1e-5;
        let per_sample = (dt / h).round() as usize;
        let steps = (end_s / h).round() as usize;
        let (mut we, mut wi) = (rpm_to_rad_s(self.start_rpm), 0.0f64);
        let mut locked = false;
        let mut energy = 0.0;
        let mut crossing = None;
        let mut s = Series {
            clutch_switch: Some(Vec::new()),
            ..Series::default()
        };
        let torque = |t: f64| {
            if t < self.launch_s {
                0.0
            } else {
                self.clutch_nm * ((t - self.launch_s) / self.ramp_s).min(1.0)
            }
        };
        let rates = |t: f64, we: f64, wi: f64, locked: bool| {
            if locked {
                let a = self.engine_nm / (self.i_engine + self.j_driven);
                (a, a)
            } else {
                let tc = torque(t);
                let _ = (we, wi);
                ((self.engine_nm - tc) / self.i_engine, tc / self.j_driven)
            }
        };
        for k in 0..=steps {
            let t = k as f64 * h;
            if k % per_sample == 0 {
                s.time_s.push(t);
                s.engine_rpm.push(we / crate::units::RAD_S_PER_RPM);
                s.input_rpm.push(wi / crate::units::RAD_S_PER_RPM);
                s.clutch_switch
                    .as_mut()
                    .unwrap()
                    .push(if t >= self.launch_s - 1e-12 { 1.0 } else { 0.0 });
            }
            let (ae, ai) = rates(t, we, wi, locked);
            let (me, mi) = (we + ae * h / 2.0, wi + ai * h / 2.0);
            let (ae, ai) = rates(t + h / 2.0, me, mi, locked);
            if !locked {
                energy += torque(t + h / 2.0) * (me - mi) * h;
            }
            let before = 100.0 * (we - wi) / we;
            we += ae * h;
            wi += ai * h;
            let after = 100.0 * (we - wi) / we;
            if crossing.is_none() && t >= self.launch_s && before >= 3.0 && after < 3.0 {
                crossing = Some(t + h * (before - 3.0) / (before - after));
            }
            if !locked && t >= self.launch_s && wi >= we {
                locked = true;
                wi = we;
            }
        }
        (s, crossing.unwrap(), energy)
    }
}

const GENERATED: Launch = Launch {
    engine_nm: 600.0,
    clutch_nm: 800.0,
    ramp_s: 0.05,
    i_engine: 0.25,
    j_driven: 2.0,
    start_rpm: 5000.0,
    launch_s: 0.05,
};

#[test]
fn a_generated_launch_is_read_back_within_one_sample_and_half_a_percent() {
    let dt = 0.005;
    let (series, true_lockup, true_energy) = GENERATED.run(dt, 1.2);
    let engine = EngineModel {
        curve: flat_curve(600.0),
        inertia_kgm2: 0.25,
    };
    let a = analyze(&series, dt, LockupRule::default(), Some(&engine)).unwrap();
    assert!(
        (a.launch_s - GENERATED.launch_s).abs() < 1e-9,
        "{}",
        a.launch_s
    );
    assert!(
        (a.lockup_s - true_lockup).abs() <= dt,
        "lockup {} against {true_lockup}",
        a.lockup_s
    );
    let e = a.slip_energy_j.unwrap();
    assert!(
        ((e - true_energy) / true_energy).abs() < 0.005,
        "energy {e} against {true_energy}"
    );
    // The clutch torque read from the engine's slowing matches the generator's mid-slip.
    let mid = a.calibration_samples(&series.time_s);
    let tc = a.clutch_torque_nm.as_ref().unwrap();
    let i = (mid.start + mid.end) / 2;
    assert!((tc[i] - 800.0).abs() < 8.0, "{}", tc[i]);
}

#[test]
fn the_three_sample_rule_finds_a_generated_launch_within_one_sample() {
    // Full clamp at once: the input speed rises in a straight line from the launch, so the
    // line moved back to zero lands on it.
    let launch = Launch {
        ramp_s: 1e-5,
        launch_s: 0.1,
        ..GENERATED
    };
    let dt = 0.004;
    let (mut series, true_lockup, _) = launch.run(dt, 1.2);
    series.clutch_switch = None;
    let a = analyze(&series, dt, LockupRule::default(), None).unwrap();
    assert!((a.launch_s - 0.1).abs() <= dt, "{}", a.launch_s);
    assert!((a.lockup_s - true_lockup).abs() <= dt);
}

#[test]
fn blanks_are_interpolated_in_time_and_held_at_the_ends() {
    let t = [0.0, 1.0, 3.0, 4.0, 5.0];
    let mut v = [f64::NAN, 10.0, f64::NAN, 40.0, f64::NAN];
    fill_blanks(&t, &mut v).unwrap();
    // 10 at t = 1 and 40 at t = 4: at t = 3, 10 + 30·2/3 = 30.
    assert_eq!(v, [10.0, 10.0, 30.0, 40.0, 40.0]);
    assert!(fill_blanks(&t, &mut [f64::NAN; 5]).is_none());
}

#[test]
fn an_uneven_clock_is_resampled_at_its_median_step() {
    let mut s = Series {
        time_s: vec![10.0, 10.01, 10.02, 10.035, 10.04, 10.05],
        engine_rpm: vec![0.0, 10.0, 20.0, 35.0, 40.0, 50.0],
        input_rpm: vec![0.0; 6],
        ..Series::default()
    };
    let (dt, moved) = to_uniform_clock(&mut s, None).unwrap().unwrap();
    assert!(moved);
    assert!((dt - 0.01).abs() < 1e-12);
    assert_eq!(s.time_s.len(), 6);
    // engine = 1000·(t − 10) throughout, so every resampled value lies on that line.
    for (t, e) in s.time_s.iter().zip(&s.engine_rpm) {
        assert!((e - 1000.0 * t).abs() < 1e-6, "{t} {e}");
    }
}

// A median step the caller already knows is taken for a clock that starts at 0 (the same step
// as worked out afresh, the same series) and ignored for one that does not (rebased first).
#[test]
fn a_known_median_step_is_used_only_for_a_clock_left_as_it_is() {
    let series = |t0: f64| Series {
        time_s: (0..50).map(|k| t0 + k as f64 * 0.013).collect(),
        engine_rpm: (0..50).map(|k| 5000.0 + k as f64).collect(),
        input_rpm: vec![0.0; 50],
        ..Series::default()
    };
    let (mut a, mut b) = (series(0.0), series(0.0));
    let known = median_step(&a.time_s);
    assert_eq!(
        to_uniform_clock(&mut a, Some(known)),
        to_uniform_clock(&mut b, None)
    );
    assert_eq!(a, b);
    let (mut c, mut d) = (series(7.5), series(7.5));
    let fresh = to_uniform_clock(&mut d, None);
    assert_eq!(to_uniform_clock(&mut c, Some(1.0)), fresh);
    assert_eq!(c, d);
}

#[test]
fn a_clock_too_uneven_to_resample_is_refused() {
    let mut s = Series {
        time_s: vec![0.0, 1e-9, 2e-9, 3e-9, 1e6],
        engine_rpm: vec![0.0; 5],
        input_rpm: vec![0.0; 5],
        ..Series::default()
    };
    assert!(to_uniform_clock(&mut s, None).is_none());
}

// Issue 21, item 4: a launch on a sample to floating-point precision counts that sample whichever
// way the last bit falls (within 1e-9 s); a launch between samples adds the trapezoid from the
// launch, its power interpolated [derived: power 100 → 80 W over 0–1 s, launch at 0.25 s:
// P = 95 W, piece 0.5 × (95 + 80) × 0.75 = 65.625 J, then 0.5 × (80 + 60) × 1 = 70 J].
#[test]
fn slip_energy_starts_at_the_launch_instant() {
    let t = [0.0, 1.0, 2.0];
    let p = [100.0, 80.0, 60.0];
    let (e, peak) = slip_energy(&t, &p, 0.25, 1, 2);
    assert!((e - 135.625).abs() < 1e-12, "{e}");
    assert_eq!(peak, 95.0);
    let on = slip_energy(&t, &p, 1.0, 1, 2);
    for jitter in [1.0 - 1e-15, 1.0 + 1e-15, 1.0 - 5e-10] {
        let first = t.partition_point(|&x| x < jitter - LAUNCH_SAMPLE_S);
        assert_eq!(first, 1);
        assert_eq!(slip_energy(&t, &p, jitter, first, 2), on, "{jitter}");
    }
    assert_eq!(on, (70.0, 80.0));
}

// Issue 21, item 7 [derived]: the worked file with a clutch switch off until 0.10 s but for a
// one-sample flicker at 0.05 s, and an engine dip of one sample to 5000 rpm at 0.40 s. The hold (20 ms, 3
// samples at 100 Hz) keeps the launch at 0.10 s and the lowest engine speed at 6000 rpm; a dip
// held for 3 samples counts.
#[test]
fn one_noisy_sample_neither_starts_the_launch_nor_sets_the_minimum() {
    let mut s = worked_file();
    let mut switch: Vec<f64> = s
        .time_s
        .iter()
        .map(|&t| if t >= 0.1 - 1e-9 { 1.0 } else { 0.0 })
        .collect();
    switch[5] = 1.0;
    s.clutch_switch = Some(switch);
    s.engine_rpm[40] = 5000.0;
    let a = analyze(&s, 0.01, LockupRule::default(), None).unwrap();
    assert!((a.launch_s - 0.1).abs() < 1e-9, "{}", a.launch_s);
    assert_eq!(a.min_engine_rpm, 6000.0);
    assert!(
        a.notes.iter().any(|n| n.contains("with a hold")),
        "{:?}",
        a.notes
    );
    s.engine_rpm[41] = 5000.0;
    s.engine_rpm[42] = 5000.0;
    let a = analyze(&s, 0.01, LockupRule::default(), None).unwrap();
    assert_eq!(a.min_engine_rpm, 5000.0);
    assert_eq!(held_minimum(&[6.0, 5.0, 6.0, 4.0, 4.0, 4.0, 6.0], 3), 4.0);
    assert_eq!(hold_samples(0.01), 3);
    assert_eq!(hold_samples(0.001), 20);
}

#[test]
fn millisecond_clocks_are_told_from_seconds_by_the_median_step() {
    assert!(looks_like_ms(&[0.0, 1.0, 2.0, 3.0]));
    assert!(looks_like_ms(&[0.0, 0.5, 1.0, 1.5]));
    assert!(!looks_like_ms(&[0.0, 0.01, 0.02, 0.9]));
}

#[test]
fn the_derivative_window_spans_60_ms_and_at_least_5_samples() {
    // 100 Hz: 6 steps = 60 ms → 7 samples; 1000 Hz → 61; 20 Hz → 5 (the minimum).
    assert_eq!(derivative_window(0.01), 7);
    assert_eq!(derivative_window(0.001), 61);
    assert_eq!(derivative_window(0.05), 5);
    assert_eq!(derivative_window(0.004), 17);
    // 100 kHz would need 6001: capped.
    assert_eq!(derivative_window(0.00001), DERIVATIVE_MAX_SAMPLES);
}

#[test]
fn tire_spin_needs_fifteen_percent_for_fifty_milliseconds() {
    let t: Vec<f64> = (0..100).map(|k| k as f64 * 0.01).collect();
    let undriven = vec![10.0; 100];
    let mut driven = vec![10.0; 100];
    // 20 % over for 0.20–0.29 s (10 samples = 100 ms), 16 % over for 0.50–0.52 (30 ms).
    for v in &mut driven[20..30] {
        *v = 12.0;
    }
    for v in &mut driven[50..53] {
        *v = 11.6;
    }
    assert_eq!(
        tire_spin(&t, median_step(&t), &driven, &undriven),
        vec![[0.2, 0.29]]
    );
}

#[test]
fn the_calibration_value_is_the_median_ratio() {
    let pairs = [[6000.0, 600.0], [6000.0, 660.0], [6000.0, 5000.0]];
    // C = 2000 N·m at μ = 1: ratios 0.30, 0.33, 2.5 → median 0.33.
    let r = median_ratio(&pairs, |_| 2000.0).unwrap();
    assert!((r - 0.33).abs() < 1e-12);
    assert!(median_ratio(&pairs, |_| 0.0).is_none());
}

// The median step counted by value (no list of steps kept) against the median of the list of
// steps, on clocks as loggers write them (a fixed rate printed to 2 to 5 decimals, in s or ms,
// some with dropped samples), odd and even counts, and on clocks of too many step values for
// the count (the list is used then): the same bits every time.
#[test]
fn the_median_step_counted_by_value_is_the_median_of_the_steps() {
    let mut x = 0x9E37_79B9_7F4A_7C15u64;
    let mut next = move |n: u64| {
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        x % n
    };
    let mut counted = 0;
    for case in 0..400 {
        let n = 2 + next(3000) as usize;
        let decimals = 2 + next(4) as i32;
        let scale = 10f64.powi(decimals);
        let step = [0.001, 0.002, 0.01, 1.0, 2.5][next(5) as usize];
        let start = next(100_000) as f64 * step;
        let mut time = Vec::with_capacity(n);
        let mut k = 0u64;
        for _ in 0..n {
            k += if next(50) == 0 { 2 } else { 1 };
            let t = start + k as f64 * step;
            // Printed to `decimals` and read back; every 7th case left unrounded with jitter.
            time.push(if case % 7 == 0 {
                t + next(1000) as f64 * 1e-9
            } else {
                (t * scale).round() / scale
            });
        }
        let mut steps: Vec<f64> = time.windows(2).map(|w| w[1] - w[0]).collect();
        let expected = median(&mut steps).unwrap_or(0.0);
        assert_eq!(
            median_step(&time).to_bits(),
            expected.to_bits(),
            "case {case}"
        );
        counted += usize::from(few_valued_median_step(&time).is_some());
    }
    // Both ways were taken.
    assert!((100..400).contains(&counted), "{counted}");
}

#[test]
fn a_clock_past_the_sample_cap_is_refused_before_it_is_resampled() {
    // 1 M steps of 1 ms, then 0.5 M of 10 ms: the median step is 1 ms, so one clock over the
    // 6,000 s would take 6 M samples (within the four-fold rule, past the 5 M cap).
    let mut time: Vec<f64> = (0..1_000_000).map(|i| i as f64 * 0.001).collect();
    time.extend((1..=500_000).map(|i| 1000.0 + i as f64 * 0.01));
    let n = time.len();
    let mut s = Series {
        time_s: time,
        engine_rpm: vec![0.0; n],
        input_rpm: vec![0.0; n],
        ..Series::default()
    };
    let refused = to_uniform_clock(&mut s, None).unwrap().unwrap_err();
    assert!((6_000_000..=6_000_001).contains(&refused), "{refused}");
    assert_eq!(s.engine_rpm.len(), n);
    let msg = too_many_samples(6_000_001, "on one clock").message;
    assert!(
        msg.contains("6,000,001 samples on one clock; at most 5,000,000"),
        "{msg}"
    );
}

// The analysis with the clutch torque on a second thread against the same analysis in turn:
// the same figures to the bit. The engine speed sweeps across both segments of a three-point
// curve and past its top (so the segment look-up from the last sample moves, and clamps), the
// driven wheels spin for a while. Every clutch torque is the textbook T_e(N_e) − I·dω/dt with
// T_e from the curve's own `torque_at` (its whole-curve search) and dω/dt from the filter.
#[test]
fn the_clutch_torque_beside_the_events_gives_the_figures_of_the_analysis_in_turn() {
    let dt = 0.0001;
    let time_s: Vec<f64> = (0..30_000).map(|k| k as f64 * dt).collect();
    assert!(time_s.len() >= crate::datalog::PIECES_FROM_SAMPLES);
    let engine_rpm: Vec<f64> = time_s
        .iter()
        .map(|&t| 6000.0 - 2500.0 * (t / 0.5).min(1.0) + 4000.0 * (t - 1.5).max(0.0))
        .collect();
    let input_rpm: Vec<f64> = time_s
        .iter()
        .zip(&engine_rpm)
        .map(|(&t, &e)| (4000.0 * (t - 0.1).max(0.0)).min(e))
        .collect();
    let undriven: Vec<f64> = input_rpm.iter().map(|n| n / 400.0).collect();
    let driven: Vec<f64> = undriven
        .iter()
        .zip(&time_s)
        .map(|(u, &t)| if (0.8..1.0).contains(&t) { u * 1.3 } else { *u })
        .collect();
    let series = Series {
        time_s,
        engine_rpm,
        input_rpm,
        driven_mps: Some(driven),
        undriven_mps: Some(undriven),
        ..Series::default()
    };
    let curve = TorqueCurve::new(
        &[(3000.0, 420.0), (5000.0, 520.0), (7000.0, 470.0)],
        "engine.torque_curve",
        crate::units::Units::Metric,
    )
    .unwrap();
    let engine = EngineModel {
        curve: curve.clone(),
        inertia_kgm2: 0.2,
    };
    let rule = LockupRule::default();
    let in_turn = analyze(&series, dt, rule, Some(&engine)).unwrap();
    let beside = analyze_on(
        &series,
        dt,
        rule,
        Some(&engine),
        &crate::datalog::TwoThreads,
    )
    .unwrap();
    assert_eq!(in_turn, beside);
    assert!(!in_turn.tire_spin.is_empty());
    assert!(
        in_turn
            .notes
            .iter()
            .any(|n| n.contains("left the torque curve"))
    );
    let slope = savgol::filter(&series.engine_rpm, derivative_window(dt), 2, 1, dt).unwrap();
    let (lo, hi) = curve.range();
    let torque = in_turn.clutch_torque_nm.unwrap();
    for (i, &n) in series.engine_rpm.iter().enumerate() {
        let te = curve.torque_at(n.clamp(lo, hi)).unwrap();
        let expected = te - 0.2 * rpm_to_rad_s(slope[i]);
        assert_eq!(torque[i].to_bits(), expected.to_bits(), "sample {i}");
    }
}
