//! What every page's frame needs: who is signed in, the CSRF token for its forms, the shop's
//! name and units, and which section of the navigation is current.

use sqlx::SqliteConnection;

use super::extract::CurrentUser;
use super::show::Show;
use crate::clutch::units::Units;
use crate::db;
use crate::error::AppResult;
use crate::records::settings::SettingsInput;

pub struct Layout {
    pub title: String,
    pub username: String,
    pub is_admin: bool,
    pub csrf: String,
    pub shop_name: String,
    /// The navigation section this page belongs to.
    pub section: &'static str,
    pub u: Show,
}

impl Layout {
    /// Loads the shop settings and builds the frame for a signed-in page.
    pub async fn load(
        conn: &mut SqliteConnection,
        user: &CurrentUser,
        section: &'static str,
        title: impl Into<String>,
    ) -> AppResult<(Self, SettingsInput)> {
        let settings = db::settings::get(conn).await?;
        let layout = Self {
            title: title.into(),
            username: user.username.clone(),
            is_admin: user.is_admin(),
            csrf: user.csrf.clone(),
            shop_name: settings.name.clone(),
            section,
            u: Show::new(units_of(&settings)),
        };
        Ok((layout, settings))
    }

    pub fn units(&self) -> Units {
        self.u.units
    }
}

/// The shop's display units.
pub fn units_of(settings: &SettingsInput) -> Units {
    Units::from_key(&settings.units).unwrap_or_default()
}
