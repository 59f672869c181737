//! A customer of the shop.

use serde::{Deserialize, Serialize};

use super::{Checked, FieldErrors, FormData, FormReader, Rules};

#[derive(Debug, Clone, Default, PartialEq, Deserialize, Serialize, sqlx::FromRow)]
#[serde(default)]
pub struct CustomerInput {
    pub name: String,
    pub phone: String,
    pub email: String,
    pub notes: String,
}

impl CustomerInput {
    pub fn from_form(r: &mut FormReader) -> Self {
        Self {
            name: r.text("name"),
            phone: r.text("phone"),
            email: r.text("email"),
            notes: r.text("notes"),
        }
    }

    pub fn check(self, mut errors: FieldErrors) -> Result<Checked<Self>, FieldErrors> {
        let mut rules = Rules {
            errors: &mut errors,
        };
        rules.text("name", &self.name, true, 120);
        rules.text("phone", &self.phone, false, 40);
        rules.text("email", &self.email, false, 120);
        rules.text("notes", &self.notes, false, 4000);
        if !self.email.is_empty() && !self.email.contains('@') {
            errors.add("email", "an email address needs an @");
        }
        let trimmed = Self {
            name: self.name.trim().to_string(),
            phone: self.phone.trim().to_string(),
            email: self.email.trim().to_string(),
            notes: self.notes,
        };
        errors.into_result(Checked(trimmed))
    }

    /// The form prefilled from a stored customer.
    pub fn to_form(&self) -> FormData {
        let mut f = FormData::default();
        f.set("name", &self.name);
        f.set("phone", &self.phone);
        f.set("email", &self.email);
        f.set("notes", &self.notes);
        f
    }
}
