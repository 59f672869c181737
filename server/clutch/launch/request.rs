//! POST /api/v1/calc/launch: the launch preview request, its validation into a
//! [`LaunchModel`] (SI) and the answer in the request's units.
//!
//! The clutch part (`units`, `disc`, `friction`, `springs`, `levers`, `engine.torque_curve`)
//! is exactly the capacity request's and is checked by it, so the capacity the simulation uses
//! is the one the capacity calculation reports. Units follow `units`: metric kg, mm, kg·m²,
//! N·m, m², kg/m³, J/(kg·K), °C (rises in K), km/h; imperial lb, in, lb·ft², lbf·ft, ft²,
//! lb/ft³, BTU/(lb·°F), °F (rises in °F), mph. Counterweights are grams in both.

use crate::InputError;
use crate::capacity::friction::FacingMaterial;
use crate::capacity::lockup::ClutchModel;
use crate::capacity::request::{CapacityRequest, DiscInput, EngineInput, FrictionInput};
use crate::capacity::request::{LeversInput, SpringsInput};
use crate::launch::simulation::{
    Clutch, Driveline, Engine, Event, LaunchModel, LaunchRun, STANDARD_GRAVITY, Thermal, Vehicle,
};
use crate::quantity::{Limit, limits};
use crate::units::{RAD_S_PER_RPM, Units};
use serde::{Deserialize, Serialize};

/// Air density when none is given, kg/m³ (ISA sea level 1.225, rounded; from memory).
pub const DEFAULT_AIR_DENSITY: f64 = 1.2;
/// Default integration step, ms.
pub const DEFAULT_STEP_MS: f64 = 0.5;
/// Default simulated time, s.
pub const DEFAULT_DURATION_S: f64 = 3.0;

/// Share of the slip energy each plate (pressure plate, flywheel) takes by facing material.
///
/// At each rubbing face the heat divides between facing and metal in proportion to thermal
/// effusivity e = √(k·ρ·c) (Charron's partition, as used in brake thermal analysis; from
/// memory). Facing properties, all from memory and not from a table we can cite: resin-bonded
/// facing k 0.8 W/m·K, ρ 2000 kg/m³, c 1250 J/kg·K; sintered facing k 16, ρ 6000, c 420;
/// grey iron k 50, ρ 7200, c 460. With them the metal takes 0.901 (organic) and 0.670
/// (sintered) [derived]; split evenly between the two plates: 0.45 and 0.335.
pub fn default_plate_share(material: Option<FacingMaterial>) -> f64 {
    match material {
        Some(FacingMaterial::Cermet | FacingMaterial::SinteredIron) => 0.335,
        Some(FacingMaterial::Organic | FacingMaterial::Molded) | None => 0.45,
    }
}

/// The request.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct LaunchRequest {
    pub units: Units,
    pub disc: DiscInput,
    pub friction: LaunchFriction,
    pub springs: SpringsInput,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub levers: Option<LeversInput>,
    pub engine: LaunchEngine,
    /// Engine speed when the clutch is let go, rev/min, inside the torque curve.
    pub launch_rpm: f64,
    pub driveline: LaunchDriveline,
    pub vehicle: LaunchVehicle,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub thermal: Option<ThermalInput>,
    /// Integration step, ms (0.05–5, default 0.5).
    #[serde(default = "default_step_ms")]
    pub step_ms: f64,
    /// Simulated time, s (0.1–10, default 3).
    #[serde(default = "default_duration_s")]
    pub duration_s: f64,
}

fn default_step_ms() -> f64 {
    DEFAULT_STEP_MS
}

fn default_duration_s() -> f64 {
    DEFAULT_DURATION_S
}

/// Friction as for the capacity calculation, plus the static multiple and μ(θ).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct LaunchFriction {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mu: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub material: Option<FacingMaterial>,
    /// Static over sliding friction for the lock test, 1–3 (default 1).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub static_ratio: Option<f64>,
    /// `[temperature, mu]` points (°F / °C); needs `thermal`. Absent: constant μ.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mu_vs_temperature: Option<Vec<[f64; 2]>>,
}

/// Engine as for the capacity calculation, plus its inertia and friction.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct LaunchEngine {
    /// Dyno points `[rpm, torque]`.
    pub torque_curve: Vec<[f64; 2]>,
    /// Moment of inertia (lb·ft² / kg·m²).
    pub inertia: f64,
    /// Friction torque taken off the curve (lbf·ft / N·m, default 0).
    #[serde(default)]
    pub friction_torque: f64,
}

/// Driveline from clutch to road.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct LaunchDriveline {
    pub first_gear_ratio: f64,
    pub final_drive_ratio: f64,
    /// Efficiency on torque, 0.5–1.
    pub efficiency: f64,
    /// Inertias (lb·ft² / kg·m²).
    pub input_inertia: f64,
    pub driveshaft_inertia: f64,
    pub rear_axle_inertia: f64,
    pub front_axle_inertia: f64,
}

/// The car (rear drive).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct LaunchVehicle {
    /// lb / kg.
    pub mass: f64,
    /// in / mm.
    pub tire_diameter: f64,
    pub wheelbase: f64,
    /// Centre of gravity to the FRONT axle (in / mm).
    pub cg_to_front_axle: f64,
    pub cg_height: f64,
    pub drag_height: f64,
    pub rolling_resistance: f64,
    /// Cd·A (ft² / m²).
    pub drag_area: f64,
    /// lb/ft³ / kg/m³ (default 1.2 kg/m³).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub air_density: Option<f64>,
    pub tire_grip: f64,
    pub tire_grip_spinning: f64,
}

/// Plate masses and heat.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct ThermalInput {
    /// lb / kg.
    pub pressure_plate_mass: f64,
    pub flywheel_mass: f64,
    /// BTU/(lb·°F) / J/(kg·K).
    pub specific_heat: f64,
    /// °F / °C.
    pub start_temperature: f64,
    /// Share of the slip energy each plate takes, ≤ 0.5 (default by facing material).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub plate_share: Option<f64>,
}

/// A checked request: the model and the units to answer in.
#[derive(Debug, Clone, PartialEq)]
pub struct ValidLaunch {
    pub units: Units,
    pub model: LaunchModel,
    /// The clutch as the capacity calculation checked it (for trying other settings).
    pub clutch: ClutchModel,
}

fn shown(limit: Limit, field: &str, v: f64, u: Units) -> Result<f64, InputError> {
    limit.check_shown(field, v, u)
}

impl LaunchRequest {
    /// The clutch part as a capacity request (checked by it).
    pub fn capacity_request(&self) -> CapacityRequest {
        CapacityRequest {
            units: self.units,
            disc: self.disc.clone(),
            friction: FrictionInput {
                mu: self.friction.mu,
                material: self.friction.material,
            },
            springs: self.springs.clone(),
            levers: self.levers.clone(),
            engine: EngineInput {
                torque_curve: self.engine.torque_curve.clone(),
            },
            launch_rpm: Some(self.launch_rpm),
            driveline: None,
            overclamp_factor: None,
        }
    }

    /// Checks every value and builds the model in SI. Errors name the field by its JSON path.
    pub fn validate(&self) -> Result<ValidLaunch, InputError> {
        let u = self.units;
        let capacity = self.capacity_request().validate()?;
        let launch_rpm = capacity
            .launch_rpm
            .ok_or_else(|| InputError::new("launch_rpm", "is needed"))?;
        let clutch_model = &capacity.model;
        let static_ratio = match self.friction.static_ratio {
            Some(r) => limits::STATIC_RATIO.check("friction.static_ratio", r, u)?,
            None => 1.0,
        };
        let engine = Engine {
            curve: clutch_model.engine.clone(),
            friction_nm: shown(
                limits::FRICTION_TORQUE,
                "engine.friction_torque",
                self.engine.friction_torque,
                u,
            )?,
            inertia_kg_m2: shown(
                limits::ENGINE_INERTIA,
                "engine.inertia",
                self.engine.inertia,
                u,
            )?,
        };
        let d = &self.driveline;
        let driveline = Driveline {
            first_gear: limits::FIRST_GEAR.check(
                "driveline.first_gear_ratio",
                d.first_gear_ratio,
                u,
            )?,
            final_drive: limits::FINAL_DRIVE.check(
                "driveline.final_drive_ratio",
                d.final_drive_ratio,
                u,
            )?,
            efficiency: limits::DRIVELINE_EFFICIENCY.check(
                "driveline.efficiency",
                d.efficiency,
                u,
            )?,
            input_inertia_kg_m2: shown(
                limits::SHAFT_INERTIA,
                "driveline.input_inertia",
                d.input_inertia,
                u,
            )?,
            driveshaft_inertia_kg_m2: shown(
                limits::SHAFT_INERTIA,
                "driveline.driveshaft_inertia",
                d.driveshaft_inertia,
                u,
            )?,
            rear_axle_inertia_kg_m2: shown(
                limits::AXLE_INERTIA,
                "driveline.rear_axle_inertia",
                d.rear_axle_inertia,
                u,
            )?,
            front_axle_inertia_kg_m2: shown(
                limits::AXLE_INERTIA,
                "driveline.front_axle_inertia",
                d.front_axle_inertia,
                u,
            )?,
        };
        let vehicle = self.vehicle.validate(u)?;
        let material = self.friction.material;
        let thermal = match &self.thermal {
            Some(t) => Some(t.validate(u, material)?),
            None => None,
        };
        let mu_vs_temperature = match &self.friction.mu_vs_temperature {
            None => Vec::new(),
            Some(points) => {
                if thermal.is_none() {
                    return Err(InputError::new(
                        "friction.mu_vs_temperature",
                        "needs thermal (the plate temperatures it is read at)",
                    ));
                }
                mu_table(points, u)?
            }
        };
        let step_ms = limits::LAUNCH_STEP.check("step_ms", self.step_ms, u)?;
        let duration_s = limits::LAUNCH_DURATION.check("duration_s", self.duration_s, u)?;
        Ok(ValidLaunch {
            units: u,
            model: LaunchModel {
                engine,
                clutch: Clutch {
                    law: clutch_model.law(),
                    mu: clutch_model.mu,
                    static_ratio,
                    mu_vs_temperature,
                },
                driveline,
                vehicle,
                thermal,
                launch_rad_s: launch_rpm * RAD_S_PER_RPM,
                step_s: step_ms / 1000.0,
                duration_s,
            },
            clutch: capacity.model.clone(),
        })
    }
}

/// μ(θ) points: 1–50 of them, temperatures rising, each μ inside the friction limit.
fn mu_table(points: &[[f64; 2]], u: Units) -> Result<Vec<(f64, f64)>, InputError> {
    let field = "friction.mu_vs_temperature";
    if points.is_empty() || points.len() > limits::MU_TABLE_POINTS {
        return Err(InputError::new(
            field,
            format!("needs 1 to {} points", limits::MU_TABLE_POINTS),
        ));
    }
    let mut out: Vec<(f64, f64)> = Vec::with_capacity(points.len());
    for (i, &[deg, mu]) in points.iter().enumerate() {
        let at = format!("{field}[{i}]");
        let c = shown(limits::PLATE_TEMPERATURE, &at, deg, u)?;
        let mu = limits::MU.check(&at, mu, u)?;
        if out.last().is_some_and(|p| p.0 >= c) {
            return Err(InputError::new(
                at,
                "temperatures must rise from point to point",
            ));
        }
        out.push((c, mu));
    }
    Ok(out)
}

impl LaunchVehicle {
    fn validate(&self, u: Units) -> Result<Vehicle, InputError> {
        let len_m = |field: &str, v: f64| -> Result<f64, InputError> {
            Ok(shown(limits::CAR_LENGTH, field, v, u)? / 1000.0)
        };
        let wheelbase_m = len_m("vehicle.wheelbase", self.wheelbase)?;
        let cg_to_front_axle_m = len_m("vehicle.cg_to_front_axle", self.cg_to_front_axle)?;
        if cg_to_front_axle_m > wheelbase_m {
            return Err(InputError::new(
                "vehicle.cg_to_front_axle",
                "must not be longer than the wheelbase",
            ));
        }
        let air_density_kg_m3 = match self.air_density {
            Some(rho) => shown(limits::AIR_DENSITY, "vehicle.air_density", rho, u)?,
            None => DEFAULT_AIR_DENSITY,
        };
        let grip_peak = limits::TIRE_GRIP.check("vehicle.tire_grip", self.tire_grip, u)?;
        let grip_spinning =
            limits::TIRE_GRIP.check("vehicle.tire_grip_spinning", self.tire_grip_spinning, u)?;
        if grip_spinning > grip_peak {
            return Err(InputError::new(
                "vehicle.tire_grip_spinning",
                "must not be above tire_grip (a spinning tire grips less)",
            ));
        }
        Ok(Vehicle {
            mass_kg: shown(limits::VEHICLE_MASS, "vehicle.mass", self.mass, u)?,
            tire_radius_m: shown(
                limits::TIRE_DIAMETER,
                "vehicle.tire_diameter",
                self.tire_diameter,
                u,
            )? / 2000.0,
            wheelbase_m,
            cg_to_front_axle_m,
            cg_height_m: len_m("vehicle.cg_height", self.cg_height)?,
            drag_height_m: len_m("vehicle.drag_height", self.drag_height)?,
            rolling_resistance: limits::ROLLING_RESISTANCE.check(
                "vehicle.rolling_resistance",
                self.rolling_resistance,
                u,
            )?,
            drag_area_m2: shown(limits::DRAG_AREA, "vehicle.drag_area", self.drag_area, u)?,
            air_density_kg_m3,
            grip_peak,
            grip_spinning,
            gravity_m_s2: STANDARD_GRAVITY,
        })
    }
}

impl ThermalInput {
    fn validate(&self, u: Units, material: Option<FacingMaterial>) -> Result<Thermal, InputError> {
        Ok(Thermal {
            pressure_plate_kg: shown(
                limits::PLATE_MASS,
                "thermal.pressure_plate_mass",
                self.pressure_plate_mass,
                u,
            )?,
            flywheel_kg: shown(
                limits::PLATE_MASS,
                "thermal.flywheel_mass",
                self.flywheel_mass,
                u,
            )?,
            specific_heat_j_kg_k: shown(
                limits::SPECIFIC_HEAT,
                "thermal.specific_heat",
                self.specific_heat,
                u,
            )?,
            start_c: shown(
                limits::PLATE_TEMPERATURE,
                "thermal.start_temperature",
                self.start_temperature,
                u,
            )?,
            plate_share: match self.plate_share {
                Some(s) => limits::PLATE_SHARE.check("thermal.plate_share", s, u)?,
                None => default_plate_share(material),
            },
        })
    }
}

/// The answer.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct LaunchReport {
    /// The first lock; null when it does not lock within the run.
    pub lockup: Option<LockupReport>,
    pub min_engine_rpm: f64,
    pub slip_energy_kj: f64,
    pub peak_slip_power_kw: f64,
    pub tire_spin: Vec<SpinInterval>,
    /// Time to 60 ft (18.288 m); null if not reached.
    pub sixty_ft_s: Option<f64>,
    /// Null without `thermal`.
    pub thermal: Option<ThermalReport>,
    pub events: Vec<EventReport>,
    /// Every 10 ms (every whole number of steps nearest 10 ms).
    pub trace: Vec<TraceRow>,
    pub notes: Vec<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct LockupReport {
    pub time_s: f64,
    pub engine_rpm: f64,
    /// mph / km/h.
    pub speed: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct SpinInterval {
    pub start_s: f64,
    pub end_s: Option<f64>,
}

/// Bulk rises (°F / K).
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct ThermalReport {
    pub pressure_plate_rise: f64,
    pub flywheel_rise: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct EventReport {
    pub time_s: f64,
    pub what: String,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
pub struct TraceRow {
    pub time_s: f64,
    pub engine_rpm: f64,
    pub clutch_rpm: f64,
    /// mph / km/h.
    pub speed: f64,
    pub slip_power_kw: f64,
}

/// `v` rounded to `decimals` places (the answer's precision; the model keeps full precision).
fn round(v: f64, decimals: i32) -> f64 {
    let scale = 10f64.powi(decimals);
    (v * scale).round() / scale
}

fn rpm(rad_s: f64) -> f64 {
    rad_s / RAD_S_PER_RPM
}

/// An event in words, in `u`.
pub fn describe(event: &Event, u: Units) -> String {
    let torque = |nm: f64| format!("{:.0} {}", u.nm_to_torque(nm), u.torque_label());
    let force = |n: f64| format!("{:.0} {}", u.n_to_force(n), u.force_label());
    match *event {
        Event::Locked {
            engine_rad_s,
            needed_nm,
            static_nm,
        } => format!(
            "clutch locked at {:.0} rpm: staying locked needs {} and the clutch holds {}",
            rpm(engine_rad_s),
            torque(needed_nm),
            torque(static_nm)
        ),
        Event::Unlocked {
            engine_rad_s,
            needed_nm,
            static_nm,
        } => format!(
            "clutch broke loose at {:.0} rpm: staying locked would need {} but it holds only {}",
            rpm(engine_rad_s),
            torque(needed_nm.abs()),
            torque(static_nm)
        ),
        Event::Reversed {
            needed_nm,
            static_nm,
        } => format!(
            "speeds met but locking would need {} against {}: the clutch slips the other way",
            torque(needed_nm.abs()),
            torque(static_nm)
        ),
        Event::Spin { needed_n, limit_n } => format!(
            "tires spin: gripping would need {} of tire force, the tires give at most {}",
            force(needed_n),
            force(limit_n)
        ),
        Event::Grip => "tires hook up again".to_string(),
        Event::SixtyFeet { speed_m_s } => format!(
            "60 ft reached at {:.1} {}",
            u.m_s_to_road_speed(speed_m_s),
            u.road_speed_label()
        ),
        Event::LeftCurve {
            engine_rad_s,
            above,
        } => format!(
            "engine reached {:.0} rpm, {} its torque curve: the run stops here",
            rpm(engine_rad_s),
            if above { "past the top of" } else { "below" }
        ),
    }
}

impl LaunchReport {
    /// The run in `u`, rounded for reading, with notes for what it did not reach.
    pub fn of(run: &LaunchRun, duration_s: f64, u: Units) -> Self {
        let speed = |m_s: f64| round(u.m_s_to_road_speed(m_s), 1);
        let mut notes = Vec::new();
        if run.lockup.is_none() {
            notes.push(format!(
                "The clutch did not lock within {:.2} s.",
                run.end_s.min(duration_s)
            ));
        }
        if run.end_s < duration_s - 1e-9 {
            notes.push(format!(
                "The run stops at {:.2} s, where the engine leaves its torque curve (a longer \
                 curve lets it run on).",
                run.end_s
            ));
        }
        if run.tire_spin.last().is_some_and(|s| s.1.is_none()) {
            notes.push("The tires were still spinning when the run ended.".to_string());
        }
        LaunchReport {
            lockup: run.lockup.map(|l| LockupReport {
                time_s: round(l.time_s, 4),
                engine_rpm: round(rpm(l.engine_rad_s), 1),
                speed: speed(l.speed_m_s),
            }),
            min_engine_rpm: round(rpm(run.min_engine_rad_s), 1),
            slip_energy_kj: round(run.slip_energy_j / 1000.0, 2),
            peak_slip_power_kw: round(run.peak_slip_power_w / 1000.0, 1),
            tire_spin: run
                .tire_spin
                .iter()
                .map(|&(a, b)| SpinInterval {
                    start_s: round(a, 4),
                    end_s: b.map(|b| round(b, 4)),
                })
                .collect(),
            sixty_ft_s: run.sixty_ft_s.map(|t| round(t, 3)),
            thermal: run.plate_rise_k.map(|(pp, fw)| ThermalReport {
                pressure_plate_rise: round(u.k_to_temperature_rise(pp), 1),
                flywheel_rise: round(u.k_to_temperature_rise(fw), 1),
            }),
            events: run
                .events
                .iter()
                .map(|e| EventReport {
                    time_s: round(e.time_s, 4),
                    what: describe(&e.event, u),
                })
                .collect(),
            trace: run
                .trace
                .iter()
                .map(|p| TraceRow {
                    time_s: round(p.time_s, 4),
                    engine_rpm: round(rpm(p.engine_rad_s), 1),
                    clutch_rpm: round(rpm(p.clutch_rad_s), 1),
                    speed: speed(p.speed_m_s),
                    slip_power_kw: round(p.slip_power_w / 1000.0, 1),
                })
                .collect(),
            notes,
        }
    }
}

impl LaunchReport {
    /// The launch preview's slip in one sentence, for beside the capacity answer's launch
    /// warning: how long the clutch slips and the heat it takes.
    pub fn slip_text(&self) -> String {
        match &self.lockup {
            Some(l) => format!(
                "The launch preview of this setting slips for {:.2} s before the clutch locks ({:.0} kJ into the clutch).",
                l.time_s, self.slip_energy_kj
            ),
            None => {
                let end = self.trace.last().map_or(0.0, |p| p.time_s);
                let pulled_down = self
                    .notes
                    .iter()
                    .any(|n| n.contains("leaves its torque curve"));
                format!(
                    "The launch preview of this setting is still slipping when its run ends at {end:.2} s{} ({:.0} kJ into the clutch by then).",
                    if pulled_down {
                        ", the engine pulled down below its torque curve"
                    } else {
                        ""
                    },
                    self.slip_energy_kj
                )
            }
        }
    }
}

/// POST /api/v1/calc/launch: checks the request, runs the launch, answers in its units.
pub fn launch(req: &LaunchRequest) -> Result<LaunchReport, InputError> {
    let valid = req.validate()?;
    let run = valid.model.simulate();
    Ok(LaunchReport::of(&run, valid.model.duration_s, valid.units))
}
