//! A clutch build: the hardware as assembled on a car.

use super::measure::{Grams, Length, LeverGain, SpringRate};
use serde::{Deserialize, Serialize};

use super::field::{self, Ctx, Field, Record, Value};
use super::{Checked, FieldErrors};
use clutch::capacity::friction::FacingMaterial;
use clutch::quantity::limits;

#[derive(Debug, Clone, PartialEq, Deserialize, Serialize, sqlx::FromRow, utoipa::ToSchema)]
#[serde(default)]
pub struct BuildInput {
    pub label: String,
    pub disc_count: i64,
    /// `organic`, `molded`, `cermet` or `sintered_iron`.
    pub facing_material: String,
    pub facing_od_mm: Length,
    pub facing_id_mm: Length,
    pub disc_thickness_new_mm: Option<Length>,
    pub disc_thickness_min_mm: Option<Length>,
    pub spring_count: i64,
    pub spring_description: String,
    pub spring_rate_n_per_mm: Option<SpringRate>,
    /// Solid height of the springs (coils touching), mm.
    pub spring_solid_height_mm: Option<Length>,
    /// Further spring compression at full release (the plate's lift at the springs), mm;
    /// absent: counted as 0.
    pub release_travel_mm: Option<Length>,
    /// Adjuster thread: threads per inch, or a metric pitch (exactly one).
    pub adjuster_tpi: Option<f64>,
    pub adjuster_pitch_mm: Option<Length>,
    /// Base compression directly, or the cover heights free and installed.
    pub base_compression_mm: Option<Length>,
    pub cover_height_free_mm: Option<Length>,
    pub cover_height_installed_mm: Option<Length>,
    pub lever_count: i64,
    pub lever_mass_g: Grams,
    pub lever_cg_radius_mm: Option<Length>,
    pub lever_arm_ratio: Option<f64>,
    /// Radius of the lever body's own centre of gravity, mm (absent: its mass counts at
    /// `lever_cg_radius_mm`).
    pub lever_body_cg_radius_mm: Option<Length>,
    /// Measured gain: clamp N per gram of counterweight at 1000 rpm, per lever.
    pub lever_gain_n_per_g: Option<LeverGain>,
    /// Shim thicknesses in mm, in the order they come out.
    #[sqlx(json)]
    pub shim_stack_mm: Vec<Length>,
    pub shimming_limit_mm: Option<Length>,
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
            facing_od_mm: Length::from_mm(f64::NAN),
            facing_id_mm: Length::from_mm(f64::NAN),
            disc_thickness_new_mm: None,
            disc_thickness_min_mm: None,
            spring_count: 0,
            spring_description: String::new(),
            spring_rate_n_per_mm: None,
            spring_solid_height_mm: None,
            release_travel_mm: None,
            adjuster_tpi: None,
            adjuster_pitch_mm: None,
            base_compression_mm: None,
            cover_height_free_mm: None,
            cover_height_installed_mm: None,
            lever_count: 0,
            lever_mass_g: Grams::from_g(0.0),
            lever_cg_radius_mm: None,
            lever_arm_ratio: None,
            lever_body_cg_radius_mm: None,
            lever_gain_n_per_g: None,
            shim_stack_mm: Vec::new(),
            shimming_limit_mm: None,
            status: "active".into(),
            notes: String::new(),
        }
    }
}

impl BuildInput {
    /// Checks a new build (`before` None) or an edit of `before`: every field, the rules
    /// between them, and that an edit keeps the adjuster thread the build had (adjuster turns
    /// become spring compression through it; blanking it would leave every setup unreadable).
    pub fn check_edit(
        self,
        before: Option<&BuildInput>,
        ctx: &Ctx,
        errors: FieldErrors,
    ) -> Result<Checked<Self>, FieldErrors> {
        let mut errors = errors;
        let threadless = |b: &BuildInput| b.adjuster_tpi.is_none() && b.adjuster_pitch_mm.is_none();
        if let Some(before) = before.filter(|b| !threadless(b))
            && threadless(&self)
        {
            let column = if before.adjuster_pitch_mm.is_some() {
                "adjuster_pitch_mm"
            } else {
                "adjuster_tpi"
            };
            Self::fault(
                &mut errors,
                column,
                "keep the adjuster thread (threads per inch or a metric pitch): the setups' adjuster turns are read through it",
            );
        }
        field::check(self, ctx, errors)
    }
}

impl Record for BuildInput {
    const FIELDS: &'static [Field<Self>] = &[
        Field {
            column: "label",
            form: "label",
            label: "Name for this build",
            value: Value::Text {
                max_chars: 120,
                required: false,
                get: |r| &r.label,
                set: |r, v| r.label = v,
            },
        },
        Field {
            column: "disc_count",
            form: "disc_count",
            label: "Discs",
            value: Value::Whole {
                limit: limits::DISC_COUNT,
                default: None,
                get: |r| r.disc_count,
                set: |r, v| r.disc_count = v,
            },
        },
        Field {
            column: "facing_material",
            form: "facing_material",
            label: "Facing material",
            value: Value::Choice {
                options: &FacingMaterial::CHOICES,
                get: |r| &r.facing_material,
                set: |r, v| r.facing_material = v,
            },
        },
        Field {
            column: "facing_od_mm",
            form: "facing_od",
            label: "Facing outer diameter",
            value: Value::Number {
                limit: limits::FACING_DIAMETER,
                required: true,
                get: |r| Some(r.facing_od_mm.mm()),
                set: |r, v| r.facing_od_mm = Length::from_mm(v.unwrap_or(f64::NAN)),
            },
        },
        Field {
            column: "facing_id_mm",
            form: "facing_id",
            label: "Facing inner diameter",
            value: Value::Number {
                limit: limits::FACING_DIAMETER,
                required: true,
                get: |r| Some(r.facing_id_mm.mm()),
                set: |r, v| r.facing_id_mm = Length::from_mm(v.unwrap_or(f64::NAN)),
            },
        },
        Field {
            column: "disc_thickness_new_mm",
            form: "disc_thickness_new",
            label: "Disc thickness, new",
            value: Value::Number {
                limit: limits::DISC_THICKNESS,
                required: false,
                get: |r| r.disc_thickness_new_mm.map(Length::mm),
                set: |r, v| r.disc_thickness_new_mm = v.map(Length::from_mm),
            },
        },
        Field {
            column: "disc_thickness_min_mm",
            form: "disc_thickness_min",
            label: "Disc thickness, minimum",
            value: Value::Number {
                limit: limits::DISC_THICKNESS,
                required: false,
                get: |r| r.disc_thickness_min_mm.map(Length::mm),
                set: |r, v| r.disc_thickness_min_mm = v.map(Length::from_mm),
            },
        },
        Field {
            column: "spring_count",
            form: "spring_count",
            label: "Springs",
            value: Value::Whole {
                limit: limits::SPRING_COUNT,
                default: None,
                get: |r| r.spring_count,
                set: |r, v| r.spring_count = v,
            },
        },
        Field {
            column: "spring_description",
            form: "spring_description",
            label: "Spring part description",
            value: Value::Text {
                max_chars: 200,
                required: false,
                get: |r| &r.spring_description,
                set: |r, v| r.spring_description = v,
            },
        },
        Field {
            column: "spring_rate_n_per_mm",
            form: "spring_rate",
            label: "Nominal spring rate",
            value: Value::Number {
                limit: limits::SPRING_RATE,
                required: false,
                get: |r| r.spring_rate_n_per_mm.map(SpringRate::n_per_mm),
                set: |r, v| r.spring_rate_n_per_mm = v.map(SpringRate::from_n_per_mm),
            },
        },
        Field {
            column: "spring_solid_height_mm",
            form: "spring_solid_height",
            label: "Spring solid height",
            value: Value::Number {
                limit: limits::SPRING_FREE_LENGTH,
                required: false,
                get: |r| r.spring_solid_height_mm.map(Length::mm),
                set: |r, v| r.spring_solid_height_mm = v.map(Length::from_mm),
            },
        },
        Field {
            column: "release_travel_mm",
            form: "release_travel",
            label: "Spring release travel",
            value: Value::Number {
                limit: limits::RELEASE_TRAVEL,
                required: false,
                get: |r| r.release_travel_mm.map(Length::mm),
                set: |r, v| r.release_travel_mm = v.map(Length::from_mm),
            },
        },
        Field {
            column: "adjuster_tpi",
            form: "adjuster_tpi",
            label: "Adjuster thread, threads per inch",
            value: Value::Number {
                limit: limits::ADJUSTER_TPI,
                required: false,
                get: |r| r.adjuster_tpi,
                set: |r, v| r.adjuster_tpi = v,
            },
        },
        Field {
            column: "adjuster_pitch_mm",
            form: "adjuster_pitch",
            label: "Adjuster thread, metric pitch",
            value: Value::Number {
                limit: limits::ADJUSTER_PITCH,
                required: false,
                get: |r| r.adjuster_pitch_mm.map(Length::mm),
                set: |r, v| r.adjuster_pitch_mm = v.map(Length::from_mm),
            },
        },
        Field {
            column: "base_compression_mm",
            form: "base_compression",
            label: "Base compression",
            value: Value::Number {
                limit: limits::BASE_COMPRESSION,
                required: false,
                get: |r| r.base_compression_mm.map(Length::mm),
                set: |r, v| r.base_compression_mm = v.map(Length::from_mm),
            },
        },
        Field {
            column: "cover_height_free_mm",
            form: "cover_height_free",
            label: "Cover height, springs free",
            value: Value::Number {
                limit: limits::COVER_HEIGHT,
                required: false,
                get: |r| r.cover_height_free_mm.map(Length::mm),
                set: |r, v| r.cover_height_free_mm = v.map(Length::from_mm),
            },
        },
        Field {
            column: "cover_height_installed_mm",
            form: "cover_height_installed",
            label: "Cover height, installed",
            value: Value::Number {
                limit: limits::COVER_HEIGHT,
                required: false,
                get: |r| r.cover_height_installed_mm.map(Length::mm),
                set: |r, v| r.cover_height_installed_mm = v.map(Length::from_mm),
            },
        },
        Field {
            column: "lever_count",
            form: "lever_count",
            label: "Levers",
            value: Value::Whole {
                limit: limits::LEVER_COUNT,
                default: Some(0),
                get: |r| r.lever_count,
                set: |r, v| r.lever_count = v,
            },
        },
        Field {
            column: "lever_mass_g",
            form: "lever_mass_g",
            label: "Lever mass (each)",
            value: Value::Number {
                limit: limits::LEVER_MASS,
                required: false,
                get: |r| Some(r.lever_mass_g.g()),
                set: |r, v| r.lever_mass_g = Grams::from_g(v.unwrap_or(0.0)),
            },
        },
        Field {
            column: "lever_cg_radius_mm",
            form: "lever_cg_radius",
            label: "Lever CG radius",
            value: Value::Number {
                limit: limits::LEVER_CG_RADIUS,
                required: false,
                get: |r| r.lever_cg_radius_mm.map(Length::mm),
                set: |r, v| r.lever_cg_radius_mm = v.map(Length::from_mm),
            },
        },
        Field {
            column: "lever_arm_ratio",
            form: "lever_arm_ratio",
            label: "Lever arm ratio",
            value: Value::Number {
                limit: limits::LEVER_ARM_RATIO,
                required: false,
                get: |r| r.lever_arm_ratio,
                set: |r, v| r.lever_arm_ratio = v,
            },
        },
        Field {
            column: "lever_body_cg_radius_mm",
            form: "lever_body_cg_radius",
            label: "Lever body CG radius",
            value: Value::Number {
                limit: limits::LEVER_CG_RADIUS,
                required: false,
                get: |r| r.lever_body_cg_radius_mm.map(Length::mm),
                set: |r, v| r.lever_body_cg_radius_mm = v.map(Length::from_mm),
            },
        },
        Field {
            column: "lever_gain_n_per_g",
            form: "lever_gain",
            label: "Measured lever gain (per g at 1000 rpm)",
            value: Value::Number {
                limit: limits::LEVER_GAIN,
                required: false,
                get: |r| r.lever_gain_n_per_g.map(LeverGain::n_per_g),
                set: |r, v| r.lever_gain_n_per_g = v.map(LeverGain::from_n_per_g),
            },
        },
        Field {
            column: "shim_stack_mm",
            form: "shim_stack",
            label: "Shim stack",
            value: Value::List {
                limit: limits::SHIM,
                max_items: limits::SHIM_COUNT,
                item: "shim",
                get: |r| r.shim_stack_mm.iter().map(|x| x.mm()).collect(),
                set: |r, v| r.shim_stack_mm = v.into_iter().map(Length::from_mm).collect(),
            },
        },
        Field {
            column: "shimming_limit_mm",
            form: "shimming_limit",
            label: "Shimming limit",
            value: Value::Number {
                limit: limits::SHIMMING_LIMIT,
                required: false,
                get: |r| r.shimming_limit_mm.map(Length::mm),
                set: |r, v| r.shimming_limit_mm = v.map(Length::from_mm),
            },
        },
        Field {
            column: "status",
            form: "status",
            label: "Status",
            value: Value::Choice {
                options: &[("active", "active"), ("retired", "retired")],
                get: |r| &r.status,
                set: |r, v| r.status = if v.is_empty() { "active".into() } else { v },
            },
        },
        Field {
            column: "notes",
            form: "notes",
            label: "Notes",
            value: Value::Text {
                max_chars: 4000,
                required: false,
                get: |r| &r.notes,
                set: |r, v| r.notes = v,
            },
        },
    ];

    fn check_more(&mut self, _: &Ctx, errors: &mut FieldErrors) {
        // Rules between two fields only speak when both fields passed their own checks.
        let ok = |errors: &FieldErrors, columns: &[&str]| columns.iter().all(|c| !errors.has(c));
        if ok(errors, &["facing_od_mm", "facing_id_mm"]) && self.facing_id_mm >= self.facing_od_mm {
            Self::fault(
                errors,
                "facing_id_mm",
                "must be smaller than the outer diameter",
            );
        }
        if let (Some(new), Some(min)) = (self.disc_thickness_new_mm, self.disc_thickness_min_mm)
            && ok(errors, &["disc_thickness_new_mm", "disc_thickness_min_mm"])
            && min >= new
        {
            Self::fault(
                errors,
                "disc_thickness_min_mm",
                "must be less than the new thickness",
            );
        }
        if self.adjuster_tpi.is_some() && self.adjuster_pitch_mm.is_some() {
            Self::fault(
                errors,
                "adjuster_pitch_mm",
                "give threads per inch or a metric pitch, not both",
            );
        }
        match (self.cover_height_free_mm, self.cover_height_installed_mm) {
            (Some(free), Some(inst))
                if inst > free
                    && ok(
                        errors,
                        &["cover_height_free_mm", "cover_height_installed_mm"],
                    ) =>
            {
                Self::fault(
                    errors,
                    "cover_height_installed_mm",
                    "installed height must not exceed the free height",
                )
            }
            (Some(_), None) => Self::fault(
                errors,
                "cover_height_installed_mm",
                "give both cover heights",
            ),
            (None, Some(_)) => {
                Self::fault(errors, "cover_height_free_mm", "give both cover heights")
            }
            _ => {}
        }
        let has_geometry = self.lever_cg_radius_mm.is_some() && self.lever_arm_ratio.is_some();
        if self.lever_count > 0 && !has_geometry && self.lever_gain_n_per_g.is_none() {
            Self::fault(
                errors,
                "lever_gain_n_per_g",
                "levers need a measured gain, or both CG radius and arm ratio",
            );
        }
        if self.lever_body_cg_radius_mm.is_some()
            && (!has_geometry || self.lever_gain_n_per_g.is_some())
        {
            Self::fault(
                errors,
                "lever_body_cg_radius_mm",
                "works with the CG radius and arm ratio, not with a measured gain",
            );
        }
    }
}
