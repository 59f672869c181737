//! The HTTP plumbing shared by the pages and the API: nothing here knows a clutch.

/// Sessions and whole pages reused until the next commit.
pub mod cache;
/// Extractors: the signed-in user, the CSRF-checked form, the API token, JSON, path ids, the
/// client's address.
pub mod extract;
/// One-time notes carried across a redirect.
pub mod flash;
/// Heavy work on bounded blocking threads, turns per caller, analyses at once.
pub mod heavy;
/// Access levels and the route table the router is built from.
pub mod routes;
/// The connection loop: header timeout, connection cap, shutdown deadline.
pub mod serve;
