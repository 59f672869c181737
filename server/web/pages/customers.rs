//! Customers and their cars.

/// A car's page and form.
pub mod car;
/// The customer list, search, page and form.
pub mod customer;
