//! Crash safety of the real binary: several clients write over plain HTTP while the server is
//! killed with SIGKILL at random moments and restarted on the same database file. After every
//! kill, with the server down, every write whose answer arrived in full must be in the file with
//! the id it was given, and SQLite's integrity check must pass. No client may ever see a server
//! error or "database is locked". The kill moments come from a fixed seed
//! (`LOCKPOINT_CRASH_SEED` overrides it), so a failing run can be repeated.

use std::collections::HashMap;
use std::io::{Read, Write};
use std::net::{SocketAddr, TcpStream};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use crate::hostile::Rng;
use crate::support::{Server, TempDb, cli_ok as cli, lockpoint, serving};

const DEFAULT_SEED: u64 = 0x4C50_4B49_4C4C_0009;
const KILLS: usize = 30;
const CLIENTS: usize = 4;
const PASSWORD: &str = "crash test password";

/// `lockpoint serve` on `db`, its log appended to `log`.
fn start(db: &Path, log: &Path) -> Server {
    let log = std::fs::OpenOptions::new()
        .create(true)
        .append(true)
        .open(log)
        .unwrap();
    Server::spawn(serving(&mut lockpoint(), db).stderr(log))
}

/// How one HTTP exchange ended.
enum Outcome {
    /// The connection was refused: the request never reached a server.
    NotConnected,
    /// Sent (perhaps partly) but no complete answer came back: the server died meanwhile.
    Incomplete,
    /// A complete answer.
    Answered { status: u16, body: String },
}

/// One request on its own connection (`Connection: close`), read to the end.
fn request(addr: SocketAddr, token: &str, path: &str, body: &str) -> Outcome {
    let Ok(mut stream) = TcpStream::connect_timeout(&addr, Duration::from_secs(2)) else {
        return Outcome::NotConnected;
    };
    let _ = stream.set_read_timeout(Some(Duration::from_secs(20)));
    let _ = stream.set_write_timeout(Some(Duration::from_secs(20)));
    let head = format!(
        "POST {path} HTTP/1.1\r\nHost: {addr}\r\nAuthorization: Bearer {token}\r\n\
         Content-Type: application/json\r\nContent-Length: {}\r\nConnection: close\r\n\r\n",
        body.len()
    );
    if stream.write_all(head.as_bytes()).is_err() || stream.write_all(body.as_bytes()).is_err() {
        return Outcome::Incomplete;
    }
    let mut raw = Vec::new();
    if stream.read_to_end(&mut raw).is_err() {
        return Outcome::Incomplete;
    }
    parse_answer(&raw).unwrap_or(Outcome::Incomplete)
}

/// A complete HTTP/1.1 answer: status line, headers and a body of the announced length
/// (or a finished chunked body).
fn parse_answer(raw: &[u8]) -> Option<Outcome> {
    let split = raw.windows(4).position(|w| w == b"\r\n\r\n")?;
    let head = std::str::from_utf8(&raw[..split]).ok()?;
    let rest = &raw[split + 4..];
    let mut lines = head.split("\r\n");
    let status: u16 = lines.next()?.split(' ').nth(1)?.parse().ok()?;
    let mut length = None;
    let mut chunked = false;
    for line in lines {
        let (k, v) = line.split_once(':')?;
        if k.eq_ignore_ascii_case("content-length") {
            length = Some(v.trim().parse::<usize>().ok()?);
        } else if k.eq_ignore_ascii_case("transfer-encoding") {
            chunked = v.to_ascii_lowercase().contains("chunked");
        }
    }
    let body = match (length, chunked) {
        (Some(n), _) if rest.len() == n => rest.to_vec(),
        (_, true) => dechunk(rest)?,
        _ => return None,
    };
    Some(Outcome::Answered {
        status,
        body: String::from_utf8_lossy(&body).into_owned(),
    })
}

fn dechunk(mut data: &[u8]) -> Option<Vec<u8>> {
    let mut out = Vec::new();
    loop {
        let line_end = data.windows(2).position(|w| w == b"\r\n")?;
        let size_text = std::str::from_utf8(&data[..line_end]).ok()?;
        let size = usize::from_str_radix(size_text.split(';').next()?.trim(), 16).ok()?;
        data = &data[line_end + 2..];
        if size == 0 {
            return Some(out);
        }
        if data.len() < size + 2 {
            return None;
        }
        out.extend_from_slice(&data[..size]);
        data = &data[size + 2..];
    }
}

/// A write the server acknowledged: table, the id it answered, and the unique text sent.
#[derive(Clone, Debug)]
struct Ack {
    table: &'static str,
    id: i64,
    text: String,
}

#[derive(Default)]
struct Counts {
    sent: AtomicUsize,
    acked: AtomicUsize,
    incomplete: AtomicUsize,
    not_connected: AtomicUsize,
    not_2xx: AtomicUsize,
    server_errors: AtomicUsize,
    locked: AtomicUsize,
}

struct Run {
    token: String,
    parent_customer: i64,
    acks: Mutex<Vec<Ack>>,
    counts: Counts,
    /// Answers that were complete but not a 2xx with the record sent (status, body).
    odd: Mutex<Vec<String>>,
}

/// One client: writes until told to stop, recording every acknowledged write.
fn client(run: &Run, addr: SocketAddr, stop: &AtomicBool, me: usize, seq: &mut u64) {
    while !stop.load(Ordering::Relaxed) {
        *seq += 1;
        let n = *seq;
        let (table, path, key, text) = if n.is_multiple_of(4) {
            (
                "cars",
                format!("/api/v1/customers/{}/cars", run.parent_customer),
                "description",
                format!("two-door, 7.2 L V8, 4-speed, unit {me}-{n}"),
            )
        } else {
            (
                "customers",
                "/api/v1/customers".to_string(),
                "name",
                format!("Test Customer {me}-{n}"),
            )
        };
        let body = serde_json::json!({ key: text, "notes": "written under fire" }).to_string();
        run.counts.sent.fetch_add(1, Ordering::Relaxed);
        match request(addr, &run.token, &path, &body) {
            Outcome::NotConnected => {
                run.counts.not_connected.fetch_add(1, Ordering::Relaxed);
                // The server is gone; wait to be stopped.
                std::thread::sleep(Duration::from_millis(2));
            }
            Outcome::Incomplete => {
                run.counts.incomplete.fetch_add(1, Ordering::Relaxed);
            }
            Outcome::Answered { status, body } => {
                if status >= 500 {
                    run.counts.server_errors.fetch_add(1, Ordering::Relaxed);
                }
                if body.contains("database is locked") {
                    run.counts.locked.fetch_add(1, Ordering::Relaxed);
                }
                let saved = serde_json::from_str::<serde_json::Value>(&body)
                    .ok()
                    .filter(|v| v[key] == text.as_str())
                    .and_then(|v| v["id"].as_i64());
                match saved {
                    Some(id) if (200..300).contains(&status) => {
                        run.acks.lock().unwrap().push(Ack { table, id, text });
                        run.counts.acked.fetch_add(1, Ordering::Relaxed);
                    }
                    _ => {
                        run.counts.not_2xx.fetch_add(1, Ordering::Relaxed);
                        let mut odd = run.odd.lock().unwrap();
                        if odd.len() < 10 {
                            odd.push(format!(
                                "{status}: {}",
                                body.chars().take(300).collect::<String>()
                            ));
                        }
                    }
                }
            }
        }
    }
}

/// What the database file holds, read while no server runs.
struct FileState {
    rows: HashMap<(&'static str, i64), String>,
    integrity: Vec<String>,
}

fn read_file(path: &Path) -> FileState {
    let rt = tokio::runtime::Builder::new_current_thread()
        .enable_all()
        .build()
        .unwrap();
    rt.block_on(async {
        let pool = lockpoint::db::open(path)
            .await
            .expect("the database opens after a kill");
        let integrity: Vec<String> = sqlx::query_scalar("PRAGMA integrity_check")
            .fetch_all(&pool)
            .await
            .unwrap();
        let mut rows = HashMap::new();
        let customers: Vec<(i64, String)> = sqlx::query_as("SELECT id, name FROM customers")
            .fetch_all(&pool)
            .await
            .unwrap();
        for (id, name) in customers {
            rows.insert(("customers", id), name);
        }
        let cars: Vec<(i64, String)> = sqlx::query_as("SELECT id, description FROM cars")
            .fetch_all(&pool)
            .await
            .unwrap();
        for (id, description) in cars {
            rows.insert(("cars", id), description);
        }
        pool.close().await;
        FileState { rows, integrity }
    })
}

/// Removes the server's log file at the end of a passing run.
struct LogFile(PathBuf);

impl Drop for LogFile {
    fn drop(&mut self) {
        if !std::thread::panicking() {
            let _ = std::fs::remove_file(&self.0);
        }
    }
}

#[test]
fn acknowledged_writes_survive_sigkill_and_the_file_stays_sound() {
    let seed = std::env::var("LOCKPOINT_CRASH_SEED")
        .ok()
        .and_then(|s| {
            let s = s.trim();
            s.strip_prefix("0x")
                .map_or_else(|| s.parse().ok(), |h| u64::from_str_radix(h, 16).ok())
        })
        .unwrap_or(DEFAULT_SEED);
    let started = Instant::now();
    let db = TempDb::new();
    let log = LogFile(db.path.with_extension("log"));
    let path = db.path.to_str().unwrap();
    cli(
        &[
            "user",
            "add",
            "crash-admin",
            "--role",
            "admin",
            "--db",
            path,
        ],
        &format!("{PASSWORD}\n"),
    );
    let token = cli(&["token", "create", "crash-admin", "--db", path], "")
        .trim()
        .to_string();
    assert!(token.starts_with("lp_"), "a token is printed: {token:?}");

    // A customer the cars are written under.
    let server = start(&db.path, &log.0);
    let parent = match request(
        server.addr.parse().unwrap(),
        &token,
        "/api/v1/customers",
        r#"{"name": "Test Customer parent"}"#,
    ) {
        Outcome::Answered { status: 201, body } => serde_json::from_str::<serde_json::Value>(&body)
            .unwrap()["id"]
            .as_i64()
            .unwrap(),
        _ => panic!("the first customer is not created"),
    };
    let run = Arc::new(Run {
        token,
        parent_customer: parent,
        acks: Mutex::new(vec![Ack {
            table: "customers",
            id: parent,
            text: "Test Customer parent".into(),
        }]),
        counts: Counts::default(),
        odd: Mutex::new(Vec::new()),
    });

    let mut rng = Rng::new(seed);
    let mut server = Some(server);
    let mut seqs = [0u64; CLIENTS];
    let mut kills = 0;
    let mut rows_seen = 0;
    for round in 0..KILLS {
        let srv = server.take().unwrap_or_else(|| start(&db.path, &log.0));
        let stop = Arc::new(AtomicBool::new(false));
        let addr: SocketAddr = srv.addr.parse().unwrap();
        let handles: Vec<_> = seqs
            .iter()
            .copied()
            .enumerate()
            .map(|(me, mut seq)| {
                let run = Arc::clone(&run);
                let stop = Arc::clone(&stop);
                std::thread::spawn(move || {
                    client(&run, addr, &stop, me, &mut seq);
                    seq
                })
            })
            .collect();

        // A random moment: now and then right away, mostly a little later.
        let wait_ms = match rng.below(4) {
            0 => rng.below(15),
            _ => 20 + rng.below(450),
        };
        std::thread::sleep(Duration::from_millis(wait_ms as u64));
        srv.kill();
        kills += 1;
        stop.store(true, Ordering::Relaxed);
        for (i, h) in handles.into_iter().enumerate() {
            seqs[i] = h.join().expect("a client thread panicked");
        }

        // Server down: everything acknowledged is in the file, and the file is sound.
        let file = read_file(&db.path);
        assert_eq!(
            file.integrity,
            ["ok"],
            "integrity check after kill {kills} (seed {seed:#x})"
        );
        let acks = run.acks.lock().unwrap().clone();
        let lost: Vec<&Ack> = acks
            .iter()
            .filter(|a| file.rows.get(&(a.table, a.id)) != Some(&a.text))
            .collect();
        assert!(
            lost.is_empty(),
            "after kill {kills} (round {round}, {wait_ms} ms, seed {seed:#x}) {} acknowledged \
             writes are missing or different, e.g. {:?}",
            lost.len(),
            &lost[..lost.len().min(5)]
        );
        // Rows nobody was told about can only come from requests cut off by a kill.
        let extra = file.rows.len().saturating_sub(acks.len());
        let cut_off = run.counts.incomplete.load(Ordering::Relaxed);
        assert!(
            extra <= cut_off,
            "{extra} rows without an acknowledgement, but only {cut_off} requests were cut off"
        );
        rows_seen = file.rows.len();
    }

    let c = &run.counts;
    let acked = c.acked.load(Ordering::Relaxed) + 1;
    let server_errors = c.server_errors.load(Ordering::Relaxed);
    let locked = c.locked.load(Ordering::Relaxed);
    let not_2xx = c.not_2xx.load(Ordering::Relaxed);
    println!(
        "crash: {kills} SIGKILLs in {:.1} s (seed {seed:#x}); {} requests from {CLIENTS} clients, \
         {acked} acknowledged writes all present ({rows_seen} rows in the file), {} cut off by \
         a kill, {} refused while down; 5xx answers {server_errors}, \"database is locked\" \
         {locked}, other non-2xx {not_2xx}",
        started.elapsed().as_secs_f64(),
        c.sent.load(Ordering::Relaxed) + 1,
        c.incomplete.load(Ordering::Relaxed),
        c.not_connected.load(Ordering::Relaxed),
    );
    let odd = run.odd.lock().unwrap();
    assert_eq!(server_errors, 0, "5xx answers: {odd:?}");
    assert_eq!(locked, 0, "\"database is locked\" answers: {odd:?}");
    assert_eq!(not_2xx, 0, "complete answers that did not save: {odd:?}");
    assert!(kills >= 20);
    assert!(
        c.incomplete.load(Ordering::Relaxed) > 0,
        "no kill ever caught a request in flight"
    );
    assert!(
        acked > KILLS * 5,
        "too few acknowledged writes ({acked}) to mean anything"
    );
}
