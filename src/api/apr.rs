//! `POST /api/v1/apr` and `GET /api/v1/apr?…`: the APR of any stream of
//! advances and payments, by the actuarial method of Regulation Z (12 CFR 1026
//! Appendix J) or as the EU APRC (Directive 2008/48/EC Annex I).
//!
//! # The JSON body
//!
//! ```text
//! {
//!   "method": "us_actuarial" | "eu_aprc",            (default us_actuarial)
//!   "currency": "USD",                               (default USD, EUR for eu_aprc: amounts have its decimals)
//!   "unit_period": …,                                (flows in unit-periods only, or to impose one)
//!   "advances": [flow, …],
//!   "payments": [flow, …]
//! }
//! ```
//!
//! Each flow is one of:
//! - dated: `{"amount": "5000", "date": "1978-01-10"}`;
//! - a dated series: `{"amount": "230", "count": 24, "first_date": "1978-02-10", "frequency": "monthly"}`
//!   (frequencies `annual` … `weekly` and `daily`, dates as [`PaymentSeries::dates`] lays them out);
//! - in unit-periods: `{"amount": "200", "periods": 1, "fraction": "19/30", "count": 36}`:
//!   t full unit-periods and a fraction f (a decimal, or a ratio `"n/d"`, default 0)
//!   from the start of the term, `count` equal flows one unit-period apart (default 1).
//!
//! Dated flows find their unit-period by Appendix J (b)(4), unless `unit_period`
//! is given; flows in unit-periods need `unit_period`: `"month"`, `"semimonth"`,
//! `"quarter"`, `"year"`, `"week"`, `"day"`, `{"weeks": n}`, `{"months": n}` or
//! `{"days": n}` (also written `"2 weeks"`, `"6 months"`, `"255 days"`). The
//! dated and unit-period forms cannot be mixed. `eu_aprc` takes dated flows only:
//! the advances are its drawdowns, the payments its repayments and charges.
//!
//! # The query string (GET)
//!
//! The same request, compactly: `advance` and `payment` are repeated, or hold
//! several flows separated by commas; `method`, `currency` and `unit_period` are
//! as in JSON.
//!
//! ```text
//! amount@date                       5000@1978-01-10
//! amount x count @ date/frequency   230x24@1978-02-10/monthly
//! amount@t                          1080@1              (unit-periods)
//! amount@t f                        200@1+19/30         (t = 1, f = 19/30; "+" is a space in a URL)
//! amount x count @ t f              219.17x24@0+0.4
//! unit_period=2+weeks  (or 2weeks, 255days, month, …)
//! ```
//!
//! For example `/api/v1/apr?advance=5000@1978-01-10&payment=230x24@1978-02-10/monthly`
//! is Appendix J (c)(1)(i), and
//! `/api/v1/apr?unit_period=month&advance=6000@0&payment=200x36@1+19/30` is (c)(1)(ii).
//! Errors point at the parameter's name (`payment`) and quote the flow.
//!
//! # The answer
//!
//! `apr_percent` (two decimals, halves up; the APRC one decimal), `apr_percent_full`,
//! `unit_period`, `unit_periods_per_year`, `periodic_rate`, `unit_period_rule`
//! (which rule of (b)(4) chose the unit-period, or `given`), `flows` (each advance
//! and payment with its t and f; the APRC gives `years` instead), and `notes`.

use rust_decimal::prelude::ToPrimitive;
use rust_decimal::Decimal;
use serde::Serialize;

use super::handlers::{json_answer, JsonBody};
use crate::answer::derivation::full;
use crate::engine::apr::{
    apr_from_dates, apr_from_dates_with_unit, solve_apr, solve_aprc_with, AprcTimeBasis,
    AprcTimeChoice, DatedFlow, UnitFlow, UnitPeriod, UnitPeriodRule,
};
use crate::engine::disclosure::TOOL_NOT_OPINION;
use crate::engine::money::Currency;
use crate::engine::schedule::CAUTION;
use crate::engine::EngineError;
use crate::input::apr::{read_json, read_query, AprRequest, FlowSpec, Method, RequestedFlow};
use crate::input::http::query_pairs;
use crate::input::problem::ApiError;

use axum::extract::RawQuery;
use axum::response::Response;

/// One advance or payment of the answer, placed in unit-periods (or years).
#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct FlowDto {
    /// `advance` or `payment`.
    pub kind: &'static str,
    pub amount: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub date: Option<String>,
    /// t (or q): full unit-periods from the start of the term.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub periods: Option<u32>,
    /// f (or e): the remaining fraction of a unit-period, full precision.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub fraction: Option<String>,
    /// The fraction as Appendix J writes it ("19/30", "6/15"), when it is one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub fraction_ratio: Option<String>,
    /// A run of equal flows one unit-period apart (flows given in unit-periods).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub count: Option<u32>,
    /// EU APRC: years from the first drawdown.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub years: Option<String>,
}

/// The JSON answer of the APR operation.
#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct AprAnswer {
    pub method: &'static str,
    /// Two decimals, halves up (the APRC: one decimal, halves up).
    pub apr_percent: String,
    pub apr_percent_full: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub unit_period: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub unit_periods_per_year: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub periodic_rate: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub unit_period_rule: Option<&'static str>,
    /// EU APRC: how time was counted in years.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub time_basis: Option<&'static str>,
    /// EU APRC: the annual rate X, full precision.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub annual_rate: Option<String>,
    /// The first advance's date: the start of the term (dated flows).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub start_date: Option<String>,
    pub currency: &'static str,
    pub total_advanced: String,
    pub total_of_payments: String,
    /// Steps of the decimal iteration after the first estimate.
    pub iterations: u32,
    pub flows: Vec<FlowDto>,
    pub notes: Vec<String>,
}

/// The rule's interface name.
pub fn rule_name(rule: Option<UnitPeriodRule>) -> &'static str {
    match rule {
        Some(UnitPeriodRule::MostFrequentCommonPeriod) => "most_frequent_common_period",
        Some(UnitPeriodRule::SmallerOfEquallyFrequent) => "smaller_of_equally_frequent_periods",
        Some(UnitPeriodRule::AverageOfPeriods) => "average_period",
        Some(UnitPeriodRule::SingleAdvanceSinglePayment) => "single_advance_single_payment",
        None => "given",
    }
}

fn rule_note(rule: Option<UnitPeriodRule>, unit: UnitPeriod) -> String {
    match rule {
        Some(UnitPeriodRule::MostFrequentCommonPeriod) => format!(
            "Unit-period: the {unit}, the common period that occurs most often (12 CFR 1026 Appendix J (b)(4))."
        ),
        Some(UnitPeriodRule::SmallerOfEquallyFrequent) => format!(
            "Unit-period: the {unit}, the smaller of common periods that occur equally often (Residue's reading of Appendix J (b)(4), unconfirmed)."
        ),
        Some(UnitPeriodRule::AverageOfPeriods) => format!(
            "Unit-period: no period occurs more than once, so the average period is rounded to the nearest standard interval, {unit} (Residue's reading of Appendix J (b)(4), unconfirmed)."
        ),
        Some(UnitPeriodRule::SingleAdvanceSinglePayment) => format!(
            "Unit-period: a single advance and a single payment, so the term itself, at most a year: {unit} (Appendix J (b)(4), (b)(5))."
        ),
        None => format!("Unit-period: the {unit}, as given."),
    }
}

/// The denominators Appendix J writes a fraction of this unit with.
fn denominators(unit: UnitPeriod) -> Vec<u32> {
    match unit {
        UnitPeriod::Month => vec![30],
        UnitPeriod::Semimonth => vec![15],
        UnitPeriod::Months(n) => vec![30 * n],
        UnitPeriod::Quarter => vec![90],
        UnitPeriod::Year => vec![12, 365],
        UnitPeriod::Week => vec![7],
        UnitPeriod::Weeks(n) => vec![7 * n],
        UnitPeriod::Day => vec![],
        UnitPeriod::Days(n) => vec![n],
    }
}

/// "19/30" when f × 30 is whole (to 1e-20) in a month unit, and the like.
pub fn fraction_ratio(f: Decimal, unit: UnitPeriod) -> Option<String> {
    if f.is_zero() {
        return None;
    }
    let near = Decimal::new(1, 20);
    denominators(unit).into_iter().find_map(|den| {
        let k = f.checked_mul(Decimal::from(den))?;
        let whole = k.round();
        ((k - whole).abs() < near).then(|| format!("{}/{den}", whole.to_u64().unwrap_or(0)))
    })
}

fn two_decimals(x: Decimal, dp: u32) -> String {
    let mut r = x;
    r.rescale(dp);
    r.to_string()
}

fn unit_flow_dto(kind: &'static str, flow: &UnitFlow, unit: UnitPeriod, c: Currency) -> FlowDto {
    FlowDto {
        kind,
        amount: c.format(flow.amount),
        date: None,
        periods: Some(flow.periods),
        fraction: Some(full(flow.fraction)),
        fraction_ratio: fraction_ratio(flow.fraction, unit),
        count: (flow.count > 1).then_some(flow.count),
        years: None,
    }
}

/// Lays the requested dated flows out (series expanded), in the order given.
///
/// # Errors
/// A series whose dates leave the calendar, pointed at its item.
fn lay_out(flows: &[RequestedFlow]) -> Result<Vec<DatedFlow>, ApiError> {
    let mut out = Vec::new();
    for f in flows {
        match f.spec {
            FlowSpec::Dated(d) => out.push(d),
            FlowSpec::Series(s) => {
                let laid = s
                    .flows()
                    .map_err(|e| ApiError::fields(vec![f.date_error(e.message)]))?;
                out.extend(laid);
            }
            FlowSpec::Unit(_) => {}
        }
    }
    Ok(out)
}

/// An engine error, pointed at the request's own names.
fn engine_error(e: EngineError, from_query: bool) -> ApiError {
    let name = match e.field {
        Some("advances" | "drawdowns") => Some(if from_query { "advance" } else { "advances" }),
        Some("payments" | "repayments") => Some(if from_query { "payment" } else { "payments" }),
        Some(other) => Some(other),
        None => None,
    };
    let prefix = if from_query { "" } else { "/" };
    ApiError::from_engine(EngineError { field: name, ..e }, prefix)
}

/// Solves the request.
///
/// # Errors
/// A problem naming the field, when the engine refuses the flows.
pub fn answer(req: &AprRequest) -> Result<AprAnswer, ApiError> {
    let c = req.currency;
    let q = req.from_query;
    let mut notes = vec![
        CAUTION.to_string(),
        format!("This APR {}", TOOL_NOT_OPINION.trim_start_matches("This ")),
    ];
    let unit_form = req.advances.iter().any(|f| f.spec.is_unit());
    let total = |flows: &[RequestedFlow]| -> Decimal {
        flows
            .iter()
            .map(|f| match f.spec {
                FlowSpec::Dated(d) => d.amount,
                FlowSpec::Series(s) => s.amount * Decimal::from(s.count),
                FlowSpec::Unit(u) => u.amount * Decimal::from(u.count),
            })
            .sum()
    };
    let total_advanced = c.format(total(&req.advances));
    let total_of_payments = c.format(total(&req.payments));
    if req.method == Method::EuAprc {
        let drawdowns = lay_out(&req.advances)?;
        let repayments = lay_out(&req.payments)?;
        let r = solve_aprc_with(&drawdowns, &repayments, req.time_basis)
            .map_err(|e| engine_error(e, q))?;
        let flows = dated_flows(&drawdowns, &repayments, c, |k, i| {
            let years = if k == "advance" {
                r.drawdowns[i].years
            } else {
                r.repayments[i].years
            };
            (None, None, None, Some(full(years)))
        });
        let basis = r.time_basis.name();
        let chosen = match req.time_basis {
            AprcTimeChoice::Auto => match r.time_basis {
                AprcTimeBasis::EqualMonths => "time_basis auto: every flow falls on a monthly anniversary of the first drawdown, so",
                AprcTimeBasis::Weeks => "time_basis auto: every flow falls a whole number of weeks after the first drawdown, so",
                AprcTimeBasis::Days => "time_basis auto: the flows fall neither on monthly anniversaries nor whole weeks after the first drawdown, so",
            },
            AprcTimeChoice::Basis(_) => "time_basis chosen by the request:",
        };
        notes.push(format!(
            "EU APRC (Directive 2008/48/EC Annex I): Σ drawdowns (1 + X)^(−t) = Σ repayments (1 + X)^(−s), times in years from the first drawdown; {chosen} counted in {} (remark (c)). Residue's reading of the counting rule: whole periods are counted back from each flow's date towards the first drawdown, and the days left are divided by the days (365 or 366) of the complete year counted back from the last of them. Rounded to one decimal, halves up (remark (d)).",
            match r.time_basis {
                AprcTimeBasis::EqualMonths => "equal months (months ÷ 12, plus days left)",
                AprcTimeBasis::Weeks => "weeks (weeks ÷ 52, plus days left)",
                AprcTimeBasis::Days => "days (whole years, plus days left ÷ 365 or 366)",
            }
        ));
        return Ok(AprAnswer {
            method: req.method.name(),
            apr_percent: two_decimals(r.aprc.aprc_percent_rounded, 1),
            apr_percent_full: full(r.aprc.aprc_percent),
            unit_period: None,
            unit_periods_per_year: None,
            periodic_rate: None,
            unit_period_rule: None,
            time_basis: Some(basis),
            annual_rate: Some(full(r.aprc.annual_rate)),
            start_date: drawdowns
                .iter()
                .map(|d| d.date)
                .min()
                .map(|d| d.to_string()),
            currency: c.code(),
            total_advanced,
            total_of_payments,
            iterations: r.aprc.iterations,
            flows,
            notes,
        });
    }
    let (apr, unit, rule, flows, start) = if unit_form {
        let unit = req
            .unit_period
            .expect("finish_request requires a unit-period");
        let pick = |flows: &[RequestedFlow]| -> Vec<UnitFlow> {
            flows
                .iter()
                .filter_map(|f| match f.spec {
                    FlowSpec::Unit(u) => Some(u),
                    _ => None,
                })
                .collect()
        };
        let (advances, payments) = (pick(&req.advances), pick(&req.payments));
        let apr = solve_apr(&advances, &payments, unit).map_err(|e| engine_error(e, q))?;
        let flows: Vec<FlowDto> = advances
            .iter()
            .map(|f| unit_flow_dto("advance", f, unit, c))
            .chain(
                payments
                    .iter()
                    .map(|f| unit_flow_dto("payment", f, unit, c)),
            )
            .collect();
        notes.push(format!("The flows were given in unit-periods of a {unit}."));
        (apr, unit, None, flows, None)
    } else {
        let advances = lay_out(&req.advances)?;
        let payments = lay_out(&req.payments)?;
        let r = match req.unit_period {
            Some(unit) => apr_from_dates_with_unit(&advances, &payments, unit),
            None => apr_from_dates(&advances, &payments),
        }
        .map_err(|e| engine_error(e, q))?;
        let unit = r.unit_period;
        let flows = dated_flows(&advances, &payments, c, |k, i| {
            let f = if k == "advance" {
                r.advances[i]
            } else {
                r.payments[i]
            };
            (
                Some(f.periods),
                Some(full(f.fraction)),
                fraction_ratio(f.fraction, unit),
                None,
            )
        });
        notes.push(rule_note(r.rule, unit));
        (r.apr, unit, r.rule, flows, Some(r.start.to_string()))
    };
    notes.push(
        "12 CFR 1026 Appendix J (b)(8) solved by a bracketed Newton iteration to about 1e-22 in the unit-period rate, far beyond the two decimals (b)(9) asks to be certain; apr_percent is rounded to two decimals, halves up."
            .into(),
    );
    Ok(AprAnswer {
        method: req.method.name(),
        apr_percent: two_decimals(apr.apr_percent_rounded, 2),
        apr_percent_full: full(apr.apr_percent),
        unit_period: Some(unit.to_string()),
        unit_periods_per_year: Some(full(apr.unit_periods_per_year)),
        periodic_rate: Some(full(apr.periodic_rate)),
        unit_period_rule: Some(if unit_form { "given" } else { rule_name(rule) }),
        time_basis: None,
        annual_rate: None,
        start_date: start,
        currency: c.code(),
        total_advanced,
        total_of_payments,
        iterations: apr.iterations,
        flows,
        notes,
    })
}

type Placement = (Option<u32>, Option<String>, Option<String>, Option<String>);

fn dated_flows(
    advances: &[DatedFlow],
    payments: &[DatedFlow],
    c: Currency,
    place: impl Fn(&'static str, usize) -> Placement,
) -> Vec<FlowDto> {
    let one = |kind: &'static str, i: usize, f: &DatedFlow| {
        let (periods, fraction, fraction_ratio, years) = place(kind, i);
        FlowDto {
            kind,
            amount: c.format(f.amount),
            date: Some(f.date.to_string()),
            periods,
            fraction,
            fraction_ratio,
            count: None,
            years,
        }
    };
    advances
        .iter()
        .enumerate()
        .map(|(i, f)| one("advance", i, f))
        .chain(
            payments
                .iter()
                .enumerate()
                .map(|(i, f)| one("payment", i, f)),
        )
        .collect()
}

// ---------------------------------------------------------------------------
// Handlers
// ---------------------------------------------------------------------------

/// `POST /api/v1/apr`
pub async fn apr_post(JsonBody(body): JsonBody) -> Result<Response, ApiError> {
    let req = read_json(&body)?;
    Ok(json_answer(&answer(&req)?))
}

/// `GET /api/v1/apr?…`
pub async fn apr_get(RawQuery(q): RawQuery) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    let req = read_query(&pairs)?;
    Ok(json_answer(&answer(&req)?))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::apr::PaymentSeries;
    use crate::engine::rate::Frequency;
    use crate::input::apr::*;
    use crate::input::json::Json;
    use jiff::civil::date;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    #[test]
    fn fractions_are_decimals_or_ratios_below_one() {
        assert_eq!(parse_fraction("0.4").unwrap(), d("0.4"));
        assert_eq!(
            parse_fraction("19/30").unwrap(),
            Decimal::from(19) / Decimal::from(30)
        );
        assert!(parse_fraction("30/30").is_err());
        assert!(parse_fraction("1/0").is_err());
        assert!(parse_fraction("-0.1").is_err());
        assert!(parse_fraction("a/b").is_err());
    }

    #[test]
    fn unit_periods_are_read_from_names_and_counts() {
        assert_eq!(parse_unit_period_text("month").unwrap(), UnitPeriod::Month);
        assert_eq!(
            parse_unit_period_text("2 weeks").unwrap(),
            UnitPeriod::Weeks(2)
        );
        assert_eq!(
            parse_unit_period_text("255days").unwrap(),
            UnitPeriod::Days(255)
        );
        assert_eq!(
            parse_unit_period_text("3 months").unwrap(),
            UnitPeriod::Quarter
        );
        assert!(parse_unit_period_text("13 months").is_err());
        assert!(parse_unit_period_text("0 weeks").is_err());
        assert!(parse_unit_period_text("fortnight").is_err());
        let obj = Json::Object(vec![("weeks".into(), Json::Number("4".into()))]);
        assert_eq!(unit_period_of_json(&obj).unwrap(), UnitPeriod::Weeks(4));
    }

    #[test]
    fn the_query_syntax_reads_each_form_of_flow() {
        let usd = Currency::USD;
        assert_eq!(
            parse_flow_text("5000@1978-01-10", usd).unwrap(),
            FlowSpec::Dated(DatedFlow {
                amount: d("5000"),
                date: date(1978, 1, 10)
            })
        );
        assert_eq!(
            parse_flow_text("230x24@1978-02-10/monthly", usd).unwrap(),
            FlowSpec::Series(PaymentSeries {
                amount: d("230"),
                count: 24,
                first_date: date(1978, 2, 10),
                frequency: Frequency::Monthly
            })
        );
        // "+" arrives as a space once a URL is decoded; both are read.
        let f = Decimal::from(19) / Decimal::from(30);
        for text in ["200x36@1 19/30", "200x36@1+19/30"] {
            assert_eq!(
                parse_flow_text(text, usd).unwrap(),
                FlowSpec::Unit(UnitFlow::run(d("200"), 1, f, 36))
            );
        }
        assert_eq!(
            parse_flow_text("1080@1", usd).unwrap(),
            FlowSpec::Unit(UnitFlow::single(d("1080"), 1, Decimal::ZERO))
        );
    }

    #[test]
    fn the_query_syntax_refuses_with_reasons() {
        let usd = Currency::USD;
        for (text, says) in [
            ("5000", "amount@date"),
            ("5000@2027-02-30", "28 days"),
            ("230x24@1978-02-10", "needs its frequency"),
            ("230@1978-02-10/monthly", "give the count"),
            ("230x0@1978-02-10/monthly", "1 to"),
            ("230xabc@1978-02-10/monthly", "whole number"),
            ("230x24@1978-02-10/fortnightly", "frequency"),
            ("-5@1978-01-10", "negative"),
            ("5.001@1978-01-10", "decimals"),
            ("5@1+1/1", "less than 1"),
            ("5@1+2+3", "t or t+f"),
            ("5@abc", "after @"),
        ] {
            let e = parse_flow_text(text, usd).unwrap_err();
            assert!(e.contains(says), "{text}: {e}");
        }
    }

    #[test]
    fn fractions_are_written_as_appendix_j_writes_them() {
        let f = Decimal::from(19) / Decimal::from(30);
        assert_eq!(
            fraction_ratio(f, UnitPeriod::Month).as_deref(),
            Some("19/30")
        );
        assert_eq!(
            fraction_ratio(d("0.4"), UnitPeriod::Semimonth).as_deref(),
            Some("6/15")
        );
        assert_eq!(fraction_ratio(Decimal::ZERO, UnitPeriod::Month), None);
        assert_eq!(fraction_ratio(d("0.123"), UnitPeriod::Month), None);
    }

    #[test]
    fn a_query_and_a_body_give_the_same_request() {
        let pairs = vec![
            ("advance".to_string(), "5000@1978-01-10".to_string()),
            (
                "payment".to_string(),
                "250@1978-02-10,230x23@1978-03-10/monthly".to_string(),
            ),
        ];
        let q = read_query(&pairs).unwrap();
        let body = crate::input::json::parse(
            br#"{"advances":[{"amount":"5000","date":"1978-01-10"}],
                 "payments":[{"amount":250,"date":"1978-02-10"},
                             {"amount":"230","count":23,"first_date":"1978-03-10","frequency":"monthly"}]}"#,
        )
        .unwrap();
        let j = read_json(&body).unwrap();
        let specs = |r: &AprRequest| -> Vec<FlowSpec> {
            r.advances
                .iter()
                .chain(&r.payments)
                .map(|f| f.spec)
                .collect()
        };
        assert_eq!(specs(&q), specs(&j));
        // 12 CFR 1026 Appendix J (c)(2)(i): 10.08 %.
        assert_eq!(answer(&q).unwrap().apr_percent, "10.08");
        assert_eq!(answer(&j).unwrap().apr_percent, "10.08");
    }
}
