//! The shop's own settings: name and contact for the sheets, display units, rule limits.

use serde::{Deserialize, Serialize};

use super::{Bound, Checked, FieldErrors, FormReader, Rules};

#[derive(Debug, Clone, PartialEq, Deserialize, Serialize, sqlx::FromRow)]
pub struct SettingsInput {
    pub name: String,
    pub phone: String,
    pub email: String,
    pub address: String,
    /// `imperial` or `metric`.
    pub units: String,
    pub spring_spread_pct: f64,
    pub spring_sag_pct: f64,
    pub shimming_limit_mm: f64,
    pub overclamp_factor: f64,
    pub due_within_passes: i64,
}

impl SettingsInput {
    /// Reads the form. Lengths are typed in the units chosen on the same form.
    pub fn from_form(r: &mut FormReader) -> Self {
        let units = r.text("units");
        if let Some(u) = crate::clutch::units::Units::from_key(&units) {
            r.units = u;
        }
        Self {
            name: r.text("name"),
            phone: r.text("phone"),
            email: r.text("email"),
            address: r.text("address"),
            units,
            spring_spread_pct: r.number("spring_spread_pct"),
            spring_sag_pct: r.number("spring_sag_pct"),
            shimming_limit_mm: r.length("shimming_limit"),
            overclamp_factor: r.number("overclamp_factor"),
            due_within_passes: r.integer("due_within_passes"),
        }
    }

    pub fn check(self, mut errors: FieldErrors) -> Result<Checked<Self>, FieldErrors> {
        use Bound::{Excl, Incl};
        let mut rules = Rules {
            errors: &mut errors,
        };
        rules.text("name", &self.name, true, 120);
        rules.text("phone", &self.phone, false, 40);
        rules.text("email", &self.email, false, 120);
        rules.text("address", &self.address, false, 400);
        rules.range(
            "spring_spread_pct",
            self.spring_spread_pct,
            Excl(0.0),
            Incl(50.0),
        );
        rules.range("spring_sag_pct", self.spring_sag_pct, Excl(0.0), Incl(50.0));
        rules.range(
            "shimming_limit_mm",
            self.shimming_limit_mm,
            Excl(0.0),
            Incl(5.0),
        );
        rules.range(
            "overclamp_factor",
            self.overclamp_factor,
            Incl(1.0),
            Incl(5.0),
        );
        rules.range(
            "due_within_passes",
            self.due_within_passes as f64,
            Incl(0.0),
            Incl(1000.0),
        );
        if crate::clutch::units::Units::from_key(&self.units).is_none() {
            errors.add("units", "choose imperial or metric");
        }
        errors.into_result(Checked(self))
    }
}
