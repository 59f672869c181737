//! Integration tests: HTTP through the real router and a real SQLite file.

mod access;
pub mod backup;
mod bounded;
mod cache;
mod calc;
mod calibrate;
mod cli;
mod counter;
mod crash;
mod history;
mod hostile;
mod launch;
mod logs;
mod migrations;
mod plans;
mod records;
mod routes;
mod search;
mod serving;
mod sheets;
mod signin;
mod status;
mod support;
mod tune;
mod units;
mod wear;
mod workflow;
