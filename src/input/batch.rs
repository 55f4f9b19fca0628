//! One line of a batch: its fields. The lines are read as they stream in, by
//! `api::batch`; each line's request is read by its own operation's reader.

use super::table::{any_object, any_value, choice, Choice, Field, Kind, Table};

const JOBS: &[Choice] = &[
    choice("loan_schedule", ""),
    choice("loan_check", ""),
    choice("apr", ""),
    choice("apy", ""),
    choice("savings_plan", ""),
];
const DETAILS: &[Choice] = &[choice("summary", ""), choice("full", "")];

/// One line of a batch (`application/x-ndjson`, up to 100,000 lines).
pub const LINE: Table = Table {
    schema: "BatchLine",
    doc: "One line of a batch (application/x-ndjson, up to 100,000 lines).",
    groups: &[&[
        Field::new("id", Kind::Shape(any_value), "Any JSON value (null too); required; echoed exactly as sent in the answer line (a number keeps its own digits).").required(),
        Field::new("job", Kind::Choice { choices: JOBS, default: "" }, "The job of the line.").required(),
        Field::new("request", Kind::Shape(any_object), "The job's request: the body its own operation takes.").required(),
        Field::new("detail", Kind::Choice { choices: DETAILS, default: "" }, "`summary` (default: a schedule's or plan's summary and notes) or `full`."),
    ]],
    except: &[],
    all_optional: false,
};
