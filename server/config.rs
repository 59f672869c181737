//! The command line: one clap struct per command, every option also an environment variable.

use std::net::SocketAddr;
use std::path::PathBuf;

use clap::{Args, Parser, Subcommand, ValueEnum};

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
