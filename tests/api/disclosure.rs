//! `/api/v1/apr`, `/api/v1/apy` and `/api/v1/loans/check`: the published
//! examples of Regulation Z Appendix J and Regulation DD Appendix A, the EU
//! APRC, quote checks at their tolerance boundaries, disclosure figures computed
//! independently from the schedule's rows, and bad inputs.

use rust_decimal::{Decimal, MathematicalOps, RoundingStrategy};
use serde_json::{json, Value};

use crate::helpers::{assert_refusals, dec, dec_of, shared_app, with, Ask, Refusal, SCHEDULE};

const APR: &str = "/api/v1/apr";
const APY: &str = "/api/v1/apy";
const CHECK: &str = "/api/v1/loans/check";

fn flows(answer: &Value) -> &Vec<Value> {
    answer["flows"].as_array().expect("a flows array")
}

fn monthly(amount: &str, count: u32, first_date: &str) -> Value {
    json!({"amount": amount, "count": count, "first_date": first_date, "frequency": "monthly"})
}

/// The caution comes first and says that the check is a tool.
fn assert_cautioned(answer: &Value) {
    let notes = answer["notes"].as_array().expect("notes");
    assert!(
        notes[0]
            .as_str()
            .unwrap()
            .starts_with("Estimates for discussion only"),
        "the caution comes first: {notes:?}"
    );
    assert!(
        notes.iter().any(|n| n
            .as_str()
            .unwrap()
            .contains("a tool, not a compliance opinion")),
        "{notes:?}"
    );
}

// ---------------------------------------------------------------------------
// APR: 12 CFR 1026 Appendix J (c), dated and in unit-periods
// ---------------------------------------------------------------------------

/// A worked example of 12 CFR 1026 Appendix J (c): its flows dated and in
/// unit-periods, the APR the regulation gives, and what else each answer shows.
struct AppendixJ {
    /// The paragraph and its flows, as the regulation states them.
    source: &'static str,
    dated: Value,
    unit: Value,
    apr: &'static str,
    /// Members of the dated answer (JSON Pointers) and their values.
    dated_shows: Vec<(&'static str, Value)>,
    /// Members of the answer in unit-periods and their values.
    unit_shows: Vec<(&'static str, Value)>,
    /// What is checked beyond members equal to values: (dated, unit).
    more: fn(&Value, &Value),
}

fn appendix_j_examples() -> Vec<AppendixJ> {
    vec![
        AppendixJ {
            source: "(c)(1)(i): $5,000 advanced 1-10-78; 24 monthly payments of $230 from 2-10-78",
            dated: json!({
                "advances": [{"amount": "5000", "date": "1978-01-10"}],
                "payments": [monthly("230", 24, "1978-02-10")]
            }),
            unit: json!({
                "unit_period": "month",
                "advances": [{"amount": "5000", "periods": 0}],
                "payments": [{"amount": "230", "periods": 1, "count": 24}]
            }),
            apr: "9.69",
            dated_shows: vec![
                ("/unit_period", json!("month")),
                ("/unit_periods_per_year", json!("12")),
                ("/unit_period_rule", json!("most_frequent_common_period")),
                ("/method", json!("us_actuarial")),
                ("/flows/0/kind", json!("advance")),
                ("/flows/0/periods", json!(0)),
                ("/flows/1/kind", json!("payment")),
                ("/flows/1/date", json!("1978-02-10")),
                ("/flows/1/periods", json!(1)),
                ("/flows/1/fraction", json!("0")),
                ("/flows/24/periods", json!(24)),
            ],
            unit_shows: vec![("/unit_period_rule", json!("given"))],
            more: |dated, unit| {
                assert_eq!(flows(dated).len(), 25);
                assert_eq!(unit["periodic_rate"], dated["periodic_rate"]);
                assert_cautioned(dated);
            },
        },
        AppendixJ {
            source: "(c)(1)(ii): $6,000 advanced 2-10-78; 36 monthly payments of $200 from \
                     4-1-78 (t = 1, f = 19/30)",
            dated: json!({
                "advances": [{"amount": "6000", "date": "1978-02-10"}],
                "payments": [monthly("200", 36, "1978-04-01")]
            }),
            unit: json!({
                "unit_period": "month",
                "advances": [{"amount": "6000", "periods": 0}],
                "payments": [{"amount": "200", "periods": 1, "fraction": "19/30", "count": 36}]
            }),
            apr: "11.82",
            dated_shows: vec![
                ("/flows/1/periods", json!(1)),
                ("/flows/1/fraction_ratio", json!("19/30")),
            ],
            unit_shows: vec![
                ("/flows/1/fraction_ratio", json!("19/30")),
                ("/flows/1/count", json!(36)),
            ],
            more: |_, _| {},
        },
        AppendixJ {
            source: "(c)(1)(iii): $5,000 advanced 2-23-78; 24 semimonthly payments of $219.17 \
                     on the 1st and 16th from 3-1-78 (t = 0, f = 6/15)",
            dated: json!({
                "advances": [{"amount": "5000", "date": "1978-02-23"}],
                "payments": [{"amount": "219.17", "count": 24, "first_date": "1978-03-01", "frequency": "semimonthly"}]
            }),
            unit: json!({
                "unit_period": "semimonth",
                "advances": [{"amount": "5000", "periods": 0}],
                "payments": [{"amount": "219.17", "periods": 0, "fraction": "0.4", "count": 24}]
            }),
            apr: "10.34",
            dated_shows: vec![
                ("/unit_period", json!("semimonth")),
                ("/unit_periods_per_year", json!("24")),
                ("/flows/2/date", json!("1978-03-16")),
            ],
            unit_shows: vec![],
            more: |dated, _| {
                for (k, p) in flows(dated)[1..].iter().enumerate() {
                    assert_eq!(p["periods"], k, "payment {k}: {p}");
                    assert_eq!(p["fraction_ratio"], "6/15", "payment {k}: {p}");
                }
            },
        },
        AppendixJ {
            source: "(c)(2)(i): $5,000 advanced 1-10-78; $250 on 2-10-78, then 23 monthly \
                     payments of $230",
            dated: json!({
                "advances": [{"amount": "5000", "date": "1978-01-10"}],
                "payments": [{"amount": "250", "date": "1978-02-10"}, monthly("230", 23, "1978-03-10")]
            }),
            unit: json!({
                "unit_period": "month",
                "advances": [{"amount": "5000", "periods": 0}],
                "payments": [{"amount": "250", "periods": 1}, {"amount": "230", "periods": 2, "count": 23}]
            }),
            apr: "10.08",
            dated_shows: vec![],
            unit_shows: vec![],
            more: |_, _| {},
        },
        AppendixJ {
            source: "(c)(3)(i): $5,000 advanced 1-10-78; 23 monthly payments of $230 from \
                     2-10-78 and a final $280",
            dated: json!({
                "advances": [{"amount": "5000", "date": "1978-01-10"}],
                "payments": [monthly("230", 23, "1978-02-10"), {"amount": "280", "date": "1980-01-10"}]
            }),
            unit: json!({
                "unit_period": "month",
                "advances": [{"amount": "5000", "periods": 0}],
                "payments": [{"amount": "230", "periods": 1, "count": 23}, {"amount": "280", "periods": 24}]
            }),
            apr: "10.50",
            dated_shows: vec![("/flows/24/periods", json!(24))],
            unit_shows: vec![],
            more: |_, _| {},
        },
        AppendixJ {
            source: "(c)(5)(i): $1,000 advanced 1-3-78; one payment of $1,080 on 9-15-78: \
                     255 days, 365/255 unit-periods a year",
            dated: json!({
                "advances": [{"amount": "1000", "date": "1978-01-03"}],
                "payments": [{"amount": "1080", "date": "1978-09-15"}]
            }),
            unit: json!({
                "unit_period": {"days": 255},
                "advances": [{"amount": "1000", "periods": 0}],
                "payments": [{"amount": "1080", "periods": 1}]
            }),
            apr: "11.45",
            dated_shows: vec![
                ("/unit_period", json!("255 days")),
                ("/unit_period_rule", json!("single_advance_single_payment")),
            ],
            unit_shows: vec![("/unit_period", json!("255 days"))],
            more: |dated, _| {
                assert_eq!(dec_of(&dated["periodic_rate"]), dec("0.08"));
                // 365/255 = 1.43137254901960784313725490196… (by hand, long division).
                let per_year = dec_of(&dated["unit_periods_per_year"]);
                assert!((per_year - dec("1.431372549019607843137254902")).abs() < dec("1e-26"));
            },
        },
    ]
}

#[test]
fn appendix_j_c_examples_give_the_published_apr_dated_and_in_unit_periods() {
    let app = shared_app();

    for case in appendix_j_examples() {
        let source = case.source;
        let dated = app.post_ok(APR, &case.dated);
        let unit = app.post_ok(APR, &case.unit);

        assert_eq!(dated["apr_percent"], case.apr, "{source}: dated");
        assert_eq!(unit["apr_percent"], case.apr, "{source}: in unit-periods");
        for (answer, shows, how) in [
            (&dated, &case.dated_shows, "dated"),
            (&unit, &case.unit_shows, "in unit-periods"),
        ] {
            for (pointer, want) in shows {
                assert_eq!(
                    answer.pointer(pointer),
                    Some(want),
                    "{source}: {how}: {pointer}"
                );
            }
        }
        (case.more)(&dated, &unit);
    }
}

#[test]
fn a_unit_period_given_with_dated_flows_is_used_as_given() {
    // 12 CFR 1026 Appendix J (c)(1)(i) again, the month imposed rather than found
    // (9.69 %); and the same flows counted in semimonths put every payment at an
    // even number of semimonths, so the rate per semimonth halves, near enough.
    let app = shared_app();
    let body = |unit: &str| {
        json!({
            "unit_period": unit,
            "advances": [{"amount": "5000", "date": "1978-01-10"}],
            "payments": [monthly("230", 24, "1978-02-10")]
        })
    };

    let month = app.post_ok(APR, &body("month"));
    let semimonth = app.post_ok(APR, &body("semimonth"));

    assert_eq!(month["apr_percent"], "9.69");
    assert_eq!(month["unit_period_rule"], "given");
    assert_eq!(semimonth["unit_period"], "semimonth");
    assert_eq!(flows(&semimonth)[1]["periods"], 2);
    let apr = dec_of(&semimonth["apr_percent_full"]);
    assert!(apr > dec("9.6") && apr < dec("9.69"), "{apr}");
}

#[test]
fn get_with_the_compact_query_syntax_equals_post() {
    // 12 CFR 1026 Appendix J (c)(1)(i) and (c)(1)(ii) through the query syntax;
    // "1+19/30" arrives as "1 19/30" (t = 1, f = 19/30).
    let app = shared_app();

    let got = app.get_ok(&format!(
        "{APR}?advance=5000@1978-01-10&payment=230x24@1978-02-10/monthly"
    ));
    let posted = app.post_ok(
        APR,
        &json!({
            "advances": [{"amount": "5000", "date": "1978-01-10"}],
            "payments": [monthly("230", 24, "1978-02-10")]
        }),
    );
    let unit = app.get_ok(&format!(
        "{APR}?unit_period=month&advance=6000@0&payment=200x36@1+19/30"
    ));
    let irregular = app.get_ok(&format!(
        "{APR}?advance=5000@1978-01-10&payment=250@1978-02-10,230x23@1978-03-10/monthly"
    ));

    assert_eq!(got, posted);
    assert_eq!(got["apr_percent"], "9.69");
    assert_eq!(unit["apr_percent"], "11.82");
    assert_eq!(irregular["apr_percent"], "10.08"); // Appendix J (c)(2)(i)
}

#[test]
fn eu_aprc_of_1000_repaid_with_1100_a_year_later_is_10_0_percent() {
    // Directive 2008/48/EC Annex I, by hand: 1000 = 1100 (1 + X)^−1, X = 10 %,
    // at least one decimal (remark (d)).
    let app = shared_app();

    let a = app.post_ok(
        APR,
        &json!({
            "method": "eu_aprc",
            "advances": [{"amount": "1000", "date": "2025-01-01"}],
            "payments": [{"amount": "1100", "date": "2026-01-01"}]
        }),
    );
    let got = app.get_ok(&format!(
        "{APR}?method=eu_aprc&advance=1000@2025-01-01&payment=1100@2026-01-01"
    ));

    assert_eq!(a["method"], "eu_aprc");
    assert_eq!(a["apr_percent"], "10.0");
    assert_eq!(dec_of(&a["apr_percent_full"]), dec("10"));
    assert_eq!(a["time_basis"], "equal_months");
    assert_eq!(a["currency"], "EUR");
    assert_eq!(flows(&a)[1]["years"], "1");
    assert!(a.get("unit_period").is_none(), "no unit-period in the APRC");
    assert_eq!(got, a);
    assert_cautioned(&a);
}

// ---------------------------------------------------------------------------
// APY: 12 CFR 1030 Appendix A
// ---------------------------------------------------------------------------

#[test]
fn regulation_dd_appendix_a_examples_give_6_17_6_18_and_6_58_percent() {
    let app = shared_app();

    // 12 CFR 1030 Appendix A, Part I.A: $1,000 earning $61.68 in a 365-day year: 6.17 %.
    let year = app.post_ok(
        APY,
        &json!({"principal": "1000", "interest": "61.68", "days": 365}),
    );
    // Part I.A: a $1,000 six-month CD earning $30.37 over 182 days: 6.18 %.
    let six_months = app.post_ok(
        APY,
        &json!({"principal": "1000", "interest": "30.37", "days": 182}),
    );
    // Part II.A: $5.25 earned on an average daily balance of $1,000 over 30 days: 6.58 %.
    let earned = app.post_ok(
        APY,
        &json!({"interest_earned": "5.25", "average_daily_balance": "1000", "days_in_period": 30}),
    );
    let got = app.get_ok(&format!("{APY}?principal=1000&interest=30.37&days=182"));

    assert_eq!(year["apy_percent"], "6.17");
    assert_eq!(year["apy_percent_full"], "6.168");
    assert_eq!(year["form"], "general");
    assert_eq!(six_months["apy_percent"], "6.18");
    assert_eq!(earned["apy_percent"], "6.58");
    assert_eq!(earned["form"], "earned");
    assert_eq!(got, six_months);
    assert!(six_months["formula"]
        .as_str()
        .unwrap()
        .contains("(1 + 30.37/1000)^(365/182)"));
    assert!(year["notes"][0]
        .as_str()
        .unwrap()
        .starts_with("Estimates for discussion only"));
}

#[test]
fn the_apy_of_a_rate_compounded_daily_is_100_times_the_year_of_daily_factors() {
    // 100 [(1 + 0.05/365)^365 − 1] = 5.12674964674625504549681497… (Python decimal at
    // 40 digits, as in the engine's own test).
    let app = shared_app();

    let a = app.post_ok(
        APY,
        &json!({"annual_rate_percent": "5", "compounding": "daily"}),
    );
    let monthly = app.get_ok(&format!("{APY}?annual_rate_percent=5&compounding=monthly"));

    assert_eq!(a["apy_percent"], "5.13");
    assert_eq!(a["form"], "nominal_rate");
    let full = dec_of(&a["apy_percent_full"]);
    assert!((full - dec("5.1267496467462550454968149774")).abs() < dec("1e-20"));
    // 100 [(1 + 0.05/12)^12 − 1] = 5.1161897881733189804873890961 (Python decimal, 40 digits).
    assert_eq!(monthly["apy_percent"], "5.12");
}

// ---------------------------------------------------------------------------
// Checks of quotes
// ---------------------------------------------------------------------------

fn loan(changes: Value) -> Value {
    with(
        &json!({"principal": "100000", "annual_rate_percent": "6", "term_months": 360}),
        changes,
    )
}

#[test]
fn a_correct_quote_matches_the_payment_and_falls_within_the_apr_tolerance() {
    // 100,000 at 6 % over 360 months pays 599.55 (common practice, no source).
    let app = shared_app();

    let c = app.post_ok(
        CHECK,
        &loan(json!({"quoted_payment": "599.55", "quoted_apr_percent": "6.00"})),
    );

    assert_eq!(c["computed_payment"], "599.55");
    assert_eq!(c["payment_difference"], "0.00");
    assert_eq!(c["payment_matches"], true);
    assert_eq!(c["apr_percent"], "6.00");
    assert_eq!(c["apr_tolerance_points"], "0.125");
    assert_eq!(c["apr_transaction"], "regular");
    assert!(
        c["apr_tolerance_reason"]
            .as_str()
            .unwrap()
            .contains("final payment"),
        "the posted final payment differs and is named: {}",
        c["apr_tolerance_reason"]
    );
    assert_eq!(c["apr_within_tolerance"], true);
    assert_eq!(c["finance_charge_tolerance"], Value::Null);
    let notes = c["notes"].as_array().unwrap();
    assert_cautioned(&c);
    assert_eq!(notes[1], "This check is a tool, not a compliance opinion.");
}

#[test]
fn a_payment_a_cent_too_high_does_not_match_and_implies_a_higher_note_rate() {
    let app = shared_app();

    let c = app.post_ok(CHECK, &loan(json!({"quoted_payment": "599.56"})));

    assert_eq!(c["payment_difference"], "0.01");
    assert_eq!(c["payment_matches"], false);
    assert_eq!(c["apr_within_tolerance"], Value::Null, "no APR was quoted");
    // The implied note rate j repays 100,000 with 360 payments of 599.56:
    // 100000 · i / (1 − (1 + i)^−360) = 599.56 with i = j/1200, evaluated here.
    let j = dec_of(&c["implied_annual_rate_percent"]);
    assert!(j > dec("6") && j < dec("6.001"), "{j}");
    let i = j / dec("1200");
    let payment = dec("100000") * i / (Decimal::ONE - (Decimal::ONE + i).powi(-360));
    assert!((payment - dec("599.56")).abs() < dec("1e-12"), "{payment}");
}

#[test]
fn an_apr_off_by_exactly_an_eighth_of_a_point_is_within_and_by_0_126_is_not() {
    // §1026.22(a)(2): within 1/8 of 1 percentage point above or below.
    let app = shared_app();
    let computed = dec_of(&app.post_ok(CHECK, &loan(json!({})))["apr_percent_full"]);
    let quote = |offset: &str| -> Value {
        let quoted = (computed + dec(offset)).to_string();
        app.post_ok(CHECK, &loan(json!({"quoted_apr_percent": quoted})))
    };

    // (the quote's offset from the computed APR, the difference shown, within?)
    let cases = [
        ("0.125", Some("0.125"), true),
        ("-0.125", Some("-0.125"), true),
        ("0.126", Some("0.126"), false),
        ("0.1250000001", None, false),
    ];

    for (offset, difference, within) in cases {
        let c = quote(offset);
        if let Some(difference) = difference {
            assert_eq!(
                dec_of(&c["apr_difference_points"]),
                dec(difference),
                "{offset}"
            );
        }
        assert_eq!(c["apr_within_tolerance"], within, "{offset}");
    }
}

#[test]
fn at_zero_percent_the_apr_is_exactly_zero_and_0_125_is_the_last_quote_within() {
    // 12,000 over 48 payments of 250 at 0 %: the APR is exactly 0 (by hand).
    let app = shared_app();
    let zero = |quoted: &str| {
        app.post_ok(
            CHECK,
            &json!({"principal": "12000", "annual_rate_percent": "0", "term_payments": 48,
                    "quoted_apr_percent": quoted, "quoted_payment": "250"}),
        )
    };

    let at = zero("0.125");
    let over = zero("0.126");

    assert_eq!(at["apr_percent"], "0.00");
    assert_eq!(at["apr_difference_points"], "0.125");
    assert_eq!(at["apr_within_tolerance"], true);
    assert_eq!(over["apr_within_tolerance"], false);
    assert_eq!(at["implied_annual_rate_percent"], "0");
    assert_eq!(at["payment_matches"], true);
}

#[test]
fn prepaid_finance_charges_lower_the_amount_financed_and_raise_the_apr_above_the_note_rate() {
    let app = shared_app();
    let terms = json!({"principal": "200000", "annual_rate_percent": "6", "term_months": 360});
    let mut body = terms.clone();
    body["prepaid_finance_charges"] =
        json!([{"name": "origination", "amount": "2000"}, {"name": "points", "amount": "2000.00"}]);

    let c = app.post_ok(CHECK, &body);
    let s = app.post_ok(SCHEDULE, &terms);

    // §1026.18(b): amount financed = principal − prepaid finance charges.
    assert_eq!(c["prepaid_finance_charges_total"], "4000.00");
    assert_eq!(c["amount_financed"], "196000.00");
    assert_eq!(c["total_of_payments"], s["summary"]["total_paid"]);
    assert_eq!(
        dec_of(&c["finance_charge"]),
        dec_of(&s["summary"]["total_interest"]) + dec("4000")
    );
    let apr = dec_of(&c["apr_percent_full"]);
    assert!(apr > dec("6.125"), "two points raise the APR: {apr}");
    // Independently: the posted payments, discounted at the APR's monthly rate,
    // are worth the amount financed (Appendix J (b)(8) with one advance).
    let v = Decimal::ONE / (Decimal::ONE + apr / dec("1200"));
    let mut factor = Decimal::ONE;
    let mut present_value = Decimal::ZERO;
    for row in s["schedule"].as_array().unwrap() {
        factor *= v;
        present_value += dec_of(&row["payment"]) * factor;
    }
    assert!(
        (present_value - dec("196000")).abs() < dec("1e-12"),
        "{present_value}"
    );
    assert_eq!(c["in_five_years"]["loan_costs"], "4000.00");
}

#[test]
fn total_interest_percentage_and_in_five_years_agree_with_the_schedule_rows() {
    // 100,000 at 6 % over 360, computed here from the schedule endpoint's rows:
    // §1026.37(l)(3) TIP = Σ interest ÷ principal × 100, three decimals, trailing zeros
    // dropped (§1026.37(o)(4)); §1026.37(l)(1) through payment 60.
    let app = shared_app();
    let terms = loan(json!({}));

    let c = app.post_ok(CHECK, &terms);
    let s = app.post_ok(SCHEDULE, &terms);

    let rows = s["schedule"].as_array().unwrap();
    let interest: Decimal = rows.iter().map(|r| dec_of(&r["interest"])).sum();
    let tip = (interest / dec("100000") * dec("100"))
        .round_dp_with_strategy(3, RoundingStrategy::MidpointAwayFromZero)
        .normalize();
    assert_eq!(c["total_interest_percentage"], tip.to_string());
    assert_eq!(dec_of(&c["total_interest"]), interest);
    let paid: Decimal = rows[..60].iter().map(|r| dec_of(&r["payment"])).sum();
    let principal: Decimal = rows[..60].iter().map(|r| dec_of(&r["principal"])).sum();
    let five = &c["in_five_years"];
    assert_eq!(five["through_payment"], 60);
    assert_eq!(dec_of(&five["total_paid"]), paid);
    assert_eq!(dec_of(&five["principal_paid"]), principal);
    assert_eq!(paid, dec("35973.00"), "60 × 599.55");
    let rounding = c["disclosure_rounding"].as_array().unwrap();
    let shown = |figure: &str| {
        rounding
            .iter()
            .find(|r| r["figure"] == figure)
            .unwrap_or_else(|| panic!("{figure} is listed"))["disclosed"]
            .clone()
    };
    assert_eq!(
        shown("in_five_years.total_paid"),
        paid.round_dp_with_strategy(0, RoundingStrategy::MidpointAwayFromZero)
            .to_string()
    );
    assert_eq!(
        shown("in_five_years.principal_paid"),
        principal
            .round_dp_with_strategy(0, RoundingStrategy::MidpointAwayFromZero)
            .to_string()
    );
    assert_eq!(shown("total_interest_percentage"), tip.to_string());
}

#[test]
fn a_loan_shorter_than_five_years_counts_its_whole_term() {
    // §1026.37(l)(1) commentary as summarised in REGULATIONS.md: the whole term when shorter.
    let app = shared_app();

    let c = app.post_ok(
        CHECK,
        &json!({"principal": "12000", "annual_rate_percent": "5", "term_months": 36}),
    );

    assert_eq!(c["in_five_years"]["through_payment"], 36);
    assert_eq!(c["in_five_years"]["principal_paid"], "12000.00");
    assert_eq!(c["in_five_years"]["total_paid"], c["total_of_payments"]);
}

#[test]
fn the_finance_charge_tolerance_is_100_dollars_understated_for_a_mortgage_and_10_or_5_otherwise() {
    let app = shared_app();
    let mortgage = loan(json!({}));
    let other = loan(json!({"mortgage": false}));
    let small = json!({"principal": "1000", "annual_rate_percent": "12", "term_months": 12,
                       "mortgage": false});
    // (the loan, the quote's offset from its finance charge, then the tolerance
    // and the difference shown, if checked, and whether the quote is within)
    let cases = [
        // §1026.18(d)(1): understated by no more than $100, or overstated.
        (&mortgage, "-100", Some("100.00"), Some("-100.00"), true),
        (&mortgage, "-100.01", None, None, false),
        (&mortgage, "500", None, None, true),
        // §1026.18(d)(2): $10 when the amount financed is over $1,000.
        (&other, "10", Some("10.00"), None, true),
        (&other, "10.01", None, None, false),
        // §1026.18(d)(2): $5 when the amount financed is $1,000 or less.
        (&small, "-5", Some("5.00"), None, true),
        (&small, "-5.01", None, None, false),
    ];

    for (terms, offset, tolerance, difference, within) in cases {
        let finance_charge = dec_of(&app.post_ok(CHECK, terms)["finance_charge"]);
        let mut body = terms.clone();
        body["quoted_finance_charge"] = json!((finance_charge + dec(offset)).to_string());
        let t = app.post_ok(CHECK, &body)["finance_charge_tolerance"].clone();

        let what = format!("{offset} on {terms}");
        if let Some(tolerance) = tolerance {
            assert_eq!(t["tolerance"], tolerance, "{what}");
        }
        if let Some(difference) = difference {
            assert_eq!(t["difference"], difference, "{what}");
        }
        assert_eq!(t["within_tolerance"], within, "{what}");
    }
}

#[test]
fn get_check_with_prepaid_charges_in_the_query_syntax_equals_post() {
    let app = shared_app();

    let got = app.get_ok(&format!(
        "{CHECK}?principal=250000&annual_rate_percent=6.5&term_months=360&quoted_payment=1580.17\
         &quoted_apr_percent=6.6&prepaid_finance_charges=origination:1250.00,points:2500&mortgage=true"
    ));
    let posted = app.post_ok(
        CHECK,
        &json!({"principal": "250000", "annual_rate_percent": "6.5", "term_months": 360,
                "quoted_payment": "1580.17", "quoted_apr_percent": "6.6", "mortgage": true,
                "prepaid_finance_charges": [{"name": "origination", "amount": "1250.00"},
                                            {"name": "points", "amount": 2500}]}),
    );

    assert_eq!(got, posted);
    assert_eq!(got["amount_financed"], "246250.00");
}

// ---------------------------------------------------------------------------
// Bad inputs
// ---------------------------------------------------------------------------

#[test]
fn bad_apr_apy_and_check_requests_are_each_refused_at_their_own_pointers() {
    let app = shared_app();
    let apr = |body: Value| Ask::Json(APR, body);
    let apy = |body: Value| Ask::Json(APY, body);
    let check = |changes: Value| Ask::Json(CHECK, loan(changes));
    let cases = [
        // A date off the calendar is refused at its pointer, and says why.
        Refusal::invalid(
            apr(json!({"advances": [{"amount": "5000", "date": "2027-02-30"}],
                       "payments": [{"amount": "5100", "date": "2027-06-01"}]})),
            "/advances/0/date",
        )
        .saying("February 2027 has 28 days"),
        // Bad flows are each refused at their own pointer.
        Refusal::invalid(
            apr(json!({"advances": [{"amount": "5000", "date": "2026-01-01"}],
                       "payments": [{"amount": "100", "count": 0, "first_date": "2026-02-01", "frequency": "monthly"},
                                    {"amount": "-5", "date": "2026-03-01"},
                                    {"amount": "5.001", "date": "2026-03-01"},
                                    {"amount": "5", "count": 2, "first_date": "2026-03-01", "frequency": "hourly"},
                                    {"amount": "5"},
                                    {"amount": "5", "date": "2026-03-01", "colour": "red"}]})),
            "/payments/0/count",
        )
        .at("/payments/1/amount")
        .at("/payments/2/amount")
        .at("/payments/3/frequency")
        .at("/payments/4/date")
        .at("/payments/5/colour"),
        // Flows in unit-periods need a unit-period (of at most a year), cannot be
        // mixed with dates, and are not for the EU APRC.
        Refusal::invalid(
            apr(json!({"advances": [{"amount": "100", "periods": 0}],
                       "payments": [{"amount": "110", "periods": 1}]})),
            "/unit_period",
        ),
        Refusal::invalid(
            apr(json!({"unit_period": {"months": 13}, "advances": [{"amount": "100", "periods": 0}],
                       "payments": [{"amount": "110", "periods": 1}]})),
            "/unit_period",
        ),
        Refusal::invalid(
            apr(json!({"unit_period": "month", "advances": [{"amount": "100", "periods": 0}],
                       "payments": [{"amount": "110", "date": "2026-01-01"}]})),
            "/payments/0",
        ),
        Refusal::invalid(
            apr(json!({"unit_period": "month", "advances": [{"amount": "100", "periods": 0}],
                       "payments": [{"amount": "110", "periods": 1, "fraction": "30/30"}]})),
            "/payments/0/fraction",
        ),
        Refusal::invalid(
            apr(json!({"method": "eu_aprc", "unit_period": "month", "advances": [{"amount": "100", "periods": 0}],
                       "payments": [{"amount": "110", "periods": 1}]})),
            "/method",
        ),
        // A payment before the first advance; payments short of the advances; neither.
        Refusal::invalid(
            apr(json!({"advances": [{"amount": "1000", "date": "2026-03-01"}],
                       "payments": [{"amount": "1100", "date": "2026-02-01"}]})),
            "/payments/0/date",
        ),
        Refusal::new(
            apr(json!({"advances": [{"amount": "1000", "date": "2026-03-01"}],
                       "payments": [{"amount": "999", "date": "2026-09-01"}]})),
            422,
            "no-solution",
        )
        .at("/payments"),
        Refusal::invalid(apr(json!({"advances": [], "payments": "soon"})), "/advances")
            .at("/payments"),
        // Bad query flows are refused by parameter name, quoting the flow.
        Refusal::invalid(
            Ask::Get(format!(
                "{APR}?advance=5000@1978-01-10&payment=230x24@1978-02-10"
            )),
            "payment",
        )
        .saying("230x24@1978-02-10"),
        Refusal::invalid(
            Ask::Get(format!(
                "{APR}?advance=5000@1978-02-30&payment=5100@1978-06-01"
            )),
            "advance",
        ),
        Refusal::invalid(
            Ask::Get(format!(
                "{APR}?advance=5000@1978-01-10&payment=5100@1978-06-01&payments=1"
            )),
            "payments",
        ),
        Refusal::invalid(Ask::Get(APR.to_string()), "advance"),
        // Bad APY requests are refused by field.
        Refusal::invalid(apy(json!({})), "/principal"),
        Refusal::invalid(
            apy(json!({"principal": "1000", "interest": "1", "days": 30, "interest_earned": "1"})),
            "/interest_earned",
        ),
        Refusal::invalid(
            apy(json!({"principal": "1000", "interest": "1", "days": 0})),
            "/days",
        ),
        Refusal::invalid(
            apy(json!({"interest_earned": "1", "average_daily_balance": "0", "days_in_period": 30})),
            "/average_daily_balance",
        ),
        Refusal::invalid(
            Ask::Get(format!("{APY}?annual_rate_percent=5&compounding=hourly")),
            "compounding",
        ),
        // Bad check requests are refused by field.
        Refusal::invalid(
            check(json!({"prepaid_finance_charges": [{"name": "points", "amount": "100000"}]})),
            "/prepaid_finance_charges",
        ),
        Refusal::invalid(
            check(json!({"prepaid_finance_charges": [{"name": "points", "amount": "10.005"}, {"amount": "1"}]})),
            "/prepaid_finance_charges/0/amount",
        )
        .at("/prepaid_finance_charges/1/name"),
        Refusal::invalid(check(json!({"quoted_payment": "599.555"})), "/quoted_payment"),
        Refusal::invalid(check(json!({"mortgage": "yes"})), "/mortgage"),
        Refusal::invalid(check(json!({"quoted_apr": "6"})), "/quoted_apr"),
        Refusal::invalid(
            Ask::Get(format!(
                "{CHECK}?principal=100000&annual_rate_percent=6&term_months=360&prepaid_finance_charges=points"
            )),
            "prepaid_finance_charges",
        ),
        Refusal::invalid(
            Ask::Json(CHECK, json!({"annual_rate_percent": "6", "term_months": 360})),
            "/principal",
        ),
        Refusal::new(Ask::Bytes(CHECK, b"{\"principal\": "), 400, "malformed-json"),
    ];

    assert_refusals(&app, &cases);
}
