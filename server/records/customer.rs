//! A customer of the shop.

use serde::{Deserialize, Serialize};

use super::FieldErrors;
use super::field::{Ctx, Field, Record, field};

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
        field!(text name, "name", "Name", 120, required),
        field!(text phone, "phone", "Phone", 40),
        field!(text email, "email", "Email", 120),
        field!(text notes, "notes", "Notes", 4000),
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
