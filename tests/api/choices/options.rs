//! Rate-and-points options: `GET/POST /api/v1/loans/options` and
//! `/api/v1/loans/options.csv`.

use rust_decimal::prelude::ToPrimitive;
use rust_decimal::Decimal;
use serde_json::{json, Value};

use super::{
    array, assert_cautioned, cell_text, csv_records, months_of, post_for_csv, CostPath, OPTIONS,
    OPTIONS_CSV, POINTS_QUERY,
};
use crate::helpers::{assert_refusals, dec, dec_of, shared_app, with, Ask, Refusal};

/// 200,000 over 30 years at 6.75 % with no points against 6.25 % with 2 points.
fn points_body() -> Value {
    json!({
        "principal": "200000",
        "term_months": 360,
        "options": [
            {"label": "Par", "annual_rate_percent": "6.75"},
            {"label": "Two points", "annual_rate_percent": "6.25", "points_percent": "2"}
        ]
    })
}

/// Four options of the same loan, one of them a lender credit, and a horizon of
/// 36 months beside the usual 60, 84 and 120.
fn four_options_body() -> Value {
    json!({
        "principal": "200000",
        "term_months": 360,
        "horizon_months": 36,
        "options": [
            {"label": "Par", "annual_rate_percent": "6.75"},
            {"label": "One point", "annual_rate_percent": "6.5", "points_percent": "1", "other_costs": "500"},
            {"label": "Two points", "annual_rate_percent": "6.25", "points_percent": "2"},
            {"label": "Credit", "annual_rate_percent": "7", "points_percent": "-1"}
        ]
    })
}

fn options(o: &Value) -> &Vec<Value> {
    array(o, "options")
}

#[test]
fn two_points_for_half_a_point_of_rate_break_even_in_61_months() {
    // Arrange
    let app = shared_app();

    // Act
    let o = app.post_ok(OPTIONS, &points_body());

    // Assert
    assert_cautioned(&o);
    assert_eq!(o["currency"], "USD");
    assert_eq!(o["principal"], "200000.00");
    assert_eq!(o["number_of_payments"], 360);
    let [par, points] = [&o["options"][0], &o["options"][1]];
    // The level payments, P·i / (1 − (1 + i)^−n) rounded to the cent (common
    // practice, no source).
    assert_eq!(par["payment"], "1297.20");
    assert_eq!(points["payment"], "1231.43");
    assert_eq!(par["upfront_cost"], "0.00");
    // 2 % of 200,000.
    assert_eq!(points["points"], "4000.00");
    assert_eq!(points["upfront_cost"], "4000.00");
    assert_eq!(points["monthly_difference"], "-65.77");
    // ⌈4000 / 65.77⌉ = ⌈60.82⌉ = 61 months (common practice, no source).
    assert_eq!((dec("4000") / dec("65.77")).ceil(), dec("61"));
    assert_eq!(points["break_even_months"], 61);
    // The first option is what the others are measured against.
    assert_eq!(par["monthly_difference"], Value::Null);
    assert_eq!(par["break_even_months"], Value::Null);
    assert_eq!(par["break_even_months_with_balances"], Value::Null);
    // Balances counted, the lower rate also repays faster: it is ahead no later.
    let with_balances = points["break_even_months_with_balances"]
        .as_u64()
        .expect("a month");
    assert!(with_balances <= 61, "{with_balances}");
}

#[test]
fn the_json_and_query_forms_of_the_options_give_the_same_answer() {
    // Arrange
    let app = shared_app();

    // Act
    let by_post = app.post_ok(OPTIONS, &points_body());
    let by_query = app.get_ok(&format!("{OPTIONS}?{POINTS_QUERY}"));

    // Assert
    assert_cautioned(&by_query);
    assert_eq!(by_query, by_post);
}

#[test]
fn each_options_costs_are_those_of_a_ledger_posted_here() {
    // Arrange
    let app = shared_app();
    let paths = [
        CostPath::post(dec("200000"), dec("6.75"), 360, Decimal::ZERO),
        CostPath::post(dec("200000"), dec("6.25"), 360, dec("4000")),
    ];

    // Act
    let o = app.post_ok(OPTIONS, &points_body());

    // Assert
    assert_cautioned(&o);
    for (option, path) in options(&o).iter().zip(&paths) {
        let label = &option["label"];
        assert_eq!(dec_of(&option["payment"]), path.payment, "{label}");
        let horizons: Vec<u32> = array(option, "costs").iter().map(months_of).collect();
        assert_eq!(horizons, [60, 84, 120], "5, 7 and 10 years");
        for c in array(option, "costs") {
            let m = months_of(c);
            assert_eq!(dec_of(&c["paid"]), path.paid(m), "{label} at {m}");
            assert_eq!(dec_of(&c["owed"]), path.owed(m), "{label} at {m}");
            assert_eq!(dec_of(&c["cost"]), path.cost(m), "{label} at {m}");
        }
        assert_eq!(dec_of(&option["cost_to_end"]), path.cost(360), "{label}");
        assert_eq!(
            dec_of(&option["total_interest"]),
            path.paid(360) - path.paid(0) - dec("200000"),
            "{label}"
        );
    }
    // The first month by which the two points have cost no more than par.
    let caught_up = (0..=360u32).find(|&m| paths[1].cost(m) <= paths[0].cost(m));
    assert_eq!(
        o["options"][1]["break_even_months_with_balances"],
        json!(caught_up)
    );
}

#[test]
fn the_cheapest_option_at_each_horizon_is_the_least_of_the_answers_own_costs_there() {
    // Arrange
    let app = shared_app();

    // Act
    let o = app.post_ok(OPTIONS, &four_options_body());

    // Assert
    assert_cautioned(&o);
    let options = options(&o);
    assert_eq!(options.len(), 4);
    let cheapest = array(&o, "cheapest");
    let mut months: Vec<u32> = cheapest.iter().map(months_of).collect();
    months.sort_unstable();
    assert_eq!(
        months,
        [36, 60, 84, 120, 360],
        "each horizon, then the end of the term"
    );
    for entry in cheapest {
        let costs: Vec<Decimal> = options
            .iter()
            .map(|option| {
                array(option, "costs")
                    .iter()
                    .find(|c| c["months"] == entry["months"])
                    .map_or_else(
                        || {
                            assert_eq!(entry["months"], o["number_of_payments"], "{entry}");
                            dec_of(&option["cost_to_end"])
                        },
                        |c| dec_of(&c["cost"]),
                    )
            })
            .collect();
        let least = costs.iter().min().expect("costs");
        let first_least = costs
            .iter()
            .position(|c| c == least)
            .expect("the least is among the costs");
        assert_eq!(
            entry["label"], options[first_least]["label"],
            "{entry}: {costs:?}"
        );
    }
}

#[test]
fn the_options_break_evens_and_cheapest_changes_are_those_of_ledgers_posted_here() {
    // Arrange
    let app = shared_app();
    let terms = [
        ("Par", "6.75", "0"),
        ("One point", "6.5", "2500"),
        ("Two points", "6.25", "4000"),
        ("Credit", "7", "-2000"),
    ];
    let paths: Vec<CostPath> = terms
        .iter()
        .map(|(_, rate, upfront)| CostPath::post(dec("200000"), dec(rate), 360, dec(upfront)))
        .collect();

    // Act
    let o = app.post_ok(OPTIONS, &four_options_body());

    // Assert
    assert_cautioned(&o);
    let options = options(&o);
    for (option, (label, _, upfront)) in options.iter().zip(&terms) {
        assert_eq!(option["label"], *label);
        assert_eq!(dec_of(&option["upfront_cost"]), dec(upfront), "{label}");
    }
    let first = &paths[0];
    for (j, (option, path)) in options.iter().zip(&paths).enumerate().skip(1) {
        let label = &option["label"];
        assert_eq!(
            dec_of(&option["monthly_difference"]),
            path.payment - first.payment,
            "{label}"
        );
        // The option costing more upfront, against the one costing less.
        let extra = path.paid(0) - first.paid(0);
        let (dearer, cheaper) = if extra >= Decimal::ZERO {
            (path, first)
        } else {
            (first, path)
        };
        // Simple: the extra upfront over the monthly saving, rounded up (common
        // practice, no source); none when the dearer payment is not lower.
        let simple = if extra.is_zero() {
            Some(0)
        } else if dearer.payment < cheaper.payment {
            (extra.abs() / (cheaper.payment - dearer.payment))
                .ceil()
                .to_u32()
        } else {
            None
        };
        assert_eq!(option["break_even_months"], json!(simple), "{label}");
        let caught_up = (0..=360u32).find(|&m| dearer.cost(m) <= cheaper.cost(m));
        assert_eq!(
            option["break_even_months_with_balances"],
            json!(caught_up),
            "option {j}: {label}"
        );
    }
    // From each of these months on, the option named costs least (the first listed
    // on a tie), month by month.
    let mut changes: Vec<(u32, usize)> = Vec::new();
    for m in 0..=360u32 {
        let costs: Vec<Decimal> = paths.iter().map(|p| p.cost(m)).collect();
        let least = costs.iter().min().expect("costs");
        let index = costs.iter().position(|c| c == least).expect("the least");
        if changes.last().is_none_or(|&(_, last)| last != index) {
            changes.push((m, index));
        }
    }
    let want: Vec<Value> = changes
        .iter()
        .map(|&(m, index)| json!({"months": m, "label": terms[index].0}))
        .collect();
    assert_eq!(o["cheapest_changes"], json!(want));
}

#[test]
fn the_options_as_csv_by_suffix_or_by_accept_have_one_row_an_option() {
    // Arrange
    let app = shared_app();
    let o = app.post_ok(OPTIONS, &points_body());
    // One row an option and horizon, then a row for the end of the term.
    let header = String::from(
        "label,annual_rate_percent,points_percent,points,other_costs,upfront_cost,payment,\
         monthly_difference,break_even_months,break_even_months_with_balances,total_interest,\
         horizon_months,paid,owed,cost",
    );
    let end = cell_text(&o["number_of_payments"]);
    let rows: Vec<String> = options(&o)
        .iter()
        .flat_map(|option| {
            let head: Vec<String> = [
                "label",
                "annual_rate_percent",
                "points_percent",
                "points",
                "other_costs",
                "upfront_cost",
                "payment",
                "monthly_difference",
                "break_even_months",
                "break_even_months_with_balances",
                "total_interest",
            ]
            .iter()
            .map(|k| cell_text(&option[*k]))
            .collect();
            let head = head.join(",");
            let mut lines: Vec<String> = array(option, "costs")
                .iter()
                .map(|c| {
                    format!(
                        "{head},{},{},{},{}",
                        months_of(c),
                        cell_text(&c["paid"]),
                        cell_text(&c["owed"]),
                        cell_text(&c["cost"])
                    )
                })
                .collect();
            let to_end = cell_text(&option["cost_to_end"]);
            lines.push(format!("{head},{end},{to_end},0.00,{to_end}"));
            lines
        })
        .collect();

    // Act
    let by_suffix = app.get(&format!("{OPTIONS_CSV}?{POINTS_QUERY}"));
    let by_accept = app.get_with(
        &format!("{OPTIONS}?{POINTS_QUERY}"),
        &[("Accept", "text/csv")],
    );
    let by_post = post_for_csv(&app, OPTIONS, &points_body());

    // Assert
    for r in [&by_suffix, &by_accept, &by_post] {
        let records = csv_records(r, &header);
        assert_eq!(records[1..], rows[..]);
    }
    assert_eq!(by_suffix.text(), by_post.text());
    assert!(
        by_suffix
            .text()
            .contains("\r\nTwo points,6.25,2,4000.00,0.00,4000.00,1231.43,-65.77,61,"),
        "{}",
        by_suffix.text()
    );
}

#[test]
fn an_options_label_holding_a_comma_or_quotes_is_quoted_in_csv() {
    // Arrange
    let app = shared_app();
    let body = with(
        &points_body(),
        json!({"options": [
            {"label": "Par", "annual_rate_percent": "6.75"},
            {"label": "Two points, \"buy-down\"", "annual_rate_percent": "6.25", "points_percent": "2"}
        ]}),
    );

    // Act
    let r = post_for_csv(&app, OPTIONS, &body);

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    assert!(
        r.text()
            .contains("\r\n\"Two points, \"\"buy-down\"\"\",6.25,2,4000.00,"),
        "RFC 4180: quoted, inner quotes doubled: {}",
        r.text()
    );
}

#[test]
fn bad_options_requests_are_refused_naming_the_field() {
    // Arrange
    let app = shared_app();
    let options_of = |options: Value| with(&points_body(), json!({ "options": options }));
    let seven: Vec<Value> = ["6.75", "6.7", "6.6", "6.5", "6.4", "6.3", "6.2"]
        .iter()
        .map(|rate| json!({ "annual_rate_percent": rate }))
        .collect();
    let get = |query: &str| {
        Ask::Get(format!(
            "{OPTIONS}?principal=200000&term_months=360&{query}"
        ))
    };
    let cases = [
        Refusal::invalid(
            Ask::Json(
                OPTIONS,
                options_of(json!([{"annual_rate_percent": "6.75"}])),
            ),
            "/options",
        )
        .saying("lists 1"),
        Refusal::invalid(Ask::Json(OPTIONS, options_of(json!(seven))), "/options")
            .saying("lists 7"),
        Refusal::invalid(
            Ask::Json(OPTIONS, with(&points_body(), json!({"options": null}))),
            "/options",
        ),
        Refusal::invalid(
            Ask::Json(
                OPTIONS,
                options_of(json!([
                    {"annual_rate_percent": "6.75"},
                    {"annual_rate_percent": "6.25", "other_costs": "-100"}
                ])),
            ),
            "/options/1/other_costs",
        )
        .saying("cannot be negative"),
        Refusal::invalid(
            Ask::Json(
                OPTIONS,
                options_of(json!([
                    {"annual_rate_percent": "6.75"},
                    {"annual_rate_percent": "6.25", "other_costs": "100.005"}
                ])),
            ),
            "/options/1/other_costs",
        ),
        // Each option carries its rate: one at the top is refused, not ignored.
        Refusal::invalid(
            Ask::Json(
                OPTIONS,
                with(&points_body(), json!({"annual_rate_percent": "6.5"})),
            ),
            "/annual_rate_percent",
        ),
        Refusal::invalid(
            Ask::Json(
                OPTIONS,
                options_of(json!([
                    {"annual_rate_percent": "6.75"},
                    {"points_percent": "2"}
                ])),
            ),
            "/options/1/annual_rate_percent",
        )
        .saying("is required"),
        Refusal::invalid(
            Ask::Json(
                OPTIONS,
                with(
                    &points_body(),
                    json!({"rate_changes": [{"at": 61, "annual_rate_percent": "7"}]}),
                ),
            ),
            "/rate_changes",
        ),
        Refusal::invalid(
            Ask::Json(
                OPTIONS,
                options_of(json!([
                    {"annual_rate_percent": "6.75"},
                    {"annual_rate_percent": "6.25", "colour": "red"}
                ])),
            ),
            "/options/1/colour",
        ),
        Refusal::invalid(get("option_rate_percent=6.75"), "option_rate_percent").saying("lists 1"),
        Refusal::invalid(
            get(
                "option_rate_percent=1&option_rate_percent=2&option_rate_percent=3\
                 &option_rate_percent=4&option_rate_percent=5&option_rate_percent=6\
                 &option_rate_percent=7",
            ),
            "option_rate_percent",
        )
        .saying("lists 7"),
        Refusal::invalid(
            get("option_rate_percent=6.75&option_rate_percent=6.25\
                 &option_other_costs=0&option_other_costs=-100"),
            "option_other_costs",
        )
        .saying("option 2"),
        Refusal::invalid(
            get("annual_rate_percent=6.5&option_rate_percent=6.75&option_rate_percent=6.25"),
            "annual_rate_percent",
        ),
        Refusal::invalid(
            get("option_rate_percent=6.75&option_points_percent=0&option_points_percent=2"),
            "option_rate_percent",
        )
        .saying("is given 1 times for 2 options"),
        Refusal::invalid(
            Ask::Get(format!(
                "{OPTIONS_CSV}?principal=200000&term_months=360&option_rate_percent=6.75"
            )),
            "option_rate_percent",
        ),
    ];

    // Act and assert
    assert_refusals(&app, &cases);
}
