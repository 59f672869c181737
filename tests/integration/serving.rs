//! The real server against slow clients: connections that never finish their headers are
//! dropped, hundreds of them do not stop pages from answering, and a shutdown signal ends the
//! process within its deadline even while they hang on.

use std::io::{Read, Write};
use std::net::TcpStream;
use std::time::{Duration, Instant};

use crate::support::{Server, TempDb};

#[test]
fn pages_answer_and_sigterm_ends_the_server_while_300_requests_hang_half_sent() {
    let db = TempDb::new();
    let mut server = Server::start(&db.path);
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
    let server = Server::start(&db.path);
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

#[test]
fn a_request_body_that_trickles_in_is_cut_off_long_before_it_ends() {
    let db = TempDb::new();
    let server = Server::start(&db.path);
    let mut slow = TcpStream::connect(&server.addr).unwrap();
    // A sign-in form of 100 bytes, sent a byte a second (it would take 100 s).
    slow.write_all(
        b"POST /login HTTP/1.1\r\nHost: x\r\nContent-Type: application/x-www-form-urlencoded\r\nContent-Length: 100\r\n\r\n",
    )
    .unwrap();
    slow.set_read_timeout(Some(Duration::from_secs(1))).unwrap();
    let mut sent = 0;
    let cut = loop {
        // Well before the 30 s a whole request may take besides its body.
        if sent == 20 {
            break false;
        }
        if slow.write_all(b"a").is_err() {
            break true;
        }
        sent += 1;
        let mut buf = [0u8; 512];
        match slow.read(&mut buf) {
            // Closed, or answered: either way the server is done with this body.
            Ok(_) => break true,
            Err(e) if e.kind() == std::io::ErrorKind::ConnectionReset => break true,
            Err(_) => {}
        }
    };
    assert!(
        cut,
        "the server still waited for the body after {sent} bytes"
    );
    // The server goes on answering.
    let health = server.get("/healthz");
    assert!(health.starts_with("HTTP/1.1 200"), "{health}");
}
