use std::process::ExitCode;

use clap::Parser;
use lockpoint::config::Cli;

#[tokio::main]
async fn main() -> ExitCode {
    tracing_subscriber::fmt()
        .with_env_filter(
            tracing_subscriber::EnvFilter::try_from_default_env()
                .unwrap_or_else(|_| "lockpoint=info,tower_http=warn".into()),
        )
        .with_writer(std::io::stderr)
        .init();
    match lockpoint::cli::run(Cli::parse()).await {
        Ok(()) => ExitCode::SUCCESS,
        Err(err) => {
            eprintln!("error: {err}");
            ExitCode::FAILURE
        }
    }
}
