//! A clutch build: the hardware as assembled on a car.

use serde::{Deserialize, Serialize};

use super::{Bound, Checked, FieldErrors, FormData, FormReader, Rules};
use crate::clutch::friction::FacingMaterial;
use crate::clutch::units::Units;

#[derive(Debug, Clone, PartialEq, Deserialize, Serialize, sqlx::FromRow)]
#[serde(default)]
pub struct BuildInput {
    pub label: String,
    pub disc_count: i64,
    /// `organic`, `molded`, `cermet` or `sintered_iron`.
    pub facing_material: String,
    pub facing_od_mm: f64,
    pub facing_id_mm: f64,
    pub disc_thickness_new_mm: Option<f64>,
    pub disc_thickness_min_mm: Option<f64>,
    pub spring_count: i64,
    pub spring_description: String,
    pub spring_rate_n_per_mm: Option<f64>,
    /// Adjuster thread: threads per inch, or a metric pitch (exactly one).
    pub adjuster_tpi: Option<f64>,
    pub adjuster_pitch_mm: Option<f64>,
    /// Base compression directly, or the cover heights free and installed.
    pub base_compression_mm: Option<f64>,
    pub cover_height_free_mm: Option<f64>,
    pub cover_height_installed_mm: Option<f64>,
    pub lever_count: i64,
    pub lever_mass_g: f64,
    pub lever_cg_radius_mm: Option<f64>,
    pub lever_arm_ratio: Option<f64>,
    /// Measured gain: clamp N per gram of counterweight at 1000 rpm, per lever.
    pub lever_gain_n_per_g: Option<f64>,
    /// Shim thicknesses in mm, in the order they come out.
    #[sqlx(json)]
    pub shim_stack_mm: Vec<f64>,
    pub shimming_limit_mm: Option<f64>,
    /// `active` or `retired`.
    pub status: String,
    pub notes: String,
}

impl Default for BuildInput {
    fn default() -> Self {
        Self {
            label: String::new(),
            disc_count: 1,
            facing_material: "organic".into(),
            facing_od_mm: f64::NAN,
            facing_id_mm: f64::NAN,
            disc_thickness_new_mm: None,
            disc_thickness_min_mm: None,
            spring_count: 0,
            spring_description: String::new(),
            spring_rate_n_per_mm: None,
            adjuster_tpi: None,
            adjuster_pitch_mm: None,
            base_compression_mm: None,
            cover_height_free_mm: None,
            cover_height_installed_mm: None,
            lever_count: 0,
            lever_mass_g: 0.0,
            lever_cg_radius_mm: None,
            lever_arm_ratio: None,
            lever_gain_n_per_g: None,
            shim_stack_mm: Vec::new(),
            shimming_limit_mm: None,
            status: "active".into(),
            notes: String::new(),
        }
    }
}

impl BuildInput {
    pub fn from_form(r: &mut FormReader) -> Self {
        let units = r.units;
        let thread_value = r.opt_number("adjuster_thread");
        let (adjuster_tpi, adjuster_pitch_mm) = match r.text("adjuster_thread_kind").as_str() {
            "metric" => (None, thread_value),
            _ => (thread_value, None),
        };
        Self {
            label: r.text("label"),
            disc_count: r.integer("disc_count"),
            facing_material: r.text("facing_material"),
            facing_od_mm: r.length("facing_od"),
            facing_id_mm: r.length("facing_id"),
            disc_thickness_new_mm: r.opt_length("disc_thickness_new"),
            disc_thickness_min_mm: r.opt_length("disc_thickness_min"),
            spring_count: r.integer("spring_count"),
            spring_description: r.text("spring_description"),
            spring_rate_n_per_mm: r.opt_rate("spring_rate"),
            adjuster_tpi,
            adjuster_pitch_mm,
            base_compression_mm: r.opt_length("base_compression"),
            cover_height_free_mm: r.opt_length("cover_height_free"),
            cover_height_installed_mm: r.opt_length("cover_height_installed"),
            lever_count: r.opt_integer("lever_count", 0),
            lever_mass_g: r.opt_number("lever_mass_g").unwrap_or(0.0),
            lever_cg_radius_mm: r.opt_length("lever_cg_radius"),
            lever_arm_ratio: r.opt_number("lever_arm_ratio"),
            lever_gain_n_per_g: r.opt_number("lever_gain").map(|g| units.force_to_n(g)),
            shim_stack_mm: r.length_list("shim_stack"),
            shimming_limit_mm: r.opt_length("shimming_limit"),
            status: match r.text("status").as_str() {
                "" => "active".into(),
                s => s.into(),
            },
            notes: r.text("notes"),
        }
    }

    pub fn check(self, mut errors: FieldErrors) -> Result<Checked<Self>, FieldErrors> {
        use Bound::{Excl, Incl};
        let mut rules = Rules {
            errors: &mut errors,
        };
        rules.text("label", &self.label, false, 120);
        rules.text("spring_description", &self.spring_description, false, 200);
        rules.text("notes", &self.notes, false, 4000);
        rules.range("disc_count", self.disc_count as f64, Incl(1.0), Incl(3.0));
        rules.range(
            "spring_count",
            self.spring_count as f64,
            Incl(1.0),
            Incl(24.0),
        );
        rules.range(
            "lever_count",
            self.lever_count as f64,
            Incl(0.0),
            Incl(24.0),
        );
        if rules.range("facing_od_mm", self.facing_od_mm, Excl(0.0), Incl(400.0))
            && rules.range("facing_id_mm", self.facing_id_mm, Excl(0.0), Incl(400.0))
            && self.facing_id_mm >= self.facing_od_mm
        {
            rules
                .errors
                .add("facing_id_mm", "must be smaller than the outer diameter");
        }
        rules.opt_range(
            "disc_thickness_new_mm",
            self.disc_thickness_new_mm,
            Excl(0.0),
            Incl(30.0),
        );
        rules.opt_range(
            "disc_thickness_min_mm",
            self.disc_thickness_min_mm,
            Excl(0.0),
            Incl(30.0),
        );
        if let (Some(new), Some(min)) = (self.disc_thickness_new_mm, self.disc_thickness_min_mm)
            && min >= new
        {
            rules.errors.add(
                "disc_thickness_min_mm",
                "must be less than the new thickness",
            );
        }
        rules.opt_range(
            "spring_rate_n_per_mm",
            self.spring_rate_n_per_mm,
            Excl(0.0),
            Incl(2000.0),
        );
        match (self.adjuster_tpi, self.adjuster_pitch_mm) {
            (Some(_), Some(_)) => rules.errors.add(
                "adjuster_pitch_mm",
                "give threads per inch or a metric pitch, not both",
            ),
            (tpi, pitch) => {
                rules.opt_range("adjuster_tpi", tpi, Incl(4.0), Incl(80.0));
                rules.opt_range("adjuster_pitch_mm", pitch, Incl(0.2), Incl(6.0));
            }
        }
        rules.opt_range(
            "base_compression_mm",
            self.base_compression_mm,
            Incl(0.0),
            Incl(50.0),
        );
        rules.opt_range(
            "cover_height_free_mm",
            self.cover_height_free_mm,
            Excl(0.0),
            Incl(200.0),
        );
        rules.opt_range(
            "cover_height_installed_mm",
            self.cover_height_installed_mm,
            Excl(0.0),
            Incl(200.0),
        );
        match (self.cover_height_free_mm, self.cover_height_installed_mm) {
            (Some(free), Some(inst)) if inst > free => rules.errors.add(
                "cover_height_installed_mm",
                "installed height must not exceed the free height",
            ),
            (Some(_), None) => rules
                .errors
                .add("cover_height_installed_mm", "give both cover heights"),
            (None, Some(_)) => rules
                .errors
                .add("cover_height_free_mm", "give both cover heights"),
            _ => {}
        }
        rules.range("lever_mass_g", self.lever_mass_g, Incl(0.0), Incl(2000.0));
        rules.opt_range(
            "lever_cg_radius_mm",
            self.lever_cg_radius_mm,
            Excl(0.0),
            Incl(300.0),
        );
        rules.opt_range(
            "lever_arm_ratio",
            self.lever_arm_ratio,
            Excl(0.0),
            Incl(20.0),
        );
        rules.opt_range(
            "lever_gain_n_per_g",
            self.lever_gain_n_per_g,
            Excl(0.0),
            Incl(100.0),
        );
        let has_geometry = self.lever_cg_radius_mm.is_some() && self.lever_arm_ratio.is_some();
        if self.lever_count > 0 && !has_geometry && self.lever_gain_n_per_g.is_none() {
            rules.errors.add(
                "lever_gain_n_per_g",
                "levers need a measured gain, or both CG radius and arm ratio",
            );
        }
        if self.shim_stack_mm.len() > 20 {
            rules.errors.add("shim_stack_mm", "at most 20 shims");
        }
        for (i, shim) in self.shim_stack_mm.iter().enumerate() {
            if !rules.range(&format!("shim_stack_mm[{i}]"), *shim, Excl(0.0), Incl(5.0)) {
                break;
            }
        }
        rules.opt_range(
            "shimming_limit_mm",
            self.shimming_limit_mm,
            Excl(0.0),
            Incl(10.0),
        );
        if FacingMaterial::from_key(&self.facing_material).is_none() {
            errors.add(
                "facing_material",
                "choose organic, molded, cermet or sintered_iron",
            );
        }
        if !matches!(self.status.as_str(), "active" | "retired") {
            errors.add("status", "choose active or retired");
        }
        errors.into_result(Checked(self))
    }

    /// The form prefilled from a stored build, in the shop's units.
    pub fn to_form(&self, units: Units) -> FormData {
        let mut f = FormData::default();
        let len = |v: f64| units.mm_to_length(v);
        let d = super::length_decimals(units);
        f.set("label", &self.label);
        f.set_num("disc_count", Some(self.disc_count as f64), 0);
        f.set("facing_material", &self.facing_material);
        f.set_num("facing_od", Some(len(self.facing_od_mm)), d);
        f.set_num("facing_id", Some(len(self.facing_id_mm)), d);
        f.set_num("disc_thickness_new", self.disc_thickness_new_mm.map(len), d);
        f.set_num("disc_thickness_min", self.disc_thickness_min_mm.map(len), d);
        f.set_num("spring_count", Some(self.spring_count as f64), 0);
        f.set("spring_description", &self.spring_description);
        f.set_num(
            "spring_rate",
            self.spring_rate_n_per_mm.map(|k| units.n_per_mm_to_rate(k)),
            1,
        );
        match (self.adjuster_tpi, self.adjuster_pitch_mm) {
            (_, Some(p)) => {
                f.set("adjuster_thread_kind", "metric");
                f.set_num("adjuster_thread", Some(p), 3);
            }
            (tpi, None) => {
                f.set("adjuster_thread_kind", "tpi");
                f.set_num("adjuster_thread", tpi, 2);
            }
        }
        f.set_num("base_compression", self.base_compression_mm.map(len), d);
        f.set_num("cover_height_free", self.cover_height_free_mm.map(len), d);
        f.set_num(
            "cover_height_installed",
            self.cover_height_installed_mm.map(len),
            d,
        );
        f.set_num("lever_count", Some(self.lever_count as f64), 0);
        f.set_num("lever_mass_g", Some(self.lever_mass_g), 1);
        f.set_num("lever_cg_radius", self.lever_cg_radius_mm.map(len), d);
        f.set_num("lever_arm_ratio", self.lever_arm_ratio, 3);
        f.set_num(
            "lever_gain",
            self.lever_gain_n_per_g.map(|g| units.n_to_force(g)),
            4,
        );
        let shims: Vec<String> = self
            .shim_stack_mm
            .iter()
            .map(|s| format!("{:.*}", d, len(*s)))
            .collect();
        f.set("shim_stack", shims.join(", "));
        f.set_num("shimming_limit", self.shimming_limit_mm.map(len), d);
        f.set("status", &self.status);
        f.set("notes", &self.notes);
        f
    }
}
