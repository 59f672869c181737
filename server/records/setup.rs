//! A change of the tunable settings on a build: adjuster turns, counterweight, friction.

use serde::{Deserialize, Serialize};

use super::{Bound, Checked, FieldErrors, FormReader, Rules};

#[derive(Debug, Clone, PartialEq, Deserialize, Serialize, sqlx::FromRow)]
#[serde(default)]
pub struct SetupInput {
    pub changed_on: String,
    pub adjuster_turns: f64,
    /// Turns of each adjuster, when measured one by one (empty: all at `adjuster_turns`).
    #[sqlx(json)]
    pub adjuster_turns_each: Vec<f64>,
    /// Counterweight per lever, grams.
    pub counterweight_g: f64,
    /// Friction coefficient assumed for this setup; empty uses the facing's nominal value.
    pub mu: Option<f64>,
    pub note: String,
}

impl Default for SetupInput {
    fn default() -> Self {
        Self {
            changed_on: String::new(),
            adjuster_turns: f64::NAN,
            adjuster_turns_each: Vec::new(),
            counterweight_g: 0.0,
            mu: None,
            note: String::new(),
        }
    }
}

impl SetupInput {
    /// Whether the adjusters were recorded at different settings (they must all match).
    pub fn unequal_adjusters(&self) -> bool {
        !self.adjuster_turns_each.is_empty()
            && crate::clutch::clamp::check_adjusters(
                &self.adjuster_turns_each,
                "adjuster_turns_each",
            )
            .is_ok_and(|c| c.unequal)
    }

    pub fn from_form(r: &mut FormReader) -> Self {
        Self {
            changed_on: r.text("changed_on"),
            adjuster_turns: r.number("adjuster_turns"),
            adjuster_turns_each: r.number_list("adjuster_turns_each"),
            counterweight_g: r.opt_number("counterweight_g").unwrap_or(0.0),
            mu: r.opt_number("mu"),
            note: r.text("note"),
        }
    }

    pub fn check(self, mut errors: FieldErrors) -> Result<Checked<Self>, FieldErrors> {
        use Bound::Incl;
        let mut rules = Rules {
            errors: &mut errors,
        };
        rules.date("changed_on", &self.changed_on);
        rules.range("adjuster_turns", self.adjuster_turns, Incl(0.0), Incl(20.0));
        if self.adjuster_turns_each.len() > 24 {
            rules
                .errors
                .add("adjuster_turns_each", "at most 24 adjusters");
        }
        for (i, t) in self.adjuster_turns_each.iter().enumerate() {
            if !rules.range(
                &format!("adjuster_turns_each[{i}]"),
                *t,
                Incl(0.0),
                Incl(20.0),
            ) {
                break;
            }
        }
        // The figures use `adjuster_turns`: it must be what the adjusters average.
        if !self.adjuster_turns_each.is_empty()
            && let Ok(c) = crate::clutch::clamp::check_adjusters(
                &self.adjuster_turns_each,
                "adjuster_turns_each",
            )
            && (c.mean - self.adjuster_turns).abs() > 0.01
        {
            rules.errors.add(
                "adjuster_turns_each",
                format!(
                    "these average {:.3} turns: enter that as the adjuster turns",
                    c.mean
                ),
            );
        }
        rules.range(
            "counterweight_g",
            self.counterweight_g,
            Incl(0.0),
            Incl(1000.0),
        );
        rules.opt_range("mu", self.mu, Incl(0.05), Incl(0.8));
        rules.text("note", &self.note, false, 2000);
        errors.into_result(Checked(self))
    }
}
