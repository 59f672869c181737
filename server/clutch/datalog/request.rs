//! The data-log analysis as the API receives it (a CSV text, the column mapping, the lockup
//! rule and optionally the engine) and its answer. Reading is [`crate::datalog::file`], the method
//! [`crate::datalog::analysis`]. Torques are in the request's `units`, as are the tire diameter (in / mm),
//! the engine inertia (lb·ft² / kg·m²) and wheel speeds in the file (mph / km/h); engine and
//! shaft speeds are rev/min, times seconds from the file's first sample.

use crate::InputError;
use crate::capacity::torque_curve::TorqueCurve;
use crate::datalog::analysis::{self, Analysis, EngineModel, LockupRule, Series};
use crate::datalog::file::{self, Wanted};
use crate::datalog::thin::{TRACE_MAX_POINTS, thin};
use crate::quantity::{Kind, limits};
use crate::units::Units;
use serde::{Deserialize, Serialize};

/// How the file's time column is written.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
#[serde(rename_all = "lowercase")]
pub enum TimeUnit {
    /// Milliseconds when the median step is 0.5 or more, else seconds.
    #[default]
    Auto,
    S,
    Ms,
}

impl TimeUnit {
    pub fn key(self) -> &'static str {
        match self {
            Self::Auto => "auto",
            Self::S => "s",
            Self::Ms => "ms",
        }
    }

    pub fn from_key(key: &str) -> Option<Self> {
        match key {
            "auto" => Some(Self::Auto),
            "s" => Some(Self::S),
            "ms" => Some(Self::Ms),
            _ => None,
        }
    }
}

/// Which of the file's columns (by header name) hold which channel. `time` and `engine_rpm`
/// always; exactly one of `input_rpm`, `driveshaft_rpm` (with the first gear ratio) or
/// `driven_wheel_speed` (with both ratios and the tire diameter).
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
#[serde(default)]
pub struct LogColumns {
    pub time: String,
    pub engine_rpm: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub input_rpm: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub driveshaft_rpm: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub driven_wheel_speed: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub undriven_wheel_speed: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub throttle: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub clutch_switch: Option<String>,
}

impl LogColumns {
    /// Each mapped channel: (key, header name), blanks left out.
    pub fn mapped(&self) -> Vec<(&'static str, &str)> {
        [
            ("time", Some(&self.time)),
            ("engine_rpm", Some(&self.engine_rpm)),
            ("input_rpm", self.input_rpm.as_ref()),
            ("driveshaft_rpm", self.driveshaft_rpm.as_ref()),
            ("driven_wheel_speed", self.driven_wheel_speed.as_ref()),
            ("undriven_wheel_speed", self.undriven_wheel_speed.as_ref()),
            ("throttle", self.throttle.as_ref()),
            ("clutch_switch", self.clutch_switch.as_ref()),
        ]
        .into_iter()
        .filter_map(|(k, v)| v.map(|n| (k, n.as_str())))
        .filter(|(_, n)| !n.trim().is_empty())
        .collect()
    }
}

/// The engine, for the clutch torque.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct LogEngine {
    /// Dyno points `[rpm, torque]` (lbf·ft / N·m), at least 2.
    pub torque_curve: Vec<[f64; 2]>,
    /// Rotating inertia of crank, flywheel and clutch cover (lb·ft² / kg·m²).
    pub inertia: f64,
}

fn default_slip_on() -> f64 {
    LockupRule::default().slip_on_pct
}

fn default_hold_ms() -> f64 {
    LockupRule::default().hold_s * 1000.0
}

/// How a shop reads its logger's files: remembered per car and stored with each pass's file
/// (storage units).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct LogSettings {
    #[serde(default)]
    pub columns: LogColumns,
    #[serde(default)]
    pub time_unit: TimeUnit,
    #[serde(default = "default_slip_on")]
    pub slip_on_pct: f64,
    #[serde(default = "default_hold_ms")]
    pub hold_ms: f64,
    /// Engine inertia, kg·m² (the car record does not hold it).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub engine_inertia_kgm2: Option<f64>,
}

impl Default for LogSettings {
    fn default() -> Self {
        Self {
            columns: LogColumns::default(),
            time_unit: TimeUnit::Auto,
            slip_on_pct: default_slip_on(),
            hold_ms: default_hold_ms(),
            engine_inertia_kgm2: None,
        }
    }
}

/// What a stored car says about its driveline (storage units: mm, N·m).
#[derive(Debug, Clone, Copy)]
pub struct CarFacts<'a> {
    pub first_gear_ratio: Option<f64>,
    pub final_drive_ratio: Option<f64>,
    pub tire_diameter_mm: Option<f64>,
    pub torque_curve_nm: &'a [[f64; 2]],
}

impl LogSettings {
    /// The validated analysis for a stored pass: ratios, tire and torque curve from its car,
    /// the inertia from these settings (without it, or without a curve, no torque or energy),
    /// wheel speeds in the file read in `wheel_units` (the shop's).
    pub fn valid(&self, car: CarFacts, wheel_units: Units) -> Result<ValidLog, InputError> {
        let engine = match self.engine_inertia_kgm2 {
            Some(inertia) if car.torque_curve_nm.len() >= 2 => Some(LogEngine {
                torque_curve: car.torque_curve_nm.to_vec(),
                inertia,
            }),
            _ => None,
        };
        let req = LogAnalysisRequest {
            units: Units::Metric,
            csv: String::new(),
            columns: self.columns.clone(),
            time_unit: self.time_unit,
            slip_on_pct: self.slip_on_pct,
            hold_ms: self.hold_ms,
            first_gear_ratio: car.first_gear_ratio,
            final_drive_ratio: car.final_drive_ratio,
            tire_diameter: car.tire_diameter_mm,
            engine,
        };
        let mut valid = req.validate()?;
        valid.units = wheel_units;
        Ok(valid)
    }
}

/// POST /api/v1/calc/log-analysis body.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct LogAnalysisRequest {
    pub units: Units,
    /// The file's text.
    pub csv: String,
    pub columns: LogColumns,
    #[serde(default)]
    pub time_unit: TimeUnit,
    /// Slip below which the clutch counts as locked, % (default 3).
    #[serde(default = "default_slip_on")]
    pub slip_on_pct: f64,
    /// How long it must stay below, ms (default 100).
    #[serde(default = "default_hold_ms")]
    pub hold_ms: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub first_gear_ratio: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub final_drive_ratio: Option<f64>,
    /// Driven tire diameter (in / mm).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub tire_diameter: Option<f64>,
    /// Without it, torque, power and energy are null.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub engine: Option<LogEngine>,
}

/// One sample of the answer's trace.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct TracePoint {
    pub time_s: f64,
    pub engine_rpm: f64,
    pub input_rpm: f64,
    pub slip_pct: f64,
    /// lbf·ft / N·m.
    pub clutch_torque: Option<f64>,
    pub slip_power_kw: Option<f64>,
}

/// Answer to POST /api/v1/calc/log-analysis. Its size is bounded whatever the file: the trace
/// holds at most [`TRACE_MAX_POINTS`] of the samples (see [`crate::datalog::thin`]).
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct LogAnalysisReport {
    /// Samples analysed (on the one clock).
    pub samples: usize,
    /// Points in `trace`: every sample up to [`TRACE_MAX_POINTS`], else that many chosen by
    /// largest-triangle-three-buckets over the trace's channels plus every event's sample.
    pub trace_points: usize,
    pub sample_rate_hz: f64,
    /// How the time column was read: "s" or "ms".
    pub time_unit: &'static str,
    pub launch_s: f64,
    pub lockup_s: f64,
    pub launch_engine_rpm: f64,
    pub min_engine_rpm: f64,
    pub lockup_engine_rpm: f64,
    pub slip_energy_kj: Option<f64>,
    pub peak_slip_power_kw: Option<f64>,
    /// [start, end] s.
    pub tire_spin: Vec<[f64; 2]>,
    pub trace: Vec<TracePoint>,
    pub notes: Vec<String>,
}

/// The validated request in internal units.
#[derive(Debug, Clone)]
pub struct ValidLog {
    pub columns: LogColumns,
    pub time_unit: TimeUnit,
    pub rule: LockupRule,
    pub first_gear: Option<f64>,
    pub final_drive: Option<f64>,
    /// mm.
    pub tire_mm: Option<f64>,
    pub engine: Option<EngineModel>,
    pub units: Units,
}

/// A log read and analysed: the samples on their clock and what they say.
#[derive(Debug, Clone)]
pub struct LogResult {
    pub series: Series,
    pub analysis: Analysis,
    /// Time column read as ms.
    pub ms: bool,
}

fn round(v: f64, decimals: i32) -> f64 {
    let s = 10f64.powi(decimals);
    (v * s).round() / s
}

fn opt_check(
    field: &str,
    v: Option<f64>,
    limit: crate::quantity::Limit,
    units: Units,
) -> Result<Option<f64>, InputError> {
    v.map(|v| limit.check_shown(field, v, units)).transpose()
}

/// A torque curve of at least 2 points (a straight segment's midpoint is added to a 2-point
/// curve, which leaves the line unchanged and meets [`TorqueCurve`]'s 3 points).
pub fn log_curve(
    points: &[[f64; 2]],
    field: &str,
    units: Units,
) -> Result<TorqueCurve, InputError> {
    let mut pts: Vec<(f64, f64)> = points
        .iter()
        .map(|&[rpm, t]| (rpm, Kind::Torque.from_shown(units, t)))
        .collect();
    if pts.len() == 2 && pts[0].0 != pts[1].0 {
        let (a, b) = (pts[0], pts[1]);
        pts.push(((a.0 + b.0) / 2.0, (a.1 + b.1) / 2.0));
    }
    if pts.len() < 2 {
        return Err(InputError::new(field, "needs at least 2 points"));
    }
    TorqueCurve::new(&pts, field, units)
}

impl LogAnalysisRequest {
    /// Range and consistency checks, into internal units.
    pub fn validate(&self) -> Result<ValidLog, InputError> {
        let u = self.units;
        let slip_on = limits::LOG_SLIP_ON.check("slip_on_pct", self.slip_on_pct, u)?;
        let hold_ms = limits::LOG_HOLD.check("hold_ms", self.hold_ms, u)?;
        let first_gear = opt_check(
            "first_gear_ratio",
            self.first_gear_ratio,
            limits::FIRST_GEAR,
            u,
        )?;
        let final_drive = opt_check(
            "final_drive_ratio",
            self.final_drive_ratio,
            limits::FINAL_DRIVE,
            u,
        )?;
        let tire_mm = opt_check(
            "tire_diameter",
            self.tire_diameter,
            limits::TIRE_DIAMETER,
            u,
        )?;
        let c = &self.columns;
        let given = |v: &Option<String>| v.as_deref().is_some_and(|s| !s.trim().is_empty());
        if c.time.trim().is_empty() {
            return Err(InputError::new("columns.time", "name the time column"));
        }
        if c.engine_rpm.trim().is_empty() {
            return Err(InputError::new(
                "columns.engine_rpm",
                "name the engine speed column",
            ));
        }
        let inputs = [&c.input_rpm, &c.driveshaft_rpm, &c.driven_wheel_speed]
            .into_iter()
            .filter(|v| given(v))
            .count();
        if inputs != 1 {
            return Err(InputError::new(
                "columns.input_rpm",
                "name exactly one of input_rpm, driveshaft_rpm or driven_wheel_speed",
            ));
        }
        if given(&c.driveshaft_rpm) && first_gear.is_none() {
            return Err(InputError::new(
                "first_gear_ratio",
                "a driveshaft speed needs the first gear ratio",
            ));
        }
        if given(&c.driven_wheel_speed) {
            for (field, v) in [
                ("first_gear_ratio", first_gear),
                ("final_drive_ratio", final_drive),
                ("tire_diameter", tire_mm),
            ] {
                if v.is_none() {
                    return Err(InputError::new(
                        field,
                        "a driven wheel speed needs both ratios and the tire diameter",
                    ));
                }
            }
        }
        let engine = match &self.engine {
            None => None,
            Some(e) => Some(EngineModel {
                curve: log_curve(&e.torque_curve, "engine.torque_curve", u)?,
                inertia_kgm2: limits::ENGINE_INERTIA.check_shown("engine.inertia", e.inertia, u)?,
            }),
        };
        Ok(ValidLog {
            columns: c.clone(),
            time_unit: self.time_unit,
            rule: LockupRule {
                slip_on_pct: slip_on,
                hold_s: hold_ms / 1000.0,
            },
            first_gear,
            final_drive,
            tire_mm,
            engine,
            units: u,
        })
    }
}

impl ValidLog {
    /// Reads `text` and analyses it.
    pub fn run(&self, text: &[u8]) -> Result<LogResult, InputError> {
        self.run_on(text, &super::InTurn)
    }

    /// [`Self::run`], with `join` running its work in two pieces where it can: a large file's
    /// halves ([`file::read_on`]), the driven wheels' speed beside the other channels, the
    /// clutch torque beside the events ([`analysis::analyze_on`]). The same answer either way.
    pub fn run_on(&self, text: &[u8], join: &impl super::Join) -> Result<LogResult, InputError> {
        if text.len() > limits::LOG_FILE_BYTES {
            return Err(InputError::new(
                "csv",
                format!(
                    "the file is {:.1} MB; at most {} MB is accepted",
                    text.len() as f64 / 1048576.0,
                    limits::LOG_FILE_BYTES / 1048576
                ),
            ));
        }
        let mapped = self.columns.mapped();
        let fields: Vec<String> = mapped.iter().map(|(k, _)| format!("columns.{k}")).collect();
        let wanted: Vec<Wanted> = mapped
            .iter()
            .zip(&fields)
            .map(|((_, name), field)| Wanted { field, name })
            .collect();
        let cols = file::read_on(text, &wanted, join)?;
        let mut values = cols.values;
        let key_of = |k: &str| mapped.iter().position(|(key, _)| *key == k);
        let mut time = std::mem::take(&mut values[0]);
        if time.len() < analysis::MIN_SAMPLES {
            return Err(InputError::new(
                "csv",
                format!(
                    "the file has {} data rows (from line {}); at least {} are needed",
                    time.len(),
                    cols.layout.first_data_line,
                    analysis::MIN_SAMPLES
                ),
            ));
        }
        if time.len() > analysis::MAX_SAMPLES {
            return Err(analysis::too_many_samples(time.len(), "as logged"));
        }
        // Every time present and later than the one before, said by one pass the compiler can
        // run several lanes wide (a NaN fails the comparison); the row at fault looked for
        // only when one is.
        let in_order = time
            .windows(2)
            .fold(!time[0].is_nan(), |ok, w| ok & (w[1] > w[0]));
        if !in_order {
            for i in 0..time.len() {
                if time[i].is_nan() {
                    return Err(InputError::new(
                        "columns.time",
                        format!("line {}: the time cell is blank", cols.lines.get(i)),
                    ));
                }
                if i > 0 && time[i] <= time[i - 1] {
                    return Err(InputError::new(
                        "columns.time",
                        format!(
                            "line {}: the time {} is not later than the line before ({})",
                            cols.lines.get(i),
                            time[i],
                            time[i - 1]
                        ),
                    ));
                }
            }
        }
        // The time column's own words: its header name and its cell of the units line.
        let time_col = file::find(&cols.layout.names, mapped[0].1);
        let named_ms = analysis::names_ms(mapped[0].1)
            || time_col
                .and_then(|i| cols.layout.unit_names.get(i))
                .is_some_and(|u| analysis::names_ms(u));
        // The clock as logged: its median step and span, worked out once for the rule and
        // its note.
        let logged = match self.time_unit {
            TimeUnit::Auto => Some((analysis::median_step(&time), analysis::span(&time))),
            TimeUnit::S | TimeUnit::Ms => None,
        };
        let clock = logged.map(|(step, span)| analysis::clock_rule_of(step, span, named_ms));
        let ms = match self.time_unit {
            TimeUnit::Auto => clock.is_some_and(|c| c.is_ms()),
            TimeUnit::S => false,
            TimeUnit::Ms => true,
        };
        let clock_note = clock.zip(logged).map(|(c, (step, span))| {
            let short = |v: f64| {
                let s = format!("{v:.6}");
                s.trim_end_matches('0').trim_end_matches('.').to_string()
            };
            let step = short(step);
            let span = short(span);
            match c {
                analysis::ClockRule::Named => "The time column was read in milliseconds: its header or units line names ms.".to_string(),
                analysis::ClockRule::Step => format!("The time column was read in milliseconds: its median step, {step}, is 0.5 or more (a logger in seconds steps by less)."),
                analysis::ClockRule::Span => format!("The time column was read in milliseconds: it spans {span}, more than {} (no pass lasts ten minutes).", analysis::MS_SPAN),
                analysis::ClockRule::Seconds => format!("The time column was read in seconds: nothing names ms, its median step ({step}) is below 0.5 and it spans {span}, not more than {}.", analysis::MS_SPAN),
            }
        });
        if ms {
            for t in &mut time {
                *t /= 1000.0;
            }
        }
        // Each mapped channel's cells, taken out of the columns, then its blanks filled.
        let mut taken: Vec<Option<Vec<f64>>> = values.into_iter().map(Some).collect();
        let mut take = |key: &str| key_of(key).and_then(|i| Some((i, taken[i].take()?)));
        let fill = |(i, mut v): (usize, Vec<f64>)| -> Result<Vec<f64>, InputError> {
            analysis::fill_blanks(&time, &mut v).ok_or_else(|| {
                InputError::new(
                    format!("columns.{}", mapped[i].0),
                    format!("the column \"{}\" has no values", mapped[i].1),
                )
            })?;
            Ok(v)
        };
        let channel = |c: Option<(usize, Vec<f64>)>| c.map(fill).transpose();
        let engine_rpm = channel(take("engine_rpm"))?.unwrap_or_default();
        let u = self.units;
        let to_mps = |v: Vec<f64>| -> Vec<f64> {
            v.into_iter()
                .map(|x| Kind::RoadSpeed.from_shown(u, x))
                .collect()
        };
        // Wheel rev/min per m/s of road speed: 60/(π·D).
        let wheel_rpm_per_mps = self
            .tire_mm
            .map(|d| 60.0 / (std::f64::consts::PI * d / 1000.0));
        let overall = self.first_gear.zip(self.final_drive).map(|(a, b)| a * b);
        let mut driven_mps = None;
        let input_rpm = if let Some(v) = channel(take("input_rpm"))? {
            v
        } else if let Some(v) = channel(take("driveshaft_rpm"))? {
            let g = self.first_gear.unwrap_or(1.0);
            v.into_iter().map(|x| x * g).collect()
        } else {
            let v = to_mps(channel(take("driven_wheel_speed"))?.unwrap_or_default());
            let k = wheel_rpm_per_mps.unwrap_or(0.0) * overall.unwrap_or(0.0);
            let rpm = v.iter().map(|x| x * k).collect();
            driven_mps = Some(v);
            rpm
        };
        let (undriven, switch, throttle) = (
            take("undriven_wheel_speed"),
            take("clutch_switch"),
            take("throttle"),
        );
        // The driven wheels' speed is kept only beside the undriven wheels' (for the tire
        // spin); worked out from the input speed on one side of `join`, the other channels
        // filled on the other.
        let from_input = undriven.is_some() && driven_mps.is_none();
        let (from_input, others) = join.join_for(
            input_rpm.len(),
            || match (from_input, wheel_rpm_per_mps, overall) {
                (true, Some(k), Some(g)) => Some(input_rpm.iter().map(|n| n / g / k).collect()),
                _ => None,
            },
            || -> Result<_, InputError> {
                Ok((
                    channel(undriven)?.map(to_mps),
                    channel(switch)?,
                    channel(throttle)?,
                ))
            },
        );
        let (undriven_mps, clutch_switch, throttle) = others?;
        let mut series = Series {
            time_s: time,
            engine_rpm,
            input_rpm,
            driven_mps: undriven_mps.as_ref().and(driven_mps.or(from_input)),
            undriven_mps,
            clutch_switch,
            throttle,
        };
        // The clock as logged is the clock the analysis reads unless it was in ms: its median
        // step is known already.
        let known = logged.filter(|_| !ms).map(|(step, _)| step);
        let (dt, moved) = analysis::to_uniform_clock(&mut series, known)
            .ok_or_else(|| {
                InputError::new(
                    "columns.time",
                    "the time steps are too uneven to put the samples on one clock",
                )
            })?
            .map_err(|n| analysis::too_many_samples(n, "on one clock at the median step"))?;
        let mut analysis =
            analysis::analyze_on(&series, dt, self.rule, self.engine.as_ref(), join)?;
        analysis.notes.extend(clock_note);
        if moved {
            analysis.notes.push(format!(
                "The samples were not evenly spaced: every channel was interpolated onto a {:.2} ms clock.",
                dt * 1000.0
            ));
        }
        Ok(LogResult {
            series,
            analysis,
            ms,
        })
    }
}

impl LogResult {
    /// The answer in `units` (torque), times rounded to 0.1 ms, speeds to 0.1 rpm.
    pub fn report(&self, units: Units) -> LogAnalysisReport {
        let a = &self.analysis;
        let s = &self.series;
        let trace: Vec<TracePoint> = self
            .trace_indices(TRACE_MAX_POINTS)
            .into_iter()
            .map(|i| TracePoint {
                time_s: round(s.time_s[i], 4),
                engine_rpm: round(s.engine_rpm[i], 1),
                input_rpm: round(s.input_rpm[i], 1),
                slip_pct: round(a.slip_pct[i], 2),
                clutch_torque: a
                    .clutch_torque_nm
                    .as_ref()
                    .map(|t| round(Kind::Torque.to_shown(units, t[i]), 1)),
                slip_power_kw: a.slip_power_w.as_ref().map(|p| round(p[i] / 1000.0, 1)),
            })
            .collect();
        LogAnalysisReport {
            samples: a.samples,
            trace_points: trace.len(),
            sample_rate_hz: round(a.sample_rate_hz, 3),
            time_unit: if self.ms { "ms" } else { "s" },
            launch_s: round(a.launch_s, 4),
            lockup_s: round(a.lockup_s, 4),
            launch_engine_rpm: round(a.launch_engine_rpm, 1),
            min_engine_rpm: round(a.min_engine_rpm, 1),
            lockup_engine_rpm: round(a.lockup_engine_rpm, 1),
            slip_energy_kj: a.slip_energy_j.map(|e| round(e / 1000.0, 2)),
            peak_slip_power_kw: a.peak_slip_power_w.map(|p| round(p / 1000.0, 1)),
            tire_spin: a
                .tire_spin
                .iter()
                .map(|[x, y]| [round(*x, 4), round(*y, 4)])
                .collect(),
            trace,
            notes: a.notes.clone(),
        }
    }

    /// The samples of every event, most important first: launch, lockup (the samples either
    /// side of each crossing), the lowest engine speed, the peaks (engine and input speed,
    /// clutch torque, slip power), then each tire spin's first and last sample.
    pub fn event_indices(&self) -> Vec<usize> {
        let a = &self.analysis;
        let t = &self.series.time_s;
        let at = |x: f64| {
            t.partition_point(|&v| v < x - 1e-9)
                .min(t.len().saturating_sub(1))
        };
        let arg = |v: &[f64], better: fn(f64, f64) -> bool, range: std::ops::Range<usize>| {
            range.fold(None, |best: Option<usize>, i| match best {
                Some(b) if !better(v[i], v[b]) => Some(b),
                _ if v[i].is_finite() => Some(i),
                _ => best,
            })
        };
        let bigger = |x: f64, y: f64| x > y;
        let smaller = |x: f64, y: f64| x < y;
        let (launch, lockup) = (at(a.launch_s), at(a.lockup_s));
        let mut out = vec![
            launch,
            launch.saturating_sub(1),
            lockup,
            lockup.saturating_sub(1),
        ];
        let n = t.len();
        let window = a.window.0.min(n)..(a.window.1 + 1).min(n).max(a.window.0.min(n));
        let to_lockup = window.start..(lockup + 1).clamp(window.start, n);
        out.extend(arg(&self.series.engine_rpm, smaller, to_lockup));
        out.extend(arg(&self.series.engine_rpm, bigger, 0..n));
        out.extend(arg(&self.series.input_rpm, bigger, 0..n));
        if let Some(tc) = &a.clutch_torque_nm {
            out.extend(arg(tc, bigger, window.clone()));
        }
        if let Some(p) = &a.slip_power_w {
            out.extend(arg(p, bigger, window));
        }
        for [x, y] in &a.tire_spin {
            out.push(at(*x));
            out.push(at(*y));
        }
        out
    }

    /// The same result with its per-sample channels cut to at most `max` samples (chosen as
    /// for the answer's trace, events kept): small enough to keep and to draw. The figures and
    /// `analysis.samples` are the full analysis's.
    pub fn thinned(&self, max: usize) -> LogResult {
        self.picked(&self.trace_indices(max))
    }

    /// The same result with its per-sample channels cut to the samples `idx` (increasing), the
    /// energy window moved onto the nearest kept samples; figures and event times unchanged.
    pub(crate) fn picked(&self, idx: &[usize]) -> LogResult {
        let pick = |v: &Vec<f64>| -> Vec<f64> { idx.iter().map(|&i| v[i]).collect() };
        let s = &self.series;
        let a = &self.analysis;
        let place = |i: usize| {
            idx.partition_point(|&k| k < i)
                .min(idx.len().saturating_sub(1))
        };
        LogResult {
            series: Series {
                time_s: pick(&s.time_s),
                engine_rpm: pick(&s.engine_rpm),
                input_rpm: pick(&s.input_rpm),
                driven_mps: s.driven_mps.as_ref().map(pick),
                undriven_mps: s.undriven_mps.as_ref().map(pick),
                clutch_switch: s.clutch_switch.as_ref().map(pick),
                throttle: s.throttle.as_ref().map(pick),
            },
            analysis: Analysis {
                slip_pct: pick(&a.slip_pct),
                clutch_torque_nm: a.clutch_torque_nm.as_ref().map(pick),
                slip_power_w: a.slip_power_w.as_ref().map(pick),
                window: (place(a.window.0), place(a.window.1)),
                samples: a.samples,
                sample_rate_hz: a.sample_rate_hz,
                launch_s: a.launch_s,
                lockup_s: a.lockup_s,
                launch_engine_rpm: a.launch_engine_rpm,
                min_engine_rpm: a.min_engine_rpm,
                lockup_engine_rpm: a.lockup_engine_rpm,
                slip_energy_j: a.slip_energy_j,
                peak_slip_power_w: a.peak_slip_power_w,
                tire_spin: a.tire_spin.clone(),
                notes: a.notes.clone(),
            },
            ms: self.ms,
        }
    }

    /// At most `max` samples of the trace (every one when there are no more), events kept.
    pub fn trace_indices(&self, max: usize) -> Vec<usize> {
        let a = &self.analysis;
        let s = &self.series;
        let mut channels: Vec<&[f64]> = vec![&s.engine_rpm, &s.input_rpm, &a.slip_pct];
        channels.extend(a.clutch_torque_nm.as_deref());
        channels.extend(a.slip_power_w.as_deref());
        thin(&s.time_s, &channels, &self.event_indices(), max)
    }

    /// (engine rpm, clutch torque N·m) over the calibration window (launch + 50 ms to lockup −
    /// 50 ms); empty without an engine model.
    pub fn calibration_pairs(&self) -> Vec<[f64; 2]> {
        let Some(tc) = &self.analysis.clutch_torque_nm else {
            return Vec::new();
        };
        self.analysis
            .calibration_samples(&self.series.time_s)
            .map(|i| [self.series.engine_rpm[i], tc[i]])
            .collect()
    }
}

/// A whole analysis request read and analysed, on the calling thread.
pub fn analyze_request(req: &LogAnalysisRequest) -> Result<LogAnalysisReport, InputError> {
    analyze_request_on(req, &super::InTurn)
}

/// POST /api/v1/calc/log-analysis: [`analyze_request`] through `join` (see
/// [`ValidLog::run_on`]).
pub fn analyze_request_on(
    req: &LogAnalysisRequest,
    join: &impl super::Join,
) -> Result<LogAnalysisReport, InputError> {
    let valid = req.validate()?;
    Ok(valid.run_on(req.csv.as_bytes(), join)?.report(req.units))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn request(csv: String) -> LogAnalysisRequest {
        serde_json::from_value(serde_json::json!({
            "units": "metric", "csv": csv,
            "columns": { "time": "time", "engine_rpm": "rpm", "input_rpm": "shaft" },
            "engine": { "torque_curve": [[3000, 600], [8000, 600]], "inertia": 0.25 }
        }))
        .unwrap()
    }

    // docs/engineering.md §24's worked file as CSV text: 0.776 s, 150.80 kJ, 377.0 kW [derived].
    #[test]
    fn the_worked_file_as_csv_gives_the_documented_answer() {
        let r = analyze_request(&request(crate::reference::worked_log())).unwrap();
        assert_eq!(r.samples, 101);
        assert_eq!(r.sample_rate_hz, 100.0);
        assert_eq!((r.launch_s, r.lockup_s), (0.0, 0.776));
        assert_eq!(r.slip_energy_kj, Some(150.80));
        assert_eq!(r.peak_slip_power_kw, Some(377.0));
        assert_eq!(r.trace[0].clutch_torque, Some(600.0));
        assert_eq!(r.trace[0].slip_pct, 100.0);
        assert_eq!(r.time_unit, "s");
    }

    #[test]
    fn the_same_file_in_milliseconds_with_semicolons_gives_the_same_answer() {
        let text = crate::reference::worked_log()
            .lines()
            .enumerate()
            .map(|(i, l)| {
                if i == 0 {
                    "time;rpm;shaft\nms;rpm;rpm".to_string()
                } else {
                    let f: Vec<&str> = l.split(',').collect();
                    let ms = (f[0].parse::<f64>().unwrap() * 1000.0).round();
                    format!("{ms};{};{}", f[1], f[2].replace('.', ","))
                }
            })
            .collect::<Vec<_>>()
            .join("\n");
        let r = analyze_request(&request(text)).unwrap();
        assert_eq!(r.time_unit, "ms");
        assert_eq!((r.launch_s, r.lockup_s), (0.0, 0.776));
        assert_eq!(r.slip_energy_kj, Some(150.80));
    }

    // Issue 21, item 5: a 5 kHz log in ms steps by 0.2, under the 0.5 step rule, and used to be
    // read as seconds (1000 times the energy). It spans 1000 > 600, so it is ms, and the notes
    // say which rule decided. The ramp is the worked file's: 150.80 kJ [derived].
    #[test]
    fn a_millisecond_log_above_2_khz_is_read_as_milliseconds_by_its_span() {
        let mut s = String::from("time,rpm,shaft\n");
        for k in 0..=5000 {
            let t = k as f64 / 5000.0;
            let n = if t <= 0.8 { 6000.0 * t / 0.8 } else { 6000.0 };
            s.push_str(&format!("{},6000,{n}\n", k as f64 * 0.2));
        }
        let r = analyze_request(&request(s.clone())).unwrap();
        assert_eq!(r.time_unit, "ms");
        assert_eq!(r.slip_energy_kj, Some(150.80));
        assert!(
            r.notes
                .iter()
                .any(|n| n.contains("spans 1000, more than 600")),
            "{:?}",
            r.notes
        );
        // Named in the header: that rule decides, whatever the span.
        let named = s.replacen("time,", "time_ms,", 1);
        let mut req = request(named);
        req.columns.time = "time_ms".into();
        let r = analyze_request(&req).unwrap();
        assert!(
            r.notes.iter().any(|n| n.contains("names ms")),
            "{:?}",
            r.notes
        );
        // The worked file in seconds: every rule says seconds, and the note says why.
        let r = analyze_request(&request(crate::reference::worked_log())).unwrap();
        assert!(
            r.notes.iter().any(|n| n.contains("read in seconds")),
            "{:?}",
            r.notes
        );
        // Given explicitly, no rule is needed and none is noted.
        let mut req = request(crate::reference::worked_log());
        req.time_unit = TimeUnit::S;
        let r = analyze_request(&req).unwrap();
        assert!(!r.notes.iter().any(|n| n.contains("time column")));
    }

    #[test]
    fn the_units_line_can_name_milliseconds() {
        let s =
            "t,rpm,shaft\nmsec,rpm,rpm\n0,6000,0\n0.1,6000,1\n0.2,6000,2\n0.3,6000,3\n".to_string();
        assert!(analysis::names_ms("Time (ms)") && analysis::names_ms("msec"));
        assert!(!analysis::names_ms("items") && !analysis::names_ms("time_s"));
        let layout = file::read(s.as_bytes(), &[]).unwrap().layout;
        assert_eq!(layout.unit_names, vec!["msec", "rpm", "rpm"]);
    }

    // Issue 21, item 4: the worked ramp shifted to start 0.1 ms after a sample (100 Hz) keeps its
    // 150.796 kJ [derived: 600 N·m × 628.3185 rad/s × 0.4 s]; from the first sample after the
    // launch it was 147.09 kJ.
    #[test]
    fn a_launch_between_samples_keeps_the_piece_before_the_first_sample() {
        let mut s = String::from("time,rpm,shaft\n");
        for k in 0..=100 {
            let t = k as f64 / 100.0;
            let n = (6000.0 * (t - 0.0001) / 0.8).clamp(0.0, 6000.0);
            s.push_str(&format!("{t:.2},6000,{n}\n"));
        }
        let r = analyze_request(&request(s.clone())).unwrap();
        assert_eq!(r.launch_s, 0.0001);
        assert_eq!(r.slip_energy_kj, Some(150.80));
        let valid = request(String::new()).validate().unwrap();
        let e = valid
            .run(s.as_bytes())
            .unwrap()
            .analysis
            .slip_energy_j
            .unwrap();
        assert!((e / 1000.0 - 150.796).abs() < 0.0005, "{e}");
    }

    #[test]
    fn a_driveshaft_speed_is_turned_into_input_speed_by_first_gear() {
        let text = crate::reference::worked_log().replace("time,rpm,shaft", "time,rpm,ds");
        // Driveshaft = input / 2.5: the same file read with first gear 2.5 (values scaled).
        let scaled: String = text
            .lines()
            .enumerate()
            .map(|(i, l)| {
                if i == 0 {
                    format!("{l}\n")
                } else {
                    let f: Vec<&str> = l.split(',').collect();
                    format!("{},{},{}\n", f[0], f[1], f[2].parse::<f64>().unwrap() / 2.5)
                }
            })
            .collect();
        let mut req = request(scaled);
        req.columns.input_rpm = None;
        req.columns.driveshaft_rpm = Some("ds".into());
        let err = analyze_request(&req).unwrap_err();
        assert_eq!(err.field, "first_gear_ratio");
        req.first_gear_ratio = Some(2.5);
        let r = analyze_request(&req).unwrap();
        assert!((r.lockup_s - 0.776).abs() < 1e-4);
    }

    #[test]
    fn time_going_backwards_names_the_line() {
        let text = crate::reference::worked_log().replace("0.50,6000", "0.48,6000");
        let err = analyze_request(&request(text)).unwrap_err();
        assert_eq!(err.field, "columns.time");
        // Header on line 1, t = 0.00 on line 2, so t = 0.50 is on line 52.
        assert!(err.message.starts_with("line 52:"), "{}", err.message);
    }

    /// 60 s at 1 kHz: launch at 1 s, the input speed reaching the engine's at 1.8 s, one dip
    /// of the engine speed at 1.3 s.
    fn long_csv() -> String {
        let mut s = String::from("time,rpm,shaft\n");
        for k in 0..=60_000 {
            let t = k as f64 / 1000.0;
            let n = (6000.0 * (t - 1.0) / 0.8).clamp(0.0, 6000.0);
            let e = if k == 1300 { 5000.0 } else { 6000.0 };
            s.push_str(&format!("{t:.3},{e},{n}\n"));
        }
        s
    }

    #[test]
    fn a_long_log_answers_a_thinned_trace_with_every_event_and_both_counts() {
        let r = analyze_request(&request(long_csv())).unwrap();
        assert_eq!(r.samples, 60_001);
        assert_eq!(r.trace_points, r.trace.len());
        assert!(r.trace.len() <= TRACE_MAX_POINTS, "{}", r.trace.len());
        let has = |t: f64| r.trace.iter().any(|p| (p.time_s - t).abs() < 0.0011);
        for t in [0.0, r.launch_s, r.lockup_s, 1.3, 60.0] {
            assert!(has(t), "no point at {t}");
        }
        assert!(r.trace.iter().any(|p| p.engine_rpm == r.min_engine_rpm));
        assert!(r.trace.windows(2).all(|w| w[0].time_s < w[1].time_s));
        let bytes = serde_json::to_vec(&r).unwrap().len();
        assert!(bytes < 1 << 20, "{bytes} bytes");
    }

    #[test]
    fn a_short_log_answers_every_sample() {
        let r = analyze_request(&request(crate::reference::worked_log())).unwrap();
        assert_eq!((r.samples, r.trace_points, r.trace.len()), (101, 101, 101));
    }

    #[test]
    fn an_unknown_column_is_refused_on_its_mapping() {
        let mut req = request(crate::reference::worked_log());
        req.columns.engine_rpm = "crank".into();
        let err = analyze_request(&req).unwrap_err();
        assert_eq!(err.field, "columns.engine_rpm");
    }

    // A whole request with every channel kind (blanks in the undriven wheels and the throttle,
    // a clutch switch, the driven wheels worked out from the input speed) read and analysed
    // with its halves and pieces on two threads against the same in turn: the same series and
    // analysis to the bit; and with two channels that hold nothing, the same first error.
    #[test]
    fn a_request_on_two_threads_reads_and_analyses_as_in_turn() {
        let mut csv = String::from("time,rpm,shaft,front,switch,throttle\n");
        for k in 0..=80_000 {
            let t = k as f64 / 1000.0;
            let n = (6000.0 * (t - 1.0) / 0.8).clamp(0.0, 6000.0);
            let front = if k % 7 == 3 {
                String::new()
            } else {
                format!("{:.3}", n / 150.0)
            };
            let throttle = if k % 11 == 5 {
                ""
            } else if t < 1.0 {
                "30"
            } else {
                "100"
            };
            let switch = u8::from(t >= 1.0);
            csv.push_str(&format!("{t:.3},6000,{n},{front},{switch},{throttle}\n"));
        }
        assert!(csv.len() >= crate::datalog::file::HALVES_FROM_BYTES);
        let req: LogAnalysisRequest = serde_json::from_value(serde_json::json!({
            "units": "metric", "csv": csv,
            "columns": { "time": "time", "engine_rpm": "rpm", "input_rpm": "shaft",
                         "undriven_wheel_speed": "front", "clutch_switch": "switch",
                         "throttle": "throttle" },
            "first_gear_ratio": 2.5, "final_drive_ratio": 4.1, "tire_diameter": 700,
            "engine": { "torque_curve": [[3000, 600], [8000, 600]], "inertia": 0.25 }
        }))
        .unwrap();
        let valid = req.validate().unwrap();
        let in_turn = valid.run(req.csv.as_bytes()).unwrap();
        let beside = valid
            .run_on(req.csv.as_bytes(), &crate::datalog::TwoThreads)
            .unwrap();
        assert_eq!(in_turn.series, beside.series);
        assert_eq!(in_turn.analysis, beside.analysis);
        assert!(in_turn.series.driven_mps.is_some());
        // Nothing in the wheels nor the throttle: the wheels are named, as in turn.
        let empty = req
            .csv
            .lines()
            .map(|l| {
                let f: Vec<&str> = l.split(',').collect();
                if f[0] == "time" {
                    l.to_string()
                } else {
                    format!("{},{},{},,{},", f[0], f[1], f[2], f[4])
                }
            })
            .collect::<Vec<_>>()
            .join("\n");
        let a = valid.run(empty.as_bytes()).unwrap_err();
        let b = valid
            .run_on(empty.as_bytes(), &crate::datalog::TwoThreads)
            .unwrap_err();
        assert_eq!((&a.field, &a.message), (&b.field, &b.message));
        assert_eq!(a.field, "columns.undriven_wheel_speed");
    }

    // A time that is blank or not later than the one before is refused naming its file line
    // (the header is line 1), wherever it is: first row, middle, last row.
    #[test]
    fn a_blank_or_backward_time_names_its_line() {
        let rows = |bad: usize, cell: &str| {
            let mut s = String::from("time,rpm,shaft\n");
            for k in 0..200 {
                let t = if k == bad {
                    cell.to_string()
                } else {
                    format!("{:.3}", k as f64 / 100.0)
                };
                s.push_str(&format!("{t},6000,{}\n", (k * 30).min(6000)));
            }
            s
        };
        for (bad, cell, message) in [
            (0, "", "line 2: the time cell is blank"),
            (57, "", "line 59: the time cell is blank"),
            (
                57,
                "0.100",
                "line 59: the time 0.1 is not later than the line before (0.56)",
            ),
            (
                57,
                "0.560",
                "line 59: the time 0.56 is not later than the line before (0.56)",
            ),
            (
                199,
                "1.000",
                "line 201: the time 1 is not later than the line before (1.98)",
            ),
        ] {
            let err = analyze_request(&request(rows(bad, cell))).unwrap_err();
            assert_eq!(
                (err.field.as_str(), err.message.as_str()),
                ("columns.time", message)
            );
        }
    }
}
