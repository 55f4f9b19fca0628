//! The OpenAPI 3.1 document of the API, served at `GET /api/openapi.json`.
//!
//! Generated from the code's own types so that it cannot drift:
//!
//! - every answer's schema is derived (`utoipa::ToSchema`) from the DTO the
//!   handler serializes (`LoanScheduleDto`, `CheckAnswer`, `Problem`, …);
//! - requests are read by hand (the strict [`crate::input::json`] reader and
//!   [`crate::input::fields::Fields`]), so their schemas are the structs of
//!   [`request`] below, kept next to the readers' field lists by unit tests
//!   (property names equal `LOAN_FIELDS`, `PLAN_FIELDS` and `SAVINGS_FIELDS`;
//!   every property of the other requests is a field the reader knows);
//! - the operations are the table [`OPERATIONS`]; a black-box test compares it
//!   with the routes of `src/server.rs`;
//! - each operation's request example is in the table, and its answer example
//!   is computed once, at the first request of the document, by sending that
//!   example to the application itself: the examples are real answers.
//!
//! GET operations take the same fields as query parameters (derived from the
//! JSON request schema: lists in their compact query syntax).

use std::borrow::Cow;

use axum::body::Body;
use axum::http::{header, Request};
use axum::response::{IntoResponse, Response};
use axum::Router;
use serde_json::{json, Map, Value};
use utoipa::openapi::schema::{ObjectBuilder, Schema, SchemaType, Type};
use utoipa::openapi::RefOr;
use utoipa::{OpenApi, PartialSchema, ToSchema};

use crate::engine::money::Currency;

/// Request schemas: what the hand-written readers accept, field by field.
pub mod request {
    #![allow(dead_code)] // described, never built: the readers read JSON themselves

    use super::{CurrencyCode, DecimalNumber};
    use utoipa::ToSchema;

    /// How often payments fall due.
    #[derive(ToSchema)]
    #[schema(rename_all = "snake_case")]
    pub enum PaymentFrequency {
        Annual,
        Semiannual,
        Quarterly,
        Monthly,
        Semimonthly,
        Biweekly,
        Weekly,
    }

    /// How often interest compounds (default: the payment frequency).
    #[derive(ToSchema)]
    #[schema(rename_all = "snake_case")]
    pub enum Compounding {
        Annual,
        Semiannual,
        Quarterly,
        Monthly,
        Semimonthly,
        Biweekly,
        Weekly,
        Daily,
    }

    /// `nearest` (default, halves up) or `up` to the next minor unit.
    #[derive(ToSchema)]
    #[schema(rename_all = "snake_case")]
    pub enum PaymentRounding {
        Nearest,
        Up,
    }

    /// How each period's interest is rounded: `half_up` (default) or `half_even`.
    #[derive(ToSchema)]
    #[schema(rename_all = "snake_case")]
    pub enum InterestRounding {
        HalfUp,
        HalfEven,
    }

    /// Day count of the odd first period (default `actual_365`): `actual_365` and
    /// `actual_360` count actual days and divide by 365 or 360; the 30/360 rules count
    /// 30-day months and divide by 360, differing at month ends (D1, D2 the days of
    /// the month of the start and end): `thirty_360_bond_basis` (ISDA 2006 4.16(f):
    /// D1 31 becomes 30; D2 31 becomes 30 when D1 is then 30), `thirty_360_us` (SIA:
    /// when D1 is February's last day it becomes 30, and D2 too when it is also
    /// February's last day; then D2 31 becomes 30 when D1 is 30 or 31; then D1 31
    /// becomes 30), `thirty_e_360` (ISDA 4.16(g): every 31st becomes 30).
    /// `thirty_360` is an alias of `thirty_360_bond_basis`.
    #[derive(ToSchema)]
    #[schema(rename_all = "snake_case")]
    pub enum DayCount {
        #[schema(rename = "actual_365")]
        Actual365,
        #[schema(rename = "actual_360")]
        Actual360,
        #[schema(rename = "thirty_360_bond_basis")]
        Thirty360BondBasis,
        #[schema(rename = "thirty_360_us")]
        Thirty360Us,
        #[schema(rename = "thirty_e_360")]
        ThirtyE360,
        #[schema(rename = "thirty_360")]
        Thirty360,
    }

    /// Where the odd days' interest goes: added to the first payment (default) or prepaid at closing.
    #[derive(ToSchema)]
    #[schema(rename_all = "snake_case")]
    pub enum OddDaysInterest {
        FirstPayment,
        Prepaid,
    }

    /// What a rate change keeps: the `term` (re-amortize, default) or the `payment`.
    #[derive(ToSchema)]
    #[schema(rename_all = "snake_case")]
    pub enum RateChangeKeeps {
        Term,
        Payment,
    }

    /// An extra payment: once (`at` a payment number or a date, which needs
    /// `first_payment_date`) or recurring (`from` payment, optionally `to` and `every`).
    /// In a query string: `150@13-`, `150@13-120`, `500@12-/12`, `5000@36`, `2000@2029-06-01`.
    #[derive(ToSchema)]
    pub struct ExtraPayment {
        pub amount: DecimalNumber,
        /// A payment number, or an ISO 8601 date (the first payment due on or after it).
        #[schema(schema_with = super::number_or_date)]
        pub at: Option<serde_json::Value>,
        #[schema(maximum = 6000)]
        pub from: Option<u32>,
        #[schema(maximum = 6000)]
        pub to: Option<u32>,
        #[schema(maximum = 6000)]
        pub every: Option<u32>,
    }

    /// A new annual rate from payment `at` on. In a query string: `61:7.25`.
    #[derive(ToSchema)]
    pub struct RateChange {
        #[schema(maximum = 6000)]
        pub at: u32,
        pub annual_rate_percent: DecimalNumber,
    }

    /// The fields of a loan schedule request (`LOAN_FIELDS` then `PLAN_FIELDS`).
    ///
    /// Give exactly one of `term_months`, `term_payments` and `payment`: the other is solved.
    #[derive(ToSchema)]
    pub struct LoanScheduleRequest {
        /// The amount borrowed, in the currency's minor units at most.
        pub principal: DecimalNumber,
        /// The nominal annual rate in percent ("6.375").
        pub annual_rate_percent: DecimalNumber,
        /// The term in months (converted to payments of the payment frequency).
        #[schema(maximum = 100000)]
        pub term_months: Option<u32>,
        /// The term in payments.
        #[schema(maximum = 100000)]
        pub term_payments: Option<u32>,
        /// The payment; the number of payments is solved.
        pub payment: Option<DecimalNumber>,
        pub payment_frequency: Option<PaymentFrequency>,
        pub compounding: Option<Compounding>,
        pub currency: Option<CurrencyCode>,
        pub payment_rounding: Option<PaymentRounding>,
        pub interest_rounding: Option<InterestRounding>,
        /// ISO 8601; with `first_payment_date`, an odd first period accrues interest for its odd days.
        #[schema(value_type = Option<String>, format = Date)]
        pub funding_date: Option<String>,
        /// ISO 8601; dates every payment.
        #[schema(value_type = Option<String>, format = Date)]
        pub first_payment_date: Option<String>,
        pub day_count: Option<DayCount>,
        pub odd_days_interest: Option<OddDaysInterest>,
        /// At most 120. In a query: `extra_payments=150@13-,5000@36` (repeated or comma-separated).
        #[schema(max_items = 120)]
        pub extra_payments: Option<Vec<ExtraPayment>>,
        #[schema(maximum = 6000)]
        pub interest_only_payments: Option<u32>,
        /// The loan ends with a balloon after this many payments.
        #[schema(maximum = 6000)]
        pub balloon_after_payments: Option<u32>,
        /// At most 120. In a query: `rate_changes=61:7.25,121:8`.
        #[schema(max_items = 120)]
        pub rate_changes: Option<Vec<RateChange>>,
        pub rate_change_keeps: Option<RateChangeKeeps>,
        /// For the 80 % and 78 % milestones of the Homeowners Protection Act.
        pub property_value: Option<DecimalNumber>,
        /// A name for the plan (in a comparison's rows); at most 80 characters are kept.
        pub label: Option<String>,
    }

    /// A plan of a comparison: the base with these fields put over it (any schedule field, and `label`).
    #[derive(ToSchema)]
    pub struct CompareVariant {
        pub label: Option<String>,
        pub principal: Option<DecimalNumber>,
        pub annual_rate_percent: Option<DecimalNumber>,
        #[schema(maximum = 100000)]
        pub term_months: Option<u32>,
        #[schema(maximum = 100000)]
        pub term_payments: Option<u32>,
        pub payment: Option<DecimalNumber>,
        pub payment_frequency: Option<PaymentFrequency>,
        pub compounding: Option<Compounding>,
        pub currency: Option<CurrencyCode>,
        pub payment_rounding: Option<PaymentRounding>,
        pub interest_rounding: Option<InterestRounding>,
        #[schema(value_type = Option<String>, format = Date)]
        pub funding_date: Option<String>,
        #[schema(value_type = Option<String>, format = Date)]
        pub first_payment_date: Option<String>,
        pub day_count: Option<DayCount>,
        pub odd_days_interest: Option<OddDaysInterest>,
        #[schema(max_items = 120)]
        pub extra_payments: Option<Vec<ExtraPayment>>,
        #[schema(maximum = 6000)]
        pub interest_only_payments: Option<u32>,
        #[schema(maximum = 6000)]
        pub balloon_after_payments: Option<u32>,
        #[schema(max_items = 120)]
        pub rate_changes: Option<Vec<RateChange>>,
        pub rate_change_keeps: Option<RateChangeKeeps>,
        pub property_value: Option<DecimalNumber>,
    }

    /// A base loan and up to three variants (four plans at most).
    #[derive(ToSchema)]
    pub struct CompareRequest {
        pub base: LoanScheduleRequest,
        #[schema(max_items = 3)]
        pub variants: Option<Vec<CompareVariant>>,
    }

    /// A prepaid finance charge. In a query: `prepaid_finance_charges=origination:1250.00,points:2500`.
    #[derive(ToSchema)]
    pub struct PrepaidFinanceCharge {
        #[schema(max_length = 80)]
        pub name: String,
        pub amount: DecimalNumber,
    }

    /// The loan's fields (as for a schedule, without the plan options) and the quotes to check.
    #[derive(ToSchema)]
    pub struct LoanCheckRequest {
        pub principal: DecimalNumber,
        pub annual_rate_percent: DecimalNumber,
        #[schema(maximum = 100000)]
        pub term_months: Option<u32>,
        #[schema(maximum = 100000)]
        pub term_payments: Option<u32>,
        pub payment: Option<DecimalNumber>,
        pub payment_frequency: Option<PaymentFrequency>,
        pub compounding: Option<Compounding>,
        pub currency: Option<CurrencyCode>,
        pub payment_rounding: Option<PaymentRounding>,
        pub interest_rounding: Option<InterestRounding>,
        /// Compared with the posted payment to the minor unit.
        pub quoted_payment: Option<DecimalNumber>,
        /// Compared with the APR within the tolerance of 12 CFR 1026.22(a)(2)–(3).
        pub quoted_apr_percent: Option<DecimalNumber>,
        /// Compared within the tolerance of 12 CFR 1026.18(d).
        pub quoted_finance_charge: Option<DecimalNumber>,
        #[schema(max_items = 50)]
        pub prepaid_finance_charges: Option<Vec<PrepaidFinanceCharge>>,
        /// Selects the finance-charge tolerance of §1026.18(d)(1) (true, default) or (d)(2).
        pub mortgage: Option<bool>,
        /// ISO 8601: the APR's advance date; with `first_payment_date` the APR is found
        /// from the dates and an odd first period accrues interest for its odd days.
        #[schema(value_type = Option<String>, format = Date)]
        pub funding_date: Option<String>,
        /// ISO 8601; dates every payment.
        #[schema(value_type = Option<String>, format = Date)]
        pub first_payment_date: Option<String>,
        pub day_count: Option<DayCount>,
        /// `prepaid`: the odd days' interest is a prepaid finance charge.
        pub odd_days_interest: Option<OddDaysInterest>,
        #[schema(maximum = 6000)]
        pub interest_only_payments: Option<u32>,
        #[schema(maximum = 6000)]
        pub balloon_after_payments: Option<u32>,
        #[schema(max_items = 120)]
        pub rate_changes: Option<Vec<RateChange>>,
        pub rate_change_keeps: Option<RateChangeKeeps>,
        pub property_value: Option<DecimalNumber>,
    }

    /// `us_actuarial` (Regulation Z Appendix J, default) or `eu_aprc` (Directive 2008/48/EC).
    #[derive(ToSchema)]
    #[schema(rename_all = "snake_case")]
    pub enum AprMethod {
        UsActuarial,
        EuAprc,
    }

    /// An advance or a payment: dated (`date`), a dated series (`first_date`,
    /// `count`, `frequency`), or in unit-periods (`periods`, `fraction`, `count`).
    #[derive(ToSchema)]
    pub struct AprFlow {
        pub amount: DecimalNumber,
        #[schema(value_type = Option<String>, format = Date)]
        pub date: Option<String>,
        #[schema(value_type = Option<String>, format = Date)]
        pub first_date: Option<String>,
        #[schema(minimum = 1, maximum = 100000)]
        pub count: Option<u32>,
        pub frequency: Option<Compounding>,
        /// Full unit-periods from the start of the term.
        pub periods: Option<u32>,
        /// A fraction of a unit-period, at least 0 and below 1: a decimal or a ratio "19/30".
        #[schema(schema_with = super::decimal_or_ratio)]
        pub fraction: Option<serde_json::Value>,
    }

    /// How `eu_aprc` counts time in years (Directive 2008/48/EC Annex I remark (c)):
    /// `days` (whole years plus days left ÷ 365 or 366), `weeks` (weeks ÷ 52), or
    /// `equal_months` (months ÷ 12). Whatever is not a whole number of periods is
    /// counted as whole periods back from each flow's date towards the first drawdown
    /// plus the days left, divided by the days (365 or 366) of the complete year
    /// counted back from the last of them (Residue's reading of the Annex). `auto`
    /// (the default) takes equal months when every flow falls on a monthly
    /// anniversary of the first drawdown, else weeks when every flow falls a whole
    /// number of weeks after it, else days.
    #[derive(ToSchema)]
    #[schema(rename_all = "snake_case")]
    pub enum AprcTimeBasis {
        Auto,
        Days,
        Weeks,
        EqualMonths,
    }

    /// An APR request: the advances and the payments of the loan.
    #[derive(ToSchema)]
    pub struct AprRequest {
        pub method: Option<AprMethod>,
        /// Only with `method` `eu_aprc`.
        pub time_basis: Option<AprcTimeBasis>,
        pub currency: Option<CurrencyCode>,
        /// `month`, `semimonth`, `quarter`, `year`, `week`, `day`, "2 weeks", or
        /// `{"weeks": n}`, `{"months": n}`, `{"days": n}`.
        #[schema(schema_with = super::name_or_count)]
        pub unit_period: Option<serde_json::Value>,
        #[schema(min_items = 1, max_items = 1000)]
        pub advances: Vec<AprFlow>,
        #[schema(min_items = 1, max_items = 1000)]
        pub payments: Vec<AprFlow>,
    }

    /// The query form of an APR request: flows in their compact syntax.
    #[derive(ToSchema)]
    pub struct AprQuery {
        pub method: Option<AprMethod>,
        /// Only with `method` `eu_aprc`.
        pub time_basis: Option<AprcTimeBasis>,
        pub currency: Option<CurrencyCode>,
        /// `month`, `2 weeks`, `255days`, …
        pub unit_period: Option<String>,
        /// `5000@1978-01-10`, `6000@0` (unit-periods); repeated or comma-separated.
        pub advance: Vec<String>,
        /// `230x24@1978-02-10/monthly`, `200x36@1+19/30`; repeated or comma-separated.
        pub payment: Vec<String>,
    }

    /// One of three forms: `principal`, `interest`, `days` (Part I.A);
    /// `annual_rate_percent`, `compounding`; or `interest_earned`,
    /// `average_daily_balance`, `days_in_period` (Part II.A).
    #[derive(ToSchema)]
    pub struct ApyRequest {
        pub currency: Option<CurrencyCode>,
        pub principal: Option<DecimalNumber>,
        pub interest: Option<DecimalNumber>,
        pub days: Option<u32>,
        pub annual_rate_percent: Option<DecimalNumber>,
        pub compounding: Option<Compounding>,
        pub interest_earned: Option<DecimalNumber>,
        pub average_daily_balance: Option<DecimalNumber>,
        pub days_in_period: Option<u32>,
    }

    /// The kind of an input of a recurrence (its z-transform from the table).
    #[derive(ToSchema)]
    #[schema(rename_all = "snake_case")]
    pub enum InputKind {
        Impulse,
        Step,
        Geometric,
        Ramp,
    }

    /// One input term f[k]: `amount`·δ[k], `amount`·u[k], `amount`·ratio^k, or `amount`·k.
    #[derive(ToSchema)]
    pub struct RecurrenceInput {
        pub kind: InputKind,
        pub amount: DecimalNumber,
        /// For `geometric`: more than 0 and at most 11.
        pub ratio: Option<DecimalNumber>,
    }

    /// x[k+1] = a·x[k] + f[k], x[0] = x0, evaluated at the chosen k.
    #[derive(ToSchema)]
    pub struct RecurrenceRequest {
        /// More than 0 and at most 11.
        pub a: DecimalNumber,
        pub x0: Option<DecimalNumber>,
        #[schema(max_items = 16)]
        pub inputs: Option<Vec<RecurrenceInput>>,
        #[schema(max_items = 16, value_type = Option<Vec<u32>>)]
        pub evaluate_at: Option<Vec<u32>>,
    }

    /// When deposits are made in each period.
    #[derive(ToSchema)]
    #[schema(rename_all = "snake_case")]
    pub enum DepositTiming {
        Start,
        End,
    }

    /// How often deposit growth applies.
    #[derive(ToSchema)]
    #[schema(rename_all = "snake_case")]
    pub enum GrowthEvery {
        Period,
        Year,
    }

    /// The fields of a savings plan request (`SAVINGS_FIELDS`); what is solved
    /// follows from what is given (see the guide).
    #[derive(ToSchema)]
    pub struct SavingsPlanRequest {
        pub opening_balance: Option<DecimalNumber>,
        pub deposit: Option<DecimalNumber>,
        pub withdrawal: Option<DecimalNumber>,
        pub deposit_timing: Option<DepositTiming>,
        pub deposit_frequency: Option<PaymentFrequency>,
        pub deposit_growth_percent: Option<DecimalNumber>,
        pub deposit_growth_every: Option<GrowthEvery>,
        pub deposit_step: Option<DecimalNumber>,
        pub annual_rate_percent: DecimalNumber,
        pub compounding: Option<Compounding>,
        #[schema(maximum = 100000)]
        pub term_months: Option<u32>,
        #[schema(maximum = 100000)]
        pub term_periods: Option<u32>,
        pub goal: Option<DecimalNumber>,
        #[schema(value_type = Option<String>, format = Date)]
        pub start_date: Option<String>,
        pub currency: Option<CurrencyCode>,
    }

    /// The job of a batch line.
    #[derive(ToSchema)]
    #[schema(rename_all = "snake_case")]
    pub enum BatchJob {
        LoanSchedule,
        LoanCheck,
        Apr,
        Apy,
        SavingsPlan,
    }

    /// `summary` (default: a schedule's or plan's summary and notes) or `full`.
    #[derive(ToSchema)]
    #[schema(rename_all = "snake_case")]
    pub enum BatchDetail {
        Summary,
        Full,
    }

    /// One line of a batch (`application/x-ndjson`, up to 100,000 lines).
    #[derive(ToSchema)]
    pub struct BatchLine {
        /// Any JSON value (null too); required; echoed exactly as sent in the
        /// answer line (a number keeps its own digits).
        #[schema(value_type = Value)]
        pub id: serde_json::Value,
        pub job: BatchJob,
        /// The job's request: the body its own operation takes.
        #[schema(value_type = Object)]
        pub request: serde_json::Value,
        pub detail: Option<BatchDetail>,
    }
}

/// One answer line of a batch, in the order of the request's lines.
#[derive(ToSchema)]
#[allow(dead_code)]
pub struct BatchAnswerLine {
    #[schema(value_type = Value)]
    pub id: Option<serde_json::Value>,
    pub ok: bool,
    /// With `ok: true`: the job's answer (for `summary`, its summary and notes).
    #[schema(value_type = Option<Object>)]
    pub result: Option<serde_json::Value>,
    /// With `ok: false`: what went wrong, pointers relative to the line's `request`.
    pub problem: Option<crate::input::problem::Problem>,
}

/// The answer of `GET /healthz`.
#[derive(ToSchema)]
#[allow(dead_code)]
pub struct Health {
    #[schema(example = "ok")]
    pub status: String,
}

/// A payment number or an ISO 8601 date.
pub fn number_or_date() -> ObjectBuilder {
    ObjectBuilder::new()
        .schema_type(SchemaType::from_iter([Type::Integer, Type::String]))
        .description(Some(
            "A payment number (0 to 6000), or an ISO 8601 date: the first payment due on or after it.",
        ))
        .examples([json!(36), json!("2029-06-01")])
}

/// A fraction of a unit-period: a decimal, or a ratio of whole numbers.
pub fn decimal_or_ratio() -> ObjectBuilder {
    ObjectBuilder::new()
        .schema_type(SchemaType::from_iter([Type::String, Type::Number]))
        .description(Some(
            "At least 0 and below 1: a decimal (0.4) or a ratio of whole numbers (\"19/30\"); default 0.",
        ))
        .examples([json!("19/30")])
}

/// A unit-period by name, or `{"weeks": n}`, `{"months": n}`, `{"days": n}`.
pub fn name_or_count() -> ObjectBuilder {
    ObjectBuilder::new()
        .schema_type(SchemaType::from_iter([Type::String, Type::Object]))
        .description(Some(
            "`month`, `semimonth`, `quarter`, `year`, `week`, `day`, \"2 weeks\", \"6 months\", \"255 days\", or {\"weeks\": n}, {\"months\": n}, {\"days\": n}.",
        ))
        .examples([json!("month")])
}

/// A decimal number read exactly: a JSON string of plain digits ("1250.50") or a JSON number.
pub struct DecimalNumber;

impl PartialSchema for DecimalNumber {
    fn schema() -> RefOr<Schema> {
        ObjectBuilder::new()
            .schema_type(SchemaType::from_iter([Type::String, Type::Number]))
            .pattern(Some(r"^-?[0-9]+(\.[0-9]+)?([eE][-+]?[0-9]{1,3})?$"))
            .description(Some(
                "A decimal number, read exactly (0.1 is 0.1): a string of plain digits or a JSON number. Money may have at most the currency's minor units.",
            ))
            .examples([json!("1250.50")])
            .into()
    }
}

impl ToSchema for DecimalNumber {
    fn name() -> Cow<'static, str> {
        Cow::Borrowed("DecimalNumber")
    }
}

/// An ISO 4217 currency code Residue knows (its minor units follow ISO 4217).
pub struct CurrencyCode;

impl PartialSchema for CurrencyCode {
    fn schema() -> RefOr<Schema> {
        ObjectBuilder::new()
            .schema_type(Type::String)
            .enum_values(Some(Currency::codes()))
            .description(Some(
                "An ISO 4217 currency code (default USD); amounts have its minor units.",
            ))
            .into()
    }
}

impl ToSchema for CurrencyCode {
    fn name() -> Cow<'static, str> {
        Cow::Borrowed("CurrencyCode")
    }
}

#[derive(OpenApi)]
#[openapi(
    info(
        title = "Residue",
        description = "Loan and savings schedules solved in closed form from their z-domain partial fractions, posted to the cent. Money goes out as strings with the currency's minor units; rates are percent per year; dates ISO 8601; errors RFC 9457 problem details. Every figure is an estimate for discussion, not an offer, a disclosure or advice."
    ),
    components(schemas(
        request::LoanScheduleRequest,
        request::CompareRequest,
        request::CompareVariant,
        request::LoanCheckRequest,
        request::AprRequest,
        request::AprQuery,
        request::ApyRequest,
        request::RecurrenceRequest,
        request::SavingsPlanRequest,
        request::BatchLine,
        BatchAnswerLine,
        Health,
        super::loans::LoanScheduleDto,
        crate::answer::compare::CompareDto,
        crate::answer::check::CheckAnswer,
        super::apr::AprAnswer,
        super::apy::ApyAnswer,
        super::recurrence::RecurrenceAnswer,
        crate::answer::savings::SavingsPlanDto,
        crate::input::problem::Problem,
    ))
)]
struct ApiDoc;

/// What an operation answers with 200.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Answer {
    /// `application/json` with this schema.
    Json(&'static str),
    /// `application/json` with this schema, or `text/csv` (`Accept: text/csv`).
    JsonOrCsv(&'static str),
    /// `text/csv` only.
    Csv,
    /// `application/x-ndjson`, one [`BatchAnswerLine`] a line.
    Ndjson,
    /// Prometheus text.
    Prometheus,
    /// The OpenAPI document.
    OpenApi,
}

/// The example request of an operation.
#[derive(Debug, Clone, Copy)]
pub enum Example {
    None,
    /// A query string (without `?`).
    Query(&'static str),
    /// A JSON body.
    Body(fn() -> Value),
    /// NDJSON lines.
    Ndjson(&'static str),
}

/// One operation of the API.
#[derive(Debug, Clone, Copy)]
pub struct Operation {
    pub method: &'static str,
    pub path: &'static str,
    pub id: &'static str,
    pub summary: &'static str,
    /// The schema of the JSON body (POST) or of the query parameters (GET).
    pub request: Option<&'static str>,
    pub answer: Answer,
    pub example: Example,
}

const SCHEDULE_QUERY: &str = "principal=100000&annual_rate_percent=6&term_months=12";
const CHECK_QUERY: &str = "principal=100000&annual_rate_percent=6&term_months=360&quoted_payment=599.55&quoted_apr_percent=6.1&prepaid_finance_charges=points:1000&mortgage=true";
const SAVINGS_QUERY: &str = "annual_rate_percent=4&deposit=100&term_months=12";

fn schedule_body() -> Value {
    json!({"principal": "250000", "annual_rate_percent": "7.125", "term_months": 12,
           "first_payment_date": "2027-03-01", "extra_payments": [{"amount": "500", "at": 6}]})
}
fn compare_body() -> Value {
    json!({"base": {"principal": "278000", "annual_rate_percent": "6.375", "term_months": 360},
           "variants": [{"label": "15 years", "term_months": 180},
                        {"label": "extra 200", "extra_payments": [{"amount": "200", "from": 1}]}]})
}
fn check_body() -> Value {
    json!({"principal": "100000", "annual_rate_percent": "6", "term_months": 360,
           "quoted_payment": "599.55", "quoted_apr_percent": "6.1",
           "prepaid_finance_charges": [{"name": "points", "amount": "1000"}]})
}
fn apr_body() -> Value {
    json!({"advances": [{"amount": "5000", "date": "1978-01-10"}],
           "payments": [{"amount": "230", "count": 24, "first_date": "1978-02-10", "frequency": "monthly"}]})
}
fn apy_body() -> Value {
    json!({"principal": "1000", "interest": "30.37", "days": 182})
}
fn recurrence_body() -> Value {
    json!({"a": "1.005", "x0": "100000", "inputs": [{"kind": "step", "amount": "-599.55"}],
           "evaluate_at": [0, 12, 360]})
}
fn savings_body() -> Value {
    json!({"annual_rate_percent": "4", "goal": "10000", "term_months": 12, "start_date": "2027-01-01"})
}

const BATCH_EXAMPLE: &str = concat!(
    r#"{"id": 1, "job": "loan_check", "request": {"principal": "100000", "annual_rate_percent": "6", "term_months": 360, "quoted_payment": "599.55"}}"#,
    "\n",
    r#"{"id": "b", "job": "apy", "request": {"annual_rate_percent": "5", "compounding": "daily"}}"#,
    "\n",
);

/// Every operation the API serves, in the order of the guide.
pub const OPERATIONS: &[Operation] = &[
    Operation {
        method: "post",
        path: "/api/v1/loans/schedule",
        id: "schedule_post",
        summary: "A level-payment loan (and its plan options): the payment or the term, the posted schedule, the derivation (at most 600 segments listed, the first 24 with their derivation; a plan's size weighs on the in-flight limit: 503 with Retry-After when it cannot run now)",
        request: Some("LoanScheduleRequest"),
        answer: Answer::JsonOrCsv("LoanScheduleDto"),
        example: Example::Body(schedule_body),
    },
    Operation {
        method: "get",
        path: "/api/v1/loans/schedule",
        id: "schedule_get",
        summary: "The loan schedule from query parameters",
        request: Some("LoanScheduleRequest"),
        answer: Answer::JsonOrCsv("LoanScheduleDto"),
        example: Example::Query(SCHEDULE_QUERY),
    },
    Operation {
        method: "get",
        path: "/api/v1/loans/schedule.csv",
        id: "schedule_get_csv",
        summary: "The loan schedule as CSV (RFC 4180, header row, plain decimals)",
        request: Some("LoanScheduleRequest"),
        answer: Answer::Csv,
        example: Example::Query(SCHEDULE_QUERY),
    },
    Operation {
        method: "post",
        path: "/api/v1/loans/compare",
        id: "compare_post",
        summary: "A base loan and up to three variants, one row each",
        request: Some("CompareRequest"),
        answer: Answer::JsonOrCsv("CompareDto"),
        example: Example::Body(compare_body),
    },
    Operation {
        method: "get",
        path: "/api/v1/loans/compare",
        id: "compare_get",
        summary: "A quick comparison: one field lists several values (comma-separated or repeated), one plan each",
        request: Some("LoanScheduleRequest"),
        answer: Answer::JsonOrCsv("CompareDto"),
        example: Example::Query("principal=278000&annual_rate_percent=6.375&term_months=180,240,360"),
    },
    Operation {
        method: "get",
        path: "/api/v1/loans/compare.csv",
        id: "compare_get_csv",
        summary: "The comparison as CSV",
        request: Some("LoanScheduleRequest"),
        answer: Answer::Csv,
        example: Example::Query("principal=278000&annual_rate_percent=6.375&term_months=180,240,360"),
    },
    Operation {
        method: "post",
        path: "/api/v1/loans/check",
        id: "check_post",
        summary: "A quoted payment, APR and finance charge checked against the posted loan, with its disclosure figures",
        request: Some("LoanCheckRequest"),
        answer: Answer::Json("CheckAnswer"),
        example: Example::Body(check_body),
    },
    Operation {
        method: "get",
        path: "/api/v1/loans/check",
        id: "check_get",
        summary: "The loan check from query parameters",
        request: Some("LoanCheckRequest"),
        answer: Answer::Json("CheckAnswer"),
        example: Example::Query(CHECK_QUERY),
    },
    Operation {
        method: "post",
        path: "/api/v1/apr",
        id: "apr_post",
        summary: "The APR of any stream of advances and payments (Regulation Z Appendix J, or the EU APRC)",
        request: Some("AprRequest"),
        answer: Answer::Json("AprAnswer"),
        example: Example::Body(apr_body),
    },
    Operation {
        method: "get",
        path: "/api/v1/apr",
        id: "apr_get",
        summary: "The APR from query parameters (flows in their compact syntax)",
        request: Some("AprQuery"),
        answer: Answer::Json("AprAnswer"),
        example: Example::Query("advance=5000@1978-01-10&payment=230x24@1978-02-10/monthly"),
    },
    Operation {
        method: "post",
        path: "/api/v1/apy",
        id: "apy_post",
        summary: "The annual percentage yield (Regulation DD, 12 CFR 1030 Appendix A)",
        request: Some("ApyRequest"),
        answer: Answer::Json("ApyAnswer"),
        example: Example::Body(apy_body),
    },
    Operation {
        method: "get",
        path: "/api/v1/apy",
        id: "apy_get",
        summary: "The APY from query parameters",
        request: Some("ApyRequest"),
        answer: Answer::Json("ApyAnswer"),
        example: Example::Query("annual_rate_percent=5&compounding=daily"),
    },
    Operation {
        method: "post",
        path: "/api/v1/savings/plan",
        id: "savings_post",
        summary: "A savings or drawdown plan: the balance, the deposit, the number of periods or the withdrawal",
        request: Some("SavingsPlanRequest"),
        answer: Answer::JsonOrCsv("SavingsPlanDto"),
        example: Example::Body(savings_body),
    },
    Operation {
        method: "get",
        path: "/api/v1/savings/plan",
        id: "savings_get",
        summary: "The savings plan from query parameters",
        request: Some("SavingsPlanRequest"),
        answer: Answer::JsonOrCsv("SavingsPlanDto"),
        example: Example::Query(SAVINGS_QUERY),
    },
    Operation {
        method: "get",
        path: "/api/v1/savings/plan.csv",
        id: "savings_get_csv",
        summary: "The savings plan's schedule as CSV",
        request: Some("SavingsPlanRequest"),
        answer: Answer::Csv,
        example: Example::Query(SAVINGS_QUERY),
    },
    Operation {
        method: "post",
        path: "/api/v1/recurrence",
        id: "recurrence_post",
        summary: "Any first-order recurrence x[k+1] = a·x[k] + f[k], solved through the z-transform and evaluated",
        request: Some("RecurrenceRequest"),
        answer: Answer::Json("RecurrenceAnswer"),
        example: Example::Body(recurrence_body),
    },
    Operation {
        method: "post",
        path: "/api/v1/batch",
        id: "batch_post",
        summary: "Many jobs at once: NDJSON in (one BatchLine a line), NDJSON out in the same order (one BatchAnswerLine a line). Limits: 100,000 lines of at most 64 KiB; 512 MiB of answers and 300 s of computing a batch (later lines get a problem line naming the limit); two batches at once",
        request: Some("BatchLine"),
        answer: Answer::Ndjson,
        example: Example::Ndjson(BATCH_EXAMPLE),
    },
    Operation {
        method: "get",
        path: "/api/openapi.json",
        id: "openapi",
        summary: "This document",
        request: None,
        answer: Answer::OpenApi,
        example: Example::None,
    },
    Operation {
        method: "get",
        path: "/healthz",
        id: "healthz",
        summary: "Health: 200 while the process runs, until it exits",
        request: None,
        answer: Answer::Json("Health"),
        example: Example::None,
    },
    Operation {
        method: "get",
        path: "/readyz",
        id: "readyz",
        summary: "Readiness: 200 while new work is taken; 503 from the moment a shutdown signal arrives (the requests in flight still finish)",
        request: None,
        answer: Answer::Json("Health"),
        example: Example::None,
    },
    Operation {
        method: "get",
        path: "/metrics",
        id: "metrics",
        summary: "Prometheus metrics (requests and latencies per route, batch lines, problems by type)",
        request: None,
        answer: Answer::Prometheus,
        example: Example::None,
    },
];

/// The query-string fields that take several values (repeated or comma-separated).
const LIST_PARAMETERS: [&str; 4] = ["extra_payments", "rate_changes", "advance", "payment"];

fn problem_response(description: &str) -> Value {
    json!({
        "description": description,
        "content": {"application/problem+json": {"schema": {"$ref": "#/components/schemas/Problem"}}}
    })
}

fn responses(op: &Operation) -> Value {
    let json_content =
        |schema: &str| json!({"schema": {"$ref": format!("#/components/schemas/{schema}")}});
    let csv_content = || json!({"schema": {"type": "string", "description": "RFC 4180: a header row, one row a period, plain decimal numbers, ISO 8601 dates, CRLF line ends"}});
    let content = match op.answer {
        Answer::Json(s) => json!({"application/json": json_content(s)}),
        Answer::JsonOrCsv(s) => {
            json!({"application/json": json_content(s), "text/csv": csv_content()})
        }
        Answer::Csv => json!({"text/csv": csv_content()}),
        Answer::Ndjson => json!({"application/x-ndjson": {
            "schema": {"type": "string", "description": "One BatchAnswerLine a line"},
            "x-line-schema": {"$ref": "#/components/schemas/BatchAnswerLine"}
        }}),
        Answer::Prometheus => json!({"text/plain": {"schema": {"type": "string"}}}),
        Answer::OpenApi => json!({"application/json": {"schema": {"type": "object"}}}),
    };
    let mut ok = json!({"description": "The answer", "content": content});
    if matches!(op.answer, Answer::JsonOrCsv(_) | Answer::Csv) {
        // A line of text in the file would be imported as a row of the table.
        ok["headers"] = json!({crate::api::handlers::CAUTION_HEADER: {
            "description": "With a CSV answer: the caution (estimates, not an offer, disclosure or advice) that a JSON answer leads its notes with",
            "schema": {"type": "string"}
        }});
    }
    let mut r = Map::new();
    r.insert("200".into(), ok);
    if op.request.is_some() {
        r.insert(
            "400".into(),
            problem_response(if op.method == "post" {
                "Malformed JSON (or NDJSON framing)"
            } else {
                "A query string that cannot be read"
            }),
        );
        if op.method == "post" {
            // A batch has answered 200 before its body ends: a stalled upload
            // ends its stream with a body-timeout line instead.
            if op.answer != Answer::Ndjson {
                r.insert(
                    "408".into(),
                    problem_response("The body did not arrive whole within the request timeout"),
                );
            }
            r.insert("413".into(), problem_response("The body is too large"));
            r.insert(
                "415".into(),
                problem_response("The body is not of the media type the operation takes"),
            );
        }
        if op.answer != Answer::Ndjson {
            r.insert(
                "422".into(),
                problem_response("Fields missing, unknown, out of range, or without a solution; errors[].pointer names each"),
            );
        }
    }
    r.insert(
        "404".into(),
        problem_response("No operation has this address"),
    );
    r.insert(
        "405".into(),
        problem_response("The method is not allowed here"),
    );
    let mut busy = problem_response("Too many requests in flight, or the request took too long");
    busy["headers"] =
        json!({"Retry-After": {"description": "Seconds to wait", "schema": {"type": "integer"}}});
    r.insert("503".into(), busy);
    Value::Object(r)
}

/// The query parameters of a GET operation, from the properties of its request schema.
fn parameters(op: &Operation, schemas: &Map<String, Value>) -> Vec<Value> {
    let Some(name) = op.request else {
        return vec![];
    };
    let Some(schema) = schemas.get(name) else {
        return vec![];
    };
    let required: Vec<&str> = schema["required"]
        .as_array()
        .map(|a| a.iter().filter_map(Value::as_str).collect())
        .unwrap_or_default();
    let example_pairs: Vec<(String, String)> = match op.example {
        Example::Query(q) => form_urlencoded::parse(q.as_bytes()).into_owned().collect(),
        _ => vec![],
    };
    let compare = op.path.starts_with("/api/v1/loans/compare");
    let mut out = Vec::new();
    for (field, property) in schema["properties"].as_object().into_iter().flatten() {
        let description = property["description"].clone();
        let is_list = LIST_PARAMETERS.contains(&field.as_str());
        let structured = property.get("type").is_some_and(|t| {
            t == "array"
                || t == "object"
                || t.as_array().is_some_and(|a| a.contains(&json!("array")))
        }) || property.get("oneOf").is_some() && property.get("$ref").is_none();
        let mut schema = if is_list {
            json!({"type": "array", "items": {"type": "string"}})
        } else if structured || field == "unit_period" {
            json!({"type": "string"})
        } else {
            let mut p = property.clone();
            if let Some(m) = p.as_object_mut() {
                m.remove("description");
            }
            p
        };
        if compare && !is_list {
            schema = json!({"anyOf": [schema, {"type": "string", "description": "several values separated by commas, one plan each (one field at most)"}]});
        }
        let mut p = json!({
            "name": field,
            "in": "query",
            "required": required.contains(&field.as_str()),
            "schema": schema,
        });
        if !description.is_null() {
            p["description"] = description;
        }
        if is_list {
            p["style"] = json!("form");
            p["explode"] = json!(true);
        }
        let values: Vec<&str> = example_pairs
            .iter()
            .filter(|(k, _)| k == field)
            .map(|(_, v)| v.as_str())
            .collect();
        if let [one] = values.as_slice() {
            p["example"] = if is_list { json!([one]) } else { json!(one) };
        } else if !values.is_empty() {
            p["example"] = json!(values);
        }
        out.push(p);
    }
    out
}

/// Makes an optional request property non-nullable: `type: [T, "null"]` becomes
/// `type: T`, and `oneOf: [X, {type: null}]` becomes X (with the description kept).
fn strip_null(property: &mut Value) {
    if let Some(types) = property["type"].as_array() {
        let kept: Vec<Value> = types.iter().filter(|t| *t != "null").cloned().collect();
        property["type"] = match kept.as_slice() {
            [one] => one.clone(),
            _ => Value::Array(kept),
        };
    }
    let one_of = property.get("oneOf").and_then(Value::as_array).cloned();
    if let Some(branches) = one_of {
        let kept: Vec<Value> = branches
            .into_iter()
            .filter(|b| b.get("type") != Some(&json!("null")))
            .collect();
        if let [only] = kept.as_slice() {
            let description = property.get("description").cloned();
            *property = only.clone();
            if let Some(d) = description {
                property["description"] = d;
            }
        }
    }
}

/// The document without answer examples (they need the running application).
pub fn document() -> Value {
    let mut doc = serde_json::to_value(ApiDoc::openapi()).unwrap_or_default();
    let schemas = doc["components"]["schemas"]
        .as_object()
        .cloned()
        .unwrap_or_default();
    // The readers refuse unknown fields: say so.
    let refuse_unknown = [
        "LoanScheduleRequest",
        "CompareRequest",
        "CompareVariant",
        "LoanCheckRequest",
        "AprRequest",
        "AprFlow",
        "ApyRequest",
        "RecurrenceRequest",
        "RecurrenceInput",
        "SavingsPlanRequest",
        "BatchLine",
        "ExtraPayment",
        "RateChange",
        "PrepaidFinanceCharge",
    ];
    if let Some(all) = doc["components"]["schemas"].as_object_mut() {
        for name in refuse_unknown {
            if let Some(s) = all.get_mut(name) {
                s["additionalProperties"] = json!(false);
                // An absent field is "not given"; a null is refused like any other wrong type.
                for property in s["properties"].as_object_mut().into_iter().flatten() {
                    strip_null(property.1);
                }
            }
        }
    }
    let mut paths = Map::new();
    for op in OPERATIONS {
        let mut o = json!({
            "operationId": op.id,
            "summary": op.summary,
            "responses": responses(op),
        });
        if op.method == "get" {
            let params = parameters(op, &schemas);
            if !params.is_empty() {
                o["parameters"] = Value::Array(params);
            }
        } else if let Some(schema) = op.request {
            let (media, mut content) = if op.answer == Answer::Ndjson {
                (
                    "application/x-ndjson",
                    json!({"schema": {"type": "string", "description": "One BatchLine a line"},
                           "x-line-schema": {"$ref": format!("#/components/schemas/{schema}")}}),
                )
            } else {
                (
                    "application/json",
                    json!({"schema": {"$ref": format!("#/components/schemas/{schema}")}}),
                )
            };
            match op.example {
                Example::Body(f) => content["example"] = f(),
                Example::Ndjson(text) => content["example"] = json!(text),
                _ => {}
            }
            o["requestBody"] = json!({"required": true, "content": {media: content}});
        }
        let item = paths
            .entry(op.path.to_string())
            .or_insert_with(|| json!({}));
        item[op.method] = o;
    }
    doc["paths"] = Value::Object(paths);
    doc
}

/// The example request of an operation as an HTTP request to the application.
fn example_request(op: &Operation, csv: bool) -> Option<Request<Body>> {
    let builder = Request::builder().method(op.method.to_ascii_uppercase().as_str());
    let builder = if csv {
        builder.header(header::ACCEPT, "text/csv")
    } else {
        builder
    };
    match op.example {
        Example::None if op.answer == Answer::OpenApi => None,
        Example::None => builder.uri(op.path).body(Body::empty()).ok(),
        Example::Query(q) => builder
            .uri(format!("{}?{q}", op.path))
            .body(Body::empty())
            .ok(),
        Example::Body(f) => builder
            .uri(op.path)
            .header(header::CONTENT_TYPE, "application/json")
            .body(Body::from(f().to_string()))
            .ok(),
        Example::Ndjson(text) => builder
            .uri(op.path)
            .header(header::CONTENT_TYPE, "application/x-ndjson")
            .body(Body::from(text))
            .ok(),
    }
}

async fn answer_text(op: &Operation, csv: bool, app: &Router) -> Option<String> {
    use tower::ServiceExt;
    let request = example_request(op, csv)?;
    let response = app.clone().oneshot(request).await.ok()?;
    if !response.status().is_success() {
        tracing::warn!(
            operation = op.id,
            status = response.status().as_u16(),
            "an OpenAPI example does not answer 200"
        );
        return None;
    }
    let bytes = axum::body::to_bytes(response.into_body(), 16 * 1024 * 1024)
        .await
        .ok()?;
    String::from_utf8(bytes.to_vec()).ok()
}

/// The document with every operation's answer example, computed by the
/// application itself (`app`, handed in by the router that serves it).
pub async fn document_with_examples(app: Router) -> Value {
    let mut doc = document();
    for op in OPERATIONS {
        let content = &mut doc["paths"][op.path][op.method]["responses"]["200"]["content"];
        match op.answer {
            Answer::Json(_) | Answer::JsonOrCsv(_) => {
                if let Some(text) = answer_text(op, false, &app).await {
                    if let Ok(v) = serde_json::from_str::<Value>(&text) {
                        content["application/json"]["example"] = v;
                    }
                }
                if matches!(op.answer, Answer::JsonOrCsv(_)) {
                    if let Some(text) = answer_text(op, true, &app).await {
                        content["text/csv"]["example"] = json!(text);
                    }
                }
            }
            Answer::Csv => {
                if let Some(text) = answer_text(op, false, &app).await {
                    content["text/csv"]["example"] = json!(text);
                }
            }
            Answer::Ndjson => {
                if let Some(text) = answer_text(op, false, &app).await {
                    content["application/x-ndjson"]["example"] = json!(text);
                }
            }
            Answer::Prometheus => {
                content["text/plain"]["example"] =
                    json!("# TYPE residue_requests_total counter\nresidue_requests_total{route=\"/healthz\",status=\"200\"} 1\n");
            }
            Answer::OpenApi => {
                content["application/json"]["example"] =
                    json!({"openapi": "3.1.0", "info": {"title": "Residue"}, "paths": {}});
            }
        }
    }
    doc
}

static DOCUMENT: tokio::sync::OnceCell<Vec<u8>> = tokio::sync::OnceCell::const_new();

/// `GET /api/openapi.json`; `app` builds the application that computes the
/// answer examples, once.
pub async fn openapi_json(app: fn() -> Router) -> Response {
    let bytes = DOCUMENT
        .get_or_init(|| async {
            serde_json::to_vec_pretty(&document_with_examples(app()).await).unwrap_or_default()
        })
        .await;
    ([(header::CONTENT_TYPE, "application/json")], bytes.clone()).into_response()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::fields::{Fields, Source};
    use crate::input::json::Json;

    fn properties(doc: &Value, schema: &str) -> Vec<String> {
        doc["components"]["schemas"][schema]["properties"]
            .as_object()
            .unwrap_or_else(|| panic!("{schema} has properties"))
            .keys()
            .cloned()
            .collect()
    }

    fn sorted(mut v: Vec<String>) -> Vec<String> {
        v.sort();
        v
    }

    #[test]
    fn request_schemas_name_exactly_the_readers_fields() {
        let doc = document();
        let loan: Vec<String> = crate::input::loan::LOAN_FIELDS
            .iter()
            .chain(crate::input::loan::PLAN_FIELDS.iter())
            .map(|s| s.to_string())
            .collect();
        assert_eq!(
            sorted(properties(&doc, "LoanScheduleRequest")),
            sorted(loan.clone())
        );
        // A variant is any schedule field over the base.
        assert_eq!(sorted(properties(&doc, "CompareVariant")), sorted(loan));
        let savings: Vec<String> = crate::input::savings::SAVINGS_FIELDS
            .iter()
            .map(|s| s.to_string())
            .collect();
        assert_eq!(
            sorted(properties(&doc, "SavingsPlanRequest")),
            sorted(savings)
        );
        // The plan fields that shape scheduled payments; `extra_payments` is read
        // only to be refused (a disclosure counts scheduled payments), `label` not at all.
        let check: Vec<String> = crate::input::loan::LOAN_FIELDS
            .iter()
            .chain(
                crate::input::loan::PLAN_FIELDS
                    .iter()
                    .filter(|f| !["extra_payments", "label"].contains(f)),
            )
            .map(|s| s.to_string())
            .chain(
                [
                    "quoted_payment",
                    "quoted_apr_percent",
                    "quoted_finance_charge",
                    "prepaid_finance_charges",
                    "mortgage",
                ]
                .map(String::from),
            )
            .collect();
        assert_eq!(sorted(properties(&doc, "LoanCheckRequest")), sorted(check));
    }

    /// Every property of a request schema is a field its reader knows: an object
    /// holding it (with a placeholder value) draws no "is not a known field".
    /// Reads a request's members and returns the pointers of its unknown fields.
    type Reader<'a> = dyn Fn(&[(String, Json)]) -> Vec<String> + 'a;

    #[test]
    fn every_schema_property_is_a_field_the_reader_knows() {
        let doc = document();
        let unknown = |schema: &str, read: &Reader<'_>| {
            // One property at a time: a reader may stop reading a form it finds mixed.
            for name in properties(&doc, schema) {
                let members = vec![(name.clone(), Json::String("1".into()))];
                let pointers = read(&members);
                assert!(
                    pointers.is_empty(),
                    "{schema}.{name}: unknown to the reader: {pointers:?}"
                );
            }
        };
        let of = |e: crate::input::problem::ApiError| -> Vec<String> {
            e.errors
                .into_iter()
                .filter(|e| e.message == "is not a known field")
                .map(|e| e.pointer)
                .collect()
        };
        let source = |m: &[(String, Json)]| -> Vec<(String, Json)> { m.to_vec() };
        unknown("LoanScheduleRequest", &|m| {
            let m = source(m);
            crate::input::loan::schedule_request_from(Fields::new(Source::Json {
                members: &m,
                pointer: "",
            }))
            .err()
            .map(of)
            .unwrap_or_default()
        });
        unknown("LoanCheckRequest", &|m| {
            crate::input::check::read_check(Fields::new(Source::Json {
                members: m,
                pointer: "",
            }))
            .err()
            .map(of)
            .unwrap_or_default()
        });
        unknown("ApyRequest", &|m| {
            crate::input::apy::read_apy(Fields::new(Source::Json {
                members: m,
                pointer: "",
            }))
            .err()
            .map(of)
            .unwrap_or_default()
        });
        unknown("SavingsPlanRequest", &|m| {
            crate::input::savings::savings_terms_from(Fields::new(Source::Json {
                members: m,
                pointer: "",
            }))
            .err()
            .map(of)
            .unwrap_or_default()
        });
        unknown("AprRequest", &|m| {
            crate::input::apr::read_json(&Json::Object(m.to_vec()))
                .err()
                .map(of)
                .unwrap_or_default()
        });
        unknown("RecurrenceRequest", &|m| {
            crate::input::recurrence::read_recurrence(&Json::Object(m.to_vec()))
                .err()
                .map(of)
                .unwrap_or_default()
        });
    }

    #[test]
    fn the_document_is_openapi_3_1_with_every_operation() {
        let doc = document();
        assert_eq!(doc["openapi"], "3.1.0");
        for op in OPERATIONS {
            let o = &doc["paths"][op.path][op.method];
            assert!(o.is_object(), "{} {}", op.method, op.path);
            if op.method == "post" {
                let content = o["requestBody"]["content"].as_object().unwrap();
                assert!(
                    content.values().all(|c| c.get("example").is_some()),
                    "{}",
                    op.id
                );
            }
        }
    }
}
