//! Property tests of the schedule answer's hand-written writers, over random
//! schedule requests read from query strings as the API reads them.
//!
//! Reference: serde_json (crates.io) serializing the answer's own data types
//! (`LoanScheduleDto::from_schedule`: amounts from `Currency::text`, dates from
//! the calendar library's `Display`). The JSON answer, written row by row on the
//! stack with amounts made eight digits at a time and repeated ones copied, must
//! equal serde_json's bytes exactly; the CSV schedule must carry, line by line,
//! the texts of the serialized rows.

use proptest::prelude::*;
use residue::api::loans::{schedule_csv, LoanScheduleDto};
use residue::input::fields::{Fields, Source};
use residue::input::loan::schedule_request_from;

use crate::helpers::proptest_config;

/// An amount with `decimals` decimals and `digits` digits in all (at least one).
fn amount(units: u64, digits: u32, decimals: u32) -> String {
    let v = units % 10u64.pow(digits.clamp(1, 19));
    let text = format!("{v:0width$}", width = decimals as usize + 1);
    if decimals == 0 {
        return text;
    }
    let (whole, fraction) = text.split_at(text.len() - decimals as usize);
    format!("{whole}.{fraction}")
}

/// A schedule request as a query string: every field the schedule reads, each
/// present or not; principals from one minor unit to 10^12 (the engine's limit),
/// extras of up to nine digits, terms in whole years (any month when monthly),
/// rate changes within the first 120 payments at 0 % to 30 %.
fn query() -> impl Strategy<Value = String> {
    let currency = prop_oneof![Just(("USD", 2u32)), Just(("JPY", 0)), Just(("KWD", 3))];
    let frequency = prop_oneof![
        Just("monthly"),
        Just("biweekly"),
        Just("weekly"),
        Just("semimonthly"),
        Just("quarterly"),
        Just("annual"),
    ];
    let extras = prop::collection::vec(
        prop_oneof![
            (1u64..u64::MAX, 1u32..7, 1u32..60).prop_map(|(a, d, from)| (
                a,
                d,
                format!("@{from}-")
            )),
            (1u64..u64::MAX, 1u32..7, 1u32..60, 0u32..120, 1u32..13).prop_map(
                |(a, d, from, len, every)| (a, d, format!("@{from}-{}/{every}", from + len))
            ),
            (1u64..u64::MAX, 1u32..9, 1u32..200).prop_map(|(a, d, at)| (a, d, format!("@{at}"))),
        ],
        0..3,
    );
    (
        currency,
        frequency,
        (any::<u64>(), 0u32..16),
        0u32..40_000,
        (1u32..41, 1u32..481),
        (any::<bool>(), any::<bool>()),
        prop_oneof![Just(None), (2027i16..2031, 1i8..13, 1i8..32, 0u32..45).prop_map(Some)],
        extras,
        prop::collection::vec((1u32..60, 0u32..3_000), 0..3),
        (prop_oneof![Just(0u32), 1u32..4], prop_oneof![Just(None), (2u32..24).prop_map(Some)]),
    )
        .prop_map(
            |(
                (code, decimals),
                frequency,
                (units, digits),
                milli_percent,
                (years, any_months),
                (round_up, half_even),
                dated,
                extras,
                rate_changes,
                (interest_only, balloon),
            )| {
                let months = if frequency == "monthly" { any_months } else { 12 * years };
                let digits = 1 + digits % (12 + decimals);
                let mut q = format!(
                    "principal={}&annual_rate_percent={}&term_months={months}&currency={code}&payment_frequency={frequency}",
                    amount(units, digits, decimals),
                    amount(u64::from(milli_percent), 6, 3),
                );
                if round_up {
                    q.push_str("&payment_rounding=up");
                }
                if half_even {
                    q.push_str("&interest_rounding=half_even");
                }
                if let Some((y, m, d, odd)) = dated {
                    // The day clamped to the month's length by the calendar, then a
                    // funding date some days before the first period.
                    let first = jiff::civil::Date::new(y, m, d.min(28)).unwrap();
                    q.push_str(&format!("&first_payment_date={first}"));
                    if odd > 0 {
                        let funding = first
                            .checked_sub(jiff::Span::new().days(i64::from(odd) + 20))
                            .unwrap();
                        q.push_str(&format!("&funding_date={funding}"));
                    }
                }
                for (units, digits, at) in extras {
                    q.push_str(&format!(
                        "&extra_payments={}{at}",
                        amount(units, digits, decimals)
                    ));
                }
                let mut at = 1;
                for (gap, p) in rate_changes {
                    at += gap;
                    q.push_str(&format!(
                        "&rate_changes={at}:{}",
                        amount(u64::from(p), 6, 2)
                    ));
                }
                if interest_only > 0 {
                    q.push_str(&format!("&interest_only_payments={interest_only}"));
                }
                if let Some(b) = balloon {
                    q.push_str(&format!("&balloon_after_payments={b}"));
                }
                q
            },
        )
}

proptest! {
    #![proptest_config(proptest_config(400))]

    #[test]
    fn the_written_answers_are_the_serialized_answer(q in query()) {
        let pairs: Vec<(String, String)> = form_urlencoded::parse(q.as_bytes()).into_owned().collect();
        let Ok(r) = schedule_request_from(Fields::new(Source::Query(&pairs))) else {
            return Err(TestCaseError::reject("refused as a request"));
        };
        let Ok(s) = residue::engine::schedule::schedule_with(&r.terms, &r.options) else {
            return Err(TestCaseError::reject("no schedule"));
        };
        let dto = LoanScheduleDto::from_schedule(&s);
        let want = serde_json::to_vec(&dto).unwrap();
        let got = LoanScheduleDto::answer_json(&s);
        prop_assert_eq!(String::from_utf8(got).unwrap(), String::from_utf8(want.clone()).unwrap(), "{}", q);

        let value: serde_json::Value = serde_json::from_slice(&want).unwrap();
        let rows = value["schedule"].as_array().unwrap();
        prop_assert_eq!(rows.len(), s.ledger.rows.len());
        let mut csv = String::from("number,date,payment,extra,interest,principal,balance\r\n");
        for row in rows {
            let text = |key: &str| row[key].as_str().unwrap_or("").to_string();
            csv.push_str(&format!(
                "{},{},{},{},{},{},{}\r\n",
                row["number"],
                text("date"),
                text("payment"),
                text("extra"),
                text("interest"),
                text("principal"),
                text("balance")
            ));
        }
        prop_assert_eq!(schedule_csv(&s), csv, "{}", q);
    }
}
