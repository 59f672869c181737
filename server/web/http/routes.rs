//! The route table: every route is declared with who may reach it, and the router is built from
//! that declaration. Each access level is a sub-router whose layer checks it before the handler
//! runs, so a route cannot be added without deciding its access (`clippy.toml` forbids calling
//! `Router::route` anywhere else), and the tests walk the same table.

use axum::Router;
use axum::extract::Request;
use axum::handler::Handler;
use axum::http::Method;
use axum::middleware::{self, Next};
use axum::response::Response;
use axum::routing::{self, MethodRouter};

use crate::error::AppError;
use crate::web::AppState;
use crate::web::http::extract::{ApiUser, CurrentUser};

/// Who may reach a route.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Access {
    /// Anyone: sign-in, health, static files, a customer's sheet link.
    Public,
    /// A signed-in staff member (browser session); anyone else is sent to the sign-in page.
    SignedIn,
    /// A signed-in admin: not signed in goes to the sign-in page, a tech gets 403.
    Admin,
    /// The JSON API: a valid bearer token, else 401.
    Token,
}

/// One row of the route table.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct RouteInfo {
    pub access: Access,
    pub method: Method,
    /// The path in the router's own syntax (`/builds/{id}`), prefix included.
    pub path: String,
}

/// A path's handlers by method, the methods recorded for the table.
pub struct Methods {
    methods: Vec<Method>,
    router: MethodRouter<AppState>,
}

/// Handles GET (and HEAD) with `handler`.
pub fn get<H: Handler<T, AppState>, T: 'static>(handler: H) -> Methods {
    Methods {
        methods: vec![Method::GET],
        router: routing::get(handler),
    }
}

/// Handles POST with `handler`.
pub fn post<H: Handler<T, AppState>, T: 'static>(handler: H) -> Methods {
    Methods {
        methods: vec![Method::POST],
        router: routing::post(handler),
    }
}

impl Methods {
    /// Also handles POST with `handler`.
    pub fn post<H: Handler<T, AppState>, T: 'static>(mut self, handler: H) -> Self {
        self.methods.push(Method::POST);
        self.router = self.router.post(handler);
        self
    }

    /// Accepts bodies up to `bytes` on this path (the application's limit is
    /// [`crate::web::BODY_LIMIT_BYTES`]; a data-log upload needs more).
    pub fn body_limit(mut self, bytes: usize) -> Self {
        self.router = self
            .router
            .layer(axum::extract::DefaultBodyLimit::max(bytes));
        self
    }

    /// Also handles PUT with `handler`.
    pub fn put<H: Handler<T, AppState>, T: 'static>(mut self, handler: H) -> Self {
        self.methods.push(Method::PUT);
        self.router = self.router.put(handler);
        self
    }
}

/// Routes grouped by access: one sub-router per level, and the table of what was declared.
#[derive(Default)]
pub struct Routes {
    table: Vec<RouteInfo>,
    public: Router<AppState>,
    signed_in: Router<AppState>,
    admin: Router<AppState>,
    token: Router<AppState>,
}

impl Routes {
    /// No routes yet.
    pub fn new() -> Self {
        Self::default()
    }

    /// Routes `path` to `methods`, reachable as `access` says.
    pub fn route(mut self, access: Access, path: &str, methods: Methods) -> Self {
        for method in methods.methods {
            self.table.push(RouteInfo {
                access,
                method,
                path: path.to_string(),
            });
        }
        let group = match access {
            Access::Public => &mut self.public,
            Access::SignedIn => &mut self.signed_in,
            Access::Admin => &mut self.admin,
            Access::Token => &mut self.token,
        };
        #[expect(
            clippy::disallowed_methods,
            reason = "the one place a route is added, with its access decided"
        )]
        let routed = std::mem::take(group).route(path, methods.router);
        *group = routed;
        self
    }

    /// The table, every path under `prefix` (where the router is nested).
    pub fn table(&self, prefix: &str) -> Vec<RouteInfo> {
        self.table
            .iter()
            .map(|r| RouteInfo {
                path: format!("{prefix}{}", r.path),
                ..r.clone()
            })
            .collect()
    }

    /// One router: each group behind the layer that checks its access. The checks run only for
    /// a matched route (`route_layer`), so unknown paths stay 404 and wrong methods 405.
    pub fn into_router(self, state: &AppState) -> Router<AppState> {
        let used = |access| self.table.iter().any(|r| r.access == access);
        let mut router = self.public;
        // (axum refuses a route layer on a group with no routes.)
        if used(Access::SignedIn) {
            router = router.merge(
                self.signed_in
                    .route_layer(middleware::from_fn_with_state(state.clone(), signed_in)),
            );
        }
        if used(Access::Admin) {
            router = router.merge(
                self.admin
                    .route_layer(middleware::from_fn_with_state(state.clone(), admin)),
            );
        }
        if used(Access::Token) {
            router = router.merge(
                self.token
                    .route_layer(middleware::from_fn_with_state(state.clone(), token)),
            );
        }
        router
    }
}

/// Lets a signed-in user through, handing the handler the user already looked up.
async fn signed_in(user: CurrentUser, mut request: Request, next: Next) -> Response {
    request.extensions_mut().insert(user);
    next.run(request).await
}

/// Lets an admin through; a tech gets 403.
async fn admin(user: CurrentUser, mut request: Request, next: Next) -> Result<Response, AppError> {
    user.require_admin()?;
    request.extensions_mut().insert(user);
    Ok(next.run(request).await)
}

/// Lets a valid API token through.
async fn token(user: ApiUser, mut request: Request, next: Next) -> Response {
    request.extensions_mut().insert(user);
    next.run(request).await
}
