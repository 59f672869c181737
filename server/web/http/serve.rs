//! Serving connections so that slow or idle clients cannot use the server up: every connection
//! must send a request's headers within a time limit (which also closes idle keep-alive
//! connections), a request body must keep arriving (see [`BodyPace`]), at most a fixed number
//! of connections are open at once (past it, new ones wait in the kernel's accept queue and use
//! no file descriptor; near it, the connection sending its body slowest is dropped for each new
//! one), and a graceful shutdown has a deadline after which the remaining connections are
//! dropped.
//!
//! axum's own `serve` runs hyper without a timer, so it has none of these.

use std::collections::HashMap;
use std::future::Future;
use std::pin::Pin;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::{Arc, Mutex};
use std::task::{Context, Poll};
use std::time::{Duration, Instant};

use axum::Router;
use axum::extract::ConnectInfo;
use axum::http::Request;
use hyper::body::Incoming;
use hyper_util::rt::{TokioIo, TokioTimer};
use hyper_util::service::TowerToHyperService;
use tokio::net::TcpListener;
use tokio::sync::{Notify, Semaphore, watch};
use tower::ServiceExt;

/// How a request body must arrive: no pause longer than `max_gap` between two pieces, and
/// after `grace`, on average at least `min_rate` bytes a second since it began. A 4 KiB sign-in
/// form is done within the grace; a 50 MB log at 1 MB/s (50 s) is far above the rate; a body
/// dribbled in to hold a connection is cut within seconds.
#[derive(Debug, Clone, Copy)]
pub struct BodyPace {
    pub max_gap: Duration,
    pub grace: Duration,
    /// Bytes a second.
    pub min_rate: f64,
}

impl Default for BodyPace {
    /// 5 s between pieces; after 5 s, 32 KiB/s on average (a 50 MB log may take 27 minutes).
    fn default() -> Self {
        Self {
            max_gap: Duration::from_secs(5),
            grace: Duration::from_secs(5),
            min_rate: crate::web::BODY_MIN_RATE,
        }
    }
}

impl BodyPace {
    /// When a body begun at `start` with `received` bytes so far, the last at `last`, is too
    /// slow if nothing more comes.
    fn deadline(&self, start: Instant, last: Instant, received: u64) -> Instant {
        let by_rate = start + self.grace + Duration::from_secs_f64(received as f64 / self.min_rate);
        (last + self.max_gap).min(by_rate)
    }
}

/// How a server treats its connections.
#[derive(Debug, Clone, Copy)]
pub struct Limits {
    /// Connections open at once.
    pub max_connections: usize,
    /// Time to send a request's headers, counted from the connection (or the previous answer on
    /// a kept-alive connection), while the server has room.
    pub header_read_timeout: Duration,
    /// The same when three quarters of the connections are in use: a slow client then gives
    /// its place up sooner.
    pub busy_header_read_timeout: Duration,
    /// After a shutdown signal, how long requests in flight may take before the server stops.
    pub shutdown_deadline: Duration,
    /// How a request body must arrive.
    pub body: BodyPace,
}

impl Limits {
    /// The limits `lockpoint serve` uses: up to 1024 connections, fewer when the process may
    /// open fewer files (a quarter of those are kept for the database and the rest).
    pub fn for_this_process() -> Self {
        let max_connections =
            open_file_limit().map_or(1024, |files| (files.saturating_mul(3) / 4).clamp(16, 1024));
        Self {
            max_connections,
            header_read_timeout: Duration::from_secs(10),
            busy_header_read_timeout: Duration::from_secs(2),
            shutdown_deadline: Duration::from_secs(10),
            body: BodyPace::default(),
        }
    }
}

/// The soft limit on open files, from `/proc/self/limits` (Linux); `None` elsewhere.
fn open_file_limit() -> Option<usize> {
    let limits = std::fs::read_to_string("/proc/self/limits").ok()?;
    let line = limits.lines().find(|l| l.starts_with("Max open files"))?;
    line.split_whitespace().nth(3)?.parse().ok()
}

/// Serves `router` on `listener` until `shutdown` resolves, then lets the requests in flight
/// finish for at most `limits.shutdown_deadline` and returns. Each request carries the client's
/// address as `ConnectInfo<SocketAddr>`.
pub async fn run(
    listener: TcpListener,
    router: Router,
    shutdown: impl Future<Output = ()>,
    limits: Limits,
) {
    let slots = Arc::new(Semaphore::new(limits.max_connections));
    let conns = Arc::new(Conns::default());
    let (stop, stopping) = watch::channel(false);
    let mut shutdown = std::pin::pin!(shutdown);
    loop {
        // Near the cap, the connection whose body comes slowest makes room for the next one
        // (a slow body holds a place longest; one still sending its headers is timed already).
        if slots.available_permits() <= limits.max_connections / 16 {
            conns.shed_slowest();
        }
        let slot = tokio::select! {
            slot = slots.clone().acquire_owned() => match slot {
                Ok(slot) => slot,
                Err(_) => break,
            },
            () = &mut shutdown => break,
        };
        let (stream, addr) = tokio::select! {
            accepted = listener.accept() => match accepted {
                Ok(accepted) => accepted,
                Err(e) => {
                    // Out of file descriptors, or a connection reset before it was accepted:
                    // try again shortly rather than spin.
                    tracing::warn!(error = %e, "accepting a connection failed");
                    tokio::time::sleep(Duration::from_millis(50)).await;
                    continue;
                }
            },
            () = &mut shutdown => break,
        };
        let _ = stream.set_nodelay(true);
        let busy = slots.available_permits() < limits.max_connections / 4;
        let header_timeout = if busy {
            limits.busy_header_read_timeout
        } else {
            limits.header_read_timeout
        };
        let conn_state = conns.open();
        let pace = limits.body;
        let paced = Arc::clone(&conn_state);
        let service = router
            .clone()
            .map_request(move |mut req: Request<Incoming>| {
                req.extensions_mut().insert(ConnectInfo(addr));
                req.map(|body| axum::body::Body::new(Paced::new(body, Arc::clone(&paced), pace)))
            });
        let mut stopping = stopping.clone();
        let conns = Arc::clone(&conns);
        tokio::spawn(async move {
            let _slot = slot;
            let _open = Open {
                conns,
                conn: Arc::clone(&conn_state),
            };
            let mut builder = hyper::server::conn::http1::Builder::new();
            builder
                .timer(TokioTimer::new())
                .header_read_timeout(header_timeout)
                .keep_alive(true);
            let conn =
                builder.serve_connection(TokioIo::new(stream), TowerToHyperService::new(service));
            let mut conn = std::pin::pin!(conn);
            tokio::select! {
                _ = conn.as_mut() => {}
                // Shed to make room: dropped at once, no answer.
                () = conn_state.shed.notified() => {}
                () = async { drop(stopping.wait_for(|stop| *stop).await) } => {
                    // Finish the request in flight, take no more on this connection.
                    conn.as_mut().graceful_shutdown();
                    let _ = conn.as_mut().await;
                }
            }
        });
    }
    drop(listener);
    let _ = stop.send(true);
    let all = slots.acquire_many(limits.max_connections as u32);
    if tokio::time::timeout(limits.shutdown_deadline, all)
        .await
        .is_err()
    {
        tracing::warn!(
            deadline_s = limits.shutdown_deadline.as_secs(),
            open = limits.max_connections - slots.available_permits(),
            "connections still open at the shutdown deadline: dropping them"
        );
    }
}

/// One open connection: whether it is receiving a body (since when, how much so far) and the
/// signal that drops it.
#[derive(Default)]
struct Conn {
    id: u64,
    /// (body start, bytes received) while a body is being read.
    body: Mutex<Option<(Instant, u64)>>,
    shedding: AtomicBool,
    shed: Notify,
}

/// The open connections.
#[derive(Default)]
struct Conns {
    next: AtomicU64,
    all: Mutex<HashMap<u64, Arc<Conn>>>,
}

fn lock<T>(m: &Mutex<T>) -> std::sync::MutexGuard<'_, T> {
    m.lock().unwrap_or_else(|e| e.into_inner())
}

impl Conns {
    fn open(&self) -> Arc<Conn> {
        let id = self.next.fetch_add(1, Ordering::Relaxed);
        let conn = Arc::new(Conn {
            id,
            ..Conn::default()
        });
        lock(&self.all).insert(id, Arc::clone(&conn));
        conn
    }

    /// Drops the connection receiving its body at the lowest average rate, if any is; whether
    /// one was.
    fn shed_slowest(&self) -> bool {
        let now = Instant::now();
        let all = lock(&self.all);
        let slowest = all
            .values()
            .filter(|c| !c.shedding.load(Ordering::Relaxed))
            .filter_map(|c| {
                let (since, received) = (*lock(&c.body))?;
                let secs = now.duration_since(since).as_secs_f64().max(1e-3);
                Some((received as f64 / secs, c))
            })
            .min_by(|a, b| a.0.total_cmp(&b.0));
        match slowest {
            Some((_, c)) => {
                c.shedding.store(true, Ordering::Relaxed);
                c.shed.notify_one();
                true
            }
            None => false,
        }
    }
}

/// Takes a connection off the list when its task ends.
struct Open {
    conns: Arc<Conns>,
    conn: Arc<Conn>,
}

impl Drop for Open {
    fn drop(&mut self) {
        lock(&self.conns.all).remove(&self.conn.id);
    }
}

/// A request body held to its [`BodyPace`], telling its connection how it is coming.
struct Paced {
    inner: Incoming,
    conn: Arc<Conn>,
    pace: BodyPace,
    start: Option<Instant>,
    received: u64,
    timer: Pin<Box<tokio::time::Sleep>>,
}

impl Paced {
    fn new(inner: Incoming, conn: Arc<Conn>, pace: BodyPace) -> Self {
        Self {
            inner,
            conn,
            pace,
            start: None,
            received: 0,
            timer: Box::pin(tokio::time::sleep(pace.max_gap)),
        }
    }

    fn finished(&self) {
        *lock(&self.conn.body) = None;
    }
}

impl Drop for Paced {
    fn drop(&mut self) {
        self.finished();
    }
}

impl hyper::body::Body for Paced {
    type Data = axum::body::Bytes;
    type Error = axum::BoxError;

    fn poll_frame(
        self: Pin<&mut Self>,
        cx: &mut Context<'_>,
    ) -> Poll<Option<Result<hyper::body::Frame<Self::Data>, Self::Error>>> {
        let this = self.get_mut();
        let now = Instant::now();
        let start = *this.start.get_or_insert_with(|| {
            *lock(&this.conn.body) = Some((now, 0));
            this.timer
                .as_mut()
                .reset(this.pace.deadline(now, now, 0).into());
            now
        });
        match Pin::new(&mut this.inner).poll_frame(cx) {
            Poll::Ready(Some(Ok(frame))) => {
                if let Some(data) = frame.data_ref() {
                    this.received += data.len() as u64;
                }
                *lock(&this.conn.body) = Some((start, this.received));
                let deadline = this.pace.deadline(start, now, this.received);
                this.timer.as_mut().reset(deadline.into());
                Poll::Ready(Some(Ok(frame)))
            }
            Poll::Ready(None) => {
                this.finished();
                Poll::Ready(None)
            }
            Poll::Ready(Some(Err(e))) => {
                this.finished();
                Poll::Ready(Some(Err(e.into())))
            }
            Poll::Pending => {
                if this.timer.as_mut().poll(cx).is_ready() {
                    this.finished();
                    // Nothing more is read from this connection.
                    this.conn.shed.notify_one();
                    return Poll::Ready(Some(Err("the request body arrived too slowly".into())));
                }
                Poll::Pending
            }
        }
    }

    fn is_end_stream(&self) -> bool {
        self.inner.is_end_stream()
    }

    fn size_hint(&self) -> hyper::body::SizeHint {
        self.inner.size_hint()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_body_must_keep_coming_and_keep_its_average_rate() {
        let pace = BodyPace::default();
        let t0 = Instant::now();
        // Nothing yet: the grace, or the gap, whichever is first.
        assert_eq!(pace.deadline(t0, t0, 0), t0 + Duration::from_secs(5));
        // 1 MB/s for 30 s: the next piece is due within the gap, the rate is far above.
        let at = t0 + Duration::from_secs(30);
        assert_eq!(pace.deadline(t0, at, 30 << 20), at + Duration::from_secs(5));
        // A byte every 4 s: the average rate runs out long before the next gap would.
        let at = t0 + Duration::from_secs(8);
        assert!(pace.deadline(t0, at, 2) < at);
    }

    #[test]
    fn near_the_cap_the_slowest_body_is_shed_first() {
        let conns = Conns::default();
        let (fast, slow, idle) = (conns.open(), conns.open(), conns.open());
        let since = Instant::now() - Duration::from_secs(10);
        *lock(&fast.body) = Some((since, 10 << 20));
        *lock(&slow.body) = Some((since, 100));
        assert!(conns.shed_slowest());
        assert!(slow.shedding.load(Ordering::Relaxed));
        assert!(!fast.shedding.load(Ordering::Relaxed));
        assert!(conns.shed_slowest());
        assert!(fast.shedding.load(Ordering::Relaxed));
        // A connection with no body in progress is not shed this way.
        assert!(!conns.shed_slowest());
        assert!(!idle.shedding.load(Ordering::Relaxed));
    }
}
