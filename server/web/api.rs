//! The JSON API under `/api/v1/`: every record, every calculation, the data-log analysis.

/// Calculations (`/calc/...`) and the figures of stored builds (wear, calibration).
pub mod calc;
/// The data-log analysis of a posted file or a pass's stored log.
pub mod datalogs;
/// The spreadsheet import.
pub mod import;
/// The API described (OpenAPI 3.1), from the types that serve it.
pub mod openapi;
/// List, get, create and update of the shop's records.
pub mod records;

use crate::error::{ApiError, AppError};
use crate::web::http::routes::{Access, Routes, get, post};

/// Every API route (paths under `web::API_PREFIX`); all need a bearer token.
pub fn routes() -> Routes {
    use Access::Token;
    Routes::new()
        .route(
            Token,
            "/customers",
            get(records::customers_list).post(records::customer_create),
        )
        .route(
            Token,
            "/customers/{id}",
            get(records::customer_get).put(records::customer_update),
        )
        .route(
            Token,
            "/customers/{id}/cars",
            get(records::cars_of_customer).post(records::car_create),
        )
        .route(Token, "/cars", get(records::cars_list))
        .route(
            Token,
            "/cars/{id}",
            get(records::car_get).put(records::car_update),
        )
        .route(
            Token,
            "/cars/{id}/builds",
            get(records::builds_of_car).post(records::build_create),
        )
        .route(Token, "/builds", get(records::builds_list))
        .route(
            Token,
            "/builds/{id}",
            get(records::build_get).put(records::build_update),
        )
        .route(
            Token,
            "/builds/{id}/setups",
            get(records::setups_of_build).post(records::setup_create),
        )
        .route(
            Token,
            "/setups/{id}",
            get(records::setup_get).put(records::setup_update),
        )
        .route(
            Token,
            "/builds/{id}/bench-tests",
            get(records::bench_of_build).post(records::bench_create),
        )
        .route(
            Token,
            "/bench-tests/{id}",
            get(records::bench_get).put(records::bench_update),
        )
        .route(
            Token,
            "/builds/{id}/measurements",
            get(records::heights_of_build).post(records::height_create),
        )
        .route(
            Token,
            "/measurements/{id}",
            get(records::height_get).put(records::height_update),
        )
        .route(
            Token,
            "/builds/{id}/passes",
            get(records::passes_of_build).post(records::pass_create),
        )
        .route(
            Token,
            "/passes/{id}",
            get(records::pass_get).put(records::pass_update),
        )
        .route(Token, "/builds/{id}/wear", get(calc::build_wear))
        .route(
            Token,
            "/builds/{id}/calibration",
            get(calc::build_calibration),
        )
        .route(Token, "/calc/capacity", post(calc::capacity))
        .route(Token, "/calc/recommend", post(calc::recommend))
        .route(Token, "/calc/calibrate", post(calc::calibrate))
        .route(Token, "/calc/wear", post(calc::wear))
        .route(
            Token,
            "/calc/log-analysis",
            post(datalogs::calc).body_limit(datalogs::LOG_BODY_LIMIT_BYTES),
        )
        .route(
            Token,
            "/passes/{id}/log",
            post(datalogs::api_store).body_limit(datalogs::LOG_BODY_LIMIT_BYTES),
        )
        .route(Token, "/passes/{id}/analysis", get(datalogs::api_analysis))
        .route(Token, "/calc/launch", post(calc::launch))
        // The description of every other route here (it does not describe itself).
        .route(Token, "/openapi.json", get(openapi::document))
        .route(
            Token,
            "/import/spreadsheet",
            post(import::spreadsheet).body_limit(import::IMPORT_BODY_LIMIT_BYTES),
        )
}

/// Any other path under the API: a JSON 404.
pub async fn not_found() -> ApiError {
    ApiError(AppError::NotFound)
}
