//! The loan schedule request: its field tables and its reader (JSON body or query string).

use crate::engine::calendar::DayCount;
use crate::engine::loan::MAX_PAYMENTS;
use crate::engine::money::{Currency, InterestRounding, PaymentRounding};
use crate::engine::plan::{Extra, OddDaysInterest, PlanOptions, RateChange, RateChangeKeeps};
use crate::engine::rate::{AnnualRate, Frequency};
use crate::engine::schedule::{
    check_payment, check_payment_count, check_principal, payments_in_months, LoanTerm, LoanTerms,
};
use crate::input::fields::{money_in, Fields, Raw, Source};
use crate::input::json::Json;
use crate::input::problem::{ApiError, FieldError};
use rust_decimal::Decimal;

use super::table::{
    choice, Choice, Field, Kind, Table, COMPOUNDINGS, CURRENCY, PAYMENT_FREQUENCIES,
};

/// The level loan's fields, in the order the guide lists them.
pub const LOAN: &[Field] = &[
    Field::new("principal", Kind::Money, "The amount borrowed, in the currency's minor units at most.")
        .required()
        .example("250000")
        .form("Loan amount", "The principal borrowed.", "250,000"),
    Field::new("annual_rate_percent", Kind::Percent, "The nominal annual rate in percent (\"6.375\").")
        .required()
        .example("6.5")
        .form("Interest rate (% a year)", "The nominal annual rate.", "6.5"),
    Field::new("term_months", Kind::Whole { min: 0, max: None }, "The term in months (converted to payments of the payment frequency). Give exactly one of term_months, term_payments and payment: the other is solved.")
        .example("360")
        .form("Term in months", "360 is 30 years. Give the term, the number of payments or the payment: the other is worked out.", "360"),
    Field::new("term_payments", Kind::Whole { min: 0, max: None }, "The term in payments.")
        .example("360")
        .form("Number of payments", "Instead of the term in months.", ""),
    Field::new("payment", Kind::Money, "The payment; the number of payments is solved.")
        .example("1500")
        .form("Payment", "Give the payment to find how many payments it takes.", ""),
    Field::new("payment_frequency", Kind::Choice { choices: PAYMENT_FREQUENCIES, default: "Monthly (default)" }, "How often payments fall due (default monthly).")
        .example("monthly")
        .form("Payments made", "", ""),
    Field::new("compounding", Kind::Choice { choices: COMPOUNDINGS, default: "As often as payments are made" }, "How often interest compounds (default: the payment frequency).")
        .example("monthly")
        .form("Interest compounds", "", ""),
    CURRENCY,
    Field::new("payment_rounding", Kind::Choice { choices: PAYMENT_ROUNDINGS, default: "To the nearest cent (default)" }, "`nearest` (default, halves up) or `up` to the next minor unit.")
        .example("nearest")
        .form("Payment rounded", "", ""),
    Field::new("interest_rounding", Kind::Choice { choices: INTEREST_ROUNDINGS, default: "Halves up (default)" }, "How each period's interest is rounded: `half_up` (default) or `half_even`.")
        .example("half_up")
        .form("Interest rounded", "", ""),
];

const PAYMENT_ROUNDINGS: &[Choice] = &[
    choice("nearest", "To the nearest cent"),
    choice("up", "Up to the next cent"),
];
const INTEREST_ROUNDINGS: &[Choice] = &[
    choice("half_up", "Halves up"),
    choice("half_even", "Halves to even"),
];
const DAY_COUNTS: &[Choice] = &[
    choice("actual_365", "Actual days / 365"),
    choice("actual_360", "Actual days / 360"),
    choice("thirty_360_bond_basis", "30-day months / 360, bond basis"),
    choice("thirty_360_us", "30-day months / 360, US rule"),
    choice("thirty_e_360", "30-day months / 360, European rule"),
    Choice {
        value: "thirty_360",
        words: "",
        alias_of: Some("thirty_360_bond_basis"),
    },
];
const ODD_DAYS: &[Choice] = &[
    choice("first_payment", "Added to the first payment"),
    choice("prepaid", "Collected at closing"),
];
const KEEPS: &[Choice] = &[
    choice("term", "The remaining term"),
    choice("payment", "The payment"),
];

/// The plan's fields beyond the level loan's.
pub const PLAN: &[Field] = &[
    Field::new("funding_date", Kind::Date, "ISO 8601; with first_payment_date, an odd first period accrues interest for its odd days.")
        .example("2027-01-17")
        .form("Funding date", "When the money is paid out (YYYY-MM-DD).", "2026-03-15"),
    Field::new("first_payment_date", Kind::Date, "ISO 8601; dates every payment.")
        .example("2027-03-01")
        .form("First payment date", "Dates every payment (YYYY-MM-DD).", "2026-05-01"),
    Field::new("day_count", Kind::Choice { choices: DAY_COUNTS, default: "Actual days / 365 (default)" }, "Day count of the odd first period (default actual_365): actual_365 and actual_360 count actual days and divide by 365 or 360; the 30/360 rules count 30-day months and divide by 360, differing at month ends (D1, D2 the days of the month of the start and end): thirty_360_bond_basis (ISDA 2006 4.16(f): D1 31 becomes 30; D2 31 becomes 30 when D1 is then 30), thirty_360_us (SIA: when D1 is February's last day it becomes 30, and D2 too when it is also February's last day; then D2 31 becomes 30 when D1 is 30 or 31; then D1 31 becomes 30), thirty_e_360 (ISDA 4.16(g): every 31st becomes 30). thirty_360 is an alias of thirty_360_bond_basis.")
        .example("actual_365")
        .form("Odd-days interest counted as", "", ""),
    Field::new("odd_days_interest", Kind::Choice { choices: ODD_DAYS, default: "Added to the first payment (default)" }, "Where the odd days' interest goes: added to the first payment (default) or prepaid at closing.")
        .example("first_payment")
        .form("Odd-days interest is", "", ""),
    Field::new("extra_payments", Kind::List { item: &EXTRA_PAYMENT, min: 0, max: MAX_LIST_ITEMS }, "Extra payments, at most 120.")
        .example("150@13-")
        .query("extra_payments=150@13-,5000@36 (AMOUNT@FROM-TO, AMOUNT@FROM-, AMOUNT@FROM-TO/EVERY, AMOUNT@AT or AMOUNT@YYYY-MM-DD; repeated or comma-separated)")
        .form("Extra payments", "150@13- (150 with every payment from 13 on), 150@13-120, 500@12-/12 (every 12th), 5000@36 (once), 2000@2029-06-01 (once, on a date); separate with commas.", "150@13-"),
    Field::new("interest_only_payments", Kind::Whole { min: 0, max: Some(MAX_PAYMENTS) }, "How many payments at the start pay interest only.")
        .example("12")
        .form("Interest-only payments", "How many payments at the start pay interest only.", ""),
    Field::new("balloon_after_payments", Kind::Whole { min: 0, max: Some(MAX_PAYMENTS) }, "The loan ends with a balloon after this many payments.")
        .example("60")
        .form("Balloon after payment", "The rest falls due with this payment.", ""),
    Field::new("rate_changes", Kind::List { item: &RATE_CHANGE, min: 0, max: MAX_LIST_ITEMS }, "Scheduled rate changes, at most 120.")
        .example("61:7.25")
        .query("rate_changes=61:7.25,121:8 (PAYMENT:PERCENT; repeated or comma-separated)")
        .form("Rate changes", "PAYMENT:PERCENT, e.g. 61:7.25, 121:8.", "61:7.25"),
    Field::new("rate_change_keeps", Kind::Choice { choices: KEEPS, default: "The remaining term (default)" }, "What a rate change keeps: the term (re-amortize, default) or the payment.")
        .example("term")
        .form("A rate change keeps", "", ""),
    Field::new("property_value", Kind::Money, "For the 80 % and 78 % milestones of the Homeowners Protection Act.")
        .example("400000")
        .form("Property value", "For the 80 % and 78 % milestones.", ""),
    Field::new("adjustable", Kind::Object(&super::adjustable::ADJUSTABLE), "Adjustable-rate terms: index and margin, the changes, the caps, floor and maximum, the rounding and an optional payment cap. annual_rate_percent is then the initial rate; the term must be given (term_months or term_payments).")
        .example("index:4.25,margin:2.75,first_change:61,every:12,first_cap:2,cap:2,max:11")
        .query("adjustable=index:4.25,margin:2.75,first_change:61,every:12,first_cap:2,cap:2,max:11 (KEY:VALUE pairs separated by commas; the keys index, margin, first_change, every, first_cap, cap, max, floor, rounding, payment_cap, or the JSON names), or each field as adjustable.NAME (adjustable.margin_percent=2.75)"),
    Field::new("rate_path", Kind::Choice { choices: super::adjustable::RATE_PATHS, default: "Composite (default)" }, "The path an adjustable rate is assumed to take: composite (default: the initial rate, then index + margin at consummation through the caps; the basis of the APR), highest, lowest, or index_values (the index at each change, from index_values).")
        .example("composite")
        .form("Rate path shown", "", ""),
    Field::new("index_values", Kind::Shape(super::adjustable::index_values_schema), "The index, in percent, at each rate change in turn (the last carried forward); with rate_path index_values, its default when given.")
        .example("4.8,5.6,6.1")
        .query("index_values=4.8,5.6,6.1 (percentages, repeated or comma-separated)")
        .form("Index at each change (%)", "For the index-values path: 4.8, 5.6, 6.1 (the last carried forward).", ""),
    Field::new("escrow_monthly", Kind::Money, "Estimated escrow (property taxes and insurance) with each payment, for the projected payments.")
        .example("410")
        .form("Escrow each month", "Estimated taxes and insurance.", ""),
    Field::new("mortgage_insurance_monthly", Kind::Money, "Mortgage insurance with each payment, for the projected payments and \"In 5 years\"; it ends after mortgage_insurance_payments, or, given property_value, when the balance is first scheduled at 78 % of the value (or at the term's midpoint), else runs to the end.")
        .example("95")
        .form("Mortgage insurance each month", "", ""),
    Field::new("mortgage_insurance_payments", Kind::Whole { min: 1, max: Some(MAX_PAYMENTS) }, "The number of payments mortgage insurance is paid with.")
        .example("84")
        .form("Mortgage insurance payments", "How many payments carry it (or give the property value).", ""),
    Field::new("label", Kind::Text { max: 80 }, "A name for the plan (in a comparison's rows); at most 80 characters are kept.")
        .example("Harbourside flat")
        .form("Label", "A name for this plan, shown on the page.", ""),
];

/// The schedule request: the level loan and the plan.
pub const SCHEDULE: Table = Table {
    schema: "LoanScheduleRequest",
    doc: "The fields of a loan schedule request. Give exactly one of term_months, term_payments and payment: the other is solved.",
    groups: &[LOAN, PLAN],
    except: &[],
    all_optional: false,
};

/// One extra payment of a JSON request.
pub const EXTRA_PAYMENT: Table = Table {
    schema: "ExtraPayment",
    doc: "An extra payment: once (`at` a payment number or a date, which needs first_payment_date) or recurring (`from` payment, optionally `to` and `every`).",
    groups: &[&[
        Field::new("amount", Kind::Money, "").required(),
        Field::new("at", Kind::Shape(super::table::number_or_date), ""),
        Field::new("from", Kind::Whole { min: 0, max: Some(MAX_PAYMENTS) }, ""),
        Field::new("to", Kind::Whole { min: 0, max: Some(MAX_PAYMENTS) }, ""),
        Field::new("every", Kind::Whole { min: 0, max: Some(MAX_PAYMENTS) }, ""),
    ]],
    except: &[],
    all_optional: false,
};

/// One rate change of a JSON request.
pub const RATE_CHANGE: Table = Table {
    schema: "RateChange",
    doc: "A new annual rate from payment `at` on.",
    groups: &[&[
        Field::new(
            "at",
            Kind::Whole {
                min: 0,
                max: Some(MAX_PAYMENTS),
            },
            "",
        )
        .required(),
        Field::new("annual_rate_percent", Kind::Percent, "").required(),
    ]],
    except: &[],
    all_optional: false,
};

/// Reads loan terms from request fields (JSON body or query string).
///
/// # Errors
/// Every bad or missing field, each with its pointer; then any engine range error.
pub fn read_loan_terms(f: &mut Fields<'_>) -> Option<LoanTerms> {
    let currency = f.currency(Currency::USD);
    let principal = f.decimal("principal");
    let rate = f.decimal("annual_rate_percent");
    let payment_frequency = f
        .pick(LOAN, "payment_frequency", |s| {
            Frequency::parse(s).filter(|f| *f != Frequency::Daily)
        })
        .or_else(|| {
            (!f.errors
                .iter()
                .any(|e| e.pointer.ends_with("payment_frequency")))
            .then_some(Frequency::Monthly)
        });
    let compounding = f.pick(LOAN, "compounding", Frequency::parse);
    let payment_rounding = f.pick(LOAN, "payment_rounding", |s| match s {
        "nearest" => Some(PaymentRounding::Nearest),
        "up" => Some(PaymentRounding::Up),
        _ => None,
    });
    let interest_rounding = f.pick(LOAN, "interest_rounding", |s| match s {
        "half_up" => Some(InterestRounding::HalfUp),
        "half_even" => Some(InterestRounding::HalfEven),
        _ => None,
    });
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
pub const PLAN_FIELDS: [&str; 17] = [
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
    "adjustable",
    "rate_path",
    "index_values",
    "escrow_monthly",
    "mortgage_insurance_monthly",
    "mortgage_insurance_payments",
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

pub use super::table::MAX_LIST_ITEMS;

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
    if let Some(d) = f.pick(PLAN, "day_count", DayCount::parse) {
        o.day_count = d;
    }
    if let Some(v) = f.pick(PLAN, "odd_days_interest", |s| match s {
        "first_payment" => Some(OddDaysInterest::FirstPayment),
        "prepaid" => Some(OddDaysInterest::Prepaid),
        _ => None,
    }) {
        o.odd_days_interest = v;
    }
    if let Some(v) = f.pick(PLAN, "rate_change_keeps", |s| match s {
        "term" => Some(RateChangeKeeps::Term),
        "payment" => Some(RateChangeKeeps::Payment),
        _ => None,
    }) {
        o.rate_change_keeps = v;
    }
    o.interest_only_payments = f.count("interest_only_payments", MAX_PAYMENTS).unwrap_or(0);
    o.balloon_after_payments = f.count("balloon_after_payments", MAX_PAYMENTS);
    o.property_value = money_in(f, "property_value", currency);
    super::adjustable::read_adjustable(f, &mut o, currency);
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
                        f.errors.push(FieldError::new(
                            pointer,
                            format!("must be an object, not {}", item.kind()),
                        ));
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
                None => f.errors.push(FieldError::new(
                    pointer,
                    "an extra payment on a date needs first_payment_date".into(),
                )),
                Some(first) => {
                    match crate::engine::calendar::due_dates(first, MAX_PAYMENTS, frequency) {
                        Ok(dates) => match dates.iter().position(|d| *d >= date) {
                            Some(index) => o.extras.push(Extra::Lump {
                                amount,
                                at: index as u32 + 1,
                            }),
                            None => f.errors.push(FieldError::new(
                                pointer,
                                "falls after the last possible payment".into(),
                            )),
                        },
                        Err(e) => f.errors.push(FieldError::new(pointer, e.message)),
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
                        f.errors.push(FieldError::new(
                            pointer,
                            format!("must be an object, not {}", item.kind()),
                        ));
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
