//! A customer's car: what the clutch calculations need to know about the drivetrain.

use serde::{Deserialize, Serialize};

use super::{Bound, Checked, FieldErrors, FormData, FormReader, Rules};
use crate::clutch::units::Units;

#[derive(Debug, Clone, Default, PartialEq, Deserialize, Serialize, sqlx::FromRow)]
#[serde(default)]
pub struct CarInput {
    pub description: String,
    pub engine: String,
    pub weight_kg: Option<f64>,
    pub transmission: String,
    pub rated_input_torque_nm: Option<f64>,
    pub first_gear_ratio: Option<f64>,
    pub final_drive_ratio: Option<f64>,
    pub tire_diameter_mm: Option<f64>,
    pub launch_rpm: Option<f64>,
    /// Engine torque curve as `[rpm, N*m]` pairs (dyno points); may be empty.
    #[sqlx(json)]
    pub torque_curve_nm: Vec<[f64; 2]>,
    pub notes: String,
}

impl CarInput {
    pub fn from_form(r: &mut FormReader) -> Self {
        let units = r.units;
        Self {
            description: r.text("description"),
            engine: r.text("engine"),
            weight_kg: r.opt_number("weight").map(|w| units.weight_to_kg(w)),
            transmission: r.text("transmission"),
            rated_input_torque_nm: r.opt_torque("rated_input_torque"),
            first_gear_ratio: r.opt_number("first_gear_ratio"),
            final_drive_ratio: r.opt_number("final_drive_ratio"),
            tire_diameter_mm: r.opt_length("tire_diameter"),
            launch_rpm: r.opt_number("launch_rpm"),
            torque_curve_nm: r.torque_table("torque_curve"),
            notes: r.text("notes"),
        }
    }

    pub fn check(mut self, mut errors: FieldErrors) -> Result<Checked<Self>, FieldErrors> {
        use Bound::{Excl, Incl};
        let mut rules = Rules {
            errors: &mut errors,
        };
        rules.text("description", &self.description, true, 200);
        rules.text("engine", &self.engine, false, 200);
        rules.text("transmission", &self.transmission, false, 200);
        rules.text("notes", &self.notes, false, 4000);
        rules.opt_range("weight_kg", self.weight_kg, Incl(200.0), Incl(5000.0));
        rules.opt_range(
            "rated_input_torque_nm",
            self.rated_input_torque_nm,
            Excl(0.0),
            Incl(20_000.0),
        );
        rules.opt_range(
            "first_gear_ratio",
            self.first_gear_ratio,
            Incl(0.5),
            Incl(10.0),
        );
        rules.opt_range(
            "final_drive_ratio",
            self.final_drive_ratio,
            Incl(1.0),
            Incl(10.0),
        );
        rules.opt_range(
            "tire_diameter_mm",
            self.tire_diameter_mm,
            Incl(300.0),
            Incl(1500.0),
        );
        rules.opt_range("launch_rpm", self.launch_rpm, Incl(500.0), Incl(15_000.0));
        if !self.torque_curve_nm.is_empty() {
            let points: Vec<(f64, f64)> =
                self.torque_curve_nm.iter().map(|p| (p[0], p[1])).collect();
            match crate::clutch::torque_curve::TorqueCurve::new(&points, "torque_curve_nm") {
                Ok(curve) => self.torque_curve_nm = curve.points().map(|(r, t)| [r, t]).collect(),
                Err(err) => errors.add(&err.field, err.message),
            }
        }
        errors.into_result(Checked(self))
    }

    /// The form prefilled from a stored car, in the shop's units.
    pub fn to_form(&self, units: Units) -> FormData {
        let mut f = FormData::default();
        f.set("description", &self.description);
        f.set("engine", &self.engine);
        f.set_num("weight", self.weight_kg.map(|w| units.kg_to_weight(w)), 0);
        f.set("transmission", &self.transmission);
        f.set_num(
            "rated_input_torque",
            self.rated_input_torque_nm.map(|t| units.nm_to_torque(t)),
            0,
        );
        f.set_num("first_gear_ratio", self.first_gear_ratio, 3);
        f.set_num("final_drive_ratio", self.final_drive_ratio, 3);
        f.set_num(
            "tire_diameter",
            self.tire_diameter_mm.map(|d| units.mm_to_length(d)),
            2,
        );
        f.set_num("launch_rpm", self.launch_rpm, 0);
        let table: Vec<String> = self
            .torque_curve_nm
            .iter()
            .map(|[rpm, nm]| format!("{rpm:.0},{:.1}", units.nm_to_torque(*nm)))
            .collect();
        f.set("torque_curve", table.join("\n"));
        f.set("notes", &self.notes);
        f
    }
}
