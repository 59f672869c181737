//! Helpers shared by the integration tests: a fresh app on a temporary SQLite file, requests
//! through the real router, and a signed-in browser-like client.

use std::io::{BufRead, BufReader, Read, Write};
use std::net::TcpStream;
use std::path::{Path, PathBuf};
use std::process::{Child, ChildStdout, Command, Output, Stdio};
use std::sync::atomic::{AtomicU32, Ordering};
use std::time::{Duration, Instant};

use axum::Router;
use axum::body::Body;
use axum::http::{Request, StatusCode, header};
use http_body_util::BodyExt;
use lockpoint::records::user::{NewUser, Role};
use lockpoint::{AppState, app, auth, db};
use sqlx::sqlite::SqliteConnectOptions;
use sqlx::{Connection, SqliteConnection, SqlitePool};
use tower::ServiceExt;

pub const PASSWORD: &str = "correct-horse-battery";

/// A temporary database file, removed when dropped.
pub struct TempDb {
    pub path: PathBuf,
}

impl TempDb {
    pub fn new() -> Self {
        static N: AtomicU32 = AtomicU32::new(0);
        let path = std::env::temp_dir().join(format!(
            "lockpoint-test-{}-{}.db",
            std::process::id(),
            N.fetch_add(1, Ordering::Relaxed)
        ));
        Self { path }
    }
}

impl Drop for TempDb {
    fn drop(&mut self) {
        for suffix in ["", "-wal", "-shm", ".lock"] {
            let _ = std::fs::remove_file(format!("{}{suffix}", self.path.display()));
        }
    }
}

pub struct TestApp {
    pub pool: SqlitePool,
    pub router: Router,
    /// The state the router was built with (its sign-in slots, for one).
    pub state: AppState,
    _db: TempDb,
}

/// An answer with its body read.
pub struct Reply {
    pub status: StatusCode,
    pub headers: axum::http::HeaderMap,
    pub body: String,
}

impl Reply {
    pub fn location(&self) -> &str {
        self.headers
            .get(header::LOCATION)
            .and_then(|v| v.to_str().ok())
            .unwrap_or("")
    }

    /// Asserts that the body holds `text`, showing the whole body when it does not.
    #[track_caller]
    pub fn assert_shows(&self, text: &str) {
        assert!(self.body.contains(text), "{text:?} not in:\n{}", self.body);
    }

    pub fn json(&self) -> serde_json::Value {
        serde_json::from_str(&self.body).unwrap_or_else(|e| panic!("not JSON ({e}): {}", self.body))
    }
}

/// The JSON answer (200) to `body` posted to the API's `path` by `sam` on a fresh app.
pub async fn fresh_answer(path: &str, body: serde_json::Value) -> serde_json::Value {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    app.post_json_ok(path, &token, body).await
}

impl TestApp {
    /// A migrated database with an admin `boss` and a tech `sam` (password [`PASSWORD`]).
    pub async fn new() -> Self {
        Self::reached_at(None).await
    }

    /// The same, served as if reached at `--public-url` `url`.
    pub async fn reached_at(public_url: Option<&str>) -> Self {
        let tmp = TempDb::new();
        let pool = db::open(&tmp.path).await.expect("database opens");
        let hash = auth::hash_password(PASSWORD.into()).await.unwrap();
        let mut conn = pool.acquire().await.unwrap();
        for (name, role) in [("boss", Role::Admin), ("sam", Role::Tech)] {
            let user = NewUser::parse(name, PASSWORD, role).unwrap();
            db::users::insert(&mut conn, &user, &hash).await.unwrap();
        }
        drop(conn);
        let state = AppState::new(pool.clone()).with_public_url(public_url.map(String::from));
        Self::serving(state, tmp)
    }

    /// The demo shop (`serve --demo`) on a fresh database; sign in with [`TestApp::login_demo`].
    pub async fn demo() -> Self {
        let tmp = TempDb::new();
        let pool = db::open(&tmp.path).await.expect("database opens");
        assert!(lockpoint::demo::seed_if_empty(&pool).await.unwrap());
        Self::serving(AppState::new(pool), tmp)
    }

    /// The real router on `state`, keeping the database file `tmp` for the test's life.
    fn serving(state: AppState, tmp: TempDb) -> Self {
        Self {
            pool: state.pool.clone(),
            router: app(state.clone()),
            state,
            _db: tmp,
        }
    }

    pub async fn send(&self, req: Request<Body>) -> Reply {
        let res = self
            .router
            .clone()
            .oneshot(req)
            .await
            .expect("router answers");
        let status = res.status();
        let headers = res.headers().clone();
        let bytes = res.into_body().collect().await.unwrap().to_bytes();
        Reply {
            status,
            headers,
            body: String::from_utf8_lossy(&bytes).into_owned(),
        }
    }

    pub async fn get(&self, path: &str, cookie: Option<&str>) -> Reply {
        let mut req = Request::get(path);
        if let Some(c) = cookie {
            req = req.header(header::COOKIE, c);
        }
        self.send(req.body(Body::empty()).unwrap()).await
    }

    /// [`TestApp::get`] of a page that must be shown (200); its body is shown when it is not.
    pub async fn get_ok(&self, path: &str, cookie: Option<&str>) -> Reply {
        let reply = self.get(path, cookie).await;
        assert_eq!(reply.status, StatusCode::OK, "{path}: {}", reply.body);
        reply
    }

    pub async fn post_form(
        &self,
        path: &str,
        pairs: &[(&str, &str)],
        cookie: Option<&str>,
    ) -> Reply {
        let body = form_encode(pairs);
        let mut req =
            Request::post(path).header(header::CONTENT_TYPE, "application/x-www-form-urlencoded");
        if let Some(c) = cookie {
            req = req.header(header::COOKIE, c);
        }
        self.send(req.body(Body::from(body)).unwrap()).await
    }

    /// The sign-in form posted without a session: `username`, `password` and, when given, the
    /// page to go on to.
    pub async fn post_login(&self, username: &str, password: &str, next: Option<&str>) -> Reply {
        let mut form = vec![("username", username), ("password", password)];
        form.extend(next.map(|n| ("next", n)));
        self.post_form("/login", &form, None).await
    }

    /// Signs in through the login form and returns a client carrying the session.
    pub async fn login(&self, name: &str) -> Client<'_> {
        self.login_with(name, PASSWORD).await
    }

    /// Signs in as the demo shop's technician.
    pub async fn login_demo(&self) -> Client<'_> {
        self.login_with(
            lockpoint::demo::DEMO_TECH_USERNAME,
            lockpoint::demo::DEMO_PASSWORD,
        )
        .await
    }

    async fn login_with(&self, name: &str, password: &str) -> Client<'_> {
        let reply = self.post_login(name, password, Some("/")).await;
        assert_eq!(
            reply.status,
            StatusCode::SEE_OTHER,
            "login failed: {}",
            reply.body
        );
        let set_cookie = reply
            .headers
            .get(header::SET_COOKIE)
            .unwrap()
            .to_str()
            .unwrap();
        let cookie = set_cookie.split(';').next().unwrap().to_string();
        let front = self.get("/", Some(&cookie)).await;
        let csrf = csrf_of(&front.body);
        Client {
            app: self,
            cookie,
            csrf,
        }
    }

    /// Signs in as the tech `sam`, records the build of [`Client::record_build`] and its first
    /// setup (2026-11-02: 1.5 turns, 24 g per lever, nominal μ); the client and the build's
    /// page path.
    pub async fn set_up_build(&self) -> (Client<'_>, String) {
        let client = self.login("sam").await;
        let build = client.record_build().await;
        client.record_setup(&build, "2026-11-02", "1.5", "24").await;
        (client, build)
    }

    /// A new API token for a user.
    pub async fn token(&self, name: &str) -> String {
        let mut conn = self.pool.acquire().await.unwrap();
        let user = db::users::by_name(&mut conn, name).await.unwrap().unwrap();
        let token = auth::new_secret("lp_");
        db::tokens::insert(&mut conn, user.id, &auth::hash_secret(&token))
            .await
            .unwrap();
        token
    }

    pub async fn api(
        &self,
        method: &str,
        path: &str,
        token: Option<&str>,
        body: Option<serde_json::Value>,
    ) -> Reply {
        let mut req = Request::builder().method(method).uri(path);
        if let Some(t) = token {
            req = req.header(header::AUTHORIZATION, format!("Bearer {t}"));
        }
        let body = match body {
            Some(v) => {
                req = req.header(header::CONTENT_TYPE, "application/json");
                Body::from(v.to_string())
            }
            None => Body::empty(),
        };
        self.send(req.body(body).unwrap()).await
    }

    /// [`TestApp::api`], where the answer must have `status` (its body is shown when not).
    pub async fn api_answers(
        &self,
        status: StatusCode,
        method: &str,
        path: &str,
        token: Option<&str>,
        body: Option<serde_json::Value>,
    ) -> Reply {
        let reply = self.api(method, path, token, body).await;
        assert_eq!(reply.status, status, "{method} {path}: {}", reply.body);
        reply
    }

    /// Creates a customer (the JSON `customer`) and a car of theirs (`car`) through the record
    /// API with `token`, each of which must be created (201); the car as the API answers it.
    pub async fn api_car(
        &self,
        token: Option<&str>,
        customer: serde_json::Value,
        car: serde_json::Value,
    ) -> serde_json::Value {
        let created = StatusCode::CREATED;
        let c = self
            .api_answers(created, "POST", "/api/v1/customers", token, Some(customer))
            .await
            .json();
        let cars = format!("/api/v1/customers/{}/cars", c["id"]);
        self.api_answers(created, "POST", &cars, token, Some(car))
            .await
            .json()
    }

    /// Changes one field of the stored build at `build` (its page path, `/builds/3`) through
    /// the record API as the tech `sam`: GET it, set `field` to `value`, PUT it back, which
    /// must be saved (200); the answer to the PUT.
    pub async fn edit_build(&self, build: &str, field: &str, value: serde_json::Value) -> Reply {
        let token = self.token("sam").await;
        let t = Some(token.as_str());
        let path = format!("/api/v1{build}");
        let mut body = self.api("GET", &path, t, None).await.json();
        body[field] = value;
        self.api_answers(StatusCode::OK, "PUT", &path, t, Some(body))
            .await
    }

    /// `POST` of a JSON body with an API token.
    pub async fn post_json(&self, path: &str, token: &str, body: serde_json::Value) -> Reply {
        self.api("POST", path, Some(token), Some(body)).await
    }

    /// `POST` of a JSON body with an API token that must be answered 200 (the start of the
    /// answer is shown when it is not); the answer's JSON.
    pub async fn post_json_ok(
        &self,
        path: &str,
        token: &str,
        body: serde_json::Value,
    ) -> serde_json::Value {
        let reply = self.post_json(path, token, body).await;
        let start = &reply.body[..reply.body.len().min(2000)];
        assert_eq!(reply.status, StatusCode::OK, "{path}: {start}");
        reply.json()
    }

    /// `PUT` of a JSON body with an API token.
    pub async fn put_json(&self, path: &str, token: &str, body: serde_json::Value) -> Reply {
        self.api("PUT", path, Some(token), Some(body)).await
    }

    /// `GET` with an API token.
    pub async fn get_json(&self, path: &str, token: &str) -> Reply {
        self.api("GET", path, Some(token), None).await
    }

    pub async fn count(&self, table: &str) -> i64 {
        sqlx::query_scalar(sqlx::AssertSqlSafe(format!("SELECT COUNT(*) FROM {table}")))
            .fetch_one(&self.pool)
            .await
            .unwrap()
    }
}

/// A signed-in browser: its session cookie and the CSRF token its forms carry.
pub struct Client<'a> {
    pub app: &'a TestApp,
    pub cookie: String,
    pub csrf: String,
}

const CURVE: &str = "rpm,torque\n3000,410\n4000,455\n5000,480\n6000,470\n7000,430";

impl Client<'_> {
    pub async fn get(&self, path: &str) -> Reply {
        self.app.get(path, Some(&self.cookie)).await
    }

    /// Creates a customer (Avery Lindqvist, 555-0101), a car with a torque curve, and a
    /// single-disc build with levers and a three-shim stack through the forms; returns the
    /// build's page path.
    pub async fn record_build(&self) -> String {
        let client = self;
        let c = client
            .post(
                "/customers",
                &[("name", "Avery Lindqvist"), ("phone", "555-0101")],
            )
            .await;
        assert_eq!(c.status, StatusCode::SEE_OTHER, "{}", c.body);
        let customer = id_from(c.location());
        let car = client
            .post(
                &format!("/customers/{customer}/cars"),
                &[
                    ("description", "two-door, 7.2 L V8, 4-speed"),
                    ("launch_rpm", "4500"),
                    ("torque_curve", CURVE),
                ],
            )
            .await;
        assert_eq!(car.status, StatusCode::SEE_OTHER, "{}", car.body);
        let car_id = id_from(car.location());
        let build = client
            .post(
                &format!("/cars/{car_id}/builds"),
                &[
                    &[("disc_count", "1"), ("facing_material", "organic")],
                    crate::build_form::BUILD_FORM,
                    &[("shimming_limit", "0.015"), ("status", "active")],
                ]
                .concat(),
            )
            .await;
        assert_eq!(build.status, StatusCode::SEE_OTHER, "{}", build.body);
        build.location().to_string()
    }

    /// A page that must be shown (200); the answer's body is shown when it is not.
    pub async fn get_ok(&self, path: &str) -> Reply {
        let reply = self.get(path).await;
        assert_eq!(reply.status, StatusCode::OK, "{path}: {}", reply.body);
        reply
    }

    /// Follows a redirect as a browser would: a GET of its Location with the session and any
    /// cookie the redirect set (a note left for the next page).
    pub async fn follow(&self, reply: &Reply) -> Reply {
        assert_eq!(reply.status, StatusCode::SEE_OTHER, "{}", reply.body);
        let mut cookies = vec![self.cookie.clone()];
        for set in reply.headers.get_all(header::SET_COOKIE) {
            let pair = set.to_str().unwrap().split(';').next().unwrap().to_string();
            cookies.push(pair);
        }
        self.app
            .get(reply.location(), Some(&cookies.join("; ")))
            .await
    }

    /// Makes a customer link to the setup sheet at `sheet` valid for `valid_days` days through
    /// the sheet's form, and follows the redirect to the page that shows it.
    pub async fn new_link(&self, sheet: &str, valid_days: &str) -> Reply {
        let made = self
            .post(&format!("{sheet}/links"), &[("valid_days", valid_days)])
            .await;
        self.follow(&made).await
    }

    /// Posts a form with the CSRF token, as the page's own form would.
    pub async fn post(&self, path: &str, pairs: &[(&str, &str)]) -> Reply {
        let mut all = vec![("_csrf", self.csrf.as_str())];
        all.extend_from_slice(pairs);
        self.app.post_form(path, &all, Some(&self.cookie)).await
    }

    /// Posts a form that must be saved: the answer is the redirect (303) a saved form gives,
    /// and the page that came back instead is shown when it is not.
    pub async fn post_saved(&self, path: &str, pairs: &[(&str, &str)]) -> Reply {
        let reply = self.post(path, pairs).await;
        assert_eq!(
            reply.status,
            StatusCode::SEE_OTHER,
            "{path}: {}",
            reply.body
        );
        reply
    }

    /// Saves a setup on the build at `build` (its page path) from `day`: `turns` of the
    /// adjuster, `counterweight_g` per lever and the facing's nominal μ.
    pub async fn record_setup(
        &self,
        build: &str,
        day: &str,
        turns: &str,
        counterweight_g: &str,
    ) -> Reply {
        let setup = [
            ("changed_on", day),
            ("adjuster_turns", turns),
            ("counterweight_g", counterweight_g),
        ];
        self.post_saved(&format!("{build}/setups"), &setup).await
    }

    /// Saves a cover height on the build at `build` measured on `day`: `height` (in) after
    /// `passes` passes since the last one.
    pub async fn record_height(&self, build: &str, day: &str, height: &str, passes: &str) -> Reply {
        let fields = [("measured_on", day), ("height", height), ("passes", passes)];
        self.post_saved(&format!("{build}/heights"), &fields).await
    }

    /// Saves a bench test on `day` of the six springs at a 1.600 in test height: spring 1
    /// with `first_free` (in) and `first_force` (lbf), the other five 2.100 in free and 190 lbf.
    pub async fn record_bench_test(
        &self,
        build: &str,
        day: &str,
        first_free: &str,
        first_force: &str,
    ) -> Reply {
        let mut form = vec![("tested_on", day), ("test_height", "1.600")];
        let names: Vec<(String, String)> = (1..=6)
            .map(|i| (format!("free_length_{i}"), format!("force_{i}")))
            .collect();
        for (i, (free, force)) in names.iter().enumerate() {
            form.push((free, if i == 0 { first_free } else { "2.100" }));
            form.push((force, if i == 0 { first_force } else { "190" }));
        }
        self.post_saved(&format!("{build}/bench-tests"), &form)
            .await
    }
}

/// The settings form as a shop admin fills it in: display units, the units the numbers on the
/// form were shown in, the shimming limit (in those) and the time zone; the rest as shipped.
pub fn shop_settings<'a>(
    units: &'a str,
    shown: &'a str,
    shimming_limit: &'a str,
    zone: &'a str,
) -> [(&'static str, &'a str); 9] {
    [
        ("name", "Test shop"),
        ("units", units),
        ("shown_units", shown),
        ("spring_spread_pct", "5"),
        ("spring_sag_pct", "3"),
        ("shimming_limit", shimming_limit),
        ("overclamp_factor", "1.5"),
        ("due_within_passes", "10"),
        ("time_zone", zone),
    ]
}

pub fn csrf_of(html: &str) -> String {
    let marker = "name=\"_csrf\" value=\"";
    let start = html.find(marker).expect("page has a CSRF field") + marker.len();
    html[start..].split('"').next().unwrap().to_string()
}

/// The customer link's address as a page shows it (from its `/s/` to the next tag).
pub fn link_in(html: &str) -> String {
    let start = html.find("/s/").expect("a customer link on the page");
    html[start..].chars().take_while(|c| *c != '<').collect()
}

pub fn form_encode(pairs: &[(&str, &str)]) -> String {
    form_urlencoded::Serializer::new(String::new())
        .extend_pairs(pairs)
        .finish()
}

/// The id at the end of a redirect such as `/customers/12`.
pub fn id_from(location: &str) -> String {
    location
        .split('#')
        .next()
        .unwrap()
        .rsplit('/')
        .next()
        .unwrap()
        .to_string()
}

/// Runs `sql` on the SQLite file at `path` (made when missing) on a connection of its own.
pub async fn execute_on_file(path: &Path, sql: &'static str) {
    let options = SqliteConnectOptions::new()
        .filename(path)
        .create_if_missing(true);
    let mut conn = SqliteConnection::connect_with(&options).await.unwrap();
    sqlx::query(sql).execute(&mut conn).await.unwrap();
    conn.close().await.unwrap();
}

/// A copy of the shop database `shop` at `path` that a newer Lockpoint would have made: it
/// records a migration this one does not know.
pub async fn newer_copy(shop: &Path, path: &Path) {
    std::fs::copy(shop, path).unwrap();
    execute_on_file(
        path,
        "INSERT INTO _sqlx_migrations (version, description, success, checksum, execution_time)
         VALUES (9999, 'from the future', 1, x'00', 0)",
    )
    .await;
}

/// The real `lockpoint` binary, as a command to give arguments to.
pub fn lockpoint() -> Command {
    Command::new(env!("CARGO_BIN_EXE_lockpoint"))
}

/// The binary run to completion with `args`, `stdin` written to it.
pub fn run_cli(args: &[&str], stdin: &str) -> Output {
    let mut child = lockpoint()
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the binary starts");
    child
        .stdin
        .take()
        .unwrap()
        .write_all(stdin.as_bytes())
        .unwrap();
    child.wait_with_output().unwrap()
}

/// [`run_cli`], which must succeed (its stderr is shown when it does not); its stdout.
pub fn cli_ok(args: &[&str], stdin: &str) -> String {
    let out = run_cli(args, stdin);
    assert!(
        out.status.success(),
        "lockpoint {args:?} failed: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

/// Adds the arguments that serve `db` at a free loopback port (it prints the address).
pub fn serving<'a>(cmd: &'a mut Command, db: &Path) -> &'a mut Command {
    cmd.args([
        "serve",
        "--db",
        db.to_str().unwrap(),
        "--addr",
        "127.0.0.1:0",
    ])
}

/// A running `lockpoint serve` (the real binary) on a database file; killed (SIGKILL) when
/// dropped, so a failing test leaves nothing behind.
pub struct Server {
    pub child: Child,
    pub addr: String,
    // Kept open so the server never writes into a closed pipe.
    _stdout: BufReader<ChildStdout>,
}

impl Server {
    /// Starts it on `db` and waits for the address it announces.
    pub fn start(db: &Path) -> Self {
        Self::start_with_env(db, &[])
    }

    /// The same, with environment variables set for the server process.
    pub fn start_with_env(db: &Path, env: &[(&str, &Path)]) -> Self {
        Self::spawn(
            serving(&mut lockpoint(), db)
                .envs(env.iter().copied())
                .stderr(Stdio::null()),
        )
    }

    /// Runs `cmd` (a `serve` command, see [`serving`]) and waits for the address it announces.
    pub fn spawn(cmd: &mut Command) -> Self {
        let mut child = cmd
            .stdin(Stdio::null())
            .stdout(Stdio::piped())
            .spawn()
            .expect("the server starts");
        let mut stdout = BufReader::new(child.stdout.take().unwrap());
        let mut line = String::new();
        stdout.read_line(&mut line).unwrap();
        let Some(addr) = line.trim().strip_prefix("listening on http://") else {
            let _ = child.kill();
            panic!("unexpected first line from the server: {line:?}")
        };
        Self {
            addr: addr.to_string(),
            child,
            _stdout: stdout,
        }
    }

    /// SIGKILL: no shutdown handler runs, nothing is flushed or closed.
    pub fn kill(mut self) {
        self.child.kill().expect("the server can be killed");
        self.child.wait().unwrap();
    }

    /// One request on its own connection: (status, headers, body).
    pub fn send(
        &self,
        method: &str,
        path: &str,
        headers: &[(&str, &str)],
        body: &str,
    ) -> (u16, String, String) {
        let mut stream = TcpStream::connect(&self.addr).unwrap();
        stream
            .set_read_timeout(Some(Duration::from_secs(30)))
            .unwrap();
        let mut head = format!(
            "{method} {path} HTTP/1.1\r\nHost: {}\r\nConnection: close\r\nContent-Length: {}\r\n",
            self.addr,
            body.len()
        );
        for (k, v) in headers {
            head.push_str(&format!("{k}: {v}\r\n"));
        }
        head.push_str("\r\n");
        stream.write_all(head.as_bytes()).unwrap();
        stream.write_all(body.as_bytes()).unwrap();
        let mut raw = Vec::new();
        stream.read_to_end(&mut raw).unwrap();
        let text = String::from_utf8_lossy(&raw).into_owned();
        let (head, body) = text.split_once("\r\n\r\n").unwrap_or((&text, ""));
        let status = head
            .split(' ')
            .nth(1)
            .and_then(|s| s.parse().ok())
            .unwrap_or(0);
        (status, head.to_string(), body.to_string())
    }

    /// One request on its own connection: the status line and the whole answer.
    pub fn get(&self, path: &str) -> String {
        let mut stream = TcpStream::connect(&self.addr).unwrap();
        stream
            .set_read_timeout(Some(Duration::from_secs(20)))
            .unwrap();
        write!(
            stream,
            "GET {path} HTTP/1.1\r\nHost: x\r\nConnection: close\r\n\r\n"
        )
        .unwrap();
        let mut reply = String::new();
        stream.read_to_string(&mut reply).unwrap();
        reply
    }

    /// Sends SIGTERM and waits at most `limit` for the process to end; its exit status.
    pub fn terminate_within(&mut self, limit: Duration) -> (std::process::ExitStatus, Duration) {
        let started = Instant::now();
        let pid = self.child.id().to_string();
        assert!(
            Command::new("kill")
                .args(["-TERM", &pid])
                .status()
                .unwrap()
                .success()
        );
        loop {
            if let Some(status) = self.child.try_wait().unwrap() {
                return (status, started.elapsed());
            }
            assert!(
                started.elapsed() < limit,
                "still running {limit:?} after SIGTERM"
            );
            std::thread::sleep(Duration::from_millis(50));
        }
    }
}

impl Drop for Server {
    fn drop(&mut self) {
        if let Ok(None) = self.child.try_wait() {
            let _ = self.child.kill();
            let _ = self.child.wait();
        }
    }
}
