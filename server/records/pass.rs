//! A track pass: what really happened with a setup.

use serde::{Deserialize, Serialize};

use super::{Bound, Checked, FieldErrors, FormReader, Rules};

#[derive(Debug, Clone, Default, PartialEq, Deserialize, Serialize, sqlx::FromRow)]
#[serde(default)]
pub struct PassInput {
    pub run_on: String,
    pub track: String,
    pub launch_rpm: Option<f64>,
    pub sixty_ft_s: Option<f64>,
    pub et_s: Option<f64>,
    pub observed_lockup_rpm: Option<f64>,
    pub notes: String,
}

impl PassInput {
    pub fn from_form(r: &mut FormReader) -> Self {
        Self {
            run_on: r.text("run_on"),
            track: r.text("track"),
            launch_rpm: r.opt_number("launch_rpm"),
            sixty_ft_s: r.opt_number("sixty_ft"),
            et_s: r.opt_number("et"),
            observed_lockup_rpm: r.opt_number("observed_lockup_rpm"),
            notes: r.text("notes"),
        }
    }

    pub fn check(self, mut errors: FieldErrors) -> Result<Checked<Self>, FieldErrors> {
        use Bound::Incl;
        let mut rules = Rules {
            errors: &mut errors,
        };
        rules.date("run_on", &self.run_on);
        rules.text("track", &self.track, false, 120);
        rules.text("notes", &self.notes, false, 2000);
        rules.opt_range("launch_rpm", self.launch_rpm, Incl(500.0), Incl(15_000.0));
        rules.opt_range(
            "observed_lockup_rpm",
            self.observed_lockup_rpm,
            Incl(500.0),
            Incl(15_000.0),
        );
        rules.opt_range("sixty_ft_s", self.sixty_ft_s, Incl(0.5), Incl(10.0));
        rules.opt_range("et_s", self.et_s, Incl(1.0), Incl(60.0));
        if let (Some(sixty), Some(et)) = (self.sixty_ft_s, self.et_s)
            && et <= sixty
        {
            errors.add("et_s", "the ET must be longer than the 60-ft time");
        }
        errors.into_result(Checked(self))
    }
}
