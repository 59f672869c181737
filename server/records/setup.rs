//! A change of the tunable settings on a build: adjuster turns, counterweight, friction.

use super::measure::Grams;
use serde::{Deserialize, Serialize};

use super::FieldErrors;
use super::field::{Ctx, Field, Record, field};
use clutch::quantity::{Kind, limits};

#[derive(Debug, Clone, PartialEq, Deserialize, Serialize, sqlx::FromRow, utoipa::ToSchema)]
#[serde(default)]
pub struct SetupInput {
    pub changed_on: String,
    pub adjuster_turns: f64,
    /// Turns of each adjuster, when measured one by one (empty: all at `adjuster_turns`).
    #[sqlx(json)]
    pub adjuster_turns_each: Vec<f64>,
    /// Counterweight per lever, grams.
    pub counterweight_g: Grams,
    /// Friction coefficient assumed for this setup; empty uses the facing's nominal value.
    pub mu: Option<f64>,
    /// Keep the facing's nominal μ (e.g. a new disc) even when the build's calibration has
    /// enough steady passes (see `model::as_of::Friction`).
    pub nominal_mu: bool,
    pub note: String,
}

impl Default for SetupInput {
    fn default() -> Self {
        Self {
            changed_on: String::new(),
            adjuster_turns: f64::NAN,
            adjuster_turns_each: Vec::new(),
            counterweight_g: Grams::from_g(0.0),
            mu: None,
            nominal_mu: false,
            note: String::new(),
        }
    }
}

impl SetupInput {
    /// Whether the adjusters were recorded at different settings (they must all match).
    pub fn unequal_adjusters(&self) -> bool {
        !self.adjuster_turns_each.is_empty()
            && clutch::capacity::clamp::check_adjusters(
                &self.adjuster_turns_each,
                "adjuster_turns_each",
            )
            .is_ok_and(|c| c.unequal)
    }
}

impl Record for SetupInput {
    const FIELDS: &'static [Field<Self>] = &[
        field!(date changed_on, "changed_on", "Date"),
        field!(
            number adjuster_turns, "adjuster_turns", "Adjuster turns", limits::ADJUSTER_TURNS,
            required
        ),
        field!(
            list adjuster_turns_each, "adjuster_turns_each", "Turns of each adjuster",
            limits::ADJUSTER_TURNS, limits::ADJUSTER_COUNT, "adjuster"
        )
        .hint("if checked one by one, separated by commas"),
        field!(
            number counterweight_g, "counterweight_g", "Counterweight per lever",
            limits::COUNTERWEIGHT
        ),
        field!(number mu, "mu", "Friction μ", limits::MU).hint(
            "used until the calibration has enough steady passes; blank: the facing's nominal",
        ),
        field!(flag nominal_mu, "nominal_mu", "Nominal μ (new disc)"),
        field!(text note, "note", "Note", 2000),
    ];

    fn check_more(&mut self, ctx: &Ctx, errors: &mut FieldErrors) {
        // The figures use `adjuster_turns`: it must be what the adjusters average.
        if !self.adjuster_turns_each.is_empty()
            && let Ok(c) = clutch::capacity::clamp::check_adjusters(
                &self.adjuster_turns_each,
                "adjuster_turns_each",
            )
            && (c.mean - self.adjuster_turns).abs() > 0.01
        {
            Self::fault(
                errors,
                "adjuster_turns_each",
                format!(
                    "these average {}: enter that as the adjuster turns",
                    Kind::Turns.show(ctx.units, c.mean)
                ),
            );
        }
        if self.nominal_mu && self.mu.is_some() {
            Self::fault(
                errors,
                "mu",
                "leave μ empty to keep the facing's nominal value, or untick “Nominal μ”",
            );
        }
    }
}
