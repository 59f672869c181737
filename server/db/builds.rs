//! Clutch builds.

use serde::Serialize;
use sqlx::{FromRow, SqliteConnection};

use crate::records::Checked;
use crate::records::build::BuildInput;

#[derive(Debug, Clone, Serialize, FromRow)]
pub struct Build {
    pub id: i64,
    pub car_id: i64,
    #[sqlx(flatten)]
    #[serde(flatten)]
    pub data: BuildInput,
    pub created_at: String,
    pub updated_at: String,
}

/// Who and what a build belongs to, for headings and links.
#[derive(Debug, Clone, Serialize, FromRow)]
pub struct BuildOwner {
    pub customer_id: i64,
    pub customer_name: String,
    pub customer_phone: String,
    pub car_id: i64,
    pub car_description: String,
}

pub async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Build>> {
    sqlx::query_as(
        "SELECT b.* FROM builds b JOIN cars k ON k.id = b.car_id
         JOIN customers c ON c.id = k.customer_id
         WHERE b.id = ? AND c.deleted_at IS NULL",
    )
    .bind(id)
    .fetch_optional(conn)
    .await
}

pub async fn owner(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<BuildOwner> {
    sqlx::query_as(
        "SELECT c.id AS customer_id, c.name AS customer_name, c.phone AS customer_phone,
                k.id AS car_id, k.description AS car_description
         FROM builds b JOIN cars k ON k.id = b.car_id JOIN customers c ON c.id = k.customer_id
         WHERE b.id = ?",
    )
    .bind(build_id)
    .fetch_one(conn)
    .await
}

pub async fn for_car(conn: &mut SqliteConnection, car_id: i64) -> sqlx::Result<Vec<Build>> {
    sqlx::query_as("SELECT * FROM builds WHERE car_id = ? ORDER BY status, id DESC")
        .bind(car_id)
        .fetch_all(conn)
        .await
}

pub async fn page(conn: &mut SqliteConnection, page: i64) -> sqlx::Result<Vec<Build>> {
    sqlx::query_as(
        "SELECT b.* FROM builds b JOIN cars k ON k.id = b.car_id
         JOIN customers c ON c.id = k.customer_id
         WHERE c.deleted_at IS NULL ORDER BY b.id DESC LIMIT ? OFFSET ?",
    )
    .bind(super::PAGE_SIZE)
    .bind(page.max(0) * super::PAGE_SIZE)
    .fetch_all(conn)
    .await
}

/// The stored columns of a build, in the order `bind_fields` binds them.
const COLUMNS: [&str; 24] = [
    "label",
    "disc_count",
    "facing_material",
    "facing_od_mm",
    "facing_id_mm",
    "disc_thickness_new_mm",
    "disc_thickness_min_mm",
    "spring_count",
    "spring_description",
    "spring_rate_n_per_mm",
    "adjuster_tpi",
    "adjuster_pitch_mm",
    "base_compression_mm",
    "cover_height_free_mm",
    "cover_height_installed_mm",
    "lever_count",
    "lever_mass_g",
    "lever_cg_radius_mm",
    "lever_arm_ratio",
    "lever_gain_n_per_g",
    "shim_stack_mm",
    "shimming_limit_mm",
    "status",
    "notes",
];

type Query<'q> = sqlx::query::Query<'q, sqlx::Sqlite, sqlx::sqlite::SqliteArguments>;

fn bind_fields<'q>(q: Query<'q>, b: &'q BuildInput) -> Query<'q> {
    q.bind(&b.label)
        .bind(b.disc_count)
        .bind(&b.facing_material)
        .bind(b.facing_od_mm)
        .bind(b.facing_id_mm)
        .bind(b.disc_thickness_new_mm)
        .bind(b.disc_thickness_min_mm)
        .bind(b.spring_count)
        .bind(&b.spring_description)
        .bind(b.spring_rate_n_per_mm)
        .bind(b.adjuster_tpi)
        .bind(b.adjuster_pitch_mm)
        .bind(b.base_compression_mm)
        .bind(b.cover_height_free_mm)
        .bind(b.cover_height_installed_mm)
        .bind(b.lever_count)
        .bind(b.lever_mass_g)
        .bind(b.lever_cg_radius_mm)
        .bind(b.lever_arm_ratio)
        .bind(b.lever_gain_n_per_g)
        .bind(sqlx::types::Json(&b.shim_stack_mm))
        .bind(b.shimming_limit_mm)
        .bind(&b.status)
        .bind(&b.notes)
}

pub async fn insert(
    conn: &mut SqliteConnection,
    car_id: i64,
    b: &Checked<BuildInput>,
) -> sqlx::Result<i64> {
    let sql = format!(
        "INSERT INTO builds ({}, car_id) VALUES ({}?) RETURNING id",
        COLUMNS.join(", "),
        "?, ".repeat(COLUMNS.len())
    );
    let row = bind_fields(sqlx::query(sqlx::AssertSqlSafe(sql)), b)
        .bind(car_id)
        .fetch_one(conn)
        .await?;
    sqlx::Row::try_get(&row, 0)
}

pub async fn update(
    conn: &mut SqliteConnection,
    id: i64,
    b: &Checked<BuildInput>,
) -> sqlx::Result<bool> {
    let sets: Vec<String> = COLUMNS.iter().map(|c| format!("{c} = ?")).collect();
    let sql = format!(
        "UPDATE builds SET {}, updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now') WHERE id = ?",
        sets.join(", ")
    );
    let done = bind_fields(sqlx::query(sqlx::AssertSqlSafe(sql)), b)
        .bind(id)
        .execute(conn)
        .await?;
    Ok(done.rows_affected() == 1)
}

/// An active build of a live customer, with who it belongs to (for the work-due list).
#[derive(Debug, Clone, FromRow)]
pub struct ActiveBuild {
    #[sqlx(flatten)]
    pub build: Build,
    #[sqlx(flatten)]
    pub owner: BuildOwner,
}

pub async fn active(conn: &mut SqliteConnection) -> sqlx::Result<Vec<ActiveBuild>> {
    sqlx::query_as(
        "SELECT b.*, c.id AS customer_id, c.name AS customer_name, c.phone AS customer_phone,
                k.description AS car_description
         FROM builds b JOIN cars k ON k.id = b.car_id JOIN customers c ON c.id = k.customer_id
         WHERE b.status = 'active' AND c.deleted_at IS NULL ORDER BY b.id",
    )
    .fetch_all(conn)
    .await
}
