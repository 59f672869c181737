//! Integration tests: HTTP through the real router and a real SQLite file.

mod access;
mod backup;
mod bounded;
#[path = "../shared/build_form.rs"]
mod build_form;
mod cache;
mod calc;
mod calibrate;
mod cli;
mod counter;
mod crash;
mod history;
mod hostile;
mod import;
mod launch;
mod logs;
mod migrations;
mod openapi;
mod plans;
mod plausible;
mod reads;
mod records;
mod routes;
mod scheduled_backups;
mod search;
mod serving;
mod sheets;
mod signin;
mod status;
mod support;
mod tune;
mod units;
mod untouched;
mod wear;
mod workflow;
mod writes;
