//! The real server against slow clients: connections that never finish their headers are
//! dropped, hundreds of them do not stop pages from answering, and a shutdown signal ends the
//! process within its deadline even while they hang on.

use std::io::{BufRead, BufReader, Read, Write};
use std::net::TcpStream;
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use crate::support::TempDb;

/// A running `lockpoint serve` on a new database, killed if a test fails before stopping it.
struct Server {
    child: Child,
    addr: String,
}

impl Server {
    fn start(db: &TempDb) -> Self {
        let mut child = Command::new(env!("CARGO_BIN_EXE_lockpoint"))
            .args([
                "serve",
                "--db",
                db.path.to_str().unwrap(),
                "--addr",
                "127.0.0.1:0",
            ])
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .unwrap();
        let mut line = String::new();
        BufReader::new(child.stdout.take().unwrap())
            .read_line(&mut line)
            .unwrap();
        let addr = line
            .trim()
            .strip_prefix("listening on http://")
            .unwrap_or_else(|| panic!("{line}"))
            .to_string();
        Self { child, addr }
    }

    /// One request on its own connection: the status line and the whole answer.
    fn get(&self, path: &str) -> String {
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
    fn terminate_within(&mut self, limit: Duration) -> (std::process::ExitStatus, Duration) {
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

#[test]
fn pages_answer_and_sigterm_ends_the_server_while_300_requests_hang_half_sent() {
    let db = TempDb::new();
    let mut server = Server::start(&db);
    // Each sends a request line and one header, then nothing more.
    let held: Vec<TcpStream> = (0..300)
        .map(|_| {
            let mut s = TcpStream::connect(&server.addr).unwrap();
            s.write_all(b"GET / HTTP/1.1\r\nHost: x\r\n").unwrap();
            s
        })
        .collect();

    let started = Instant::now();
    let health = server.get("/healthz");
    assert!(health.starts_with("HTTP/1.1 200"), "{health}");
    // A page that reads the database.
    let page = server.get("/s/0123456789abcdef0123456789abcdef0123456789abcdef0123456789abcdef");
    assert!(page.starts_with("HTTP/1.1 404"), "{page}");
    assert!(page.contains("no setup sheet"), "{page}");
    assert!(
        started.elapsed() < Duration::from_secs(3),
        "answered after {:?}",
        started.elapsed()
    );

    // The shutdown deadline is 10 s: the process is gone soon after, cleanly.
    let (status, took) = server.terminate_within(Duration::from_secs(15));
    assert!(status.success(), "{status:?} after {took:?}");
    drop(held);
}

#[test]
fn a_client_that_never_finishes_its_headers_or_sits_idle_is_disconnected() {
    let db = TempDb::new();
    let server = Server::start(&db);
    let mut slow = TcpStream::connect(&server.addr).unwrap();
    slow.set_read_timeout(Some(Duration::from_secs(30)))
        .unwrap();
    let mut idle = TcpStream::connect(&server.addr).unwrap();
    idle.set_read_timeout(Some(Duration::from_secs(30)))
        .unwrap();
    let started = Instant::now();

    // One byte a second, never reaching the end of the headers.
    let request =
        b"GET /healthz HTTP/1.1\r\nHost: x\r\nX-Slow: aaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaa";
    let mut dropped_after = None;
    for byte in request {
        if slow.write_all(&[*byte]).is_err() {
            dropped_after = Some(started.elapsed());
            break;
        }
        std::thread::sleep(Duration::from_secs(1));
    }
    if dropped_after.is_none() {
        let mut rest = Vec::new();
        let _ = slow.read_to_end(&mut rest);
        dropped_after = Some(started.elapsed());
    }
    let dropped_after = dropped_after.unwrap();
    assert!(
        dropped_after < Duration::from_secs(15),
        "a trickling client was kept {dropped_after:?}"
    );

    // A connection that sent nothing at all has been closed as well (the read ends at once).
    let mut rest = Vec::new();
    let waited = Instant::now();
    let _ = idle.read_to_end(&mut rest);
    assert!(
        waited.elapsed() < Duration::from_secs(2),
        "{:?}",
        waited.elapsed()
    );
}
