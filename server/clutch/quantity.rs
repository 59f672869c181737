//! What kind of quantity a number is, how each unit system writes it, and the one table of
//! limits every form, record check and calculation request uses.
//!
//! Inside the program a quantity is always in its internal unit (mm, N, N/mm, N·m, kg, g, rpm,
//! s, %); [`Kind`] converts to and from the shop's display units at the edges, and [`Limit`]
//! says what range is accepted and words a refusal in the units the person typed in.

use crate::InputError;
use crate::units::Units;
use std::fmt::Display;

/// The physical kind of a number, which fixes its internal unit and how it is shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// Length, mm (in / mm).
    Length,
    /// Metric thread pitch, mm in both systems (a metric thread is named by its pitch).
    Pitch,
    /// Threads per inch, in both systems.
    ThreadsPerInch,
    /// Force, N (lbf / N).
    Force,
    /// Force per gram of counterweight at 1000 rpm, N/g (lbf/g / N/g).
    ForcePerGram,
    /// Spring rate, N/mm (lbf/in / N/mm).
    Rate,
    /// Torque, N·m (lbf·ft / N·m).
    Torque,
    /// Vehicle mass, kg (lb / kg).
    VehicleMass,
    /// Small masses (counterweights, levers), grams in both systems.
    Grams,
    /// Engine speed, rev/min.
    Speed,
    /// Adjuster turns.
    Turns,
    /// A ratio (gears, lever arms, a multiple of a torque).
    Ratio,
    /// Friction coefficient.
    Mu,
    /// Percent.
    Percent,
    /// Time, s.
    Seconds,
    /// A whole count.
    Count,
    /// Road speed, m/s inside (mph / km/h).
    RoadSpeed,
    /// Moment of inertia, kg·m² (lb·ft² / kg·m²).
    Inertia,
    /// Area, m² (ft² / m²).
    Area,
    /// Density, kg/m³ (lb/ft³ / kg/m³).
    Density,
    /// Specific heat, J/(kg·K) (BTU/(lb·°F) / J/(kg·K)).
    SpecificHeat,
    /// Temperature, °C (°F / °C).
    Temperature,
    /// Time, ms in both systems (integration steps).
    Milliseconds,
    /// Energy, kJ in both systems (slip energy): the unit clutch heat is rated in; a US shop
    /// reads it as it is (ft·lbf would put six digits on every launch).
    Kilojoules,
    /// Power, kW in both systems (slip power): read beside the slip energy it builds, in the
    /// same system.
    Kilowatts,
}

impl Kind {
    /// An internal value as the shop reads it in `units`.
    pub fn to_shown(self, units: Units, v: f64) -> f64 {
        match self {
            Kind::Length => units.mm_to_length(v),
            Kind::Force | Kind::ForcePerGram => units.n_to_force(v),
            Kind::Rate => units.n_per_mm_to_rate(v),
            Kind::Torque => units.nm_to_torque(v),
            Kind::VehicleMass => units.kg_to_weight(v),
            Kind::RoadSpeed => units.m_s_to_road_speed(v),
            Kind::Inertia => units.kg_m2_to_inertia(v),
            Kind::Area => units.m2_to_area(v),
            Kind::Density => units.kg_m3_to_density(v),
            Kind::SpecificHeat => units.si_to_specific_heat(v),
            Kind::Temperature => units.c_to_temperature(v),
            _ => v,
        }
    }

    /// A value typed in `units` → internal unit.
    pub fn from_shown(self, units: Units, v: f64) -> f64 {
        match self {
            Kind::Length => units.length_to_mm(v),
            Kind::Force | Kind::ForcePerGram => units.force_to_n(v),
            Kind::Rate => units.rate_to_n_per_mm(v),
            Kind::Torque => units.torque_to_nm(v),
            Kind::VehicleMass => units.weight_to_kg(v),
            Kind::RoadSpeed => units.road_speed_to_m_s(v),
            Kind::Inertia => units.inertia_to_kg_m2(v),
            Kind::Area => units.area_to_m2(v),
            Kind::Density => units.density_to_kg_m3(v),
            Kind::SpecificHeat => units.specific_heat_to_si(v),
            Kind::Temperature => units.temperature_to_c(v),
            _ => v,
        }
    }

    /// The unit symbol in `units` ("in", "lbf·ft", "g"); empty for plain numbers.
    pub fn symbol(self, units: Units) -> &'static str {
        match self {
            Kind::Length => units.length_label(),
            Kind::Pitch => "mm",
            Kind::ThreadsPerInch => "TPI",
            Kind::Force => units.force_label(),
            Kind::ForcePerGram => match units {
                Units::Imperial => "lbf/g",
                Units::Metric => "N/g",
            },
            Kind::Rate => units.rate_label(),
            Kind::Torque => units.torque_label(),
            Kind::VehicleMass => units.weight_label(),
            Kind::Grams => "g",
            Kind::Speed => "rpm",
            Kind::Turns => "turns",
            Kind::Percent => "%",
            Kind::Seconds => "s",
            Kind::RoadSpeed => units.road_speed_label(),
            Kind::Inertia => units.inertia_label(),
            Kind::Area => match units {
                Units::Imperial => "ft²",
                Units::Metric => "m²",
            },
            Kind::Density => match units {
                Units::Imperial => "lb/ft³",
                Units::Metric => "kg/m³",
            },
            Kind::SpecificHeat => match units {
                Units::Imperial => "BTU/(lb·°F)",
                Units::Metric => "J/(kg·K)",
            },
            Kind::Temperature => units.temperature_label(),
            Kind::Milliseconds => "ms",
            Kind::Kilojoules => "kJ",
            Kind::Kilowatts => "kW",
            Kind::Ratio | Kind::Mu | Kind::Count => "",
        }
    }

    /// Decimals the shop reads this quantity to: heights to 0.001 in or 0.01 mm, forces,
    /// torques, masses and speeds whole, counterweights to 0.1 g.
    pub fn decimals(self, units: Units) -> usize {
        match self {
            Kind::Length => match units {
                Units::Imperial => 3,
                Units::Metric => 2,
            },
            Kind::Force | Kind::Torque | Kind::VehicleMass | Kind::Speed | Kind::Count => 0,
            Kind::Grams | Kind::Rate | Kind::Percent | Kind::RoadSpeed => 1,
            Kind::Ratio | Kind::ThreadsPerInch => 2,
            Kind::Pitch | Kind::Turns | Kind::Mu | Kind::Seconds | Kind::Inertia => 3,
            Kind::ForcePerGram => 4,
            Kind::Temperature | Kind::Kilojoules | Kind::Kilowatts => 0,
            Kind::Area | Kind::Density | Kind::Milliseconds => 2,
            Kind::SpecificHeat => match units {
                Units::Imperial => 3,
                Units::Metric => 0,
            },
        }
    }

    /// Decimals a form is prefilled with: enough that saving an untouched form keeps the value
    /// to the precision it was typed with.
    pub fn entry_decimals(self, units: Units) -> usize {
        match self {
            Kind::Ratio => 3,
            other => other.decimals(units),
        }
    }

    /// A value in `units`, rounded the shop's way, without its unit ("1.905").
    pub fn number(self, units: Units, v: f64) -> String {
        let mut out = String::with_capacity(12);
        push_fixed(&mut out, self.to_shown(units, v), self.decimals(units));
        out
    }

    /// A value in `units`, rounded the shop's way, with its unit ("1.905 in", "455 lbf·ft").
    pub fn show(self, units: Units, v: f64) -> String {
        let number = self.number(units, v);
        match self.symbol(units) {
            "" => number,
            unit => format!("{number} {unit}"),
        }
    }
}

/// A count with its noun agreeing, rounded whole: "1 pass", "0 passes", "12 shims".
pub fn counted(n: f64, one: &str, many: &str) -> String {
    let whole = n.round();
    format!("{whole:.0} {}", if whole == 1.0 { one } else { many })
}

/// Appends `v` with `decimals` digits after the point, exactly as `format!("{v:.decimals$}")`
/// writes it (the value correctly rounded, the sign of a negative value kept even when it rounds
/// to zero), without the formatter's general machinery: a page writes thousands of these (the
/// figures, every point of its charts). The value scaled by 10^decimals is rounded by its
/// fraction, and within a millionth of a half by the product's exact error; what is too large or
/// not finite the standard formatter writes.
pub fn push_fixed(out: &mut String, v: f64, decimals: usize) {
    const POW10: [f64; 7] = [1.0, 10.0, 100.0, 1e3, 1e4, 1e5, 1e6];
    const POW10_INT: [u64; 7] = [1, 10, 100, 1_000, 10_000, 100_000, 1_000_000];
    let fast = POW10.get(decimals).and_then(|&scale| {
        // One rounding of an exact product below 1e9: off by less than 1.2e-7.
        let a = v.abs();
        let scaled = a * scale;
        // Too large, or not a number (NaN compares false).
        if scaled.is_nan() || scaled >= 1e9 {
            return None;
        }
        let floor = scaled.floor();
        let frac = scaled - floor;
        let n = floor as u64;
        if (frac - 0.5).abs() > 1e-6 {
            return Some(n + u64::from(frac > 0.5));
        }
        // Near a half the product's own rounding could decide: its error, exactly (one fused
        // multiply-add), says on which side of the half the exact value lies; an exact half
        // goes to the even neighbour, as the standard formatter rounds it.
        let side = (frac - 0.5) + a.mul_add(scale, -scaled);
        Some(n + u64::from(side > 0.0 || (side == 0.0 && n % 2 == 1)))
    });
    let Some(n) = fast else {
        use std::fmt::Write;
        let _ = write!(out, "{v:.decimals$}");
        return;
    };
    if v.is_sign_negative() {
        out.push('-');
    }
    let scale = POW10_INT[decimals];
    push_digits(out, n / scale, 1);
    if decimals > 0 {
        out.push('.');
        push_digits(out, n % scale, decimals);
    }
}

/// Appends `n` in decimal, at least `width` digits (zeros in front).
fn push_digits(out: &mut String, mut n: u64, width: usize) {
    let mut buf = [b'0'; 20];
    let mut at = buf.len();
    while n > 0 || buf.len() - at < width {
        at -= 1;
        buf[at] = b'0' + (n % 10) as u8;
        n /= 10;
    }
    out.extend(buf[at..].iter().map(|&b| char::from(b)));
}

/// `12345.6` → `12,345.6`: thousands grouped with commas, the way the shop writes them.
pub fn group_thousands(number: &str) -> String {
    let (sign, rest) = match number.strip_prefix('-') {
        Some(r) => ("-", r),
        None => ("", number),
    };
    let (whole, frac) = rest
        .split_once('.')
        .map_or((rest, None), |(w, f)| (w, Some(f)));
    let mut grouped = String::with_capacity(whole.len() + whole.len() / 3);
    for (i, c) in whole.chars().enumerate() {
        if i > 0 && (whole.len() - i) % 3 == 0 {
            grouped.push(',');
        }
        grouped.push(c);
    }
    match frac {
        Some(f) => format!("{sign}{grouped}.{f}"),
        None => format!("{sign}{grouped}"),
    }
}

/// One end of an accepted range: inclusive or exclusive.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Bound {
    Incl(f64),
    Excl(f64),
}

use Bound::{Excl, Incl};

/// The accepted range of one kind of value, in internal units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Limit {
    pub kind: Kind,
    pub min: Bound,
    pub max: Bound,
}

impl Limit {
    pub const fn new(kind: Kind, min: Bound, max: Bound) -> Self {
        Self { kind, min, max }
    }

    /// Whether a finite `v` (internal units) lies inside the range. An inclusive bound admits
    /// a value a rounding error beyond it (a bound typed in the other unit system and
    /// converted back).
    pub fn admits(&self, v: f64) -> bool {
        let slack = |b: f64| 1e-12 * b.abs().max(1.0);
        let above_min = match self.min {
            Incl(b) => v >= b - slack(b),
            Excl(b) => v > b,
        };
        let below_max = match self.max {
            Incl(b) => v <= b + slack(b),
            Excl(b) => v < b,
        };
        v.is_finite() && above_min && below_max
    }

    /// The refusal in `units`: "must be between 441 and 11,023 lb". A converted bound is
    /// rounded inwards at the shop's precision (lower bounds up, upper bounds down), so the
    /// message never offers a value the check refuses.
    pub fn message(&self, units: Units) -> String {
        let d = self.kind.decimals(units);
        let scale = 10f64.powi(d as i32);
        let show = |b: f64, up: bool| {
            let v = self.kind.to_shown(units, b) * scale;
            // Rounded inwards; a bound that is already a whole step stays as it is.
            let near = v.round();
            let v = if (v - near).abs() < 1e-6 {
                near
            } else if up {
                v.ceil()
            } else {
                v.floor()
            };
            let text = group_thousands(&format!("{:.*}", d, v / scale));
            if text.contains('.') {
                text.trim_end_matches('0').trim_end_matches('.').to_string()
            } else {
                text
            }
        };
        let unit = match self.kind.symbol(units) {
            "" => String::new(),
            u => format!(" {u}"),
        };
        let (lo, hi) = match (self.min, self.max) {
            (Incl(lo) | Excl(lo), Incl(hi) | Excl(hi)) => (lo, hi),
        };
        let (lo, hi) = (show(lo, true), show(hi, false));
        match (self.min, self.max) {
            (Incl(_), Incl(_)) => format!("must be between {lo} and {hi}{unit}"),
            (Excl(_), Incl(_)) => format!("must be above {lo} and at most {hi}{unit}"),
            (Incl(_), Excl(_)) => format!("must be at least {lo} and below {hi}{unit}"),
            (Excl(_), Excl(_)) => format!("must be above {lo} and below {hi}{unit}"),
        }
    }

    /// `v` (internal units) if it is inside the range, else an error naming `field` with the
    /// message in `units` (for the calculation API, whose numbers are in the request's units).
    /// `field` is written out only when the check fails (see [`crate::require_finite`]).
    pub fn check(&self, field: impl Display, v: f64, units: Units) -> Result<f64, InputError> {
        if self.admits(v) {
            Ok(v)
        } else {
            Err(InputError::new(field.to_string(), self.message(units)))
        }
    }

    /// Like [`Limit::check`] for a value given in `units` (converted first).
    pub fn check_shown(
        &self,
        field: impl Display,
        shown: f64,
        units: Units,
    ) -> Result<f64, InputError> {
        self.check(field, self.kind.from_shown(units, shown), units)
    }
}

/// The one table of limits: forms, the record API and the calculation API all check against
/// these. Ranges are deliberately wide (physically possible, not typical) so that they catch
/// typing mistakes and unit mix-ups without second-guessing an unusual build.
pub mod limits {
    use super::Bound::{Excl, Incl};
    use super::Kind::*;
    use super::Limit;

    pub const DISC_COUNT: Limit = Limit::new(Count, Incl(1.0), Incl(3.0));
    pub const FACING_DIAMETER: Limit = Limit::new(Length, Excl(0.0), Incl(400.0));
    pub const DISC_THICKNESS: Limit = Limit::new(Length, Excl(0.0), Incl(30.0));
    pub const SPRING_COUNT: Limit = Limit::new(Count, Incl(1.0), Incl(24.0));
    pub const SPRING_RATE: Limit = Limit::new(Rate, Excl(0.0), Incl(2000.0));
    pub const ADJUSTER_TPI: Limit = Limit::new(ThreadsPerInch, Incl(4.0), Incl(80.0));
    pub const ADJUSTER_PITCH: Limit = Limit::new(Pitch, Incl(0.2), Incl(6.0));
    /// Adjuster travel per turn when given as a length (the calculation API).
    pub const ADJUSTER_TRAVEL: Limit = Limit::new(Length, Incl(0.0), Incl(10.0));
    pub const ADJUSTER_TURNS: Limit = Limit::new(Turns, Incl(0.0), Incl(20.0));
    pub const ADJUSTER_COUNT: usize = 24;
    pub const BASE_COMPRESSION: Limit = Limit::new(Length, Incl(0.0), Incl(50.0));
    pub const COVER_HEIGHT: Limit = Limit::new(Length, Excl(0.0), Incl(200.0));
    pub const LEVER_COUNT: Limit = Limit::new(Count, Incl(0.0), Incl(24.0));
    pub const LEVER_MASS: Limit = Limit::new(Grams, Incl(0.0), Incl(2000.0));
    pub const COUNTERWEIGHT: Limit = Limit::new(Grams, Incl(0.0), Incl(1000.0));
    pub const LEVER_CG_RADIUS: Limit = Limit::new(Length, Excl(0.0), Incl(300.0));
    pub const LEVER_ARM_RATIO: Limit = Limit::new(Ratio, Excl(0.0), Incl(20.0));
    /// A lever body's own clamp at 1000 rpm, no counterweight (gain form).
    pub const LEVER_BODY_FORCE: Limit = Limit::new(Force, Incl(0.0), Incl(10_000.0));
    pub const LEVER_GAIN: Limit = Limit::new(ForcePerGram, Excl(0.0), Incl(100.0));
    pub const SHIM: Limit = Limit::new(Length, Excl(0.0), Incl(5.0));
    pub const SHIM_COUNT: usize = 20;
    pub const SHIMMING_LIMIT: Limit = Limit::new(Length, Excl(0.0), Incl(5.0));
    pub const MU: Limit = Limit::new(Mu, Incl(0.05), Incl(0.8));
    pub const VEHICLE_MASS: Limit = Limit::new(VehicleMass, Incl(200.0), Incl(5000.0));
    pub const RATED_TORQUE: Limit = Limit::new(Torque, Excl(0.0), Incl(20_000.0));
    pub const FIRST_GEAR: Limit = Limit::new(Ratio, Incl(0.5), Incl(10.0));
    pub const FINAL_DRIVE: Limit = Limit::new(Ratio, Incl(1.0), Incl(10.0));
    pub const TIRE_DIAMETER: Limit = Limit::new(Length, Incl(300.0), Incl(1500.0));
    pub const ENGINE_SPEED: Limit = Limit::new(Speed, Incl(500.0), Incl(15_000.0));
    pub const CURVE_TORQUE: Limit = Limit::new(Torque, Excl(0.0), Incl(100_000.0));
    pub const CURVE_POINTS: usize = 500;
    pub const SIXTY_FT: Limit = Limit::new(Seconds, Incl(0.5), Incl(10.0));
    pub const ET: Limit = Limit::new(Seconds, Incl(1.0), Incl(60.0));
    pub const PASSES: Limit = Limit::new(Count, Incl(0.0), Incl(100_000.0));
    /// Further spring compression at full release (the pressure plate's lift at the springs).
    pub const RELEASE_TRAVEL: Limit = Limit::new(Length, Incl(0.0), Incl(25.0));
    /// Clearance to coil bind kept at full release.
    pub const BIND_MARGIN: Limit = Limit::new(Length, Incl(0.0), Incl(5.0));
    pub const SPRING_FREE_LENGTH: Limit = Limit::new(Length, Excl(0.0), Incl(200.0));
    pub const SPRING_COMPRESSION: Limit = Limit::new(Length, Excl(0.0), Incl(100.0));
    pub const SPRING_FORCE: Limit = Limit::new(Force, Excl(0.0), Incl(50_000.0));
    pub const SPRING_SPREAD: Limit = Limit::new(Percent, Excl(0.0), Incl(50.0));
    pub const SPRING_SAG: Limit = Limit::new(Percent, Excl(0.0), Incl(50.0));
    pub const OVERCLAMP_FACTOR: Limit = Limit::new(Ratio, Incl(1.0), Incl(5.0));
    pub const DUE_WITHIN_PASSES: Limit = Limit::new(Count, Incl(0.0), Incl(1000.0));
    /// Capacity at the launch speed over engine torque there, as a target. Below 0.5 the
    /// clutch carries under half the engine's torque at launch, so the engine flares away from
    /// the launch speed instead of holding it: not a setting a search should aim for (common
    /// shop practice, no published source).
    /// Minutes from one pass to the next, for the launch preview's next pass (a day's rounds).
    pub const NEXT_PASS_MINUTES: Limit = Limit::new(Count, Incl(1.0), Incl(600.0));
    pub const LAUNCH_RATIO: Limit = Limit::new(Ratio, Incl(0.5), Incl(5.0));
    /// Passes one calibration request may carry.
    pub const CALIBRATION_PASSES: Limit = Limit::new(Count, Incl(1.0), Incl(1000.0));
    /// The most passes a calibration uses (a stored build's latest ones).
    pub const CALIBRATION_PASSES_MAX: usize = 1000;
    /// Torque a clutch carried at lockup (from a data log).
    pub const CARRIED_TORQUE: Limit = Limit::new(Torque, Excl(0.0), Incl(100_000.0));
    /// Share of its torque each disc face beyond the first two carries.
    pub const EXTRA_FACE_EFFICIENCY: Limit = Limit::new(Ratio, Excl(0.0), Incl(1.0));
    /// Static clamp lost to wear at a pass.
    pub const CLAMP_LOSS: Limit = Limit::new(Force, Incl(0.0), Incl(50_000.0));
    /// Engine (crank, flywheel, pressure plate) moment of inertia.
    pub const ENGINE_INERTIA: Limit = Limit::new(Inertia, Excl(0.0), Incl(10.0));
    /// Gearbox input (disc, input shaft, gear cluster) or driveshaft moment of inertia.
    pub const SHAFT_INERTIA: Limit = Limit::new(Inertia, Excl(0.0), Incl(10.0));
    /// Rear or front axle (wheels, tires, hubs, axles) moment of inertia.
    pub const AXLE_INERTIA: Limit = Limit::new(Inertia, Excl(0.0), Incl(100.0));
    /// Engine friction torque taken off the torque curve in the launch preview.
    pub const FRICTION_TORQUE: Limit = Limit::new(Torque, Incl(0.0), Incl(5_000.0));
    /// Driveline efficiency (torque only).
    pub const DRIVELINE_EFFICIENCY: Limit = Limit::new(Ratio, Incl(0.5), Incl(1.0));
    /// Wheelbase, CG to front axle, CG height, drag height.
    pub const CAR_LENGTH: Limit = Limit::new(Length, Excl(0.0), Incl(10_000.0));
    /// Rolling-resistance coefficient.
    pub const ROLLING_RESISTANCE: Limit = Limit::new(Ratio, Incl(0.0), Incl(0.5));
    /// Drag area Cd·A.
    pub const DRAG_AREA: Limit = Limit::new(Area, Incl(0.0), Incl(20.0));
    /// Air density.
    pub const AIR_DENSITY: Limit = Limit::new(Density, Excl(0.0), Incl(5.0));
    /// Tire-road friction coefficient, gripping or spinning.
    pub const TIRE_GRIP: Limit = Limit::new(Ratio, Incl(0.1), Incl(4.0));
    /// Static over kinetic friction of the clutch (for the lock test).
    pub const STATIC_RATIO: Limit = Limit::new(Ratio, Incl(1.0), Incl(3.0));
    /// Pressure plate or flywheel mass.
    pub const PLATE_MASS: Limit = Limit::new(VehicleMass, Excl(0.0), Incl(200.0));
    /// Specific heat of the plates.
    pub const SPECIFIC_HEAT: Limit = Limit::new(SpecificHeat, Excl(0.0), Incl(5_000.0));
    /// Plate temperature (start, or a point of μ against temperature).
    pub const PLATE_TEMPERATURE: Limit = Limit::new(Temperature, Incl(-50.0), Incl(1_000.0));
    /// Ambient (air) temperature at a pass.
    pub const AMBIENT_TEMPERATURE: Limit = Limit::new(Temperature, Incl(-40.0), Incl(60.0));
    /// Share of the slip energy each of the two plates takes.
    pub const PLATE_SHARE: Limit = Limit::new(Ratio, Excl(0.0), Incl(0.5));
    /// Integration step of the launch preview.
    pub const LAUNCH_STEP: Limit = Limit::new(Milliseconds, Incl(0.05), Incl(5.0));
    /// Time the launch preview runs for.
    pub const LAUNCH_DURATION: Limit = Limit::new(Seconds, Incl(0.1), Incl(10.0));
    /// Target lockup time after the launch (launch preview search).
    pub const LOCKUP_TIME: Limit = Limit::new(Seconds, Incl(0.05), Incl(10.0));
    /// How far the engine may fall below the launch speed in a clean lock, percent.
    pub const LAUNCH_BOG: Limit = Limit::new(Percent, Excl(0.0), Incl(90.0));
    /// Most slip energy one launch may put into the clutch (launch preview search).
    pub const SLIP_ENERGY: Limit = Limit::new(Kilojoules, Incl(1.0), Incl(10_000.0));
    /// Points of a μ-against-temperature table.
    pub const MU_TABLE_POINTS: usize = 50;
    /// Days a customer link stays valid.
    pub const LINK_DAYS: Limit = Limit::new(Count, Incl(1.0), Incl(365.0));
    /// Slip below which a data log's clutch counts as locked.
    pub const LOG_SLIP_ON: Limit = Limit::new(Percent, Excl(0.0), Incl(50.0));
    /// How long the slip must stay below that for a lockup.
    pub const LOG_HOLD: Limit = Limit::new(Milliseconds, Incl(0.0), Incl(2000.0));
    /// A data-log file, bytes.
    pub const LOG_FILE_BYTES: usize = 50 * 1024 * 1024;
}

#[cfg(test)]
mod tests {
    use super::*;

    fn fixed(v: f64, decimals: usize) -> String {
        let mut s = String::new();
        push_fixed(&mut s, v, decimals);
        s
    }

    /// The standard library's formatter is the reference: ties and near-ties (written by it),
    /// values that round to zero from below, zero's sign, large and non-finite values.
    #[test]
    fn fixed_decimals_are_written_as_the_standard_formatter_writes_them() {
        for (v, d) in [
            (0.125, 2),
            (2.5, 0),
            (3.5, 0),
            (0.05, 1),
            (1.005, 2),
            (-0.04, 1),
            (-0.0, 1),
            (0.0, 0),
            (-2.5, 0),
            (999_999.95, 1),
            (1e12, 2),
            (f64::NAN, 1),
            (f64::INFINITY, 0),
            (f64::NEG_INFINITY, 3),
            (123.456_789, 6),
            (0.1, 7),
            (0.375, 2),
            (12.25, 1),
            (12.75, 1),
            (0.15, 1),
            (2.675, 2),
            (1.000_000_5, 6),
            (-0.125, 2),
        ] {
            assert_eq!(fixed(v, d), format!("{v:.d$}"), "{v} to {d}");
        }
    }

    proptest::proptest! {
        #[test]
        fn fixed_decimals_agree_with_the_standard_formatter(
            v in -1e7f64..1e7,
            scale in -9i32..4,
            d in 0usize..7,
        ) {
            let v = v * 10f64.powi(scale);
            proptest::prop_assert_eq!(fixed(v, d), format!("{v:.d$}"));
        }

        #[test]
        fn fixed_decimals_agree_on_values_of_few_digits(m in -200_000i64..200_000, d in 0usize..5) {
            // Values like 12.345 sit near a half of their last digit more often than random ones.
            let v = m as f64 / 1000.0;
            proptest::prop_assert_eq!(fixed(v, d), format!("{v:.d$}"));
        }

        #[test]
        fn fixed_decimals_agree_at_exact_halves_and_a_few_ulps_off_them(
            m in -2_000_000i64..2_000_000,
            j in 1u32..8,
            d in 0usize..5,
            ulps in -3i64..4,
        ) {
            // m / 2^j is an exact half at some number of decimals (0.125 at 2, 12.5 at 0); a
            // few units in the last place either side lie just off it.
            proptest::prop_assume!(m != 0);
            let half = m as f64 / f64::from(1u32 << j);
            let v = f64::from_bits(half.to_bits().wrapping_add_signed(ulps));
            proptest::prop_assert_eq!(fixed(v, d), format!("{v:.d$}"));
        }
    }

    #[test]
    fn a_refusal_quotes_the_range_in_the_shop_units() {
        // 200 kg = 440.92 lb and 5000 kg = 11 023.1 lb (1 lb = 0.45359237 kg exactly, NIST
        // SP 811 App. B.8); the bounds are rounded inwards.
        assert_eq!(
            limits::VEHICLE_MASS.message(Units::Imperial),
            "must be between 441 and 11,023 lb"
        );
        assert_eq!(
            limits::VEHICLE_MASS.message(Units::Metric),
            "must be between 200 and 5,000 kg"
        );
        // 5 mm = 0.19685 in: the message must not offer 0.197 in, which is refused.
        assert_eq!(
            limits::SHIMMING_LIMIT.message(Units::Imperial),
            "must be above 0 and at most 0.196 in"
        );
        assert!(!limits::SHIMMING_LIMIT.admits(Kind::Length.from_shown(Units::Imperial, 0.197)));
        assert!(limits::SHIMMING_LIMIT.admits(Kind::Length.from_shown(Units::Imperial, 0.196)));
        assert_eq!(
            limits::DISC_COUNT.message(Units::Imperial),
            "must be between 1 and 3"
        );
    }

    #[test]
    fn every_limit_admits_what_its_message_offers() {
        use limits::*;
        let all = [
            DISC_COUNT,
            FACING_DIAMETER,
            DISC_THICKNESS,
            SPRING_COUNT,
            SPRING_RATE,
            ADJUSTER_TPI,
            ADJUSTER_PITCH,
            ADJUSTER_TURNS,
            BASE_COMPRESSION,
            COVER_HEIGHT,
            LEVER_COUNT,
            LEVER_MASS,
            COUNTERWEIGHT,
            LEVER_CG_RADIUS,
            LEVER_ARM_RATIO,
            LEVER_GAIN,
            LEVER_BODY_FORCE,
            SHIM,
            SHIMMING_LIMIT,
            MU,
            VEHICLE_MASS,
            RATED_TORQUE,
            FIRST_GEAR,
            FINAL_DRIVE,
            TIRE_DIAMETER,
            ENGINE_SPEED,
            SIXTY_FT,
            ET,
            PASSES,
            SPRING_FREE_LENGTH,
            RELEASE_TRAVEL,
            BIND_MARGIN,
            SPRING_COMPRESSION,
            SPRING_FORCE,
            OVERCLAMP_FACTOR,
            DUE_WITHIN_PASSES,
            CALIBRATION_PASSES,
            CARRIED_TORQUE,
            CLAMP_LOSS,
            EXTRA_FACE_EFFICIENCY,
            ENGINE_INERTIA,
            SHAFT_INERTIA,
            AXLE_INERTIA,
            FRICTION_TORQUE,
            DRIVELINE_EFFICIENCY,
            CAR_LENGTH,
            ROLLING_RESISTANCE,
            DRAG_AREA,
            AIR_DENSITY,
            TIRE_GRIP,
            STATIC_RATIO,
            PLATE_MASS,
            SPECIFIC_HEAT,
            PLATE_TEMPERATURE,
            PLATE_SHARE,
            LAUNCH_STEP,
            LAUNCH_DURATION,
            LOCKUP_TIME,
            LAUNCH_BOG,
            SLIP_ENERGY,
        ];
        for limit in all {
            for units in [Units::Imperial, Units::Metric] {
                let message = limit.message(units);
                let numbers: Vec<f64> = message
                    .split(' ')
                    .filter_map(|w| w.replace(',', "").parse::<f64>().ok())
                    .collect();
                let (lo, hi) = (numbers[0], numbers[1]);
                if matches!(limit.min, Bound::Incl(_)) {
                    assert!(limit.admits(limit.kind.from_shown(units, lo)), "{message}");
                }
                if matches!(limit.max, Bound::Incl(_)) {
                    assert!(limit.admits(limit.kind.from_shown(units, hi)), "{message}");
                }
            }
        }
    }

    #[test]
    fn thousands_are_grouped() {
        assert_eq!(group_thousands("11023"), "11,023");
        assert_eq!(group_thousands("-1234567.25"), "-1,234,567.25");
        assert_eq!(group_thousands("999"), "999");
    }

    #[test]
    fn a_value_is_shown_with_its_unit_at_the_shop_precision() {
        assert_eq!(Kind::Length.show(Units::Imperial, 48.387), "1.905 in");
        assert_eq!(Kind::Length.show(Units::Metric, 48.387), "48.39 mm");
        assert_eq!(Kind::Grams.show(Units::Imperial, 26.0), "26.0 g");
        assert_eq!(Kind::Speed.show(Units::Metric, 4600.0), "4600 rpm");
    }
}
