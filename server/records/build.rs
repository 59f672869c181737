//! A clutch build: the hardware as assembled on a car.

use super::measure::{Grams, Length, LeverGain, SpringRate};
use serde::{Deserialize, Serialize};

use super::field::{self, Ctx, Field, Record, field};
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
        field!(text label, "label", "Name for this build", 120).hint("optional"),
        field!(whole disc_count, "disc_count", "Discs", limits::DISC_COUNT),
        field!(
            choice facing_material, "facing_material", "Facing material", &FacingMaterial::CHOICES
        ),
        field!(
            number facing_od_mm, "facing_od", "Facing outer diameter", limits::FACING_DIAMETER,
            required
        ),
        field!(
            number facing_id_mm, "facing_id", "Facing inner diameter", limits::FACING_DIAMETER,
            required
        ),
        field!(
            number disc_thickness_new_mm, "disc_thickness_new", "Disc thickness, new",
            limits::DISC_THICKNESS
        ),
        field!(
            number disc_thickness_min_mm, "disc_thickness_min", "Disc thickness, minimum",
            limits::DISC_THICKNESS
        ),
        field!(whole spring_count, "spring_count", "Springs", limits::SPRING_COUNT),
        field!(text spring_description, "spring_description", "Spring part description", 200),
        field!(
            number spring_rate_n_per_mm, "spring_rate", "Nominal spring rate", limits::SPRING_RATE
        )
        .hint("until bench tested"),
        field!(
            number spring_solid_height_mm, "spring_solid_height", "Spring solid height",
            limits::SPRING_FREE_LENGTH
        )
        .hint("coils touching; optional: checks coil bind once free lengths are bench tested"),
        field!(
            number release_travel_mm, "release_travel", "Spring release travel",
            limits::RELEASE_TRAVEL
        )
        .hint("how much further the springs compress at full release; blank counts as 0"),
        field!(
            number adjuster_tpi, "adjuster_tpi", "Adjuster thread, threads per inch",
            limits::ADJUSTER_TPI
        ),
        field!(
            number adjuster_pitch_mm, "adjuster_pitch", "Adjuster thread, metric pitch",
            limits::ADJUSTER_PITCH
        )
        .hint("instead of threads per inch"),
        field!(
            number base_compression_mm, "base_compression", "Base compression",
            limits::BASE_COMPRESSION
        )
        .hint("instead of the two cover heights"),
        field!(
            number cover_height_free_mm, "cover_height_free", "Cover height, springs free",
            limits::COVER_HEIGHT
        ),
        field!(
            number cover_height_installed_mm, "cover_height_installed", "Cover height, installed",
            limits::COVER_HEIGHT
        ),
        field!(whole lever_count, "lever_count", "Levers", limits::LEVER_COUNT, default 0),
        field!(number lever_mass_g, "lever_mass_g", "Lever mass (each)", limits::LEVER_MASS),
        field!(
            number lever_cg_radius_mm, "lever_cg_radius", "Lever CG radius", limits::LEVER_CG_RADIUS
        ),
        field!(
            number lever_arm_ratio, "lever_arm_ratio", "Lever arm ratio", limits::LEVER_ARM_RATIO
        )
        .unit(":1"),
        field!(
            number lever_body_cg_radius_mm, "lever_body_cg_radius", "Lever body CG radius",
            limits::LEVER_CG_RADIUS
        )
        .hint("its own centre of gravity; blank: the lever counts at the CG radius"),
        field!(
            number lever_gain_n_per_g, "lever_gain", "Measured lever gain (per g at 1000 rpm)",
            limits::LEVER_GAIN
        )
        .hint("instead of the lever mass and radii"),
        field!(
            list shim_stack_mm, "shim_stack", "Shim stack", limits::SHIM, limits::SHIM_COUNT, "shim"
        )
        .hint("in the order they come out, separated by commas"),
        field!(
            number shimming_limit_mm, "shimming_limit", "Shimming limit", limits::SHIMMING_LIMIT
        )
        .hint("growth before a shim is due"),
        field!(
            choice status, "status", "Status", &[("active", "active"), ("retired", "retired")],
            blank "active"
        ),
        field!(text notes, "notes", "Notes", 4000),
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
