//! Every pass and every cover height of a build, a page at a time (the build's own page lists
//! the newest few).

use askama::Template;
use axum::extract::{Query, State};
use axum::response::Html;
use serde::Deserialize;

use crate::db;
use crate::db::record::BuildTable;
use crate::error::{AppError, AppResult};
use crate::records::stored::Height;
use crate::records::stored::LogSummary;
use crate::records::stored::Pass;
use crate::web::AppState;
use crate::web::http::extract::{CurrentUser, PathId};
use crate::web::pages::builds::show::page_title;
use crate::web::pages::layout::Layout;

/// Rows per page.
const PER_PAGE: i64 = 100;

#[derive(Deserialize, Default)]
pub struct PageNo {
    #[serde(default)]
    page: String,
}

/// Where a list is: its page number (from 0), how many pages, and the list's address.
pub struct Paging {
    pub no: i64,
    pub pages: i64,
    pub total: i64,
    pub path: String,
}

impl Paging {
    fn new(q: &PageNo, total: i64, path: String) -> Self {
        let pages = ((total + PER_PAGE - 1) / PER_PAGE).max(1);
        let no = q.page.parse::<i64>().unwrap_or(0).clamp(0, pages - 1);
        Self {
            no,
            pages,
            total,
            path,
        }
    }
    fn offset(&self) -> i64 {
        self.no * PER_PAGE
    }
}

#[derive(Template)]
#[template(path = "builds/passes.html")]
pub struct PassesPage {
    pub page: Layout,
    pub build_id: i64,
    pub title: String,
    pub passes: Vec<Pass>,
    pub logs: Vec<LogSummary>,
    pub paging: Paging,
}

impl PassesPage {
    pub fn log_of(&self, pass_id: i64) -> Option<&LogSummary> {
        self.logs.iter().find(|l| l.pass_id == pass_id)
    }
}

/// The title of build `id` ("customer – build"), or 404.
async fn title_of(conn: &mut sqlx::SqliteConnection, id: i64) -> AppResult<String> {
    let build = db::builds::by_id(conn, id)
        .await?
        .ok_or(AppError::NotFound)?;
    let owner = db::builds::owner(conn, id).await?;
    Ok(page_title(&owner.customer_name, &build))
}

/// One page of build `id`'s records kept in `table`, newest first: the frame titled
/// `heading`, the build's title, the rows and where they are (`/builds/{id}/{list}`).
async fn listed<T>(
    conn: &mut sqlx::SqliteConnection,
    user: &CurrentUser,
    id: i64,
    q: &PageNo,
    table: &BuildTable<T>,
    heading: &str,
    list: &str,
) -> AppResult<(Layout, String, Vec<T>, Paging)>
where
    T: for<'r> sqlx::FromRow<'r, sqlx::sqlite::SqliteRow> + Send + Unpin,
{
    let title = title_of(conn, id).await?;
    let (page, _) = Layout::load(conn, user, "customers", heading).await?;
    let total = table.count(conn, id).await?;
    let paging = Paging::new(q, total, format!("/builds/{id}/{list}"));
    let rows = table.page(conn, id, paging.offset(), PER_PAGE).await?;
    Ok((page, title, rows, paging))
}

/// GET /builds/{id}/passes: every pass, newest first.
pub async fn passes(
    State(state): State<AppState>,
    user: CurrentUser,
    PathId(id): PathId,
    Query(q): Query<PageNo>,
) -> AppResult<Html<String>> {
    let mut conn = state.pool.acquire().await?;
    let table = &db::passes::TABLE;
    let (page, title, passes, paging) =
        listed(&mut conn, &user, id, &q, table, "All passes", "passes").await?;
    let logs = db::pass_logs::for_build(&mut conn, id).await?;
    Ok(Html(
        PassesPage {
            page,
            build_id: id,
            title,
            passes,
            logs,
            paging,
        }
        .render()?,
    ))
}

#[derive(Template)]
#[template(path = "builds/heights.html")]
pub struct HeightsPage {
    pub page: Layout,
    pub build_id: i64,
    pub title: String,
    pub heights: Vec<Height>,
    pub paging: Paging,
}

/// GET /builds/{id}/heights: every cover height, newest first.
pub async fn heights(
    State(state): State<AppState>,
    user: CurrentUser,
    PathId(id): PathId,
    Query(q): Query<PageNo>,
) -> AppResult<Html<String>> {
    let mut conn = state.pool.acquire().await?;
    let table = &db::heights::TABLE;
    let (page, title, heights, paging) = listed(
        &mut conn,
        &user,
        id,
        &q,
        table,
        "All cover heights",
        "heights",
    )
    .await?;
    Ok(Html(
        HeightsPage {
            page,
            build_id: id,
            title,
            heights,
            paging,
        }
        .render()?,
    ))
}
