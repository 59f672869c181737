//! The command line: one clap struct per command, every option also an environment variable.

use std::net::SocketAddr;
use std::path::PathBuf;

use clap::{Args, Parser, Subcommand, ValueEnum};

use crate::backup::plan::{self, Every};

/// Lockpoint: clutch build records, engineering and setup sheets for a race shop.
#[derive(Debug, Parser)]
#[command(name = "lockpoint", version, about)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Run the web service (creates the database and applies migrations first).
    Serve(ServeArgs),
    /// Manage staff accounts.
    #[command(subcommand)]
    User(UserCommand),
    /// Manage API bearer tokens.
    #[command(subcommand)]
    Token(TokenCommand),
    /// Copy the database to a new file, safely while the server runs, and check the copy
    /// (`lockpoint backup verify FILE` checks a backup).
    #[command(args_conflicts_with_subcommands = true, subcommand_negates_reqs = true)]
    Backup {
        #[command(subcommand)]
        action: Option<BackupCommand>,
        /// The backup file to write (must not exist yet).
        #[arg(value_name = "PATH", required = true)]
        file: Option<PathBuf>,
        /// The SQLite database file to copy (it must exist).
        #[arg(long = "db", env = "LOCKPOINT_DB", default_value = "lockpoint.db")]
        db: PathBuf,
    },
    /// Replace the database with a backup (stop the server first).
    ///
    /// The backup is checked first (SQLite integrity check, a Lockpoint migration history no
    /// newer than this program) and brought up to date with this program's migrations. The
    /// database it replaces is kept beside it as `<db>.before-restore-<unix time>`.
    Restore {
        /// The backup file to restore (left unchanged).
        #[arg(value_name = "PATH")]
        file: PathBuf,
        /// The SQLite database file to replace.
        #[arg(long = "db", env = "LOCKPOINT_DB", default_value = "lockpoint.db")]
        db: PathBuf,
    },
    /// Write every table as a CSV file and all tables as one JSON document (lockpoint-export.json).
    ///
    /// The export is complete, so it can rebuild the shop with `lockpoint import`: it contains the
    /// staff password hashes and the API token hashes. Keep it as private as the database itself.
    /// Sign-in sessions, failed sign-ins and the migration history are not exported.
    Export {
        /// Directory to write into (created when missing; existing files are never overwritten).
        dir: PathBuf,
        /// The SQLite database file to export (it must exist).
        #[arg(long = "db", env = "LOCKPOINT_DB", default_value = "lockpoint.db")]
        db: PathBuf,
    },
    /// Load a JSON export (lockpoint-export.json) into a new, empty database.
    ///
    /// Every row keeps its id. All or nothing: one transaction. Refused when the database already
    /// holds records.
    Import {
        /// The JSON document written by `lockpoint export`.
        file: PathBuf,
        /// The SQLite database file to fill: a new file, or one without records.
        #[arg(long = "db", env = "LOCKPOINT_DB", default_value = "lockpoint.db")]
        db: PathBuf,
    },
}

#[derive(Debug, Subcommand)]
pub enum BackupCommand {
    /// Check a backup file without changing it: SQLite's integrity check, a Lockpoint
    /// database no newer than this program; prints the shop's name and what it holds. Exits
    /// non-zero, with the reason, when the file is not a sound backup.
    Verify {
        /// The backup file to check.
        #[arg(value_name = "FILE")]
        file: PathBuf,
    },
}

/// Where the SQLite database file lives.
#[derive(Debug, Clone, Args)]
pub struct DbArg {
    /// SQLite database file (created when missing).
    #[arg(long = "db", env = "LOCKPOINT_DB", default_value = "lockpoint.db")]
    pub path: PathBuf,
}

#[derive(Debug, Args)]
pub struct ServeArgs {
    #[command(flatten)]
    pub db: DbArg,
    /// Address to listen on; port 0 picks a free port.
    #[arg(long, env = "LOCKPOINT_ADDR", default_value = "127.0.0.1:3000")]
    pub addr: SocketAddr,
    /// Fill an empty database with an invented demo shop (changes nothing otherwise).
    #[arg(long)]
    pub demo: bool,
    /// The address people reach the server by, such as `https://clutch.shop.example` (behind a
    /// TLS proxy). Customer sheet links are built from it instead of the request's Host header;
    /// when it starts with `https://` the session cookie is marked `Secure`.
    #[arg(long, env = "LOCKPOINT_PUBLIC_URL", value_name = "URL", value_parser = public_url)]
    pub public_url: Option<String>,
    /// Copy the database into this folder by itself (full path; a second disk, a USB drive, a
    /// mounted network share). Never created: a missing folder is reported. Wins over the
    /// folder chosen under Settings → Backups.
    #[arg(long, env = "LOCKPOINT_BACKUP_DIR", value_name = "DIR", value_parser = backup_dir)]
    pub backup_dir: Option<PathBuf>,
    /// How often: 30s, 15m, 6h, 1d (at least 10s; default 1d, or what Settings says).
    #[arg(long, env = "LOCKPOINT_BACKUP_EVERY", value_name = "DURATION", value_parser = Every::parse)]
    pub backup_every: Option<Every>,
    /// How many scheduled copies to keep in the folder (default 14, or what Settings says).
    #[arg(long, env = "LOCKPOINT_BACKUP_KEEP", value_name = "N", value_parser = plan::parse_keep)]
    pub backup_keep: Option<u32>,
    /// Render every page afresh instead of reusing one rendered since the last commit (for
    /// measuring the uncached pages; sessions are still remembered).
    #[arg(long)]
    pub no_page_cache: bool,
}

impl ServeArgs {
    /// The backup values given at start (each wins over the stored schedule).
    pub fn backup_fixed(&self) -> plan::Fixed {
        plan::Fixed {
            dir: self.backup_dir.clone(),
            every: self.backup_every,
            keep: self.backup_keep,
        }
    }
}

/// A backup folder given at start: its full path.
fn backup_dir(text: &str) -> Result<PathBuf, String> {
    plan::parse_dir(text)?.ok_or_else(|| "give the folder's full path".to_string())
}

/// An `http://` or `https://` address with a host and nothing after the host but an optional
/// path, kept without its trailing `/`.
fn public_url(text: &str) -> Result<String, String> {
    let url = text.trim().trim_end_matches('/');
    let rest = url
        .strip_prefix("https://")
        .or_else(|| url.strip_prefix("http://"))
        .ok_or("give the address with http:// or https://")?;
    let host = rest.split('/').next().unwrap_or("");
    let plain = |c: char| c.is_ascii_alphanumeric() || "-._~/:[]%".contains(c);
    if host.is_empty() || !rest.chars().all(plain) {
        return Err("give a plain address such as https://clutch.shop.example".into());
    }
    Ok(url.to_string())
}

#[derive(Debug, Subcommand)]
pub enum UserCommand {
    /// Add a staff account; the password is read from the first line of stdin.
    Add {
        /// Login name.
        name: String,
        /// What the account may do.
        #[arg(long, value_enum)]
        role: RoleArg,
        #[command(flatten)]
        db: DbArg,
    },
}

#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum RoleArg {
    /// Manages users, settings, tokens and deletes, and records.
    Admin,
    /// Records builds, tests, measurements and passes.
    Tech,
}

#[derive(Debug, Subcommand)]
pub enum TokenCommand {
    /// Print a new API bearer token for a user (only its hash is stored).
    Create {
        /// The user the token acts as.
        name: String,
        #[command(flatten)]
        db: DbArg,
    },
    /// Revoke one token (give the token) or every token of a user (--user).
    Revoke {
        /// The token to revoke.
        #[arg(required_unless_present = "user", conflicts_with = "user")]
        token: Option<String>,
        /// Revoke all tokens of this user instead.
        #[arg(long)]
        user: Option<String>,
        #[command(flatten)]
        db: DbArg,
    },
}
