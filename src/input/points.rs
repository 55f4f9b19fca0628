//! The rate-and-points request: one loan and two to six options, each a rate
//! with its points and other costs (JSON body, or a query string whose options
//! are the repeated fields `option_label`, `option_rate_percent`,
//! `option_points_percent` and `option_other_costs`, taken in order).

use rust_decimal::Decimal;

use crate::engine::choices::points::{PricingOption, OPTIONS_RANGE};
use crate::engine::loan::MAX_PAYMENTS;
use crate::engine::money::Currency;
use crate::engine::rate::AnnualRate;
use crate::input::fields::{Fields, Source};
use crate::input::json::Json;
use crate::input::loan::{schedule_request_from, ScheduleRequest, LOAN, PLAN};
use crate::input::problem::{ApiError, FieldError};

use super::table::{Field, Kind, Table};

/// The most characters of an option's label.
pub const MAX_LABEL: usize = 40;

/// One option's fields (in a query: `option_` + the name, `option_rate_percent`
/// for the rate).
pub const OPTION_FIELDS: &[Field] = &[
    Field::new(
        "label",
        Kind::Text { max: MAX_LABEL },
        "A name for the option (default \"Option N\").",
    )
    .example("Two points")
    .form("Option", "", "Option 1"),
    Field::new(
        "annual_rate_percent",
        Kind::Percent,
        "The option's nominal annual rate.",
    )
    .required()
    .example("6.25")
    .form("Rate (% a year)", "", "6.5"),
    Field::new(
        "points_percent",
        Kind::Percent,
        "Points in percent of the principal (default 0; negative: a lender credit).",
    )
    .example("2")
    .form("Points (%)", "", "0"),
    Field::new(
        "other_costs",
        Kind::Money,
        "Other upfront costs of this option (default 0).",
    )
    .example("0")
    .form("Other costs", "", "0"),
];

/// One option of a JSON request.
pub const PRICING_OPTION: Table = Table {
    schema: "PricingOption",
    doc: "A rate-and-points option.",
    groups: &[OPTION_FIELDS],
    except: &[],
    all_optional: false,
};

/// The options and the horizon.
pub const OPTIONS_FIELDS: &[Field] = &[
    Field::new("options", Kind::List { item: &PRICING_OPTION, min: OPTIONS_RANGE.0, max: OPTIONS_RANGE.1 }, "Two to six options; the first is the one the others are measured against.")
        .query("option_label=Par&option_rate_percent=6.75&option_points_percent=0&option_other_costs=0, repeated once per option in order"),
    Field::new("horizon_months", Kind::Whole { min: 1, max: Some(MAX_PAYMENTS) }, "A horizon of your own, in months, costed beside 60, 84 and 120.")
        .example("96")
        .form("Keep the loan for (months)", "How long the borrower expects to keep the loan; costed beside 5, 7 and 10 years.", "96"),
];

/// The rate-and-points request: the loan's schedule fields (its rate comes
/// from each option), the options and a horizon.
pub const OPTIONS_REQUEST: Table = Table {
    schema: "RateOptionsRequest",
    doc: "One loan at two to six rate-and-points options. The loan's fields are the schedule's, without a rate or rate changes: each option carries its rate.",
    groups: &[LOAN, PLAN, OPTIONS_FIELDS],
    except: &["annual_rate_percent", "rate_changes", "rate_change_keeps"],
    all_optional: false,
};

/// The query parameters of `GET /api/v1/loans/options` beyond the options'
/// (which are [`OPTION_FIELDS`] under [`QUERY_NAMES`], repeated once an option).
pub const OPTIONS_QUERY: Table = Table {
    schema: "RateOptionsQuery",
    doc: "Rate-and-points options in a query: the loan's schedule fields (no rate), then each option's fields repeated in order: option_label, option_rate_percent, option_points_percent, option_other_costs.",
    groups: &[LOAN, PLAN, OPTIONS_FIELDS],
    except: &["annual_rate_percent", "rate_changes", "rate_change_keeps", "options"],
    all_optional: false,
};

/// The query names of an option's fields, in [`OPTION_FIELDS`]' order.
pub const QUERY_NAMES: [&str; 4] = [
    "option_label",
    "option_rate_percent",
    "option_points_percent",
    "option_other_costs",
];

/// A rate-and-points request read.
pub struct OptionsRequest {
    pub loan: ScheduleRequest,
    pub options: Vec<PricingOption>,
    pub horizon: Option<u32>,
}

/// Reads one option; `index` from 1.
fn read_option(
    mut f: Fields<'_>,
    index: usize,
    currency: Currency,
) -> Result<PricingOption, Vec<FieldError>> {
    let label = f.text("label").map(|s| {
        if s.chars().any(char::is_control) {
            f.error("label", "must be plain text");
        }
        s.chars().take(MAX_LABEL).collect::<String>()
    });
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
    let points_percent = f.decimal("points_percent").unwrap_or_default();
    let other_costs = f.decimal("other_costs").unwrap_or_default();
    if other_costs < Decimal::ZERO {
        f.error(
            "other_costs",
            "cannot be negative (give a lender credit as negative points)",
        );
    } else if !currency.fits(other_costs) {
        f.error(
            "other_costs",
            format!("has more decimals than {} has minor units", currency.code()),
        );
    }
    let errors = match f.finish() {
        Ok(()) => vec![],
        Err(e) => e,
    };
    match rate {
        Some(rate) if errors.is_empty() => Ok(PricingOption {
            label: label
                .filter(|l| !l.trim().is_empty())
                .unwrap_or_else(|| format!("Option {index}")),
            rate,
            points_percent,
            other_costs,
        }),
        _ => Err(errors),
    }
}

fn currency_of(text: Option<&str>) -> Currency {
    text.and_then(Currency::parse).unwrap_or(Currency::USD)
}

/// Reads the loan with the first option's rate put in (each option has its own).
fn read_loan(f: Fields<'_>, errors: &mut Vec<FieldError>) -> Option<ScheduleRequest> {
    match schedule_request_from(f) {
        Ok(r) => Some(r),
        Err(e) => {
            errors.extend(e.errors);
            None
        }
    }
}

fn finish(
    loan: Option<ScheduleRequest>,
    options: Vec<PricingOption>,
    horizon: Option<u32>,
    mut errors: Vec<FieldError>,
    count: usize,
    options_pointer: &str,
) -> Result<OptionsRequest, ApiError> {
    if errors.is_empty() && (count < OPTIONS_RANGE.0 || count > OPTIONS_RANGE.1) {
        errors.push(FieldError::new(
            options_pointer.into(),
            format!(
                "list {} to {} options to compare (this request lists {count})",
                OPTIONS_RANGE.0, OPTIONS_RANGE.1
            ),
        ));
    }
    match loan {
        Some(loan) if errors.is_empty() => Ok(OptionsRequest {
            loan,
            options,
            horizon,
        }),
        _ => Err(ApiError::fields(errors)),
    }
}

/// Reads a JSON rate-and-points request.
///
/// # Errors
/// Every bad field at once, options pointed at as `/options/N/…`.
pub fn read_json(body: &Json) -> Result<OptionsRequest, ApiError> {
    let Json::Object(members) = body else {
        unreachable!("checked by the extractor")
    };
    let mut errors = Vec::new();
    let currency = currency_of(match body.get("currency") {
        Some(Json::String(s)) => Some(s.as_str()),
        _ => None,
    });
    let mut options = Vec::new();
    let mut count = 0;
    match body.get("options") {
        Some(Json::Array(items)) => {
            count = items.len();
            if count <= OPTIONS_RANGE.1 {
                for (i, item) in items.iter().enumerate() {
                    let pointer = format!("/options/{i}");
                    match item {
                        Json::Object(m) => match read_option(
                            Fields::new(Source::Json {
                                members: m,
                                pointer: &pointer,
                            }),
                            i + 1,
                            currency,
                        ) {
                            Ok(o) => options.push(o),
                            Err(e) => errors.extend(e),
                        },
                        other => errors.push(FieldError::new(
                            pointer,
                            format!("must be an object, not {}", other.kind()),
                        )),
                    }
                }
            }
        }
        Some(other) => errors.push(FieldError::new(
            "/options".into(),
            format!("must be an array, not {}", other.kind()),
        )),
        None => errors.push(FieldError::new(
            "/options".into(),
            "is required: two to six options".into(),
        )),
    }
    if members.iter().any(|(k, _)| k == "annual_rate_percent") {
        errors.push(FieldError::new(
            "/annual_rate_percent".into(),
            "each option carries its own rate: give it as options/N/annual_rate_percent".into(),
        ));
    }
    let mut f = Fields::new(Source::Json {
        members,
        pointer: "",
    });
    f.has("options");
    f.has("annual_rate_percent");
    let horizon = f.whole("horizon_months", "96");
    errors.extend(f.errors);
    let rate = options
        .first()
        .map_or("5".to_string(), |o| o.rate.percent().to_string());
    let loan_members: Vec<(String, Json)> = members
        .iter()
        .filter(|(k, _)| {
            !["options", "horizon_months", "annual_rate_percent"].contains(&k.as_str())
        })
        .cloned()
        .chain(std::iter::once((
            "annual_rate_percent".to_string(),
            Json::String(rate),
        )))
        .collect();
    let loan = read_loan(
        Fields::new(Source::Json {
            members: &loan_members,
            pointer: "",
        }),
        &mut errors,
    );
    let loan = refuse_rate_changes(loan, &mut errors, "/");
    finish(loan, options, horizon, errors, count, "/options")
}

fn refuse_rate_changes(
    loan: Option<ScheduleRequest>,
    errors: &mut Vec<FieldError>,
    prefix: &str,
) -> Option<ScheduleRequest> {
    let loan = loan?;
    if !loan.options.rate_changes.is_empty() {
        errors.push(FieldError::new(
            format!("{prefix}rate_changes"),
            "each option is a fixed rate: rate changes are not compared here".into(),
        ));
    }
    Some(loan)
}

/// Reads a query rate-and-points request; with `lenient`, numbers as a person types them.
///
/// # Errors
/// Every bad field at once; an option's error names it ("option 2: …").
pub fn read_query(pairs: &[(String, String)], lenient: bool) -> Result<OptionsRequest, ApiError> {
    let mut errors = Vec::new();
    let currency = currency_of(
        pairs
            .iter()
            .find(|(k, _)| k == "currency")
            .map(|(_, v)| v.as_str()),
    );
    let column = |name: &str| -> Vec<&str> {
        pairs
            .iter()
            .filter(|(k, _)| k == name)
            .map(|(_, v)| v.as_str())
            .collect()
    };
    let columns: Vec<Vec<&str>> = QUERY_NAMES.iter().map(|n| column(n)).collect();
    let rows = columns.iter().map(Vec::len).max().unwrap_or(0);
    // The fields of an option are matched by position: each given field must be
    // given once an option (empty for its default), or they would slide onto
    // the wrong options.
    for (name, column) in QUERY_NAMES.iter().zip(&columns) {
        if !column.is_empty() && column.len() != rows {
            errors.push(FieldError::new(
                (*name).to_string(),
                format!(
                    "is given {} times for {rows} options: give it once an option, in order (empty for its default), so each value meets its option",
                    column.len()
                ),
            ));
        }
    }
    let mut options = Vec::new();
    let mut count = 0;
    for r in 0..rows {
        let cells: Vec<&str> = columns
            .iter()
            .map(|c| c.get(r).copied().unwrap_or("").trim())
            .collect();
        if cells.iter().all(|c| c.is_empty()) {
            continue; // a blank row of the page's form
        }
        count += 1;
        if count > OPTIONS_RANGE.1 {
            continue;
        }
        let p: Vec<(String, String)> = OPTION_FIELDS
            .iter()
            .zip(&cells)
            .filter(|(_, v)| !v.is_empty())
            .map(|(f, v)| (f.name.to_string(), (*v).to_string()))
            .collect();
        let mut f = Fields::new(Source::Query(&p));
        f.lenient = lenient;
        match read_option(f, count, currency) {
            Ok(o) => options.push(o),
            Err(e) => errors.extend(e.into_iter().map(|mut e| {
                let i = OPTION_FIELDS
                    .iter()
                    .position(|f| f.name == e.pointer)
                    .unwrap_or(1);
                e.pointer = QUERY_NAMES[i].to_string();
                e.message = format!("option {count}: {}", e.message);
                e
            })),
        }
    }
    if pairs.iter().any(|(k, _)| k == "annual_rate_percent") {
        errors.push(FieldError::new(
            "annual_rate_percent".into(),
            "each option carries its own rate: give it as option_rate_percent".into(),
        ));
    }
    let top: Vec<(String, String)> = pairs
        .iter()
        .filter(|(k, _)| k == "horizon_months")
        .cloned()
        .collect();
    let mut f = Fields::new(Source::Query(&top));
    let horizon = f.whole("horizon_months", "96");
    errors.extend(f.errors);
    let rate = options
        .first()
        .map_or("5".to_string(), |o| o.rate.percent().to_string());
    let loan_pairs: Vec<(String, String)> = pairs
        .iter()
        .filter(|(k, _)| {
            !QUERY_NAMES.contains(&k.as_str())
                && k != "horizon_months"
                && k != "annual_rate_percent"
        })
        .cloned()
        .chain(std::iter::once(("annual_rate_percent".to_string(), rate)))
        .collect();
    let mut f = Fields::new(Source::Query(&loan_pairs));
    f.lenient = lenient;
    let loan = read_loan(f, &mut errors);
    let loan = refuse_rate_changes(loan, &mut errors, "");
    finish(loan, options, horizon, errors, count, "option_rate_percent")
}
