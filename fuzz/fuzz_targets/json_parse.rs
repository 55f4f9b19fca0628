//! The strict JSON reader: any bytes, no panic, no stack overflow; a parsed
//! document's nesting stays within `MAX_DEPTH`.
#![no_main]

use libfuzzer_sys::fuzz_target;
use residue::input::json::{parse, Json, MAX_DEPTH};

fn depth(v: &Json) -> usize {
    match v {
        Json::Array(items) => 1 + items.iter().map(depth).max().unwrap_or(0),
        Json::Object(members) => 1 + members.iter().map(|(_, v)| depth(v)).max().unwrap_or(0),
        _ => 0,
    }
}

fuzz_target!(|data: &[u8]| {
    if let Ok(v) = parse(data) {
        assert!(
            depth(&v) <= MAX_DEPTH + 1,
            "nesting beyond the bound was accepted"
        );
        if let Json::Object(members) = &v {
            for (i, (k, _)) in members.iter().enumerate() {
                assert!(
                    !members[..i].iter().any(|(other, _)| other == k),
                    "a duplicate key was accepted"
                );
            }
        }
    }
});
