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

use jiff::civil::Date;
use rust_decimal::prelude::ToPrimitive;
use rust_decimal::Decimal;
use serde::Serialize;

use super::handlers::{json_answer, JsonBody};
use crate::answer::derivation::full;
use crate::engine::apr::{
    apr_from_dates, apr_from_dates_with_unit, solve_apr, solve_aprc_with, AprcTimeBasis,
    AprcTimeChoice, DatedFlow, PaymentSeries, UnitFlow, UnitPeriod, UnitPeriodRule,
    MAX_UNIT_PERIODS,
};
use crate::engine::disclosure::TOOL_NOT_OPINION;
use crate::engine::loan::MAX_PAYMENTS;
use crate::engine::money::Currency;
use crate::engine::rate::Frequency;
use crate::engine::schedule::CAUTION;
use crate::engine::EngineError;
use crate::input::fields::{parse_decimal, Fields, Raw, Source};
use crate::input::http::query_pairs;
use crate::input::json::Json;
use crate::input::problem::{ApiError, FieldError};

use axum::extract::RawQuery;
use axum::response::Response;

/// The most items an `advances` or `payments` list may hold.
pub const MAX_ITEMS: usize = 1000;
/// The most dated flows once series are laid out, advances and payments together.
pub const MAX_FLOWS: usize = 20_000;

const FREQUENCIES: [&str; 8] = [
    "annual",
    "semiannual",
    "quarterly",
    "monthly",
    "semimonthly",
    "biweekly",
    "weekly",
    "daily",
];

const UNIT_PERIODS: &str =
    "month, semimonth, quarter, year, week, day, {\"weeks\": n}, {\"months\": n} or {\"days\": n}";

/// Which equation the rate solves.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Method {
    /// Regulation Z, Appendix J.
    UsActuarial,
    /// Directive 2008/48/EC Annex I.
    EuAprc,
}

impl Method {
    pub fn name(self) -> &'static str {
        match self {
            Method::UsActuarial => "us_actuarial",
            Method::EuAprc => "eu_aprc",
        }
    }
}

/// One advance or payment as requested.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FlowSpec {
    Dated(DatedFlow),
    Series(PaymentSeries),
    Unit(UnitFlow),
}

impl FlowSpec {
    fn is_unit(&self) -> bool {
        matches!(self, FlowSpec::Unit(_))
    }
}

/// A flow with where it came from, for error pointers.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RequestedFlow {
    pub spec: FlowSpec,
    /// The item's pointer (`/payments/3`), or the query parameter's name.
    pub pointer: String,
    /// The pointer of its date (`/payments/3/date`, `/payments/3/first_date`).
    pub date_pointer: String,
    /// In a query, the flow as written (quoted in messages).
    pub text: Option<String>,
}

impl RequestedFlow {
    fn error(&self, message: impl Into<String>) -> FieldError {
        self.error_at(&self.pointer.clone(), message)
    }

    fn date_error(&self, message: impl Into<String>) -> FieldError {
        self.error_at(&self.date_pointer.clone(), message)
    }

    fn error_at(&self, pointer: &str, message: impl Into<String>) -> FieldError {
        let message = message.into();
        FieldError {
            pointer: pointer.to_string(),
            message: match &self.text {
                Some(t) => format!("\"{}\": {message}", shorten(t)),
                None => message,
            },
        }
    }
}

/// A parsed APR request.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AprRequest {
    pub method: Method,
    pub currency: Currency,
    pub unit_period: Option<UnitPeriod>,
    pub advances: Vec<RequestedFlow>,
    pub payments: Vec<RequestedFlow>,
    /// How the EU APRC counts time in years (`time_basis`; default `auto`).
    pub time_basis: AprcTimeChoice,
    /// Read from a query string (errors name parameters, not pointers).
    pub from_query: bool,
}

// ---------------------------------------------------------------------------
// Small parsers shared by the JSON and query readers
// ---------------------------------------------------------------------------

const MONTHS: [&str; 12] = [
    "January",
    "February",
    "March",
    "April",
    "May",
    "June",
    "July",
    "August",
    "September",
    "October",
    "November",
    "December",
];

/// Parses an ISO 8601 calendar date `YYYY-MM-DD` (years 0001 to 9999), saying
/// what is wrong with one that is not on the calendar ("2027-02-30").
///
/// # Errors
/// A message for a person.
pub fn parse_iso_date(text: &str) -> Result<Date, String> {
    let b = text.as_bytes();
    let shape = b.len() == 10
        && b[4] == b'-'
        && b[7] == b'-'
        && b.iter()
            .enumerate()
            .all(|(i, c)| i == 4 || i == 7 || c.is_ascii_digit());
    if !shape {
        return Err(format!(
            "must be a date written YYYY-MM-DD, not \"{}\"",
            shorten(text)
        ));
    }
    let number = |r: std::ops::Range<usize>| -> i16 { text[r].parse().unwrap_or(0) };
    let (year, month, day) = (number(0..4), number(5..7), number(8..10));
    if year == 0 {
        return Err("must be a date from the year 0001 on".into());
    }
    if !(1..=12).contains(&month) {
        return Err(format!("{text} has no month {month}: months run 01 to 12"));
    }
    let first = Date::new(year, month as i8, 1).map_err(|_| format!("{text} is not a date"))?;
    let days = i16::from(first.days_in_month());
    if day < 1 || day > days {
        return Err(format!(
            "{text} is not a day of the calendar: {} {year} has {days} days",
            MONTHS[(month - 1) as usize]
        ));
    }
    Date::new(year, month as i8, day as i8).map_err(|_| format!("{text} is not a date"))
}

/// A fraction of a unit-period: a decimal (`0.4`) or a ratio of whole numbers
/// (`19/30`), at least 0 and less than 1.
///
/// # Errors
/// A message for a person.
pub fn parse_fraction(text: &str) -> Result<Decimal, String> {
    let value = match text.split_once('/') {
        Some((n, d)) => {
            let whole = |s: &str| -> Option<u32> {
                (!s.is_empty() && s.len() <= 9 && s.bytes().all(|b| b.is_ascii_digit()))
                    .then(|| s.parse().ok())
                    .flatten()
            };
            let (Some(n), Some(d)) = (whole(n.trim()), whole(d.trim())) else {
                return Err(format!(
                    "must be a decimal or a ratio of whole numbers such as 19/30, not \"{}\"",
                    shorten(text)
                ));
            };
            if d == 0 {
                return Err("a ratio cannot have a denominator of 0".into());
            }
            Decimal::from(n) / Decimal::from(d)
        }
        None => parse_decimal(text, false)?,
    };
    if value.is_sign_negative() && !value.is_zero() || value >= Decimal::ONE {
        return Err(
            "a fraction of a unit-period must be at least 0 and less than 1 (carry whole unit-periods into periods)"
                .into(),
        );
    }
    Ok(value)
}

/// A unit-period from text: `month`, `semimonth`, `quarter`, `year`, `week`,
/// `day`, or `n weeks`, `n months`, `n days` (the space optional, singular or plural).
///
/// # Errors
/// A message for a person.
pub fn parse_unit_period_text(text: &str) -> Result<UnitPeriod, String> {
    let t = text.trim().to_ascii_lowercase();
    let named = match t.as_str() {
        "month" => Some(UnitPeriod::Month),
        "semimonth" => Some(UnitPeriod::Semimonth),
        "quarter" => Some(UnitPeriod::Quarter),
        "year" => Some(UnitPeriod::Year),
        "week" => Some(UnitPeriod::Week),
        "day" => Some(UnitPeriod::Day),
        _ => None,
    };
    if let Some(u) = named {
        return Ok(u);
    }
    let digits: String = t.chars().take_while(char::is_ascii_digit).collect();
    let word = t[digits.len()..].trim();
    let n: Option<u32> = digits.parse().ok().filter(|_| digits.len() <= 4);
    match (n, word) {
        (Some(n), "week" | "weeks") => unit_of("weeks", n),
        (Some(n), "month" | "months") => unit_of("months", n),
        (Some(n), "day" | "days") => unit_of("days", n),
        _ => Err(format!(
            "must be one of {UNIT_PERIODS}, or written as \"2 weeks\", not \"{}\"",
            shorten(text)
        )),
    }
}

/// n weeks, months or days, in the range Appendix J allows (at most a year).
fn unit_of(kind: &str, n: u32) -> Result<UnitPeriod, String> {
    let (max, unit) = match kind {
        "weeks" => (52, UnitPeriod::Weeks(n)),
        "months" => (12, UnitPeriod::Months(n)),
        _ => (366, UnitPeriod::Days(n)),
    };
    if n == 0 || n > max {
        return Err(format!(
            "a unit-period of {kind} must be 1 to {max} {kind} (not over a year, Appendix J (b)(4))"
        ));
    }
    Ok(unit.canonical())
}

/// A unit-period from a JSON value: a name, or `{"weeks": n}` and the like.
fn unit_period_of_json(value: &Json) -> Result<UnitPeriod, String> {
    match value {
        Json::String(s) => parse_unit_period_text(s),
        Json::Object(members) if members.len() == 1 => {
            let (key, n) = &members[0];
            if !["weeks", "months", "days"].contains(&key.as_str()) {
                return Err(format!("must be one of {UNIT_PERIODS}"));
            }
            let n = match n {
                Json::Number(t) => t.parse::<u32>().ok(),
                _ => None,
            }
            .ok_or_else(|| format!("{key} must be a whole number"))?;
            unit_of(key, n)
        }
        _ => Err(format!("must be one of {UNIT_PERIODS}")),
    }
}

fn shorten(s: &str) -> String {
    let mut out: String = s.chars().filter(|c| !c.is_control()).take(48).collect();
    if s.chars().count() > 48 {
        out.push('…');
    }
    out
}

/// An amount of money: at least 0, with at most the currency's decimals.
fn check_amount(amount: Decimal, currency: Currency) -> Result<Decimal, String> {
    if amount.is_sign_negative() && !amount.is_zero() {
        return Err("an amount cannot be negative".into());
    }
    if !currency.fits(amount) {
        return Err(format!(
            "{} amounts have at most {} decimals",
            currency.code(),
            currency.minor_units()
        ));
    }
    Ok(amount)
}

fn check_count(count: u32, max: u32) -> Result<u32, String> {
    if count == 0 || count > max {
        return Err(format!("must be a whole number from 1 to {max}"));
    }
    Ok(count)
}

// ---------------------------------------------------------------------------
// Reading the JSON body
// ---------------------------------------------------------------------------

/// Reads one flow object with its own fields.
fn read_json_flow(g: &mut Fields<'_>, currency: Currency) -> Option<FlowSpec> {
    let forms = [g.has("date"), g.has("first_date"), g.has("periods")];
    let amount = g.decimal("amount");
    if amount.is_none() && !g.errors.iter().any(|e| e.pointer.ends_with("/amount")) {
        g.error("amount", "is required");
    }
    let amount = amount.and_then(|a| match check_amount(a, currency) {
        Ok(a) => Some(a),
        Err(m) => {
            g.error("amount", m);
            None
        }
    });
    let read_date = |g: &mut Fields<'_>, name: &'static str| -> Option<Date> {
        let text = g.text(name)?;
        match parse_iso_date(text) {
            Ok(d) => Some(d),
            Err(m) => {
                g.error(name, m);
                None
            }
        }
    };
    let spec = match forms {
        [true, false, false] => {
            let date = read_date(g, "date");
            Some(FlowSpec::Dated(DatedFlow {
                amount: amount?,
                date: date?,
            }))
        }
        [false, true, false] => {
            let first_date = read_date(g, "first_date");
            let count = match g.raw("count") {
                None => {
                    g.error("count", "is required for a series (with first_date)");
                    None
                }
                Some(_) => g.count("count", 100_000),
            };
            let count = count.and_then(|c| match check_count(c, MAX_PAYMENTS) {
                Ok(c) => Some(c),
                Err(m) => {
                    g.error("count", m);
                    None
                }
            });
            let frequency = if g.has("frequency") {
                g.choice("frequency", Frequency::parse, &FREQUENCIES)
            } else {
                g.error("frequency", "is required for a series (with first_date)");
                None
            };
            Some(FlowSpec::Series(PaymentSeries {
                amount: amount?,
                count: count?,
                first_date: first_date?,
                frequency: frequency?,
            }))
        }
        [false, false, true] => {
            let periods = g.count("periods", MAX_UNIT_PERIODS);
            let fraction = match g.raw("fraction") {
                None => Some(Decimal::ZERO),
                Some(raw) => {
                    let text = match raw {
                        Raw::Json(Json::String(s)) => Some(s.as_str()),
                        Raw::Json(Json::Number(n)) => Some(n.as_str()),
                        Raw::Text(t) => Some(t),
                        Raw::Json(other) => {
                            g.error(
                                "fraction",
                                format!("must be a number or a ratio, not {}", other.kind()),
                            );
                            None
                        }
                    };
                    text.and_then(|t| match parse_fraction(t) {
                        Ok(f) => Some(f),
                        Err(m) => {
                            g.error("fraction", m);
                            None
                        }
                    })
                }
            };
            let count = if g.has("count") {
                g.count("count", 100_000)
                    .and_then(|c| match check_count(c, MAX_UNIT_PERIODS) {
                        Ok(c) => Some(c),
                        Err(m) => {
                            g.error("count", m);
                            None
                        }
                    })
            } else {
                Some(1)
            };
            let (periods, count) = (periods?, count?);
            if u64::from(periods) + u64::from(count) - 1 > u64::from(MAX_UNIT_PERIODS) {
                g.error(
                    "count",
                    format!(
                        "the last flow of the run lies more than {MAX_UNIT_PERIODS} unit-periods from the start"
                    ),
                );
                return None;
            }
            Some(FlowSpec::Unit(UnitFlow::run(
                amount?, periods, fraction?, count,
            )))
        }
        [false, false, false] => {
            g.error(
                "date",
                "give the flow a date, a first_date (a series with count and frequency), or periods (in unit-periods)",
            );
            None
        }
        _ => {
            g.error(
                if forms[0] { "date" } else { "first_date" },
                "give only one of date, first_date and periods",
            );
            None
        }
    };
    spec
}

/// Reads `advances` or `payments` from the body.
fn read_json_list(
    f: &mut Fields<'_>,
    name: &'static str,
    currency: Currency,
    errors: &mut Vec<FieldError>,
) -> Vec<RequestedFlow> {
    let mut flows = Vec::new();
    match f.raw(name) {
        None => f.error(name, "is required: a list of at least one flow"),
        Some(Raw::Json(Json::Array(items))) if items.is_empty() => {
            f.error(name, "must hold at least one flow")
        }
        Some(Raw::Json(Json::Array(items))) if items.len() > MAX_ITEMS => {
            f.error(name, format!("may hold at most {MAX_ITEMS} flows"))
        }
        Some(Raw::Json(Json::Array(items))) => {
            for (index, item) in items.iter().enumerate() {
                let pointer = format!("/{name}/{index}");
                let Json::Object(members) = item else {
                    errors.push(FieldError {
                        pointer,
                        message: format!("must be an object, not {}", item.kind()),
                    });
                    continue;
                };
                let mut g = Fields::new(Source::Json {
                    members,
                    pointer: &pointer,
                });
                let spec = read_json_flow(&mut g, currency);
                if let Err(e) = g.finish() {
                    errors.extend(e);
                    continue;
                }
                if let Some(spec) = spec {
                    let date_name = if matches!(spec, FlowSpec::Series(_)) {
                        "first_date"
                    } else {
                        "date"
                    };
                    flows.push(RequestedFlow {
                        spec,
                        date_pointer: format!("{pointer}/{date_name}"),
                        pointer,
                        text: None,
                    });
                }
            }
        }
        Some(Raw::Json(other)) => f.error(name, format!("must be an array, not {}", other.kind())),
        Some(Raw::Text(_)) => f.error(name, "must be an array"),
    }
    flows
}

/// `method`, `currency`, `unit_period` and `time_basis` as read.
struct Common {
    method: Option<Method>,
    currency: Option<Currency>,
    unit_period: Option<UnitPeriod>,
    /// None when not given (or given wrong, with its error recorded).
    time_basis: Option<AprcTimeChoice>,
}

/// Reads `method`, `currency`, `unit_period` and `time_basis`, shared by both sources.
fn read_common(f: &mut Fields<'_>) -> Common {
    let method = if f.has("method") {
        f.choice(
            "method",
            |s| match s {
                "us_actuarial" => Some(Method::UsActuarial),
                "eu_aprc" => Some(Method::EuAprc),
                _ => None,
            },
            &["us_actuarial", "eu_aprc"],
        )
    } else {
        Some(Method::UsActuarial)
    };
    // Without a currency, amounts are read as US dollars, or as euros for the EU APRC.
    let default_currency = match method {
        Some(Method::EuAprc) => Currency::parse("EUR").unwrap_or(Currency::USD),
        _ => Currency::USD,
    };
    let currency = match f.text("currency") {
        None if f.errors.iter().any(|e| e.pointer.ends_with("currency")) => None,
        None => Some(default_currency),
        Some(code) => {
            let c = Currency::parse(code);
            if c.is_none() {
                let known: Vec<&str> = Currency::codes().collect();
                f.error(
                    "currency",
                    format!(
                        "is not a currency Residue knows; use one of {}",
                        known.join(", ")
                    ),
                );
            }
            c
        }
    };
    let unit_period = match f.raw("unit_period") {
        None => None,
        Some(raw) => {
            let parsed = match raw {
                Raw::Text(t) => parse_unit_period_text(t),
                Raw::Json(j) => unit_period_of_json(j),
            };
            match parsed {
                Ok(u) => Some(u),
                Err(m) => {
                    f.error("unit_period", m);
                    None
                }
            }
        }
    };
    let time_basis = f.choice("time_basis", AprcTimeChoice::parse, &TIME_BASES);
    Common {
        method,
        currency,
        unit_period,
        time_basis,
    }
}

/// The names `time_basis` takes.
const TIME_BASES: [&str; 4] = ["auto", "days", "weeks", "equal_months"];

/// Reads the JSON body of `POST /api/v1/apr`.
///
/// # Errors
/// Every bad field, with its pointer.
pub fn read_json(body: &Json) -> Result<AprRequest, ApiError> {
    let Json::Object(members) = body else {
        return Err(ApiError::fields(vec![FieldError {
            pointer: String::new(),
            message: "the body must be a JSON object".into(),
        }]));
    };
    let mut f = Fields::new(Source::Json {
        members,
        pointer: "",
    });
    let common = read_common(&mut f);
    let currency = common.currency;
    let mut errors = Vec::new();
    let list_currency = currency.unwrap_or(Currency::USD);
    let advances = read_json_list(&mut f, "advances", list_currency, &mut errors);
    let payments = read_json_list(&mut f, "payments", list_currency, &mut errors);
    let mut all = std::mem::take(&mut f.errors);
    if let Err(e) = f.finish() {
        all.extend(e);
    }
    all.extend(errors);
    finish_request(all, common, advances, payments, false)
}

// ---------------------------------------------------------------------------
// Reading the query string
// ---------------------------------------------------------------------------

/// Parses one flow of the query syntax (see the module documentation).
///
/// # Errors
/// A message for a person.
pub fn parse_flow_text(text: &str, currency: Currency) -> Result<FlowSpec, String> {
    let Some((left, right)) = text.split_once('@') else {
        return Err(
            "write a flow as amount@date, amount x count@date/frequency, or amount@periods".into(),
        );
    };
    let (amount_text, count_text) = match left.split_once(['x', 'X', '*']) {
        Some((a, c)) => (a.trim(), Some(c.trim())),
        None => (left.trim(), None),
    };
    let amount = parse_decimal(amount_text, false).map_err(|m| format!("the amount {m}"))?;
    let amount = check_amount(amount, currency)?;
    let count = match count_text {
        None => None,
        Some(c) => Some(
            (!c.is_empty() && c.len() <= 9 && c.bytes().all(|b| b.is_ascii_digit()))
                .then(|| c.parse::<u32>().ok())
                .flatten()
                .ok_or_else(|| {
                    format!("the count must be a whole number, not \"{}\"", shorten(c))
                })?,
        ),
    };
    let right = right.trim();
    if right.contains('-') {
        // A date, with a frequency after "/" for a series.
        let (date_text, frequency_text) = match right.split_once('/') {
            Some((d, f)) => (d.trim(), Some(f.trim())),
            None => (right, None),
        };
        let date = parse_iso_date(date_text)?;
        return match (count, frequency_text) {
            (None, None) => Ok(FlowSpec::Dated(DatedFlow { amount, date })),
            (Some(count), Some(name)) => {
                let frequency = Frequency::parse(name).ok_or_else(|| {
                    format!("the frequency must be one of: {}", FREQUENCIES.join(", "))
                })?;
                let count = check_count(count, MAX_PAYMENTS).map_err(|m| format!("the count {m}"))?;
                Ok(FlowSpec::Series(PaymentSeries {
                    amount,
                    count,
                    first_date: date,
                    frequency,
                }))
            }
            (Some(_), None) => Err(
                "a series needs its frequency after the first date, e.g. 230x24@1978-02-10/monthly"
                    .into(),
            ),
            (None, Some(_)) => Err(
                "a frequency belongs to a series: give the count too, e.g. 230x24@1978-02-10/monthly"
                    .into(),
            ),
        };
    }
    // In unit-periods: "t" or "t f" (the space is a "+" in a URL; a literal "+" also works).
    let mut parts = right.split([' ', '+']).filter(|p| !p.is_empty());
    let periods_text = parts.next().unwrap_or("");
    let fraction_text = parts.next();
    if parts.next().is_some() {
        return Err("a position in unit-periods is t or t+f, e.g. 1+19/30".into());
    }
    let periods: u32 = periods_text
        .parse()
        .ok()
        .filter(|p| *p <= MAX_UNIT_PERIODS && periods_text.bytes().all(|b| b.is_ascii_digit()))
        .ok_or_else(|| {
            format!(
                "after @ comes a date (YYYY-MM-DD) or whole unit-periods 0 to {MAX_UNIT_PERIODS}, not \"{}\"",
                shorten(right)
            )
        })?;
    let fraction = match fraction_text {
        None => Decimal::ZERO,
        Some(t) => parse_fraction(t).map_err(|m| format!("the fraction {m}"))?,
    };
    let count = match count {
        None => 1,
        Some(c) => check_count(c, MAX_UNIT_PERIODS).map_err(|m| format!("the count {m}"))?,
    };
    if u64::from(periods) + u64::from(count) - 1 > u64::from(MAX_UNIT_PERIODS) {
        return Err(format!(
            "the last flow of the run lies more than {MAX_UNIT_PERIODS} unit-periods from the start"
        ));
    }
    Ok(FlowSpec::Unit(UnitFlow::run(
        amount, periods, fraction, count,
    )))
}

/// Reads the query string of `GET /api/v1/apr`.
///
/// # Errors
/// Every bad parameter, by name.
pub fn read_query(pairs: &[(String, String)]) -> Result<AprRequest, ApiError> {
    let is_flow = |k: &str| k == "advance" || k == "payment";
    let flow_pairs = pairs.iter().filter(|(k, _)| is_flow(k));
    let rest: Vec<(String, String)> = pairs.iter().filter(|(k, _)| !is_flow(k)).cloned().collect();
    let mut f = Fields::new(Source::Query(&rest));
    let common = read_common(&mut f);
    let currency = common.currency;
    let list_currency = currency.unwrap_or(Currency::USD);
    let mut errors = Vec::new();
    let (mut advances, mut payments) = (Vec::new(), Vec::new());
    let mut items = 0usize;
    for (key, value) in flow_pairs {
        for text in value.split(',').map(str::trim).filter(|t| !t.is_empty()) {
            items += 1;
            if items > 2 * MAX_ITEMS {
                errors.push(FieldError {
                    pointer: key.clone(),
                    message: format!("at most {MAX_ITEMS} advances and {MAX_ITEMS} payments"),
                });
                break;
            }
            match parse_flow_text(text, list_currency) {
                Ok(spec) => {
                    let flow = RequestedFlow {
                        spec,
                        pointer: key.clone(),
                        date_pointer: key.clone(),
                        text: Some(text.to_string()),
                    };
                    if key == "advance" {
                        advances.push(flow);
                    } else {
                        payments.push(flow);
                    }
                }
                Err(message) => errors.push(FieldError {
                    pointer: key.clone(),
                    message: format!("\"{}\": {message}", shorten(text)),
                }),
            }
        }
    }
    let mut all = std::mem::take(&mut f.errors);
    if let Err(e) = f.finish() {
        all.extend(e);
    }
    if errors.is_empty() {
        for (name, list) in [("advance", &advances), ("payment", &payments)] {
            if list.is_empty() {
                all.push(FieldError {
                    pointer: name.into(),
                    message: format!(
                        "is required: give at least one {name}, e.g. {name}=5000@1978-01-10"
                    ),
                });
            }
        }
    }
    all.extend(errors);
    finish_request(all, common, advances, payments, true)
}

// ---------------------------------------------------------------------------
// Checks across fields
// ---------------------------------------------------------------------------

fn finish_request(
    mut errors: Vec<FieldError>,
    common: Common,
    advances: Vec<RequestedFlow>,
    payments: Vec<RequestedFlow>,
    from_query: bool,
) -> Result<AprRequest, ApiError> {
    let Common {
        method,
        currency,
        unit_period,
        time_basis,
    } = common;
    let (Some(method), Some(currency)) = (method, currency) else {
        return Err(ApiError::fields(errors));
    };
    if !errors.is_empty() {
        return Err(ApiError::fields(errors));
    }
    let top = |name: &str| -> String {
        if from_query {
            name.to_string()
        } else {
            format!("/{name}")
        }
    };
    let all = || advances.iter().chain(payments.iter());
    let unit_form = all().next().is_some_and(|f| f.spec.is_unit());
    if let Some(odd) = all().find(|f| f.spec.is_unit() != unit_form) {
        errors.push(odd.error(
            "mixes dated flows with flows in unit-periods: give every flow a date, or every flow in unit-periods",
        ));
    }
    if unit_form && unit_period.is_none() {
        errors.push(FieldError {
            pointer: top("unit_period"),
            message: format!("is required for flows given in unit-periods: {UNIT_PERIODS}"),
        });
    }
    if method == Method::EuAprc {
        if unit_form {
            errors.push(FieldError {
                pointer: top("method"),
                message: "eu_aprc counts time in years from the first drawdown: give the flows with dates".into(),
            });
        } else if unit_period.is_some() {
            errors.push(FieldError {
                pointer: top("unit_period"),
                message: "is not used by eu_aprc, which counts time in years".into(),
            });
        }
    } else if time_basis.is_some() {
        errors.push(FieldError {
            pointer: top("time_basis"),
            message: "is used only by method=eu_aprc; us_actuarial counts unit-periods".into(),
        });
    }
    if !unit_form && errors.is_empty() {
        let dated_count: usize = all()
            .map(|f| match f.spec {
                FlowSpec::Series(s) => s.count as usize,
                _ => 1,
            })
            .sum();
        if dated_count > MAX_FLOWS {
            errors.push(FieldError {
                pointer: top("payments"),
                message: format!(
                    "the series lay out {dated_count} flows; at most {MAX_FLOWS} are accepted"
                ),
            });
        }
        let start = advances.iter().map(|f| first_date(&f.spec)).min();
        if let Some(start) = start {
            for p in &payments {
                if first_date(&p.spec) < start {
                    errors.push(p.date_error(format!(
                        "falls before the first advance ({start}), the start of the term"
                    )));
                }
            }
        }
    }
    if !errors.is_empty() {
        return Err(ApiError::fields(errors));
    }
    Ok(AprRequest {
        method,
        currency,
        unit_period,
        advances,
        payments,
        time_basis: time_basis.unwrap_or_default(),
        from_query,
    })
}

fn first_date(spec: &FlowSpec) -> Date {
    match spec {
        FlowSpec::Dated(d) => d.date,
        FlowSpec::Series(s) => s.first_date,
        FlowSpec::Unit(_) => Date::MIN,
    }
}

// ---------------------------------------------------------------------------
// The answer
// ---------------------------------------------------------------------------

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
    use jiff::civil::date;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    #[test]
    fn dates_off_the_calendar_say_why() {
        assert_eq!(parse_iso_date("1978-01-10").unwrap(), date(1978, 1, 10));
        assert_eq!(parse_iso_date("2024-02-29").unwrap(), date(2024, 2, 29));
        let e = parse_iso_date("2027-02-30").unwrap_err();
        assert!(e.contains("February 2027 has 28 days"), "{e}");
        assert!(parse_iso_date("2027-13-01")
            .unwrap_err()
            .contains("month 13"));
        assert!(parse_iso_date("27-2-3").is_err());
        assert!(parse_iso_date("2027-02-00").is_err());
        assert!(parse_iso_date("0000-01-01").is_err());
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
