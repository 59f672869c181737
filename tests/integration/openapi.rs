//! The API's description: served with a token, valid OpenAPI 3.1 by a validator this project
//! does not write, and in step with the route table both ways.

use std::collections::BTreeSet;
use std::process::Command;

use axum::http::StatusCode;

use crate::support::TestApp;
use lockpoint::web::route_table;

/// Runs openapi-spec-validator (Python) on the document; installs it with pip when missing.
fn validate_with_python(path: &std::path::Path) -> (bool, String) {
    let check = format!(
        "from openapi_spec_validator import validate; import json; \
         validate(json.load(open({:?}))); print('valid')",
        path.display().to_string()
    );
    let run = || Command::new("python3").args(["-c", &check]).output();
    let mut out = run().expect("python3 runs");
    if !out.status.success() && String::from_utf8_lossy(&out.stderr).contains("ModuleNotFoundError")
    {
        let pip = Command::new("python3")
            .args(["-m", "pip", "install", "--quiet", "openapi-spec-validator"])
            .status()
            .expect("pip runs");
        assert!(
            pip.success(),
            "pip could not install openapi-spec-validator"
        );
        out = run().expect("python3 runs");
    }
    (
        out.status.success(),
        format!(
            "{}{}",
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        ),
    )
}

#[tokio::test]
async fn the_description_is_valid_openapi_and_in_step_with_the_routes() {
    let app = TestApp::new().await;
    app.api_answers(
        StatusCode::UNAUTHORIZED,
        "GET",
        "/api/v1/openapi.json",
        None,
        None,
    )
    .await;
    let token = app.token("sam").await;
    let reply = app.get_json("/api/v1/openapi.json", &token).await;
    assert_eq!(reply.status, StatusCode::OK);
    let doc = reply.json();
    assert_eq!(doc["openapi"], "3.1.0");
    assert_eq!(
        doc["components"]["securitySchemes"]["bearer"]["scheme"],
        "bearer"
    );
    assert!(doc["components"]["schemas"]["ErrorBody"]["properties"]["field"].is_object());
    // Units named in the record fields' descriptions, from their declarations.
    let build = &doc["components"]["schemas"]["BuildInput"]["properties"];
    assert_eq!(
        build["spring_rate_n_per_mm"]["description"],
        "Nominal spring rate, N/mm"
    );
    assert_eq!(
        build["facing_od_mm"]["description"],
        "Facing outer diameter, mm"
    );
    // The second look on an unusual cover height is part of the request, never of the record.
    let height = &doc["components"]["schemas"]["HeightInput"]["properties"];
    assert_eq!(height["confirm"]["type"], "boolean", "{height}");
    assert_eq!(height["confirm"]["writeOnly"], true, "{height}");

    // Checked by a validator the project does not write.
    let dir = std::env::temp_dir().join(format!("lockpoint-openapi-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let file = dir.join("openapi.json");
    std::fs::write(&file, &reply.body).unwrap();
    let (valid, said) = validate_with_python(&file);
    let _ = std::fs::remove_dir_all(&dir);
    assert!(valid, "openapi-spec-validator: {said}");

    // Every API route is described, and every described path is served.
    let served: BTreeSet<(String, String)> = route_table()
        .iter()
        .filter_map(|r| {
            r.path
                .strip_prefix("/api/v1")
                .filter(|p| *p != "/openapi.json")
                .map(|p| (r.method.to_string(), p.to_string()))
        })
        .collect();
    let described: BTreeSet<(String, String)> =
        lockpoint::web::api_described().into_iter().collect();
    let missing: Vec<_> = served.difference(&described).collect();
    let extra: Vec<_> = described.difference(&served).collect();
    assert!(missing.is_empty(), "served but not described: {missing:?}");
    assert!(extra.is_empty(), "described but not served: {extra:?}");
    assert!(served.len() > 30, "{served:?}");
}
