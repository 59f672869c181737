//! The route table the router is built from (`lockpoint::web::route_table`), walked route by
//! route: every route answers as its declared access says. Public: anyone; signed in: a session,
//! else the sign-in page; admin: a tech gets 403; the API: a bearer token, else 401.

use axum::body::Body;
use axum::http::{Method, Request, StatusCode, header};
use lockpoint::web::http::routes::{Access, RouteInfo};
use lockpoint::web::route_table;

use crate::support::{Reply, TestApp};

fn concrete(path: &str) -> String {
    path.replace("{id}", "1")
        .replace("{secret}", &"ab".repeat(32))
}

/// The only routes anyone may reach. Making a route public is a decision to review here.
const PUBLIC: [(&str, &str); 8] = [
    ("GET", "/login"),
    ("POST", "/login"),
    ("GET", "/healthz"),
    ("GET", "/static/style.css"),
    ("GET", "/static/print.js"),
    ("GET", "/static/page.js"),
    ("GET", "/static/upload.js"),
    ("GET", "/s/{secret}"),
];

fn of(access: Access) -> Vec<RouteInfo> {
    route_table()
        .into_iter()
        .filter(|r| r.access == access)
        .collect()
}

/// A request with no session or token; a body of the route's kind for writes.
async fn anonymous(app: &TestApp, route: &RouteInfo, path: &str) -> Reply {
    let mut req = Request::builder().method(route.method.clone()).uri(path);
    let body = if route.method == Method::GET {
        Body::empty()
    } else if route.path.starts_with("/api/") {
        req = req.header(header::CONTENT_TYPE, "application/json");
        Body::from("{}")
    } else {
        req = req.header(header::CONTENT_TYPE, "application/x-www-form-urlencoded");
        Body::from("a=b")
    };
    app.send(req.body(body).unwrap()).await
}

#[test]
fn the_table_lists_each_route_once_and_only_the_known_ones_are_public() {
    let table = route_table();
    assert!(table.len() >= 50, "{} routes", table.len());
    for (i, r) in table.iter().enumerate() {
        assert!(
            !table[..i]
                .iter()
                .any(|o| o.method == r.method && o.path == r.path),
            "{} {} is declared twice",
            r.method,
            r.path
        );
        assert_eq!(
            r.path.starts_with("/api/"),
            r.access == Access::Token,
            "{} {}: the API and only the API is reached by token",
            r.method,
            r.path
        );
    }
    let mut public: Vec<(String, String)> = of(Access::Public)
        .into_iter()
        .map(|r| (r.method.to_string(), r.path))
        .collect();
    public.sort();
    let mut expected: Vec<(String, String)> = PUBLIC
        .iter()
        .map(|(m, p)| (m.to_string(), p.to_string()))
        .collect();
    expected.sort();
    assert_eq!(public, expected);
}

#[tokio::test]
async fn every_route_without_credentials_answers_as_its_access_says() {
    let app = TestApp::new().await;
    for route in route_table() {
        let (method, path) = (&route.method, &route.path);
        let reply = anonymous(&app, &route, &concrete(path)).await;
        assert_ne!(
            reply.status,
            StatusCode::METHOD_NOT_ALLOWED,
            "{method} {path} is served as the table says"
        );
        match route.access {
            Access::Public => assert!(
                reply.status != StatusCode::UNAUTHORIZED && reply.status != StatusCode::SEE_OTHER
                    || path == "/login",
                "{method} {path} is public: {}",
                reply.status
            ),
            Access::SignedIn | Access::Admin => {
                assert_eq!(
                    reply.status,
                    StatusCode::SEE_OTHER,
                    "{method} {path} without a session"
                );
                assert!(
                    reply.location().starts_with("/login"),
                    "{method} {path} sends to the sign-in page"
                );
            }
            Access::Token => assert_eq!(
                reply.status,
                StatusCode::UNAUTHORIZED,
                "{method} {path} without a token"
            ),
        }
    }
}

#[tokio::test]
async fn admin_routes_refuse_a_tech() {
    let app = TestApp::new().await;
    let tech = app.login("sam").await;
    let admin_routes = of(Access::Admin);
    assert!(admin_routes.len() >= 8, "{admin_routes:?}");
    for RouteInfo { method, path, .. } in admin_routes {
        let reply = if method == Method::GET {
            tech.get(&concrete(&path)).await
        } else {
            tech.post(&concrete(&path), &[("password", "long-enough-password")])
                .await
        };
        assert_eq!(
            reply.status,
            StatusCode::FORBIDDEN,
            "{method} {path} as a tech"
        );
    }
}

#[tokio::test]
async fn a_tech_reaches_every_signed_in_page_and_an_admin_every_admin_page() {
    let app = TestApp::new().await;
    let tech = app.login("sam").await;
    let admin = app.login("boss").await;
    let mut pages = 0;
    for route in route_table() {
        let who = match route.access {
            Access::SignedIn => &tech,
            Access::Admin => &admin,
            Access::Public | Access::Token => continue,
        };
        if route.method != Method::GET {
            continue;
        }
        pages += 1;
        let reply = who.get(&concrete(&route.path)).await;
        let refused = matches!(
            reply.status,
            StatusCode::UNAUTHORIZED | StatusCode::FORBIDDEN | StatusCode::METHOD_NOT_ALLOWED
        ) || reply.location().starts_with("/login");
        assert!(!refused, "GET {}: {}", route.path, reply.status);
    }
    assert!(pages >= 15, "{pages} pages");
}

#[tokio::test]
async fn access_is_checked_before_the_path_id_is_read() {
    let app = TestApp::new().await;
    let route = |path: &str| RouteInfo {
        access: Access::SignedIn,
        method: Method::POST,
        path: path.into(),
    };
    let reply = anonymous(&app, &route("/cars/{id}/builds"), "/cars/abc/builds").await;
    assert_eq!(reply.status, StatusCode::SEE_OTHER);
    assert!(reply.location().starts_with("/login"));
    let tech = app.login("sam").await;
    let reply = tech.post("/users/abc/disable", &[]).await;
    assert_eq!(reply.status, StatusCode::FORBIDDEN);
    let admin = app.login("boss").await;
    let reply = admin.post("/users/abc/disable", &[]).await;
    assert_eq!(reply.status, StatusCode::NOT_FOUND);
}
