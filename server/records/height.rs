//! A cover-height measurement: how far the disc has worn, read through the checking hole.

use serde::{Deserialize, Serialize};

use super::field::{self, Ctx, Field, Record, Value};
use super::{Checked, FieldErrors};
use clutch::quantity::{Bound, Kind, Limit, limits};

#[derive(Debug, Clone, PartialEq, Deserialize, Serialize, sqlx::FromRow, utoipa::ToSchema)]
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

impl Record for HeightInput {
    const FIELDS: &'static [Field<Self>] = &[
        Field {
            column: "measured_on",
            form: "measured_on",
            label: "Date",
            value: Value::Date {
                get: |r| &r.measured_on,
                set: |r, v| r.measured_on = v,
            },
        },
        Field {
            column: "height_mm",
            form: "height",
            label: "Cover height",
            value: Value::Number {
                limit: limits::COVER_HEIGHT,
                required: true,
                get: |r| Some(r.height_mm),
                set: |r, v| r.height_mm = v.unwrap_or(f64::NAN),
            },
        },
        Field {
            column: "passes",
            form: "passes",
            label: "Passes on this disc",
            value: Value::Whole {
                limit: limits::PASSES,
                default: None,
                get: |r| r.passes,
                set: |r, v| r.passes = v,
            },
        },
        Field {
            column: "shims_pulled",
            form: "shims_pulled",
            label: "Shims pulled",
            value: Value::Whole {
                limit: Limit::new(
                    Kind::Count,
                    Bound::Incl(0.0),
                    Bound::Incl(limits::SHIM_COUNT as f64),
                ),
                default: Some(0),
                get: |r| r.shims_pulled,
                set: |r, v| r.shims_pulled = v,
            },
        },
        Field {
            column: "new_disc",
            form: "new_disc",
            label: "New disc fitted",
            value: Value::Flag {
                get: |r| r.new_disc,
                set: |r, v| r.new_disc = v,
            },
        },
        Field {
            column: "note",
            form: "note",
            label: "Note",
            value: Value::Text {
                max_chars: 2000,
                required: false,
                get: |r| &r.note,
                set: |r, v| r.note = v,
            },
        },
    ];
}

impl HeightInput {
    /// Checks the measurement's own fields, then that it agrees with what the build already
    /// records (shims in the stack, the measurements before and after it).
    pub fn check_on(
        self,
        hc: HeightContext,
        ctx: &Ctx,
        errors: FieldErrors,
    ) -> Result<Checked<Self>, FieldErrors> {
        let mut errors = errors;
        self.context_faults(hc, &mut errors);
        field::check(self, ctx, errors)
    }

    /// The rules against the build's other records (they come first: "between 0 and 3, the
    /// shims in this build's stack" says more than the general limit).
    fn context_faults(&self, hc: HeightContext, errors: &mut FieldErrors) {
        let errors = &mut *errors;
        let this = self;
        let stack = hc.shims_in_stack as i64;
        if this.shims_pulled > stack {
            Self::fault(
                errors,
                "shims_pulled",
                format!("must be between 0 and {stack} (the shims in this build's stack)"),
            );
        }
        if this.new_disc && this.shims_pulled != 0 {
            Self::fault(
                errors,
                "shims_pulled",
                "a new disc starts with the full shim stack (0 pulled)",
            );
        }
        if let Some((passes, pulled)) = hc.next {
            if this.passes > passes {
                Self::fault(
                    errors,
                    "passes",
                    format!("the next measurement is at {passes} passes"),
                );
            }
            if this.shims_pulled > pulled {
                Self::fault(
                    errors,
                    "shims_pulled",
                    format!("the next measurement has {pulled} shims pulled"),
                );
            }
        }
        if let Some((passes, pulled)) = hc.previous.filter(|_| !this.new_disc) {
            if this.passes < passes {
                Self::fault(
                    errors,
                    "passes",
                    format!("passes cannot go backwards: the last measurement was at {passes}"),
                );
            }
            if this.shims_pulled < pulled {
                Self::fault(
                    errors,
                    "shims_pulled",
                    format!("{pulled} shims were already pulled; a pulled shim does not go back"),
                );
            }
        }
    }
}
