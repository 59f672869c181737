//! Launch preview: a deterministic simulation of the first seconds of a drag launch, from the
//! engine at its launch speed through the slipping clutch, the driveline and the tires.
//!
//! The model is the usual hybrid one for a friction clutch: two inertias joined by Coulomb
//! friction, switching between slipping (two degrees of freedom) and locked (one), with a tire
//! that grips or spins. Sources: the two-inertia engagement and its energy, Shigley's
//! *Mechanical Engineering Design* (Budynas & Nisbett), ch. 16 "Energy considerations"; the
//! stuck/sliding switching logic as in the Modelica Standard Library's rotational `Clutch`
//! (Otter, Elmqvist & Mattsson, CACSD'99); the traction limit with longitudinal load transfer,
//! Gillespie, *Fundamentals of Vehicle Dynamics* (SAE, 1992), ch. 2, extended here with drag
//! acting at its own height [derived].
//!
//! Everything inside is SI (rad/s, m, kg, N, N·m, J, W, °C); rev/min appears only where the
//! clutch's capacity law and the engine's torque curve (both kept in rev/min by the capacity
//! calculation) are read. Integration is fixed-step classical RK4 with the modes held fixed
//! through all four stages of a step (taking them from the stage values makes RK4 flip the
//! clutch torque at the crossing and the clutch never locks). No `mul_add`: one input gives
//! bit-identical results on one build.
//!
//! Deliberate simplifications (said on the page too): a rigid driveline, one lumped tire, no
//! squat, no tire growth, driveline efficiency on torque only (not on the reflected inertias),
//! bulk (not rubbing-surface) plate temperatures.

use crate::capacity::lockup::CapacityLaw;
use crate::capacity::torque_curve::{Segment, TorqueCurve, interpolate};
use crate::units::RAD_S_PER_RPM;

/// Standard gravity, m/s² (CGPM 1901, as tabulated in NIST SP 811).
pub const STANDARD_GRAVITY: f64 = 9.80665;
/// Sixty feet, m (exact: 60 × 0.3048).
pub const SIXTY_FEET_M: f64 = 18.288;
/// Spacing of the trace, s.
pub const TRACE_EVERY_S: f64 = 0.01;

/// Engine: torque curve less friction, and its rotating inertia (crank, flywheel, pressure
/// plate and cover, which carries the centrifugal weights).
#[derive(Debug, Clone, PartialEq)]
pub struct Engine {
    /// Full-throttle torque against speed (rev/min, N·m), linear between points.
    pub curve: TorqueCurve,
    /// Friction torque taken off the curve, N·m (0 when the curve is already net).
    pub friction_nm: f64,
    /// Moment of inertia, kg·m² (> 0).
    pub inertia_kg_m2: f64,
}

/// The clutch: its capacity law (exactly as the capacity calculation builds it), the static
/// friction multiple for the lock test and optionally μ against plate temperature.
#[derive(Debug, Clone, PartialEq)]
pub struct Clutch {
    /// Capacity against engine speed at the setting, with friction `mu`.
    pub law: CapacityLaw,
    /// The friction coefficient `law` was built with.
    pub mu: f64,
    /// Static capacity over sliding capacity for the lock test, ≥ 1.
    pub static_ratio: f64,
    /// μ against mean plate temperature (°C, μ), rising temperatures, linear between points and
    /// clamped at the ends; empty = constant `mu`.
    pub mu_vs_temperature: Vec<(f64, f64)>,
}

/// Driveline from the clutch to the road.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Driveline {
    /// First gear ratio.
    pub first_gear: f64,
    /// Final drive ratio.
    pub final_drive: f64,
    /// Efficiency, on torque only, 0.5–1.
    pub efficiency: f64,
    /// Gearbox input side (disc, input shaft, cluster) referred to the input shaft, kg·m².
    pub input_inertia_kg_m2: f64,
    /// Driveshaft and pinion, kg·m².
    pub driveshaft_inertia_kg_m2: f64,
    /// Rear axle: axles, wheels, tires, kg·m².
    pub rear_axle_inertia_kg_m2: f64,
    /// Front wheels and tires, kg·m².
    pub front_axle_inertia_kg_m2: f64,
}

/// The car on the road (rear drive).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Vehicle {
    /// Mass, kg.
    pub mass_kg: f64,
    /// Rolling radius of the rear tire, m.
    pub tire_radius_m: f64,
    /// Wheelbase L, m.
    pub wheelbase_m: f64,
    /// Horizontal distance from the centre of gravity to the FRONT axle b, m.
    pub cg_to_front_axle_m: f64,
    /// Centre-of-gravity height h, m.
    pub cg_height_m: f64,
    /// Height at which drag acts h_a, m.
    pub drag_height_m: f64,
    /// Rolling-resistance coefficient f_r.
    pub rolling_resistance: f64,
    /// Drag area Cd·A, m².
    pub drag_area_m2: f64,
    /// Air density, kg/m³.
    pub air_density_kg_m3: f64,
    /// Tire-road friction while gripping (peak).
    pub grip_peak: f64,
    /// Tire-road friction while spinning.
    pub grip_spinning: f64,
    /// Gravity, m/s² ([`STANDARD_GRAVITY`] unless a check needs another value).
    pub gravity_m_s2: f64,
}

/// Lumped plate temperatures.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Thermal {
    /// Pressure plate mass, kg.
    pub pressure_plate_kg: f64,
    /// Flywheel mass, kg.
    pub flywheel_kg: f64,
    /// Specific heat of both, J/(kg·K).
    pub specific_heat_j_kg_k: f64,
    /// Temperature of both at the start, °C.
    pub start_c: f64,
    /// Share of the slip energy each of the two takes (the rest goes into the disc), ≤ 0.5.
    pub plate_share: f64,
}

/// Everything one launch needs, SI.
#[derive(Debug, Clone, PartialEq)]
pub struct LaunchModel {
    pub engine: Engine,
    pub clutch: Clutch,
    pub driveline: Driveline,
    pub vehicle: Vehicle,
    /// Plate temperatures; needed when μ depends on temperature.
    pub thermal: Option<Thermal>,
    /// Engine speed when the clutch is let go, rad/s (inside the torque curve).
    pub launch_rad_s: f64,
    /// Integration step, s.
    pub step_s: f64,
    /// Time simulated, s.
    pub duration_s: f64,
}

/// Largest traction force of a rear-drive car, N, with longitudinal load transfer:
/// F_x,max = μ·(W·b − (F_rr + F_a)·h + F_a·h_a)/(L − μ·h), capped at μ·W (front wheels off the
/// ground) and never below zero.
///
/// Moments about the front contact patch with rolling resistance at the ground and drag at
/// h_a [derived]; with F_a = 0 and F_rr = f_r·W it is Gillespie's μW(b − f_r·h)/L/(1 − μh/L)
/// (*Fundamentals of Vehicle Dynamics*, ch. 2, traction-limited acceleration; form from memory).
/// Units: N and m; b is measured from the FRONT axle.
pub fn traction_limit_n(mu: f64, weight_n: f64, v: &Vehicle, rolling_n: f64, drag_n: f64) -> f64 {
    let cap = mu * weight_n;
    let denominator = v.wheelbase_m - mu * v.cg_height_m;
    if denominator <= 0.0 {
        return cap;
    }
    let moment = weight_n * v.cg_to_front_axle_m - (rolling_n + drag_n) * v.cg_height_m
        + drag_n * v.drag_height_m;
    (mu * moment / denominator).clamp(0.0, cap)
}

/// Clutch state during a step.
#[derive(Debug, Clone, Copy, PartialEq)]
enum ClutchMode {
    /// Slipping; +1 while the engine side is faster, −1 the other way.
    Slip(f64),
    Locked,
}

/// Tire state during a step.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum TireMode {
    Grip,
    Spin,
}

#[derive(Debug, Clone, Copy, PartialEq)]
struct Mode {
    clutch: ClutchMode,
    tire: TireMode,
    /// μ(θ)/μ for this step (1 with constant μ).
    mu_scale: f64,
}

/// State: engine ω_e, rear wheel ω_w (rad/s), vehicle speed v (m/s), distance x (m).
type State = [f64; 4];

/// What happened, when, in SI; worded by the report in the shop's units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Event {
    /// The clutch locked: engine speed rad/s, torque needed to stay locked and the static
    /// capacity, N·m.
    Locked {
        engine_rad_s: f64,
        needed_nm: f64,
        static_nm: f64,
    },
    /// The locked clutch broke loose: torque needed and static capacity, N·m.
    Unlocked {
        engine_rad_s: f64,
        needed_nm: f64,
        static_nm: f64,
    },
    /// The speeds met but holding would need more than the static capacity: it slips the
    /// other way.
    Reversed { needed_nm: f64, static_nm: f64 },
    /// The tires broke loose: force needed and the traction limit, N.
    Spin { needed_n: f64, limit_n: f64 },
    /// The tires hooked up again.
    Grip,
    /// Sixty feet reached: speed m/s.
    SixtyFeet { speed_m_s: f64 },
    /// The engine left its torque curve (above its top when `above`); the run stops.
    LeftCurve { engine_rad_s: f64, above: bool },
}

/// One event of the run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Timed {
    pub time_s: f64,
    pub event: Event,
}

/// The first lock.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Lockup {
    pub time_s: f64,
    pub engine_rad_s: f64,
    pub speed_m_s: f64,
}

/// One trace row.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TracePoint {
    pub time_s: f64,
    pub engine_rad_s: f64,
    /// Clutch (gearbox input) speed G·ω_w, rad/s.
    pub clutch_rad_s: f64,
    pub speed_m_s: f64,
    /// Slip power T_c·(ω_e − G·ω_w), W (0 while locked).
    pub slip_power_w: f64,
}

/// What one launch gave, SI.
#[derive(Debug, Clone, PartialEq)]
pub struct LaunchRun {
    /// The first lock; `None` when it did not lock within the run.
    pub lockup: Option<Lockup>,
    pub min_engine_rad_s: f64,
    /// ∫ T_c·Δω dt over the slipping time, J.
    pub slip_energy_j: f64,
    pub peak_slip_power_w: f64,
    /// Spin intervals (start, end); end `None` while still spinning at the end.
    pub tire_spin: Vec<(f64, Option<f64>)>,
    pub sixty_ft_s: Option<f64>,
    /// Bulk rises of pressure plate and flywheel, K.
    pub plate_rise_k: Option<(f64, f64)>,
    pub events: Vec<Timed>,
    pub trace: Vec<TracePoint>,
    /// Time actually simulated, s (shorter than asked when the engine left its curve).
    pub end_s: f64,
}

/// Quantities worked out once per run.
struct Plant<'a> {
    m: &'a LaunchModel,
    /// Overall ratio G = first gear × final drive.
    g: f64,
    /// m + I_front/r², kg.
    m_t: f64,
    /// I_rear + I_ds·i_f² + I_in·G², kg·m² (at the rear axle).
    j_w: f64,
    /// m_t + J_w/r², kg.
    m_eq: f64,
    weight_n: f64,
    rolling_n: f64,
    /// The engine curve's segment of the last speed looked up.
    segment: std::cell::Cell<Segment>,
}

impl<'a> Plant<'a> {
    fn new(m: &'a LaunchModel) -> Self {
        let d = &m.driveline;
        let v = &m.vehicle;
        let g = d.first_gear * d.final_drive;
        let r = v.tire_radius_m;
        let m_t = v.mass_kg + d.front_axle_inertia_kg_m2 / (r * r);
        let j_w = d.rear_axle_inertia_kg_m2
            + d.driveshaft_inertia_kg_m2 * d.final_drive * d.final_drive
            + d.input_inertia_kg_m2 * g * g;
        let weight_n = v.mass_kg * v.gravity_m_s2;
        Plant {
            m,
            g,
            m_t,
            j_w,
            m_eq: m_t + j_w / (r * r),
            weight_n,
            rolling_n: v.rolling_resistance * weight_n,
            segment: std::cell::Cell::new(m.engine.curve.segment(0)),
        }
    }

    fn drag_n(&self, speed: f64) -> f64 {
        let v = &self.m.vehicle;
        0.5 * v.air_density_kg_m3 * v.drag_area_m2 * speed * speed
    }

    fn road_n(&self, speed: f64) -> f64 {
        self.rolling_n + self.drag_n(speed)
    }

    fn traction_n(&self, mu: f64, speed: f64) -> f64 {
        traction_limit_n(
            mu,
            self.weight_n,
            &self.m.vehicle,
            self.rolling_n,
            self.drag_n(speed),
        )
    }

    /// Net engine torque at ω, N·m: curve − friction. Past the ends of the curve the end
    /// segments run on (only inside the step that leaves it; the run stops after it).
    fn engine_nm(&self, w: f64) -> f64 {
        let e = &self.m.engine;
        let rpm = w / RAD_S_PER_RPM;
        let segment = e.curve.segment_from(self.segment.get(), rpm);
        self.segment.set(segment);
        interpolate(segment, rpm) - e.friction_nm
    }

    /// Sliding capacity at engine speed ω, N·m: the capacity law at ω (rev/min at this edge)
    /// times μ(θ)/μ.
    fn capacity_nm(&self, w: f64, mu_scale: f64) -> f64 {
        self.m.clutch.law.capacity_nm(w / RAD_S_PER_RPM) * mu_scale
    }

    fn static_nm(&self, w: f64, mu_scale: f64) -> f64 {
        self.m.clutch.static_ratio * self.capacity_nm(w, mu_scale)
    }

    /// Derivatives and the clutch torque in `mode`.
    fn rates(&self, mode: Mode, y: &State) -> (State, f64) {
        let (we, v) = (y[0], y[2]);
        let ie = self.m.engine.inertia_kg_m2;
        let eta = self.m.driveline.efficiency;
        let r = self.m.vehicle.tire_radius_m;
        let g = self.g;
        let te = self.engine_nm(we);
        let road = self.road_n(v);
        let (mut d, tc) = match (mode.clutch, mode.tire) {
            (ClutchMode::Slip(s), TireMode::Grip) => {
                let tc = s * self.capacity_nm(we, mode.mu_scale);
                let a = (eta * g * tc / r - road) / self.m_eq;
                ([(te - tc) / ie, a / r, a, v], tc)
            }
            (ClutchMode::Locked, TireMode::Grip) => {
                let a = (eta * g * te / r - road) / (self.m_eq + eta * ie * g * g / (r * r));
                ([g * a / r, a / r, a, v], te - ie * g * a / r)
            }
            (ClutchMode::Slip(s), TireMode::Spin) => {
                let tc = s * self.capacity_nm(we, mode.mu_scale);
                let fx = self.traction_n(self.m.vehicle.grip_spinning, v);
                let aw = (eta * g * tc - fx * r) / self.j_w;
                ([(te - tc) / ie, aw, (fx - road) / self.m_t, v], tc)
            }
            (ClutchMode::Locked, TireMode::Spin) => {
                let fx = self.traction_n(self.m.vehicle.grip_spinning, v);
                let aw = (eta * g * te - fx * r) / (self.j_w + eta * ie * g * g);
                ([g * aw, aw, (fx - road) / self.m_t, v], te - ie * g * aw)
            }
        };
        // A car at rest does not roll backwards under its rolling resistance.
        if v <= 0.0 && d[2] < 0.0 {
            d[2] = 0.0;
            if mode.tire == TireMode::Grip {
                d[1] = 0.0;
                if mode.clutch == ClutchMode::Locked {
                    d[0] = 0.0;
                }
            }
        }
        (d, tc)
    }

    /// One classical RK4 step of length `h` with the mode held fixed.
    fn rk4(&self, mode: Mode, y: &State, h: f64) -> State {
        let at = |y: &State, k: &State, f: f64| -> State {
            [
                y[0] + f * k[0],
                y[1] + f * k[1],
                y[2] + f * k[2],
                y[3] + f * k[3],
            ]
        };
        let k1 = self.rates(mode, y).0;
        let k2 = self.rates(mode, &at(y, &k1, h / 2.0)).0;
        let k3 = self.rates(mode, &at(y, &k2, h / 2.0)).0;
        let k4 = self.rates(mode, &at(y, &k3, h)).0;
        let mut out = *y;
        for i in 0..4 {
            out[i] = y[i] + h / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
        }
        out
    }

    /// Slip power in `mode` at `y`, W (0 while locked).
    fn slip_power_w(&self, mode: Mode, y: &State) -> f64 {
        match mode.clutch {
            ClutchMode::Locked => 0.0,
            ClutchMode::Slip(s) => {
                let tc = s * self.capacity_nm(y[0], mode.mu_scale);
                (tc * (y[0] - self.g * y[1])).max(0.0)
            }
        }
    }

    /// Tire force the car needs to keep gripping in `mode`, N: m_t·v' + F_rr + F_a.
    fn grip_force_needed_n(&self, clutch: ClutchMode, mu_scale: f64, y: &State) -> f64 {
        let mode = Mode {
            clutch,
            tire: TireMode::Grip,
            mu_scale,
        };
        let d = self.rates(mode, y).0;
        self.m_t * d[2] + self.road_n(y[2])
    }

    /// Clutch torque needed to stay locked with the tire in `tire`, N·m.
    fn lock_torque_needed_nm(&self, tire: TireMode, mu_scale: f64, y: &State) -> f64 {
        let mode = Mode {
            clutch: ClutchMode::Locked,
            tire,
            mu_scale,
        };
        self.rates(mode, y).1
    }

    /// μ(θ)/μ at the mean plate temperature after `energy_j` of slip.
    fn mu_scale(&self, energy_j: f64) -> f64 {
        let c = &self.m.clutch;
        match (&self.m.thermal, c.mu_vs_temperature.is_empty()) {
            (Some(t), false) => {
                let (pp, fw) = rises_k(t, energy_j);
                let mean = t.start_c + (pp + fw) / 2.0;
                interpolate_clamped(&c.mu_vs_temperature, mean) / c.mu
            }
            _ => 1.0,
        }
    }
}

/// Bulk rises of pressure plate and flywheel, K: share·E/(m·c) each (Shigley ch. 16,
/// "Temperature rise", adiabatic over a launch of seconds).
fn rises_k(t: &Thermal, energy_j: f64) -> (f64, f64) {
    let share = t.plate_share * energy_j / t.specific_heat_j_kg_k;
    (share / t.pressure_plate_kg, share / t.flywheel_kg)
}

/// Linear interpolation in rising (x, y) points, clamped to the end values.
fn interpolate_clamped(points: &[(f64, f64)], x: f64) -> f64 {
    let (first, last) = (points[0], points[points.len() - 1]);
    if x <= first.0 {
        return first.1;
    }
    if x >= last.0 {
        return last.1;
    }
    let i = points.partition_point(|p| p.0 <= x).max(1);
    let ((x0, y0), (x1, y1)) = (points[i - 1], points[i]);
    y0 + (y1 - y0) * (x - x0) / (x1 - x0)
}

fn lerp(a: &State, b: &State, f: f64) -> State {
    [
        a[0] + (b[0] - a[0]) * f,
        a[1] + (b[1] - a[1]) * f,
        a[2] + (b[2] - a[2]) * f,
        a[3] + (b[3] - a[3]) * f,
    ]
}

/// The running simulation.
struct Run<'a> {
    p: Plant<'a>,
    y: State,
    t: f64,
    mode: Mode,
    out: LaunchRun,
}

impl Run<'_> {
    fn event(&mut self, time_s: f64, event: Event) {
        self.out.events.push(Timed { time_s, event });
    }

    /// Mode changes decided at the start of a step: the tire first (with the clutch as it is),
    /// then the clutch (with the tire as it now is).
    fn switch_at_start(&mut self) {
        let y = self.y;
        if self.mode.tire == TireMode::Grip {
            let needed = self
                .p
                .grip_force_needed_n(self.mode.clutch, self.mode.mu_scale, &y);
            let limit = self.p.traction_n(self.p.m.vehicle.grip_peak, y[2]);
            if needed > limit {
                self.start_spin(needed, limit);
            }
        }
        if self.mode.clutch == ClutchMode::Locked {
            let needed = self
                .p
                .lock_torque_needed_nm(self.mode.tire, self.mode.mu_scale, &y);
            let holds = self.p.static_nm(y[0], self.mode.mu_scale);
            if needed.abs() > holds {
                self.mode.clutch = ClutchMode::Slip(needed.signum());
                self.event(
                    self.t,
                    Event::Unlocked {
                        engine_rad_s: y[0],
                        needed_nm: needed,
                        static_nm: holds,
                    },
                );
            }
        }
    }

    /// The tires start to spin now: the mode, the interval and the event.
    fn start_spin(&mut self, needed_n: f64, limit_n: f64) {
        self.mode.tire = TireMode::Spin;
        self.out.tire_spin.push((self.t, None));
        self.event(self.t, Event::Spin { needed_n, limit_n });
    }

    /// Grip margin, N: traction limit minus the force needed to keep gripping (negative: the
    /// tires cannot hold).
    fn grip_margin_n(&self, y: &State) -> (f64, f64, f64) {
        let needed = self
            .p
            .grip_force_needed_n(self.mode.clutch, self.mode.mu_scale, y);
        let limit = self.p.traction_n(self.p.m.vehicle.grip_peak, y[2]);
        (limit - needed, needed, limit)
    }

    /// Advances one step of `h`, locating a lock, a hook-up or the onset of tire spin inside it
    /// and finishing the step in the new mode.
    fn step(&mut self, h: f64) {
        let mut left = h;
        for _ in 0..4 {
            let start = self.y;
            let end = self.p.rk4(self.mode, &start, left);
            let p0 = self.p.slip_power_w(self.mode, &start);
            // Fractions of the step at which a crossing happens.
            let lock_at = match self.mode.clutch {
                ClutchMode::Slip(s) => {
                    let d0 = s * (start[0] - self.p.g * start[1]);
                    let d1 = s * (end[0] - self.p.g * end[1]);
                    (d0 > 0.0 && d1 <= 0.0).then(|| d0 / (d0 - d1))
                }
                ClutchMode::Locked => None,
            };
            let r = self.p.m.vehicle.tire_radius_m;
            let grip_at = match self.mode.tire {
                TireMode::Spin => {
                    let s0 = start[1] * r - start[2];
                    let s1 = end[1] * r - end[2];
                    (s0 > 0.0 && s1 <= 0.0).then(|| s0 / (s0 - s1))
                }
                TireMode::Grip => None,
            };
            // Gripping at the start, the tires reach their limit inside the step: located on
            // the grip margin as the lock is on the slip speed.
            let spin_at = match self.mode.tire {
                TireMode::Grip => {
                    let m0 = self.grip_margin_n(&start).0;
                    let m1 = self.grip_margin_n(&end).0;
                    (m0 >= 0.0 && m1 < 0.0).then(|| m0 / (m0 - m1))
                }
                TireMode::Spin => None,
            };
            let first = [lock_at, grip_at, spin_at]
                .into_iter()
                .flatten()
                .fold(None, |acc: Option<f64>, f| {
                    Some(acc.map_or(f, |a| a.min(f)))
                });
            let Some(f) = first else {
                let p1 = self.p.slip_power_w(self.mode, &end);
                self.account(&start, &end, p0, p1, left);
                self.t += left;
                self.y = end;
                return;
            };
            let mut at = lerp(&start, &end, f);
            let dt = f * left;
            let is_lock = lock_at == Some(f);
            let is_spin = !is_lock && spin_at == Some(f);
            let p1 = if is_lock {
                0.0
            } else {
                self.p.slip_power_w(self.mode, &at)
            };
            self.account(&start, &at, p0, p1, dt);
            self.t += dt;
            left -= dt;
            if is_lock {
                at[0] = self.p.g * at[1];
                self.y = at;
                self.lock_or_reverse();
            } else if is_spin {
                self.y = at;
                let (_, needed, limit) = self.grip_margin_n(&at);
                self.start_spin(needed, limit);
            } else {
                at[1] = at[2] / r;
                if self.mode.clutch == ClutchMode::Locked {
                    at[0] = self.p.g * at[1];
                }
                self.y = at;
                self.mode.tire = TireMode::Grip;
                if let Some(last) = self.out.tire_spin.last_mut() {
                    last.1 = Some(self.t);
                }
                self.event(self.t, Event::Grip);
            }
            if left <= 0.0 {
                return;
            }
        }
        // More than four switches inside one step: finish it in the last mode.
        let start = self.y;
        let end = self.p.rk4(self.mode, &start, left);
        let (p0, p1) = (
            self.p.slip_power_w(self.mode, &start),
            self.p.slip_power_w(self.mode, &end),
        );
        self.account(&start, &end, p0, p1, left);
        self.t += left;
        self.y = end;
    }

    /// At a speed match: lock if the static capacity holds what locking needs, else slip on
    /// the other way.
    fn lock_or_reverse(&mut self) {
        let y = self.y;
        let needed = self
            .p
            .lock_torque_needed_nm(self.mode.tire, self.mode.mu_scale, &y);
        let holds = self.p.static_nm(y[0], self.mode.mu_scale);
        if needed.abs() <= holds {
            self.mode.clutch = ClutchMode::Locked;
            if self.out.lockup.is_none() {
                self.out.lockup = Some(Lockup {
                    time_s: self.t,
                    engine_rad_s: y[0],
                    speed_m_s: y[2],
                });
            }
            self.event(
                self.t,
                Event::Locked {
                    engine_rad_s: y[0],
                    needed_nm: needed,
                    static_nm: holds,
                },
            );
        } else {
            let s = match self.mode.clutch {
                ClutchMode::Slip(s) => -s,
                ClutchMode::Locked => needed.signum(),
            };
            self.mode.clutch = ClutchMode::Slip(s);
            self.event(
                self.t,
                Event::Reversed {
                    needed_nm: needed,
                    static_nm: holds,
                },
            );
        }
    }

    /// Slip energy (trapezoid), peak power, minimum engine speed and sixty feet over a piece
    /// of a step from `a` to `b` lasting `dt`.
    fn account(&mut self, a: &State, b: &State, p0: f64, p1: f64, dt: f64) {
        let o = &mut self.out;
        o.slip_energy_j += (p0 + p1) / 2.0 * dt;
        o.peak_slip_power_w = o.peak_slip_power_w.max(p0).max(p1);
        o.min_engine_rad_s = o.min_engine_rad_s.min(b[0]);
        if o.sixty_ft_s.is_none() && a[3] < SIXTY_FEET_M && b[3] >= SIXTY_FEET_M {
            let f = (SIXTY_FEET_M - a[3]) / (b[3] - a[3]);
            let time_s = self.t + f * dt;
            o.sixty_ft_s = Some(time_s);
            let speed_m_s = a[2] + (b[2] - a[2]) * f;
            o.events.push(Timed {
                time_s,
                event: Event::SixtyFeet { speed_m_s },
            });
        }
    }

    fn trace(&mut self) {
        let point = TracePoint {
            time_s: self.t,
            engine_rad_s: self.y[0],
            clutch_rad_s: self.p.g * self.y[1],
            speed_m_s: self.y[2],
            slip_power_w: self.p.slip_power_w(self.mode, &self.y),
        };
        self.out.trace.push(point);
    }
}

impl LaunchModel {
    /// Overall ratio G = first gear × final drive.
    pub fn overall_ratio(&self) -> f64 {
        self.driveline.first_gear * self.driveline.final_drive
    }

    /// Everything on the clutch's output side referred to the clutch, kg·m²:
    /// J_c = M_eq·r²/G² with M_eq = m + I_front/r² + (I_rear + I_ds·i_f² + I_in·G²)/r².
    pub fn driven_inertia_kg_m2(&self) -> f64 {
        let p = Plant::new(self);
        let r = self.vehicle.tire_radius_m;
        p.m_eq * r * r / (p.g * p.g)
    }

    /// Sliding capacity at engine speed `rad_s` with constant μ, N·m (the capacity law).
    pub fn capacity_nm(&self, rad_s: f64) -> f64 {
        Plant::new(self).capacity_nm(rad_s, 1.0)
    }

    /// Runs the launch: fixed-step RK4 of `step_s` for `duration_s`, the clutch slipping and
    /// the tires gripping at the start (both may switch at once). Stops early, with an event,
    /// when the engine leaves its torque curve. The values must already be checked
    /// (see [`crate::launch::request`]).
    pub fn simulate(&self) -> LaunchRun {
        let mut run = Run {
            p: Plant::new(self),
            y: [self.launch_rad_s, 0.0, 0.0, 0.0],
            t: 0.0,
            mode: Mode {
                clutch: ClutchMode::Slip(1.0),
                tire: TireMode::Grip,
                mu_scale: 1.0,
            },
            out: LaunchRun {
                lockup: None,
                min_engine_rad_s: self.launch_rad_s,
                slip_energy_j: 0.0,
                peak_slip_power_w: 0.0,
                tire_spin: Vec::new(),
                sixty_ft_s: None,
                plate_rise_k: None,
                events: Vec::new(),
                trace: Vec::new(),
                end_s: 0.0,
            },
        };
        let h = self.step_s;
        let steps = (self.duration_s / h).round().max(1.0) as usize;
        let trace_every = ((TRACE_EVERY_S / h).round() as usize).max(1);
        let (lo, hi) = self.engine.curve.range();
        let mut completed = true;
        for i in 0..steps {
            run.mode.mu_scale = run.p.mu_scale(run.out.slip_energy_j);
            run.switch_at_start();
            if i.is_multiple_of(trace_every) {
                run.trace();
            }
            run.step(h);
            // The step's end on the grid, free of summed rounding.
            run.t = (i + 1) as f64 * h;
            let rpm = run.y[0] / RAD_S_PER_RPM;
            if rpm > hi || rpm < lo {
                let above = rpm > hi;
                let engine_rad_s = run.y[0];
                run.event(
                    run.t,
                    Event::LeftCurve {
                        engine_rad_s,
                        above,
                    },
                );
                completed = false;
                break;
            }
        }
        if completed && steps.is_multiple_of(trace_every) {
            run.trace();
        }
        run.out.end_s = run.t;
        run.out.plate_rise_k = self
            .thermal
            .as_ref()
            .map(|t| rises_k(t, run.out.slip_energy_j));
        run.out
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::launch::request::{LaunchReport, LaunchRequest};
    use crate::units::Units;

    /// The reference launch (docs/engineering.md §18, in the API's metric form): twin disc
    /// 240 × 160 mm, μ 0.30, 4 springs × 1000 N/mm × 1 mm, one lever of 50 g at 100 mm.
    fn reference() -> LaunchRequest {
        serde_json::from_value(crate::reference::launch()).expect("reference request")
    }

    fn model(req: &LaunchRequest) -> LaunchModel {
        req.validate().expect("valid request").model
    }

    /// The closed-form body: no engine torque (flat 700 N·m curve less 700 N·m friction), no
    /// levers, no road load, η = 1, tires that cannot spin; clutch 4 × 0.3 × 0.1 m × 4000 N.
    fn closed_form(net_engine_nm: f64) -> LaunchModel {
        let mut req = reference();
        let curve = 700.0 + net_engine_nm;
        req.engine.torque_curve = vec![[500.0, curve], [4000.0, curve], [7000.0, curve]];
        req.engine.friction_torque = 700.0;
        req.levers = None;
        req.vehicle.rolling_resistance = 0.0;
        req.vehicle.drag_area = 0.0;
        req.vehicle.tire_grip = 4.0;
        req.vehicle.tire_grip_spinning = 4.0;
        req.driveline.efficiency = 1.0;
        model(&req)
    }

    // (a) Shigley's Mechanical Engineering Design (Budynas & Nisbett), ch. 16 "Energy
    // considerations": t = I1·I2·Δω/((I1 + I2)·T), E = I1·I2·Δω²/(2·(I1 + I2)). With I1 0.20,
    // T 480 N·m, I2 = J_c = 1.968689 kg·m² from the reference driveline and 6000 rpm:
    // t = 0.2376558 s, E = 35 837.66 J [derived] (docs/engineering.md §18, closed-form checks).
    #[test]
    fn free_engagement_matches_the_closed_form_through_the_solver() {
        let m = closed_form(0.0);
        let i2 = m.driven_inertia_kg_m2();
        assert!((i2 - 1.968689).abs() < 5e-7, "{i2}");
        assert!((m.capacity_nm(m.launch_rad_s) - 480.0).abs() < 1e-9);
        let (i1, dw, t) = (0.20, m.launch_rad_s, 480.0);
        let closed = crate::launch::slip::two_inertia_slip(i1, i2, dw, 0.0, t).expect("valid");
        let (t_formula, e_formula) = (closed.time_s, closed.energy_j);
        let run = m.simulate();
        let lock = run.lockup.expect("it locks");
        assert!((lock.time_s - t_formula).abs() < 1e-9, "{}", lock.time_s);
        assert!((lock.time_s - 0.2376558).abs() < 5e-8, "{}", lock.time_s);
        assert!((run.slip_energy_j - e_formula).abs() < 1e-6 * e_formula);
        assert!(
            (run.slip_energy_j - 35_837.66).abs() < 0.01,
            "{}",
            run.slip_energy_j
        );
        // Common speed I1·ω0/(I1 + I2), momentum conserved.
        let common = i1 * dw / (i1 + i2);
        assert!((lock.engine_rad_s - common).abs() < 1e-9 * common);
        assert!(run.tire_spin.is_empty());
    }

    // (b) With engine torque T_e on I1: Δω̇ = −[T(1/I1 + 1/I2) − T_e/I1], so
    // t = I1·I2·Δω0/(T·(I1 + I2) − T_e·I2) and, Δω falling linearly, E = T·Δω0·t/2 [derived]
    // (docs/engineering.md §18, closed-form checks).
    #[test]
    fn engagement_with_engine_torque_matches_the_two_inertia_form() {
        let m = closed_form(300.0);
        let i2 = m.driven_inertia_kg_m2();
        let (i1, dw, t, te) = (0.20, m.launch_rad_s, 480.0, 300.0);
        let t_formula = i1 * i2 * dw / (t * (i1 + i2) - te * i2);
        let run = m.simulate();
        let lock = run.lockup.expect("it locks");
        assert!(
            (lock.time_s - t_formula).abs() < 1e-9,
            "{} vs {t_formula}",
            lock.time_s
        );
        let e_formula = crate::launch::slip::linear_slip_energy_j(t, dw, t_formula).expect("valid");
        assert!((run.slip_energy_j - e_formula).abs() < 1e-6 * e_formula);
        // Longer and hotter than the free engagement (the caution of docs/engineering.md §18).
        assert!(lock.time_s > 0.2376558 && run.slip_energy_j > 35_837.66);
    }

    // (c) Gillespie, Fundamentals of Vehicle Dynamics, ch. 2, traction-limited acceleration
    // (form from memory): m 1800 kg, L 2.6 m, h 0.7 m, b 1.3 m, μ 0.7, f_r 0 →
    // F_x,max = 7615.5 N with g = 9.81; with f_r 0.015, 7554.0 N [derived from Gillespie's form]
    // (docs/engineering.md §16 and §18).
    #[test]
    fn traction_limit_with_load_transfer_matches_gillespies_form() {
        let mut v = model(&reference()).vehicle;
        v.wheelbase_m = 2.6;
        v.cg_height_m = 0.7;
        v.cg_to_front_axle_m = 1.3;
        let w = 1800.0 * 9.81;
        let f = traction_limit_n(0.7, w, &v, 0.0, 0.0);
        assert!((f - 7615.5).abs() < 0.05, "{f}");
        let f = traction_limit_n(0.7, w, &v, 0.015 * w, 0.0);
        assert!((f - 7554.0).abs() < 0.05, "{f}");
        // Gillespie's closed form μW(b − f_r·h)/L/(1 − μh/L) agrees exactly.
        let gillespie = 0.7 * w * (1.3 - 0.015 * 0.7) / 2.6 / (1.0 - 0.7 * 0.7 / 2.6);
        assert!((f - gillespie).abs() < 1e-9);
        // Front wheels off the ground: capped at μW.
        assert_eq!(traction_limit_n(4.0, w, &v, 0.0, 0.0), 4.0 * w);
    }

    // Issue 21: tire spin that starts mid-run (grips 1.4 / 1.12, 30 g) is located inside the
    // step, as the lock is: its onset falls between grid points and moves by well under 1e-4 s
    // when the step is halved, and so does the lock. Found at a step start it moved by up to a
    // step (0.5 ms).
    #[test]
    fn tire_spin_onset_is_located_inside_the_step() {
        let mut req = reference();
        req.vehicle.tire_grip = 1.4;
        req.vehicle.tire_grip_spinning = 1.12;
        if let Some(l) = req.levers.as_mut() {
            l.counterweight_g = 30.0;
        }
        let m = model(&req);
        let mut half = m.clone();
        half.step_s = m.step_s / 2.0;
        let (a, b) = (m.simulate(), half.simulate());
        let (sa, sb) = (a.tire_spin[0].0, b.tire_spin[0].0);
        assert!(sa > 0.01, "spins mid-run: {sa}");
        let on_grid = (sa / m.step_s - (sa / m.step_s).round()).abs() < 1e-6;
        assert!(!on_grid, "{sa} lies on the step grid");
        assert!((sa - sb).abs() < 1e-6, "{sa} vs {sb}");
        let (la, lb) = (
            a.lockup.expect("locks").time_s,
            b.lockup.expect("locks").time_s,
        );
        assert!((la - lb).abs() < 1e-4, "{la} vs {lb}");
    }

    // (d) docs/engineering.md §17: halving the step changes the lock time by less than 1e-4 s.
    #[test]
    fn halving_the_step_barely_moves_the_lock_time() {
        let m = model(&reference());
        let mut half = m.clone();
        half.step_s = m.step_s / 2.0;
        let a = m.simulate().lockup.expect("locks").time_s;
        let b = half.simulate().lockup.expect("locks").time_s;
        assert!((a - b).abs() < 1e-4, "{a} vs {b}");
    }

    // docs/engineering.md §18 [derived there with a separate implementation of the model and
    // g = 9.81]: t_L 1.8131 s at 5782.7 rpm and 21.59 m/s, E 389.42 kJ, no spin; with grips
    // 1.0 / 0.8 the tires spin from the start and the clutch locks at 0.0862 s with 19.33 kJ.
    #[test]
    fn the_reference_launch_with_g_981_gives_the_reference_figures() {
        let mut m = model(&reference());
        m.vehicle.gravity_m_s2 = 9.81;
        let run = m.simulate();
        let lock = run.lockup.expect("locks");
        assert!((lock.time_s - 1.8131).abs() < 5e-5, "{}", lock.time_s);
        assert!((lock.engine_rad_s / RAD_S_PER_RPM - 5782.7).abs() < 0.05);
        assert!((lock.speed_m_s - 21.59).abs() < 0.005, "{}", lock.speed_m_s);
        assert!(
            (run.slip_energy_j - 389_420.0).abs() < 5.0,
            "{}",
            run.slip_energy_j
        );
        assert!(run.tire_spin.is_empty());
        let (pp, fw) = run.plate_rise_k.expect("thermal given");
        // docs/engineering.md §12: 0.45 × 389 424 J / (8 kg × 460 J/(kg·K)) = 47.62 K [derived].
        assert!(
            (pp - 47.62).abs() < 0.01 && (fw - 31.75).abs() < 0.01,
            "{pp} {fw}"
        );
        // The same as the adiabatic bulk rise E/(m·c) of the closed forms (Shigley ch. 16).
        let closed = crate::launch::slip::temperature_rise_k(0.45 * run.slip_energy_j, 8.0, 460.0)
            .expect("valid");
        assert!((pp - closed).abs() < 1e-9 * closed);
        // docs/engineering.md §10: the slipping engine nears the crossover 5782.4 rpm from above.
        assert!(run.min_engine_rad_s / RAD_S_PER_RPM > 5782.4);

        m.vehicle.grip_peak = 1.0;
        m.vehicle.grip_spinning = 0.8;
        let run = m.simulate();
        let lock = run.lockup.expect("locks");
        assert!((lock.time_s - 0.0862).abs() < 5e-5, "{}", lock.time_s);
        assert!(
            (run.slip_energy_j - 19_330.0).abs() < 5.0,
            "{}",
            run.slip_energy_j
        );
        assert_eq!(run.tire_spin.first().map(|s| s.0), Some(0.0));
        assert_eq!(run.tire_spin.last().map(|s| s.1), Some(None));
    }

    // The clutch capacity is the capacity calculation's own law (docs/engineering.md §18):
    // 4 × 0.30 × 0.1 m × (4000 N + 0.005 N·s² × ω²) = 716.9 N·m at 6000 rpm [derived].
    #[test]
    fn capacity_is_the_capacity_calculations() {
        let req = reference();
        let m = model(&req);
        let law = req
            .capacity_request()
            .validate()
            .expect("valid")
            .model
            .law();
        let here = m.capacity_nm(6000.0 * RAD_S_PER_RPM);
        assert!((here - law.capacity_nm(6000.0)).abs() < 1e-9 * here);
        let w = 6000.0 * RAD_S_PER_RPM;
        let expected = 4.0 * 0.30 * 0.1 * (4000.0 + 0.005 * w * w);
        assert!(
            (here - expected).abs() < 1e-6 && (here - 716.9).abs() < 0.05,
            "{here}"
        );
    }

    #[test]
    fn one_input_gives_bit_identical_runs_and_a_trace_every_10_ms() {
        let m = model(&reference());
        let (a, b) = (m.simulate(), m.simulate());
        assert_eq!(a, b);
        // 3 s at 0.5 ms: rows at 0, 10 ms, ... up to where the engine leaves its curve.
        assert!(
            a.trace
                .windows(2)
                .all(|w| (w[1].time_s - w[0].time_s - 0.01).abs() < 1e-12)
        );
        assert_eq!(a.trace[0].engine_rad_s, m.launch_rad_s);
        let report = LaunchReport::of(&a, m.duration_s, Units::Metric);
        let lock = report
            .events
            .iter()
            .find(|e| e.what.starts_with("clutch locked"));
        assert!(lock.is_some_and(|e| e.what.starts_with("clutch locked at 5783 rpm")));
    }

    #[test]
    fn mu_falling_with_heat_slows_the_lock() {
        let base = model(&reference());
        let mut hot = base.clone();
        // A made-up table for the check only: μ 0.30 at 30 °C down to 0.25 at 60 °C.
        hot.clutch.mu_vs_temperature = vec![(30.0, 0.30), (60.0, 0.25)];
        let (a, b) = (base.simulate(), hot.simulate());
        let (ta, tb) = (
            a.lockup.expect("locks").time_s,
            b.lockup.map_or(f64::INFINITY, |l| l.time_s),
        );
        assert!(tb > ta + 0.01, "{ta} {tb}");
    }
}
