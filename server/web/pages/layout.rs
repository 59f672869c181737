//! What every page's frame needs: who is signed in, the CSRF token for its forms, the shop's
//! name and units, and which section of the navigation is current.

use crate::records::field::Record;
use crate::web::pages::input::Inputs;
use sqlx::SqliteConnection;

use crate::db;
use crate::error::AppResult;
use crate::records::Ctx;
use crate::records::date::ShopZone;
use crate::records::settings::SettingsInput;
use crate::web::http::extract::Viewer;
use crate::web::pages::show::Show;
use clutch::units::Units;

pub struct Layout {
    pub title: String,
    pub username: String,
    pub is_admin: bool,
    pub csrf: String,
    pub shop_name: String,
    /// The navigation section this page belongs to.
    pub section: &'static str,
    pub u: Show,
    /// The shop's units and today, for checking what is typed on this page.
    pub ctx: Ctx,
    /// The shop's time zone, for stored times.
    pub zone: ShopZone,
}

impl Layout {
    /// Loads the shop settings and builds the frame for a signed-in page.
    pub async fn load(
        conn: &mut SqliteConnection,
        viewer: impl Into<Viewer>,
        section: &'static str,
        title: impl Into<String>,
    ) -> AppResult<(Self, SettingsInput)> {
        let settings = db::settings::get(conn).await?;
        Ok((Self::new(&settings, viewer, section, title), settings))
    }

    /// The frame of a signed-in page from the shop settings already read (`db::read::settings`).
    pub fn new(
        settings: &SettingsInput,
        viewer: impl Into<Viewer>,
        section: &'static str,
        title: impl Into<String>,
    ) -> Self {
        let Viewer {
            username,
            is_admin,
            csrf,
        } = viewer.into();
        Self {
            title: title.into(),
            username,
            is_admin,
            csrf,
            shop_name: settings.name.clone(),
            section,
            u: Show::new(settings.units()),
            ctx: settings.ctx(),
            zone: settings.zone(),
        }
    }

    pub fn units(&self) -> Units {
        self.u.units
    }

    /// The form inputs of record `R` in the shop's units (`page.inputs::<SetupInput>()`).
    pub fn inputs<R: Record>(&self) -> Inputs {
        Inputs::of::<R>(self.units())
    }

    /// The shop's today, as a form prefills it.
    pub fn today(&self) -> String {
        self.ctx.today.to_string()
    }
}
