//! The number and date readers: any text, no panic; a strictly read decimal
//! reads back to itself from its own text; a date is in the calendar and range.
#![no_main]

use libfuzzer_sys::fuzz_target;
use residue::input::fields::{parse_date, parse_decimal};

fuzz_target!(|text: &str| {
    if let Ok(v) = parse_decimal(text, false) {
        let again = parse_decimal(&v.to_string(), false).expect("its own text reads back");
        assert_eq!(again, v, "{text:?} read as {v} but {v} reads as {again}");
    }
    let _ = parse_decimal(text, true);
    if let Ok(d) = parse_date(text) {
        assert_eq!(d.to_string(), text, "a date is read exactly as written");
    }
});
