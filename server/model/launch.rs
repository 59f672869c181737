//! A stored build's launch preview: the capacity request of a setting plus what the car's
//! record says about its engine, driveline and body, with a documented estimate standing in for
//! each value the record leaves empty (and the page told which). Storage units are the metric
//! request units, so nothing is converted here. No IO.

use super::as_of::BuildAsOf;
use super::{Missing, Trial};
use crate::records::car::CarInput;
use crate::records::measure::{EngineSpeed, Length, Mass};
use clutch::launch::request::{
    DEFAULT_AIR_DENSITY, LaunchDriveline, LaunchEngine, LaunchFriction, LaunchRequest,
    LaunchVehicle, ThermalInput,
};
use clutch::quantity::Kind;
use clutch::units::Units;

/// An estimate for one car value the record leaves empty.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Estimate {
    /// The car record's column it stands in for.
    pub column: &'static str,
    /// What the page calls it.
    pub label: &'static str,
    /// What kind of number it is (for showing it in the shop's units).
    pub kind: Kind,
    /// The value, storage units (kg·m², mm, m², kg, plain μ).
    pub value: f64,
}

impl Estimate {
    /// "engine inertia 4.75 lb·ft²": the estimate in `units` to three significant figures
    /// (an estimate is not known better than that).
    pub fn text(&self, units: Units) -> String {
        let v = self.kind.to_shown(units, self.value);
        let decimals = (2 - v.abs().log10().floor() as i32).clamp(0, 3) as usize;
        match self.kind.symbol(units) {
            "" => format!("{} {v:.decimals$}", self.label),
            unit => format!("{} {v:.decimals$} {unit}", self.label),
        }
    }
}

/// Estimates for a typical car of the class the shop serves: a front-engined, rear-drive drag
/// car of about 1.5 t with a manual gearbox, on slicks on a prepared track. Every value is an
/// estimate from memory (low confidence), chosen to match the reference launch of
/// docs/engineering.md §18; the shop's own figures replace them field by field on the car form.
pub const ESTIMATES: [Estimate; 13] = [
    Estimate {
        column: "engine_inertia_kg_m2",
        label: "engine inertia",
        kind: Kind::Inertia,
        value: 0.20,
    },
    Estimate {
        column: "input_inertia_kg_m2",
        label: "gearbox input inertia",
        kind: Kind::Inertia,
        value: 0.02,
    },
    Estimate {
        column: "driveshaft_inertia_kg_m2",
        label: "driveshaft inertia",
        kind: Kind::Inertia,
        value: 0.05,
    },
    Estimate {
        column: "rear_axle_inertia_kg_m2",
        label: "rear axle inertia",
        kind: Kind::Inertia,
        value: 3.0,
    },
    Estimate {
        column: "front_axle_inertia_kg_m2",
        label: "front wheels inertia",
        kind: Kind::Inertia,
        value: 1.0,
    },
    Estimate {
        column: "wheelbase_mm",
        label: "wheelbase",
        kind: Kind::Length,
        value: 2700.0,
    },
    Estimate {
        column: "cg_to_front_axle_mm",
        label: "center of gravity behind the front axle",
        kind: Kind::Length,
        value: 1600.0,
    },
    Estimate {
        column: "cg_height_mm",
        label: "center of gravity height",
        kind: Kind::Length,
        value: 500.0,
    },
    Estimate {
        column: "drag_area_m2",
        label: "drag area",
        kind: Kind::Area,
        value: 0.6,
    },
    Estimate {
        column: "tire_grip",
        label: "tire grip (hooked)",
        kind: Kind::Ratio,
        value: 2.0,
    },
    Estimate {
        column: "tire_grip_spinning",
        label: "tire grip (spinning)",
        kind: Kind::Ratio,
        value: 1.6,
    },
    Estimate {
        column: "flywheel_mass_kg",
        label: "flywheel",
        kind: Kind::VehicleMass,
        value: 12.0,
    },
    Estimate {
        column: "pressure_plate_mass_kg",
        label: "pressure plate",
        kind: Kind::VehicleMass,
        value: 8.0,
    },
];

/// Driveline efficiency on torque, first gear (estimate from memory; said on the page).
pub const DRIVELINE_EFFICIENCY: f64 = 0.95;
/// Rolling-resistance coefficient of a slick on a prepared track (estimate from memory).
pub const ROLLING_RESISTANCE: f64 = 0.015;
/// Specific heat of grey iron plates, J/(kg·K) (Engineering ToolBox, "Metals – Specific
/// Heats", 460).
pub const PLATE_SPECIFIC_HEAT: f64 = 460.0;
/// Plate temperature at the start of a pass, °C (a clutch cooled to the air between rounds;
/// an assumption).
pub const PLATE_START_C: f64 = 30.0;
/// Seconds the page simulates.
pub const PREVIEW_SECONDS: f64 = 3.0;
/// Integration step of a stored build's launch previews, ms: the pages', the sheet's, the
/// forecast by slip energy's and the whole-launch fits' (the free calculation keeps its own
/// default, 0.5 ms). Four times that default, since the figures do not need it finer: the run
/// locates a lock, a hook-up and the onset of spin inside its step, and a stored build's μ is
/// constant, so halving this step moves the lock time by under 1e-6 s and the slip energy by
/// under 0.001 % on the reference launches (test below), far inside docs/engineering.md §17's
/// 1e-4 s. The 10 ms trace the charts draw is every fifth step, as before.
pub const PREVIEW_STEP_MS: f64 = 2.0;

/// The launch request of a stored build and which values were estimated.
#[derive(Debug, Clone, PartialEq)]
pub struct LaunchPlan {
    pub request: LaunchRequest,
    /// The estimates used, in declaration order.
    pub estimated: Vec<Estimate>,
}

/// The car's value in `column`, or the estimate (noted in `used`).
fn or_estimate(car: &CarInput, column: &str, used: &mut Vec<Estimate>) -> f64 {
    let stored = match column {
        "engine_inertia_kg_m2" => car.engine_inertia_kg_m2,
        "input_inertia_kg_m2" => car.input_inertia_kg_m2,
        "driveshaft_inertia_kg_m2" => car.driveshaft_inertia_kg_m2,
        "rear_axle_inertia_kg_m2" => car.rear_axle_inertia_kg_m2,
        "front_axle_inertia_kg_m2" => car.front_axle_inertia_kg_m2,
        "wheelbase_mm" => car.wheelbase_mm.map(Length::mm),
        "cg_to_front_axle_mm" => car.cg_to_front_axle_mm.map(Length::mm),
        "cg_height_mm" => car.cg_height_mm.map(Length::mm),
        "drag_area_m2" => car.drag_area_m2,
        "tire_grip" => car.tire_grip,
        "tire_grip_spinning" => car.tire_grip_spinning,
        "flywheel_mass_kg" => car.flywheel_mass_kg.map(Mass::kg),
        "pressure_plate_mass_kg" => car.pressure_plate_mass_kg.map(Mass::kg),
        _ => None,
    };
    stored.unwrap_or_else(|| {
        let e = ESTIMATES.iter().find(|e| e.column == column);
        debug_assert!(e.is_some(), "no estimate for {column}");
        if let Some(e) = e {
            used.push(*e);
        }
        e.map_or(f64::NAN, |e| e.value)
    })
}

/// Whether the car's record has what every launch preview needs beyond the estimates: its race
/// weight, first gear and final drive ratios and tire diameter (the launch speed can come from
/// a pass). Without them neither the forecast by energy nor the whole-launch friction can run.
pub fn launch_ready(car: &CarInput) -> bool {
    car.weight_kg.is_some()
        && car.first_gear_ratio.is_some()
        && car.final_drive_ratio.is_some()
        && car.tire_diameter_mm.is_some()
}

impl BuildAsOf<'_> {
    /// The launch preview request for `trial` from `launch_rpm` (the car's when `None`), in
    /// storage units, or what the records lack.
    pub fn launch_request(
        &self,
        trial: Trial,
        launch_rpm: Option<f64>,
    ) -> Result<LaunchPlan, Missing> {
        let clutch = self.capacity_request(trial)?;
        let car = self.car;
        let launch_rpm = launch_rpm
            .or(car.launch_rpm.map(EngineSpeed::rpm))
            .ok_or("Enter the car's typical launch speed.")?;
        let mass = car.weight_kg.ok_or("Enter the car's race weight.")?.kg();
        let first_gear_ratio = car
            .first_gear_ratio
            .ok_or("Enter the car's first gear ratio.")?;
        let final_drive_ratio = car
            .final_drive_ratio
            .ok_or("Enter the car's final drive ratio.")?;
        let tire_diameter = car
            .tire_diameter_mm
            .ok_or("Enter the car's tire diameter.")?
            .mm();
        let mut used = Vec::new();
        let mut v = |column: &str| or_estimate(car, column, &mut used);
        let engine_inertia = v("engine_inertia_kg_m2");
        let driveline = LaunchDriveline {
            first_gear_ratio,
            final_drive_ratio,
            efficiency: DRIVELINE_EFFICIENCY,
            input_inertia: v("input_inertia_kg_m2"),
            driveshaft_inertia: v("driveshaft_inertia_kg_m2"),
            rear_axle_inertia: v("rear_axle_inertia_kg_m2"),
            front_axle_inertia: v("front_axle_inertia_kg_m2"),
        };
        let cg_height = v("cg_height_mm");
        let vehicle = LaunchVehicle {
            mass,
            tire_diameter,
            wheelbase: v("wheelbase_mm"),
            cg_to_front_axle: v("cg_to_front_axle_mm"),
            cg_height,
            // Drag taken to act at the centre of gravity's height (an assumption).
            drag_height: cg_height,
            rolling_resistance: ROLLING_RESISTANCE,
            drag_area: v("drag_area_m2"),
            air_density: Some(DEFAULT_AIR_DENSITY),
            tire_grip: v("tire_grip"),
            tire_grip_spinning: v("tire_grip_spinning"),
        };
        let thermal = ThermalInput {
            pressure_plate_mass: v("pressure_plate_mass_kg"),
            flywheel_mass: v("flywheel_mass_kg"),
            specific_heat: PLATE_SPECIFIC_HEAT,
            start_temperature: PLATE_START_C,
            plate_share: None,
        };
        Ok(LaunchPlan {
            request: LaunchRequest {
                units: clutch.units,
                disc: clutch.disc,
                friction: LaunchFriction {
                    mu: clutch.friction.mu,
                    material: clutch.friction.material,
                    static_ratio: None,
                    mu_vs_temperature: None,
                },
                springs: clutch.springs,
                levers: clutch.levers,
                engine: LaunchEngine {
                    torque_curve: clutch.engine.torque_curve,
                    inertia: engine_inertia,
                    friction_torque: 0.0,
                },
                launch_rpm,
                driveline,
                vehicle,
                thermal: Some(thermal),
                step_ms: self.preview_step_ms,
                duration_s: PREVIEW_SECONDS,
            },
            estimated: used,
        })
    }
}

impl BuildAsOf<'_> {
    /// The launch preview's slip for `trial` from the car's launch speed, in one sentence
    /// (see [`clutch::launch::request::LaunchReport::slip_text`]), when the preview can run.
    pub fn launch_slip_text(&self, trial: Trial) -> Option<String> {
        let plan = self.launch_request(trial, None).ok()?;
        let valid = plan.request.validate().ok()?;
        let run = valid.model.simulate();
        Some(
            clutch::launch::request::LaunchReport::of(&run, valid.model.duration_s, valid.units)
                .slip_text(),
        )
    }
}

/// How far the preview's 60-ft time may differ from the car's recorded ones before the page says
/// so: 5 % (common shop practice, no published source; a launch model with estimated inputs is
/// not expected to be closer).
pub const SIXTY_FT_TOLERANCE_PCT: f64 = 5.0;

/// The car inputs that move a 60-ft time most, most first (traction, then weight transfer, then
/// the driveline's spin-up) [derived from the launch model: the traction limit with load
/// transfer, and the inertias the engine accelerates].
const SIXTY_FT_INPUTS: [&str; 7] = [
    "tire_grip",
    "cg_height_mm",
    "cg_to_front_axle_mm",
    "wheelbase_mm",
    "rear_axle_inertia_kg_m2",
    "tire_grip_spinning",
    "engine_inertia_kg_m2",
];

/// The preview's 60-ft time against the car's recorded ones.
#[derive(Debug, Clone, PartialEq)]
pub struct SixtyFtCheck {
    /// The fastest and slowest recorded, s, and how many.
    pub recorded: (f64, f64),
    pub passes: usize,
    /// (predicted − mean recorded) / mean recorded × 100.
    pub off_pct: f64,
    /// The estimated inputs (not yet in the car's record) most likely at fault, most first.
    pub suspects: Vec<&'static str>,
}

impl SixtyFtCheck {
    /// `predicted` (s) against `recorded` (s, any order); `estimated` the inputs the preview
    /// took from memory. None without a recorded time.
    pub fn of(predicted: f64, recorded: &[f64], estimated: &[Estimate]) -> Option<Self> {
        if recorded.is_empty() {
            return None;
        }
        let lo = recorded.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = recorded.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let mean = recorded.iter().sum::<f64>() / recorded.len() as f64;
        let suspects = SIXTY_FT_INPUTS
            .iter()
            .filter_map(|c| estimated.iter().find(|e| e.column == *c).map(|e| e.label))
            .collect();
        Some(Self {
            recorded: (lo, hi),
            passes: recorded.len(),
            off_pct: (predicted - mean) / mean * 100.0,
            suspects,
        })
    }

    /// Whether the preview is further from the record than [`SIXTY_FT_TOLERANCE_PCT`].
    pub fn differs(&self) -> bool {
        self.off_pct.abs() > SIXTY_FT_TOLERANCE_PCT
    }
}

/// `warnings` with `slip` (the launch preview's slip sentence) put beside the launch warning
/// (capacity at the launch speed at least engine torque), when there is one.
pub fn beside_launch_warning(mut warnings: Vec<String>, slip: Option<&str>) -> Vec<String> {
    if let Some(slip) = slip
        && let Some(w) = warnings
            .iter_mut()
            .find(|w| clutch::capacity::report::is_launch_grab(w))
    {
        w.push(' ');
        w.push_str(slip);
    }
    warnings
}

#[cfg(test)]
mod tests {
    use super::*;

    // The step check of docs/engineering.md §17 (halving the step moves the lock time by less
    // than 1e-4 s) made at the previews' step, on the reference launch of §18 [derived there],
    // on it with tires that spin mid-run (grips 1.4 / 1.12, 30 g of counterweight: two events
    // inside steps) and on it with μ falling with plate temperature (held through each step,
    // so the error is first order; stored builds' previews keep μ constant; the three points are
    // invented, a case for the check, not data). The slip energy,
    // which the forecast by energy sums, moves by under 0.01 %; the 60-ft time by under 1e-4 s.
    #[test]
    fn halving_the_previews_step_barely_moves_what_they_show() {
        use clutch::launch::request::LaunchRequest;
        type Change = fn(&mut LaunchRequest);
        let cases: [(&str, Change); 3] = [
            ("reference", |_| {}),
            ("spin mid-run", |r| {
                r.vehicle.tire_grip = 1.4;
                r.vehicle.tire_grip_spinning = 1.12;
                if let Some(l) = r.levers.as_mut() {
                    l.counterweight_g = 30.0;
                }
            }),
            ("fading μ", |r| {
                r.friction.mu_vs_temperature =
                    Some(vec![[20.0, 0.33], [80.0, 0.30], [200.0, 0.22]]);
            }),
        ];
        for (name, change) in cases {
            let mut req: LaunchRequest =
                serde_json::from_value(clutch::reference::launch()).expect("reference");
            change(&mut req);
            req.step_ms = PREVIEW_STEP_MS;
            let at_step = req.validate().expect("valid").model;
            let mut halved = at_step.clone();
            halved.step_s /= 2.0;
            let (a, b) = (at_step.simulate(), halved.simulate());
            let lock = |r: &clutch::launch::simulation::LaunchRun| r.lockup.expect("locks").time_s;
            assert!(
                (lock(&a) - lock(&b)).abs() < 1e-4,
                "{name}: lock {} vs {}",
                lock(&a),
                lock(&b)
            );
            let energy = (a.slip_energy_j - b.slip_energy_j).abs() / b.slip_energy_j;
            assert!(energy < 1e-4, "{name}: slip energy moved {energy:e}");
            if let (Some(x), Some(y)) = (a.sixty_ft_s, b.sixty_ft_s) {
                assert!((x - y).abs() < 1e-4, "{name}: 60 ft {x} vs {y}");
            }
        }
    }

    // [D] Issue 26's demo case: 1.86 s predicted against 1.38, 1.40 and 1.42 s recorded (mean
    // 1.40 s): 32.9 % slower, past the 5 % (common shop practice, no published source). The
    // suspects are the estimated inputs in the order that moves a 60-ft time most; inputs the
    // car's record has are not named.
    #[test]
    fn a_preview_far_from_the_recorded_sixty_feet_names_the_estimates() {
        let estimated: Vec<Estimate> = ESTIMATES
            .iter()
            .filter(|e| e.column != "cg_height_mm")
            .copied()
            .collect();
        let c = SixtyFtCheck::of(1.86, &[1.42, 1.38, 1.40], &estimated).expect("recorded");
        assert_eq!(c.recorded, (1.38, 1.42));
        assert_eq!(c.passes, 3);
        assert!((c.off_pct - 0.46 / 1.40 * 100.0).abs() < 1e-9);
        assert!(c.differs());
        assert_eq!(
            c.suspects[..3],
            [
                "tire grip (hooked)",
                "center of gravity behind the front axle",
                "wheelbase"
            ]
        );
        assert!(!c.suspects.contains(&"center of gravity height"));
        let close = SixtyFtCheck::of(1.45, &[1.38, 1.42], &[]).expect("recorded");
        assert!(
            !close.differs() && close.suspects.is_empty(),
            "3.6 % is within 5 %"
        );
        assert!(SixtyFtCheck::of(1.45, &[], &[]).is_none());
    }

    // 0.20 kg·m² = 4.746 lb·ft² (1 lb·ft² = 0.45359237 kg × 0.3048² m², NIST SP 811 App. B.8).
    #[test]
    fn an_estimate_reads_in_the_shop_units() {
        assert_eq!(
            ESTIMATES[0].text(Units::Imperial),
            "engine inertia 4.75 lb·ft²"
        );
        assert_eq!(
            ESTIMATES[0].text(Units::Metric),
            "engine inertia 0.200 kg·m²"
        );
        // 2700 mm = 106.3 in: three figures.
        assert_eq!(ESTIMATES[5].text(Units::Imperial), "wheelbase 106 in");
    }

    #[test]
    fn every_estimate_names_a_car_field_and_passes_its_limit() {
        use crate::records::field::{Record, Value};
        for e in ESTIMATES {
            let field = CarInput::field(e.column).expect("a car field");
            match field.value {
                Value::Number { limit, .. } => assert!(limit.admits(e.value), "{}", e.column),
                _ => panic!("{} is not a number", e.column),
            }
            let mut used = Vec::new();
            assert_eq!(
                or_estimate(&CarInput::default(), e.column, &mut used),
                e.value
            );
            assert_eq!(used, vec![e]);
        }
    }
}
