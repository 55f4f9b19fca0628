//! The refinance request: the current loan, the new loan and the costs (JSON
//! body, or a query string where the current loan's fields are `current.NAME`
//! and the new loan's fields are the schedule's own names).

use rust_decimal::Decimal;

use crate::engine::choices::refinance::{
    current_position, CurrentLoan, CurrentPosition, RefinanceCosts,
};
use crate::engine::loan::MAX_PAYMENTS;
use crate::engine::money::Currency;
use crate::engine::rate::{AnnualRate, Frequency};
use crate::input::fields::{Fields, Source};
use crate::input::json::Json;
use crate::input::loan::{schedule_request_from, ScheduleRequest, LOAN, PLAN};
use crate::input::problem::{ApiError, FieldError};

use super::table::{Field, Kind, Table, CURRENCY};

/// The costs of a refinance and the horizon, at the top of the request.
pub const REFINANCE_COSTS: &[Field] = &[
    Field::new("closing_costs", Kind::Money, "Closing costs other than points, in the new loan's currency (default 0).")
        .example("3200")
        .form("Closing costs", "Fees other than points.", "3,200"),
    Field::new("points_percent", Kind::Percent, "Points in percent of the new principal (default 0; negative: a lender credit).")
        .example("1")
        .form("Points (% of the new loan)", "1 point is 1 % of the new loan amount; a lender credit is negative.", "0"),
    Field::new("financed_costs", Kind::Money, "The part of the closing costs and points added to the new principal (default 0); the rest is paid in cash at closing.")
        .example("0")
        .form("Costs added to the new loan", "The rest of the costs is paid in cash at closing.", "0"),
    Field::new("cash_out", Kind::Money, "Cash taken out at closing (default 0). The new principal defaults to the current balance + financed costs + cash out.")
        .example("0")
        .form("Cash out", "Cash the borrower takes at closing.", "0"),
    Field::new("horizon_months", Kind::Whole { min: 1, max: Some(MAX_PAYMENTS) }, "A horizon of your own, in months, costed beside 60, 84 and 120.")
        .example("96")
        .form("Keep the loan for (months)", "How long the borrower expects to keep the loan; costed beside 5, 7 and 10 years.", "96"),
];

/// The loan being refinanced (monthly payments): its balance, rate and payments
/// left, or its original terms and the payments made.
pub const CURRENT_FIELDS: &[Field] = &[
    Field::new(
        "balance",
        Kind::Money,
        "The balance owed today (with annual_rate_percent and remaining_payments).",
    )
    .example("187500")
    .form(
        "Balance owed today",
        "Or give the original loan below.",
        "187,500",
    ),
    Field::new(
        "annual_rate_percent",
        Kind::Percent,
        "The current loan's nominal annual rate.",
    )
    .required()
    .example("7.25")
    .form("Current rate (% a year)", "", "7.25"),
    Field::new(
        "remaining_payments",
        Kind::Whole {
            min: 1,
            max: Some(MAX_PAYMENTS),
        },
        "The monthly payments left.",
    )
    .example("312")
    .form("Payments left", "Monthly payments still to make.", "312"),
    Field::new(
        "principal",
        Kind::Money,
        "The amount first borrowed (with term_months and payments_made, instead of balance).",
    )
    .example("200000")
    .form(
        "Original loan amount",
        "Instead of the balance: the loan as first made.",
        "",
    ),
    Field::new(
        "term_months",
        Kind::Whole {
            min: 1,
            max: Some(MAX_PAYMENTS),
        },
        "The original term in months.",
    )
    .example("360")
    .form("Original term in months", "", ""),
    Field::new(
        "payments_made",
        Kind::Whole {
            min: 0,
            max: Some(MAX_PAYMENTS),
        },
        "The monthly payments already made.",
    )
    .example("48")
    .form("Payments made", "", ""),
    CURRENCY,
];

/// The current loan of a JSON request.
pub const CURRENT_LOAN: Table = Table {
    schema: "CurrentLoan",
    doc: "The loan being refinanced, paid monthly: {balance, annual_rate_percent, remaining_payments} or {principal, annual_rate_percent, term_months, payments_made}. Its currency, when given, must be the new loan's.",
    groups: &[CURRENT_FIELDS],
    except: &[],
    all_optional: false,
};

/// The new loan: the schedule's fields, its principal optional.
pub const NEW_LOAN: Table = Table {
    schema: "RefinanceNewLoan",
    doc: "The new loan: the loan schedule's fields, paid monthly. annual_rate_percent and one of term_months, term_payments and payment are required; principal defaults to the current balance + financed_costs + cash_out.",
    groups: &[LOAN, PLAN],
    except: &[],
    all_optional: true,
};

/// The refinance request (JSON).
pub const REFINANCE: Table = Table {
    schema: "RefinanceRequest",
    doc: "A refinance: the current loan, the new loan and the costs. In a query, the current loan's fields are current.NAME (current.balance=187500) and the new loan's are the schedule's own names.",
    groups: &[
        &[
            Field::new("current", Kind::Object(&CURRENT_LOAN), "").required(),
            Field::new("new", Kind::Object(&NEW_LOAN), "").required(),
        ],
        REFINANCE_COSTS,
    ],
    except: &[],
    all_optional: false,
};

/// The query parameters of `GET /api/v1/refinance` beyond the current loan's
/// (which are [`CURRENT_FIELDS`] under [`CURRENT_PREFIX`]).
pub const REFINANCE_QUERY: Table = Table {
    schema: "RefinanceQuery",
    doc: "A refinance in a query: the new loan's schedule fields under their own names, the costs, and the current loan's fields as current.NAME (current.balance=187500&current.annual_rate_percent=7.25&current.remaining_payments=312).",
    groups: &[LOAN, PLAN, REFINANCE_COSTS],
    except: &[],
    all_optional: true,
};

/// The prefix of the current loan's fields in a query.
pub const CURRENT_PREFIX: &str = "current.";

/// A refinance read: where the current loan stands, the new loan, the costs.
pub struct RefinanceRequest {
    pub current: CurrentPosition,
    pub new: ScheduleRequest,
    pub costs: RefinanceCosts,
    pub horizon: Option<u32>,
}

/// The errors of `e`, their pointers under `prefix` (a query's `current.`).
fn under(prefix: &str, errors: Vec<FieldError>) -> Vec<FieldError> {
    errors
        .into_iter()
        .map(|mut e| {
            e.pointer = format!("{prefix}{}", e.pointer);
            e
        })
        .collect()
}

/// Reads an amount: at least zero, in the currency's minor units.
fn amount(f: &mut Fields<'_>, name: &'static str, currency: Currency) -> Decimal {
    let Some(v) = f.decimal(name) else {
        return Decimal::ZERO;
    };
    if v < Decimal::ZERO {
        f.error(name, "cannot be negative");
    } else if !currency.fits(v) {
        f.error(
            name,
            format!(
                "has more decimals than {} has minor units ({})",
                currency.code(),
                currency.minor_units()
            ),
        );
    }
    v
}

fn read_current(mut f: Fields<'_>, currency: Currency) -> Result<CurrentLoan, Vec<FieldError>> {
    let own = f.currency(currency);
    if let Some(c) = own {
        if c != currency {
            f.error(
                "currency",
                format!(
                    "must be the new loan's currency ({}), not {}: the costs and savings are compared in one currency",
                    currency.code(),
                    c.code()
                ),
            );
        }
    }
    let rate = f.decimal("annual_rate_percent");
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
    let balance = f
        .has("balance")
        .then(|| amount(&mut f, "balance", currency));
    let remaining = f.whole("remaining_payments", "312");
    let principal = f
        .has("principal")
        .then(|| amount(&mut f, "principal", currency));
    let term = f.whole("term_months", "360");
    let made = f.whole("payments_made", "48");
    let mut current = None;
    match (balance, principal) {
        (Some(_), Some(_)) => f.error(
            "principal",
            "give the balance today or the original loan (principal, term_months, payments_made), not both",
        ),
        (Some(balance), None) => {
            if term.is_some() || made.is_some() {
                f.error(
                    if term.is_some() { "term_months" } else { "payments_made" },
                    "goes with the original principal, not with the balance",
                );
            }
            match (remaining, rate) {
                (Some(remaining_payments), Some(rate)) => {
                    current = Some(CurrentLoan::Balance {
                        balance,
                        rate,
                        remaining_payments,
                    });
                }
                (None, _) if !f.errors.iter().any(|e| e.pointer.ends_with("remaining_payments")) => {
                    f.error("remaining_payments", "is required with the balance");
                }
                _ => {}
            }
        }
        (None, Some(principal)) => {
            if remaining.is_some() {
                f.error("remaining_payments", "goes with the balance, not with the original principal");
            }
            for (name, v) in [("term_months", term), ("payments_made", made)] {
                if v.is_none() && !f.errors.iter().any(|e| e.pointer.ends_with(name)) {
                    f.error(name, "is required with the original principal");
                }
            }
            if let (Some(term_payments), Some(payments_made), Some(rate)) = (term, made, rate) {
                current = Some(CurrentLoan::Original {
                    principal,
                    rate,
                    term_payments,
                    payments_made,
                });
            }
        }
        (None, None) => f.error(
            "balance",
            "is required: give the balance today with remaining_payments, or the original principal with term_months and payments_made",
        ),
    }
    let errors = match f.finish() {
        Ok(()) => vec![],
        Err(e) => e,
    };
    match current {
        Some(c) if errors.is_empty() => Ok(c),
        _ => Err(errors),
    }
}

fn with_leniency(source: Source<'_>, lenient: bool) -> Fields<'_> {
    let mut f = Fields::new(source);
    f.lenient = lenient;
    f
}

/// The parts of a request, from either source.
enum Parts<'a> {
    Json {
        top: &'a [(String, Json)],
        current: Option<&'a [(String, Json)]>,
        new: Option<Vec<(String, Json)>>,
    },
    Query {
        top: Vec<(String, String)>,
        current: Vec<(String, String)>,
        new: Vec<(String, String)>,
    },
}

/// Reads a JSON refinance.
///
/// # Errors
/// Every bad field at once, pointing into `current`, `new` or the top.
pub fn read_json(body: &Json) -> Result<RefinanceRequest, ApiError> {
    let Json::Object(top) = body else {
        unreachable!("checked by the extractor")
    };
    let mut errors = Vec::new();
    let mut object = |name: &str| match body.get(name) {
        Some(Json::Object(m)) => Some(m.as_slice()),
        Some(other) => {
            errors.push(FieldError::new(
                format!("/{name}"),
                format!("must be an object, not {}", other.kind()),
            ));
            None
        }
        None => {
            errors.push(FieldError::new(format!("/{name}"), "is required".into()));
            None
        }
    };
    let current = object("current");
    let new = object("new").map(<[_]>::to_vec);
    read(Parts::Json { top, current, new }, errors, false)
}

/// Reads a query refinance; with `lenient`, numbers as a person types them.
///
/// # Errors
/// Every bad field at once.
pub fn read_query(pairs: &[(String, String)], lenient: bool) -> Result<RefinanceRequest, ApiError> {
    let mut top = Vec::new();
    let mut current = Vec::new();
    let mut new = Vec::new();
    for (k, v) in pairs {
        if let Some(name) = k.strip_prefix(CURRENT_PREFIX) {
            current.push((name.to_string(), v.clone()));
        } else if REFINANCE_COSTS.iter().any(|f| f.name == k) {
            top.push((k.clone(), v.clone()));
        } else {
            new.push((k.clone(), v.clone()));
        }
    }
    read(Parts::Query { top, current, new }, vec![], lenient)
}

fn read(
    parts: Parts<'_>,
    mut errors: Vec<FieldError>,
    lenient: bool,
) -> Result<RefinanceRequest, ApiError> {
    // The new loan's currency comes first: every amount is read in it.
    let new_currency = match &parts {
        Parts::Json { new, .. } => new.as_ref().and_then(|m| {
            m.iter()
                .find(|(k, _)| k == "currency")
                .and_then(|(_, v)| match v {
                    Json::String(s) => Currency::parse(s),
                    _ => None,
                })
        }),
        Parts::Query { new, .. } => new
            .iter()
            .find(|(k, _)| k == "currency")
            .and_then(|(_, v)| Currency::parse(v)),
    }
    .unwrap_or(Currency::USD);
    // The costs, at the top.
    let mut f = match &parts {
        Parts::Json { top, .. } => with_leniency(
            Source::Json {
                members: top,
                pointer: "",
            },
            lenient,
        ),
        Parts::Query { top, .. } => with_leniency(Source::Query(top), lenient),
    };
    if matches!(parts, Parts::Json { .. }) {
        f.has("current");
        f.has("new");
    }
    let closing_costs = amount(&mut f, "closing_costs", new_currency);
    let points_percent = f.decimal("points_percent").unwrap_or_default();
    let financed_costs = amount(&mut f, "financed_costs", new_currency);
    let cash_out = f
        .has("cash_out")
        .then(|| amount(&mut f, "cash_out", new_currency));
    let horizon = f.whole("horizon_months", "96");
    if let Err(e) = f.finish() {
        errors.extend(e);
    }
    // The current loan, and where it stands.
    let (current_source, prefix) = match &parts {
        Parts::Json { current, .. } => (
            current.map(|m| {
                with_leniency(
                    Source::Json {
                        members: m,
                        pointer: "/current",
                    },
                    lenient,
                )
            }),
            "",
        ),
        Parts::Query { current, .. } => (
            Some(with_leniency(Source::Query(current), lenient)),
            CURRENT_PREFIX,
        ),
    };
    let position = match current_source.map(|f| read_current(f, new_currency)) {
        Some(Ok(c)) => match current_position(&c, new_currency) {
            Ok(p) => Some(p),
            Err(e) => {
                let pointer = if prefix.is_empty() {
                    "/current/"
                } else {
                    prefix
                };
                let field = e.field.unwrap_or("balance");
                errors.push(FieldError::new(format!("{pointer}{field}"), e.message));
                None
            }
        },
        Some(Err(e)) => {
            errors.extend(under(prefix, e));
            None
        }
        None => None,
    };
    // The new loan, its principal by default the balance + financed costs + cash out.
    let default_principal = position.as_ref().map_or(Decimal::ONE, |p| {
        p.balance + financed_costs + cash_out.unwrap_or_default()
    });
    let principal_text = default_principal.normalize().to_string();
    let (new, gave_principal) = match parts {
        Parts::Json {
            new: Some(mut m), ..
        } => {
            let gave = m.iter().any(|(k, _)| k == "principal");
            if !gave {
                m.push(("principal".into(), Json::String(principal_text)));
            }
            let r = schedule_request_from(with_leniency(
                Source::Json {
                    members: &m,
                    pointer: "/new",
                },
                lenient,
            ));
            (Some(r), gave)
        }
        Parts::Json { new: None, .. } => (None, false),
        Parts::Query { mut new, .. } => {
            let gave = new.iter().any(|(k, _)| k == "principal");
            if !gave {
                new.push(("principal".into(), principal_text));
            }
            (
                Some(schedule_request_from(with_leniency(
                    Source::Query(&new),
                    lenient,
                ))),
                gave,
            )
        }
    };
    let new_pointer = |name: &str| {
        if prefix.is_empty() {
            format!("/new/{name}")
        } else {
            name.to_string()
        }
    };
    let new = match new {
        Some(Ok(r)) => {
            if r.terms.payment_frequency != Frequency::Monthly {
                errors.push(FieldError::new(
                    new_pointer("payment_frequency"),
                    "must be monthly: a refinance is compared month by month".into(),
                ));
            }
            if gave_principal {
                if let (Some(cash), Some(p)) = (cash_out, &position) {
                    let implied = r.terms.principal - p.balance - financed_costs;
                    if implied != cash {
                        errors.push(FieldError::new(
                            new_pointer("principal"),
                            format!(
                                "is the balance + financed costs + cash out ({}) when cash_out is given; give one of the two",
                                new_currency.format(p.balance + financed_costs + cash)
                            ),
                        ));
                    }
                }
            }
            Some(r)
        }
        Some(Err(e)) => {
            errors.extend(e.errors);
            None
        }
        None => None,
    };
    match (position, new) {
        (Some(current), Some(new)) if errors.is_empty() => Ok(RefinanceRequest {
            current,
            new,
            costs: RefinanceCosts {
                closing_costs,
                points_percent,
                financed_costs,
            },
            horizon,
        }),
        _ => Err(ApiError::fields(errors)),
    }
}
