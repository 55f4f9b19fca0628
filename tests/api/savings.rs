//! `/api/v1/savings/plan` (JSON, GET and POST) and `/api/v1/savings/plan.csv`.
//!
//! The posted ledgers are checked against an independent simulation written here:
//! each period, interest = balance × periodic rate rounded half up to the cent
//! (on the balance after the deposit when deposits are at the start of the period);
//! a withdrawal never takes more than the balance. Closed-form figures are checked
//! against the annuity formulas of common practice (no source).

use rust_decimal::{Decimal, MathematicalOps, RoundingStrategy};
use serde_json::{json, Value};

use crate::helpers::{
    assert_field_problem, assert_problem, assert_still_healthy, dec, dec_of, shared_app, TestApp,
};

const PLAN: &str = "/api/v1/savings/plan";
const PLAN_CSV: &str = "/api/v1/savings/plan.csv";

/// The plan of these fields, posted as JSON; the answer must be 200 JSON.
fn plan_of(app: &TestApp, body: Value) -> Value {
    let r = app.post_json(PLAN, &body);
    assert_eq!(r.status, 200, "body: {}", r.text());
    assert_eq!(r.media_type(), "application/json");
    r.json()
}

fn rows(s: &Value) -> &Vec<Value> {
    s["schedule"].as_array().expect("a schedule array")
}

fn cents(x: Decimal) -> Decimal {
    x.round_dp_with_strategy(2, RoundingStrategy::MidpointAwayFromZero)
}

/// The posted ledger simulated independently: `deposits[k]` is period k's flow (a
/// withdrawal negative); stops when a withdrawal empties the balance. Returns
/// (deposit, interest, balance) per row.
fn simulate(
    opening: Decimal,
    rate: Decimal,
    deposits: impl Iterator<Item = Decimal>,
    at_start: bool,
) -> Vec<(Decimal, Decimal, Decimal)> {
    let mut balance = opening;
    let mut out = Vec::new();
    for mut d in deposits {
        let interest;
        if at_start {
            if d < Decimal::ZERO && balance + d <= Decimal::ZERO {
                d = -balance;
            }
            balance += d;
            interest = cents(balance * rate);
            balance += interest;
        } else {
            interest = cents(balance * rate);
            if d < Decimal::ZERO && balance + interest + d <= Decimal::ZERO {
                d = -(balance + interest);
            }
            balance += interest + d;
        }
        out.push((d, interest, balance));
        if balance.is_zero() && d < Decimal::ZERO {
            break;
        }
    }
    out
}

/// The answer's rows equal the simulation, and the summary equals the rows' sums.
fn assert_ledger_matches(s: &Value, want: &[(Decimal, Decimal, Decimal)]) {
    let rows = rows(s);
    assert_eq!(rows.len(), want.len(), "rows posted");
    let (mut deposited, mut withdrawn, mut interest) =
        (Decimal::ZERO, Decimal::ZERO, Decimal::ZERO);
    for (index, (row, (d, i, b))) in rows.iter().zip(want).enumerate() {
        assert_eq!(row["number"], index + 1, "rows are numbered from 1: {row}");
        assert_eq!(dec_of(&row["deposit"]), *d, "deposit: {row}");
        assert_eq!(dec_of(&row["interest"]), *i, "interest: {row}");
        assert_eq!(dec_of(&row["balance"]), *b, "balance: {row}");
        if *d >= Decimal::ZERO {
            deposited += d;
        } else {
            withdrawn -= d;
        }
        interest += i;
    }
    let summary = &s["summary"];
    assert_eq!(summary["number_of_periods"], rows.len());
    assert_eq!(dec_of(&summary["total_deposited"]), deposited);
    assert_eq!(dec_of(&summary["total_withdrawn"]), withdrawn);
    assert_eq!(dec_of(&summary["total_interest"]), interest);
    if let Some(last) = want.last() {
        assert_eq!(dec_of(&summary["final_balance"]), last.2);
    }
}

fn monthly(percent: &str) -> Decimal {
    dec(percent) / dec("1200")
}

fn has_note(s: &Value, text: &str) -> bool {
    s["notes"]
        .as_array()
        .expect("notes")
        .iter()
        .any(|n| n.as_str().is_some_and(|n| n.contains(text)))
}

#[test]
fn post_and_get_give_identical_json_for_the_same_savings_fields() {
    // Arrange
    let app = shared_app();
    let body = json!({
        "opening_balance": "1000",
        "deposit": "350",
        "deposit_timing": "start",
        "deposit_frequency": "monthly",
        "deposit_growth_percent": "3",
        "deposit_growth_every": "year",
        "deposit_step": "10",
        "annual_rate_percent": "4.1",
        "compounding": "daily",
        "term_months": 96,
        "start_date": "2027-01-31",
        "currency": "EUR"
    });
    let query = "opening_balance=1000&deposit=350&deposit_timing=start&deposit_frequency=monthly\
                 &deposit_growth_percent=3&deposit_growth_every=year&deposit_step=10\
                 &annual_rate_percent=4.1&compounding=daily&term_months=96\
                 &start_date=2027-01-31&currency=EUR";

    // Act
    let posted = app.post_json(PLAN, &body);
    let got = app.get(&format!("{PLAN}?{query}"));

    // Assert
    assert_eq!(posted.status, 200, "{}", posted.text());
    assert_eq!(got.status, 200, "{}", got.text());
    assert_eq!(posted.json(), got.json());
}

#[test]
fn three_hundred_fifty_a_month_for_eight_years_at_4_1_percent_matches_the_ordinary_annuity() {
    // Arrange
    let app = shared_app();
    let i = monthly("4.1");

    // Act
    let s = plan_of(
        &app,
        json!({"deposit": "350", "annual_rate_percent": "4.1", "term_months": 96}),
    );

    // Assert
    let summary = &s["summary"];
    assert_eq!(summary["solved_for"], "final_balance");
    assert_eq!(summary["deposit"], "350.00");
    assert_eq!(summary["total_deposited"], "33600.00");
    assert_eq!(summary["goal_reached_at"], Value::Null);
    // Future value = P·((1 + i)^n − 1)/i (common practice, no source); the posted ledger rounds
    // each period's interest, so it may differ by a few cents.
    let accumulated = dec("350") * ((Decimal::ONE + i).powi(96) - Decimal::ONE) / i;
    let final_balance = dec_of(&summary["final_balance"]);
    assert!(
        (final_balance - accumulated).abs() < dec("0.50"),
        "{final_balance} vs {accumulated}"
    );
    let want = simulate(Decimal::ZERO, i, std::iter::repeat_n(dec("350"), 96), false);
    assert_ledger_matches(&s, &want);
    // The derivation's closed form, read back from its strings: x[96] is the annuity.
    let modes = s["derivation"]["period"]["closed_form"]["modes"]
        .as_array()
        .unwrap();
    let x96: Decimal = modes
        .iter()
        .map(|m| dec_of(&m["polynomial"][0]) * dec_of(&m["pole"]).powi(96))
        .sum();
    assert!(
        (x96 - accumulated).abs() < dec("1e-15"),
        "{x96} vs {accumulated}"
    );
    // Regulation DD (12 CFR 1030) Appendix A, Part I.A: a 365-day year's interest on
    // 1,000 at 4.1 % compounded monthly is 1000·((1 + 0.041/12)^12 − 1) = 41.78…, so
    // APY = 100·41.78…/1000 = 4.18.
    assert_eq!(summary["apy_percent"], "4.18");
    let r = &s["reconciliation"];
    assert!(
        dec_of(&r["largest_drift"]) <= dec_of(&r["drift_bound"]),
        "{r}"
    );
    assert!(has_note(
        &s,
        "Compounding taken equal to the deposit frequency"
    ));
    assert!(s["notes"][0]
        .as_str()
        .unwrap()
        .starts_with("Estimates for discussion only"));
}

#[test]
fn deposits_at_the_start_of_each_period_match_the_annuity_due_and_say_so() {
    // Arrange
    let app = shared_app();
    let i = monthly("6");

    // Act
    let s = plan_of(
        &app,
        json!({"deposit": "100", "annual_rate_percent": "6", "term_periods": 120, "deposit_timing": "start"}),
    );

    // Assert
    // Future value of an annuity due = P·((1 + i)^n − 1)/i·(1 + i) (common practice, no source).
    let accumulated =
        dec("100") * ((Decimal::ONE + i).powi(120) - Decimal::ONE) / i * (Decimal::ONE + i);
    let final_balance = dec_of(&s["summary"]["final_balance"]);
    assert!(
        (final_balance - accumulated).abs() < dec("0.50"),
        "{final_balance} vs {accumulated}"
    );
    let input = &s["derivation"]["period"]["recurrence"]["inputs"][0];
    assert_eq!(input["kind"], "step");
    assert_eq!(dec_of(&input["amount"]), dec("100.5"), "the deposit a·d");
    let steps = s["derivation"]["steps"].as_array().unwrap();
    assert!(steps[0].as_str().unwrap().contains("shifted by one period"));
    assert!(has_note(&s, "shifted by one period"));
    let want = simulate(Decimal::ZERO, i, std::iter::repeat_n(dec("100"), 120), true);
    assert_ledger_matches(&s, &want);
}

#[test]
fn the_csv_schedule_has_a_header_crlf_lines_dates_and_the_json_figures() {
    // Arrange
    let app = shared_app();
    let query = "deposit=350&annual_rate_percent=4.1&term_months=24&start_date=2027-01-31";
    let s = app.get(&format!("{PLAN}?{query}")).json();

    // Act
    let r = app.get(&format!("{PLAN_CSV}?{query}"));

    // Assert
    assert_eq!(r.status, 200);
    assert_eq!(r.media_type(), "text/csv");
    let body = r.text();
    assert!(body.ends_with("\r\n"), "the last line ends with CRLF");
    assert_eq!(body.matches('\n').count(), body.matches("\r\n").count());
    let lines: Vec<&str> = body.trim_end_matches("\r\n").split("\r\n").collect();
    assert_eq!(lines[0], "number,date,deposit,interest,balance");
    let json_rows = rows(&s);
    assert_eq!(lines.len() - 1, json_rows.len());
    for (line, row) in lines[1..].iter().zip(json_rows) {
        let expected = format!(
            "{},{},{},{},{}",
            row["number"],
            row["date"].as_str().unwrap(),
            row["deposit"].as_str().unwrap(),
            row["interest"].as_str().unwrap(),
            row["balance"].as_str().unwrap()
        );
        assert_eq!(*line, expected);
    }
    // Calendar months with month-end clamping: Jan 31 → Feb 28 → Mar 31 → Apr 30.
    assert_eq!(json_rows[0]["date"], "2027-02-28");
    assert_eq!(json_rows[1]["date"], "2027-03-31");
    assert_eq!(json_rows[2]["date"], "2027-04-30");
    assert_eq!(json_rows[23]["date"], "2029-01-31");
}

#[test]
fn accept_text_csv_on_the_plain_get_gives_the_csv_schedule_with_empty_dates() {
    // Arrange
    let app = shared_app();
    let query = "deposit=50&annual_rate_percent=2&term_periods=3";

    // Act
    let r = app.get_with(&format!("{PLAN}?{query}"), &[("Accept", "text/csv")]);

    // Assert
    assert_eq!(r.status, 200);
    assert_eq!(r.media_type(), "text/csv");
    let lines: Vec<&str> = r.text().trim_end_matches("\r\n").split("\r\n").collect();
    assert_eq!(lines.len(), 4);
    assert!(lines[1].starts_with("1,,50.00,"), "{}", lines[1]);
}

#[test]
fn the_deposit_for_40000_by_june_2031_is_solved_and_reaches_the_goal() {
    // Arrange
    let app = shared_app();
    let i = monthly("4.1");

    // Act
    let s = plan_of(
        &app,
        json!({"goal": "40000", "annual_rate_percent": "4.1", "term_months": 72, "start_date": "2025-06-01"}),
    );

    // Assert
    let summary = &s["summary"];
    assert_eq!(summary["solved_for"], "deposit");
    // P = G·i/((1 + i)^n − 1) (common practice, no source) = 490.9648…, rounded up.
    let exact = dec("40000") * i / ((Decimal::ONE + i).powi(72) - Decimal::ONE);
    let deposit = dec_of(&summary["deposit"]);
    assert_eq!(
        deposit,
        exact.round_dp_with_strategy(2, RoundingStrategy::AwayFromZero)
    );
    let solution = &s["derivation"]["deposit_solution"];
    assert!((dec_of(&solution["exact"]) - exact).abs() < dec("1e-18"));
    let want = simulate(Decimal::ZERO, i, std::iter::repeat_n(deposit, 72), false);
    assert_ledger_matches(&s, &want);
    assert!(dec_of(&summary["final_balance"]) >= dec("40000"));
    let short = simulate(
        Decimal::ZERO,
        i,
        std::iter::repeat_n(deposit - dec("0.01"), 72),
        false,
    );
    assert!(
        short.last().unwrap().2 < dec("40000"),
        "one cent less falls short"
    );
    assert_eq!(
        summary["goal_reached_at"],
        json!({"period": 72, "date": "2031-06-01"})
    );
}

#[test]
fn a_goal_already_met_by_the_opening_balance_answers_a_zero_deposit_with_a_note() {
    // Arrange
    let app = shared_app();

    // Act
    let s = plan_of(
        &app,
        json!({"opening_balance": "50000", "goal": "40000", "annual_rate_percent": "4.1", "term_months": 12}),
    );

    // Assert
    assert_eq!(s["summary"]["deposit"], "0.00");
    assert_eq!(s["summary"]["goal_reached_at"]["period"], 0);
    assert!(has_note(&s, "already meets the goal"));
}

#[test]
fn growing_deposits_reach_the_goal_after_the_periods_the_ledger_shows() {
    // Arrange
    let app = shared_app();
    let i = monthly("4.1");

    // Act
    let s = plan_of(
        &app,
        json!({
            "deposit": "350", "deposit_growth_percent": "3", "goal": "40000",
            "annual_rate_percent": "4.1", "start_date": "2025-07-01"
        }),
    );

    // Assert
    let summary = &s["summary"];
    assert_eq!(summary["solved_for"], "number_of_periods");
    // 350 in the first year, 350·1.03^y (rounded half up to the cent) in year y.
    let deposits = (0..6000u32).map(|k| cents(dec("350") * dec("1.03").powi(i64::from(k / 12))));
    let mut want = Vec::new();
    for row in simulate(Decimal::ZERO, i, deposits, false) {
        want.push(row);
        if row.2 >= dec("40000") {
            break;
        }
    }
    assert_ledger_matches(&s, &want);
    let n = want.len();
    assert_eq!(summary["number_of_periods"], n);
    assert_eq!(summary["goal_reached_at"]["period"], n);
    assert!(want[n - 2].2 < dec("40000"));
    let derivation = &s["derivation"];
    assert_eq!(derivation["periods_solution"]["method"], "bisection");
    assert_eq!(derivation["periods_solution"]["n"], n);
    assert_eq!(derivation["yearly"]["periods_per_year"], 12);
    assert!(derivation["yearly"]["closed_form"]["text"]
        .as_str()
        .unwrap()
        .starts_with("x[k] ="));
}

#[test]
fn level_deposits_reach_the_goal_through_the_logarithm_confirmed_exactly() {
    // Arrange
    let app = shared_app();
    let i = monthly("5");
    // n = ln((G·i + P)/P)/ln(1 + i) (common practice, no source), rounded up: the
    // closed form confirms it at n − 1 and n.
    let estimate = ((dec("100000") * i + dec("500")) / dec("500")).ln() / (Decimal::ONE + i).ln();

    // Act
    let s = plan_of(
        &app,
        json!({"deposit": "500", "goal": "100000", "annual_rate_percent": "5"}),
    );

    // Assert
    let p = &s["derivation"]["periods_solution"];
    assert_eq!(p["method"], "logarithm");
    assert_eq!(p["n"], estimate.ceil().to_string().parse::<u64>().unwrap());
    assert!(dec_of(&p["balance_before"]) < dec("100000"));
    assert!(dec_of(&p["balance_at"]) >= dec("100000"));
}

#[test]
fn eighteen_hundred_a_month_from_310000_at_3_5_percent_lasts_240_withdrawals() {
    // Arrange
    let app = shared_app();
    let i = monthly("3.5");

    // Act
    let s = plan_of(
        &app,
        json!({"opening_balance": "310000", "withdrawal": "1800", "annual_rate_percent": "3.5"}),
    );

    // Assert
    let summary = &s["summary"];
    assert_eq!(summary["solved_for"], "number_of_periods");
    assert_eq!(summary["withdrawal"], "1800.00");
    assert_eq!(summary["deposit"], Value::Null);
    assert_eq!(summary["lasts_indefinitely"], false);
    let want = simulate(
        dec("310000"),
        i,
        std::iter::repeat_n(dec("-1800"), 6000),
        false,
    );
    // n = −ln(1 − x0·i/W)/ln(1 + i) = 239.6 (common practice, no source): 240 withdrawals.
    assert_eq!(want.len(), 240);
    assert_ledger_matches(&s, &want);
    assert_eq!(summary["final_balance"], "0.00");
    let last = rows(&s).last().unwrap();
    let last_withdrawal = -dec_of(&last["deposit"]);
    assert!(last_withdrawal > Decimal::ZERO && last_withdrawal < dec("1800"));
    assert_eq!(
        dec_of(&summary["total_withdrawn"]),
        dec("310000") + dec_of(&summary["total_interest"])
    );
    assert!(has_note(&s, "supports 240 withdrawals (20 years)"));
}

#[test]
fn withdrawals_below_the_interest_last_indefinitely_as_a_note_not_an_error() {
    // Arrange
    let app = shared_app();

    // Act
    let s = plan_of(
        &app,
        json!({"opening_balance": "310000", "withdrawal": "900", "annual_rate_percent": "3.5"}),
    );

    // Assert
    assert_eq!(s["summary"]["lasts_indefinitely"], true);
    assert!(has_note(&s, "lasts indefinitely"));
    assert_eq!(rows(&s).len(), 12, "the first year");
}

#[test]
fn the_withdrawal_that_exhausts_310000_over_20_years_is_solved() {
    // Arrange
    let app = shared_app();
    let i = monthly("3.5");

    // Act
    let s = plan_of(
        &app,
        json!({"opening_balance": "310000", "annual_rate_percent": "3.5", "term_months": 240}),
    );

    // Assert
    let summary = &s["summary"];
    assert_eq!(summary["solved_for"], "withdrawal");
    // W = x0·i/(1 − (1 + i)^−n) (common practice, no source), to the nearest cent.
    let exact = dec("310000") * i / (Decimal::ONE - (Decimal::ONE + i).powi(-240));
    let w = dec_of(&summary["withdrawal"]);
    assert_eq!(w, cents(exact));
    assert_eq!(summary["final_balance"], "0.00");
    assert_eq!(rows(&s).len(), 240);
    for row in &rows(&s)[..239] {
        assert_eq!(-dec_of(&row["deposit"]), w, "{row}");
    }
}

#[test]
fn monthly_deposits_with_daily_compounding_use_the_equivalent_rate_and_the_daily_apy() {
    // Arrange
    let app = shared_app();

    // Act
    let s = plan_of(
        &app,
        json!({"deposit": "100", "annual_rate_percent": "5", "compounding": "daily", "term_months": 12}),
    );

    // Assert
    // Regulation DD (12 CFR 1030) Appendix A, Part I.A, 365-day year: the year's
    // interest on 1,000 at 5 % compounded daily is 1000·((1 + 0.05/365)^365 − 1) =
    // 51.27, so APY = 5.13.
    assert_eq!(s["summary"]["apy_percent"], "5.13");
    assert_eq!(s["summary"]["compounding"], "daily");
    let i = dec_of(&s["summary"]["periodic_rate"]);
    let back = (Decimal::ONE + i).powi(12);
    let direct = (Decimal::ONE + dec("0.05") / dec("365")).powi(365);
    assert!((back - direct).abs() < dec("1e-22"));
    assert!(has_note(&s, "equivalent rate"));
}

// ---------------------------------------------------------------------------
// Bad input
// ---------------------------------------------------------------------------

fn post_plan(app: &TestApp, body: Value) -> crate::helpers::Response {
    app.post_json(PLAN, &body)
}

#[test]
fn negative_amounts_are_refused_each_at_its_field() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_plan(
        &app,
        json!({"opening_balance": "-1", "deposit": "-350", "deposit_step": "-5", "annual_rate_percent": "4", "term_months": 12}),
    );

    // Assert
    for pointer in ["/opening_balance", "/deposit", "/deposit_step"] {
        assert_field_problem(&r, 422, "invalid-fields", pointer);
    }
    let r = post_plan(
        &app,
        json!({"opening_balance": "1000", "withdrawal": "-5", "annual_rate_percent": "4"}),
    );
    assert_field_problem(&r, 422, "invalid-fields", "/withdrawal");
    let r = post_plan(
        &app,
        json!({"goal": "-5", "annual_rate_percent": "4", "term_months": 12}),
    );
    assert_field_problem(&r, 422, "invalid-fields", "/goal");
    assert_still_healthy(&app);
}

#[test]
fn growth_above_100_percent_a_year_is_refused_at_deposit_growth_percent() {
    // Arrange
    let app = shared_app();

    // Act
    let yearly = post_plan(
        &app,
        json!({"deposit": "100", "deposit_growth_percent": "100.01", "annual_rate_percent": "4", "term_months": 12}),
    );
    let monthly = app.get(&format!(
        "{PLAN}?deposit=100&deposit_growth_percent=6&deposit_growth_every=period&annual_rate_percent=4&term_months=12"
    ));

    // Assert
    assert_field_problem(&yearly, 422, "invalid-fields", "/deposit_growth_percent");
    // 6 % a month compounds to 1.06^12 − 1 = 101 % a year.
    assert_field_problem(&monthly, 422, "invalid-fields", "deposit_growth_percent");
}

#[test]
fn terms_over_6000_periods_are_refused_at_the_term_field() {
    // Arrange
    let app = shared_app();

    // Act
    let periods = post_plan(
        &app,
        json!({"deposit": "100", "annual_rate_percent": "4", "term_periods": 6001}),
    );
    let months = post_plan(
        &app,
        json!({"deposit": "100", "annual_rate_percent": "4", "term_months": 1500, "deposit_frequency": "weekly"}),
    );

    // Assert
    assert_field_problem(&periods, 422, "invalid-fields", "/term_periods");
    // 1,500 months of weekly deposits is 6,500 periods.
    assert_field_problem(&months, 422, "invalid-fields", "/term_months");
}

#[test]
fn a_goal_that_can_never_be_reached_is_no_solution_naming_the_deposit() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_plan(
        &app,
        json!({"opening_balance": "100", "deposit": "0", "goal": "1000", "annual_rate_percent": "0"}),
    );
    let far = post_plan(
        &app,
        json!({"deposit": "0.01", "goal": "1000000", "annual_rate_percent": "0"}),
    );

    // Assert
    assert_field_problem(&r, 422, "no-solution", "/deposit");
    assert_field_problem(&far, 422, "no-solution", "/goal");
}

#[test]
fn too_many_or_too_few_fields_to_fix_the_unknown_are_refused_with_pointers() {
    // Arrange
    let app = shared_app();

    // Act
    let both_flows = post_plan(
        &app,
        json!({"opening_balance": "10", "deposit": "1", "withdrawal": "1", "annual_rate_percent": "4", "term_months": 12}),
    );
    let over = post_plan(
        &app,
        json!({"deposit": "1", "goal": "100", "annual_rate_percent": "4", "term_months": 12}),
    );
    let under = post_plan(&app, json!({"deposit": "1", "annual_rate_percent": "4"}));
    let nothing = app.get(&format!("{PLAN}?annual_rate_percent=4"));

    // Assert
    assert_field_problem(&both_flows, 422, "invalid-fields", "/withdrawal");
    assert_field_problem(&over, 422, "invalid-fields", "/goal");
    assert_field_problem(&under, 422, "invalid-fields", "/term_months");
    assert_field_problem(&nothing, 422, "invalid-fields", "deposit");
}

#[test]
fn unknown_fields_bad_dates_and_bad_choices_are_all_reported_at_once() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_plan(
        &app,
        json!({
            "deposit": "100", "annual_rate_percent": "4", "term_months": 12,
            "start_date": "2027-02-30", "deposit_timing": "middle",
            "deposit_frequency": "daily", "deposti": "1"
        }),
    );

    // Assert
    for pointer in [
        "/start_date",
        "/deposit_timing",
        "/deposit_frequency",
        "/deposti",
    ] {
        assert_field_problem(&r, 422, "invalid-fields", pointer);
    }
    let p = assert_problem(&r, 422, "invalid-fields");
    assert!(p["detail"].as_str().unwrap().contains("4 fields"), "{p}");
}

#[test]
fn a_drawdown_without_an_opening_balance_is_refused_at_opening_balance() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_plan(
        &app,
        json!({"withdrawal": "100", "annual_rate_percent": "4"}),
    );

    // Assert
    assert_field_problem(&r, 422, "invalid-fields", "/opening_balance");
}
