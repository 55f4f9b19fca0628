//! The OpenAPI document at `/api/openapi.json`: OpenAPI 3.1, every route the
//! router serves, and every operation's example answered 200 by the real server
//! with an answer that validates against the operation's own response schema.

use serde_json::{Map, Value};

use crate::helpers::{shared_app, spawn_app, TestApp};

/// The routes of `src/server.rs` the document must describe, with their methods.
const ROUTES: [(&str, &[&str]); 22] = [
    ("/api/v1/loans/schedule", &["get", "post"]),
    ("/api/v1/refinance", &["get", "post"]),
    ("/api/v1/refinance.csv", &["get"]),
    ("/api/v1/loans/options", &["get", "post"]),
    ("/api/v1/loans/options.csv", &["get"]),
    ("/api/v1/loans/grid", &["get"]),
    ("/api/v1/loans/grid.csv", &["get"]),
    ("/api/v1/loans/schedule.csv", &["get"]),
    ("/api/v1/loans/compare", &["get", "post"]),
    ("/api/v1/loans/compare.csv", &["get"]),
    ("/api/v1/recurrence", &["post"]),
    ("/api/v1/apr", &["get", "post"]),
    ("/api/v1/apy", &["get", "post"]),
    ("/api/v1/loans/check", &["get", "post"]),
    ("/api/v1/savings/plan", &["get", "post"]),
    ("/api/v1/savings/plan.csv", &["get"]),
    ("/api/openapi.json", &["get"]),
    ("/api/v1/batch", &["post"]),
    ("/api/v1/loans/checks", &["post"]),
    ("/healthz", &["get"]),
    ("/readyz", &["get"]),
    ("/metrics", &["get"]),
];

fn document(app: &TestApp) -> Value {
    let r = app.get("/api/openapi.json");
    assert_eq!(r.status, 200, "{}", String::from_utf8_lossy(&r.body));
    assert_eq!(r.media_type(), "application/json");
    r.json()
}

/// The `.route("PATH", get(…).post(…))` calls of a source file: each path with its methods.
fn routes_in_source(source: &str) -> Vec<(String, Vec<String>)> {
    let mut out = Vec::new();
    let calls: Vec<&str> = source.split(".route(").skip(1).collect();
    for call in calls {
        let call = call.trim_start();
        let Some(rest) = call.strip_prefix('"') else {
            continue;
        };
        let Some(end) = rest.find('"') else {
            continue;
        };
        let path = rest[..end].to_string();
        // The method router runs to the next builder call of the outer router.
        let tail = &rest[end + 1..];
        let stop = [
            ".merge(",
            ".layer(",
            ".fallback(",
            ".method_not_allowed_fallback(",
            ".with_state(",
        ]
        .iter()
        .filter_map(|s| tail.find(s))
        .min()
        .unwrap_or(tail.len());
        let router = &tail[..stop];
        let mut methods = Vec::new();
        for m in ["get", "post", "put", "patch", "delete"] {
            let bare = router.trim_start_matches([',', ' ', '\n', '\r', '\t']);
            if bare.starts_with(&format!("{m}(")) || router.contains(&format!(".{m}(")) {
                methods.push(m.to_string());
            }
        }
        out.push((path, methods));
    }
    out
}

fn served_under_the_api(path: &str) -> bool {
    path.starts_with("/api/") || ["/healthz", "/readyz", "/metrics"].contains(&path)
}

#[test]
fn the_document_is_openapi_3_1_json() {
    let app = shared_app();
    let doc = document(&app);
    let version = doc["openapi"].as_str().expect("an openapi version");
    assert!(version.starts_with("3.1"), "{version}");
    assert!(doc["info"]["title"].is_string());
    assert!(doc["paths"].as_object().is_some_and(|p| !p.is_empty()));
    // Every $ref points at a schema of the document.
    let text = doc.to_string();
    for part in text.split("\"$ref\":\"").skip(1) {
        let target = &part[..part.find('"').unwrap()];
        let name = target
            .strip_prefix("#/components/schemas/")
            .unwrap_or_else(|| panic!("a $ref outside the schemas: {target}"));
        assert!(
            doc["components"]["schemas"][name].is_object(),
            "$ref to a missing schema {name}"
        );
    }
}

#[test]
fn every_route_the_router_serves_is_a_path_with_its_methods() {
    let app = shared_app();
    let doc = document(&app);
    let paths = doc["paths"].as_object().expect("paths");
    let root = env!("CARGO_MANIFEST_DIR");
    let mut from_source = Vec::new();
    for file in ["src/server.rs", "src/web/mod.rs"] {
        if let Ok(source) = std::fs::read_to_string(format!("{root}/{file}")) {
            from_source.extend(routes_in_source(&source));
        }
    }
    assert!(
        from_source
            .iter()
            .any(|(p, _)| p == "/api/v1/loans/schedule"),
        "the parser finds the routes of src/server.rs"
    );
    let mut expected: Vec<(String, Vec<String>)> = ROUTES
        .iter()
        .map(|(p, ms)| (p.to_string(), ms.iter().map(|m| m.to_string()).collect()))
        .collect();
    for (path, methods) in from_source
        .into_iter()
        .filter(|(p, _)| served_under_the_api(p))
    {
        assert!(
            ROUTES.iter().any(|(p, _)| *p == path),
            "{path} is routed in the source but missing from this test's list"
        );
        expected.push((path, methods));
    }
    for (path, methods) in expected {
        let item = paths
            .get(&path)
            .unwrap_or_else(|| panic!("{path} is served but not in the document's paths"));
        for m in &methods {
            assert!(
                item[m].is_object(),
                "{} {path} is not described",
                m.to_uppercase()
            );
        }
    }
    // And nothing is described that is not served.
    for (path, item) in paths {
        let served = ROUTES.iter().find(|(p, _)| p == path);
        let (_, methods) = served.unwrap_or_else(|| panic!("{path} is described but not served"));
        for m in item.as_object().unwrap().keys() {
            assert!(
                methods.contains(&m.as_str()),
                "{m} {path} is described but not served"
            );
        }
    }
}

// ---------------------------------------------------------------------------
// A small structural validator: type, required, properties (no undocumented
// keys), items, enum, min/max, allOf/oneOf/anyOf, and $ref into components.
// ---------------------------------------------------------------------------

fn resolve<'a>(doc: &'a Value, schema: &'a Value) -> &'a Value {
    match schema.get("$ref").and_then(Value::as_str) {
        Some(r) => {
            let name = r
                .strip_prefix("#/components/schemas/")
                .expect("a local $ref");
            let target = &doc["components"]["schemas"][name];
            assert!(target.is_object(), "missing schema {name}");
            resolve(doc, target)
        }
        None => schema,
    }
}

/// The property names an object schema documents, through `allOf` and `$ref`s.
fn documented_properties(doc: &Value, schema: &Value, out: &mut Vec<String>) {
    let schema = resolve(doc, schema);
    if let Some(p) = schema["properties"].as_object() {
        out.extend(p.keys().cloned());
    }
    for branch in schema["allOf"].as_array().into_iter().flatten() {
        documented_properties(doc, branch, out);
    }
}

fn type_matches(t: &str, v: &Value) -> bool {
    match t {
        "object" => v.is_object(),
        "array" => v.is_array(),
        "string" => v.is_string(),
        "integer" => v.is_i64() || v.is_u64(),
        "number" => v.is_number(),
        "boolean" => v.is_boolean(),
        "null" => v.is_null(),
        _ => false,
    }
}

fn validate(doc: &Value, schema: &Value, v: &Value, at: &str, errors: &mut Vec<String>) {
    validate_inner(doc, schema, v, at, errors, true);
}

fn validate_inner(
    doc: &Value,
    schema: &Value,
    v: &Value,
    at: &str,
    errors: &mut Vec<String>,
    check_unknown: bool,
) {
    let schema = resolve(doc, schema);
    if let Some(branches) = schema["allOf"].as_array() {
        for b in branches {
            validate_inner(doc, b, v, at, errors, false);
        }
    }
    for key in ["oneOf", "anyOf"] {
        if let Some(branches) = schema[key].as_array() {
            let fits = branches.iter().any(|b| {
                let mut e = Vec::new();
                validate_inner(doc, b, v, at, &mut e, true);
                e.is_empty()
            });
            if !fits {
                errors.push(format!("{at}: fits none of {key} ({v})"));
            }
        }
    }
    match &schema["type"] {
        Value::String(t) if !type_matches(t, v) => {
            errors.push(format!("{at}: {} is not of type {t}", short(v)));
            return;
        }
        Value::Array(ts)
            if !ts
                .iter()
                .filter_map(Value::as_str)
                .any(|t| type_matches(t, v)) =>
        {
            errors.push(format!("{at}: {} is not of types {ts:?}", short(v)));
            return;
        }
        _ => {}
    }
    if let Some(allowed) = schema["enum"].as_array() {
        if !allowed.contains(v) {
            errors.push(format!("{at}: {v} is not one of {allowed:?}"));
        }
    }
    if let (Some(n), Some(min)) = (v.as_f64(), schema["minimum"].as_f64()) {
        if n < min {
            errors.push(format!("{at}: {n} < minimum {min}"));
        }
    }
    if let (Some(n), Some(max)) = (v.as_f64(), schema["maximum"].as_f64()) {
        if n > max {
            errors.push(format!("{at}: {n} > maximum {max}"));
        }
    }
    if let Value::Object(members) = v {
        for r in schema["required"].as_array().into_iter().flatten() {
            let r = r.as_str().unwrap();
            if !members.contains_key(r) {
                errors.push(format!("{at}: the required key {r} is missing"));
            }
        }
        let properties: &Map<String, Value> = match schema["properties"].as_object() {
            Some(p) => p,
            None => &Map::new(),
        };
        for (k, value) in members {
            if let Some(p) = properties.get(k) {
                validate_inner(doc, p, value, &format!("{at}/{k}"), errors, true);
            }
        }
        let mut documented = Vec::new();
        documented_properties(doc, schema, &mut documented);
        if check_unknown && !documented.is_empty() {
            for k in members.keys() {
                if !documented.contains(k) {
                    errors.push(format!("{at}: the key {k} is not in the schema"));
                }
            }
        }
    }
    if let Value::Array(items) = v {
        if let Some(max) = schema["maxItems"].as_u64() {
            if items.len() as u64 > max {
                errors.push(format!("{at}: more than {max} items"));
            }
        }
        if let Some(min) = schema["minItems"].as_u64() {
            if (items.len() as u64) < min {
                errors.push(format!("{at}: fewer than {min} items"));
            }
        }
        if schema.get("items").is_some() {
            for (i, item) in items.iter().enumerate() {
                validate_inner(
                    doc,
                    &schema["items"],
                    item,
                    &format!("{at}/{i}"),
                    errors,
                    true,
                );
            }
        }
    }
}

fn short(v: &Value) -> String {
    let s = v.to_string();
    if s.len() > 80 {
        format!("{}…", &s[..80])
    } else {
        s
    }
}

fn assert_valid(doc: &Value, schema: &Value, v: &Value, what: &str) {
    let mut errors = Vec::new();
    validate(doc, schema, v, "", &mut errors);
    assert!(errors.is_empty(), "{what}:\n  {}", errors.join("\n  "));
}

#[test]
fn the_validator_catches_what_it_should() {
    let doc = serde_json::json!({"components": {"schemas": {
        "A": {"type": "object", "required": ["x"], "properties": {"x": {"type": "integer"}, "y": {"oneOf": [{"type": "null"}, {"$ref": "#/components/schemas/B"}]}}},
        "B": {"type": "object", "properties": {"z": {"type": "array", "items": {"type": "string"}}}}
    }}});
    let a = serde_json::json!({"$ref": "#/components/schemas/A"});
    let check = |v: Value| {
        let mut e = Vec::new();
        validate(&doc, &a, &v, "", &mut e);
        e
    };
    assert!(check(serde_json::json!({"x": 1, "y": {"z": ["s"]}})).is_empty());
    assert!(check(serde_json::json!({"x": 1, "y": null})).is_empty());
    assert!(
        !check(serde_json::json!({"y": null})).is_empty(),
        "required"
    );
    assert!(!check(serde_json::json!({"x": "1"})).is_empty(), "type");
    assert!(
        !check(serde_json::json!({"x": 1, "w": 2})).is_empty(),
        "unknown key"
    );
    assert!(
        !check(serde_json::json!({"x": 1, "y": {"z": [1]}})).is_empty(),
        "items"
    );
}

// ---------------------------------------------------------------------------
// Every operation's example, sent to the real server
// ---------------------------------------------------------------------------

fn example_query(operation: &Value) -> String {
    let mut q = form_urlencoded::Serializer::new(String::new());
    for p in operation["parameters"].as_array().into_iter().flatten() {
        let name = p["name"].as_str().unwrap();
        match &p["example"] {
            Value::Null => {}
            Value::Array(values) => {
                for v in values {
                    q.append_pair(name, v.as_str().unwrap());
                }
            }
            Value::String(s) => {
                q.append_pair(name, s);
            }
            other => {
                q.append_pair(name, &other.to_string());
            }
        }
    }
    q.finish()
}

/// Checks an answer's body against the operation's 200 content for its media type.
fn check_answer(doc: &Value, content: &Value, media: &str, body: &[u8], what: &str) {
    let described = &content[media];
    assert!(
        described.is_object(),
        "{what}: answered {media}, which the document does not list"
    );
    let text = std::str::from_utf8(body).expect("UTF-8");
    match media {
        "application/json" => {
            let v: Value = serde_json::from_str(text).expect("JSON");
            assert_valid(doc, &described["schema"], &v, what);
            if let Some(example) = described.get("example") {
                assert_valid(
                    doc,
                    &described["schema"],
                    example,
                    &format!("{what} (the document's example)"),
                );
            }
        }
        "application/x-ndjson" => {
            let line_schema = &described["x-line-schema"];
            assert!(line_schema.is_object(), "{what}: the line schema");
            let mut lines = 0;
            for line in text.lines() {
                let v: Value = serde_json::from_str(line).expect("an NDJSON line");
                assert_eq!(v["ok"], true, "{what}: {line}");
                assert_valid(doc, line_schema, &v, what);
                lines += 1;
            }
            assert!(lines > 0, "{what}: no lines");
        }
        "text/csv" => {
            let header = text.lines().next().unwrap_or("");
            assert!(
                header.contains(',') && !header.chars().any(|c| c.is_ascii_digit()),
                "{what}: a header row, got {header}"
            );
            assert!(text.lines().count() > 1, "{what}: rows");
            if let Some(example) = described["example"].as_str() {
                assert_eq!(
                    example.lines().next(),
                    Some(header),
                    "{what}: the example's header"
                );
            }
        }
        "text/plain" => assert!(!text.is_empty()),
        other => panic!("{what}: unexpected media type {other}"),
    }
}

/// Extra headers, a body with its media type (POST), and the target.
type ExampleRequest = (
    Vec<(&'static str, &'static str)>,
    Option<(String, Vec<u8>)>,
    String,
);

#[test]
fn every_operations_example_is_answered_200_and_fits_its_schema() {
    let app = spawn_app();
    let doc = document(&app);
    let mut operations = 0;
    for (path, item) in doc["paths"].as_object().unwrap() {
        for (method, op) in item.as_object().unwrap() {
            let what = format!("{} {path}", method.to_uppercase());
            let content = &op["responses"]["200"]["content"];
            assert!(content.is_object(), "{what}: no 200 content");
            // Problem details are described for the errors.
            for (status, r) in op["responses"].as_object().unwrap() {
                if status.starts_with('4') || status.starts_with('5') {
                    assert_eq!(
                        r["content"]["application/problem+json"]["schema"]["$ref"],
                        "#/components/schemas/Problem",
                        "{what} {status}"
                    );
                }
            }
            let mut requests: Vec<ExampleRequest> = Vec::new();
            if method == "get" {
                let q = example_query(op);
                let target = if q.is_empty() {
                    path.clone()
                } else {
                    format!("{path}?{q}")
                };
                requests.push((vec![], None, target.clone()));
                if content["text/csv"].is_object() && content["application/json"].is_object() {
                    requests.push((vec![("Accept", "text/csv")], None, target));
                }
            } else {
                let body = op["requestBody"]["content"]
                    .as_object()
                    .expect("a request body");
                assert_eq!(body.len(), 1, "{what}: one media type");
                let (media, described) = body.iter().next().unwrap();
                let example = described
                    .get("example")
                    .unwrap_or_else(|| panic!("{what}: a request example"));
                let bytes = if media == "application/json" {
                    assert_valid(
                        &doc,
                        &described["schema"],
                        example,
                        &format!("{what} request example"),
                    );
                    serde_json::to_vec(example).unwrap()
                } else if media == "text/csv" {
                    // A file of rows: its header names the row schema's fields (and `id`).
                    let text = example.as_str().expect("a CSV example is text");
                    let row = resolve(&doc, &described["x-row-schema"]);
                    let header = text.lines().next().expect("a header row");
                    for name in header.split(',') {
                        let field = name.split('.').next().unwrap();
                        assert!(
                            name == "id" || row["properties"].get(field).is_some(),
                            "{what}: the example's column {name} is a field of its row schema"
                        );
                    }
                    text.as_bytes().to_vec()
                } else {
                    let text = example.as_str().expect("an NDJSON example is text");
                    for line in text.lines() {
                        let v: Value = serde_json::from_str(line).expect("an NDJSON line");
                        assert_valid(
                            &doc,
                            &described["x-line-schema"],
                            &v,
                            &format!("{what} request line"),
                        );
                    }
                    text.as_bytes().to_vec()
                };
                requests.push((vec![], Some((media.clone(), bytes.clone())), path.clone()));
                if content["text/csv"].is_object() {
                    requests.push((
                        vec![("Accept", "text/csv")],
                        Some((media.clone(), bytes)),
                        path.clone(),
                    ));
                }
            }
            for (headers, body, target) in requests {
                let mut headers: Vec<(&str, &str)> = headers;
                let r = match &body {
                    Some((media, bytes)) => {
                        headers.push(("Content-Type", media.as_str()));
                        app.request("POST", &target, &headers, Some(bytes))
                    }
                    None => app.request("GET", &target, &headers, None),
                };
                let what = format!("{what} {headers:?}");
                assert_eq!(
                    r.status,
                    200,
                    "{what}: {}",
                    String::from_utf8_lossy(&r.body)
                );
                check_answer(&doc, content, &r.media_type(), &r.body, &what);
            }
            operations += 1;
        }
    }
    assert!(operations >= 20, "{operations} operations");
}

#[test]
fn get_parameters_are_the_fields_of_the_json_request() {
    let app = shared_app();
    let doc = document(&app);
    let names = |op: &Value| -> Vec<String> {
        op["parameters"]
            .as_array()
            .into_iter()
            .flatten()
            .map(|p| p["name"].as_str().unwrap().to_string())
            .collect()
    };
    for path in [
        "/api/v1/loans/schedule",
        "/api/v1/loans/check",
        "/api/v1/apy",
        "/api/v1/savings/plan",
    ] {
        let get = &doc["paths"][path]["get"];
        let post = &doc["paths"][path]["post"];
        let schema = resolve(
            &doc,
            &post["requestBody"]["content"]["application/json"]["schema"],
        );
        let mut fields: Vec<String> = schema["properties"]
            .as_object()
            .unwrap()
            .keys()
            .cloned()
            .collect();
        let mut params = names(get);
        fields.sort();
        params.sort();
        assert_eq!(params, fields, "{path}");
    }
    // An unknown query parameter is refused, as the document's closed schemas say.
    let r = app.get(
        "/api/v1/loans/schedule?principal=1000&annual_rate_percent=5&term_months=12&princpal=1",
    );
    assert_eq!(r.status, 422);
    assert_eq!(r.media_type(), "application/problem+json");
}
