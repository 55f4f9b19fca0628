//! Lists a person enters as rows of ordinary fields (extra payments, rate
//! changes, prepaid finance charges), and the compact list the API reads.
//!
//! A page's address holds the rows' own fields (`extra_amount=150&extra_from=13…`),
//! read by position; an address in the API's compact form
//! (`extra_payments=150@13-`) is shown as filled rows, so an older link still
//! opens as a form a person can read. Either way the page computes with the
//! compact list, through the API's own reader.

use super::form::{tidy_number, Rows};
use crate::input::problem::ApiError;

/// A list entered as rows.
pub struct RowKind {
    /// The API's list parameter the rows become.
    pub param: &'static str,
    /// The id of the rows' fieldset (the error summary links to it).
    pub id: &'static str,
    pub legend: &'static str,
    pub hint: &'static str,
    /// (parameter name, column heading, `inputmode`).
    pub columns: &'static [(&'static str, &'static str, &'static str)],
    /// Blank rows shown when none is typed (a form without a script adds no rows).
    pub shown: usize,
    /// The legend of the form group the rows follow.
    pub after: &'static str,
    /// One row's cells as one item of the compact list, or what is wrong.
    pub to_item: fn(&[&str]) -> Result<String, String>,
    /// One item of the compact list as a row's cells.
    pub from_item: fn(&str) -> Option<Vec<String>>,
}

/// The legend of the form group of dates and the loan's shape, which the
/// extra payments and rate changes follow.
pub const DATES_GROUP: &str = "Dates and the shape of the loan";

/// Extra payments: an amount, the first payment (a number or a date), how
/// often, and the last payment.
pub const EXTRAS: RowKind = RowKind {
    param: "extra_payments",
    id: "extras",
    legend: "Extra payments",
    hint: "For one extra payment, give the amount and the payment number (or its date) and leave the rest blank. For a repeated one, give how often (1 for every payment, 12 for one a year) and, if it stops, the last payment.",
    columns: &[
        ("extra_amount", "Amount", "decimal"),
        ("extra_from", "First payment (number or date)", "text"),
        ("extra_every", "Every n payments (blank: once)", "numeric"),
        ("extra_until", "Last payment (blank: to the end)", "numeric"),
    ],
    shown: 2,
    after: DATES_GROUP,
    to_item: extra_item,
    from_item: extra_cells,
};

/// Scheduled rate changes: from which payment, and the new rate.
pub const RATE_CHANGES: RowKind = RowKind {
    param: "rate_changes",
    id: "rate-changes",
    legend: "Rate changes",
    hint: "The payment from which a new annual rate applies, and that rate, for example payment 61 at 7.25 %.",
    columns: &[
        ("change_from", "From payment", "numeric"),
        ("change_rate", "New annual rate (%)", "decimal"),
    ],
    shown: 2,
    after: DATES_GROUP,
    to_item: change_item,
    from_item: change_cells,
};

/// Prepaid finance charges: a name and an amount.
pub const CHARGES: RowKind = RowKind {
    param: "prepaid_finance_charges",
    id: "charges",
    legend: "Prepaid finance charges",
    hint: "Each charge paid at or before closing that is part of the finance charge, such as an origination fee or discount points.",
    columns: &[
        ("charge_name", "Charge", "text"),
        ("charge_amount", "Amount", "decimal"),
    ],
    shown: 3,
    after: "The quote",
    to_item: charge_item,
    from_item: charge_cells,
};

fn is_date(s: &str) -> bool {
    s.len() == 10 && s.as_bytes()[4] == b'-' && s.as_bytes()[7] == b'-'
}

fn whole(s: &str, what: &str, example: &str) -> Result<u32, String> {
    s.trim()
        .parse::<u32>()
        .map_err(|_| format!("{what} must be a whole number such as {example}, not \"{s}\""))
}

fn amount(s: &str, what: &str, example: &str) -> Result<String, String> {
    let t = tidy_number(s);
    match t.parse::<rust_decimal::Decimal>() {
        Ok(_) => Ok(t),
        Err(_) => Err(format!(
            "{what} must be a number such as {example}, not \"{s}\""
        )),
    }
}

fn extra_item(c: &[&str]) -> Result<String, String> {
    let (a, from, every, until) = (c[0], c[1], c[2], c[3]);
    if a.is_empty() {
        return Err("the amount is missing, for example 150".into());
    }
    let a = amount(a, "the amount", "150")?;
    if from.is_empty() {
        return Err("the first payment is missing: a payment number such as 13, or a date such as 2028-01-01".into());
    }
    if is_date(from) {
        if !every.is_empty() || !until.is_empty() {
            return Err("an extra payment on a date is made once: leave how often and the last payment blank".into());
        }
        return Ok(format!("{a}@{from}"));
    }
    let from = whole(from, "the first payment", "13")?;
    let every = match every {
        "" => None,
        e => Some(whole(e, "how often", "12")?),
    };
    let until = match until {
        "" => String::new(),
        t => whole(t, "the last payment", "120")?.to_string(),
    };
    Ok(match every {
        None if until.is_empty() => format!("{a}@{from}"),
        None | Some(1) => format!("{a}@{from}-{until}"),
        Some(e) => format!("{a}@{from}-{until}/{e}"),
    })
}

fn extra_cells(item: &str) -> Option<Vec<String>> {
    let (a, when) = item.split_once('@')?;
    let a = a.trim().to_string();
    let when = when.trim();
    if is_date(when) {
        return Some(vec![a, when.into(), String::new(), String::new()]);
    }
    let (range, every) = match when.split_once('/') {
        Some((r, e)) => (r, Some(e.to_string())),
        None => (when, None),
    };
    Some(match range.split_once('-') {
        Some((from, to)) => vec![
            a,
            from.into(),
            every.unwrap_or_else(|| "1".into()),
            to.into(),
        ],
        None => vec![a, range.into(), every.unwrap_or_default(), String::new()],
    })
}

fn change_item(c: &[&str]) -> Result<String, String> {
    if c[0].is_empty() {
        return Err("the payment the new rate starts with is missing, for example 61".into());
    }
    if c[1].is_empty() {
        return Err("the new rate is missing, for example 7.25".into());
    }
    let from = whole(c[0], "the payment", "61")?;
    let rate = amount(c[1].trim_end_matches('%'), "the new rate", "7.25")?;
    Ok(format!("{from}:{rate}"))
}

fn change_cells(item: &str) -> Option<Vec<String>> {
    let (at, rate) = item.split_once(':')?;
    Some(vec![at.trim().into(), rate.trim().into()])
}

fn charge_item(c: &[&str]) -> Result<String, String> {
    let name = c[0].trim();
    if name.contains(',') {
        return Err(format!("a charge's name cannot hold a comma: \"{name}\""));
    }
    if c[1].is_empty() {
        return Err("the amount is missing, for example 1,250.00".into());
    }
    let a = amount(c[1], "the amount", "1,250.00")?;
    let name = if name.is_empty() { "charge" } else { name };
    Ok(format!("{name}:{a}"))
}

fn charge_cells(item: &str) -> Option<Vec<String>> {
    let (name, a) = item.rsplit_once(':')?;
    Some(vec![name.trim().into(), a.trim().into()])
}

/// The query with each kind's rows written as the API's compact list, the
/// rows to show, and whether any row could not be read (its problems are in
/// its rows' errors; the page then computes nothing).
pub fn expand(
    pairs: &[(String, String)],
    kinds: &[&RowKind],
) -> (Vec<(String, String)>, Vec<Rows>, bool) {
    let mut out: Vec<(String, String)> = pairs
        .iter()
        .filter(|(k, _)| {
            !kinds
                .iter()
                .any(|kind| kind.columns.iter().any(|(n, _, _)| n == k))
        })
        .cloned()
        .collect();
    let mut all = Vec::new();
    let mut refused = false;
    for kind in kinds {
        let typed = kind
            .columns
            .iter()
            .any(|(n, _, _)| pairs.iter().any(|(k, _)| k == n));
        let (values, items, errors) = if typed {
            let names: Vec<&str> = kind.columns.iter().map(|(n, _, _)| *n).collect();
            let rows = super::form::typed_rows(&names, pairs);
            let mut items = Vec::new();
            let mut errors = Vec::new();
            for (i, row) in rows.iter().enumerate() {
                match (kind.to_item)(row) {
                    Ok(item) => items.push(item),
                    Err(m) => errors.push(format!("{}, row {}: {m}.", kind.legend, i + 1)),
                }
            }
            if !items.is_empty() && errors.is_empty() {
                out.push((kind.param.to_string(), items.join(",")));
            }
            let values = rows
                .iter()
                .map(|r| r.iter().map(|v| (*v).to_string()).collect())
                .collect();
            (values, items, errors)
        } else {
            let items: Vec<String> = pairs
                .iter()
                .filter(|(k, _)| k == kind.param)
                .flat_map(|(_, v)| split_items(kind, v))
                .collect();
            let values: Vec<Vec<String>> = items
                .iter()
                .map(|item| {
                    (kind.from_item)(item).unwrap_or_else(|| {
                        let mut row = vec![String::new(); kind.columns.len()];
                        row[0] = item.clone();
                        row
                    })
                })
                .collect();
            (values, items, Vec::new())
        };
        refused |= !errors.is_empty();
        all.push(rows_of(kind, values, items, errors));
    }
    (out, all, refused)
}

/// A page's result from its query (rows already written as lists): nothing for
/// an empty query; no result, but every field's problem, when a row could not
/// be read, so the form shows all its errors at once.
pub fn computed<R>(
    pairs: &[(String, String)],
    refused: bool,
    problem: Option<ApiError>,
    compute: impl Fn(&[(String, String)]) -> Result<R, ApiError>,
) -> (Option<R>, Option<ApiError>) {
    if pairs.is_empty() && !refused {
        return (None, problem);
    }
    match compute(pairs) {
        Ok(r) if !refused => (Some(r), None),
        Ok(_) => (None, None),
        Err(e) => (None, Some(e)),
    }
}

/// The items of a compact list. A charge's amount may be typed with grouped
/// thousands ("origination:2,500"): a piece of three digits joins the amount before it.
fn split_items(kind: &RowKind, v: &str) -> Vec<String> {
    let v = if kind.param == CHARGES.param {
        super::form::tidy_named_amounts(v)
    } else {
        v.to_string()
    };
    v.split(',')
        .map(str::trim)
        .filter(|s| !s.is_empty())
        .map(str::to_string)
        .collect()
}

fn rows_of(
    kind: &RowKind,
    mut values: Vec<Vec<String>>,
    items: Vec<String>,
    errors: Vec<String>,
) -> Rows {
    let blanks = if values.is_empty() { kind.shown } else { 1 };
    for _ in 0..blanks {
        values.push(vec![String::new(); kind.columns.len()]);
    }
    Rows {
        id: kind.id,
        legend: kind.legend,
        columns: kind.columns.to_vec(),
        values,
        errors,
        hint: kind.hint,
        param: kind.param,
        items,
        after: kind.after,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pairs(v: &[(&str, &str)]) -> Vec<(String, String)> {
        v.iter()
            .map(|(a, b)| (a.to_string(), b.to_string()))
            .collect()
    }

    fn compact(q: &[(&str, &str)], kind: &RowKind) -> Option<String> {
        let (out, _, _) = expand(&pairs(q), &[kind]);
        out.into_iter()
            .find(|(k, _)| k == kind.param)
            .map(|(_, v)| v)
    }

    #[test]
    fn extra_rows_become_the_compact_list_and_back() {
        // Every shape of the compact syntax (src/input/loan.rs) from rows, and the
        // same rows read back from it.
        let q = [
            ("principal", "1000"),
            ("extra_amount", "150"),
            ("extra_from", "13"),
            ("extra_every", "1"),
            ("extra_until", ""),
            ("extra_amount", "5,000"),
            ("extra_from", "36"),
            ("extra_every", ""),
            ("extra_until", ""),
            ("extra_amount", ""),
            ("extra_from", ""),
            ("extra_every", ""),
            ("extra_until", ""),
            ("extra_amount", "500"),
            ("extra_from", "12"),
            ("extra_every", "12"),
            ("extra_until", "120"),
            ("extra_amount", "2000"),
            ("extra_from", "2029-06-01"),
            ("extra_every", ""),
            ("extra_until", ""),
            ("extra_amount", "75"),
            ("extra_from", "1"),
            ("extra_every", ""),
            ("extra_until", "24"),
        ];
        let list = compact(&q, &EXTRAS).unwrap();
        assert_eq!(
            list,
            "150@13-,5000@36,500@12-120/12,2000@2029-06-01,75@1-24"
        );
        let (_, rows, refused) = expand(&pairs(&[("extra_payments", &list)]), &[&EXTRAS]);
        assert!(!refused);
        let back: Vec<(String, String)> = rows[0]
            .values
            .iter()
            .flat_map(|r| {
                EXTRAS
                    .columns
                    .iter()
                    .zip(r)
                    .map(|((n, _, _), v)| (n.to_string(), v.clone()))
            })
            .collect();
        let again = compact(
            &back
                .iter()
                .map(|(a, b)| (a.as_str(), b.as_str()))
                .collect::<Vec<_>>(),
            &EXTRAS,
        )
        .unwrap();
        assert_eq!(again, list);
        // The compact shorthand "to the end" reads as every payment.
        assert_eq!(extra_cells("150@13-").unwrap(), vec!["150", "13", "1", ""]);
    }

    #[test]
    fn a_bad_row_is_named_and_nothing_is_computed() {
        let (out, rows, refused) = expand(
            &pairs(&[("extra_amount", "lots"), ("extra_from", "13")]),
            &[&EXTRAS],
        );
        assert!(refused);
        assert!(out.iter().all(|(k, _)| k != "extra_payments"));
        assert_eq!(
            rows[0].errors,
            vec!["Extra payments, row 1: the amount must be a number such as 150, not \"lots\"."]
        );
        // The typed row is kept, with a blank one after it.
        assert_eq!(rows[0].values.len(), 2);
        assert_eq!(rows[0].values[0][0], "lots");
    }

    #[test]
    fn rate_changes_and_charges_as_rows() {
        let q = [
            ("change_from", "61"),
            ("change_rate", "7.25%"),
            ("change_from", "121"),
            ("change_rate", "8"),
        ];
        assert_eq!(compact(&q, &RATE_CHANGES).unwrap(), "61:7.25,121:8");
        let q = [
            ("charge_name", "Origination"),
            ("charge_amount", "1,250.00"),
            ("charge_name", ""),
            ("charge_amount", "300"),
        ];
        assert_eq!(
            compact(&q, &CHARGES).unwrap(),
            "Origination:1250.00,charge:300"
        );
        let (_, rows, _) = expand(
            &pairs(&[("prepaid_finance_charges", "origination:2,500,points:1250")]),
            &[&CHARGES],
        );
        assert_eq!(rows[0].values[0], vec!["origination", "2500"]);
        assert_eq!(rows[0].values[1], vec!["points", "1250"]);
    }
}
