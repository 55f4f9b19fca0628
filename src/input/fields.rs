//! Reading request fields from a JSON object or a query string into typed values.
//!
//! Parse, don't validate: each reader turns one field into a domain value or
//! records a [`FieldError`] naming it, so a request reports every bad field at
//! once. Fields never read are unknown: [`Fields::finish`] refuses them, so a
//! mistyped name cannot be silently ignored.

use rust_decimal::Decimal;

use super::json::{escape_pointer, Json};
use super::problem::FieldError;

/// Where the fields come from.
#[derive(Debug, Clone, Copy)]
pub enum Source<'a> {
    /// The members of a JSON object, with the JSON Pointer of that object.
    Json {
        members: &'a [(String, Json)],
        pointer: &'a str,
    },
    /// Query parameters, in order, possibly repeated.
    Query(&'a [(String, String)]),
}

/// One field's raw value.
#[derive(Debug, Clone, Copy)]
pub enum Raw<'a> {
    Text(&'a str),
    Json(&'a Json),
}

/// Reads fields from a source, collecting errors and remembering what was read.
#[derive(Debug)]
pub struct Fields<'a> {
    source: Source<'a>,
    read: Vec<&'static str>,
    /// Prefixes whose query parameters (`prefix.NAME`) were taken as a group.
    read_prefixes: Vec<&'static str>,
    /// Accept "250,000" and "6.5%" as a person types them (pages, not the API).
    pub lenient: bool,
    pub errors: Vec<FieldError>,
}

/// The most characters a single value may have.
const MAX_VALUE_LENGTH: usize = 200;

impl<'a> Fields<'a> {
    pub fn new(source: Source<'a>) -> Self {
        Self {
            source,
            read: Vec::new(),
            read_prefixes: Vec::new(),
            lenient: false,
            errors: Vec::new(),
        }
    }

    /// The pointer of a field: "/name" in JSON (under the object's pointer), "name" in a query.
    pub fn pointer(&self, name: &str) -> String {
        match self.source {
            Source::Json { pointer, .. } => format!("{pointer}/{name}"),
            Source::Query(_) => name.to_string(),
        }
    }

    /// Records an error on a field.
    pub fn error(&mut self, name: &str, message: impl Into<String>) {
        let pointer = self.pointer(name);
        self.errors.push(FieldError::new(pointer, message.into()));
    }

    /// True when the field is present (and marks it read).
    pub fn has(&mut self, name: &'static str) -> bool {
        self.raw(name).is_some()
    }

    /// The field's raw value, if present; a repeated query parameter is an error.
    pub fn raw(&mut self, name: &'static str) -> Option<Raw<'a>> {
        if !self.read.contains(&name) {
            self.read.push(name);
        }
        match self.source {
            Source::Json { members, .. } => members
                .iter()
                .find(|(k, _)| k == name)
                .map(|(_, v)| Raw::Json(v)),
            Source::Query(pairs) => {
                let mut found = pairs.iter().filter(|(k, _)| k == name);
                let first = found.next()?;
                if found.next().is_some() {
                    self.error(name, "is given more than once");
                    return None;
                }
                if first.1.is_empty() {
                    // An empty form field means "not given".
                    return None;
                }
                Some(Raw::Text(first.1.as_str()))
            }
        }
    }

    /// The field as text (a JSON string, or a query value).
    pub fn text(&mut self, name: &'static str) -> Option<&'a str> {
        match self.raw(name)? {
            Raw::Text(t) => Some(t),
            Raw::Json(Json::String(s)) => Some(s.as_str()),
            Raw::Json(other) => {
                self.error(name, format!("must be a string, not {}", other.kind()));
                None
            }
        }
    }

    /// A decimal number given as a JSON number or a string of plain decimal digits.
    pub fn decimal(&mut self, name: &'static str) -> Option<Decimal> {
        let text = match self.raw(name)? {
            Raw::Text(t) => t,
            Raw::Json(Json::Number(n)) => n.as_str(),
            Raw::Json(Json::String(s)) => s.as_str(),
            Raw::Json(other) => {
                self.error(name, format!("must be a number, not {}", other.kind()));
                return None;
            }
        };
        match parse_decimal(text, self.lenient) {
            Ok(d) => Some(d),
            Err(message) => {
                self.error(name, with_example(message, name));
                None
            }
        }
    }

    /// A calendar date in ISO 8601 (`2027-03-01`).
    pub fn date(&mut self, name: &'static str) -> Option<jiff::civil::Date> {
        let text = self.text(name)?;
        match parse_date(text) {
            Ok(d) => Some(d),
            Err(m) => {
                self.error(name, m);
                None
            }
        }
    }

    /// A list given as a query parameter (repeated, or comma-separated, or both).
    /// Returns `None` when absent; JSON callers read arrays with [`Fields::raw`].
    pub fn query_list(&mut self, name: &'static str) -> Option<Vec<&'a str>> {
        if !self.read.contains(&name) {
            self.read.push(name);
        }
        let Source::Query(pairs) = self.source else {
            return None;
        };
        let items: Vec<&str> = pairs
            .iter()
            .filter(|(k, _)| k == name)
            .flat_map(|(_, v)| v.split(','))
            .map(str::trim)
            .filter(|v| !v.is_empty())
            .collect();
        if items.is_empty() {
            None
        } else {
            Some(items)
        }
    }

    /// The query parameters written `prefix.NAME`, as (NAME, value), taken as
    /// read; empty for a JSON source (whose nested objects are read with
    /// [`Fields::raw`]).
    pub fn prefixed(&mut self, prefix: &'static str) -> Vec<(String, String)> {
        if !self.read_prefixes.contains(&prefix) {
            self.read_prefixes.push(prefix);
        }
        let Source::Query(pairs) = self.source else {
            return Vec::new();
        };
        pairs
            .iter()
            .filter_map(|(k, v)| {
                let name = k.strip_prefix(prefix)?.strip_prefix('.')?;
                // An empty form field means "not given".
                (!v.trim().is_empty()).then(|| (name.to_string(), v.clone()))
            })
            .collect()
    }

    /// True when the source is a query string.
    pub fn is_query(&self) -> bool {
        matches!(self.source, Source::Query(_))
    }

    /// A whole number from 0 to `max`.
    pub fn count(&mut self, name: &'static str, max: u32) -> Option<u32> {
        let d = self.decimal(name)?;
        if d.fract() != Decimal::ZERO
            || d.is_sign_negative() && !d.is_zero()
            || d > Decimal::from(max)
        {
            self.error(name, format!("must be a whole number from 0 to {max}"));
            return None;
        }
        rust_decimal::prelude::ToPrimitive::to_u32(&d)
    }

    /// A whole number of something whose range the engine states (terms): an error
    /// here says only what kind of value it must be, so the field has one range
    /// message, the engine's. Beyond u32 it is read as u32::MAX, which is out of
    /// every such range.
    pub fn whole(&mut self, name: &'static str, example: &str) -> Option<u32> {
        let d = self.decimal(name)?;
        if d.fract() != Decimal::ZERO || d.is_sign_negative() && !d.is_zero() {
            self.error(name, format!("must be a whole number, e.g. {example}"));
            return None;
        }
        Some(rust_decimal::prelude::ToPrimitive::to_u32(&d).unwrap_or(u32::MAX))
    }

    /// Records an engine range error on the field it names; true when there is none.
    /// Readers pass each field's own engine check through it, so that every bad
    /// field is named at once.
    pub fn in_range(&mut self, r: crate::engine::Result<()>) -> bool {
        match r {
            Ok(()) => true,
            Err(e) => {
                self.error(e.field.unwrap_or(""), e.message);
                false
            }
        }
    }

    /// One of a fixed set of names.
    pub fn choice<T>(
        &mut self,
        name: &'static str,
        parse: impl Fn(&str) -> Option<T>,
        allowed: &[&str],
    ) -> Option<T> {
        let text = self.text(name)?;
        match parse(text) {
            Some(v) => Some(v),
            None => {
                self.error(name, format!("must be one of: {}", allowed.join(", ")));
                None
            }
        }
    }

    /// The request's currency: `default` when the field is absent, `None` (with
    /// the error recorded, naming the codes Residue knows) when it is unknown.
    pub fn currency(
        &mut self,
        default: crate::engine::money::Currency,
    ) -> Option<crate::engine::money::Currency> {
        use crate::engine::money::Currency;
        let Some(code) = self.text("currency") else {
            return Some(default);
        };
        let c = Currency::parse(code);
        if c.is_none() {
            let known: Vec<&str> = Currency::codes().collect();
            self.error(
                "currency",
                format!(
                    "is not a currency Residue knows; use one of {}",
                    known.join(", ")
                ),
            );
        }
        c
    }

    /// One of the choices its table row lists (`group`'s field `name`), read
    /// with `parse` (the engine type's own names); an unknown name is refused
    /// with the allowed ones, in the table's order.
    pub fn pick<T>(
        &mut self,
        group: &'static [super::table::Field],
        name: &'static str,
        parse: impl Fn(&str) -> Option<T>,
    ) -> Option<T> {
        let allowed = group
            .iter()
            .find(|f| f.name == name)
            .map(super::table::Field::allowed)
            .unwrap_or_default();
        let allowed: Vec<&str> = allowed.iter().map(String::as_str).collect();
        self.choice(name, parse, &allowed)
    }

    /// Refuses every field that was not read, and returns the collected errors.
    ///
    /// # Errors
    /// All field errors, unknown fields included.
    pub fn finish(mut self) -> Result<(), Vec<FieldError>> {
        let unknown: Vec<String> = match self.source {
            Source::Json { members, .. } => members
                .iter()
                .map(|(k, _)| k.clone())
                .filter(|k| !self.read.contains(&k.as_str()))
                .collect(),
            Source::Query(pairs) => {
                let mut names: Vec<String> = Vec::new();
                for (k, _) in pairs {
                    let grouped = self
                        .read_prefixes
                        .iter()
                        .any(|p| k.strip_prefix(p).is_some_and(|rest| rest.starts_with('.')));
                    if !grouped && !self.read.contains(&k.as_str()) && !names.contains(k) {
                        names.push(k.clone());
                    }
                }
                names
            }
        };
        for name in unknown {
            let shown: String = name.chars().take(60).collect();
            let pointer = match self.source {
                Source::Json { pointer, .. } => format!("{pointer}/{}", escape_pointer(&shown)),
                Source::Query(_) => shown,
            };
            self.errors.push(FieldError::unknown(pointer));
        }
        if self.errors.is_empty() {
            Ok(())
        } else {
            Err(self.errors)
        }
    }
}

/// An amount of money in `currency`: at most its minor units of decimals.
pub fn money_in(
    f: &mut Fields<'_>,
    name: &'static str,
    currency: crate::engine::money::Currency,
) -> Option<Decimal> {
    let v = f.decimal(name)?;
    if !currency.fits(v) {
        f.error(
            name,
            format!(
                "{} amounts have at most {} decimals",
                currency.code(),
                currency.minor_units()
            ),
        );
        return None;
    }
    Some(v)
}

/// An example value of the field's own kind: a percentage for a rate, a whole
/// number for a count, an amount of money otherwise.
pub fn example_for(name: &str) -> &'static str {
    if name.contains("percent") || name.contains("rate") {
        "6.5"
    } else if name.starts_with("term_")
        || name.ends_with("_payments")
        || name.ends_with("_periods")
        || name.starts_with("days")
        || name == "count"
        || name == "periods"
    {
        "360"
    } else {
        MONEY_EXAMPLE
    }
}

/// The example [`parse_decimal`] gives, an amount of money.
const MONEY_EXAMPLE: &str = "1250.50";

/// `message` from [`parse_decimal`] with its example replaced by one of the
/// field's own kind ([`example_for`]).
pub fn with_example(message: String, name: &str) -> String {
    let example = example_for(name);
    if example == MONEY_EXAMPLE {
        return message;
    }
    message.replace(
        &format!("e.g. {MONEY_EXAMPLE},"),
        &format!("e.g. {example},"),
    )
}

/// `text` without its thousands separators (commas, spaces, no-break spaces or
/// underscores), when it has any: they must group the integer digits by three
/// ("250,000", "1 250.50"), the first group of one to three digits and not
/// starting with 0. Anything else is refused rather than guessed at: "6,5" is a
/// decimal comma (6.5, not 65), "1,5" is not 15.
pub(crate) fn ungroup(text: &str) -> Result<String, String> {
    let separator = |c: char| matches!(c, ',' | ' ' | '\u{a0}' | '_');
    if !text.contains(separator) {
        return Ok(text.to_string());
    }
    let refused = || {
        format!(
            "reads a comma or space only between groups of three digits (250,000); write a decimal with a point, e.g. 6.5, not \"{}\"",
            shorten(text)
        )
    };
    let body = text.strip_prefix('-').unwrap_or(text);
    let (int, frac) = body.split_once('.').unwrap_or((body, ""));
    if frac.contains(separator) {
        return Err(refused());
    }
    let mut groups = int.split(separator);
    let first = groups.next().unwrap_or("");
    let digits = |g: &str| g.bytes().all(|b| b.is_ascii_digit());
    if !(1..=3).contains(&first.len()) || !digits(first) || first.starts_with('0') {
        return Err(refused());
    }
    if !groups.all(|g| g.len() == 3 && digits(g)) {
        return Err(refused());
    }
    Ok(text.replace(separator, ""))
}

/// Parses decimal text exactly: an optional minus, digits, an optional point and
/// digits, optionally an exponent (e.g. from a JSON encoder). Nothing is rounded:
/// a value that needs more than 28 significant digits is refused.
///
/// With `lenient`, thousands separators ("250,000"), surrounding spaces, a
/// trailing "%" and a leading currency sign are removed first.
///
/// # Errors
/// A message for a person, naming what is wrong.
pub fn parse_decimal(text: &str, lenient: bool) -> Result<Decimal, String> {
    let owned;
    let mut t = text;
    if lenient {
        let trimmed = t
            .trim()
            .trim_end_matches('%')
            .trim_start_matches(['$', '€', '£'])
            .trim();
        owned = ungroup(trimmed)?;
        t = &owned;
    }
    if t.len() > MAX_VALUE_LENGTH {
        return Err("is too long to be a number".into());
    }
    if t.is_empty() {
        return Err("must be a number, not empty".into());
    }
    let (mantissa, exponent) = match t.find(['e', 'E']) {
        Some(at) => (&t[..at], Some(&t[at + 1..])),
        None => (t, None),
    };
    let body = mantissa.strip_prefix('-').unwrap_or(mantissa);
    let (int, frac) = match body.split_once('.') {
        Some((i, f)) => (i, Some(f)),
        None => (body, None),
    };
    let digits_ok = |s: &str| !s.is_empty() && s.bytes().all(|b| b.is_ascii_digit());
    if !digits_ok(int) || frac.is_some_and(|f| !digits_ok(f)) {
        if t.contains(',') {
            return Err("must be a plain number without thousands separators, e.g. 250000".into());
        }
        if t.eq_ignore_ascii_case("nan") || t.to_ascii_lowercase().contains("inf") {
            return Err("must be a finite number".into());
        }
        return Err(format!(
            "must be a number written with digits, e.g. {MONEY_EXAMPLE}, not \"{}\"",
            shorten(text)
        ));
    }
    let value = match exponent {
        None => Decimal::from_str_exact(t)
            .map_err(|_| "has more than 28 significant digits".to_string())?,
        Some(e) => {
            let e_digits = e.strip_prefix(['-', '+']).unwrap_or(e);
            if !digits_ok(e_digits) || e_digits.len() > 3 {
                return Err("has an exponent out of range".into());
            }
            let exp: i32 = e
                .parse()
                .map_err(|_| "has an exponent out of range".to_string())?;
            scale_exact(
                Decimal::from_str_exact(mantissa)
                    .map_err(|_| "has more than 28 significant digits".to_string())?,
                exp,
            )
            .ok_or_else(|| "is too large or too small for exact decimal arithmetic".to_string())?
        }
    };
    Ok(value)
}

/// m × 10^exp exactly, or `None` when it cannot be held in 28 digits.
fn scale_exact(m: Decimal, exp: i32) -> Option<Decimal> {
    let m = m.normalize();
    if exp >= 0 {
        let mut v = m;
        for _ in 0..exp {
            v = v.checked_mul(Decimal::TEN)?;
        }
        Some(v)
    } else {
        let scale = m.scale() + exp.unsigned_abs();
        if scale > 28 {
            return None;
        }
        Some(Decimal::from_i128_with_scale(m.mantissa(), scale))
    }
}

/// The first and last years a request's date may fall in. Every date a request
/// gives (a loan's funding and first payment, an extra payment's date, an APR
/// flow, a savings plan's start) is read by [`parse_date`] and held to these
/// years; the schedules a date starts may run on past the last one.
pub const DATE_YEARS: (i16, i16) = (1900, 2200);

const MONTH_NAMES: [&str; 12] = [
    "January",
    "February",
    "March",
    "April",
    "May",
    "June",
    "July",
    "August",
    "September",
    "October",
    "November",
    "December",
];

/// Parses an ISO 8601 calendar date (`YYYY-MM-DD`) in the years [`DATE_YEARS`]:
/// the one date parser of every request. Its messages say what is wrong: the
/// shape, the year, a month past 12, or a day the month does not have
/// ("2027-02-30 is not a day of the calendar: February 2027 has 28 days").
///
/// # Errors
/// A message for a person.
pub fn parse_date(text: &str) -> Result<jiff::civil::Date, String> {
    let b = text.as_bytes();
    let shape = b.len() == 10
        && b[4] == b'-'
        && b[7] == b'-'
        && b.iter()
            .enumerate()
            .all(|(i, c)| i == 4 || i == 7 || c.is_ascii_digit());
    if !shape {
        return Err(format!(
            "must be a date written YYYY-MM-DD, not \"{}\"",
            shorten(text)
        ));
    }
    // The shape holds ten ASCII bytes with digits at these places: each number
    // parses, and fits its type (at most 9999, 99, 99).
    let number = |r: std::ops::Range<usize>| -> i16 { text[r].parse().unwrap_or(0) };
    let (year, month, day) = (number(0..4), number(5..7), number(8..10));
    let (first_year, last_year) = DATE_YEARS;
    if !(first_year..=last_year).contains(&year) {
        return Err(format!(
            "must be a date from {first_year} to {last_year}, not {text}"
        ));
    }
    let Some(name) = usize::try_from(month - 1)
        .ok()
        .and_then(|i| MONTH_NAMES.get(i))
    else {
        return Err(format!("{text} has no month {month}: months run 01 to 12"));
    };
    let month = month as i8;
    let days = jiff::civil::Date::new(year, month, 1)
        .map_err(|_| format!("{text} is not a date"))?
        .days_in_month();
    if day < 1 || day > i16::from(days) {
        return Err(format!(
            "{text} is not a day of the calendar: {name} {year} has {days} days"
        ));
    }
    jiff::civil::Date::new(year, month, day as i8).map_err(|_| format!("{text} is not a date"))
}

fn shorten(s: &str) -> String {
    let mut out: String = s.chars().filter(|c| !c.is_control()).take(24).collect();
    if s.chars().count() > 24 {
        out.push('…');
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The one date parser: ISO 8601 calendar dates (the proleptic Gregorian
    /// calendar's leap years: 2024 and 2000 are leap years, 1900 and 2100 are not;
    /// ISO 8601-1:2019, from memory), held to [`DATE_YEARS`], each refusal saying why.
    #[test]
    fn dates_are_iso_calendar_dates_and_refusals_say_why() {
        let day = |s: &str| parse_date(s).map(|d| d.to_string());
        for good in [
            "1978-01-10",
            "2024-02-29",
            "2000-02-29",
            "1900-01-01",
            "2200-12-31",
        ] {
            assert_eq!(day(good).as_deref(), Ok(good));
        }
        let why = |s: &str| parse_date(s).unwrap_err();
        assert!(
            why("2027-02-30").contains("February 2027 has 28 days"),
            "{}",
            why("2027-02-30")
        );
        assert!(why("1900-02-29").contains("February 1900 has 28 days"));
        assert!(why("2100-02-29").contains("February 2100 has 28 days"));
        assert!(why("2027-04-31").contains("April 2027 has 30 days"));
        assert!(why("2027-13-01").contains("no month 13"));
        assert!(why("2027-00-10").contains("no month 0"));
        assert!(why("2027-02-00").contains("February 2027 has 28 days"));
        assert!(why("1899-12-31").contains("from 1900 to 2200"));
        assert!(why("0000-01-01").contains("from 1900 to 2200"));
        assert!(why("2201-01-01").contains("from 1900 to 2200"));
        for shape in [
            "27-2-3",
            "2027-3-01",
            "20270301",
            "",
            "2027-03-01T00:00",
            "10000-01-01",
            "２０２７-03-01",
        ] {
            assert!(
                why(shape).starts_with("must be a date written YYYY-MM-DD"),
                "{shape}: {}",
                why(shape)
            );
        }
    }

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    #[test]
    fn plain_decimals_parse_exactly() {
        assert_eq!(parse_decimal("0.1", false).unwrap(), d("0.1"));
        assert_eq!(parse_decimal("-12.50", false).unwrap(), d("-12.50"));
        assert_eq!(parse_decimal("6.375e0", false).unwrap(), d("6.375"));
        assert_eq!(parse_decimal("25e3", false).unwrap(), d("25000"));
        assert_eq!(parse_decimal("5e-3", false).unwrap(), d("0.005"));
    }

    #[test]
    fn bad_numbers_are_refused_with_reasons() {
        for bad in [
            "",
            "1,000",
            "NaN",
            "Infinity",
            "1e400",
            "1e-400",
            "+5",
            "١٢",
            "1.2.3",
            "123456789012345678901234567890",
            "0.12345678901234567890123456789",
        ] {
            assert!(parse_decimal(bad, false).is_err(), "{bad}");
        }
        assert!(parse_decimal("1,000", false)
            .unwrap_err()
            .contains("thousands"));
    }

    #[test]
    fn lenient_reading_takes_what_a_person_types() {
        assert_eq!(parse_decimal("250,000", true).unwrap(), d("250000"));
        assert_eq!(parse_decimal(" 6.5% ", true).unwrap(), d("6.5"));
        assert_eq!(parse_decimal("$1,250.00", true).unwrap(), d("1250.00"));
        assert_eq!(parse_decimal("1 250 000", true).unwrap(), d("1250000"));
        assert_eq!(parse_decimal("-12,345.5", true).unwrap(), d("-12345.5"));
        // A decimal comma or a broken grouping is refused, never read as a
        // bigger number ("6,5" is not 65 %).
        for bad in [
            "6,5",
            "0,5",
            "4,25",
            "1,5",
            "6,17",
            "0,500",
            "1,2345",
            "12,34,567",
            ",500",
            "1,000.5,0",
            "1.000,50",
        ] {
            let e = parse_decimal(bad, true).unwrap_err();
            assert!(
                e.contains("groups of three digits") || e.contains("digits"),
                "{bad}: {e}"
            );
        }
    }

    #[test]
    fn unknown_and_repeated_query_fields_are_errors() {
        let pairs = vec![
            ("principal".to_string(), "1".to_string()),
            ("princpal".to_string(), "2".to_string()),
            ("x".to_string(), "1".to_string()),
            ("x".to_string(), "2".to_string()),
        ];
        let mut f = Fields::new(Source::Query(&pairs));
        assert_eq!(f.decimal("principal"), Some(d("1")));
        assert_eq!(f.decimal("x"), None);
        let errors = f.finish().unwrap_err();
        assert_eq!(errors.len(), 2);
        assert_eq!(errors[0].pointer, "x");
        assert_eq!(errors[1].pointer, "princpal");
    }
}
