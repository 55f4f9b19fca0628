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

pub mod apr;
pub mod apy;
pub mod check;
pub mod compare;
pub mod fields;
pub mod http;
pub mod json;
pub mod loan;
pub mod problem;
pub mod recurrence;
pub mod savings;
