//! The loan check request: the loan's fields, the quotes, the prepaid finance charges.

use crate::engine::disclosure::{PrepaidFinanceCharge, Quotes};
use crate::engine::money::Currency;
use crate::engine::plan::PlanOptions;
use crate::engine::rate::Frequency;
use crate::engine::schedule::LoanTerms;
use crate::input::fields::{parse_decimal, Fields, Raw, Source};
use crate::input::json::Json;
use crate::input::loan::{read_loan_terms, read_plan_options};
use crate::input::problem::{ApiError, FieldError};
use rust_decimal::Decimal;

use super::loan::{LOAN, PLAN};
use super::table::{Field, Kind, Table};

/// The quotes a check compares, and what shapes the disclosure.
pub const QUOTES: &[Field] = &[
    Field::new("quoted_payment", Kind::Money, "Compared with the posted payment to the minor unit.")
        .example("1684.30")
        .form("Quoted payment", "The payment on the quote.", "1,684.30"),
    Field::new("quoted_apr_percent", Kind::Percent, "Compared with the APR within the tolerance of 12 CFR 1026.22(a)(2)–(3).")
        .example("7.25")
        .form("Quoted APR (%)", "The annual percentage rate on the quote.", "7.25"),
    Field::new("quoted_finance_charge", Kind::Money, "Compared within the tolerance of 12 CFR 1026.18(d).")
        .example("412000")
        .form("Quoted finance charge", "", ""),
    Field::new("prepaid_finance_charges", Kind::List { item: &PREPAID_CHARGE, min: 0, max: MAX_CHARGES }, "Prepaid finance charges, at most 50.")
        .example("origination:2500")
        .query("prepaid_finance_charges=origination:1250.00,points:2500 (name, a colon, the amount; names without commas)")
        .form("Prepaid finance charges", "name:amount, separated by commas, e.g. origination:1250.00, points:2500.", "origination:1250.00"),
    Field::new("mortgage", Kind::Flag { yes: "Yes, secured by real property", no: "No", default: "Yes, secured by real property (default)" }, "Selects the finance-charge tolerance of §1026.18(d)(1) (true, default) or (d)(2).")
        .example("true")
        .query("true or false")
        .form("Secured by real property", "Chooses the finance-charge tolerance.", ""),
];

/// The check request: the loan's fields (without extra payments or a label:
/// a disclosure counts scheduled payments only) and the quotes.
pub const CHECK: Table = Table {
    schema: "LoanCheckRequest",
    doc: "The loan's fields (as for a schedule, without extra payments and label) and the quotes to check.",
    groups: &[LOAN, PLAN, QUOTES],
    except: &["extra_payments", "label"],
    all_optional: false,
};

/// One prepaid finance charge of a JSON request.
pub const PREPAID_CHARGE: Table = Table {
    schema: "PrepaidFinanceCharge",
    doc: "A prepaid finance charge.",
    groups: &[&[
        Field::new("name", Kind::Text { max: MAX_NAME }, "").required(),
        Field::new("amount", Kind::Money, "").required(),
    ]],
    except: &[],
    all_optional: false,
};

/// The most prepaid finance charges a request may list.
pub const MAX_CHARGES: usize = 50;

/// The longest name of a prepaid finance charge.
const MAX_NAME: usize = 80;

/// A parsed check request.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CheckRequest {
    pub terms: LoanTerms,
    pub options: PlanOptions,
    pub prepaid: Vec<PrepaidFinanceCharge>,
    pub quotes: Quotes,
    pub mortgage: bool,
}

/// A yes-or-no field: a JSON boolean, or `true`/`false` in a query.
fn read_bool(f: &mut Fields<'_>, name: &'static str) -> Option<bool> {
    let value = match f.raw(name)? {
        Raw::Json(Json::Bool(b)) => Some(*b),
        Raw::Text("true") => Some(true),
        Raw::Text("false") => Some(false),
        _ => None,
    };
    if value.is_none() {
        f.error(name, "must be true or false");
    }
    value
}

fn check_charge_amount(amount: Decimal, currency: Currency) -> Result<Decimal, String> {
    if amount.is_sign_negative() && !amount.is_zero() {
        return Err("a prepaid finance charge cannot be negative".into());
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

fn check_name(name: &str) -> Result<String, String> {
    let name = name.trim();
    if name.is_empty() {
        return Err("a prepaid finance charge needs a name, e.g. origination".into());
    }
    if name.chars().count() > MAX_NAME || name.chars().any(char::is_control) {
        return Err(format!(
            "a name has at most {MAX_NAME} characters and no control characters"
        ));
    }
    Ok(name.to_string())
}

/// Parses the query form `origination:1250.00,points:2500`.
///
/// # Errors
/// A message for a person, quoting the item.
pub fn parse_charges_text(
    text: &str,
    currency: Currency,
) -> Result<Vec<PrepaidFinanceCharge>, String> {
    let items: Vec<&str> = text
        .split(',')
        .map(str::trim)
        .filter(|t| !t.is_empty())
        .collect();
    if items.len() > MAX_CHARGES {
        return Err(format!("at most {MAX_CHARGES} prepaid finance charges"));
    }
    items
        .into_iter()
        .map(|item| {
            let quote =
                |m: String| format!("\"{}\": {m}", item.chars().take(60).collect::<String>());
            let (name, amount) = item.rsplit_once(':').ok_or_else(|| {
                quote("write each charge as name:amount, e.g. origination:1250.00".into())
            })?;
            let name = check_name(name).map_err(quote)?;
            let amount = parse_decimal(amount.trim(), false)
                .map_err(|m| quote(format!("the amount {m}")))?;
            let amount = check_charge_amount(amount, currency).map_err(quote)?;
            Ok(PrepaidFinanceCharge { name, amount })
        })
        .collect()
}

fn read_charges(
    f: &mut Fields<'_>,
    currency: Currency,
    errors: &mut Vec<FieldError>,
) -> Vec<PrepaidFinanceCharge> {
    let name = "prepaid_finance_charges";
    let mut charges = Vec::new();
    match f.raw(name) {
        None => {}
        Some(Raw::Text(t)) => match parse_charges_text(t, currency) {
            Ok(c) => charges = c,
            Err(m) => f.error(name, m),
        },
        Some(Raw::Json(Json::Array(items))) if items.len() > MAX_CHARGES => {
            f.error(name, format!("may list at most {MAX_CHARGES} charges"))
        }
        Some(Raw::Json(Json::Array(items))) => {
            for (index, item) in items.iter().enumerate() {
                let pointer = format!("/{name}/{index}");
                let Json::Object(members) = item else {
                    errors.push(FieldError::new(
                        pointer,
                        format!(
                            "must be an object {{\"name\", \"amount\"}}, not {}",
                            item.kind()
                        ),
                    ));
                    continue;
                };
                let mut g = Fields::new(Source::Json {
                    members,
                    pointer: &pointer,
                });
                let charge_name = match g.text("name") {
                    Some(n) => match check_name(n) {
                        Ok(n) => Some(n),
                        Err(m) => {
                            g.error("name", m);
                            None
                        }
                    },
                    None => {
                        if !g.errors.iter().any(|e| e.pointer.ends_with("/name")) {
                            g.error("name", "is required");
                        }
                        None
                    }
                };
                let amount = match g.decimal("amount") {
                    Some(a) => match check_charge_amount(a, currency) {
                        Ok(a) => Some(a),
                        Err(m) => {
                            g.error("amount", m);
                            None
                        }
                    },
                    None => {
                        if !g.errors.iter().any(|e| e.pointer.ends_with("/amount")) {
                            g.error("amount", "is required");
                        }
                        None
                    }
                };
                match g.finish() {
                    Err(e) => errors.extend(e),
                    Ok(()) => {
                        if let (Some(name), Some(amount)) = (charge_name, amount) {
                            charges.push(PrepaidFinanceCharge { name, amount });
                        }
                    }
                }
            }
        }
        Some(Raw::Json(other)) => f.error(
            name,
            format!(
                "must be an array of {{\"name\", \"amount\"}}, not {}",
                other.kind()
            ),
        ),
    }
    charges
}

/// Reads a check request.
///
/// # Errors
/// Every bad field, with its pointer (or parameter name).
pub fn read_check(mut f: Fields<'_>) -> Result<CheckRequest, ApiError> {
    let terms = read_loan_terms(&mut f);
    let currency = terms.as_ref().map_or(Currency::USD, |t| t.currency);
    let frequency = terms
        .as_ref()
        .map_or(Frequency::Monthly, |t| t.payment_frequency);
    let options = read_plan_options(&mut f, currency, frequency);
    if !options.extras.is_empty() {
        f.error(
            "extra_payments",
            "a disclosure counts the scheduled payments only: leave extra payments out of a check",
        );
    }
    let quotes = Quotes {
        payment: f.decimal("quoted_payment"),
        apr_percent: f.decimal("quoted_apr_percent"),
        finance_charge: f.decimal("quoted_finance_charge"),
    };
    for e in crate::engine::disclosure::quote_problems(&quotes, currency) {
        f.error(e.field.unwrap_or("quoted_payment"), e.message);
    }
    let mortgage = if f.has("mortgage") {
        read_bool(&mut f, "mortgage")
    } else {
        Some(true)
    };
    let mut errors = Vec::new();
    let prepaid = read_charges(&mut f, currency, &mut errors);
    let mut all = std::mem::take(&mut f.errors);
    if let Err(e) = f.finish() {
        all.extend(e);
    }
    all.extend(errors);
    match (terms, mortgage) {
        (Some(terms), Some(mortgage)) if all.is_empty() => Ok(CheckRequest {
            terms,
            options,
            prepaid,
            quotes,
            mortgage,
        }),
        _ => Err(ApiError::fields(all)),
    }
}
