//! The request-reading layer, shared by the API and the pages: everything a
//! request says becomes a typed value here, or a problem naming the field.
//!
//! - [`json`]: the strict JSON reader (duplicate members, depth, exact numbers);
//! - [`fields`]: one field reader for JSON bodies and query strings, with one
//!   parser per kind of value;
//! - [`problem`]: problem details (RFC 9457) and field errors with their codes;
//! - [`http`]: the query string's pairs and the Accept header's weights;
//! - one reader per operation: [`loan`] (schedule), [`compare`], [`check`],
//!   [`savings`], [`apr`], [`apy`], [`recurrence`].

pub mod adjustable;
pub mod apr;
pub mod apr_fields;
pub mod apy;
pub mod batch;
pub mod check;
pub mod compare;
pub mod csv;
pub mod fields;
pub mod grid;
pub mod http;
pub mod json;
pub mod loan;
pub mod multipart;
pub mod points;
pub mod problem;
pub mod recurrence;
pub mod refinance;
pub mod savings;
pub mod table;

/// Every request table, for the OpenAPI document's components.
pub fn tables() -> [&'static table::Table; 24] {
    [
        &adjustable::ADJUSTABLE,
        &loan::SCHEDULE,
        &loan::EXTRA_PAYMENT,
        &loan::RATE_CHANGE,
        &compare::COMPARE,
        &compare::VARIANT,
        &check::CHECK,
        &check::PREPAID_CHARGE,
        &apr_fields::APR,
        &apr_fields::APR_QUERY,
        &apr_fields::FLOW,
        &apy::APY,
        &recurrence::RECURRENCE,
        &recurrence::INPUT,
        &savings::SAVINGS,
        &batch::LINE,
        &refinance::REFINANCE,
        &refinance::CURRENT_LOAN,
        &refinance::NEW_LOAN,
        &refinance::REFINANCE_QUERY,
        &points::OPTIONS_REQUEST,
        &points::PRICING_OPTION,
        &points::OPTIONS_QUERY,
        &grid::GRID,
    ]
}

#[cfg(test)]
mod tests {
    use std::collections::BTreeSet;

    /// Every field name a reader asks for (the first string literal after each
    /// of the field reader's calls, in the readers' own source text).
    fn names_read(source: &str) -> BTreeSet<String> {
        const CALLS: [&str; 14] = [
            ".decimal(",
            ".text(",
            ".has(",
            ".raw(",
            ".date(",
            ".whole(",
            ".count(",
            ".query_list(",
            ".pick(",
            ".choice(",
            "money_in(",
            "money(",
            "read_bool(",
            "required(",
        ];
        let mut names = BTreeSet::new();
        for call in CALLS {
            for (at, _) in source.match_indices(call) {
                let rest = &source[at + call.len()..];
                let window = &rest[..rest.len().min(60)];
                let Some(open) = window.find('"') else {
                    continue;
                };
                let Some(len) = window[open + 1..].find('"') else {
                    continue;
                };
                let name = &window[open + 1..open + 1 + len];
                if name.starts_with(|c: char| c.is_ascii_lowercase())
                    && name
                        .bytes()
                        .all(|b| b.is_ascii_lowercase() || b == b'_' || b.is_ascii_digit())
                {
                    names.insert(name.to_string());
                }
            }
        }
        names
    }

    #[test]
    fn every_field_a_reader_reads_is_declared_in_a_table() {
        let declared: BTreeSet<String> = super::tables()
            .iter()
            .flat_map(|t| t.fields())
            .map(|f| f.name.to_string())
            .collect();
        let readers = [
            ("loan.rs", include_str!("loan.rs")),
            ("check.rs", include_str!("check.rs")),
            ("compare.rs", include_str!("compare.rs")),
            ("savings.rs", include_str!("savings.rs")),
            ("apr.rs", include_str!("apr.rs")),
            ("apy.rs", include_str!("apy.rs")),
            ("recurrence.rs", include_str!("recurrence.rs")),
            ("refinance.rs", include_str!("refinance.rs")),
            ("points.rs", include_str!("points.rs")),
            ("grid.rs", include_str!("grid.rs")),
            ("adjustable.rs", include_str!("adjustable.rs")),
        ];
        let mut seen = 0;
        for (file, source) in readers {
            for name in names_read(source) {
                seen += 1;
                assert!(
                    declared.contains(&name),
                    "{file} reads \"{name}\", which no field table declares"
                );
            }
        }
        // The scan finds the readers' fields (it would pass vacuously if it found none).
        assert!(seen >= 60, "only {seen} field reads found");
    }

    #[test]
    fn every_choice_listed_is_one_the_reader_accepts() {
        use super::fields::{Fields, Source};
        // One request per choice value, over a valid schedule or savings plan.
        for (table, base) in [
            (
                &super::loan::SCHEDULE,
                "principal=1000&annual_rate_percent=5&term_months=12&first_payment_date=2027-01-01",
            ),
            (
                &super::savings::SAVINGS,
                "deposit=100&annual_rate_percent=4&term_months=12",
            ),
        ] {
            for field in table.fields() {
                let super::table::Kind::Choice { choices, .. } = field.kind else {
                    continue;
                };
                for c in choices {
                    let q = format!("{base}&{}={}", field.name, c.value);
                    let pairs: Vec<(String, String)> =
                        form_urlencoded::parse(q.as_bytes()).into_owned().collect();
                    let errors = if table.schema == "SavingsPlanRequest" {
                        super::savings::savings_terms_from(Fields::new(Source::Query(&pairs))).err()
                    } else {
                        super::loan::schedule_request_from(Fields::new(Source::Query(&pairs))).err()
                    };
                    if let Some(e) = errors {
                        assert!(
                            !e.errors.iter().any(|e| e.pointer == field.name
                                && e.message.starts_with("must be one of")),
                            "{}={} refused: {:?}",
                            field.name,
                            c.value,
                            e.errors
                        );
                    }
                }
            }
        }
    }
}
