//! Refinance: `GET/POST /api/v1/refinance` and `/api/v1/refinance.csv`.

use rust_decimal::Decimal;
use serde_json::{json, Value};

use super::{
    array, assert_cautioned, cell_text, csv_records, months_of, post_for_csv, CostPath, REFINANCE,
    REFINANCE_CSV, REFI_QUERY,
};
use crate::helpers::{assert_refusals, dec, dec_of, shared_app, with, Ask, Refusal, SCHEDULE};

const REFI_HEADER: &str = "figure,months,current_loan,new_loan,refinancing_saves";

/// [`REFI_QUERY`] as a JSON body.
fn refi_body() -> Value {
    json!({
        "current": {"balance": "187500", "annual_rate_percent": "7.25", "remaining_payments": 312},
        "new": {"annual_rate_percent": "6.125", "term_months": 360},
        "closing_costs": "3200",
        "points_percent": "1"
    })
}

fn horizons_and_end(r: &Value) -> Vec<&Value> {
    array(r, "horizons")
        .iter()
        .chain(std::iter::once(&r["to_the_end"]))
        .collect()
}

#[test]
fn the_example_refinance_saves_197_69_a_month_and_breaks_even_in_26_months() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.get_ok(&format!("{REFINANCE}?{REFI_QUERY}"));

    // Assert
    assert_cautioned(&r);
    assert_eq!(r["currency"], "USD");
    // Level payments rounded to the cent (common practice, no source): 187,500
    // over 312 months at 7.25 % and over 360 months at 6.125 %.
    assert_eq!(r["current_payment"], "1336.96");
    assert_eq!(r["new_payment"], "1139.27");
    assert_eq!(r["monthly_change"], "-197.69");
    // 1 point of the new principal (the balance: nothing financed, no cash out)
    // is 1,875; with 3,200 of closing costs the costs are 5,075, paid in cash.
    assert_eq!(r["new"]["principal"], "187500.00");
    let costs = &r["costs"];
    assert_eq!(costs["points"], "1875.00");
    assert_eq!(costs["total_costs"], "5075.00");
    assert_eq!(costs["financed_costs"], "0.00");
    assert_eq!(costs["paid_in_cash"], "5075.00");
    assert_eq!(costs["cash_out"], "0.00");
    // ⌈5075 / 197.69⌉ = ⌈25.67⌉ = 26 months (common practice, no source).
    assert_eq!((dec("5075") / dec("197.69")).ceil(), dec("26"));
    assert_eq!(r["break_even_months"], 26);
    // The new term (360 months) is longer than the 312 payments left: balances
    // counted, the new loan owes more, so it catches up later than the payment
    // alone says.
    let simple = r["break_even_months"].as_u64().expect("a month");
    let with_balances = r["break_even_months_with_balances"]
        .as_u64()
        .expect("a month");
    assert!(simple < with_balances, "{simple} < {with_balances}");
    assert_eq!(r["current"]["remaining_payments"], 312);
    assert_eq!(r["new"]["number_of_payments"], 360);
}

#[test]
fn the_json_and_query_forms_of_the_refinance_give_the_same_answer() {
    // Arrange
    let app = shared_app();

    // Act
    let by_query = app.get_ok(&format!("{REFINANCE}?{REFI_QUERY}"));
    let by_post = app.post_ok(REFINANCE, &refi_body());

    // Assert
    assert_cautioned(&by_post);
    assert_eq!(by_post, by_query);
}

#[test]
fn each_way_of_the_example_refinance_costs_what_ledgers_posted_here_give() {
    // Arrange
    let app = shared_app();
    let current = CostPath::post(dec("187500"), dec("7.25"), 312, Decimal::ZERO);
    let new = CostPath::post(dec("187500"), dec("6.125"), 360, dec("5075"));

    // Act
    let r = app.get_ok(&format!("{REFINANCE}?{REFI_QUERY}"));

    // Assert
    assert_cautioned(&r);
    assert_eq!(dec_of(&r["current_payment"]), current.payment);
    assert_eq!(dec_of(&r["new_payment"]), new.payment);
    let months: Vec<u32> = array(&r, "horizons").iter().map(months_of).collect();
    assert_eq!(months, [60, 84, 120], "5, 7 and 10 years");
    assert_eq!(r["to_the_end"]["months"], 360, "the longer loan's end");
    for h in horizons_and_end(&r) {
        let m = months_of(h);
        for (name, want) in [
            ("current_paid", current.paid(m)),
            ("current_owed", current.owed(m)),
            ("current_cost", current.cost(m)),
            ("new_paid", new.paid(m)),
            ("new_owed", new.owed(m)),
            ("new_cost", new.cost(m)),
            ("refinancing_saves", current.cost(m) - new.cost(m)),
        ] {
            assert_eq!(dec_of(&h[name]), want, "{name} at {m}");
        }
    }
    assert_eq!(
        dec_of(&r["current"]["total_interest"]),
        current.paid(312) - dec("187500")
    );
    assert_eq!(
        dec_of(&r["new"]["total_interest"]),
        new.paid(360) - dec("5075") - dec("187500")
    );
    let caught_up = (0..=360u32).find(|&m| new.cost(m) <= current.cost(m));
    assert_eq!(r["break_even_months_with_balances"], json!(caught_up));
    let again = caught_up.and_then(|from| (from..=360).find(|&m| new.cost(m) > current.cost(m)));
    assert_eq!(r["costs_more_again_from_month"], json!(again));
}

#[test]
fn a_refinance_into_a_much_longer_term_costs_more_again_from_the_month_ledgers_posted_here_say() {
    // Arrange: 240 payments left, refinanced over 360 months.
    let app = shared_app();
    let query = REFI_QUERY.replace(
        "current.remaining_payments=312",
        "current.remaining_payments=240",
    );
    let current = CostPath::post(dec("187500"), dec("7.25"), 240, Decimal::ZERO);
    let new = CostPath::post(dec("187500"), dec("6.125"), 360, dec("5075"));
    let caught_up = (0..=360u32)
        .find(|&m| new.cost(m) <= current.cost(m))
        .expect("the new loan catches up");
    let again = (caught_up..=360)
        .find(|&m| new.cost(m) > current.cost(m))
        .expect("and falls behind again");

    // Act
    let r = app.get_ok(&format!("{REFINANCE}?{query}"));

    // Assert
    assert_cautioned(&r);
    assert_eq!(r["break_even_months_with_balances"], caught_up);
    assert_eq!(r["costs_more_again_from_month"], again);
    let simple = r["break_even_months"].as_u64().expect("a month");
    assert!(simple < u64::from(caught_up), "{simple} < {caught_up}");
    let saves = dec_of(&r["to_the_end"]["refinancing_saves"]);
    assert_eq!(saves, current.cost(360) - new.cost(360));
    assert!(saves < Decimal::ZERO, "{saves}");
    let notes = array(&r, "notes");
    assert!(
        notes.iter().any(|n| n
            .as_str()
            .is_some_and(|n| n.contains(&format!("From month {again} on")))),
        "{notes:?}"
    );
}

#[test]
fn the_same_rate_and_term_at_no_cost_changes_nothing_at_any_horizon() {
    // Arrange
    let app = shared_app();
    let loans = [
        ("187500", "7.25", 312),
        ("50000", "4.5", 120),
        ("999999.99", "10", 480),
        ("1000", "0", 12),
    ];

    for (balance, rate, left) in loans {
        // Act
        let r = app.get_ok(&format!(
            "{REFINANCE}?current.balance={balance}&current.annual_rate_percent={rate}\
             &current.remaining_payments={left}&annual_rate_percent={rate}&term_months={left}"
        ));

        // Assert
        let what = format!("{balance} at {rate} % over {left}");
        assert_cautioned(&r);
        assert_eq!(r["current_payment"], r["new_payment"], "{what}");
        assert_eq!(r["monthly_change"], "0.00", "{what}");
        assert_eq!(r["break_even_months"], 0, "{what}");
        assert_eq!(r["break_even_months_with_balances"], 0, "{what}");
        assert_eq!(r["costs_more_again_from_month"], Value::Null, "{what}");
        assert_eq!(r["costs"]["total_costs"], "0.00", "{what}");
        for h in horizons_and_end(&r) {
            for (current, new) in [
                ("current_paid", "new_paid"),
                ("current_owed", "new_owed"),
                ("current_cost", "new_cost"),
            ] {
                assert_eq!(h[current], h[new], "{what}: {h}");
            }
            assert_eq!(h["refinancing_saves"], "0.00", "{what}: {h}");
        }
        assert_eq!(
            r["in_five_years"]["current"], r["in_five_years"]["new"],
            "{what}"
        );
    }
}

#[test]
fn the_original_terms_give_the_balance_the_posted_schedule_holds_after_the_payments_made() {
    // Arrange
    let app = shared_app();
    let s = app.get_ok(&format!(
        "{SCHEDULE}?principal=200000&annual_rate_percent=7.25&term_months=360"
    ));
    let rows = array(&s, "schedule");

    for made in [1u32, 48, 120, 359] {
        // Act
        let r = app.get_ok(&format!(
            "{REFINANCE}?current.principal=200000&current.annual_rate_percent=7.25\
             &current.term_months=360&current.payments_made={made}\
             &annual_rate_percent=6.125&term_months=360"
        ));

        // Assert
        assert_cautioned(&r);
        let k = usize::try_from(made).expect("a row index");
        let row = &rows[k - 1];
        assert_eq!(row["number"], made);
        let current = &r["current"];
        assert_eq!(current["balance"], row["balance"], "after payment {made}");
        assert_eq!(current["payments_made"], made);
        assert_eq!(current["remaining_payments"], 360 - made);
        assert_eq!(current["payment"], s["summary"]["payment"]);
        // What is left to pay: the schedule's payments after this one.
        let left: Decimal = rows[k..].iter().map(|row| dec_of(&row["payment"])).sum();
        assert_eq!(dec_of(&current["total_paid"]), left, "after payment {made}");
        // The new principal defaults to the balance: nothing financed, no cash out.
        assert_eq!(r["new"]["principal"], row["balance"]);
    }
    let body = json!({
        "current": {"principal": "200000", "annual_rate_percent": "7.25",
                    "term_months": 360, "payments_made": 48},
        "new": {"annual_rate_percent": "6.125", "term_months": 360}
    });
    let r = app.post_ok(REFINANCE, &body);
    assert_cautioned(&r);
    assert_eq!(r["current"]["balance"], rows[47]["balance"]);
}

#[test]
fn the_refinance_as_csv_by_suffix_or_by_accept_has_one_row_a_figure() {
    // Arrange
    let app = shared_app();
    let r = app.get_ok(&format!("{REFINANCE}?{REFI_QUERY}"));
    let t = cell_text;
    let mut rows = vec![
        format!(
            "payment,,{},{},",
            t(&r["current_payment"]),
            t(&r["new_payment"])
        ),
        format!("monthly_change,,,{},", t(&r["monthly_change"])),
        format!("break_even_months,{},,,", t(&r["break_even_months"])),
        format!(
            "break_even_months_with_balances,{},,,",
            t(&r["break_even_months_with_balances"])
        ),
        format!(
            "balance_or_principal,0,{},{},",
            t(&r["current"]["balance"]),
            t(&r["new"]["principal"])
        ),
    ];
    for h in horizons_and_end(&r) {
        let m = months_of(h);
        rows.push(format!(
            "paid,{m},{},{},",
            t(&h["current_paid"]),
            t(&h["new_paid"])
        ));
        rows.push(format!(
            "owed,{m},{},{},",
            t(&h["current_owed"]),
            t(&h["new_owed"])
        ));
        rows.push(format!(
            "cost,{m},{},{},{}",
            t(&h["current_cost"]),
            t(&h["new_cost"]),
            t(&h["refinancing_saves"])
        ));
    }
    rows.push(format!(
        "total_interest,,{},{},",
        t(&r["current"]["total_interest"]),
        t(&r["new"]["total_interest"])
    ));

    // Act
    let by_suffix = app.get(&format!("{REFINANCE_CSV}?{REFI_QUERY}"));
    let by_accept = app.get_with(
        &format!("{REFINANCE}?{REFI_QUERY}"),
        &[("Accept", "text/csv")],
    );
    let by_post = post_for_csv(&app, REFINANCE, &refi_body());

    // Assert
    for answer in [&by_suffix, &by_accept, &by_post] {
        let records = csv_records(answer, REFI_HEADER);
        let figures: Vec<&str> = records[1..]
            .iter()
            .copied()
            .filter(|l| !l.starts_with("total_costs,"))
            .collect();
        assert_eq!(figures, rows);
        let total = records
            .iter()
            .find(|l| l.starts_with("total_costs,0,"))
            .expect("a row of the costs");
        assert!(
            total.ends_with(&format!(",{},", t(&r["costs"]["total_costs"]))),
            "{total}"
        );
    }
    assert_eq!(by_suffix.text(), by_accept.text());
    assert_eq!(by_suffix.text(), by_post.text());
    assert!(by_suffix.text().contains("\r\nbreak_even_months,26,,,\r\n"));
}

#[test]
fn bad_refinance_requests_are_refused_naming_the_field() {
    // Arrange
    let app = shared_app();
    let current = |c: Value| with(&refi_body(), json!({ "current": c }));
    let get = |query: &str| Ask::Get(format!("{REFINANCE}?{query}"));
    let cases = [
        // Paid off with payment 360: nothing is left to refinance.
        Refusal::invalid(
            Ask::Json(
                REFINANCE,
                current(json!({"principal": "200000", "annual_rate_percent": "7.25",
                               "term_months": 360, "payments_made": 360})),
            ),
            "/current/payments_made",
        )
        .saying("paid off"),
        Refusal::invalid(
            Ask::Json(
                REFINANCE,
                current(json!({"balance": "187500", "annual_rate_percent": "7.25",
                               "remaining_payments": 312, "currency": "EUR"})),
            ),
            "/current/currency",
        )
        .saying("USD"),
        Refusal::invalid(
            Ask::Json(
                REFINANCE,
                with(&refi_body(), json!({"closing_costs": "3200.005"})),
            ),
            "/closing_costs",
        )
        .saying("minor units"),
        Refusal::invalid(
            Ask::Json(
                REFINANCE,
                with(
                    &refi_body(),
                    json!({"points_percent": null, "financed_costs": "3200.01"}),
                ),
            ),
            "/financed_costs",
        )
        .saying("cannot exceed"),
        Refusal::invalid(
            Ask::Json(
                REFINANCE,
                with(
                    &refi_body(),
                    json!({"new": {"annual_rate_percent": "6.125", "term_months": 360,
                                   "payment_frequency": "biweekly"}}),
                ),
            ),
            "/new/payment_frequency",
        )
        .saying("monthly"),
        Refusal::invalid(
            Ask::Json(
                REFINANCE,
                current(json!({"balance": "187500", "principal": "200000",
                               "annual_rate_percent": "7.25", "remaining_payments": 312})),
            ),
            "/current/principal",
        )
        .saying("not both"),
        Refusal::invalid(
            Ask::Json(
                REFINANCE,
                current(json!({"annual_rate_percent": "7.25", "remaining_payments": 312})),
            ),
            "/current/balance",
        )
        .saying("is required"),
        Refusal::invalid(
            Ask::Json(REFINANCE, with(&refi_body(), json!({"new": null}))),
            "/new",
        ),
        Refusal::invalid(
            Ask::Json(REFINANCE, with(&refi_body(), json!({"current": null}))),
            "/current",
        ),
        Refusal::invalid(
            get("current.principal=200000&current.annual_rate_percent=7.25\
                 &current.term_months=360&current.payments_made=360\
                 &annual_rate_percent=6.125&term_months=360"),
            "current.payments_made",
        )
        .saying("paid off"),
        Refusal::invalid(
            get(&format!("{REFI_QUERY}&current.currency=EUR")),
            "current.currency",
        ),
        Refusal::invalid(
            get(&REFI_QUERY.replace("closing_costs=3200", "closing_costs=3200.005")),
            "closing_costs",
        ),
        Refusal::invalid(
            get(&REFI_QUERY.replace("points_percent=1", "financed_costs=3200.01")),
            "financed_costs",
        )
        .saying("cannot exceed"),
        Refusal::invalid(
            get(&format!("{REFI_QUERY}&payment_frequency=biweekly")),
            "payment_frequency",
        ),
        Refusal::invalid(
            get(&format!("{REFI_QUERY}&current.principal=200000")),
            "current.principal",
        ),
        Refusal::invalid(
            get("current.annual_rate_percent=7.25&annual_rate_percent=6.125&term_months=360"),
            "current.balance",
        ),
        Refusal::invalid(
            Ask::Get(format!(
                "{REFINANCE_CSV}?current.principal=200000&current.annual_rate_percent=7.25\
                 &current.term_months=360&current.payments_made=360\
                 &annual_rate_percent=6.125&term_months=360"
            )),
            "current.payments_made",
        ),
    ];

    // Act and assert
    assert_refusals(&app, &cases);
}
