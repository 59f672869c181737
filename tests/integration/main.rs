//! Integration tests: HTTP through the real router and a real SQLite file.

mod access;
mod calc;
mod cli;
mod history;
mod records;
mod routes;
mod sheets;
mod support;
mod wear;
