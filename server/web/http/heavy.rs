//! Heavy work kept off the async workers and bounded: the launch simulation, calibration, a
//! log's layout, deflate and inflate, analysis and large serialisation run on Tokio's blocking
//! threads, at most [`HEAVY_AT_ONCE`] at a time shop-wide (the rest wait their turn, on no
//! thread); one caller (an API token or a browser session) has at most [`PER_CALLER`] running
//! or waiting, and the shop at most [`ANALYSES_AT_ONCE`] log analyses (429 with `Retry-After`
//! past either, at once, instead of a queue that grows with the flood). Work in a place may
//! take a second one for a second thread only while it is free ([`Heavy::spare_core`]), so
//! the threads doing heavy work never outnumber the places.

use std::collections::HashMap;
use std::convert::Infallible;
use std::sync::{Arc, Mutex};

use axum::extract::FromRequestParts;
use axum::http::request::Parts;
use clutch::datalog::{InTurn, Join};
use rusqlite::Connection;
use tokio::sync::{Semaphore, SemaphorePermit};

use crate::auth;
use crate::db::read::Reader;
use crate::error::AppError;
use crate::web::http::extract::{SESSION_COOKIE, cookie};

/// Heavy calculations running at once shop-wide: the machine's two cores' worth. The async
/// workers that answer every page share the cores with them but never wait behind them.
pub const HEAVY_AT_ONCE: usize = 2;
/// Heavy calculations one token or session may have running or waiting at once.
pub const PER_CALLER: usize = 2;
/// Log analyses at once shop-wide: one of a 50 MB file takes a few hundred MB at its peak.
pub const ANALYSES_AT_ONCE: usize = 2;

/// Who asks for heavy work: the API token or the session cookie (a hash of it), or `None`
/// for a request with neither (refused by the route's access layer before any heavy work).
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct Caller(pub Option<String>);

impl<S: Send + Sync> FromRequestParts<S> for Caller {
    type Rejection = Infallible;

    async fn from_request_parts(parts: &mut Parts, _: &S) -> Result<Self, Infallible> {
        let bearer =
            super::extract::bearer(parts).map(|t| format!("token {}", auth::hash_secret(t)));
        let session = || {
            cookie(&parts.headers, SESSION_COOKIE)
                .map(|c| format!("session {}", auth::hash_secret(c)))
        };
        Ok(Self(bearer.or_else(session)))
    }
}

/// The bounds on heavy work, shared by every request.
pub struct Heavy {
    running: Semaphore,
    analyses: Semaphore,
    callers: Mutex<HashMap<String, usize>>,
}

impl Default for Heavy {
    fn default() -> Self {
        Self {
            running: Semaphore::new(HEAVY_AT_ONCE),
            analyses: Semaphore::new(ANALYSES_AT_ONCE),
            callers: Mutex::new(HashMap::new()),
        }
    }
}

/// See [`Heavy::spare_core`]: the second place, when one was free, held until dropped.
pub struct SpareCore<'a>(Option<SemaphorePermit<'a>>);

impl Join for SpareCore<'_> {
    fn at_once(&self) -> bool {
        self.0.is_some()
    }

    fn join<A: Send, B: Send>(
        &self,
        a: impl FnOnce() -> A + Send,
        b: impl FnOnce() -> B + Send,
    ) -> (A, B) {
        if self.0.is_none() {
            return InTurn.join(a, b);
        }
        std::thread::scope(|s| {
            let second = s.spawn(b);
            let a = a();
            match second.join() {
                Ok(b) => (a, b),
                Err(panic) => std::panic::resume_unwind(panic),
            }
        })
    }
}

/// One of a caller's [`PER_CALLER`] turns, given back when dropped.
pub struct Turn {
    heavy: Arc<Heavy>,
    caller: Option<String>,
}

impl Drop for Turn {
    fn drop(&mut self) {
        if let Some(c) = &self.caller {
            let mut all = self.heavy.callers.lock().unwrap_or_else(|e| e.into_inner());
            if let Some(n) = all.get_mut(c) {
                *n -= 1;
                if *n == 0 {
                    all.remove(c);
                }
            }
        }
    }
}

impl Heavy {
    /// A turn for `caller`, or 429 when they already have [`PER_CALLER`].
    pub fn turn(self: &Arc<Self>, caller: &Caller) -> Result<Turn, AppError> {
        if let Some(c) = &caller.0 {
            let mut all = self.callers.lock().unwrap_or_else(|e| e.into_inner());
            let n = all.entry(c.clone()).or_insert(0);
            if *n >= PER_CALLER {
                return Err(AppError::Busy(
                    "at most 2 calculations run at once for one token or session; try again in a moment",
                ));
            }
            *n += 1;
        }
        Ok(Turn {
            heavy: Arc::clone(self),
            caller: caller.0.clone(),
        })
    }

    /// One of the shop's [`ANALYSES_AT_ONCE`] analyses, or 429.
    pub fn analysis(&self) -> Result<SemaphorePermit<'_>, AppError> {
        self.analyses.try_acquire().map_err(|_| {
            AppError::Busy("two log analyses are running already; try again in a moment")
        })
    }

    /// A [`Join`] for work already in a place: another of the [`HEAVY_AT_ONCE`] places when
    /// one is free now (held until the join is dropped), the second piece then run on a thread
    /// of its own; else one after the other. A large log's work runs in two pieces at once
    /// only on a core no other heavy work wants.
    pub fn spare_core(&self) -> SpareCore<'_> {
        SpareCore(self.running.try_acquire().ok())
    }

    /// Runs `work` on a blocking thread once one of the [`HEAVY_AT_ONCE`] places is free.
    pub async fn run<T, F>(&self, work: F) -> Result<T, AppError>
    where
        F: FnOnce() -> T + Send + 'static,
        T: Send + 'static,
    {
        let _place = self
            .running
            .acquire()
            .await
            .map_err(|e| AppError::Internal(e.to_string()))?;
        tokio::task::spawn_blocking(work)
            .await
            .map_err(|e| AppError::Internal(format!("heavy work stopped: {e}")))
    }

    /// `read` on one of the reader's connections, then a caller's turn (`Caller(None)` takes
    /// none) and a place, then `work` on what it read, all on one blocking thread (see
    /// [`Reader::read_then`]): a page's reads and calculations in a single hand-over. The
    /// connection is given back before the thread waits for a place, so reads and heavy work
    /// overlap as when they were handed over apart; the turn and the place are given back
    /// the moment the work ends.
    pub async fn read_then<R, T, F, G>(
        self: &Arc<Self>,
        caller: &Caller,
        reader: &Arc<Reader>,
        read: F,
        work: G,
    ) -> Result<T, AppError>
    where
        T: Send + 'static,
        F: FnOnce(&Connection) -> rusqlite::Result<R> + Send + 'static,
        G: FnOnce(R) -> Result<T, AppError> + Send + 'static,
    {
        let (heavy, caller) = (Arc::clone(self), caller.clone());
        let runtime = tokio::runtime::Handle::current();
        // Dropped with this future: a request given up (its client gone) stops waiting for a
        // place and does no work, as when it waited for one on an async worker.
        let (wanted, given_up) = tokio::sync::oneshot::channel::<()>();
        let work = move |read| {
            let _turn = heavy.turn(&caller)?;
            let place = runtime.block_on(async {
                tokio::select! {
                    biased;
                    _ = given_up => None,
                    place = heavy.running.acquire() => Some(place),
                }
            });
            let _place = place
                .ok_or(AppError::Busy("the request was given up"))?
                .map_err(|e| AppError::Internal(e.to_string()))?;
            work(read)
        };
        let out = reader.read_then(read, work).await?;
        drop(wanted);
        out
    }

    /// A caller's turn, then `work` run as in [`Heavy::run`].
    pub async fn run_for<T, F>(self: &Arc<Self>, caller: &Caller, work: F) -> Result<T, AppError>
    where
        F: FnOnce() -> T + Send + 'static,
        T: Send + 'static,
    {
        let _turn = self.turn(caller)?;
        self.run(work).await
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_caller_gets_two_turns_and_a_third_after_one_ends() {
        let heavy = Arc::new(Heavy::default());
        let me = Caller(Some("token a".into()));
        let other = Caller(Some("token b".into()));
        let first = heavy.turn(&me).unwrap();
        let _second = heavy.turn(&me).unwrap();
        assert!(matches!(heavy.turn(&me), Err(AppError::Busy(_))));
        let _theirs = heavy.turn(&other).unwrap();
        drop(first);
        assert!(heavy.turn(&me).is_ok());
    }

    #[test]
    fn the_shop_runs_two_analyses_at_once() {
        let heavy = Heavy::default();
        let a = heavy.analysis().unwrap();
        let _b = heavy.analysis().unwrap();
        assert!(heavy.analysis().is_err());
        drop(a);
        assert!(heavy.analysis().is_ok());
    }

    #[test]
    fn a_spare_core_runs_the_second_piece_on_its_own_thread_only_while_a_place_is_free() {
        let heavy = Heavy::default();
        let here = std::thread::current().id();
        let which = || std::thread::current().id();
        let spare = heavy.spare_core();
        assert!(spare.at_once());
        assert_eq!(heavy.running.available_permits(), HEAVY_AT_ONCE - 1);
        let (a, b) = spare.join(which, which);
        assert_eq!(a, here);
        assert_ne!(b, here);
        drop(spare);
        assert_eq!(heavy.running.available_permits(), HEAVY_AT_ONCE);
        // Every place taken by other work: one after the other, on this thread.
        let _others = heavy
            .running
            .try_acquire_many(HEAVY_AT_ONCE as u32)
            .unwrap();
        let none = heavy.spare_core();
        assert!(!none.at_once());
        assert_eq!(none.join(which, which), (here, here));
    }

    #[tokio::test]
    async fn a_page_given_up_while_it_waits_for_a_place_stops_waiting_and_does_no_work() {
        use std::sync::atomic::{AtomicBool, Ordering};
        use std::time::Duration;
        let path = std::env::temp_dir().join(format!("lockpoint-heavy-{}.db", std::process::id()));
        let _ = std::fs::remove_file(&path);
        Connection::open(&path).unwrap();
        let reader = Reader::new(&path);
        let heavy = Arc::new(Heavy::default());
        let me = Caller(Some("session a".into()));
        let ran = Arc::new(AtomicBool::new(false));
        let page = |ran: Arc<AtomicBool>| {
            heavy.read_then(
                &me,
                &reader,
                |_| Ok(()),
                move |()| {
                    ran.store(true, Ordering::SeqCst);
                    Ok(())
                },
            )
        };
        let places = heavy
            .running
            .acquire_many(HEAVY_AT_ONCE as u32)
            .await
            .unwrap();
        // The client goes away while the page waits for a place.
        let gone = tokio::time::timeout(Duration::from_millis(100), page(Arc::clone(&ran))).await;
        assert!(gone.is_err(), "no place was free");
        // The blocking thread gives its turn back without a place (every place is still
        // held): both of the caller's turns are free again.
        let mut freed = false;
        for _ in 0..500 {
            if let (Ok(_a), Ok(_b)) = (heavy.turn(&me), heavy.turn(&me)) {
                freed = true;
                break;
            }
            tokio::time::sleep(Duration::from_millis(10)).await;
        }
        assert!(freed, "the given-up page still waits for a place");
        assert!(!ran.load(Ordering::SeqCst), "a given-up page did its work");
        // With a place free, a page the client waits for is worked out.
        drop(places);
        page(Arc::clone(&ran)).await.unwrap();
        assert!(ran.load(Ordering::SeqCst));
        let _ = std::fs::remove_file(&path);
    }
}
