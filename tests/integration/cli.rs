//! The binary's commands, run as a user would.

use std::io::{BufRead, BufReader};
use std::process::Stdio;

use crate::support::{Server, TempDb, lockpoint, run_cli};

#[test]
fn user_add_refuses_a_short_password_and_accepts_a_long_one() {
    let db = TempDb::new();
    let path = db.path.to_str().unwrap();
    let short = run_cli(
        &["user", "add", "kim", "--role", "tech", "--db", path],
        "short\n",
    );
    assert!(!short.status.success());
    assert!(String::from_utf8_lossy(&short.stderr).contains("at least 10 characters"));
    let ok = run_cli(
        &["user", "add", "kim", "--role", "admin", "--db", path],
        "long enough pass\n",
    );
    assert!(
        ok.status.success(),
        "{}",
        String::from_utf8_lossy(&ok.stderr)
    );
    let again = run_cli(
        &["user", "add", "kim", "--role", "admin", "--db", path],
        "long enough pass\n",
    );
    assert!(!again.status.success(), "duplicate names are refused");

    let token = run_cli(&["token", "create", "kim", "--db", path], "");
    assert!(token.status.success());
    let token = String::from_utf8(token.stdout).unwrap();
    assert!(token.trim().starts_with("lp_") && token.trim().len() == 67);
    let revoke = run_cli(&["token", "revoke", token.trim(), "--db", path], "");
    assert!(revoke.status.success());
    let twice = run_cli(&["token", "revoke", token.trim(), "--db", path], "");
    assert!(
        !twice.status.success(),
        "a revoked token cannot be revoked again"
    );
}

#[test]
fn serve_reports_the_real_port_and_stops_on_sigterm() {
    let db = TempDb::new();
    let mut server = Server::start(&db.path);
    assert!(!server.addr.ends_with(":0"), "{}", server.addr);
    let reply = server.get("/healthz");
    assert!(reply.starts_with("HTTP/1.1 200"), "{reply}");
    let (status, _) = server.terminate_within(std::time::Duration::from_secs(30));
    assert!(status.success(), "clean exit on SIGTERM: {status:?}");
}

#[test]
fn every_command_has_help() {
    for args in [
        vec!["--help"],
        vec!["serve", "--help"],
        vec!["user", "add", "--help"],
        vec!["token", "create", "--help"],
        vec!["token", "revoke", "--help"],
    ] {
        let out = lockpoint().args(&args).output().unwrap();
        assert!(out.status.success(), "{args:?}");
        assert!(
            String::from_utf8_lossy(&out.stdout).contains("Usage"),
            "{args:?}"
        );
    }
}

#[test]
fn serve_on_a_database_without_accounts_says_how_to_make_the_first() {
    let db = TempDb::new();
    let mut child = lockpoint()
        .args([
            "serve",
            "--db",
            db.path.to_str().unwrap(),
            "--addr",
            "127.0.0.1:0",
        ])
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let stderr = BufReader::new(child.stderr.take().unwrap());
    let hint = stderr
        .lines()
        .take(20)
        .map_while(Result::ok)
        .find(|l| l.contains("no staff accounts yet"));
    let _ = child.kill();
    let _ = child.wait();
    let hint = hint.expect("the hint is printed");
    assert!(
        hint.contains("lockpoint user add NAME --role admin"),
        "{hint}"
    );
}
