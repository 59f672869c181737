//! A logged pass analysed the same way every time: the channels put on one clock, the launch
//! and the lockup found, the slip, the torque the clutch carried, the slip power and energy and
//! the tire spin.
//!
//! Methods (docs/engineering.md §21):
//! - slip % = 100·(N_e − N_in)/N_e;
//! - launch: the clutch switch's first change of state that holds for 20 ms (at least 3
//!   samples) if there is one, else the first sample where the input speed is above 100 rpm
//!   for as long, moved back to N_in = 0 along a least-squares line through the samples of the
//!   50 ms from it (never before the file's start);
//! - lowest engine speed: the lowest level it stays at for that hold (one noisy sample does
//!   not set it);
//! - lockup: the first time after launch that slip falls below `slip_on_pct` and stays below
//!   for `hold_s`, reported as the linearly interpolated crossing;
//! - clutch torque from the engine side, T_c = T_e(N_e) − I_e·dω_e/dt, the derivative by a
//!   centred quadratic Savitzky–Golay filter over the smallest odd number of samples spanning
//!   60 ms (at least 5) ([`crate::datalog::savgol`]);
//! - slip power P = T_c·max(0, ω_e − ω_in); slip energy the trapezoid sum of P from the launch
//!   instant (P there interpolated between the samples around it; a sample within 1e-9 s of it
//!   is the launch sample) to the end of the lockup's hold window;
//! - tire spin where the driven wheels run more than 15 % faster than the undriven ones for at
//!   least 50 ms.
//!
//! The thresholds (100 rpm, 3 samples, 50 ms, 60 ms, 15 %) are docs/engineering.md §21's, no
//! published source: derived design choices, the 15 % from memory. Units: s, rpm, N·m, W, J, m/s.

use super::{InTurn, Join};
use crate::InputError;
use crate::capacity::torque_curve::{TorqueCurve, interpolate};
use crate::datalog::savgol;
use crate::units::rpm_to_rad_s;

/// Input speed a launch must pass, rev/min.
pub const LAUNCH_RPM: f64 = 100.0;
/// Samples in a row above [`LAUNCH_RPM`].
pub const LAUNCH_SAMPLES: usize = 3;
/// A change of state (the clutch switch, the input speed past [`LAUNCH_RPM`]) or a dip of
/// engine speed counts only when it lasts this long, s, and at least [`LAUNCH_SAMPLES`]
/// samples: the same hold idea as the lockup's, so one noisy sample neither starts the launch
/// nor sets the lowest engine speed (our own choice, no published source).
pub const EVENT_HOLD_S: f64 = 0.020;
/// Span of the line moved back to zero input speed, s.
pub const LAUNCH_FIT_S: f64 = 0.050;
/// Time the derivative window spans at least, s.
pub const DERIVATIVE_SPAN_S: f64 = 0.060;
/// Fewest samples in the derivative window.
pub const DERIVATIVE_MIN_SAMPLES: usize = 5;
/// Driven-over-undriven speed excess counted as tire spin.
pub const SPIN_EXCESS: f64 = 0.15;
/// Shortest tire spin reported, s.
pub const SPIN_MIN_S: f64 = 0.050;
/// Undriven wheel speed below which the spin ratio is taken against this speed instead, m/s
/// (docs/engineering.md §21: v_min = 0.5 m/s).
pub const SPIN_MIN_SPEED_MPS: f64 = 0.5;
/// Time skipped at each end of the slip window for the calibration value, s.
pub const CALIBRATION_EDGE_S: f64 = 0.050;
/// Sample rate below which lockup timing is coarse, Hz.
pub const COARSE_RATE_HZ: f64 = 50.0;
/// Most samples in the derivative window: 60 ms up to 6.7 kHz; faster logs get a shorter
/// window (a cap on the work per sample, not a method choice).
pub const DERIVATIVE_MAX_SAMPLES: usize = 401;
/// Fewest samples a log must have.
pub const MIN_SAMPLES: usize = 10;
/// Most samples analysed, as logged and on the one clock: a 50 MB file at 1 kHz (50 minutes)
/// has about 3 M, and 5 M keeps one analysis's channels within a few hundred MB (a cap on
/// the work and memory per request, not a method choice).
pub const MAX_SAMPLES: usize = 5_000_000;
/// Most tire-spin intervals listed (more only on a file of noise; the count is noted).
pub const SPIN_MAX_INTERVALS: usize = 1_000;

/// The refusal of a log past [`MAX_SAMPLES`]; `what` says how the count came about.
pub fn too_many_samples(n: usize, what: &str) -> InputError {
    InputError::new(
        "csv",
        format!(
            "the log has {} samples {what}; at most {} are analysed",
            grouped(n),
            grouped(MAX_SAMPLES)
        ),
    )
}

/// A count with thousands separated by commas.
fn grouped(n: usize) -> String {
    let digits = n.to_string();
    let mut out = String::new();
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(c);
    }
    out
}
/// Relative step spread within which a clock counts as uniform (no resampling).
const UNIFORM_TOLERANCE: f64 = 0.01;

/// The channels of a log on one uniform clock, time from the file's first sample.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Series {
    /// s, uniform steps, starting at 0.
    pub time_s: Vec<f64>,
    /// Engine speed, rev/min.
    pub engine_rpm: Vec<f64>,
    /// Clutch output (gearbox input) speed, rev/min.
    pub input_rpm: Vec<f64>,
    /// Road speed of the driven wheels, m/s (when it can be known).
    pub driven_mps: Option<Vec<f64>>,
    /// Road speed of the undriven wheels, m/s.
    pub undriven_mps: Option<Vec<f64>>,
    /// Clutch switch, any two levels.
    pub clutch_switch: Option<Vec<f64>>,
    /// Throttle, as logged.
    pub throttle: Option<Vec<f64>>,
}

/// Fills blank (NaN) samples of a channel by linear interpolation in `time` between the nearest
/// logged samples, holding the first and last logged values at the ends. `None` when the
/// channel has no value at all.
pub fn fill_blanks(time: &[f64], values: &mut [f64]) -> Option<()> {
    // Most channels have no blank: said by one pass the compiler can run several lanes wide.
    if !values.is_empty() && values.iter().fold(true, |all, v| all & v.is_finite()) {
        return Some(());
    }
    let first = values.iter().position(|v| v.is_finite())?;
    let last = values.iter().rposition(|v| v.is_finite())?;
    let head = values[first];
    values[..first].fill(head);
    let tail = values[last];
    values[last + 1..].fill(tail);
    // Each run of blanks between two logged samples a and b.
    let mut a = first;
    for b in first + 1..=last {
        if !values[b].is_finite() {
            continue;
        }
        if b > a + 1 {
            let (ta, tb, va, vb) = (time[a], time[b], values[a], values[b]);
            for i in a + 1..b {
                values[i] = va + (vb - va) * (time[i] - ta) / (tb - ta);
            }
        }
        a = b;
    }
    Some(())
}

/// Median of the steps of a strictly increasing clock (0 for fewer than 2 samples).
pub fn median_step(time: &[f64]) -> f64 {
    if let Some(m) = few_valued_median_step(time) {
        return m;
    }
    let mut steps: Vec<f64> = time.windows(2).map(|w| w[1] - w[0]).collect();
    median(&mut steps).unwrap_or(0.0)
}

/// Most distinct step values [`few_valued_median_step`] keeps count of.
const FEW_STEPS: usize = 64;

/// [`median_step`] for a clock whose steps take at most [`FEW_STEPS`] distinct values (a
/// logger's fixed rate written with a few decimals: its steps differ only in their last bits),
/// counted in a small table by value without storing them: the same median [`median`] finds,
/// as the median of a list is a property of its values, not of their order. `None` for more
/// values (or a NaN step).
fn few_valued_median_step(time: &[f64]) -> Option<f64> {
    // Open addressing on the step's bits; the table at most half full. NaN bits never occur
    // as a step here, so all ones marks a free slot.
    const SLOTS: usize = 2 * FEW_STEPS;
    const FREE: u64 = u64::MAX;
    let mut table = [(FREE, 0usize); SLOTS];
    let mut kinds = 0;
    for w in time.windows(2) {
        let step = w[1] - w[0];
        if step.is_nan() {
            return None;
        }
        let bits = step.to_bits();
        let mut slot = (bits.wrapping_mul(0x9E37_79B9_7F4A_7C15) >> 57) as usize;
        loop {
            let entry = &mut table[slot];
            if entry.0 == bits {
                entry.1 += 1;
                break;
            }
            if entry.0 == FREE {
                if kinds == FEW_STEPS {
                    return None;
                }
                *entry = (bits, 1);
                kinds += 1;
                break;
            }
            slot = (slot + 1) % SLOTS;
        }
    }
    let n = time.len().saturating_sub(1);
    if n == 0 {
        return None;
    }
    let mut seen: Vec<(f64, usize)> = table
        .iter()
        .filter(|e| e.0 != FREE)
        .map(|&(bits, count)| (f64::from_bits(bits), count))
        .collect();
    seen.sort_unstable_by(|a, b| a.0.total_cmp(&b.0));
    // The value at a place of the sorted steps.
    let at = |place: usize| {
        let mut before = 0;
        seen.iter()
            .find(|s| {
                before += s.1;
                place < before
            })
            .map(|s| s.0)
    };
    let mid = n / 2;
    let m = at(mid)?;
    Some(if n % 2 == 1 {
        m
    } else {
        (at(mid - 1)? + m) / 2.0
    })
}

/// The median of `values` (reordered); `None` when empty.
pub fn median(values: &mut [f64]) -> Option<f64> {
    if values.is_empty() {
        return None;
    }
    let mid = values.len() / 2;
    let (_, &mut m, _) = values.select_nth_unstable_by(mid, f64::total_cmp);
    if values.len() % 2 == 1 {
        Some(m)
    } else {
        let below = values[..mid]
            .iter()
            .copied()
            .fold(f64::NEG_INFINITY, f64::max);
        Some((below + m) / 2.0)
    }
}

/// A time span no pass lasts, in the file's own units: a clock spanning more than this is in
/// milliseconds (600 s is ten minutes).
pub const MS_SPAN: f64 = 600.0;

/// Which rule decided the unit of a clock given in unknown units.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ClockRule {
    /// The header or units line names milliseconds.
    Named,
    /// The median step is 0.5 or more (a logger at 2 Hz or faster in seconds steps by less).
    Step,
    /// The clock spans more than [`MS_SPAN`] (no pass lasts ten minutes).
    Span,
    /// None of those: seconds.
    Seconds,
}

impl ClockRule {
    /// Whether the clock is in milliseconds.
    pub fn is_ms(self) -> bool {
        self != Self::Seconds
    }
}

/// The unit of a clock given in unknown units: milliseconds when `named_ms` (the header or
/// units line says so), when its median step is 0.5 or more, or when it spans more than
/// [`MS_SPAN`]; otherwise seconds.
pub fn clock_rule(time: &[f64], named_ms: bool) -> ClockRule {
    clock_rule_of(median_step(time), span(time), named_ms)
}

/// The time a clock spans, last sample less first (0 when empty).
pub fn span(time: &[f64]) -> f64 {
    match (time.first(), time.last()) {
        (Some(a), Some(b)) => b - a,
        _ => 0.0,
    }
}

/// [`clock_rule`] of a clock whose median step and span the caller already has.
pub fn clock_rule_of(step: f64, span: f64, named_ms: bool) -> ClockRule {
    if named_ms {
        ClockRule::Named
    } else if step >= 0.5 {
        ClockRule::Step
    } else if span > MS_SPAN {
        ClockRule::Span
    } else {
        ClockRule::Seconds
    }
}

/// Whether a clock in a file given in unknown units is in milliseconds, by the step and span
/// rules of [`clock_rule`] (no names to go by).
pub fn looks_like_ms(time: &[f64]) -> bool {
    clock_rule(time, false).is_ms()
}

/// Whether a column name or a units cell names milliseconds ("time_ms", "Time (ms)", "msec",
/// "millis", "milliseconds"): one of its words is such a name.
pub fn names_ms(text: &str) -> bool {
    text.split(|c: char| !c.is_ascii_alphanumeric()).any(|w| {
        matches!(
            w.to_ascii_lowercase().as_str(),
            "ms" | "msec" | "msecs" | "millis" | "millisecond" | "milliseconds"
        )
    })
}

/// Puts every channel on a uniform clock: when the steps already agree within 1 % of their
/// median the samples are kept as logged (time rebased to the first sample), otherwise every
/// channel is interpolated linearly onto t_k = k·Δt with Δt the median step. `time_s` must be
/// strictly increasing and every channel gap-free (see [`fill_blanks`]). Returns the step and
/// whether the samples were moved; `None` when the steps are so uneven that the clock at the
/// median step would hold more than four times the samples logged; `Some(Err(n))` when it
/// would hold `n` samples, more than [`MAX_SAMPLES`] (nothing is resampled then). `step` is
/// the median step of `time_s` as given, when the caller has already worked it out.
pub fn to_uniform_clock(
    series: &mut Series,
    step: Option<f64>,
) -> Option<Result<(f64, bool), usize>> {
    let t0 = series.time_s.first().copied().unwrap_or(0.0);
    // (x − 0 is x: a clock that starts at 0 is left as it is, and so is its median step.)
    let dt = if t0 == 0.0 {
        step.unwrap_or_else(|| median_step(&series.time_s))
    } else {
        for t in &mut series.time_s {
            *t -= t0;
        }
        median_step(&series.time_s)
    };
    // One pass the compiler can run several lanes wide, not stopping at the first uneven step.
    let uniform = series.time_s.windows(2).fold(true, |all, w| {
        all & (((w[1] - w[0]) - dt).abs() <= UNIFORM_TOLERANCE * dt)
    });
    if uniform || dt <= 0.0 {
        return Some(Ok((dt, false)));
    }
    let end = *series.time_s.last().unwrap_or(&0.0);
    let steps = end / dt + 1e-9;
    if !steps.is_finite() || steps > 4.0 * series.time_s.len() as f64 + 1000.0 {
        return None;
    }
    let n = steps.floor() as usize + 1;
    if n > MAX_SAMPLES {
        return Some(Err(n));
    }
    let grid: Vec<f64> = (0..n).map(|k| k as f64 * dt).collect();
    let old = std::mem::take(&mut series.time_s);
    let resample = |v: &Vec<f64>| interpolate_at(&old, v, &grid);
    series.engine_rpm = resample(&series.engine_rpm);
    series.input_rpm = resample(&series.input_rpm);
    for ch in [
        &mut series.driven_mps,
        &mut series.undriven_mps,
        &mut series.clutch_switch,
        &mut series.throttle,
    ] {
        if let Some(v) = ch.as_mut() {
            *v = resample(v);
        }
    }
    series.time_s = grid;
    Some(Ok((dt, true)))
}

/// Values of (t, v) at the increasing times `at` (linear, ends held).
fn interpolate_at(t: &[f64], v: &[f64], at: &[f64]) -> Vec<f64> {
    let mut j = 0;
    at.iter()
        .map(|&x| {
            while j + 2 < t.len() && t[j + 1] < x {
                j += 1;
            }
            if x <= t[0] {
                return v[0];
            }
            if j + 1 >= t.len() || x >= t[t.len() - 1] {
                return v[v.len() - 1];
            }
            let f = (x - t[j]) / (t[j + 1] - t[j]);
            v[j] + f * (v[j + 1] - v[j])
        })
        .collect()
}

/// Lockup rule.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LockupRule {
    /// Slip below which the clutch counts as locked, %.
    pub slip_on_pct: f64,
    /// How long it must stay below, s.
    pub hold_s: f64,
}

impl Default for LockupRule {
    /// 3 % for 100 ms (docs/engineering.md §21, derived defaults).
    fn default() -> Self {
        Self {
            slip_on_pct: 3.0,
            hold_s: 0.100,
        }
    }
}

/// The engine for the clutch torque: its torque curve and its rotating inertia.
#[derive(Debug, Clone, PartialEq)]
pub struct EngineModel {
    pub curve: TorqueCurve,
    /// kg·m².
    pub inertia_kgm2: f64,
}

/// What a log says happened. Times are seconds from the file's first sample.
#[derive(Debug, Clone, PartialEq)]
pub struct Analysis {
    /// Samples on the clock.
    pub samples: usize,
    /// 1/Δt, Hz.
    pub sample_rate_hz: f64,
    pub launch_s: f64,
    /// Interpolated crossing of the slip threshold.
    pub lockup_s: f64,
    pub launch_engine_rpm: f64,
    /// Lowest engine speed from launch to lockup.
    pub min_engine_rpm: f64,
    pub lockup_engine_rpm: f64,
    /// Slip % per sample.
    pub slip_pct: Vec<f64>,
    /// Clutch torque per sample, N·m (with an engine model).
    pub clutch_torque_nm: Option<Vec<f64>>,
    /// Slip power per sample, W (with an engine model).
    pub slip_power_w: Option<Vec<f64>>,
    /// Trapezoid sum of the slip power over the energy window, J.
    pub slip_energy_j: Option<f64>,
    /// Largest slip power over the energy window, W.
    pub peak_slip_power_w: Option<f64>,
    /// First and last sample of the energy window.
    pub window: (usize, usize),
    /// Tire spin intervals, [start, end] s.
    pub tire_spin: Vec<[f64; 2]>,
    /// Plain-English notes.
    pub notes: Vec<String>,
}

/// Slip % = 100·(N_e − N_in)/N_e; NaN where the engine is not turning (below 1 rpm).
pub fn slip_pct(engine_rpm: f64, input_rpm: f64) -> f64 {
    if engine_rpm < 1.0 {
        f64::NAN
    } else {
        100.0 * (engine_rpm - input_rpm) / engine_rpm
    }
}

/// Samples in the derivative window at step `dt`: the smallest odd number spanning at least
/// [`DERIVATIVE_SPAN_S`], and at least [`DERIVATIVE_MIN_SAMPLES`].
pub fn derivative_window(dt: f64) -> usize {
    let steps = (DERIVATIVE_SPAN_S / dt - 1e-9).ceil().max(0.0) as usize;
    let mut n = (steps + 1).max(DERIVATIVE_MIN_SAMPLES);
    if n.is_multiple_of(2) {
        n += 1;
    }
    n.min(DERIVATIVE_MAX_SAMPLES)
}

/// Samples a change must last at step `dt`: [`EVENT_HOLD_S`], and at least [`LAUNCH_SAMPLES`].
pub fn hold_samples(dt: f64) -> usize {
    let k = if dt > 0.0 {
        (EVENT_HOLD_S / dt - 1e-9).ceil().max(0.0) as usize
    } else {
        0
    };
    k.max(LAUNCH_SAMPLES)
}

/// The launch: the clutch switch's first change of state (≥ 0.5 counts as on) that holds for
/// [`hold_samples`], if there is a switch, else the first run of [`hold_samples`] samples of
/// input speed above [`LAUNCH_RPM`], moved back to zero input speed; `step` is the clock's
/// [`median_step`]. Field `columns.clutch_switch` or `columns.input_rpm` when none is found.
pub fn find_launch(series: &Series, step: f64) -> Result<f64, InputError> {
    let t = &series.time_s;
    let hold = hold_samples(step);
    if let Some(sw) = &series.clutch_switch {
        let on = |v: f64| v >= 0.5;
        let first = on(sw[0]);
        return (0..sw.len())
            .find(|&i| {
                on(sw[i]) != first
                    && sw[i..(i + hold).min(sw.len())]
                        .iter()
                        .all(|&v| on(v) != first)
            })
            .map(|i| t[i])
            .ok_or_else(|| {
                InputError::new(
                    "columns.clutch_switch",
                    "no launch found: the clutch switch never changes state",
                )
            });
    }
    let n_in = &series.input_rpm;
    let start = (0..t.len().saturating_sub(hold - 1))
        .find(|&i| n_in[i..i + hold].iter().all(|&v| v > LAUNCH_RPM))
        .ok_or_else(|| {
            InputError::new(
                "columns.input_rpm",
                format!(
                    "no launch found: the input speed never stays above {LAUNCH_RPM:.0} rpm for {hold} samples in a row"
                ),
            )
        })?;
    let end = t[start] + LAUNCH_FIT_S * (1.0 + 1e-9);
    let idx: Vec<usize> = (start..t.len()).take_while(|&i| t[i] <= end).collect();
    let launch = match line_fit(idx.iter().map(|&i| (t[i], n_in[i]))) {
        Some((a, b)) if b > 0.0 => (-a / b).min(t[start]),
        _ => t[start],
    };
    Ok(launch.max(t[0]))
}

/// Least-squares line y = a + b·x; `None` for fewer than 2 distinct x.
fn line_fit(points: impl Iterator<Item = (f64, f64)>) -> Option<(f64, f64)> {
    let pts: Vec<(f64, f64)> = points.collect();
    let n = pts.len() as f64;
    if pts.len() < 2 {
        return None;
    }
    let mx = pts.iter().map(|p| p.0).sum::<f64>() / n;
    let my = pts.iter().map(|p| p.1).sum::<f64>() / n;
    let sxx: f64 = pts.iter().map(|p| (p.0 - mx).powi(2)).sum();
    if sxx <= 0.0 {
        return None;
    }
    let sxy: f64 = pts.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum();
    let b = sxy / sxx;
    Some((my - b * mx, b))
}

/// The lockup after `launch_s`: the first sample j at or after launch with slip below the
/// threshold whose following samples up to t_j + hold all stay below it (the file must reach
/// t_j + hold). Returns (interpolated crossing time, j, last sample of the hold window).
pub fn find_lockup(
    time: &[f64],
    slip: &[f64],
    launch_s: f64,
    rule: LockupRule,
) -> Option<(f64, usize, usize)> {
    let eps = 1e-9 * time.last().copied().unwrap_or(1.0).abs().max(1.0);
    let below = |i: usize| slip[i] < rule.slip_on_pct;
    let first = time.partition_point(|&t| t < launch_s - eps);
    let mut j = first;
    while j < time.len() {
        if !below(j) {
            j += 1;
            continue;
        }
        let until = time[j] + rule.hold_s;
        if time[time.len() - 1] < until - eps {
            return None;
        }
        let mut k = j;
        while k + 1 < time.len() && time[k + 1] <= until + eps {
            k += 1;
        }
        match (j..=k).find(|&i| !below(i)) {
            Some(bad) => j = bad + 1,
            None => {
                let crossing = if j > 0 && slip[j - 1].is_finite() && slip[j - 1] > slip[j] {
                    let f = (slip[j - 1] - rule.slip_on_pct) / (slip[j - 1] - slip[j]);
                    time[j - 1] + f.clamp(0.0, 1.0) * (time[j] - time[j - 1])
                } else {
                    time[j]
                };
                return Some((crossing.max(launch_s.min(time[j])), j, k));
            }
        }
    }
    None
}

/// The lowest level `v` stays at or below for `hold` samples in a row: min over windows of
/// their max (a dip shorter than the hold is not a minimum). Windows shrink to the whole run
/// when it is shorter than the hold; infinite for no samples.
pub fn held_minimum(v: &[f64], hold: usize) -> f64 {
    let w = hold.clamp(1, v.len().max(1));
    v.windows(w)
        .map(|win| win.iter().copied().fold(f64::NEG_INFINITY, f64::max))
        .fold(f64::INFINITY, f64::min)
}

/// Linear interpolation of a sampled channel at time `at` (uniform or not).
pub fn value_at(time: &[f64], v: &[f64], at: f64) -> f64 {
    interpolate_at(time, v, &[at])[0]
}

/// Intervals where κ = (v_driven − v_undriven)/max(v_undriven, 0.5 m/s) exceeds
/// [`SPIN_EXCESS`] for at least [`SPIN_MIN_S`], as [first, last] sample times; `dt` is the
/// clock's [`median_step`].
pub fn tire_spin(time: &[f64], dt: f64, driven: &[f64], undriven: &[f64]) -> Vec<[f64; 2]> {
    let mut out = Vec::new();
    let mut start: Option<usize> = None;
    let spinning =
        |i: usize| (driven[i] - undriven[i]) / undriven[i].max(SPIN_MIN_SPEED_MPS) > SPIN_EXCESS;
    for i in 0..=time.len() {
        let on = i < time.len() && spinning(i);
        match (on, start) {
            (true, None) => start = Some(i),
            (false, Some(s)) => {
                // An interval of k samples covers k·Δt of time.
                if time[i - 1] - time[s] + dt >= SPIN_MIN_S - 1e-9 {
                    out.push([time[s], time[i - 1]]);
                }
                start = None;
            }
            _ => {}
        }
    }
    out
}

/// Clutch torque per sample from the engine side, T_c = T_e(N_e) − I_e·dω_e/dt, N·m. Engine
/// speeds outside the torque curve take its end values (counted in the second result).
pub fn clutch_torque(series: &Series, dt: f64, engine: &EngineModel) -> (Vec<f64>, usize) {
    let window = derivative_window(dt);
    // The filter is linear: the derivative of the speed in rev/min, turned into rad/s² per
    // sample, is dω/dt; it is turned into the torque where it lies.
    let mut torque = savgol::filter(&series.engine_rpm, window, 2, 1, dt)
        .unwrap_or_else(|| vec![0.0; series.engine_rpm.len()]);
    let (lo, hi) = engine.curve.range();
    let mut outside = 0;
    // The curve's segment looked for first where the last sample's was (the same segment and
    // value as `torque_at`, which searches the whole curve each time).
    let curve = &engine.curve;
    let mut segment = curve.segment(0);
    for (&n, t) in series.engine_rpm.iter().zip(&mut torque) {
        outside += usize::from(!(lo..=hi).contains(&n));
        let n = n.clamp(lo, hi);
        let te = if curve.contains(n) {
            segment = curve.segment_from(segment, n);
            interpolate(segment, n)
        } else {
            0.0
        };
        *t = te - engine.inertia_kgm2 * rpm_to_rad_s(*t);
    }
    (torque, outside)
}

/// A sample this close to the launch instant, s, is the launch sample (floating-point
/// rounding of the launch must not decide whether it counts).
pub const LAUNCH_SAMPLE_S: f64 = 1e-9;

/// Slip energy, J, and peak slip power, W, from the launch instant to sample `last`: the
/// trapezoid sum over the samples from `first` (the first sample at or after the launch, see
/// [`LAUNCH_SAMPLE_S`]), plus, when the launch falls between samples, the trapezoid from the
/// launch to `first` with the power at the launch interpolated linearly between the samples
/// around it. `power` is the slip power at every sample (before the launch too).
pub fn slip_energy(
    t: &[f64],
    power: &[f64],
    launch_s: f64,
    first: usize,
    last: usize,
) -> (f64, f64) {
    let mut energy: f64 = (first..last)
        .map(|i| 0.5 * (power[i] + power[i + 1]) * (t[i + 1] - t[i]))
        .sum();
    let mut peak = power[first..=last]
        .iter()
        .copied()
        .fold(f64::NEG_INFINITY, f64::max);
    if first > 0 && t[first] - launch_s > LAUNCH_SAMPLE_S {
        let (t0, t1) = (t[first - 1], t[first]);
        let f = ((launch_s - t0) / (t1 - t0)).clamp(0.0, 1.0);
        let at_launch = power[first - 1] + f * (power[first] - power[first - 1]);
        energy += 0.5 * (at_launch + power[first]) * (t1 - launch_s);
        peak = peak.max(at_launch);
    }
    (energy, peak)
}

/// Analyses a log on a uniform clock (see [`to_uniform_clock`]); `dt` is its step, s.
/// Errors: too few samples (field `csv`), no launch, no lockup (field of the channel).
pub fn analyze(
    series: &Series,
    dt: f64,
    rule: LockupRule,
    engine: Option<&EngineModel>,
) -> Result<Analysis, InputError> {
    analyze_on(series, dt, rule, engine, &InTurn)
}

/// [`analyze`], the clutch torque worked out on one side of `join` and the slip, launch,
/// lockup and tire spin on the other (neither needs the other's result; the same figures
/// either way).
pub fn analyze_on(
    series: &Series,
    dt: f64,
    rule: LockupRule,
    engine: Option<&EngineModel>,
    join: &impl Join,
) -> Result<Analysis, InputError> {
    let t = &series.time_s;
    let n = t.len();
    if n < MIN_SAMPLES {
        return Err(InputError::new(
            "csv",
            format!("the file has {n} samples; at least {MIN_SAMPLES} are needed"),
        ));
    }
    let mut notes = Vec::new();
    let rate = 1.0 / dt;
    if rate < COARSE_RATE_HZ {
        notes.push(format!(
            "The log runs at {rate:.0} Hz, below {COARSE_RATE_HZ:.0} Hz: lockup timing is coarse."
        ));
    }
    let (torque, events) = join.join_for(
        n,
        || engine.map(|engine| clutch_torque(series, dt, engine)),
        || events(series, dt, rule),
    );
    let events = events?;
    let (launch_s, first, last) = (events.launch_s, events.first, events.last);
    notes.push(format!(
        "The launch and the lowest engine speed are read with a hold, as the lockup is: a change counts only when it lasts {} samples in a row ({:.0} ms and at least {LAUNCH_SAMPLES} samples), so one noisy sample neither starts the launch nor sets the minimum.",
        hold_samples(dt),
        EVENT_HOLD_S * 1000.0
    ));
    let (clutch_torque_nm, slip_power_w, slip_energy_j, peak_slip_power_w) = match torque {
        Some((tc, outside)) => {
            if outside > 0 {
                notes.push(format!(
                    "The engine speed left the torque curve at {outside} sample(s); the curve's end values were used there."
                ));
            }
            let raw: Vec<f64> = (0..n)
                .map(|i| {
                    let slip_w = rpm_to_rad_s(series.engine_rpm[i] - series.input_rpm[i]);
                    tc[i] * slip_w.max(0.0)
                })
                .collect();
            let (energy, peak) = slip_energy(t, &raw, launch_s, first, last);
            // The clutch carries nothing before the launch: no slip power there.
            let mut p = raw;
            for v in &mut p[..first] {
                *v = 0.0;
            }
            (Some(tc), Some(p), Some(energy), Some(peak))
        }
        None => {
            notes.push(
                "No engine torque curve and inertia: clutch torque, slip power and energy are not worked out."
                    .into(),
            );
            (None, None, None, None)
        }
    };
    let tire_spin = match events.tire_spin {
        Some(mut spin) => {
            if spin.len() > SPIN_MAX_INTERVALS {
                notes.push(format!(
                    "The tires spun {} times; the first {SPIN_MAX_INTERVALS} are listed.",
                    spin.len()
                ));
                spin.truncate(SPIN_MAX_INTERVALS);
            }
            spin
        }
        None if series.undriven_mps.is_some() => {
            notes.push("Tire spin needs the driven wheels' speed: map it, or give the gear ratios and tire diameter.".into());
            Vec::new()
        }
        None => Vec::new(),
    };
    Ok(Analysis {
        samples: n,
        sample_rate_hz: rate,
        launch_s,
        lockup_s: events.lockup_s,
        launch_engine_rpm: events.launch_engine_rpm,
        min_engine_rpm: events.min_engine_rpm,
        lockup_engine_rpm: events.lockup_engine_rpm,
        slip_pct: events.slip,
        clutch_torque_nm,
        slip_power_w,
        slip_energy_j,
        peak_slip_power_w,
        window: (first, last),
        tire_spin,
        notes,
    })
}

/// What [`analyze_on`] reads of the speeds alone: the slip, the launch and the lockup (with
/// the samples from the launch to the end of the lockup's hold), the engine speeds there and
/// the tire spin (`None` without both wheel speeds).
struct Events {
    slip: Vec<f64>,
    launch_s: f64,
    lockup_s: f64,
    first: usize,
    last: usize,
    launch_engine_rpm: f64,
    lockup_engine_rpm: f64,
    min_engine_rpm: f64,
    tire_spin: Option<Vec<[f64; 2]>>,
}

fn events(series: &Series, dt: f64, rule: LockupRule) -> Result<Events, InputError> {
    let t = &series.time_s;
    let n = t.len();
    let slip: Vec<f64> = series
        .engine_rpm
        .iter()
        .zip(&series.input_rpm)
        .map(|(&e, &i)| slip_pct(e, i))
        .collect();
    // The clock's own median step, asked once (`dt` is the step it was put on).
    let step = median_step(t);
    let launch_s = find_launch(series, step)?;
    let (lockup_s, _, last) = find_lockup(t, &slip, launch_s, rule).ok_or_else(|| {
        InputError::new(
            "columns.input_rpm",
            format!(
                "no lockup found: after the launch at {launch_s:.3} s the slip never stays below {}% for {:.0} ms before the file ends",
                rule.slip_on_pct,
                rule.hold_s * 1000.0
            ),
        )
    })?;
    let eps = 1e-9 * t[n - 1].max(1.0);
    // A sample within 1e-9 s of the launch is the launch sample.
    let first = t.partition_point(|&x| x < launch_s - LAUNCH_SAMPLE_S);
    let launch_engine_rpm = value_at(t, &series.engine_rpm, launch_s);
    let lockup_engine_rpm = value_at(t, &series.engine_rpm, lockup_s);
    let slipping: Vec<f64> = (first..=last)
        .filter(|&i| t[i] <= lockup_s + eps)
        .map(|i| series.engine_rpm[i])
        .collect();
    let min_engine_rpm =
        held_minimum(&slipping, hold_samples(dt)).min(launch_engine_rpm.min(lockup_engine_rpm));
    let tire_spin = match (&series.driven_mps, &series.undriven_mps) {
        (Some(d), Some(u)) => Some(tire_spin(t, step, d, u)),
        _ => None,
    };
    Ok(Events {
        slip,
        launch_s,
        lockup_s,
        first,
        last,
        launch_engine_rpm,
        lockup_engine_rpm,
        min_engine_rpm,
        tire_spin,
    })
}

impl Analysis {
    /// The calibration window: launch + 50 ms to lockup − 50 ms (docs/engineering.md §23).
    pub fn calibration_samples(&self, time: &[f64]) -> std::ops::Range<usize> {
        let from = self.launch_s + CALIBRATION_EDGE_S;
        let to = self.lockup_s - CALIBRATION_EDGE_S;
        let a = time.partition_point(|&t| t < from - 1e-9);
        let b = time.partition_point(|&t| t <= to + 1e-9);
        a..b.max(a)
    }
}

/// The per-pass friction value: the median of T_c/C over `pairs` of (engine rpm, clutch torque
/// N·m), C = `capacity_at_mu1(rpm)` the capacity with μ = 1 (docs/engineering.md §23: one value
/// per pass, the median, because samples within a pass are not independent). `None` when no
/// pair has a positive capacity.
pub fn median_ratio(pairs: &[[f64; 2]], capacity_at_mu1: impl Fn(f64) -> f64) -> Option<f64> {
    let mut r: Vec<f64> = pairs
        .iter()
        .filter_map(|&[rpm, tc]| {
            let c = capacity_at_mu1(rpm);
            (c > 0.0 && c.is_finite()).then(|| tc / c)
        })
        .collect();
    median(&mut r)
}

#[cfg(test)]
mod tests;
