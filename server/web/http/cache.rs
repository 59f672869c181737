//! What the busiest pages reuse while nothing in the database has changed: the sessions behind
//! cookies and whole rendered pages (the counter, the customer list and search, a build's page,
//! its tuning page, a pass's page with its analysed data log).
//!
//! Every entry carries the shop's *generation*, a number that moves on after every commit:
//! at once after a write through [`AppState::write`](crate::web::AppState::write) commits (so the
//! page a save redirects to is never stale), and within [`WATCH_INTERVAL`] after any other
//! commit, by this process or another one (a `lockpoint user` command while the server runs),
//! seen through SQLite's `PRAGMA data_version` on a connection of its own. An entry is used
//! only while the generation is the one it was made in, and an entry is kept only when the
//! generation did not move while it was being made, so no entry ever holds data older than the
//! last commit it could have seen.
//!
//! A cached page is rendered once for every viewer of the same role: the parts that differ per
//! viewer (the CSRF token, the user name) are rendered as *holes*, random markers replaced on
//! the way out. A page with a one-time note, or one re-shown with form errors, is never cached.
//! What changes with the clock alone is at most [`PAGE_MAX_AGE`] behind (a new day is not).

use std::collections::HashMap;
use std::future::Future;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::{Arc, Mutex, Weak};
use std::time::{Duration, Instant};

use sqlx::sqlite::{SqliteConnectOptions, SqliteConnection};
use sqlx::{ConnectOptions, SqlitePool};

use crate::auth;
use crate::db::sessions::SessionUser;
use crate::error::AppResult;
use crate::records::date::{Date, ShopZone};
use crate::web::http::extract::{CurrentUser, Viewer};

/// How often commits from outside [`AppState::write`](crate::web::AppState::write) are looked for.
pub const WATCH_INTERVAL: Duration = Duration::from_millis(100);

/// How long a page is reused at most, for what changes with the clock alone (a customer link
/// that expires counts as live until then); a new day makes a new page at once.
const PAGE_MAX_AGE: Duration = Duration::from_secs(10);

/// Rendered pages kept at most (bytes of HTML): pages of an earlier generation are dropped
/// whenever one is kept, then the largest while over. Sized for the 64 MB goal (DEVELOPERS.md,
/// "The page cache").
const PAGE_BUDGET_BYTES: usize = 4 << 20;

/// Sessions kept at most; past it the table is emptied (each is looked up again once).
const SESSION_CAP: usize = 4096;

/// A page that can be cached, with what picks its content (the query string as sent).
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub enum PageKey {
    Counter(String),
    Customers(String),
    Build(i64),
    Tune(i64, String),
    /// A pass's page, the pass drawn beside it (the parsed `compare`, never the raw query) and
    /// whether the whole file is drawn (`window=all`) rather than the launch.
    Pass(i64, Option<i64>, bool),
}

struct Page {
    generation: u64,
    made: Instant,
    zone: ShopZone,
    today: Date,
    html: Arc<str>,
}

struct Session {
    generation: u64,
    until: Instant,
    user: SessionUser,
}

pub struct Cache {
    generation: AtomicU64,
    /// Off: every page is rendered afresh for its viewer (see [`Cache::keep_no_pages`]).
    keep_pages: AtomicBool,
    /// The random stem of the holes' markers (nobody can type it into a record).
    stem: String,
    sessions: Mutex<HashMap<String, Session>>,
    pages: Mutex<HashMap<(PageKey, bool), Page>>,
    /// Taken while a page is rendered, one per stripe of the pages (by hash).
    renders: [tokio::sync::Mutex<()>; RENDER_STRIPES],
}

/// Stripes of the render locks: two different pages rarely share one.
const RENDER_STRIPES: usize = 64;

fn stripe(slot: &(PageKey, bool)) -> usize {
    use std::hash::{BuildHasher, RandomState};
    static HASHER: std::sync::OnceLock<RandomState> = std::sync::OnceLock::new();
    (HASHER.get_or_init(RandomState::new).hash_one(slot) % RENDER_STRIPES as u64) as usize
}

impl Default for Cache {
    fn default() -> Self {
        Self {
            generation: AtomicU64::new(0),
            keep_pages: AtomicBool::new(true),
            stem: auth::new_secret("hole"),
            sessions: Mutex::default(),
            pages: Mutex::default(),
            renders: std::array::from_fn(|_| tokio::sync::Mutex::new(())),
        }
    }
}

impl Cache {
    /// The generation now.
    pub fn generation(&self) -> u64 {
        self.generation.load(Ordering::Acquire)
    }

    /// From now on renders every page afresh for its real viewer and keeps none.
    pub fn keep_no_pages(&self) {
        self.keep_pages.store(false, Ordering::Release);
    }

    /// Something was committed: nothing cached before now is used again.
    pub fn changed(&self) {
        self.generation.fetch_add(1, Ordering::AcqRel);
    }

    /// The user behind a session (by the hash of its cookie), looked up in the database only
    /// when this generation has not seen it yet.
    pub async fn session(
        &self,
        pool: &SqlitePool,
        token_hash: &str,
    ) -> sqlx::Result<Option<SessionUser>> {
        let generation = self.generation();
        if let Some(seen) = lock(&self.sessions).get(token_hash)
            && seen.generation == generation
            && seen.until > Instant::now()
        {
            return Ok(Some(seen.user.clone()));
        }
        let mut conn = pool.acquire().await?;
        let Some((user, left_s)) = crate::db::sessions::user(&mut conn, token_hash).await? else {
            return Ok(None);
        };
        if self.generation() == generation {
            let mut sessions = lock(&self.sessions);
            if sessions.len() >= SESSION_CAP {
                sessions.clear();
            }
            let until = Instant::now() + Duration::from_secs_f64(left_s.max(0.0));
            sessions.insert(
                token_hash.to_string(),
                Session {
                    generation,
                    until,
                    user: user.clone(),
                },
            );
        }
        Ok(Some(user))
    }

    /// A session ended (sign-out): forgotten at once.
    pub fn forget_session(&self, token_hash: &str) {
        lock(&self.sessions).remove(token_hash);
    }

    /// The page `key` for `user`: the cached one when it is of this generation and today, else
    /// `render`ed for a stand-in user whose CSRF token and name are holes, kept, and filled.
    /// `render` answers the page and the shop's zone it was rendered in.
    pub async fn page<F, Fut>(
        &self,
        key: PageKey,
        user: &CurrentUser,
        render: F,
    ) -> AppResult<String>
    where
        F: FnOnce(Viewer) -> Fut,
        Fut: Future<Output = AppResult<(String, ShopZone)>>,
    {
        if !self.keep_pages.load(Ordering::Acquire) {
            return Ok(render(user.viewer()).await?.0);
        }
        let slot = (key, user.is_admin());
        if let Some(html) = self.fresh(&slot) {
            return Ok(self.fill(&html, user));
        }
        // One render per page at a time: the others asking for it meanwhile wait for that one
        // (a burst of requests after a commit renders it once, not once per request).
        let _turn = self.renders[stripe(&slot)].lock().await;
        if let Some(html) = self.fresh(&slot) {
            return Ok(self.fill(&html, user));
        }
        let generation = self.generation();
        let stand_in = Viewer {
            username: self.hole('U'),
            csrf: self.hole('C'),
            is_admin: user.is_admin(),
        };
        let (html, zone) = render(stand_in).await?;
        let filled = self.fill(&html, user);
        if self.generation() == generation {
            let today = Date::today(&zone);
            self.keep(
                slot,
                Page {
                    generation,
                    made: Instant::now(),
                    zone,
                    today,
                    html: html.into(),
                },
            );
        }
        Ok(filled)
    }

    /// The kept page for `slot`, if it is of this generation, this day and young enough.
    fn fresh(&self, slot: &(PageKey, bool)) -> Option<Arc<str>> {
        let generation = self.generation();
        lock(&self.pages).get(slot).and_then(|p| {
            let fresh = p.generation == generation
                && p.made.elapsed() < PAGE_MAX_AGE
                && Date::today(&p.zone) == p.today;
            fresh.then(|| Arc::clone(&p.html))
        })
    }

    fn keep(&self, slot: (PageKey, bool), page: Page) {
        let mut pages = lock(&self.pages);
        let now = self.generation();
        pages.retain(|_, p| p.generation == now);
        let mut used: usize = pages.values().map(|p| p.html.len()).sum();
        while used + page.html.len() > PAGE_BUDGET_BYTES {
            let Some(largest) = pages
                .iter()
                .max_by_key(|(_, p)| p.html.len())
                .map(|(k, _)| k.clone())
            else {
                break;
            };
            used -= pages.remove(&largest).map_or(0, |p| p.html.len());
        }
        if used + page.html.len() <= PAGE_BUDGET_BYTES {
            pages.insert(slot, page);
        }
    }

    fn hole(&self, which: char) -> String {
        format!("{}{which}", self.stem)
    }

    /// The page with its holes filled for `user` (both values HTML-escaped).
    fn fill(&self, html: &str, user: &CurrentUser) -> String {
        let mut out = String::with_capacity(html.len() + 256);
        let mut rest = html;
        while let Some(at) = rest.find(&self.stem) {
            out.push_str(&rest[..at]);
            let after = &rest[at + self.stem.len()..];
            match after.as_bytes().first() {
                Some(b'U') => escape_into(&mut out, &user.username),
                Some(b'C') => escape_into(&mut out, &user.csrf),
                _ => {
                    out.push_str(&self.stem);
                    rest = after;
                    continue;
                }
            }
            rest = &after[1..];
        }
        out.push_str(rest);
        out
    }
}

/// Watches for commits this process did not announce (another process, or a write outside
/// [`AppState::write`](crate::web::AppState::write)) and moves the generation on. Stops when the
/// cache is dropped.
pub fn watch(cache: Weak<Cache>, pool: &SqlitePool) {
    watch_file(cache, pool.connect_options().as_ref().clone());
}

/// The watch of [`watch`] on the database `options` name. It never creates the file. When its
/// connection fails (the file moved away by a restore, a full disk, a locked file), it says so
/// once in the log, counts every interval as a change while it cannot look (so no page is
/// reused longer than it would be while watching), and connects again; it ends only with the
/// cache.
pub fn watch_file(cache: Weak<Cache>, options: SqliteConnectOptions) {
    let options = options.create_if_missing(false);
    tokio::spawn(async move {
        let mut conn = None;
        // The first reading counts as a change too: whatever was cached before the watch
        // began is not trusted.
        let mut seen: Option<i64> = None;
        let mut failing = false;
        loop {
            let Some(cache) = cache.upgrade() else {
                return;
            };
            match data_version(&options, &mut conn).await {
                Ok(version) => {
                    if failing {
                        tracing::info!("the page cache's watcher is connected again");
                        failing = false;
                    }
                    if seen != Some(version) {
                        cache.changed();
                        seen = Some(version);
                    }
                }
                Err(e) => {
                    if !failing {
                        tracing::warn!(error = %e, "the page cache's watcher cannot read the database; each page is reused for one interval at most until it can");
                        failing = true;
                    }
                    conn = None;
                    seen = None;
                    cache.changed();
                }
            }
            drop(cache);
            tokio::time::sleep(WATCH_INTERVAL).await;
        }
    });
}

/// `PRAGMA data_version` on the watcher's own connection, connecting first when it has none.
async fn data_version(
    options: &SqliteConnectOptions,
    conn: &mut Option<SqliteConnection>,
) -> sqlx::Result<i64> {
    let conn = match conn {
        Some(conn) => conn,
        None => conn.insert(options.connect().await?),
    };
    sqlx::query_scalar::<_, i64>("PRAGMA data_version")
        .fetch_one(conn)
        .await
}

fn lock<T>(m: &Mutex<T>) -> std::sync::MutexGuard<'_, T> {
    // A panic while holding the lock leaves a table that is still consistent (every change is
    // one insert or remove), so a poisoned lock is taken over.
    m.lock().unwrap_or_else(std::sync::PoisonError::into_inner)
}

fn escape_into(out: &mut String, text: &str) {
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&#34;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::records::user::Role;

    fn user(name: &str, csrf: &str) -> CurrentUser {
        CurrentUser {
            id: 7,
            username: name.into(),
            role: Role::Tech,
            csrf: csrf.into(),
        }
    }

    #[test]
    fn holes_are_filled_per_viewer_and_escaped() {
        let cache = Cache::default();
        let page = format!(
            "<b>{}</b><input value=\"{}\">{}x",
            cache.hole('U'),
            cache.hole('C'),
            cache.hole('C')
        );
        let filled = cache.fill(&page, &user("o'neil<", "abc"));
        assert_eq!(filled, "<b>o&#39;neil&lt;</b><input value=\"abc\">abcx");
        // The stem alone (not a hole) is left as it is.
        let odd = format!("{}Z", cache.stem);
        assert_eq!(cache.fill(&odd, &user("a", "b")), odd);
    }

    #[tokio::test]
    async fn a_page_is_rendered_once_per_generation_and_never_kept_across_a_change() {
        let cache = Cache::default();
        let renders = std::sync::atomic::AtomicUsize::new(0);
        let render = |u: Viewer| {
            renders.fetch_add(1, Ordering::SeqCst);
            async move { Ok((format!("hi {} {}", u.username, u.csrf), ShopZone::server())) }
        };
        let key = PageKey::Build(1);
        let first = cache
            .page(key.clone(), &user("ann", "t1"), render)
            .await
            .unwrap();
        let second = cache
            .page(key.clone(), &user("bob", "t2"), render)
            .await
            .unwrap();
        assert_eq!(
            (first.as_str(), second.as_str()),
            ("hi ann t1", "hi bob t2")
        );
        assert_eq!(renders.load(Ordering::SeqCst), 1);
        cache.changed();
        cache
            .page(key.clone(), &user("ann", "t1"), render)
            .await
            .unwrap();
        assert_eq!(renders.load(Ordering::SeqCst), 2);
        // A commit while the page is being made: answered, but not kept.
        let racing = |u: Viewer| {
            renders.fetch_add(1, Ordering::SeqCst);
            cache.changed();
            async move { Ok((u.username, ShopZone::server())) }
        };
        cache
            .page(PageKey::Build(2), &user("ann", "t1"), racing)
            .await
            .unwrap();
        cache
            .page(PageKey::Build(2), &user("ann", "t1"), render)
            .await
            .unwrap();
        assert_eq!(renders.load(Ordering::SeqCst), 4);
    }

    #[tokio::test]
    async fn requests_arriving_while_a_page_renders_wait_for_that_render() {
        let cache = Cache::default();
        let renders = std::sync::atomic::AtomicUsize::new(0);
        let render = |u: Viewer| {
            renders.fetch_add(1, Ordering::SeqCst);
            async move {
                tokio::time::sleep(Duration::from_millis(50)).await;
                Ok((u.csrf, ShopZone::server()))
            }
        };
        let (ann, bob, cy) = (user("ann", "t1"), user("bob", "t2"), user("cy", "t3"));
        let (a, b, c) = tokio::join!(
            cache.page(PageKey::Build(3), &ann, render),
            cache.page(PageKey::Build(3), &bob, render),
            cache.page(PageKey::Build(3), &cy, render),
        );
        assert_eq!(
            (a.unwrap(), b.unwrap(), c.unwrap()),
            ("t1".into(), "t2".into(), "t3".into())
        );
        assert_eq!(renders.load(Ordering::SeqCst), 1);
    }
}
