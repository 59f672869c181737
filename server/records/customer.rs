//! A customer of the shop.

use serde::{Deserialize, Serialize};

use super::FieldErrors;
use super::field::{Ctx, Field, Record, Value};

#[derive(
    Debug, Clone, Default, PartialEq, Deserialize, Serialize, sqlx::FromRow, utoipa::ToSchema,
)]
#[serde(default)]
pub struct CustomerInput {
    pub name: String,
    pub phone: String,
    pub email: String,
    pub notes: String,
}

impl Record for CustomerInput {
    const FIELDS: &'static [Field<Self>] = &[
        Field {
            column: "name",
            form: "name",
            label: "Name",
            value: Value::Text {
                max_chars: 120,
                required: true,
                get: |r| &r.name,
                set: |r, v| r.name = v,
            },
        },
        Field {
            column: "phone",
            form: "phone",
            label: "Phone",
            value: Value::Text {
                max_chars: 40,
                required: false,
                get: |r| &r.phone,
                set: |r, v| r.phone = v,
            },
        },
        Field {
            column: "email",
            form: "email",
            label: "Email",
            value: Value::Text {
                max_chars: 120,
                required: false,
                get: |r| &r.email,
                set: |r, v| r.email = v,
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
        if let Err(m) = check_email(&self.email) {
            Self::fault(errors, "email", m);
        }
    }
}

/// An email address as far as a counter can tell: empty, or something@something.
pub fn check_email(email: &str) -> Result<(), &'static str> {
    if !email.is_empty() && !email.contains('@') {
        return Err("an email address needs an @");
    }
    Ok(())
}
