//! `POST /api/v1/recurrence`: any first-order recurrence, solved in closed form.

use serde_json::{json, Value};

use crate::helpers::{
    assert_field_problem, assert_still_healthy, dec, dec_of, shared_app, RECURRENCE,
};

/// The multiplicity of the partial fraction at `pole`, if there is one.
fn multiplicity_at(answer: &Value, pole: &str) -> Option<u64> {
    answer["derivation"]["partial_fractions"]
        .as_array()
        .expect("partial fractions")
        .iter()
        .find(|f| dec_of(&f["pole"]) == dec(pole))
        .and_then(|f| f["multiplicity"].as_u64())
}

#[test]
fn a_level_payment_at_zero_interest_has_a_double_pole_at_one() {
    // Arrange
    let app = shared_app();
    let body = json!({
        "a": "1",
        "x0": "1200",
        "inputs": [{"kind": "step", "amount": "-100"}],
        "evaluate_at": [0, 5, 12]
    });

    // Act
    let r = app.post_json(RECURRENCE, &body);

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    assert_eq!(r.media_type(), "application/json");
    let answer = r.json();
    let values = answer["values"].as_array().expect("values");
    let got: Vec<(u64, rust_decimal::Decimal)> = values
        .iter()
        .map(|v| (v["k"].as_u64().unwrap(), dec_of(&v["value"])))
        .collect();
    assert_eq!(got, vec![(0, dec("1200")), (5, dec("700")), (12, dec("0"))]);
    assert_eq!(multiplicity_at(&answer, "1"), Some(2), "{answer}");
    let first = answer["notes"][0].as_str().unwrap_or("");
    assert!(first.contains("not an offer"), "notes[0] = {first:?}");
}

#[test]
fn a_geometric_input_growing_at_the_factor_a_has_a_double_pole_at_a() {
    // Arrange
    let app = shared_app();
    let body = json!({
        "a": "1.01",
        "x0": "0",
        "inputs": [{"kind": "geometric", "amount": "100", "ratio": "1.01"}],
        "evaluate_at": [0, 1, 2, 3]
    });

    // Act
    let r = app.post_json(RECURRENCE, &body);

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    let answer = r.json();
    assert_eq!(multiplicity_at(&answer, "1.01"), Some(2), "{answer}");
    // x[k] = 100·k·1.01^(k−1): 0, 100, 202, 306.03.
    let expected = [dec("0"), dec("100"), dec("202"), dec("306.03")];
    for (v, e) in answer["values"].as_array().unwrap().iter().zip(expected) {
        let got = dec_of(&v["value"]);
        assert!(
            (got - e).abs() < dec("1e-20"),
            "x[{}] = {got}, not {e}",
            v["k"]
        );
    }
}

#[test]
fn an_unknown_input_kind_is_refused_at_its_pointer() {
    // Arrange
    let app = shared_app();
    let body = json!({
        "a": "1",
        "x0": "1200",
        "inputs": [{"kind": "sawtooth", "amount": "-100"}],
        "evaluate_at": [0]
    });

    // Act
    let r = app.post_json(RECURRENCE, &body);

    // Assert
    assert_field_problem(&r, 422, "invalid-fields", "/inputs/0/kind");
    assert_still_healthy(&app);
}
