//! The counter's front page: find a customer fast, see what happened lately, and the work due.

use std::collections::HashMap;

use askama::Template;
use axum::extract::{Query, RawQuery, State};
use axum::response::Html;

use crate::db;
use crate::db::activity::Activity;
use crate::db::customers::{CustomerSummary, Order};
use crate::error::AppResult;
use crate::model::due::{Due, DueReason, WorkStatus};
use crate::records::date::ShopZone;
use crate::status;
use crate::web::AppState;
use crate::web::http::cache::PageKey;
use crate::web::http::extract::{CurrentUser, Viewer};
use crate::web::pages::admin::backup::{CounterNotice, counter_notice};
use crate::web::pages::customers::customer::ListQuery;
use crate::web::pages::layout::Layout;
use clutch::quantity::counted;

#[derive(Template)]
#[template(path = "home.html")]
pub struct FrontPage {
    pub page: Layout,
    pub q: String,
    pub found: Vec<CustomerSummary>,
    pub found_total: i64,
    pub recent: Vec<Activity>,
    pub due: Vec<Due>,
    /// The kept forecast by slip energy of the listed builds: passes to the next shim and to
    /// the disc (`build_status`, worked out with the status: no launch preview runs here).
    pub by_energy: HashMap<i64, (Option<f64>, Option<f64>)>,
    /// Admins only: backups not scheduled, failing or old (see `backup::counter_notice`).
    pub backup_notice: Option<CounterNotice>,
}

impl FrontPage {
    /// The forecast by slip energy beside the per-pass one, when kept for the build: " (about
    /// 40 by slip energy)".
    fn energy_note(&self, build_id: i64, disc: bool) -> String {
        self.by_energy
            .get(&build_id)
            .and_then(|(shim, to_disc)| if disc { *to_disc } else { *shim })
            .map_or_else(String::new, |n| {
                format!(" (about {} by slip energy)", Self::whole(n))
            })
    }

    /// A pass count as `counted` rounds it.
    fn whole(n: f64) -> String {
        format!("{:.0}", n.round())
    }

    /// (CSS class, status word with its shape, what to do) for a line of the due list.
    pub fn due_text(&self, d: &Due) -> (&'static str, &'static str, String) {
        let u = &self.page.u;
        match &d.reason {
            DueReason::DiscDue => (
                WorkStatus::DiscDue.class(),
                WorkStatus::DiscDue.word(),
                "Disc at its wear limit: replace the disc.".into(),
            ),
            DueReason::ShimDue(shim) => (
                WorkStatus::ShimDue.class(),
                WorkStatus::ShimDue.word(),
                shim.map_or("Shimming limit reached.".into(), |s| {
                    format!("Pull the {} shim.", u.len(s))
                }),
            ),
            DueReason::Soon {
                passes,
                disc: false,
            } => {
                let s = WorkStatus::Soon {
                    passes: *passes,
                    disc: false,
                };
                (
                    s.class(),
                    s.word(),
                    format!(
                        "About {} to the next shim{}.",
                        counted(*passes, "pass", "passes"),
                        self.energy_note(d.build_id, false)
                    ),
                )
            }
            DueReason::Soon { passes, disc: true } => {
                let s = WorkStatus::Soon {
                    passes: *passes,
                    disc: true,
                };
                (
                    s.class(),
                    s.word(),
                    format!(
                        "About {} until the disc is due{}.",
                        counted(*passes, "pass", "passes"),
                        self.energy_note(d.build_id, true)
                    ),
                )
            }
            DueReason::Springs {
                spread_pct,
                out_of_tolerance,
                sagged,
                low,
            } => {
                let mut parts = Vec::new();
                if *out_of_tolerance {
                    parts.push(format!(
                        "rate spread {spread_pct:.1} % is over the shop's tolerance"
                    ));
                }
                if *sagged > 0 {
                    parts.push(format!(
                        "{sagged} spring(s) lost load (sagged) since the last test"
                    ));
                }
                if *low > 0 {
                    parts.push(format!(
                        "{low} spring(s) low on load against the set at the installed height"
                    ));
                }
                (
                    WorkStatus::Springs.class(),
                    WorkStatus::Springs.word(),
                    format!("Latest bench test: {}.", parts.join("; ")),
                )
            }
        }
    }

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
    RawQuery(raw): RawQuery,
) -> AppResult<Html<String>> {
    let key = PageKey::Counter(raw.unwrap_or_default());
    // The backup notice is part of the page kept for the role: every change to what it says
    // moves the cache's generation on (see `AppState::with_backups`).
    let state_ref = &state;
    let render = |stand_in: Viewer| async move { render_front(state_ref, &stand_in, q).await };
    Ok(Html(state.cache.page(key, &user, render).await?))
}

/// The counter for the search `q`, and the shop's zone it was rendered in.
async fn render_front(
    state: &AppState,
    user: &Viewer,
    q: ListQuery,
) -> AppResult<(String, ShopZone)> {
    // The search first: no pooled connection is held while it waits for its reader.
    let (found, found_total) = if q.q.trim().is_empty() {
        (Vec::new(), 0)
    } else {
        (state.reader)
            .search(&q.q, 0, Order::from_query(&q.sort))
            .await?
    };
    let mut conn = state.pool.acquire().await?;
    let conn = &mut *conn;
    let backups = &state.backups;
    let (page, settings) = Layout::load(conn, user, "home", "Counter").await?;
    let recent = db::activity::recent(conn, 12).await?;
    let due = status::work_due(conn, &settings).await?;
    let ids: Vec<i64> = due.iter().map(|d| d.build_id).collect();
    let by_energy = db::status::energy_forecasts(conn, &ids)
        .await?
        .into_iter()
        .map(|(id, shim, disc)| (id, (shim, disc)))
        .collect();
    let zone = page.zone.clone();
    let backup_notice = counter_notice(backups, user, &zone);
    let page = FrontPage {
        page,
        q: q.q,
        found,
        found_total,
        recent,
        due,
        by_energy,
        backup_notice,
    };
    Ok((page.render()?, zone))
}
