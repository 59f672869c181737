//! A cover-height measurement: how far the disc has worn, read through the checking hole.

use serde::{Deserialize, Serialize};

use super::{Bound, Checked, FieldErrors, FormReader, Rules};

#[derive(Debug, Clone, PartialEq, Deserialize, Serialize, sqlx::FromRow)]
#[serde(default)]
pub struct HeightInput {
    pub measured_on: String,
    pub height_mm: f64,
    /// Cumulative passes on this disc when measured.
    pub passes: i64,
    /// How many shims of the stack had been pulled by then.
    pub shims_pulled: i64,
    /// This measurement is the baseline of a newly fitted disc (full shim stack back in).
    pub new_disc: bool,
    pub note: String,
}

impl Default for HeightInput {
    fn default() -> Self {
        Self {
            measured_on: String::new(),
            height_mm: f64::NAN,
            passes: -1,
            shims_pulled: 0,
            new_disc: false,
            note: String::new(),
        }
    }
}

/// What the build already knows that a new measurement must agree with.
#[derive(Debug, Clone, Copy, Default)]
pub struct HeightContext {
    pub shims_in_stack: usize,
    /// The pass count and shims pulled recorded just before this measurement, if any.
    pub previous: Option<(i64, i64)>,
    /// The same just after it (when an older measurement is corrected).
    pub next: Option<(i64, i64)>,
}

impl AsRef<HeightInput> for HeightInput {
    fn as_ref(&self) -> &HeightInput {
        self
    }
}

impl HeightInput {
    pub fn from_form(r: &mut FormReader) -> Self {
        Self {
            measured_on: r.text("measured_on"),
            height_mm: r.length("height"),
            passes: r.integer("passes"),
            shims_pulled: r.opt_integer("shims_pulled", 0),
            new_disc: r.checked("new_disc"),
            note: r.text("note"),
        }
    }

    pub fn check(
        self,
        ctx: HeightContext,
        mut errors: FieldErrors,
    ) -> Result<Checked<Self>, FieldErrors> {
        use Bound::{Excl, Incl};
        let mut rules = Rules {
            errors: &mut errors,
        };
        rules.date("measured_on", &self.measured_on);
        rules.range("height_mm", self.height_mm, Excl(0.0), Incl(200.0));
        rules.range("passes", self.passes as f64, Incl(0.0), Incl(100_000.0));
        rules.text("note", &self.note, false, 2000);
        let stack = ctx.shims_in_stack as i64;
        if self.shims_pulled < 0 || self.shims_pulled > stack {
            errors.add(
                "shims_pulled",
                format!("must be between 0 and {stack} (the shims in this build's stack)"),
            );
        }
        if self.new_disc && self.shims_pulled != 0 {
            errors.add(
                "shims_pulled",
                "a new disc starts with the full shim stack (0 pulled)",
            );
        }
        if let Some((passes, pulled)) = ctx.next {
            if self.passes > passes {
                errors.add(
                    "passes",
                    format!("the next measurement is at {passes} passes"),
                );
            }
            if self.shims_pulled > pulled {
                errors.add(
                    "shims_pulled",
                    format!("the next measurement has {pulled} shims pulled"),
                );
            }
        }
        if let Some((passes, pulled)) = ctx.previous.filter(|_| !self.new_disc) {
            if self.passes < passes {
                errors.add(
                    "passes",
                    format!("passes cannot go backwards: the last measurement was at {passes}"),
                );
            }
            if self.shims_pulled < pulled {
                errors.add(
                    "shims_pulled",
                    format!("{pulled} shims were already pulled; a pulled shim does not go back"),
                );
            }
        }
        errors.into_result(Checked(self))
    }
}
