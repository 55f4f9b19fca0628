//! The query string and its compact lists (`extra_payments`, `rate_changes`):
//! any text after a valid loan, no panic; when the request reads, the engine
//! answers it without panicking, and a posted schedule ends at a zero balance.
#![no_main]

use libfuzzer_sys::fuzz_target;
use residue::input::fields::{Fields, Source};
use residue::input::http::query_pairs;
use residue::input::loan::schedule_request_from;
use residue::engine::schedule::schedule_with;

fuzz_target!(|tail: &str| {
    let query = format!("principal=25000&annual_rate_percent=7.5&term_months=60&{tail}");
    let Ok(pairs) = query_pairs(Some(&query)) else {
        return;
    };
    let Ok(request) = schedule_request_from(Fields::new(Source::Query(&pairs))) else {
        return;
    };
    if let Ok(s) = schedule_with(&request.terms, &request.options) {
        let last = s.ledger.rows.last().expect("a schedule has a payment");
        assert!(
            last.balance.is_zero(),
            "the balance ends at {}",
            last.balance
        );
    }
});
