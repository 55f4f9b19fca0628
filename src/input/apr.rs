//! The APR request: advances and payments (dated, dated series, or in unit-periods),
//! the method and the unit-period, read from a JSON body or a query string.

use crate::engine::apr::{
    AprcTimeChoice, DatedFlow, PaymentSeries, UnitFlow, UnitPeriod, MAX_UNIT_PERIODS,
};
use crate::engine::loan::MAX_PAYMENTS;
use crate::engine::money::Currency;
use crate::engine::rate::Frequency;
use crate::input::fields::{parse_date, parse_decimal, Fields, Raw, Source};
use crate::input::json::Json;
use crate::input::problem::{ApiError, FieldError};
use jiff::civil::Date;
use rust_decimal::Decimal;

use super::apr_fields::{APR_COMMON, FLOW_FIELDS, MAX_FLOWS, MAX_ITEMS};
use super::table::COMPOUNDINGS;

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
    pub fn is_unit(&self) -> bool {
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

    pub fn date_error(&self, message: impl Into<String>) -> FieldError {
        self.error_at(&self.date_pointer.clone(), message)
    }

    fn error_at(&self, pointer: &str, message: impl Into<String>) -> FieldError {
        let message = message.into();
        FieldError::new(
            pointer.to_string(),
            match &self.text {
                Some(t) => format!("\"{}\": {message}", shorten(t)),
                None => message,
            },
        )
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
pub fn unit_period_of_json(value: &Json) -> Result<UnitPeriod, String> {
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
        match parse_date(text) {
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
                g.pick(FLOW_FIELDS, "frequency", Frequency::parse)
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
                    errors.push(FieldError::new(
                        pointer,
                        format!("must be an object, not {}", item.kind()),
                    ));
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
        f.pick(APR_COMMON, "method", |s| match s {
            "us_actuarial" => Some(Method::UsActuarial),
            "eu_aprc" => Some(Method::EuAprc),
            _ => None,
        })
    } else {
        Some(Method::UsActuarial)
    };
    // Without a currency, amounts are read as US dollars, or as euros for the EU APRC.
    let default_currency = match method {
        Some(Method::EuAprc) => Currency::parse("EUR").unwrap_or(Currency::USD),
        _ => Currency::USD,
    };
    // An absent currency after an error on the field (a repeated parameter) is no currency.
    let currency = f
        .currency(default_currency)
        .filter(|_| !f.errors.iter().any(|e| e.pointer.ends_with("currency")));
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
    let time_basis = f.pick(APR_COMMON, "time_basis", AprcTimeChoice::parse);
    Common {
        method,
        currency,
        unit_period,
        time_basis,
    }
}

/// Reads the JSON body of `POST /api/v1/apr`.
///
/// # Errors
/// Every bad field, with its pointer.
pub fn read_json(body: &Json) -> Result<AprRequest, ApiError> {
    let Json::Object(members) = body else {
        return Err(ApiError::fields(vec![FieldError::new(
            String::new(),
            "the body must be a JSON object".into(),
        )]));
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
        let date = parse_date(date_text)?;
        return match (count, frequency_text) {
            (None, None) => Ok(FlowSpec::Dated(DatedFlow { amount, date })),
            (Some(count), Some(name)) => {
                let frequency = Frequency::parse(name).ok_or_else(|| {
                    format!("the frequency must be one of: {}", COMPOUNDINGS.iter().map(|c| c.value).collect::<Vec<_>>().join(", "))
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
                errors.push(FieldError::new(
                    key.clone(),
                    format!("at most {MAX_ITEMS} advances and {MAX_ITEMS} payments"),
                ));
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
                Err(message) => errors.push(FieldError::new(
                    key.clone(),
                    format!("\"{}\": {message}", shorten(text)),
                )),
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
                all.push(FieldError::new(
                    name.into(),
                    format!("is required: give at least one {name}, e.g. {name}=5000@1978-01-10"),
                ));
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
        errors.push(FieldError::new(
            top("unit_period"),
            format!("is required for flows given in unit-periods: {UNIT_PERIODS}"),
        ));
    }
    if method == Method::EuAprc {
        if unit_form {
            errors.push(FieldError::new(
                top("method"),
                "eu_aprc counts time in years from the first drawdown: give the flows with dates"
                    .into(),
            ));
        } else if unit_period.is_some() {
            errors.push(FieldError::new(
                top("unit_period"),
                "is not used by eu_aprc, which counts time in years".into(),
            ));
        }
    } else if time_basis.is_some() {
        errors.push(FieldError::new(
            top("time_basis"),
            "is used only by method=eu_aprc; us_actuarial counts unit-periods".into(),
        ));
    }
    if !unit_form && errors.is_empty() {
        let dated_count: usize = all()
            .map(|f| match f.spec {
                FlowSpec::Series(s) => s.count as usize,
                _ => 1,
            })
            .sum();
        if dated_count > MAX_FLOWS {
            errors.push(FieldError::new(
                top("payments"),
                format!("the series lay out {dated_count} flows; at most {MAX_FLOWS} are accepted"),
            ));
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
