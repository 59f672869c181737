//! Customer pages: the searchable list, a customer's page with their cars, new and edit.

use askama::Template;
use axum::extract::{Query, RawQuery, State};
use axum::response::{Html, IntoResponse, Redirect, Response};
use serde::Deserialize;

use crate::db;
use crate::db::customers::{Customer, CustomerSummary, Order};
use crate::error::{AppError, AppResult};
use crate::records::date::ShopZone;
use crate::records::stored::Car;
use crate::records::{FieldErrors, FormData};
use crate::web::AppState;
use crate::web::http::cache::PageKey;
use crate::web::http::extract::{CurrentUser, PathId, SignedForm, Viewer};
use crate::web::http::flash::RecordView;
use crate::web::pages::layout::Layout;

#[derive(Debug, Default, Deserialize)]
#[serde(default)]
pub struct ListQuery {
    pub q: String,
    /// Read leniently: anything but a page number shows the first page.
    pub page: String,
    /// `last` sorts by last name; anything else by best match (a search) or by name.
    pub sort: String,
}

#[derive(Template)]
#[template(path = "customers/list.html")]
pub struct ListPage {
    pub page: Layout,
    pub q: String,
    pub rows: Vec<CustomerSummary>,
    pub total: i64,
    pub page_no: i64,
    pub pages: i64,
    pub by_last_name: bool,
}

impl ListPage {
    /// The link to another page of the same search, in the same order.
    pub fn page_link(&self, page_no: &i64) -> String {
        self.link(*page_no, self.by_last_name)
    }

    /// The link to the same search sorted by last name (`true`) or the usual way.
    pub fn sort_link(&self, by_last_name: &bool) -> String {
        self.link(0, *by_last_name)
    }

    fn link(&self, page_no: i64, by_last_name: bool) -> String {
        let mut query = form_urlencoded::Serializer::new(String::new());
        if !self.q.is_empty() {
            query.append_pair("q", &self.q);
        }
        if by_last_name {
            query.append_pair("sort", "last");
        }
        if page_no > 0 {
            query.append_pair("page", &page_no.to_string());
        }
        match query.finish() {
            q if q.is_empty() => "/customers".into(),
            q => format!("/customers?{q}"),
        }
    }
}

pub async fn list(
    State(state): State<AppState>,
    user: CurrentUser,
    Query(q): Query<ListQuery>,
    RawQuery(raw): RawQuery,
) -> AppResult<Html<String>> {
    let key = PageKey::Customers(raw.unwrap_or_default());
    let state_ref = &state;
    let render = |stand_in: Viewer| async move { render_list(state_ref, &stand_in, q).await };
    Ok(Html(state.cache.page(key, &user, render).await?))
}

/// One page of the customer list or of a search, and the shop's zone it was rendered in.
async fn render_list(
    state: &AppState,
    user: &Viewer,
    q: ListQuery,
) -> AppResult<(String, ShopZone)> {
    let page_no = q.page.parse::<i64>().unwrap_or(0).clamp(0, 100_000);
    let order = Order::from_query(&q.sort);
    // The search and the shop's settings in one read: no pooled connection.
    let query = q.q.clone();
    let ((rows, total), settings) = (state.reader)
        .read(move |conn| {
            let found = db::search::list(conn, &query, page_no, order)?;
            Ok((found, db::read::settings(conn)?))
        })
        .await?;
    let page = Layout::new(&settings, user, "customers", "Customers");
    let pages = (total + db::PAGE_SIZE - 1) / db::PAGE_SIZE;
    let zone = page.zone.clone();
    let html = ListPage {
        page,
        q: q.q,
        rows,
        total,
        page_no,
        pages,
        by_last_name: order == Order::LastName,
    }
    .render()?;
    Ok((html, zone))
}

#[derive(Template)]
#[template(path = "customers/show.html")]
pub struct ShowPage {
    pub page: Layout,
    pub customer: Customer,
    pub cars: Vec<Car>,
    /// "Saved: ..." after a save, shown once.
    pub flash: Option<String>,
}

pub async fn show(RecordView(state, user, id, flash): RecordView) -> AppResult<Response> {
    let mut conn = state.pool.acquire().await?;
    let customer = db::customers::by_id(&mut conn, id)
        .await?
        .ok_or(AppError::NotFound)?;
    let (page, _) = Layout::load(&mut conn, &user, "customers", customer.data.name.clone()).await?;
    let cars = db::cars::for_customer(&mut conn, id).await?;
    let page = ShowPage {
        page,
        customer,
        cars,
        flash: flash.note.clone(),
    };
    Ok(flash.respond(Html(page.render()?)))
}

#[derive(Template)]
#[template(path = "customers/form.html")]
pub struct FormPage {
    pub page: Layout,
    /// The customer being edited, or `None` for a new one.
    pub id: Option<i64>,
    pub form: FormData,
    pub errors: FieldErrors,
}

impl FormPage {
    pub fn action(&self) -> String {
        self.id
            .map_or("/customers".into(), |id| format!("/customers/{id}"))
    }
}

/// POST /customers/{id}/delete (admin): hides the customer and everything under them; nothing
/// is erased, and an admin can restore it.
pub async fn delete(
    State(state): State<AppState>,
    PathId(id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    set_deleted(&state, &signed, id, true).await?;
    Ok(Redirect::to("/customers/deleted").into_response())
}

/// POST /customers/{id}/restore (admin)
pub async fn restore(
    State(state): State<AppState>,
    PathId(id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    set_deleted(&state, &signed, id, false).await?;
    Ok(Redirect::to(&format!("/customers/{id}")).into_response())
}

async fn set_deleted(
    state: &AppState,
    signed: &SignedForm,
    id: i64,
    deleted: bool,
) -> AppResult<()> {
    signed.user.require_admin()?;
    let mut tx = state.write(&signed.user).await?;
    if !db::customers::set_deleted(&mut tx, id, deleted).await? {
        return Err(AppError::NotFound);
    }
    tx.commit().await?;
    Ok(())
}

#[derive(Template)]
#[template(path = "customers/deleted.html")]
pub struct DeletedPage {
    pub page: Layout,
    pub rows: Vec<Customer>,
}

/// GET /customers/deleted (admin): customers that can be restored.
pub async fn deleted(State(state): State<AppState>, user: CurrentUser) -> AppResult<Html<String>> {
    user.require_admin()?;
    let mut conn = state.pool.acquire().await?;
    let (page, _) = Layout::load(&mut conn, &user, "customers", "Deleted customers").await?;
    let rows = db::customers::deleted(&mut conn).await?;
    Ok(Html(DeletedPage { page, rows }.render()?))
}
