//! The whole route table, read from the source of the router, checked for access: every page
//! and API route except sign-in, health, static files and the customer's sheet link needs a
//! session or a token; admin routes refuse a tech.

use axum::body::Body;
use axum::http::{Method, Request, StatusCode, header};

use crate::support::TestApp;

/// (method, path) of every route in `server/web.rs` and (under /api/v1) `server/web/api.rs`.
fn route_table() -> Vec<(Method, String)> {
    let mut out = Vec::new();
    for (file, prefix) in [("server/web.rs", ""), ("server/web/api.rs", "/api/v1")] {
        let src =
            std::fs::read_to_string(format!("{}/{file}", env!("CARGO_MANIFEST_DIR"))).unwrap();
        let mut rest = src.as_str();
        while let Some(at) = rest.find(".route(") {
            rest = &rest[at + ".route(".len()..];
            // The call's text up to its balanced closing parenthesis.
            let mut depth = 1;
            let end = rest
                .char_indices()
                .find(|(_, c)| {
                    match c {
                        '(' => depth += 1,
                        ')' => depth -= 1,
                        _ => {}
                    }
                    depth == 0
                })
                .map(|(i, _)| i)
                .unwrap();
            let call = &rest[..end];
            let path = call.split('"').nth(1).unwrap();
            for (name, method) in [
                ("get(", Method::GET),
                ("post(", Method::POST),
                ("put(", Method::PUT),
                ("delete(", Method::DELETE),
            ] {
                let found = call.match_indices(name).any(|(i, _)| {
                    i == 0
                        || !call.as_bytes()[i - 1].is_ascii_alphanumeric()
                            && call.as_bytes()[i - 1] != b'_'
                });
                if found {
                    out.push((method, format!("{prefix}{path}")));
                }
            }
        }
    }
    out
}

fn concrete(path: &str) -> String {
    path.replace("{id}", "1")
        .replace("{secret}", &"ab".repeat(32))
}

const PUBLIC: [(&str, &str); 6] = [
    ("GET", "/login"),
    ("POST", "/login"),
    ("GET", "/healthz"),
    ("GET", "/static/style.css"),
    ("GET", "/static/print.js"),
    ("GET", "/s/{secret}"),
];

fn is_admin_route(path: &str) -> bool {
    [
        "/settings",
        "/users",
        "/customers/deleted",
        "/delete",
        "/restore",
        "/backup",
    ]
    .iter()
    .any(|p| path.starts_with(p) || path.ends_with(p) || path.contains(&format!("{p}/")))
}

#[tokio::test]
async fn every_route_but_the_public_ones_needs_a_login_or_a_token() {
    let table = route_table();
    assert!(
        table.len() >= 50,
        "the route table was read ({} routes)",
        table.len()
    );
    for (m, p) in PUBLIC {
        assert!(
            table
                .iter()
                .any(|(method, path)| method.as_str() == m && path == p),
            "public route {m} {p} exists"
        );
    }
    let app = TestApp::new().await;
    for (method, path) in &table {
        let public = PUBLIC
            .iter()
            .any(|(m, p)| *m == method.as_str() && p == path);
        let mut req = Request::builder()
            .method(method.clone())
            .uri(concrete(path));
        let body = if *method == Method::GET {
            Body::empty()
        } else if path.starts_with("/api/") {
            req = req.header(header::CONTENT_TYPE, "application/json");
            Body::from("{}")
        } else {
            req = req.header(header::CONTENT_TYPE, "application/x-www-form-urlencoded");
            Body::from("a=b")
        };
        let reply = app.send(req.body(body).unwrap()).await;
        if public {
            assert!(
                reply.status != StatusCode::UNAUTHORIZED && reply.status.as_u16() != 303
                    || path == "/login",
                "{method} {path} is public: {}",
                reply.status
            );
        } else if path.starts_with("/api/") {
            assert_eq!(
                reply.status,
                StatusCode::UNAUTHORIZED,
                "{method} {path} without a token"
            );
        } else {
            assert_eq!(
                reply.status,
                StatusCode::SEE_OTHER,
                "{method} {path} without a session"
            );
            assert!(
                reply.location().starts_with("/login"),
                "{method} {path} sends to the login page"
            );
        }
    }
}

#[tokio::test]
async fn admin_routes_refuse_a_tech() {
    let app = TestApp::new().await;
    let tech = app.login("sam").await;
    let admin_routes: Vec<(Method, String)> = route_table()
        .into_iter()
        .filter(|(_, p)| is_admin_route(p))
        .collect();
    assert!(admin_routes.len() >= 8, "{admin_routes:?}");
    for (method, path) in admin_routes {
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
