//! The APR request's field tables: what every APR request takes, the JSON and
//! query forms, and the fields of one advance or payment.

use crate::engine::apr::MAX_UNIT_PERIODS;
use crate::engine::loan::MAX_PAYMENTS;

use super::table::{choice, Choice, Field, Kind, Table, COMPOUNDINGS, CURRENCY};

const METHODS: &[Choice] = &[choice("us_actuarial", ""), choice("eu_aprc", "")];
const TIME_BASES: &[Choice] = &[
    choice("auto", ""),
    choice("days", ""),
    choice("weeks", ""),
    choice("equal_months", ""),
];

/// What every APR request takes beside its flows.
pub const APR_COMMON: &[Field] = &[
    Field::new("method", Kind::Choice { choices: METHODS, default: "" }, "`us_actuarial` (Regulation Z Appendix J, default) or `eu_aprc` (Directive 2008/48/EC).")
        .example("us_actuarial"),
    Field::new("time_basis", Kind::Choice { choices: TIME_BASES, default: "" }, "Only with method eu_aprc: how time is counted in years (Directive 2008/48/EC Annex I remark (c)): `days` (whole years plus days left ÷ 365 or 366), `weeks` (weeks ÷ 52), or `equal_months` (months ÷ 12). Whatever is not a whole number of periods is counted as whole periods back from each flow's date towards the first drawdown plus the days left, divided by the days (365 or 366) of the complete year counted back from the last of them (Residue's reading of the Annex). `auto` (the default) takes equal months when every flow falls on a monthly anniversary of the first drawdown, else weeks when every flow falls a whole number of weeks after it, else days.")
        .example("auto"),
    CURRENCY,
    Field::new("unit_period", Kind::Shape(name_or_count), "`month`, `semimonth`, `quarter`, `year`, `week`, `day`, \"2 weeks\", or {\"weeks\": n}, {\"months\": n}, {\"days\": n}.")
        .example("month")
        .query("month, 2 weeks, 255days, …"),
];

/// The JSON APR request: the advances and the payments of the loan.
pub const APR: Table = Table {
    schema: "AprRequest",
    doc: "An APR request: the advances and the payments of the loan.",
    groups: &[
        APR_COMMON,
        &[
            Field::new(
                "advances",
                Kind::List {
                    item: &FLOW,
                    min: 1,
                    max: MAX_ITEMS,
                },
                "",
            )
            .required(),
            Field::new(
                "payments",
                Kind::List {
                    item: &FLOW,
                    min: 1,
                    max: MAX_ITEMS,
                },
                "",
            )
            .required(),
        ],
    ],
    except: &[],
    all_optional: false,
};

/// The query form of an APR request: flows in their compact syntax.
pub const APR_QUERY: Table = Table {
    schema: "AprQuery",
    doc: "The query form of an APR request: flows in their compact syntax.",
    groups: &[
        APR_COMMON,
        &[
            Field::new(
                "advance",
                Kind::List {
                    item: &FLOW,
                    min: 1,
                    max: MAX_ITEMS,
                },
                "`5000@1978-01-10`, `6000@0` (unit-periods); repeated or comma-separated.",
            )
            .required()
            .example("5000@1978-01-10")
            .query("5000@1978-01-10, 6000@0"),
            Field::new(
                "payment",
                Kind::List {
                    item: &FLOW,
                    min: 1,
                    max: MAX_ITEMS,
                },
                "`230x24@1978-02-10/monthly`, `200x36@1+19/30`; repeated or comma-separated.",
            )
            .required()
            .example("230x24@1978-02-10/monthly")
            .query("230x24@1978-02-10/monthly, 200x36@1+19/30"),
        ],
    ],
    except: &[],
    all_optional: false,
};

/// The fields of one advance or payment.
pub const FLOW_FIELDS: &[Field] = &[
    Field::new("amount", Kind::Money, "").required(),
    Field::new("date", Kind::Date, ""),
    Field::new("first_date", Kind::Date, ""),
    Field::new(
        "count",
        Kind::Whole {
            min: 1,
            max: Some(MAX_PAYMENTS),
        },
        "",
    ),
    Field::new(
        "frequency",
        Kind::Choice {
            choices: COMPOUNDINGS,
            default: "",
        },
        "",
    ),
    Field::new(
        "periods",
        Kind::Whole {
            min: 0,
            max: Some(MAX_UNIT_PERIODS),
        },
        "Full unit-periods from the start of the term.",
    ),
    Field::new(
        "fraction",
        Kind::Shape(decimal_or_ratio),
        "A fraction of a unit-period.",
    ),
];

/// One advance or payment of a JSON request.
pub const FLOW: Table = Table {
    schema: "AprFlow",
    doc: "An advance or a payment: dated (date), a dated series (first_date, count, frequency), or in unit-periods (periods, fraction, count).",
    groups: &[FLOW_FIELDS],
    except: &[],
    all_optional: false,
};

/// A fraction of a unit-period: a decimal, or a ratio of whole numbers.
fn decimal_or_ratio() -> serde_json::Value {
    serde_json::json!({"type": ["string", "number"], "examples": ["19/30"],
        "description": "At least 0 and below 1: a decimal (0.4) or a ratio of whole numbers (\"19/30\"); default 0."})
}

/// A unit-period by name, or `{"weeks": n}`, `{"months": n}`, `{"days": n}`.
fn name_or_count() -> serde_json::Value {
    serde_json::json!({"type": ["string", "object"], "examples": ["month"]})
}

/// The most items an `advances` or `payments` list may hold.
pub const MAX_ITEMS: usize = 1000;
/// The most dated flows once series are laid out, advances and payments together.
pub const MAX_FLOWS: usize = 20_000;
