//! The browser test harness: the server binary, chromedriver with headless Chromium, page
//! helpers, and the folder where screenshots and PDFs are kept.

use std::io::{BufRead, BufReader};
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::time::Duration;

use fantoccini::{Client, ClientBuilder, Locator};
use serde_json::{Value, json};

/// Chromium flags for a closed network: no background traffic, no updates, no sync.
const CHROME_FLAGS: [&str; 10] = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-dev-shm-usage",
    "--window-size=1280,900",
];

fn temp_path(name: &str) -> PathBuf {
    let nanos = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .unwrap()
        .subsec_nanos();
    std::env::temp_dir().join(format!(
        "lockpoint-browser-{}-{nanos}-{name}",
        std::process::id()
    ))
}

fn free_port() -> u16 {
    std::net::TcpListener::bind("127.0.0.1:0")
        .unwrap()
        .local_addr()
        .unwrap()
        .port()
}

/// The real `lockpoint serve --demo` on a temporary database and a free port.
pub struct Server {
    child: Child,
    db: PathBuf,
    pub base: String,
}

impl Server {
    pub async fn start() -> Self {
        let db = temp_path("shop.db");
        let mut child = Command::new(env!("CARGO_BIN_EXE_lockpoint-e2e-server"))
            .args(["serve", "--demo", "--addr", "127.0.0.1:0", "--db"])
            .arg(&db)
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .expect("the lockpoint binary starts");
        let mut lines = BufReader::new(child.stdout.take().unwrap()).lines();
        let base = loop {
            let line = lines.next().expect("server prints its address").unwrap();
            if let Some(addr) = line.strip_prefix("listening on ") {
                break addr.to_string();
            }
        };
        Self { child, db, base }
    }
}

impl Drop for Server {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
        for suffix in ["", "-wal", "-shm"] {
            let _ = std::fs::remove_file(format!("{}{suffix}", self.db.display()));
        }
    }
}

/// chromedriver on a free port; each session gets a fresh Chromium profile.
pub struct Browser {
    child: Child,
    url: String,
}

impl Browser {
    pub async fn start() -> Self {
        let port = free_port();
        let child =
            Command::new(std::env::var("CHROMEDRIVER").unwrap_or_else(|_| "chromedriver".into()))
                .arg(format!("--port={port}"))
                .stdout(Stdio::null())
                .stderr(Stdio::null())
                .spawn()
                .expect("chromedriver is installed (apt-get install chromium chromium-driver)");
        let url = format!("http://127.0.0.1:{port}");
        for _ in 0..100 {
            if std::net::TcpStream::connect(("127.0.0.1", port)).is_ok() {
                break;
            }
            tokio::time::sleep(Duration::from_millis(100)).await;
        }
        Self { child, url }
    }

    /// A new browser session with its own empty profile (no cookies, no login).
    pub async fn session(&self) -> Client {
        let profile = temp_path("profile");
        let mut args: Vec<String> = CHROME_FLAGS.iter().map(|s| s.to_string()).collect();
        args.push(format!("--user-data-dir={}", profile.display()));
        let mut options = json!({ "args": args });
        // Debian's /usr/bin/chromium is a wrapper script that adds noise; use the binary.
        if Path::new("/usr/lib/chromium/chromium").exists() {
            options["binary"] = json!("/usr/lib/chromium/chromium");
        }
        let mut caps = serde_json::Map::new();
        caps.insert("goog:chromeOptions".into(), options);
        let connector = hyper_util::client::legacy::connect::HttpConnector::new();
        ClientBuilder::new(connector)
            .capabilities(caps)
            .connect(&self.url)
            .await
            .expect("a Chromium session starts")
    }
}

impl Drop for Browser {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

/// One browser test's setting: the demo shop served, chromedriver, the test's folder of
/// artifacts and a Chromium session signed in at the counter (`base` is the shop's address).
pub struct SignedIn {
    /// Kept for the test's life (the server stops when it is dropped).
    _server: Server,
    pub browser: Browser,
    pub shots: Artifacts,
    pub c: Client,
    pub base: String,
}

impl SignedIn {
    /// Starts all of it for the test `test` (its artifacts go to a folder of that name).
    pub async fn start(test: &str) -> Self {
        let server = Server::start().await;
        let browser = Browser::start().await;
        let shots = Artifacts::named(test);
        let c = browser.session().await;
        let base = server.base.clone();
        sign_in(&c, &base).await;
        Self {
            _server: server,
            browser,
            shots,
            c,
            base,
        }
    }
}

/// Signs in as the demo shop's first account and waits for the counter.
pub async fn sign_in(c: &Client, base: &str) {
    c.goto(&format!("{base}/login")).await.unwrap();
    fill(c, "input[name=username]", "demo").await;
    fill(c, "input[name=password]", "lockpoint-demo").await;
    click(c, "button[type=submit]").await;
    expect_text(c, "Work due").await;
}

pub async fn fill(c: &Client, css: &str, value: &str) {
    let field = c
        .find(Locator::Css(css))
        .await
        .unwrap_or_else(|e| panic!("no field {css}: {e}"));
    field.clear().await.unwrap();
    field.send_keys(value).await.unwrap();
}

/// Clicks something that loads a new page (a submit button or a link) and waits until the old
/// page is gone, so the next step never acts on the page being left.
pub async fn click(c: &Client, css: &str) {
    let target = c
        .find(Locator::Css(css))
        .await
        .unwrap_or_else(|e| panic!("nothing to click at {css}: {e}"));
    click_and_wait(c, target).await;
}

pub async fn click_link(c: &Client, text: &str) {
    let target = c
        .find(Locator::LinkText(text))
        .await
        .unwrap_or_else(|e| panic!("no link {text:?}: {e}"));
    click_and_wait(c, target).await;
}

/// Clicks something that changes the page in place (opens a `<details>`).
pub async fn toggle(c: &Client, css: &str) {
    c.find(Locator::Css(css))
        .await
        .unwrap_or_else(|e| panic!("nothing at {css}: {e}"))
        .click()
        .await
        .unwrap();
}

async fn click_and_wait(c: &Client, target: fantoccini::elements::Element) {
    let old_page = c.find(Locator::Css("html")).await.unwrap();
    target.click().await.unwrap();
    for _ in 0..100 {
        // A reference to the old page's root goes stale once the new page has replaced it.
        if old_page.tag_name().await.is_err() {
            break;
        }
        tokio::time::sleep(Duration::from_millis(50)).await;
    }
    wait_loaded(c).await;
}

async fn wait_loaded(c: &Client) {
    for _ in 0..100 {
        let state = c.execute("return document.readyState", vec![]).await;
        if state.ok().and_then(|v| v.as_str().map(|s| s == "complete")) == Some(true) {
            return;
        }
        tokio::time::sleep(Duration::from_millis(50)).await;
    }
}

/// The visible text of the page, or empty while a new page is loading.
async fn body_text(c: &Client) -> String {
    match c.find(Locator::Css("body")).await {
        Ok(body) => body.text().await.unwrap_or_default(),
        Err(_) => String::new(),
    }
}

/// Waits (up to 10 s) for text to appear in the page.
pub async fn expect_text(c: &Client, text: &str) {
    for _ in 0..100 {
        if body_text(c).await.contains(text) {
            return;
        }
        tokio::time::sleep(Duration::from_millis(100)).await;
    }
    let url = c
        .current_url()
        .await
        .map(|u| u.to_string())
        .unwrap_or_default();
    panic!("{text:?} not found on {url}:\n{}", body_text(c).await);
}

/// The text of the first element at `css`.
pub async fn text_of(c: &Client, css: &str) -> String {
    c.find(Locator::Css(css))
        .await
        .unwrap_or_else(|_| panic!("{css} on the page"))
        .text()
        .await
        .unwrap()
}

/// The page's whole height in CSS px, 900 when it cannot be read, kept within `min..=max`.
pub async fn page_height(c: &Client, min: u64, max: u64) -> u64 {
    c.execute("return document.documentElement.scrollHeight", vec![])
        .await
        .unwrap()
        .as_u64()
        .unwrap_or(900)
        .clamp(min, max)
}

/// The value beside a label in the sheet's figures.
pub async fn figure(c: &Client, label: &str) -> String {
    let script = "const dts = [...document.querySelectorAll('dt')];
                  const dt = dts.find(d => d.textContent.trim() === arguments[0]);
                  return dt ? dt.nextElementSibling.textContent.trim() : '';";
    let v = c
        .execute(script, vec![Value::String(label.into())])
        .await
        .unwrap();
    v.as_str().unwrap_or_default().to_string()
}

/// Prints the page to PDF on a paper size, with the sheet's own margins and no scaling.
pub async fn print(c: &Client, size: fantoccini::wd::PrintSize) -> Vec<u8> {
    let config = fantoccini::wd::PrintConfiguration::builder()
        .size(size)
        .margins(fantoccini::wd::PrintMargins {
            top: 0.9,
            bottom: 0.9,
            left: 0.9,
            right: 0.9,
        })
        .shrink_to_fit(false)
        .background(false)
        .build()
        .unwrap();
    c.print(config).await.expect("Chromium prints to PDF")
}

pub fn pdf_pages(path: &Path) -> usize {
    let out = Command::new("pdfinfo")
        .arg(path)
        .output()
        .expect("pdfinfo (poppler-utils) is installed");
    let info = String::from_utf8_lossy(&out.stdout);
    info.lines()
        .find_map(|l| l.strip_prefix("Pages:"))
        .and_then(|n| n.trim().parse().ok())
        .unwrap_or(0)
}

pub fn pdf_text(path: &Path) -> String {
    let out = Command::new("pdftotext")
        .arg(path)
        .arg("-")
        .output()
        .expect("pdftotext (poppler-utils) is installed");
    String::from_utf8_lossy(&out.stdout).into_owned()
}

/// Where this run keeps its screenshots and PDFs, for a person to look at.
pub struct Artifacts {
    pub dir: PathBuf,
}

impl Artifacts {
    pub fn new() -> Self {
        Self::named("workflow")
    }

    /// The artifacts of one test, in a folder of their own (tests run side by side).
    pub fn named(test: &str) -> Self {
        let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR"))
            .join("browser-artifacts")
            .join(test);
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        Self { dir }
    }

    /// What a person sees on a screen of `width` x `height` CSS pixels (the first screen of
    /// the page, unscrolled).
    pub async fn screen(&self, c: &Client, name: &str, width: u32, height: u32) {
        set_viewport(c, width, height).await;
        c.execute("window.scrollTo(0, 0)", vec![]).await.unwrap();
        let png = c.screenshot().await.unwrap();
        self.save(&format!("{name}-{width}x{height}.png"), &png);
    }

    pub fn save(&self, name: &str, bytes: &[u8]) -> PathBuf {
        let path = self.dir.join(name);
        std::fs::write(&path, bytes).unwrap();
        path
    }

    /// A full-page screenshot (the window is grown to the page's height first).
    pub async fn page(&self, c: &Client, name: &str) {
        c.set_window_size(1280, 900).await.unwrap();
        let height = page_height(c, 600, 6000).await;
        c.set_window_size(1280, height as u32 + 120).await.unwrap();
        let png = c.screenshot().await.unwrap();
        self.save(&format!("{name}.png"), &png);
        c.set_window_size(1280, 900).await.unwrap();
    }

    /// The PDF's first page as a PNG.
    pub fn pdf_first_page(&self, pdf: &Path, name: &str) {
        let status = Command::new("pdftoppm")
            .args(["-png", "-r", "80", "-f", "1", "-l", "1", "-singlefile"])
            .arg(pdf)
            .arg(self.dir.join(name))
            .status()
            .expect("pdftoppm (poppler-utils) is installed");
        assert!(status.success());
    }
}

/// Resizes the window so that the page's viewport (not the window with its frame) is `width` x
/// `height` CSS pixels.
pub async fn set_viewport(c: &Client, width: u32, height: u32) {
    c.set_window_size(width, height).await.unwrap();
    let inner = c
        .execute("return [window.innerWidth, window.innerHeight]", vec![])
        .await
        .unwrap();
    let (iw, ih) = (
        inner[0].as_u64().unwrap_or(width as u64) as u32,
        inner[1].as_u64().unwrap_or(height as u64) as u32,
    );
    c.set_window_size(
        width + (width - iw.min(width)),
        height + (height - ih.min(height)),
    )
    .await
    .unwrap();
}
