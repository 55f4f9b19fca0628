//! The loan schedule request: its field tables and its reader (JSON body or query string).

use crate::engine::calendar::DayCount;
use crate::engine::loan::MAX_PAYMENTS;
use crate::engine::money::{Currency, InterestRounding, PaymentRounding};
use crate::engine::plan::{Extra, OddDaysInterest, PlanOptions, RateChange, RateChangeKeeps};
use crate::engine::rate::{AnnualRate, Frequency};
use crate::engine::schedule::{
    check_payment, check_payment_count, check_principal, payments_in_months, LoanTerm, LoanTerms,
};
use crate::input::fields::{Fields, Raw, Source};
use crate::input::json::Json;
use crate::input::problem::{ApiError, FieldError};
use rust_decimal::Decimal;

const PAYMENT_FREQUENCIES: [&str; 7] = [
    "annual",
    "semiannual",
    "quarterly",
    "monthly",
    "semimonthly",
    "biweekly",
    "weekly",
];

const COMPOUNDINGS: [&str; 8] = [
    "annual",
    "semiannual",
    "quarterly",
    "monthly",
    "semimonthly",
    "biweekly",
    "weekly",
    "daily",
];

/// The field names of a loan schedule request, in the order the guide lists them.
pub const LOAN_FIELDS: [&str; 10] = [
    "principal",
    "annual_rate_percent",
    "term_months",
    "term_payments",
    "payment",
    "payment_frequency",
    "compounding",
    "currency",
    "payment_rounding",
    "interest_rounding",
];

/// Reads loan terms from request fields (JSON body or query string).
///
/// # Errors
/// Every bad or missing field, each with its pointer; then any engine range error.
pub fn read_loan_terms(f: &mut Fields<'_>) -> Option<LoanTerms> {
    let currency = match f.text("currency") {
        None => Some(Currency::USD),
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
    let principal = f.decimal("principal");
    let rate = f.decimal("annual_rate_percent");
    let payment_frequency = f
        .choice(
            "payment_frequency",
            |s| Frequency::parse(s).filter(|f| *f != Frequency::Daily),
            &PAYMENT_FREQUENCIES,
        )
        .or_else(|| {
            (!f.errors
                .iter()
                .any(|e| e.pointer.ends_with("payment_frequency")))
            .then_some(Frequency::Monthly)
        });
    let compounding = f.choice("compounding", Frequency::parse, &COMPOUNDINGS);
    let payment_rounding = f.choice(
        "payment_rounding",
        |s| match s {
            "nearest" => Some(PaymentRounding::Nearest),
            "up" => Some(PaymentRounding::Up),
            _ => None,
        },
        &["nearest", "up"],
    );
    let interest_rounding = f.choice(
        "interest_rounding",
        |s| match s {
            "half_up" => Some(InterestRounding::HalfUp),
            "half_even" => Some(InterestRounding::HalfEven),
            _ => None,
        },
        &["half_up", "half_even"],
    );
    let months = f.whole("term_months", "360");
    let payments = f.whole("term_payments", "360");
    let payment = f.decimal("payment");
    let given = [
        f.has("term_months"),
        f.has("term_payments"),
        f.has("payment"),
    ];
    let count = given.iter().filter(|g| **g).count();
    if principal.is_none() && !f.errors.iter().any(|e| e.pointer.ends_with("principal")) {
        f.error("principal", "is required");
    }
    if rate.is_none()
        && !f
            .errors
            .iter()
            .any(|e| e.pointer.ends_with("annual_rate_percent"))
    {
        f.error("annual_rate_percent", "is required");
    }
    let rate = rate.and_then(|r| match AnnualRate::from_percent(r) {
        Ok(r) => Some(r),
        Err(e) => {
            f.error("annual_rate_percent", e.message);
            None
        }
    });
    // Each field's own range, so that every bad field is named at once; the
    // rules across fields come after.
    let amounts_in = currency.unwrap_or(Currency::USD);
    let principal = principal.filter(|p| f.in_range(check_principal(*p, amounts_in)));
    let months = months.filter(|m| match payment_frequency {
        Some(frequency) => f.in_range(payments_in_months(*m, frequency).map(|_| ())),
        None => true,
    });
    let payments = payments.filter(|n| f.in_range(check_payment_count(*n, "term_payments")));
    let payment = payment.filter(|p| f.in_range(check_payment(*p, amounts_in)));
    // The rule across fields, once each field alone is valid.
    if f.errors.is_empty() {
        if count == 0 {
            f.error(
                "term_months",
                "give one of term_months, term_payments or payment (the other is solved)",
            );
        } else if count > 1 {
            let name = if given[2] { "payment" } else { "term_payments" };
            f.error(
                name,
                "give only one of term_months, term_payments and payment: the other is solved",
            );
        }
    }
    let (Some(currency), Some(principal), Some(rate), Some(payment_frequency)) =
        (currency, principal, rate, payment_frequency)
    else {
        return None;
    };
    if !f.errors.is_empty() || count != 1 {
        return None;
    }
    let term = if let Some(m) = months {
        match payments_in_months(m, payment_frequency) {
            Ok(n) => LoanTerm::Payments(n),
            Err(e) => {
                f.error("term_months", e.message);
                return None;
            }
        }
    } else if let Some(n) = payments {
        LoanTerm::Payments(n)
    } else {
        LoanTerm::Payment(payment?)
    };
    Some(LoanTerms {
        principal,
        currency,
        rate,
        payment_frequency,
        compounding,
        term,
        payment_rounding: payment_rounding.unwrap_or_default(),
        interest_rounding: interest_rounding.unwrap_or_default(),
    })
}

/// Turns fields into terms, or into one problem naming every bad field.
///
/// # Errors
/// The problem to answer.
pub fn loan_terms_from(mut f: Fields<'_>) -> Result<LoanTerms, ApiError> {
    let terms = read_loan_terms(&mut f);
    let errors: Vec<FieldError> = match f.finish() {
        Ok(()) => vec![],
        Err(e) => e,
    };
    match terms {
        Some(t) if errors.is_empty() => Ok(t),
        _ => Err(ApiError::fields(errors)),
    }
}

/// The plan fields of a schedule request, beyond the level loan's.
pub const PLAN_FIELDS: [&str; 11] = [
    "funding_date",
    "first_payment_date",
    "day_count",
    "odd_days_interest",
    "extra_payments",
    "interest_only_payments",
    "balloon_after_payments",
    "rate_changes",
    "rate_change_keeps",
    "property_value",
    "label",
];

/// An extra payment before its date (if any) is turned into a payment number.
enum ExtraAt {
    Done(Extra),
    OnDate {
        amount: Decimal,
        date: jiff::civil::Date,
        pointer: String,
    },
}

/// The most extra payments, and the most rate changes, a request may hold (in
/// a JSON array or a query list alike).
pub const MAX_LIST_ITEMS: usize = 120;

/// True when a query list of `len` items is within [`MAX_LIST_ITEMS`]; else
/// records the error on `name` and answers false.
fn within_list_limit(f: &mut Fields<'_>, name: &'static str, len: usize, what: &str) -> bool {
    if len <= MAX_LIST_ITEMS {
        return true;
    }
    f.error(
        name,
        format!("may hold at most {MAX_LIST_ITEMS} {what}, not {len}"),
    );
    false
}

/// Reads the compact query form of one extra payment:
/// `AMOUNT@FROM-TO` (every payment from FROM to TO), `AMOUNT@FROM-` (to the end),
/// `AMOUNT@FROM-TO/EVERY`, `AMOUNT@AT` (once, with payment AT) or `AMOUNT@YYYY-MM-DD`
/// (once, with the first payment due on or after that date).
fn parse_extra_item(item: &str) -> Result<(Decimal, ExtraWhen), String> {
    let (amount, when) = item
        .split_once('@')
        .ok_or("write each extra payment as AMOUNT@FROM-TO, AMOUNT@AT or AMOUNT@YYYY-MM-DD")?;
    let amount = crate::input::fields::parse_decimal(amount, false)
        .map_err(|m| format!("the amount {m}"))?;
    if when.len() == 10 && when.as_bytes()[4] == b'-' && when.as_bytes()[7] == b'-' {
        return Ok((
            amount,
            ExtraWhen::Date(crate::input::fields::parse_date(when)?),
        ));
    }
    let (range, every) = match when.split_once('/') {
        Some((r, e)) => (
            r,
            Some(
                e.parse::<u32>()
                    .ok()
                    .filter(|e| (1..=MAX_PAYMENTS).contains(e))
                    .ok_or(format!(
                        "EVERY must be a whole number from 1 to {MAX_PAYMENTS}"
                    ))?,
            ),
        ),
        None => (when, None),
    };
    // The same range as a JSON body's payment numbers.
    let number = |s: &str| {
        s.parse::<u32>()
            .ok()
            .filter(|n| *n <= MAX_PAYMENTS)
            .ok_or(format!(
                "\"{s}\" is not a payment number from 0 to {MAX_PAYMENTS}"
            ))
    };
    match range.split_once('-') {
        Some((from, "")) => Ok((
            amount,
            ExtraWhen::Range {
                from: number(from)?,
                to: None,
                every: every.unwrap_or(1),
            },
        )),
        Some((from, to)) => Ok((
            amount,
            ExtraWhen::Range {
                from: number(from)?,
                to: Some(number(to)?),
                every: every.unwrap_or(1),
            },
        )),
        None if every.is_some() => Ok((
            amount,
            ExtraWhen::Range {
                from: number(range)?,
                to: None,
                every: every.unwrap_or(1),
            },
        )),
        None => Ok((amount, ExtraWhen::At(number(range)?))),
    }
}

enum ExtraWhen {
    Range {
        from: u32,
        to: Option<u32>,
        every: u32,
    },
    At(u32),
    Date(jiff::civil::Date),
}

fn money_in(f: &mut Fields<'_>, name: &'static str, currency: Currency) -> Option<Decimal> {
    let v = f.decimal(name)?;
    if !currency.fits(v) {
        f.error(
            name,
            format!(
                "{} amounts have at most {} decimals",
                currency.code(),
                currency.minor_units()
            ),
        );
        return None;
    }
    Some(v)
}

/// Reads the plan options (dates, extras, interest-only, balloon, rate steps, property value).
pub fn read_plan_options(
    f: &mut Fields<'_>,
    currency: Currency,
    frequency: Frequency,
) -> PlanOptions {
    let mut o = PlanOptions {
        funding_date: f.date("funding_date"),
        first_payment_date: f.date("first_payment_date"),
        ..PlanOptions::default()
    };
    if let Some(d) = f.choice(
        "day_count",
        DayCount::parse,
        &[
            "actual_365",
            "actual_360",
            "thirty_360_bond_basis",
            "thirty_360_us",
            "thirty_e_360",
            "thirty_360 (read as thirty_360_bond_basis)",
        ],
    ) {
        o.day_count = d;
    }
    if let Some(v) = f.choice(
        "odd_days_interest",
        |s| match s {
            "first_payment" => Some(OddDaysInterest::FirstPayment),
            "prepaid" => Some(OddDaysInterest::Prepaid),
            _ => None,
        },
        &["first_payment", "prepaid"],
    ) {
        o.odd_days_interest = v;
    }
    if let Some(v) = f.choice(
        "rate_change_keeps",
        |s| match s {
            "term" => Some(RateChangeKeeps::Term),
            "payment" => Some(RateChangeKeeps::Payment),
            _ => None,
        },
        &["term", "payment"],
    ) {
        o.rate_change_keeps = v;
    }
    o.interest_only_payments = f.count("interest_only_payments", MAX_PAYMENTS).unwrap_or(0);
    o.balloon_after_payments = f.count("balloon_after_payments", MAX_PAYMENTS);
    o.property_value = money_in(f, "property_value", currency);
    let pointer_base = f.pointer("");
    // Extra payments.
    let mut pending: Vec<ExtraAt> = Vec::new();
    if f.is_query() {
        if let Some(items) = f
            .query_list("extra_payments")
            .filter(|items| within_list_limit(f, "extra_payments", items.len(), "extra payments"))
        {
            for item in items {
                match parse_extra_item(item) {
                    Ok((amount, ExtraWhen::Range { from, to, every })) => {
                        pending.push(ExtraAt::Done(Extra::Recurring {
                            amount,
                            from,
                            to,
                            every,
                        }))
                    }
                    Ok((amount, ExtraWhen::At(at))) => {
                        pending.push(ExtraAt::Done(Extra::Lump { amount, at }))
                    }
                    Ok((amount, ExtraWhen::Date(date))) => pending.push(ExtraAt::OnDate {
                        amount,
                        date,
                        pointer: "extra_payments".into(),
                    }),
                    Err(m) => f.error(
                        "extra_payments",
                        format!("\"{}\": {m}", item.chars().take(40).collect::<String>()),
                    ),
                }
            }
        }
    } else if let Some(raw) = f.raw("extra_payments") {
        match raw {
            Raw::Json(Json::Array(items)) if items.len() <= MAX_LIST_ITEMS => {
                for (index, item) in items.iter().enumerate() {
                    let pointer = format!("{pointer_base}extra_payments/{index}");
                    let Json::Object(m) = item else {
                        f.errors.push(FieldError {
                            pointer,
                            message: format!("must be an object, not {}", item.kind()),
                        });
                        continue;
                    };
                    let mut g = Fields::new(Source::Json {
                        members: m,
                        pointer: &pointer,
                    });
                    let amount = money_in(&mut g, "amount", currency);
                    if amount.is_none() && !g.errors.iter().any(|e| e.pointer.ends_with("/amount"))
                    {
                        g.error("amount", "is required");
                    }
                    let at_number = match g.raw("at") {
                        Some(Raw::Json(Json::String(s))) => {
                            match crate::input::fields::parse_date(s) {
                                Ok(d) => Some(Err(d)),
                                Err(m) => {
                                    g.error("at", m);
                                    None
                                }
                            }
                        }
                        Some(_) => g.count("at", MAX_PAYMENTS).map(Ok),
                        None => None,
                    };
                    let from = g.count("from", MAX_PAYMENTS);
                    let to = g.count("to", MAX_PAYMENTS);
                    let every = g.count("every", MAX_PAYMENTS);
                    if at_number.is_some() && (from.is_some() || to.is_some() || every.is_some()) {
                        g.error(
                            "at",
                            "give either `at` (once) or `from`/`to`/`every` (recurring), not both",
                        );
                    } else if at_number.is_none()
                        && from.is_none()
                        && !g.errors.iter().any(|e| e.pointer.ends_with("/at"))
                    {
                        g.error("from", "give `from` (recurring) or `at` (once)");
                    }
                    let errors_before = g.errors.len();
                    let local: Vec<FieldError> = match g.finish() {
                        Ok(()) => vec![],
                        Err(e) => e,
                    };
                    let ok = local.is_empty() && errors_before == 0;
                    f.errors.extend(local);
                    if let (true, Some(amount)) = (ok, amount) {
                        match at_number {
                            Some(Ok(at)) => pending.push(ExtraAt::Done(Extra::Lump { amount, at })),
                            Some(Err(date)) => pending.push(ExtraAt::OnDate {
                                amount,
                                date,
                                pointer: format!("{pointer}/at"),
                            }),
                            None => pending.push(ExtraAt::Done(Extra::Recurring {
                                amount,
                                from: from.unwrap_or(1),
                                to,
                                every: every.unwrap_or(1),
                            })),
                        }
                    }
                }
            }
            Raw::Json(Json::Array(_)) => f.error(
                "extra_payments",
                format!("may hold at most {MAX_LIST_ITEMS} extra payments"),
            ),
            Raw::Json(other) => f.error(
                "extra_payments",
                format!("must be an array, not {}", other.kind()),
            ),
            Raw::Text(_) => f.error("extra_payments", "must be an array"),
        }
    }
    for p in pending {
        match p {
            ExtraAt::Done(e) => o.extras.push(e),
            ExtraAt::OnDate {
                amount,
                date,
                pointer,
            } => match o.first_payment_date {
                None => f.errors.push(FieldError {
                    pointer,
                    message: "an extra payment on a date needs first_payment_date".into(),
                }),
                Some(first) => {
                    match crate::engine::calendar::due_dates(first, MAX_PAYMENTS, frequency) {
                        Ok(dates) => match dates.iter().position(|d| *d >= date) {
                            Some(index) => o.extras.push(Extra::Lump {
                                amount,
                                at: index as u32 + 1,
                            }),
                            None => f.errors.push(FieldError {
                                pointer,
                                message: "falls after the last possible payment".into(),
                            }),
                        },
                        Err(e) => f.errors.push(FieldError {
                            pointer,
                            message: e.message,
                        }),
                    }
                }
            },
        }
    }
    // Rate changes.
    if f.is_query() {
        if let Some(items) = f
            .query_list("rate_changes")
            .filter(|items| within_list_limit(f, "rate_changes", items.len(), "rate changes"))
        {
            for item in items {
                let parsed = item.split_once(':').and_then(|(at, rate)| {
                    let at = at
                        .trim()
                        .parse::<u32>()
                        .ok()
                        .filter(|at| *at <= MAX_PAYMENTS)?;
                    let rate = crate::input::fields::parse_decimal(rate.trim(), false).ok()?;
                    Some((at, rate))
                });
                match parsed.map(|(at, r)| (at, AnnualRate::from_percent(r))) {
                    Some((at, Ok(rate))) => o.rate_changes.push(RateChange { at, rate }),
                    Some((_, Err(e))) => f.error("rate_changes", e.message),
                    None => f.error(
                        "rate_changes",
                        format!(
                            "write each rate change as PAYMENT:PERCENT (e.g. 61:7.25), not \"{}\"",
                            item.chars().take(40).collect::<String>()
                        ),
                    ),
                }
            }
        }
    } else if let Some(raw) = f.raw("rate_changes") {
        match raw {
            Raw::Json(Json::Array(items)) if items.len() <= MAX_LIST_ITEMS => {
                for (index, item) in items.iter().enumerate() {
                    let pointer = format!("{pointer_base}rate_changes/{index}");
                    let Json::Object(m) = item else {
                        f.errors.push(FieldError {
                            pointer,
                            message: format!("must be an object, not {}", item.kind()),
                        });
                        continue;
                    };
                    let mut g = Fields::new(Source::Json {
                        members: m,
                        pointer: &pointer,
                    });
                    let at = g.count("at", MAX_PAYMENTS);
                    let rate = g.decimal("annual_rate_percent");
                    if at.is_none() && !g.errors.iter().any(|e| e.pointer.ends_with("/at")) {
                        g.error("at", "is required");
                    }
                    if rate.is_none()
                        && !g
                            .errors
                            .iter()
                            .any(|e| e.pointer.ends_with("/annual_rate_percent"))
                    {
                        g.error("annual_rate_percent", "is required");
                    }
                    let rate = rate.and_then(|r| match AnnualRate::from_percent(r) {
                        Ok(r) => Some(r),
                        Err(e) => {
                            g.error("annual_rate_percent", e.message);
                            None
                        }
                    });
                    let local: Vec<FieldError> = match g.finish() {
                        Ok(()) => vec![],
                        Err(e) => e,
                    };
                    if let (true, Some(at), Some(rate)) = (local.is_empty(), at, rate) {
                        o.rate_changes.push(RateChange { at, rate });
                    }
                    f.errors.extend(local);
                }
            }
            Raw::Json(other) => f.error(
                "rate_changes",
                format!(
                    "must be an array of at most {MAX_LIST_ITEMS} rate changes, not {}",
                    other.kind()
                ),
            ),
            Raw::Text(_) => f.error("rate_changes", "must be an array"),
        }
    }
    o
}

/// Everything a schedule request asks: the loan, its plan options, and an optional label.
pub struct ScheduleRequest {
    pub terms: LoanTerms,
    pub options: PlanOptions,
    pub label: Option<String>,
    /// The term was given as `term_months` (the engine counts payments).
    pub term_in_months: bool,
}

impl ScheduleRequest {
    /// The problem for an engine error on this request, its pointer prefixed
    /// (see [`engine_problem`]).
    pub fn problem(&self, e: crate::engine::EngineError, prefix: &str) -> ApiError {
        let term = match self.terms.term {
            LoanTerm::Payment(_) => "payment",
            LoanTerm::Payments(_) if self.term_in_months => "term_months",
            LoanTerm::Payments(_) => "term_payments",
        };
        engine_problem(e, prefix, self.term_in_months)
            .naming(prefix, &["annual_rate_percent", term])
    }
}

/// [`ApiError::from_engine`], naming the term as it was given: the engine
/// speaks of `term_payments`, which is `term_months` when that was sent.
pub fn engine_problem(
    mut e: crate::engine::EngineError,
    prefix: &str,
    term_in_months: bool,
) -> ApiError {
    if term_in_months && e.field == Some("term_payments") {
        e.field = Some("term_months");
    }
    ApiError::from_engine(e, prefix)
}

/// Reads a whole schedule request (loan terms and plan options), reporting every bad field.
///
/// # Errors
/// The problem to answer.
pub fn schedule_request_from(mut f: Fields<'_>) -> Result<ScheduleRequest, ApiError> {
    let term_in_months = f.has("term_months");
    let terms = read_loan_terms(&mut f);
    let (currency, frequency) = terms
        .as_ref()
        .map_or((Currency::USD, Frequency::Monthly), |t| {
            (t.currency, t.payment_frequency)
        });
    let options = read_plan_options(&mut f, currency, frequency);
    let label = f.text("label").and_then(|s| {
        if s.chars().any(char::is_control) {
            f.error(
                "label",
                "must be plain text: control characters (such as tab, escape or NUL) are refused",
            );
            return None;
        }
        Some(s.chars().take(80).collect())
    });
    let errors: Vec<FieldError> = match f.finish() {
        Ok(()) => vec![],
        Err(e) => e,
    };
    match terms {
        Some(terms) if errors.is_empty() => Ok(ScheduleRequest {
            terms,
            options,
            label,
            term_in_months,
        }),
        _ => Err(ApiError::fields(errors)),
    }
}
