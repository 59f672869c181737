//! The web layer: every route with its access in one table, the middleware stack, and one module
//! per page group.

/// The JSON API: the records, the calculations, the data-log analysis.
mod api;
/// The HTTP plumbing: the serving loop, the route table, extractors, one-time notes, the page
/// cache.
pub mod http;
/// The server-rendered pages, by area.
mod pages;

use std::sync::Arc;
use std::time::Duration;

use axum::Router;
use axum::extract::DefaultBodyLimit;
use axum::http::{HeaderValue, StatusCode, header};
use axum::response::IntoResponse;
use sqlx::SqlitePool;
use tokio::sync::Semaphore;
use tower_http::compression::predicate::{DefaultPredicate, Predicate, SizeAbove};
use tower_http::compression::{CompressionLayer, CompressionLevel};
use tower_http::csrf::CsrfLayer;
use tower_http::limit::RequestBodyLimitLayer;
use tower_http::set_header::SetResponseHeaderLayer;
use tower_http::trace::TraceLayer;

use crate::backup::plan::Fixed;
use crate::backup::scheduler::Backups;
use crate::db::customers::Customer;
use crate::records::stored::{Build, Car};
use http::routes::{Access, RouteInfo, Routes, get, post};
pub use pages::login::{
    PURGE_BATCH, RESERVED_SIGN_IN_SLOTS, SIGN_IN_SLOTS, TRACKED_CAP, forget_old_failures,
};

/// What every handler can reach.
#[derive(Clone)]
pub struct AppState {
    pub pool: SqlitePool,
    /// The pages' reads of a whole build and of a customer search, outside any write
    /// (`db::read`).
    pub reader: Arc<crate::db::read::Reader>,
    /// Password checks allowed at once (see `pages::login::SIGN_IN_SLOTS`); a sign-in that finds
    /// none free answers 429 at once instead of queueing.
    pub sign_ins: Arc<Semaphore>,
    /// Password checks kept for clients with no recent failure (see
    /// `pages::login::RESERVED_SIGN_IN_SLOTS`), waited for in turn.
    pub reserved_sign_ins: Arc<Semaphore>,
    /// `--public-url`: the address customer links are built from (no trailing `/`).
    pub public_url: Option<Arc<str>>,
    /// Data-log files sent and waiting for their column mapping (memory only).
    pub staged_logs: Arc<pages::passes::Staging>,
    /// Spreadsheets sent and waiting for their mapping and import (memory only).
    pub staged_imports: Arc<pages::admin::import::Staging>,
    /// Sessions and rendered pages reused while nothing has been committed (`web::cache`).
    pub cache: Arc<http::cache::Cache>,
    /// The scheduled backups and what they did (`crate::backup::scheduler`).
    pub backups: Arc<Backups>,
    /// Heavy work on bounded blocking threads, turns per caller (`web::http::heavy`).
    pub heavy: Arc<http::heavy::Heavy>,
    /// The last analysis of each stored log, thinned for its page (`pages::passes::Views`).
    pub log_views: Arc<pages::passes::Views>,
    /// The writers' queue: one write transaction at a time, in the order they asked (see
    /// [`AppState::write`]).
    writers: Arc<tokio::sync::Mutex<()>>,
}

impl AppState {
    /// The state of a server on `pool`; starts the cache's watcher and the backup schedule
    /// (as stored under Settings), so it needs a Tokio runtime.
    pub fn new(pool: SqlitePool) -> Self {
        Self::with_backups(pool, Fixed::default())
    }

    /// The same, with the backup values given at start (`serve --backup-*`), which win over
    /// the stored schedule.
    pub fn with_backups(pool: SqlitePool, fixed: Fixed) -> Self {
        let cache = Arc::new(http::cache::Cache::default());
        http::cache::watch(Arc::downgrade(&cache), &pool);
        let backups = Backups::new(fixed, pool.connect_options().get_filename());
        // What the counter says about the backups is part of its cached page.
        let pages = Arc::downgrade(&cache);
        backups.on_change(move || {
            if let Some(pages) = pages.upgrade() {
                pages.changed();
            }
        });
        backups.start(pool.clone());
        Self {
            reader: crate::db::read::Reader::new(pool.connect_options().get_filename()),
            pool,
            sign_ins: Arc::new(Semaphore::new(pages::login::SIGN_IN_SLOTS)),
            reserved_sign_ins: Arc::new(Semaphore::new(pages::login::RESERVED_SIGN_IN_SLOTS)),
            public_url: None,
            staged_logs: pages::passes::staging(),
            staged_imports: pages::admin::import::staging(),
            cache,
            backups,
            heavy: Arc::default(),
            log_views: Arc::default(),
            writers: Arc::default(),
        }
    }

    /// The same state, reached by people at `url` (see `--public-url`).
    #[must_use]
    pub fn with_public_url(mut self, url: Option<String>) -> Self {
        self.public_url = url.map(|u| Arc::from(u.trim_end_matches('/')));
        self
    }

    /// The same, rendering every page afresh (`serve --no-page-cache`, and the tests that
    /// compare a cached page with a fresh one); sessions are still remembered.
    #[must_use]
    pub fn without_page_cache(self) -> Self {
        self.cache.keep_no_pages();
        self
    }

    /// Whether the session cookie is `Secure`: the server is reached over https.
    pub fn secure_cookies(&self) -> bool {
        self.public_url
            .as_deref()
            .is_some_and(|u| u.starts_with("https://"))
    }

    /// Opens the request's write transaction on behalf of a staff member (see
    /// `db::audit::begin_as`): every change in it is audited under their name.
    ///
    /// SQLite lets one transaction write at a time. Writers wait here in a queue served first
    /// come, first served (Tokio's mutex is fair), before they take a pooled connection, so the
    /// lock is handed on in order instead of by SQLite's busy handler (which sleeps and retries,
    /// so an unlucky writer could wait up to its 10 s timeout while later ones went first), and
    /// waiting writers leave the pool's connections to the readers.
    pub async fn write(&self, user: &http::extract::CurrentUser) -> Result<Write, sqlx::Error> {
        self.write_as(user.id, &user.username).await
    }

    /// The same for the staff member `user_id` named `username`, before they have a session
    /// (a sign-in storing their password hashed again).
    pub async fn write_as(&self, user_id: i64, username: &str) -> Result<Write, sqlx::Error> {
        let turn = Arc::clone(&self.writers).lock_owned().await;
        let tx = crate::db::audit::begin_as(&self.pool, Some(user_id), username).await?;
        Ok(Write {
            tx,
            cache: Arc::clone(&self.cache),
            _turn: turn,
        })
    }
}

/// A write transaction from [`AppState::write`]: used as a connection, rolled back when dropped
/// uncommitted. Its commit first works out the work-due status of every build its writes marked
/// stale (so no write path can forget it), then tells the page cache at once, so the page a
/// save redirects to shows the save.
pub struct Write {
    tx: sqlx::Transaction<'static, sqlx::Sqlite>,
    cache: Arc<http::cache::Cache>,
    /// This writer's turn in the queue, handed on when the transaction ends (committed or
    /// dropped: the field is dropped after `tx`, whose drop rolls back).
    _turn: tokio::sync::OwnedMutexGuard<()>,
}

impl Write {
    pub async fn commit(mut self) -> Result<(), sqlx::Error> {
        crate::status::refresh_stale(&mut self.tx).await?;
        self.tx.commit().await?;
        self.cache.changed();
        Ok(())
    }
}

impl std::ops::Deref for Write {
    type Target = sqlx::SqliteConnection;
    fn deref(&self) -> &Self::Target {
        &self.tx
    }
}

impl std::ops::DerefMut for Write {
    fn deref_mut(&mut self) -> &mut Self::Target {
        &mut self.tx
    }
}

/// Largest request body accepted (forms and JSON are small; a torque curve is a few KB).
pub const BODY_LIMIT_BYTES: usize = 256 * 1024;

/// Where the JSON API is nested.
pub const API_PREFIX: &str = "/api/v1";

/// Every page route with who may reach it (see `routes`: the access is checked by the group a
/// route is declared in).
fn pages() -> Routes {
    use Access::{Admin, Public, SignedIn};
    Routes::new()
        .route(SignedIn, "/", get(pages::counter::front))
        .route(
            Public,
            "/login",
            get(pages::login::form)
                .post(pages::login::submit)
                .body_limit(pages::login::LOGIN_BODY_LIMIT_BYTES),
        )
        .route(SignedIn, "/logout", post(pages::login::logout))
        .route(
            SignedIn,
            "/customers",
            get(pages::customers::customer::list).post(pages::record_form::create_customer),
        )
        .route(
            SignedIn,
            "/customers/new",
            get(pages::record_form::new_customer),
        )
        .route(
            Admin,
            "/customers/deleted",
            get(pages::customers::customer::deleted),
        )
        .route(
            Admin,
            "/customers/{id}/delete",
            post(pages::customers::customer::delete),
        )
        .route(
            Admin,
            "/customers/{id}/restore",
            post(pages::customers::customer::restore),
        )
        .route(
            SignedIn,
            "/customers/{id}",
            get(pages::customers::customer::show).post(pages::record_form::update::<Customer>),
        )
        .route(
            SignedIn,
            "/customers/{id}/edit",
            get(pages::record_form::edit::<Customer>),
        )
        .route(
            SignedIn,
            "/customers/{id}/cars",
            post(pages::record_form::create_under::<Car>),
        )
        .route(
            SignedIn,
            "/customers/{id}/cars/new",
            get(pages::record_form::new_under::<Car>),
        )
        .route(
            SignedIn,
            "/cars/{id}",
            get(pages::customers::car::show).post(pages::record_form::update::<Car>),
        )
        .route(
            SignedIn,
            "/cars/{id}/edit",
            get(pages::record_form::edit::<Car>),
        )
        .route(
            SignedIn,
            "/cars/{id}/builds",
            post(pages::record_form::create_under::<Build>),
        )
        .route(
            SignedIn,
            "/cars/{id}/builds/new",
            get(pages::record_form::new_under::<Build>),
        )
        .route(
            SignedIn,
            "/builds/{id}",
            get(pages::builds::show::show).post(pages::record_form::update::<Build>),
        )
        .route(
            SignedIn,
            "/builds/{id}/edit",
            get(pages::record_form::edit::<Build>),
        )
        .route(
            SignedIn,
            "/builds/{id}/tune",
            get(pages::builds::tune::tune),
        )
        .route(
            SignedIn,
            "/builds/{id}/history",
            get(pages::history::history),
        )
        .route(SignedIn, "/builds/{id}/sheets", post(pages::sheets::create))
        .route(SignedIn, "/sheets/{id}", get(pages::sheets::show))
        .route(
            SignedIn,
            "/sheets/{id}/links",
            post(pages::sheets::create_link),
        )
        .route(
            SignedIn,
            "/links/{id}/revoke",
            post(pages::sheets::revoke_link),
        )
        .route(Public, "/s/{secret}", get(pages::sheets::public))
        .route(
            SignedIn,
            "/builds/{id}/setups",
            post(pages::builds::entries::add::<crate::records::setup::SetupInput>),
        )
        .route(
            SignedIn,
            "/builds/{id}/bench-tests",
            post(pages::builds::entries::add::<crate::records::bench::BenchInput>),
        )
        .route(
            SignedIn,
            "/builds/{id}/heights",
            get(pages::builds::lists::heights)
                .post(pages::builds::entries::add::<crate::records::height::HeightInput>),
        )
        .route(
            SignedIn,
            "/builds/{id}/passes",
            get(pages::builds::lists::passes)
                .post(pages::builds::entries::add::<crate::records::pass::PassInput>),
        )
        .route(SignedIn, "/passes/{id}", get(pages::passes::show))
        .route(
            SignedIn,
            "/passes/{id}/log",
            post(pages::passes::upload).body_limit(api::datalogs::LOG_BODY_LIMIT_BYTES),
        )
        .route(
            SignedIn,
            "/passes/{id}/log/map",
            get(pages::passes::map_form).post(pages::passes::map_save),
        )
        .route(
            Admin,
            "/settings",
            get(pages::admin::settings::settings).post(pages::admin::settings::save_settings),
        )
        .route(
            Admin,
            "/users",
            get(pages::admin::settings::users).post(pages::admin::settings::add_user),
        )
        .route(
            Admin,
            "/users/{id}/disable",
            post(pages::admin::settings::disable_user),
        )
        .route(
            Admin,
            "/users/{id}/enable",
            post(pages::admin::settings::enable_user),
        )
        .route(
            Admin,
            "/users/{id}/password",
            post(pages::admin::settings::reset_password),
        )
        .route(
            Admin,
            "/users/{id}/display-name",
            post(pages::admin::settings::set_display_name),
        )
        .route(
            Admin,
            "/import",
            get(pages::admin::import::page)
                .post(pages::admin::import::upload)
                .body_limit(api::import::IMPORT_BODY_LIMIT_BYTES),
        )
        .route(
            Admin,
            "/import/map",
            get(pages::admin::import::map_form).post(pages::admin::import::map_save),
        )
        .route(Admin, "/backup", get(pages::admin::backup::page))
        .route(
            Admin,
            "/backup/download",
            get(pages::admin::backup::download),
        )
        .route(
            Admin,
            "/backup/schedule",
            post(pages::admin::backup::save_schedule),
        )
        .route(
            Admin,
            "/backup/now",
            post(pages::admin::backup::back_up_now),
        )
        .route(
            Admin,
            "/backup/export.json",
            get(pages::admin::backup::export_json),
        )
        .route(Public, "/healthz", get(healthz))
        .route(Public, "/static/style.css", get(stylesheet))
        .route(Public, "/static/print.js", get(print_script))
        .route(Public, "/static/page.js", get(page_script))
        .route(Public, "/static/upload.js", get(upload_script))
}

/// Every route the application serves (pages, then the API under [`API_PREFIX`]), with who may
/// reach it: the table the router is built from.
pub fn route_table() -> Vec<RouteInfo> {
    let mut table = pages().table("");
    table.extend(api::routes().table(API_PREFIX));
    table
}

/// Every operation the API's OpenAPI description (`GET /api/v1/openapi.json`) describes, as
/// (method, path under [`API_PREFIX`]): for checking it against [`route_table`].
pub fn api_described() -> Vec<(String, String)> {
    api::openapi::described()
}

/// The whole application: routes, then middleware (outermost last).
pub fn app(state: AppState) -> Router {
    Router::new()
        .merge(pages().into_router(&state))
        .nest(
            API_PREFIX,
            api::routes()
                .into_router(&state)
                .fallback(api::not_found),
        )
        .fallback(not_found)
        .with_state(state)
        .layer(SetResponseHeaderLayer::if_not_present(
            header::CONTENT_SECURITY_POLICY,
            HeaderValue::from_static(
                "default-src 'self'; img-src 'self' data:; style-src 'self'; form-action 'self'; frame-ancestors 'none'",
            ),
        ))
        .layer(SetResponseHeaderLayer::overriding(
            header::X_CONTENT_TYPE_OPTIONS,
            HeaderValue::from_static("nosniff"),
        ))
        // The customer's link page sets its own (no-referrer): keep it.
        .layer(SetResponseHeaderLayer::if_not_present(
            header::REFERRER_POLICY,
            HeaderValue::from_static("same-origin"),
        ))
        // Signed-in pages are never kept by a browser or proxy cache; the stylesheet and
        // script set their own caching.
        .layer(SetResponseHeaderLayer::if_not_present(
            header::CACHE_CONTROL,
            HeaderValue::from_static("no-store"),
        ))
        .layer(
            CompressionLayer::new()
                .quality(CompressionLevel::Fastest)
                .compress_when(DefaultPredicate::new().and(SizeAbove::new(1024))),
        )
        .layer(CsrfLayer::new())
        // Every body is read through axum's limit, BODY_LIMIT_BYTES unless a route raises it
        // (`Methods::body_limit`, the data-log uploads); a declared length past the largest
        // of them is refused before the body is read at all.
        .layer(DefaultBodyLimit::max(BODY_LIMIT_BYTES))
        .layer(RequestBodyLimitLayer::new(api::datalogs::LOG_BODY_LIMIT_BYTES))
        .layer(axum::middleware::from_fn(deadline))
        .layer(TraceLayer::new_for_http())
}

/// Time a request may take besides receiving its body.
pub const REQUEST_TIME: Duration = Duration::from_secs(30);

/// The slowest average rate a large body is allowed to arrive at, bytes a second (the same as
/// the connection's `serve::BodyPace`, which cuts a slower one).
pub const BODY_MIN_RATE: f64 = 32.0 * 1024.0;

/// Time allowed for a request whose body is `bytes` long: [`REQUEST_TIME`] and the body at
/// [`BODY_MIN_RATE`] (a 50 MB log at 1 MB/s completes; a flat 30 s cut it below 1.7 MB/s).
pub fn time_allowed(bytes: u64) -> Duration {
    REQUEST_TIME + Duration::from_secs_f64(bytes as f64 / BODY_MIN_RATE)
}

/// 408 past [`time_allowed`] for the body declared (a body with no length: the largest
/// accepted).
async fn deadline(
    req: axum::extract::Request,
    next: axum::middleware::Next,
) -> axum::response::Response {
    let declared = req
        .headers()
        .get(header::CONTENT_LENGTH)
        .and_then(|v| v.to_str().ok())
        .and_then(|v| v.parse::<u64>().ok());
    let chunked = req.headers().contains_key(header::TRANSFER_ENCODING);
    let bytes = declared
        .unwrap_or(if chunked {
            api::datalogs::LOG_BODY_LIMIT_BYTES as u64
        } else {
            0
        })
        .min(api::datalogs::LOG_BODY_LIMIT_BYTES as u64);
    match tokio::time::timeout(time_allowed(bytes), next.run(req)).await {
        Ok(response) => response,
        Err(_) => StatusCode::REQUEST_TIMEOUT.into_response(),
    }
}

async fn healthz() -> &'static str {
    "ok"
}

async fn not_found() -> crate::error::AppError {
    crate::error::AppError::NotFound
}

/// A file built into the binary (so the server runs from anywhere), served with its type and
/// kept by browsers for an hour.
fn asset(content_type: &'static str, body: &'static str) -> impl IntoResponse {
    (
        [
            (header::CONTENT_TYPE, content_type),
            (header::CACHE_CONTROL, "public, max-age=3600"),
        ],
        body,
    )
}

const JS: &str = "text/javascript; charset=utf-8";

/// The one stylesheet (screen and print).
async fn stylesheet() -> impl IntoResponse {
    asset(
        "text/css; charset=utf-8",
        include_str!("../static/style.css"),
    )
}

/// The Print and Copy buttons (the sheet prints without them too).
async fn print_script() -> impl IntoResponse {
    asset(JS, include_str!("../static/print.js"))
}

/// The build page's script: a link to a folded form opens it (the page works without it).
async fn page_script() -> impl IntoResponse {
    asset(JS, include_str!("../static/page.js"))
}

/// The upload form's progress (the form works without it).
async fn upload_script() -> impl IntoResponse {
    asset(JS, include_str!("../static/upload.js"))
}
