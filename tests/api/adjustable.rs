//! Adjustable-rate loans over HTTP: the `adjustable` terms (a JSON object,
//! compact `KEY:VALUE` pairs or `adjustable.NAME` parameters in a query, a
//! column of the checks pipeline) on `/api/v1/loans/schedule` (JSON and CSV),
//! `/api/v1/loans/check` and `/api/v1/loans/checks`.
//!
//! The published examples of Regulation Z (Appendix H-14; comments
//! 17(c)(1)-10, 43(c)(5)(i)-5.ii and 43(e)(2)(iv)-7.iii), the projected
//! payments' columns, the three request forms agreeing, and bad terms each
//! refused at their own pointer.

use rust_decimal::{Decimal, RoundingStrategy};
use serde_json::{json, Value};

use crate::helpers::{
    assert_field_problem, assert_refusals, dec, dec_of, pointers, shared_app, with, Ask, Refusal,
    TestApp, SCHEDULE, SCHEDULE_CSV,
};

const CHECK: &str = "/api/v1/loans/check";
const CHECKS: &str = "/api/v1/loans/checks";

/// Appendix H-14: 10,000 at 12.41 %, yearly changes of at most 2 points from
/// payment 13, at most 17.41 % (5 points over the life), 30 years. The index
/// (10.41 + a margin of 2) is ours: the example follows the highest path,
/// which the index does not enter.
const H14_QUERY: &str = "principal=10000&annual_rate_percent=12.41&term_months=360\
    &adjustable=index:10.41,margin:2,first_change:13,every:12,cap:2,max:17.41";

/// Comment 17(c)(1)-10: 100,000 over 30 years, 9 % for the first year, then
/// the index at consummation (10 %) plus a margin of 2 points; no caps. The
/// service asks for a lifetime maximum (§1026.30): 15 % never binds here.
const C17_QUERY: &str = "principal=100000&annual_rate_percent=9&term_months=360\
    &adjustable=index:10,margin:2,first_change:13,every:12,max:15";

/// Comment 43(c)(5)(i)-5.ii: 200,000 over 30 years, 6 % for five years, then
/// index + margin, fully indexed 7.5 % (index 5 + margin 2.5 here). Yearly
/// changes, caps of 2 points and an 11 % maximum are ours: the rule ignores
/// periodic caps. A 5/1 loan.
const C43C_QUERY: &str = "principal=200000&annual_rate_percent=6&term_months=360\
    &adjustable=index:5,margin:2.5,first_change:61,every:12,cap:2,max:11";

/// Comment 43(e)(2)(iv)-7.iii: 200,000 over 30 years, 6 % for 60 payments,
/// then 8 % (index 6 + margin 2 here; caps of 2 points and an 8 % maximum).
const C43E_QUERY: &str = "principal=200000&annual_rate_percent=6&term_months=360\
    &adjustable=index:6,margin:2,first_change:61,every:12,cap:2,max:8";

/// 300,000 at 5.875 % with every adjustable term given, as compact pairs.
const ALL_TERMS_COMPACT: &str = "principal=300000&annual_rate_percent=5.875&term_months=360\
    &adjustable=index:4.5,margin:2.75,first_change:61,every:12,first_cap:2,cap:2,max:11,\
    floor:3,rounding:nearest_eighth,payment_cap:7.5";

/// [`ALL_TERMS_COMPACT`] as `adjustable.NAME` parameters.
const ALL_TERMS_PREFIXED: &str = "principal=300000&annual_rate_percent=5.875&term_months=360\
    &adjustable.index_percent=4.5&adjustable.margin_percent=2.75\
    &adjustable.first_change_payment=61&adjustable.change_every=12\
    &adjustable.first_change_cap_percent=2&adjustable.periodic_cap_percent=2\
    &adjustable.lifetime_max_percent=11&adjustable.floor_percent=3\
    &adjustable.rounding=nearest_eighth&adjustable.payment_cap_percent=7.5";

/// [`ALL_TERMS_COMPACT`] as a JSON body.
fn all_terms_body() -> Value {
    json!({
        "principal": "300000", "annual_rate_percent": "5.875", "term_months": 360,
        "adjustable": {
            "index_percent": "4.5", "margin_percent": "2.75",
            "first_change_payment": 61, "change_every": 12,
            "first_change_cap_percent": "2", "periodic_cap_percent": "2",
            "lifetime_max_percent": "11", "floor_percent": "3",
            "rounding": "nearest_eighth", "payment_cap_percent": "7.5"
        }
    })
}

/// A fixed-rate loan: 200,000 at 6 % over 360 months pays 1,199.10 (common
/// practice, no source).
const FIXED_QUERY: &str = "principal=200000&annual_rate_percent=6&term_months=360";

/// The 5/1 loan of [`C43C_QUERY`] as a JSON body, with `changes` merged in.
fn arm(changes: Value) -> Value {
    with(
        &json!({
            "principal": "200000", "annual_rate_percent": "6", "term_months": 360,
            "adjustable": {"index_percent": "5", "margin_percent": "2.5",
                           "first_change_payment": 61, "change_every": 12,
                           "periodic_cap_percent": "2", "lifetime_max_percent": "11"}
        }),
        changes,
    )
}

/// The 5/1 loan's adjustable terms as JSON, with `changes` merged in.
fn arm_terms(changes: Value) -> Value {
    with(
        &json!({"index_percent": "5", "margin_percent": "2.5", "first_change_payment": 61,
                "change_every": 12, "periodic_cap_percent": "2", "lifetime_max_percent": "11"}),
        changes,
    )
}

fn array<'a>(v: &'a Value, name: &str) -> &'a Vec<Value> {
    v[name]
        .as_array()
        .unwrap_or_else(|| panic!("{name} is an array: {v}"))
}

/// A money figure in whole dollars, halves away from zero, as the commentary
/// prints its figures.
fn dollars(v: &Value) -> Decimal {
    dec_of(v).round_dp_with_strategy(0, RoundingStrategy::MidpointAwayFromZero)
}

/// The steps of one of the answer's rate paths.
fn path_steps<'a>(s: &'a Value, path: &str) -> &'a Vec<Value> {
    let p = array(s, "rate_paths")
        .iter()
        .find(|p| p["path"] == path)
        .unwrap_or_else(|| panic!("a {path} path: {}", s["rate_paths"]));
    array(p, "steps")
}

/// The payment of the step starting at payment `from` on `path`.
fn step_payment<'a>(s: &'a Value, path: &str, from: u64) -> &'a Value {
    &path_steps(s, path)
        .iter()
        .find(|step| step["from_payment"] == from)
        .unwrap_or_else(|| panic!("a {path} step from payment {from}"))["payment"]
}

/// The (from, to) years of each projected payments column.
fn column_years(s: &Value) -> Vec<(u64, u64)> {
    array(s, "projected_payments")
        .iter()
        .map(|c| {
            (
                c["from_year"].as_u64().expect("a year"),
                c["to_year"].as_u64().expect("a year"),
            )
        })
        .collect()
}

fn schedule(app: &TestApp, query: &str) -> Value {
    app.get_ok(&format!("{SCHEDULE}?{query}"))
}

// ---------------------------------------------------------------------------
// The published examples
// ---------------------------------------------------------------------------

#[test]
fn appendix_h_14_pays_106_03_in_year_1_and_reaches_17_41_percent_and_145_34_in_year_4() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule(&app, H14_QUERY);
    let larger = schedule(
        &app,
        &H14_QUERY.replace("principal=10000", "principal=250000"),
    );

    // Assert
    let example = &s["program_example"];
    assert_eq!(example["principal"], "10000.00");
    assert_eq!(example["initial_payment"], "106.03"); // Appendix H-14: $106.03 in year 1
    assert_eq!(example["highest_rate_percent"], "17.41"); // Appendix H-14: 17.41 %, the maximum
    assert_eq!(example["highest_payment"], "145.34"); // Appendix H-14: $145.34
    assert_eq!(example["highest_payment_year"], 4); // Appendix H-14: in the 4th year

    // The loan is the example's own 10,000: its summary says the same.
    assert_eq!(s["summary"]["payment"], "106.03");
    assert_eq!(s["adjustable_summary"]["highest_payment"], "145.34");
    assert_eq!(s["adjustable_summary"]["highest_rate_year"], 4);
    // The highest path takes the full 2-point cap each year: 12.41, 14.41,
    // 16.41, then the 17.41 % maximum from payment 37, the first of year 4.
    let rates: Vec<(u64, &str)> = path_steps(&s, "highest")
        .iter()
        .map(|step| {
            (
                step["from_payment"].as_u64().expect("a payment number"),
                step["rate_percent"].as_str().expect("a rate"),
            )
        })
        .collect();
    assert_eq!(
        rates,
        [(1, "12.41"), (13, "14.41"), (25, "16.41"), (37, "17.41")]
    );
    // §1026.19(b)(2)(viii)(B): the example is of a $10,000 loan, whatever the
    // loan's own principal.
    assert_eq!(larger["program_example"], s["program_example"]);
    assert_ne!(larger["summary"]["payment"], s["summary"]["payment"]);
}

#[test]
fn comment_17_c_1_10_gives_804_62_then_1025_31_and_an_apr_of_11_63_within_a_quarter_point() {
    // Arrange
    let app = shared_app();
    let within = format!("{CHECK}?{C17_QUERY}&quoted_apr_percent=11.63");
    let beyond = format!("{CHECK}?{C17_QUERY}&quoted_apr_percent=11.95");

    // Act
    let c = app.get_ok(&within);
    let far = app.get_ok(&beyond);
    let s = schedule(&app, C17_QUERY);

    // Assert
    assert_eq!(c["computed_payment"], "804.62"); // comment 17(c)(1)-10: 12 payments of $804.62
    assert_eq!(c["apr_percent"], "11.63"); // comment 17(c)(1)-10: APR 11.63 %

    // §1026.22(a)(3): an irregular transaction (the payment changes with the
    // rate) is accurate within 1/4 of a percentage point.
    assert_eq!(c["apr_tolerance_points"], "0.25");
    assert_eq!(c["apr_transaction"], "irregular");
    assert_eq!(c["apr_within_tolerance"], true);
    // 11.95 is 0.32 over the computed 11.632…: beyond the quarter point.
    assert_eq!(far["apr_tolerance_points"], "0.25");
    assert_eq!(far["apr_within_tolerance"], false);
    assert!(dec_of(&far["apr_difference_points"]) > dec("0.25"));
    let rows = array(&s, "schedule");
    assert_eq!(rows.len(), 360);
    for row in &rows[..12] {
        assert_eq!(row["payment"], "804.62", "{row}"); // comment 17(c)(1)-10
    }
    for row in &rows[12..359] {
        assert_eq!(row["payment"], "1025.31", "{row}"); // comment 17(c)(1)-10: 348 payments of $1,025.31
    }
    // The commentary's finance charge, $266,463.32, counts all 348 later
    // payments at 1,025.31, the last one included:
    // 12 × 804.62 + 348 × 1,025.31 − 100,000.
    let published = dec("266463.32");
    assert_eq!(
        dec("12") * dec("804.62") + dec("348") * dec("1025.31") - dec("100000"),
        published
    );
    // A posted ledger's last payment repays the balance actually left, which the
    // rounding of 359 payments has brought below 1,025.31; the finance charge
    // is lower by as much. Understated by less than $100, it is still accurate
    // for a mortgage (§1026.18(d)(1)).
    let final_payment = dec_of(&rows[359]["payment"]);
    assert!(final_payment < dec("1025.31"), "{final_payment}");
    let finance_charge = dec_of(&c["finance_charge"]);
    let understated = published - finance_charge;
    assert!(
        understated > Decimal::ZERO && understated < dec("100"),
        "{finance_charge} against {published}"
    );
    assert_eq!(understated, dec("1025.31") - final_payment);
    assert_eq!(c["finance_charge"], s["summary"]["total_interest"]);
    assert_eq!(c["final_payment"], rows[359]["payment"]);
}

#[test]
fn the_check_of_an_adjustable_loan_answers_alike_by_query_and_by_json() {
    // Arrange
    let app = shared_app();
    let body = json!({
        "principal": "100000", "annual_rate_percent": "9", "term_months": 360,
        "quoted_apr_percent": "11.63",
        "adjustable": {"index_percent": "10", "margin_percent": "2", "first_change_payment": 13,
                       "change_every": 12, "lifetime_max_percent": "15"}
    });

    // Act
    let by_query = app.get_ok(&format!("{CHECK}?{C17_QUERY}&quoted_apr_percent=11.63"));
    let by_post = app.post_ok(CHECK, &body);

    // Assert
    assert_eq!(by_post, by_query);
    assert_eq!(by_post["apr_percent"], "11.63"); // comment 17(c)(1)-10
}

#[test]
fn comment_43_c_5_i_5_ii_schedules_1199_and_underwrites_at_1398() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule(&app, C43C_QUERY);

    // Assert
    let u = &s["underwriting"];
    assert_eq!(dollars(&s["summary"]["payment"]), dec("1199")); // comment 43(c)(5)(i)-5.ii: $1,199
    assert_eq!(dollars(&array(&s, "schedule")[0]["payment"]), dec("1199"));
    // §1026.43(c)(5)(i): the fully indexed rate, 5 + 2.5, over the whole term.
    assert_eq!(u["ability_to_repay_rate_percent"], "7.5"); // comment 43(c)(5)(i)-5.ii: 7.5 %
    assert_eq!(dollars(&u["ability_to_repay_payment"]), dec("1398")); // comment 43(c)(5)(i)-5.ii: $1,398
}

#[test]
fn comment_43_e_2_iv_7_iii_owes_186109_after_five_years_and_pays_1436_or_1468() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule(&app, C43E_QUERY);

    // Assert
    let u = &s["underwriting"];
    assert_eq!(dollars(&u["balance_after_five_years"]), dec("186109")); // comment 43(e)(2)(iv)-7.iii: $186,109
    assert_eq!(dollars(&u["recast_payment_after_five_years"]), dec("1436")); // comment 43(e)(2)(iv)-7.iii: $1,436 over 300 months
    assert_eq!(dollars(&u["qualified_mortgage_payment"]), dec("1468")); // comment 43(e)(2)(iv)-7.iii: $1,468 over 360 months

    // §1026.43(e)(2)(iv)(A): the highest rate in the first five years, 8 %.
    assert_eq!(u["qualified_mortgage_rate_percent"], "8");
    // The balance is the posted schedule's after payment 60.
    assert_eq!(
        u["balance_after_five_years"],
        array(&s, "schedule")[59]["balance"]
    );
}

// ---------------------------------------------------------------------------
// The request forms
// ---------------------------------------------------------------------------

#[test]
fn the_compact_the_prefixed_and_the_json_adjustable_terms_give_the_same_answer() {
    // Arrange
    let app = shared_app();

    // Act
    let compact = schedule(&app, ALL_TERMS_COMPACT);
    let prefixed = schedule(&app, ALL_TERMS_PREFIXED);
    let posted = app.post_ok(SCHEDULE, &all_terms_body());
    let checked = app.get_ok(&format!("{CHECK}?{ALL_TERMS_COMPACT}"));
    let checked_by_post = app.post_ok(CHECK, &all_terms_body());

    // Assert
    assert_eq!(prefixed, compact);
    assert_eq!(posted, compact);
    assert_eq!(checked_by_post, checked);
    // Every term was read: the floor, both caps and the rounding show.
    let table = &compact["rate_table"];
    assert_eq!(table["index_percent"], "4.5");
    assert_eq!(table["margin_percent"], "2.75");
    assert_eq!(table["minimum_rate_percent"], "3");
    assert_eq!(table["maximum_rate_percent"], "11");
    assert_eq!(table["first_change_payment"], 61);
    assert_eq!(table["change_every"], 12);
    assert_eq!(table["first_change_limit_percent"], "2");
    assert_eq!(table["subsequent_limit_percent"], "2");
    // 4.5 + 2.75 = 7.25, already on an eighth.
    assert_eq!(
        compact["adjustable_summary"]["fully_indexed_rate_percent"],
        "7.25"
    );
    let notes = array(&compact, "notes");
    assert!(
        notes
            .iter()
            .any(|n| n.as_str().is_some_and(|n| n.contains("payment cap"))),
        "{notes:?}"
    );
    for member in [
        "adjustable_summary",
        "rate_table",
        "program_example",
        "underwriting",
        "rate_paths",
        "projected_payments",
    ] {
        assert!(compact.get(member).is_some(), "{member}");
    }
}

// ---------------------------------------------------------------------------
// Projected payments (§1026.37(c))
// ---------------------------------------------------------------------------

#[test]
fn the_projected_payments_of_a_5_1_loan_are_years_1_to_5_6_7_and_8_to_30() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule(&app, C43C_QUERY);

    // Assert
    // §1026.37(c)(1): a column for each year the payment can change, at most
    // four, the last one holding the years that remain.
    assert_eq!(column_years(&s), [(1, 5), (6, 6), (7, 7), (8, 30)]);
    let columns = array(&s, "projected_payments");
    // Whole dollars (§1026.37(o)(4)); principal and interest from the lowest
    // path's payment to the highest path's.
    assert_eq!(columns[0]["principal_interest_min"], "1199");
    assert_eq!(columns[0]["principal_interest_max"], "1199");
    assert_eq!(
        dec(columns[1]["principal_interest_min"].as_str().unwrap()),
        dollars(step_payment(&s, "lowest", 61))
    );
    assert_eq!(
        dec(columns[1]["principal_interest_max"].as_str().unwrap()),
        dollars(step_payment(&s, "highest", 61))
    );
    assert_eq!(
        dec(columns[3]["principal_interest_max"].as_str().unwrap()),
        dollars(&s["adjustable_summary"]["highest_payment"])
    );
    for c in columns {
        assert_eq!(c["escrow"], "0", "{c}");
        assert_eq!(c["mortgage_insurance"], "0", "{c}");
        assert_eq!(c["total_min"], c["principal_interest_min"], "{c}");
        assert_eq!(c["total_max"], c["principal_interest_max"], "{c}");
    }
}

#[test]
fn a_fixed_loan_with_escrow_has_one_column_totalling_the_payment_and_escrow_in_whole_dollars() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule(&app, &format!("{FIXED_QUERY}&escrow_monthly=410.45"));

    // Assert
    assert_eq!(s["summary"]["payment"], "1199.10");
    assert_eq!(column_years(&s), [(1, 30)]);
    let c = &array(&s, "projected_payments")[0];
    assert_eq!(c["principal_interest_min"], "1199");
    assert_eq!(c["principal_interest_max"], "1199");
    assert_eq!(c["escrow"], "410");
    // The total is the payment and escrow added, then rounded:
    // 1,199.10 + 410.45 = 1,609.55, 1,610 (the rounded parts add to 1,609).
    let total = (dec_of(&s["summary"]["payment"]) + dec("410.45"))
        .round_dp_with_strategy(0, RoundingStrategy::MidpointAwayFromZero);
    assert_eq!(total, dec("1610"));
    assert_eq!(c["total_min"], total.to_string());
    assert_eq!(c["total_max"], total.to_string());
    for member in ["adjustable_summary", "rate_table", "rate_paths"] {
        assert!(s.get(member).is_none(), "a fixed loan has no {member}");
    }
}

#[test]
fn mortgage_insurance_for_84_payments_ends_a_column_with_year_7() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule(
        &app,
        &format!(
            "{FIXED_QUERY}&escrow_monthly=410&mortgage_insurance_monthly=95\
             &mortgage_insurance_payments=84"
        ),
    );

    // Assert
    assert_eq!(column_years(&s), [(1, 7), (8, 30)]);
    let columns = array(&s, "projected_payments");
    assert_eq!(columns[0]["mortgage_insurance"], "95");
    assert_eq!(columns[0]["total_max"], "1704"); // 1,199.10 + 95 + 410 = 1,704.10
    assert_eq!(columns[1]["mortgage_insurance"], "0");
    assert_eq!(columns[1]["total_max"], "1609"); // 1,199.10 + 410 = 1,609.10
}

#[test]
fn a_fixed_loan_without_escrow_insurance_or_adjustable_terms_has_no_projected_payments() {
    // Arrange
    let app = shared_app();

    // Act
    let got = schedule(&app, FIXED_QUERY);
    let posted = app.post_ok(
        SCHEDULE,
        &json!({"principal": "200000", "annual_rate_percent": "6", "term_months": 360}),
    );

    // Assert
    for s in [&got, &posted] {
        for member in [
            "projected_payments",
            "adjustable_summary",
            "rate_table",
            "program_example",
            "underwriting",
            "rate_paths",
        ] {
            assert!(s.get(member).is_none(), "no {member}: {}", s[member]);
        }
    }
}

// ---------------------------------------------------------------------------
// The CSV schedule
// ---------------------------------------------------------------------------

#[test]
fn the_csv_schedule_of_an_adjustable_loan_changes_its_payment_at_payment_61() {
    // Arrange
    let app = shared_app();
    let s = schedule(&app, C43C_QUERY);

    // Act
    let r = app.get(&format!("{SCHEDULE_CSV}?{C43C_QUERY}"));

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    assert_eq!(r.media_type(), "text/csv");
    let lines: Vec<&str> = r.text().trim_end_matches("\r\n").split("\r\n").collect();
    assert_eq!(
        lines[0],
        "number,date,payment,extra,interest,principal,balance"
    );
    assert_eq!(lines.len(), 361, "a header and 360 rows");
    let payment = |number: usize| -> String {
        let cells: Vec<&str> = lines[number].split(',').collect();
        assert_eq!(cells[0], number.to_string());
        cells[2].to_string()
    };
    assert_eq!(payment(60), "1199.10");
    assert_ne!(payment(61), payment(60), "the rate changes with payment 61");
    assert_eq!(
        payment(61),
        step_payment(&s, "composite", 61).as_str().unwrap()
    );
    // Each CSV row is the JSON row.
    for (line, row) in lines[1..].iter().zip(array(&s, "schedule")) {
        let expected = format!(
            "{},,{},{},{},{},{}",
            row["number"],
            row["payment"].as_str().unwrap(),
            row["extra"].as_str().unwrap(),
            row["interest"].as_str().unwrap(),
            row["principal"].as_str().unwrap(),
            row["balance"].as_str().unwrap()
        );
        assert_eq!(*line, expected);
    }
}

// ---------------------------------------------------------------------------
// Bad terms
// ---------------------------------------------------------------------------

#[test]
fn bad_adjustable_terms_are_refused_naming_the_field() {
    // Arrange
    let app = shared_app();
    let get = |query: &str| Ask::Get(format!("{SCHEDULE}?{FIXED_QUERY}&{query}"));
    let terms =
        |changes: Value| Ask::Json(SCHEDULE, arm(json!({ "adjustable": arm_terms(changes) })));
    let loan = |changes: Value| Ask::Json(SCHEDULE, arm(changes));
    let compact = "adjustable=index:5,margin:2.5,first_change:61,every:12,cap:2,max:11";
    let cases = [
        // A cap below zero.
        Refusal::invalid(
            get("adjustable=index:5,margin:2.5,first_change:61,every:12,cap:-1,max:11"),
            "adjustable.periodic_cap_percent",
        )
        .saying("below zero"),
        Refusal::invalid(
            get("adjustable.index_percent=5&adjustable.margin_percent=2.5\
                 &adjustable.first_change_payment=61&adjustable.change_every=12\
                 &adjustable.periodic_cap_percent=-1&adjustable.lifetime_max_percent=11"),
            "adjustable.periodic_cap_percent",
        )
        .saying("below zero"),
        Refusal::invalid(
            terms(json!({"periodic_cap_percent": "-1"})),
            "/adjustable/periodic_cap_percent",
        )
        .saying("below zero"),
        // A floor above the maximum.
        Refusal::invalid(get(&format!("{compact},floor:12")), "adjustable.floor_percent")
            .saying("cannot be above the maximum"),
        Refusal::invalid(
            terms(json!({"floor_percent": "12"})),
            "/adjustable/floor_percent",
        )
        .saying("cannot be above the maximum"),
        // A first change beyond the term of 360 payments.
        Refusal::invalid(
            get("adjustable=index:5,margin:2.5,first_change:400,every:12,cap:2,max:11"),
            "adjustable.first_change_payment",
        )
        .saying("within the term"),
        Refusal::invalid(
            terms(json!({"first_change_payment": 400})),
            "/adjustable/first_change_payment",
        )
        .saying("within the term"),
        // No lifetime maximum.
        Refusal::invalid(
            get("adjustable=index:5,margin:2.5,first_change:61,every:12,cap:2"),
            "adjustable.lifetime_max_percent",
        )
        .saying("is required"),
        Refusal::invalid(
            terms(json!({"lifetime_max_percent": null})),
            "/adjustable/lifetime_max_percent",
        )
        .saying("is required"),
        // A key the compact form does not know; a member the object does not know.
        Refusal::invalid(get(&format!("{compact},colour:red")), "adjustable")
            .saying("colour:red"),
        Refusal::invalid(terms(json!({"colour": "red"})), "/adjustable/colour"),
        // The terms as a string in JSON.
        Refusal::invalid(loan(json!({"adjustable": "index:5"})), "/adjustable")
            .saying("must be an object"),
        // A rate path without adjustable terms.
        Refusal::invalid(get("rate_path=highest"), "rate_path")
            .saying("adjustable-rate loan"),
        Refusal::invalid(
            loan(json!({"adjustable": null, "rate_path": "highest"})),
            "/rate_path",
        )
        .saying("adjustable-rate loan"),
        // The index-values path without index values.
        Refusal::invalid(get(&format!("{compact}&rate_path=index_values")), "index_values")
            .saying("is required"),
        Refusal::invalid(loan(json!({"rate_path": "index_values"})), "/index_values")
            .saying("is required"),
        // Adjustable terms and rate changes together.
        Refusal::invalid(get(&format!("{compact}&rate_changes=61:7")), "rate_changes")
            .saying("not both"),
        Refusal::invalid(
            loan(json!({"rate_changes": [{"at": 61, "annual_rate_percent": "7"}]})),
            "/rate_changes",
        )
        .saying("not both"),
        // Adjustable terms with the term given as a payment.
        Refusal::invalid(
            Ask::Get(format!(
                "{SCHEDULE}?principal=200000&annual_rate_percent=6&payment=1199.10&{compact}"
            )),
            "payment",
        )
        .saying("needs its term"),
        Refusal::invalid(
            loan(json!({"term_months": null, "payment": "1199.10"})),
            "/payment",
        )
        .saying("needs its term"),
        // The same refusals on the check and the CSV schedule.
        Refusal::invalid(
            Ask::Get(format!(
                "{CHECK}?{FIXED_QUERY}&adjustable=index:5,margin:2.5,first_change:61,every:12,cap:-1,max:11"
            )),
            "adjustable.periodic_cap_percent",
        ),
        Refusal::invalid(
            Ask::Json(CHECK, arm(json!({"adjustable": arm_terms(json!({"floor_percent": "12"}))}))),
            "/adjustable/floor_percent",
        ),
        Refusal::invalid(
            Ask::Get(format!(
                "{SCHEDULE_CSV}?{FIXED_QUERY}&adjustable=index:5,margin:2.5,first_change:400,every:12,max:11"
            )),
            "adjustable.first_change_payment",
        ),
    ];

    // Act and assert
    assert_refusals(&app, &cases);
}

#[test]
fn several_bad_terms_are_reported_at_once_beside_the_loans_own() {
    // Arrange: an index that is no number, no first change, an unknown key, a
    // principal that is no number and a rate path that does not exist.
    let app = shared_app();
    let query = format!(
        "{SCHEDULE}?principal=abc&annual_rate_percent=6&term_months=360&rate_path=sideways\
         &adjustable=index:x,margin:2.5,every:12,max:11,colour:red"
    );
    let body = json!({
        "principal": "abc", "annual_rate_percent": "6", "term_months": 360,
        "rate_path": "sideways",
        "adjustable": {"index_percent": "x", "margin_percent": "2.5", "change_every": 12,
                       "lifetime_max_percent": "11", "colour": "red"}
    });

    // Act
    let by_query = app.get(&query);
    let by_post = app.post_json(SCHEDULE, &body);

    // Assert
    let p = assert_field_problem(&by_query, 422, "invalid-fields", "adjustable.index_percent");
    let mut found = pointers(&p);
    found.sort();
    assert_eq!(
        found,
        [
            "adjustable",
            "adjustable.first_change_payment",
            "adjustable.index_percent",
            "principal",
            "rate_path",
        ],
        "{p}"
    );
    let p = assert_field_problem(&by_post, 422, "invalid-fields", "/adjustable/index_percent");
    let mut found = pointers(&p);
    found.sort();
    assert_eq!(
        found,
        [
            "/adjustable/colour",
            "/adjustable/first_change_payment",
            "/adjustable/index_percent",
            "/principal",
            "/rate_path",
        ],
        "{p}"
    );
    assert_eq!(p["detail"], "5 fields need attention");
}

// ---------------------------------------------------------------------------
// The checks pipeline
// ---------------------------------------------------------------------------

/// A fixed row, the comment 17(c)(1)-10 loan quoted at 11.63 % and at 11.95 %,
/// and that loan without its lifetime maximum.
const PIPELINE_FILE: &str =
    "id,principal,annual_rate_percent,term_months,quoted_payment,quoted_apr_percent,adjustable\r\n\
fixed,100000,6,360,599.55,6,\r\n\
arm,100000,9,360,804.62,11.63,\"index:10,margin:2,first_change:13,every:12,max:15\"\r\n\
arm-far,100000,9,360,804.62,11.95,\"index:10,margin:2,first_change:13,every:12,max:15\"\r\n\
arm-bad,100000,9,360,804.62,11.63,\"index:10,margin:2,first_change:13,every:12\"\r\n";

#[test]
fn the_checks_pipeline_reads_an_adjustable_column_and_answers_each_row() {
    // Arrange
    let app = shared_app();

    // Act
    let csv = app.post(CHECKS, "text/csv", PIPELINE_FILE.as_bytes());
    let nd = app.request(
        "POST",
        CHECKS,
        &[
            ("Content-Type", "text/csv"),
            ("Accept", "application/x-ndjson"),
        ],
        Some(PIPELINE_FILE.as_bytes()),
    );

    // Assert
    assert_eq!(csv.status, 200, "{}", csv.text());
    assert_eq!(csv.media_type(), "text/csv");
    assert_eq!(csv.header("residue-rows"), Some("4"));
    let lines: Vec<&str> = csv.text().split("\r\n").filter(|l| !l.is_empty()).collect();
    assert!(lines[0].starts_with("id,line,status,computed_payment,"));
    // (id, line, status, apr_tolerance_points): the cells before `reason`
    // hold no commas.
    let verdicts: Vec<(&str, &str, &str, &str)> = lines[1..]
        .iter()
        .map(|l| {
            let c: Vec<&str> = l.split(',').collect();
            (c[0], c[1], c[2], c[10])
        })
        .collect();
    // §1026.22(a)(2) and (3): 1/8 point for the regular fixed loan, 1/4 for
    // the adjustable ones; 11.95 is 0.32 over the computed 11.63.
    assert_eq!(
        verdicts,
        [
            ("fixed", "2", "ok", "0.125"),
            ("arm", "3", "ok", "0.25"),
            ("arm-far", "4", "differs", "0.25"),
            ("arm-bad", "5", "error", ""),
        ]
    );
    assert_eq!(nd.status, 200, "{}", nd.text());
    assert_eq!(nd.media_type(), "application/x-ndjson");
    let out: Vec<Value> = nd
        .text()
        .lines()
        .map(|l| serde_json::from_str(l).expect("every answer line is JSON"))
        .collect();
    assert_eq!(out.len(), 4);
    let adjustable = &out[1];
    assert_eq!(adjustable["apr_tolerance_points"], "0.25");
    assert_eq!(adjustable["computed_payment"], "804.62"); // comment 17(c)(1)-10
    assert_eq!(adjustable["apr_percent"], "11.63"); // comment 17(c)(1)-10
    assert_eq!(adjustable["apr_within_tolerance"], true);
    assert_eq!(out[0]["apr_tolerance_points"], "0.125");
    assert_eq!(out[2]["apr_within_tolerance"], false);
    assert!(
        out[3]["reason"]
            .as_str()
            .unwrap()
            .starts_with("adjustable.lifetime_max_percent: "),
        "{}",
        out[3]["reason"]
    );
    // The ARM rows' verdicts are the single check's, by their check_url.
    for v in &out[1..3] {
        let url = v["check_url"].as_str().unwrap();
        assert!(url.contains("adjustable="), "{url}");
        let single = app.get_ok(&url.replace("/check?", "/api/v1/loans/check?"));
        for key in [
            "computed_payment",
            "apr_percent",
            "apr_tolerance_points",
            "apr_within_tolerance",
            "finance_charge",
        ] {
            assert_eq!(v[key], single[key], "{key} of {}", v["id"]);
        }
    }
}
