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
    sqlx::query(
        "UPDATE shop_settings SET name = ?, phone = ?, email = ?, address = ?, units = ?,
             spring_spread_pct = ?, spring_sag_pct = ?, shimming_limit_mm = ?,
             overclamp_factor = ?, due_within_passes = ?,
             updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now')
         WHERE id = 1",
    )
    .bind(&s.name)
    .bind(&s.phone)
    .bind(&s.email)
    .bind(&s.address)
    .bind(&s.units)
    .bind(s.spring_spread_pct)
    .bind(s.spring_sag_pct)
    .bind(s.shimming_limit_mm)
    .bind(s.overclamp_factor)
    .bind(s.due_within_passes)
    .execute(conn)
    .await?;
    Ok(())
}
