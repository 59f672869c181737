//! The counter's front page: find a customer fast, see what happened lately, and the work due.

use askama::Template;
use axum::extract::{Query, State};
use axum::response::Html;

use super::AppState;
use super::customers::ListQuery;
use super::extract::CurrentUser;
use super::layout::Layout;
use crate::db;
use crate::db::activity::Activity;
use crate::db::customers::CustomerSummary;
use crate::error::AppResult;

#[derive(Template)]
#[template(path = "home.html")]
pub struct FrontPage {
    pub page: Layout,
    pub q: String,
    pub found: Vec<CustomerSummary>,
    pub found_total: i64,
    pub recent: Vec<Activity>,
}

impl FrontPage {
    pub fn activity_label(kind: &str) -> &'static str {
        match kind {
            "setup" => "setup change",
            "bench" => "spring bench test",
            "height" => "cover height",
            "pass" => "track pass",
            _ => "new build",
        }
    }
}

pub async fn front(
    State(state): State<AppState>,
    user: CurrentUser,
    Query(q): Query<ListQuery>,
) -> AppResult<Html<String>> {
    let mut conn = state.pool.acquire().await?;
    let (page, _) = Layout::load(&mut conn, &user, "home", "Counter").await?;
    let (found, found_total) = if q.q.trim().is_empty() {
        (Vec::new(), 0)
    } else {
        db::customers::search(&mut conn, &q.q, 0).await?
    };
    let recent = db::activity::recent(&mut conn, 12).await?;
    Ok(Html(
        FrontPage {
            page,
            q: q.q,
            found,
            found_total,
            recent,
        }
        .render()?,
    ))
}
