//! The shop's single settings row.

use sqlx::SqliteConnection;

use crate::records::Checked;
use crate::records::settings::SettingsInput;

pub async fn get(conn: &mut SqliteConnection) -> sqlx::Result<SettingsInput> {
    sqlx::query_as("SELECT * FROM shop_settings WHERE id = 1")
        .fetch_one(conn)
        .await
}

pub async fn update(conn: &mut SqliteConnection, s: &Checked<SettingsInput>) -> sqlx::Result<()> {
    super::record::update(conn, "shop_settings", 1, s).await?;
    Ok(())
}
