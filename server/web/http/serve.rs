//! Serving connections so that slow or idle clients cannot use the server up: every connection
//! must send a request's headers within a time limit (which also closes idle keep-alive
//! connections), at most a fixed number of connections are open at once (past it, new ones
//! wait in the kernel's accept queue and use no file descriptor), and a graceful shutdown has a
//! deadline after which the remaining connections are dropped.
//!
//! axum's own `serve` runs hyper without a timer, so it has none of these.

use std::future::Future;
use std::sync::Arc;
use std::time::Duration;

use axum::Router;
use axum::extract::ConnectInfo;
use axum::http::Request;
use hyper::body::Incoming;
use hyper_util::rt::{TokioIo, TokioTimer};
use hyper_util::service::TowerToHyperService;
use tokio::net::TcpListener;
use tokio::sync::{Semaphore, watch};
use tower::ServiceExt;

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
    let (stop, stopping) = watch::channel(false);
    let mut shutdown = std::pin::pin!(shutdown);
    loop {
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
        let service = router
            .clone()
            .map_request(move |mut req: Request<Incoming>| {
                req.extensions_mut().insert(ConnectInfo(addr));
                req
            });
        let mut stopping = stopping.clone();
        tokio::spawn(async move {
            let _slot = slot;
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
