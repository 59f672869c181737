//! What each command of the `lockpoint` binary does.

use std::io::{BufRead, IsTerminal, Write};

use tokio::net::TcpListener;

use crate::config::{BackupCommand, Cli, Command, RoleArg, ServeArgs, TokenCommand, UserCommand};
use crate::db;
use crate::progress::Progress;
use crate::records::user::Role;
use crate::{AppState, app, auth, backup, demo};

/// The name audit history gives to changes made from the command line.
const COMMAND_LINE: &str = "command line";

/// Any failure of a command: printed to stderr by `main` with a non-zero exit.
pub type CliError = Box<dyn std::error::Error + Send + Sync>;

/// Runs one parsed command to completion.
pub async fn run(cli: Cli) -> Result<(), CliError> {
    match cli.command {
        Command::Serve(args) => serve(args).await,
        Command::User(UserCommand::Add { name, role, db }) => {
            let _commands = backup::DbLock::wait_for_commands(&db.path)?;
            let pool = db::open(&db.path).await?;
            let password = read_password()?;
            let role = match role {
                RoleArg::Admin => Role::Admin,
                RoleArg::Tech => Role::Tech,
            };
            let user = crate::records::user::NewUser::parse(&name, &password, role)
                .map_err(|e| e.to_string())?;
            let hash = auth::hash_password(password).await?;
            let mut conn = db::audit::begin_as(&pool, None, COMMAND_LINE).await?;
            if db::users::by_name(&mut conn, &user.username)
                .await?
                .is_some()
            {
                return Err(format!("a user named {:?} already exists", user.username).into());
            }
            db::users::insert(&mut conn, &user, &hash).await?;
            conn.commit().await?;
            eprintln!("added {} ({})", user.username, role.as_str());
            Ok(())
        }
        Command::Token(TokenCommand::Create { name, db }) => {
            let _commands = backup::DbLock::wait_for_commands(&db.path)?;
            let pool = db::open(&db.path).await?;
            let mut conn = db::audit::begin_as(&pool, None, COMMAND_LINE).await?;
            let user = db::users::by_name(&mut conn, &name)
                .await?
                .ok_or_else(|| format!("no user named {name:?}"))?;
            let token = auth::new_secret("lp_");
            db::tokens::insert(&mut conn, user.id, &auth::hash_secret(&token)).await?;
            conn.commit().await?;
            println!("{token}");
            Ok(())
        }
        Command::Token(TokenCommand::Revoke { token, user, db }) => {
            let _commands = backup::DbLock::wait_for_commands(&db.path)?;
            let pool = db::open(&db.path).await?;
            let mut conn = db::audit::begin_as(&pool, None, COMMAND_LINE).await?;
            let revoked = match (token, user) {
                (Some(token), _) => {
                    db::tokens::revoke_by_hash(&mut conn, &auth::hash_secret(token.trim())).await?
                }
                (None, Some(name)) => {
                    let user = db::users::by_name(&mut conn, &name)
                        .await?
                        .ok_or_else(|| format!("no user named {name:?}"))?;
                    db::tokens::revoke_for_user(&mut conn, user.id).await?
                }
                (None, None) => unreachable!("clap requires a token or --user"),
            };
            if revoked == 0 {
                return Err("no active token matched".into());
            }
            conn.commit().await?;
            eprintln!("revoked {revoked} token(s)");
            Ok(())
        }
        Command::Backup {
            action: Some(BackupCommand::Verify { file }),
            ..
        } => {
            let found = backup::verify::verify(&file).await?;
            println!("{}: a sound Lockpoint backup", file.display());
            println!("  shop: {}", found.shop_name);
            println!(
                "  customers: {}, builds: {}, cover heights: {}, passes: {}",
                found.customers, found.builds, found.cover_heights, found.passes
            );
            println!(
                "  newest record: {}",
                found.newest_record.as_deref().unwrap_or("none")
            );
            println!(
                "  {} bytes, {} tables, migration {}; integrity check ok",
                found.checked.bytes, found.checked.tables, found.checked.version
            );
            Ok(())
        }
        Command::Backup {
            action: None,
            file,
            db,
        } => {
            let file = file.ok_or("give the backup file to write")?;
            let done = backup::backup_file(&db, &file, &mut Progress::on_terminal()).await?;
            println!(
                "backed up {} to {} ({} bytes, {} tables, migration {}); integrity check ok",
                db.display(),
                file.display(),
                done.bytes,
                done.tables,
                done.version
            );
            Ok(())
        }
        Command::Restore { file, db } => {
            let done = backup::restore(&db, &file, &mut Progress::on_terminal()).await?;
            if let Some(note) = &done.safety_note {
                eprintln!("warning: {note}");
            }
            if let Some(copy) = &done.safety_copy {
                println!("kept the replaced database as {}", copy.display());
            }
            println!(
                "restored {} from {} (backup at migration {}, now {}); integrity check ok",
                db.display(),
                file.display(),
                done.backup_version,
                done.checked.version
            );
            Ok(())
        }
        Command::Export { dir, db } => {
            let done = backup::export_dir(&db, &dir, &mut Progress::on_terminal()).await?;
            println!(
                "exported {} rows from {} tables (migration {}) to {}: {} and one CSV file per table",
                done.rows,
                done.tables,
                done.version,
                dir.display(),
                db::export::JSON_FILE
            );
            println!("the export holds password and token hashes: keep it private");
            Ok(())
        }
        Command::Import { file, db } => {
            let done = backup::import_file(&db, &file, &mut Progress::on_terminal()).await?;
            println!(
                "imported {} rows into {} tables of {} (export at migration {})",
                done.imported.rows,
                done.imported.tables,
                db.display(),
                done.version
            );
            Ok(())
        }
    }
}

async fn serve(args: ServeArgs) -> Result<(), CliError> {
    // Held until the server stops: `restore` refuses to replace the file while it is held.
    let Some(_lock) = backup::DbLock::try_acquire(&args.db.path)? else {
        return Err(format!(
            "another Lockpoint server is using this database, or a restore is running ({} is locked)",
            backup::lock_path(&args.db.path).display()
        )
        .into());
    };
    // Downloads staged by a server that was stopped while sending them (this one holds the
    // lock now, so none is in flight).
    let swept = backup::sweep_staged_downloads(&args.db.path);
    if swept > 0 {
        tracing::info!(
            swept,
            "removed staged download copies left by an earlier run"
        );
    }
    let pool = db::open(&args.db.path).await?;
    if args.demo {
        match demo::seed_if_empty(&pool).await? {
            true => println!("demo shop loaded into {}", args.db.path.display()),
            false => println!(
                "{} already has records: demo not loaded",
                args.db.path.display()
            ),
        }
        for (name, role) in [
            (demo::DEMO_USERNAME, "admin"),
            (demo::DEMO_TECH_USERNAME, "tech"),
        ] {
            if demo::demo_user_exists(&pool, name).await? {
                println!("demo login: {name} / {} ({role})", demo::DEMO_PASSWORD);
            }
        }
    }
    if db::users::count(&mut *pool.acquire().await?).await? == 0 {
        eprintln!(
            "no staff accounts yet: nobody can sign in. Stop the server and create the first \
             one with `lockpoint user add NAME --role admin --db {}`",
            args.db.path.display()
        );
    }
    // A database just migrated, or loaded by an import, may hold builds whose work-due status is
    // not worked out yet.
    let mut tx = db::audit::begin_as(&pool, None, COMMAND_LINE).await?;
    let worked_out = crate::status::ensure(&mut tx).await?;
    tx.commit().await?;
    if worked_out > 0 {
        tracing::info!(builds = worked_out, "work-due status worked out");
    }
    tokio::spawn(crate::web::forget_old_failures(pool.clone()));
    tokio::spawn(crate::status::keep_search_compact(pool.clone()));
    let listener = TcpListener::bind(args.addr).await?;
    let shutdown = shutdown_signal()?;
    println!("listening on http://{}", listener.local_addr()?);
    let mut state = AppState::with_backups(pool.clone(), args.backup_fixed())
        .with_public_url(args.public_url.clone());
    if args.no_page_cache {
        state = state.without_page_cache();
    }
    crate::web::http::serve::run(
        listener,
        app(state),
        shutdown,
        crate::web::http::serve::Limits::for_this_process(),
    )
    .await;
    // A request cut off at the shutdown deadline may still hold a connection for a moment.
    if tokio::time::timeout(std::time::Duration::from_secs(5), pool.close())
        .await
        .is_err()
    {
        tracing::warn!("the database did not close within 5 s");
    }
    tracing::info!("stopped");
    Ok(())
}

/// Resolves on SIGINT (Ctrl-C) or SIGTERM, so in-flight requests finish and SQLite closes
/// cleanly. The handlers are installed when this is called (before the server announces its
/// address), so a signal sent right after the "listening on" line is not missed.
fn shutdown_signal() -> std::io::Result<impl Future<Output = ()>> {
    use tokio::signal::unix::{SignalKind, signal};
    let mut interrupt = signal(SignalKind::interrupt())?;
    let mut terminate = signal(SignalKind::terminate())?;
    Ok(async move {
        tokio::select! {
            _ = interrupt.recv() => {},
            _ = terminate.recv() => {},
        }
    })
}

/// The first line of stdin, or a prompt when stdin is a terminal.
fn read_password() -> Result<String, CliError> {
    let stdin = std::io::stdin();
    if stdin.is_terminal() {
        eprint!("password (10 characters or more): ");
        std::io::stderr().flush()?;
    }
    let mut line = String::new();
    stdin.lock().read_line(&mut line)?;
    Ok(line.trim_end_matches(['\r', '\n']).to_string())
}
