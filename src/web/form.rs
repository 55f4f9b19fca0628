//! The forms of the pages: field labels, the values a person typed, and the
//! errors of the API's problem put next to the field they name, in words.

use crate::input::problem::ApiError;

use crate::input::table::Kind as FieldKind;

/// A field of a page's form: its row in the request's field table (name,
/// label, hint, placeholder, kind), declared once beside the reader.
pub type Spec = crate::input::table::Field;

/// How a field is entered.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// A number a person types ("250,000", "6.5%").
    Number,
    /// A whole number.
    Whole,
    /// A date (`YYYY-MM-DD`).
    Date,
    /// Free text (lists, labels).
    Text,
    /// One of fixed choices.
    Choice,
}

/// How a person enters the field. The term in months is typed as text: the
/// compare page takes several terms in it ("180,240,360").
pub fn kind_of(spec: &Spec) -> Kind {
    match spec.kind {
        _ if spec.name == "term_months" => Kind::Text,
        FieldKind::Money | FieldKind::Percent | FieldKind::Decimal => Kind::Number,
        FieldKind::Whole { .. } => Kind::Whole,
        FieldKind::Date => Kind::Date,
        FieldKind::Choice { .. } | FieldKind::Flag { .. } => Kind::Choice,
        _ => Kind::Text,
    }
}

/// The field tables the pages' forms show, in the order a field is looked up.
const FORM_TABLES: [&[Spec]; 5] = [
    crate::input::loan::LOAN,
    crate::input::loan::PLAN,
    crate::input::check::QUOTES,
    crate::input::savings::SAVINGS_FIELDS,
    crate::input::refinance::REFINANCE_COSTS,
];

/// The words of a field, looked up in `tables` (a page's own), then in every
/// form table.
pub fn spec_in(tables: &[&'static [Spec]], name: &str) -> Option<&'static Spec> {
    tables
        .iter()
        .chain(FORM_TABLES.iter())
        .flat_map(|t| t.iter())
        .find(|s| s.name == name && !s.label.is_empty())
}

/// The table of the fields a query writes under `prefix.`: the refinance's
/// current loan.
fn prefixed_table(prefix: &str) -> &'static [Spec] {
    match prefix {
        "current" => crate::input::refinance::CURRENT_FIELDS,
        "adjustable" => crate::input::adjustable::ADJUSTABLE_FIELDS,
        _ => &[],
    }
}

/// The field of a query parameter, a prefixed one ("current.balance") included.
fn param_spec(name: &str) -> Option<&'static Spec> {
    match name.split_once('.') {
        Some((prefix, field)) => prefixed_table(prefix)
            .iter()
            .find(|s| s.name == field && !s.label.is_empty()),
        None => spec(name),
    }
}

/// Repeatable rows as the API reads them: the fields `names` taken by position,
/// rows left wholly blank dropped, every other row written whole (an empty
/// field kept, so the fields after it stay with their row), numbers in the
/// `numeric` columns written plainly; the other parameters as [`normalize`]
/// writes them, before the rows.
pub fn normalize_rows(
    pairs: &[(String, String)],
    names: &[&str],
    numeric: &[bool],
) -> Vec<(String, String)> {
    let rest: Vec<(String, String)> = pairs
        .iter()
        .filter(|(k, _)| !names.contains(&k.as_str()))
        .cloned()
        .collect();
    let mut out = normalize(&rest, false);
    let columns: Vec<Vec<&str>> = names
        .iter()
        .map(|n| {
            pairs
                .iter()
                .filter(|(k, _)| k == n)
                .map(|(_, v)| v.as_str())
                .collect()
        })
        .collect();
    let rows = columns.iter().map(Vec::len).max().unwrap_or(0);
    for r in 0..rows {
        let cells: Vec<&str> = columns
            .iter()
            .map(|c| c.get(r).copied().unwrap_or("").trim())
            .collect();
        if cells.iter().all(|c| c.is_empty()) {
            continue;
        }
        for ((name, cell), number) in names.iter().zip(&cells).zip(numeric) {
            let value = if *number && !cell.is_empty() {
                tidy_number(cell)
            } else {
                (*cell).to_string()
            };
            out.push(((*name).to_string(), value));
        }
    }
    out
}

/// The words of a field in any form table.
pub fn spec(name: &str) -> Option<&'static Spec> {
    spec_in(&[], name)
}

/// One field as the form shows it.
pub struct Field {
    pub spec: &'static Spec,
    /// The parameter's name: the spec's, or under a prefix (`current.balance`).
    pub name: String,
    /// The value as typed (or the default on an empty form).
    pub value: String,
    /// What is wrong with it, in words.
    pub error: Option<String>,
}

impl Field {
    pub fn id(&self) -> String {
        format!("f-{}", self.slug())
    }

    /// The name as an id part (`current.balance` → `current-balance`).
    pub fn slug(&self) -> String {
        self.name.replace('.', "-")
    }

    /// The choices of a select, empty for a text input.
    pub fn choices(&self) -> Vec<(&'static str, &'static str)> {
        self.spec.form_choices()
    }

    pub fn is_choice(&self) -> bool {
        kind_of(self.spec) == Kind::Choice
    }

    pub fn selected(&self, value: &str) -> bool {
        self.value == value
    }

    /// The `inputmode` that brings up the right keyboard.
    pub fn inputmode(&self) -> &'static str {
        match kind_of(self.spec) {
            Kind::Number => "decimal",
            Kind::Whole => "numeric",
            _ => "text",
        }
    }

    /// The ids of the hint and error, for `aria-describedby`.
    pub fn described_by(&self) -> String {
        let mut ids = Vec::new();
        if self.error.is_some() {
            ids.push(format!("e-{}", self.slug()));
        }
        if !self.spec.hint.is_empty() {
            ids.push(format!("h-{}", self.slug()));
        }
        ids.join(" ")
    }
}

/// A group of fields under a legend.
pub struct Group {
    pub legend: &'static str,
    pub fields: Vec<Field>,
    /// Shown folded (in `<details>`) unless a field holds a value or an error.
    pub foldable: bool,
}

impl Group {
    pub fn open(&self) -> bool {
        !self.foldable
            || self
                .fields
                .iter()
                .any(|f| f.error.is_some() || !f.value.is_empty())
    }
}

/// Repeatable rows of ordinary fields inside a form (each row one item of a
/// list, each column a field repeated once a row). Without a script the form
/// shows a fixed number of rows; blank rows are ignored by the reader.
pub struct Rows {
    /// The fieldset's id (the error summary links to it).
    pub id: &'static str,
    pub legend: &'static str,
    /// (parameter name, column heading, `inputmode`).
    pub columns: Vec<(&'static str, &'static str, &'static str)>,
    /// The values typed, a row at a time.
    pub values: Vec<Vec<String>>,
    /// What is wrong with the rows, in words.
    pub errors: Vec<String>,
    /// The legend of the group the rows follow in the form (after the last
    /// group when no group has it).
    pub after: &'static str,
    pub hint: &'static str,
    /// The API's list parameter the rows become, when they become one ("" when
    /// each column is a parameter of its own).
    pub param: &'static str,
    /// Each row's item of that list, as the API's reader quotes it in a problem.
    pub items: Vec<String>,
}

impl Rows {
    /// A problem that quotes an item ("\"150@x\": …") told by its row instead.
    fn row_named(&self, text: &str) -> String {
        let quoted = text
            .strip_prefix('"')
            .and_then(|t| t.split_once("\": "))
            .and_then(|(item, rest)| {
                let row = self.items.iter().position(|i| i.starts_with(item))?;
                Some(format!("row {}: {rest}", row + 1))
            });
        quoted.unwrap_or_else(|| text.to_string())
    }

    /// The rows of `columns` from the query: as many as typed, then blank ones up to `shown`.
    pub fn from_query(
        legend: &'static str,
        hint: &'static str,
        columns: Vec<(&'static str, &'static str, &'static str)>,
        pairs: &[(String, String)],
        defaults: &[&[&str]],
        shown: usize,
    ) -> Self {
        let names: Vec<&str> = columns.iter().map(|(n, _, _)| *n).collect();
        let mut values: Vec<Vec<String>> = if pairs.is_empty() {
            defaults
                .iter()
                .map(|r| r.iter().map(|v| (*v).to_string()).collect())
                .collect()
        } else {
            typed_rows(&names, pairs)
                .into_iter()
                .map(|r| r.into_iter().map(str::to_string).collect())
                .collect()
        };
        while values.len() < shown {
            values.push(vec![String::new(); columns.len()]);
        }
        Self {
            id: "rows",
            legend,
            columns,
            values,
            errors: Vec::new(),
            hint,
            param: "",
            items: Vec::new(),
            after: "",
        }
    }
}

/// A part of a form, in the order shown: a group of fields or repeatable rows.
pub enum Block<'a> {
    Group(&'a Group),
    Rows(&'a Rows),
}

impl Form {
    /// The groups and the rows in the order shown: each set of rows after the
    /// group it names, the others at the end.
    pub fn blocks(&self) -> Vec<Block<'_>> {
        let mut out = Vec::new();
        for g in &self.groups {
            out.push(Block::Group(g));
            out.extend(
                self.rows
                    .iter()
                    .filter(|r| r.after == g.legend)
                    .map(Block::Rows),
            );
        }
        out.extend(
            self.rows
                .iter()
                .filter(|r| !self.groups.iter().any(|g| g.legend == r.after))
                .map(Block::Rows),
        );
        out
    }

    /// The terms a person entered, for the top of a printout: (label, value as
    /// typed, a choice in its words), then each row of the repeatable rows.
    pub fn entered(&self) -> Vec<(String, String)> {
        let mut out = Vec::new();
        for g in &self.groups {
            for f in &g.fields {
                if f.value.trim().is_empty() {
                    continue;
                }
                let value = f
                    .choices()
                    .into_iter()
                    .find(|(v, _)| f.selected(v))
                    .map_or_else(|| f.value.clone(), |(_, words)| words.to_string());
                // Amounts grouped by thousands and rates with their sign, as on paper.
                let value = match f.spec.kind {
                    FieldKind::Money if !f.value.contains(',') => {
                        super::view::group_thousands(&tidy_number(&value))
                    }
                    FieldKind::Percent if !value.contains('%') && !value.contains(',') => {
                        format!("{} %", value.trim())
                    }
                    _ => value,
                };
                out.push((f.spec.label.to_string(), value));
            }
        }
        for rows in &self.rows {
            for (i, row) in rows.values.iter().enumerate() {
                let cells: Vec<String> = rows
                    .columns
                    .iter()
                    .zip(row)
                    .filter(|(_, v)| !v.trim().is_empty())
                    .map(|((_, heading, _), v)| format!("{heading}: {v}"))
                    .collect();
                if !cells.is_empty() {
                    out.push((format!("{}, row {}", rows.legend, i + 1), cells.join("; ")));
                }
            }
        }
        out
    }
}

/// The rows typed in the fields `names`, read by position (the n-th value of
/// each field makes row n), values trimmed, wholly blank rows left out.
pub fn typed_rows<'a>(names: &[&str], pairs: &'a [(String, String)]) -> Vec<Vec<&'a str>> {
    let cols: Vec<Vec<&str>> = names
        .iter()
        .map(|n| {
            pairs
                .iter()
                .filter(|(k, _)| k == n)
                .map(|(_, v)| v.trim())
                .collect()
        })
        .collect();
    let count = cols.iter().map(Vec::len).max().unwrap_or(0);
    (0..count)
        .map(|r| {
            cols.iter()
                .map(|c| c.get(r).copied().unwrap_or(""))
                .collect()
        })
        .filter(|row: &Vec<&str>| row.iter().any(|v| !v.is_empty()))
        .collect()
}

/// A page's form: its groups, and the errors that belong to no field.
pub struct Form {
    pub action: &'static str,
    pub groups: Vec<Group>,
    /// Repeatable rows, after the groups.
    pub rows: Vec<Rows>,
    /// Problems not tied to a shown field (an unknown parameter, a malformed query).
    pub general_errors: Vec<String>,
    /// Every error, for the summary at the top of the form: (field id or "", words).
    pub summary: Vec<(String, String)>,
    /// The query held terms (the form is not the empty one with its defaults).
    pub typed: bool,
    /// The page's HTTP status: 200, or the problem's (400 for a query that cannot
    /// be read, 422 for fields that are invalid or terms with no solution).
    pub status: axum::http::StatusCode,
}

impl Form {
    /// Builds the form from the query: the values typed, the defaults on an empty
    /// query, and the problem's errors put next to their fields.
    pub fn new(
        action: &'static str,
        tables: &[&'static [Spec]],
        layout: &[(&'static str, bool, &[&'static str])],
        pairs: &[(String, String)],
        defaults: &[(&str, &str)],
        problem: Option<&ApiError>,
    ) -> Self {
        let empty = pairs.is_empty();
        let mut placed = vec![false; problem.map_or(0, |p| p.errors.len())];
        let mut groups = Vec::new();
        for (legend, foldable, names) in layout {
            let mut fields = Vec::new();
            for name in *names {
                // A name under a prefix ("current.balance") is a field of the
                // prefix's own table ("balance" of the current loan).
                let spec = if name.contains('.') {
                    param_spec(name)
                } else {
                    spec_in(tables, name)
                };
                let Some(spec) = spec else {
                    continue;
                };
                let value = if empty {
                    defaults
                        .iter()
                        .find(|(k, _)| k == name)
                        .map(|(_, v)| v.to_string())
                        .unwrap_or_default()
                } else {
                    pairs
                        .iter()
                        .filter(|(k, _)| k == name)
                        .map(|(_, v)| v.as_str())
                        .collect::<Vec<_>>()
                        .join(",")
                };
                let mut messages = Vec::new();
                if let Some(p) = problem {
                    for (i, e) in p.errors.iter().enumerate() {
                        if placed[i] {
                            continue;
                        }
                        if field_of(&e.pointer, pairs) == *name {
                            messages.push(in_words(spec, &e.message));
                            placed[i] = true;
                        }
                    }
                }
                fields.push(Field {
                    spec,
                    name: (*name).to_string(),
                    value,
                    error: (!messages.is_empty()).then(|| messages.join(" ")),
                });
            }
            groups.push(Group {
                legend,
                fields,
                foldable: *foldable,
            });
        }
        let mut general_errors = Vec::new();
        if let Some(p) = problem {
            for (i, e) in p.errors.iter().enumerate() {
                if placed[i] {
                    continue;
                }
                if e.code == crate::input::problem::FieldCode::Unknown {
                    general_errors.push(format!(
                        "The address holds a field this page does not know: \"{}\".",
                        e.pointer
                    ));
                } else if e.pointer.is_empty() {
                    general_errors.push(capitalized(&plain(&e.message)));
                } else {
                    general_errors.push(format!("{}: {}", e.pointer, plain(&e.message)));
                }
            }
            if p.errors.is_empty() {
                general_errors.push(capitalized(&plain(&p.detail)));
            }
        }
        let mut summary = Vec::new();
        for g in &groups {
            for f in &g.fields {
                if let Some(e) = &f.error {
                    summary.push((f.id(), e.clone()));
                }
            }
        }
        for e in &general_errors {
            summary.push((String::new(), e.clone()));
        }
        Form {
            action,
            groups,
            rows: Vec::new(),
            typed: !empty,
            general_errors,
            summary,
            status: problem.map_or(axum::http::StatusCode::OK, |p| p.kind.status()),
        }
    }
}

impl Form {
    /// The form with repeatable rows; errors on the rows' columns (or on the
    /// list they become) move from the general errors to the rows.
    #[must_use]
    pub fn with_rows(mut self, mut rows: Rows) -> Self {
        let mut names: Vec<&str> = rows.columns.iter().map(|(n, _, _)| *n).collect();
        if !rows.param.is_empty() {
            names.push(rows.param);
        }
        let mine = |e: &str| {
            names
                .iter()
                .any(|n| e.starts_with(&format!("{n}: ")) || e.starts_with(&format!("{n}/")))
        };
        let legend = rows.legend;
        self.general_errors.retain(|e| {
            if mine(e) {
                let text = e.split_once(": ").map_or(e.as_str(), |(_, m)| m);
                let words = if rows.param.is_empty() {
                    capitalized(text)
                } else {
                    format!("{legend}: {}", rows.row_named(text))
                };
                rows.errors.push(words);
            }
            !mine(e)
        });
        self.summary.retain(|(_, m)| !mine(m));
        if !rows.errors.is_empty() && self.status == axum::http::StatusCode::OK {
            self.status = axum::http::StatusCode::UNPROCESSABLE_ENTITY;
        }
        for e in &rows.errors {
            self.summary.push((rows.id.to_string(), e.clone()));
        }
        self.rows.push(rows);
        self
    }

    /// The form with each of `rows` (see [`Form::with_rows`]).
    #[must_use]
    pub fn with_all_rows(self, rows: Vec<Rows>) -> Self {
        rows.into_iter().fold(self, Self::with_rows)
    }
}

/// The form field an error's pointer names. A query pointer is the parameter's
/// name; an engine error on the number of payments belongs to the term in months
/// when that is what was typed.
fn field_of<'a>(pointer: &'a str, pairs: &[(String, String)]) -> &'a str {
    let name = pointer.trim_start_matches('/');
    let given = |n: &str| pairs.iter().any(|(k, v)| k == n && !v.is_empty());
    if name == "term_payments" && !given("term_payments") && given("term_months") {
        return "term_months";
    }
    if name == "term_periods" && !given("term_periods") && given("term_months") {
        return "term_months";
    }
    name
}

/// A message of the reader or the engine, in a loan officer's words: field
/// names become their labels, and a message about the field itself starts with
/// the field's label.
pub fn in_words(spec: &Spec, message: &str) -> String {
    let m = plain(message);
    let about_itself = ["is ", "must ", "has ", "may ", "cannot ", "falls "]
        .iter()
        .any(|p| m.starts_with(p));
    let sentence = if about_itself {
        format!("{} {m}", spec.label)
    } else {
        capitalized(&m)
    };
    let sentence = sentence.trim_end_matches('.');
    // An example of the field's own kind, unless the message gives one.
    let example = if !spec.placeholder.is_empty() {
        spec.placeholder
    } else {
        spec.example
    };
    let typed = matches!(kind_of(spec), Kind::Number | Kind::Whole | Kind::Date)
        || spec.name == "term_months";
    let has_example = ["for example", "such as", "e.g."]
        .iter()
        .any(|p| sentence.contains(p));
    if typed && !example.is_empty() && !has_example {
        format!("{sentence} (for example {example}).")
    } else {
        format!("{sentence}.")
    }
}

/// The engine's notes for a page: the caution (the first note) left out, as the
/// page shows it on its own, field names told by their labels, and amounts
/// grouped for reading.
pub fn page_notes(notes: &[String]) -> Vec<String> {
    notes
        .iter()
        .skip(1)
        .map(|n| super::view::grouped_in_text(&plain(n)))
        .collect()
}

/// Field names in a message replaced by their labels (longest names first, so
/// `term_payments` is not read as `payment`).
pub fn plain(message: &str) -> String {
    let mut specs: Vec<&Spec> = FORM_TABLES
        .iter()
        .flat_map(|t| t.iter())
        .filter(|s| !s.label.is_empty())
        .collect();
    specs.sort_by_key(|s| std::cmp::Reverse(s.name.len()));
    let mut out = message.to_string();
    for s in specs {
        if !s.name.contains('_') {
            continue; // single words read as themselves ("payment", "principal")
        }
        if out.contains(s.name) {
            out = out.replace(s.name, &format!("“{}”", s.label.to_lowercase()));
        }
    }
    out
}

fn capitalized(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(first) => first.to_uppercase().collect::<String>() + c.as_str(),
        None => String::new(),
    }
}

/// True for "250,000", "$1,250.50" or "6,000%": digits grouped by thousands.
fn grouped_by_thousands(v: &str) -> bool {
    let t = v
        .trim()
        .trim_start_matches(['$', '€', '£'])
        .trim_end_matches('%')
        .trim();
    let int = t.split_once('.').map_or(t, |(i, f)| {
        if f.bytes().all(|b| b.is_ascii_digit()) {
            i
        } else {
            ""
        }
    });
    let mut groups = int.split(',');
    let Some(first) = groups.next() else {
        return false;
    };
    let rest: Vec<&str> = groups.collect();
    !rest.is_empty()
        && (1..=3).contains(&first.len())
        && first.bytes().all(|b| b.is_ascii_digit())
        && rest
            .iter()
            .all(|g| g.len() == 3 && g.bytes().all(|b| b.is_ascii_digit()))
}

pub(super) fn tidy_number(v: &str) -> String {
    match crate::input::fields::parse_decimal(v, true) {
        Ok(d) => d.to_string(),
        Err(_) => v.trim().to_string(),
    }
}

/// A list of `name:amount` written as a person types it: "origination:2,500,
/// points:$1,250.50" as "origination:2500,points:1250.50". A piece of exactly three
/// digits (no name) after an amount is that amount's next group of thousands.
pub(super) fn tidy_named_amounts(v: &str) -> String {
    let mut pieces: Vec<String> = Vec::new();
    for piece in v.split(',') {
        let t = piece.trim();
        let digits = t.split_once('.').map_or(t, |(i, _)| i);
        let continues = piece.len() == t.len()
            && digits.len() == 3
            && digits.bytes().all(|b| b.is_ascii_digit())
            && pieces
                .last()
                .is_some_and(|p| p.contains(':') && p.ends_with(|c: char| c.is_ascii_digit()));
        match pieces.last_mut() {
            Some(last) if continues => last.push_str(t),
            _ => pieces.push(t.to_string()),
        }
    }
    pieces
        .iter()
        .map(|p| match p.split_once(':') {
            Some((name, amount)) => format!("{}:{}", name.trim(), tidy_number(amount)),
            None => p.clone(),
        })
        .collect::<Vec<_>>()
        .join(",")
}

/// The query as the API reads it: empty fields dropped, and numbers typed the
/// way a person types them ("250,000", "6.5%") written plainly. With `lists`,
/// a number field may hold several values separated by commas (the compare
/// page's one listed field); digits grouped by thousands still read as one number.
pub fn normalize(pairs: &[(String, String)], lists: bool) -> Vec<(String, String)> {
    pairs
        .iter()
        .filter(|(_, v)| !v.trim().is_empty())
        .map(|(k, v)| {
            let kind = param_spec(k).map(kind_of);
            let money_or_rate = kind == Some(Kind::Number);
            let number = money_or_rate || kind == Some(Kind::Whole) || k == "term_months";
            let value = if k == "prepaid_finance_charges" {
                tidy_named_amounts(v)
            } else if !number {
                v.trim().to_string()
            } else if !lists || money_or_rate && grouped_by_thousands(v) {
                tidy_number(v)
            } else {
                v.split(',').map(tidy_number).collect::<Vec<_>>().join(",")
            };
            (k.clone(), value)
        })
        .collect()
}

/// The normalized query as a query string (for the JSON and CSV links). Commas,
/// colons and at signs are left as they are (RFC 3986 allows them in a query),
/// so `term_months=180,240,360` and `extra_payments=150@13-` stay readable.
pub fn query_string(pairs: &[(String, String)]) -> String {
    let mut q = form_urlencoded::Serializer::new(String::new());
    for (k, v) in pairs {
        q.append_pair(k, v);
    }
    q.finish()
        .replace("%2C", ",")
        .replace("%3A", ":")
        .replace("%40", "@")
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pairs(v: &[(&str, &str)]) -> Vec<(String, String)> {
        v.iter()
            .map(|(a, b)| (a.to_string(), b.to_string()))
            .collect()
    }

    #[test]
    fn typed_numbers_are_written_plainly() {
        let n = normalize(
            &pairs(&[
                ("principal", "250,000"),
                ("annual_rate_percent", "6.5%"),
                ("payment", ""),
                ("term_months", "360"),
            ]),
            false,
        );
        assert_eq!(
            n,
            pairs(&[
                ("principal", "250000"),
                ("annual_rate_percent", "6.5"),
                ("term_months", "360")
            ])
        );
        let n = normalize(
            &pairs(&[("principal", "250,000"), ("term_months", "180, 240,360")]),
            true,
        );
        assert_eq!(
            n,
            pairs(&[("principal", "250000"), ("term_months", "180,240,360")])
        );
        let n = normalize(&pairs(&[("annual_rate_percent", "6%, 6.5%")]), true);
        assert_eq!(n, pairs(&[("annual_rate_percent", "6,6.5")]));
        let n = normalize(
            &pairs(&[(
                "prepaid_finance_charges",
                "origination:2,500, points: $1,250.50,fee:300",
            )]),
            false,
        );
        assert_eq!(
            n,
            pairs(&[(
                "prepaid_finance_charges",
                "origination:2500,points:1250.50,fee:300"
            )])
        );
    }

    #[test]
    fn messages_name_fields_by_their_labels() {
        let s = spec("principal").unwrap();
        // With an example of the field's own kind (its placeholder).
        assert_eq!(
            in_words(s, "is required"),
            "Loan amount is required (for example 250,000)."
        );
        // A message that gives its own example gets no second one; a choice none.
        assert_eq!(
            in_words(
                spec("annual_rate_percent").unwrap(),
                "must be a number, e.g. 6.5"
            ),
            "Interest rate (% a year) must be a number, e.g. 6.5."
        );
        assert_eq!(
            in_words(spec("payment_frequency").unwrap(), "is not a frequency"),
            "Payments made is not a frequency."
        );
        let m = in_words(
            spec("term_months").unwrap(),
            "give one of term_months, term_payments or payment (the other is solved)",
        );
        assert!(m.starts_with("Give one of “term in months”, “number of payments”"));
    }
}
