//! A file of loan checks as CSV (RFC 4180): its header, its rows, and each row
//! read as the check operation's own fields.
//!
//! - UTF-8, with or without a byte-order mark; comma or semicolon separated (the
//!   header row decides: whichever of the two it holds more of outside quotes);
//!   lines end in CRLF or LF; a quoted cell may hold the separator, quotes
//!   (doubled) and line breaks.
//! - The header names the fields of [`CHECK`] (the same names as the query
//!   string of `GET /api/v1/loans/check`), an `id` column (required), and
//!   `prepaid_finance_charges.NAME` columns, each the amount of one prepaid
//!   finance charge named NAME. Unknown and repeated columns are refused up
//!   front, naming the known ones.
//! - An empty cell is a field not given. A row whose cells are all empty (a
//!   blank line, or a spreadsheet's `;;;;`) is no row.
//! - A cell is read as the query string's value of its field, exactly as the
//!   JSON API reads numbers, with one exception: in a quoted cell of a numeric
//!   column, thousands separators are read where they cannot mean anything else,
//!   by [`ungroup_quoted`].

use super::check::CHECK;
use super::fields::ungroup;
use super::problem::{ApiError, FieldError, ProblemKind};
use super::table::Kind;

/// The largest file, in bytes: 100,000 rows of about 300 bytes.
pub const MAX_FILE_BYTES: usize = 32 * 1024 * 1024;

/// The most rows one file may hold (the header aside).
pub const MAX_ROWS: usize = 100_000;

/// The column that names each row in the answer.
pub const ID: &str = "id";

/// The prefix of a column holding one prepaid finance charge, by name.
pub const CHARGE_PREFIX: &str = "prepaid_finance_charges.";

/// The longest header cell.
const MAX_COLUMN_NAME: usize = 120;

/// What a column holds.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Column {
    /// The row's id, echoed in its answer.
    Id,
    /// A field of the check, by its name in [`CHECK`]; `numeric` for the
    /// fields whose values are numbers.
    Field { name: &'static str, numeric: bool },
    /// One prepaid finance charge: the charge's name.
    Charge(String),
}

/// A file's header: its separator and its columns, in order.
#[derive(Debug, Clone)]
pub struct Header {
    pub separator: u8,
    pub columns: Vec<Column>,
}

/// One row's place in the file: its bytes and the line it starts on (the
/// header is line 1).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Span {
    pub start: usize,
    pub end: usize,
    pub line: usize,
}

/// A file read as far as its header, with every row's place.
#[derive(Debug, Clone)]
pub struct Sheet {
    pub header: Header,
    pub rows: Vec<Span>,
}

/// One cell: its text (quotes removed) and whether it was quoted.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Cell {
    pub text: String,
    pub quoted: bool,
}

/// One row read as the check's fields: the id, the query pairs of the check,
/// and the errors found before the check's own reader ran (each replaces the
/// reader's message for its field).
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct RowFields {
    pub id: String,
    pub pairs: Vec<(String, String)>,
    pub errors: Vec<FieldError>,
}

fn invalid(pointer: &str, message: String) -> ApiError {
    ApiError::fields(vec![FieldError::new(pointer.into(), message)])
}

/// The names a header may use, for the messages that list them.
pub fn known_columns() -> Vec<String> {
    let mut names = vec![ID.to_string()];
    names.extend(CHECK.fields().map(|f| f.name.to_string()));
    names.push(format!("{CHARGE_PREFIX}NAME"));
    names
}

/// Finds the records of `text`: calls `each(start, end, line)` for each (its
/// bytes without the line break, and the line it starts on) until `each`
/// returns false. A quote opens a quoted cell only at a cell's start, so a
/// stray quote inside a cell (`12" pipe`) cannot swallow the rows after it.
fn records(text: &[u8], separator: u8, mut each: impl FnMut(usize, usize, usize) -> bool) {
    #[derive(Clone, Copy, PartialEq)]
    enum At {
        CellStart,
        Unquoted,
        Quoted,
        QuoteInQuoted,
    }
    let mut at = At::CellStart;
    let (mut start, mut line, mut start_line) = (0usize, 1usize, 1usize);
    for (i, &b) in text.iter().enumerate() {
        if b == b'\n' {
            line += 1;
        }
        at = match (at, b) {
            (At::Quoted, b'"') => At::QuoteInQuoted,
            (At::Quoted, _) => At::Quoted,
            (At::QuoteInQuoted, b'"') => At::Quoted,
            (At::CellStart, b'"') => At::Quoted,
            (_, b'\n') => {
                let end = if i > start && text[i - 1] == b'\r' {
                    i - 1
                } else {
                    i
                };
                if !each(start, end, start_line) {
                    return;
                }
                start = i + 1;
                start_line = line;
                At::CellStart
            }
            (_, c) if c == separator => At::CellStart,
            _ => At::Unquoted,
        };
    }
    if start < text.len() {
        each(start, text.len(), start_line);
    }
}

/// Splits one record into its cells.
///
/// # Errors
/// A message for a person: a quote that is not closed, or text after a
/// closing quote.
pub fn cells(record: &str, separator: u8) -> Result<Vec<Cell>, String> {
    let b = record.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    loop {
        if b.get(i) == Some(&b'"') {
            let mut text = String::new();
            let mut from = i + 1;
            let mut j = from;
            loop {
                match b.get(j) {
                    None => {
                        return Err(format!(
                            "cell {} opens a quote that is never closed",
                            out.len() + 1
                        ))
                    }
                    Some(b'"') if b.get(j + 1) == Some(&b'"') => {
                        text.push_str(&record[from..=j]);
                        j += 2;
                        from = j;
                    }
                    Some(b'"') => {
                        text.push_str(&record[from..j]);
                        break;
                    }
                    Some(_) => j += 1,
                }
            }
            out.push(Cell { text, quoted: true });
            i = j + 1;
            match b.get(i) {
                None => return Ok(out),
                Some(&c) if c == separator => i += 1,
                Some(_) => {
                    return Err(format!(
                        "cell {} has text after its closing quote (a quote inside a cell is written twice: \"\")",
                        out.len()
                    ))
                }
            }
        } else {
            let end = b[i..]
                .iter()
                .position(|&c| c == separator)
                .map_or(b.len(), |p| i + p);
            // RFC 4180: spaces are part of a field. An id keeps them; the
            // check's fields are trimmed by `row_fields`.
            let text = &record[i..end];
            if text.contains('"') {
                return Err(format!(
                    "cell {} holds a quote but is not quoted (quote the whole cell, and write a quote inside it twice)",
                    out.len() + 1
                ));
            }
            out.push(Cell {
                text: text.to_string(),
                quoted: false,
            });
            if end == b.len() {
                return Ok(out);
            }
            i = end + 1;
        }
    }
}

/// The separator of a header line: the one of comma and semicolon it holds
/// more of outside quotes (a comma on a tie).
fn separator_of(header: &[u8]) -> u8 {
    let (mut quoted, mut commas, mut semicolons) = (false, 0usize, 0usize);
    for &b in header {
        match b {
            b'"' => quoted = !quoted,
            b',' if !quoted => commas += 1,
            b';' if !quoted => semicolons += 1,
            _ => {}
        }
    }
    if semicolons > commas {
        b';'
    } else {
        b','
    }
}

fn column(name: &str) -> Result<Column, String> {
    if name == ID {
        return Ok(Column::Id);
    }
    if let Some(charge) = name.strip_prefix(CHARGE_PREFIX) {
        let charge = charge.trim();
        if charge.is_empty() || charge.contains([',', ':']) || charge.chars().any(char::is_control)
        {
            return Err(format!(
                "a charge's column is {CHARGE_PREFIX}NAME, with a name of its own and no comma or colon"
            ));
        }
        return Ok(Column::Charge(charge.to_string()));
    }
    match CHECK.field(name) {
        Some(f) => Ok(Column::Field {
            name: f.name,
            numeric: matches!(
                f.kind,
                Kind::Money | Kind::Percent | Kind::Decimal | Kind::Whole { .. }
            ),
        }),
        None => {
            Err("is not a column of a check (the problem's detail lists the known ones)".into())
        }
    }
}

/// Reads a file's header and finds its rows, without reading them.
///
/// # Errors
/// 422 when the file is empty, or its header names an unknown or repeated
/// column or no `id` (each column named); 413 past [`MAX_ROWS`]; 400 for text
/// that is not UTF-8.
pub fn read_sheet(bytes: &[u8]) -> Result<(Sheet, usize), ApiError> {
    let offset = if bytes.starts_with("\u{feff}".as_bytes()) {
        3
    } else {
        0
    };
    let body = &bytes[offset..];
    if let Err(e) = std::str::from_utf8(body) {
        let line = 1 + body[..e.valid_up_to()]
            .iter()
            .filter(|b| **b == b'\n')
            .count();
        return Err(ApiError::new(
            ProblemKind::MalformedQuery,
            format!("the file is not UTF-8 text: line {line} holds bytes that are not; save it as CSV UTF-8"),
        ));
    }
    let first_line = body.split(|b| *b == b'\n').next().unwrap_or(&[]);
    let separator = separator_of(first_line);
    let mut header_span = None;
    records(body, separator, |s, e, line| {
        if body[s..e].iter().all(u8::is_ascii_whitespace) {
            return true;
        }
        header_span = Some((s, e, line));
        false
    });
    let Some((hs, he, header_line)) = header_span else {
        return Err(invalid(
            "",
            "the file is empty: it needs a header row naming its columns (id and the check's fields)"
                .into(),
        ));
    };
    let header_text = std::str::from_utf8(&body[hs..he]).unwrap_or("");
    let names =
        cells(header_text, separator).map_err(|m| invalid("", format!("the header row: {m}")))?;
    let mut errors = Vec::new();
    let mut columns = Vec::new();
    let mut seen = std::collections::BTreeSet::new();
    for cell in &names {
        let name = cell.text.trim();
        let pointer: String = name.chars().take(MAX_COLUMN_NAME).collect();
        if !seen.insert(name.to_string()) {
            errors.push(FieldError::new(
                pointer,
                "is a column the header names twice".into(),
            ));
            continue;
        }
        match column(name) {
            Ok(c) => columns.push(c),
            Err(m) => {
                let mut e = FieldError::unknown(pointer);
                e.message = m;
                errors.push(e);
            }
        }
    }
    if !columns.contains(&Column::Id) && errors.is_empty() {
        errors.push(FieldError::new(
            ID.into(),
            "is a required column: each row's id, echoed in its answer".into(),
        ));
    }
    if !errors.is_empty() {
        let mut e = ApiError::fields(errors);
        e.detail = format!(
            "the header row names columns a check does not take; the known columns are {}",
            known_columns().join(", ")
        );
        return Err(e);
    }
    let mut rows = Vec::new();
    let mut over = false;
    records(&body[he..], separator, |s, e, line| {
        let (s, e, line) = (s + he, e + he, line + header_line - 1);
        if s == he {
            return true; // the rest of the header's line
        }
        if body[s..e]
            .iter()
            .all(|b| b.is_ascii_whitespace() || *b == separator)
        {
            return true;
        }
        if rows.len() == MAX_ROWS {
            over = true;
            return false;
        }
        rows.push(Span {
            start: s + offset,
            end: e + offset,
            line,
        });
        true
    });
    if over {
        return Err(ApiError::new(
            ProblemKind::TooLarge,
            format!("a file may hold at most {MAX_ROWS} rows: send the rest as another file"),
        ));
    }
    Ok((
        Sheet {
            header: Header { separator, columns },
            rows,
        },
        offset,
    ))
}

/// A quoted numeric cell without its thousands separators, where they can mean
/// nothing else: they group the integer digits by three (the first group one to
/// three digits, not starting with 0: "250,000.00", "1,684.30"), and a comma is
/// one only in a comma-separated file or before a decimal point. In a
/// semicolon-separated file, "1,684" could be a decimal comma; it is refused.
///
/// # Errors
/// A message for a person.
pub fn ungroup_quoted(text: &str, separator: u8) -> Result<String, String> {
    let ambiguous = || {
        format!(
            "\"{text}\": a comma in a number is read only between groups of three digits, and in a semicolon-separated file only before a decimal point (1,684.30); write the decimal with a point, e.g. 1684.30"
        )
    };
    if separator == b';' && text.contains(',') && !text.contains('.') {
        return Err(ambiguous());
    }
    ungroup(text.trim()).map_err(|_| ambiguous())
}

/// A row's id cell, when its cells can be split (a row with too many cells
/// still names itself); empty otherwise.
pub fn row_id(header: &Header, record: &str) -> String {
    let at = header.columns.iter().position(|c| *c == Column::Id);
    match (cells(record, header.separator), at) {
        (Ok(cells), Some(at)) => cells
            .into_iter()
            .nth(at)
            .map(|c| c.text)
            .unwrap_or_default(),
        _ => String::new(),
    }
}

/// Reads one row's cells as the check's fields.
///
/// # Errors
/// A message for a person when the row cannot be split into cells, or holds
/// more cells than the header has columns.
pub fn row_fields(header: &Header, record: &str) -> Result<RowFields, String> {
    let cells = cells(record, header.separator)?;
    if cells.len() != header.columns.len() {
        return Err(format!(
            "the row has {} cells, the header {} columns (an empty cell is written as nothing between two separators)",
            cells.len(),
            header.columns.len()
        ));
    }
    let mut out = RowFields::default();
    let mut charges: Vec<String> = Vec::new();
    let mut compact: Option<String> = None;
    for (cell, column) in cells.into_iter().zip(&header.columns) {
        if cell.text.trim().is_empty() {
            continue;
        }
        let text = if cell.quoted || *column == Column::Id {
            cell.text
        } else {
            cell.text.trim().to_string()
        };
        let numeric_text = |name: &str, out: &mut RowFields| -> String {
            if cell.quoted && text.contains([',', ' ', '\u{a0}', '_']) {
                match ungroup_quoted(&text, header.separator) {
                    Ok(t) => return t,
                    Err(m) => out.errors.push(FieldError::new(name.into(), m)),
                }
            }
            text.trim().to_string()
        };
        match column {
            Column::Id => out.id = text,
            Column::Field { name, numeric } => {
                let value = if *numeric {
                    numeric_text(name, &mut out)
                } else {
                    text.clone()
                };
                if *name == "prepaid_finance_charges" {
                    compact = Some(value);
                } else {
                    out.pairs.push(((*name).to_string(), value));
                }
            }
            Column::Charge(charge) => {
                let pointer = format!("{CHARGE_PREFIX}{charge}");
                let amount = numeric_text(&pointer, &mut out);
                charges.push(format!("{charge}:{amount}"));
            }
        }
    }
    if compact.is_some() || !charges.is_empty() {
        let mut all: Vec<String> = compact.into_iter().collect();
        all.extend(charges);
        out.pairs
            .push(("prepaid_finance_charges".into(), all.join(",")));
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sheet(text: &str) -> Result<Sheet, ApiError> {
        read_sheet(text.as_bytes()).map(|(s, _)| s)
    }

    /// RFC 4180 section 2 (from memory): fields may be quoted; a quote inside a
    /// quoted field is doubled; a quoted field may hold commas and line breaks.
    #[test]
    fn cells_follow_rfc_4180() {
        let c = cells(r#"a,"b,c","say ""hi""",,  d  "#, b',').unwrap();
        let texts: Vec<&str> = c.iter().map(|c| c.text.as_str()).collect();
        assert_eq!(texts, ["a", "b,c", "say \"hi\"", "", "  d  "]);
        assert_eq!(
            c.iter().map(|c| c.quoted).collect::<Vec<_>>(),
            [false, true, true, false, false]
        );
        assert_eq!(cells("\"x\ny\";2", b';').unwrap()[0].text, "x\ny");
        assert!(cells("\"open,1", b',')
            .unwrap_err()
            .contains("never closed"));
        assert!(cells("\"a\"b,1", b',')
            .unwrap_err()
            .contains("after its closing quote"));
        assert!(cells("a\"b,1", b',').unwrap_err().contains("not quoted"));
        assert_eq!(cells("", b',').unwrap().len(), 1);
        assert_eq!(cells("a,", b',').unwrap().len(), 2);
    }

    #[test]
    fn the_header_decides_the_separator_and_rows_keep_their_lines() {
        let s = sheet("\u{feff}id;principal;annual_rate_percent;term_months\r\n1;1000;6;12\r\n\r\n;;;\r\n\"two\nlines\";2000;6;12\r\n3;3000;6;12").unwrap();
        assert_eq!(s.header.separator, b';');
        assert_eq!(s.rows.iter().map(|r| r.line).collect::<Vec<_>>(), [2, 5, 7]);
        let text = "\u{feff}id;principal;annual_rate_percent;term_months\r\n1;1000;6;12\r\n\r\n;;;\r\n\"two\nlines\";2000;6;12\r\n3;3000;6;12";
        let second = s.rows[1];
        assert_eq!(
            &text.as_bytes()[second.start..second.end],
            "\"two\nlines\";2000;6;12".as_bytes()
        );
        let c = sheet("id,principal\n").unwrap();
        assert_eq!(c.header.separator, b',');
        assert!(c.rows.is_empty(), "a header-only file has no rows");
    }

    #[test]
    fn unknown_repeated_or_missing_columns_are_refused_up_front() {
        let e = sheet("id,principal,colour,principal\n1,2,3,4").unwrap_err();
        let named: Vec<&str> = e.errors.iter().map(|f| f.pointer.as_str()).collect();
        assert_eq!(named, ["colour", "principal"]);
        assert!(e.detail.contains("quoted_apr_percent"), "{}", e.detail);
        let e = sheet("principal,term_months\n1,2").unwrap_err();
        assert_eq!(e.errors[0].pointer, "id");
        let e = sheet("").unwrap_err();
        assert!(e.detail.contains("empty"), "{}", e.detail);
        let e = sheet("id,extra_payments\n").unwrap_err();
        assert_eq!(
            e.errors[0].pointer, "extra_payments",
            "a check takes no extra payments"
        );
        let e = sheet("id,prepaid_finance_charges.a:b\n").unwrap_err();
        assert!(e.errors[0].message.contains("no comma or colon"));
        assert!(read_sheet(b"id\n\xff\n").is_err());
    }

    #[test]
    fn rows_past_the_limit_are_refused_whole() {
        let mut text = String::from("id\n");
        for i in 0..=MAX_ROWS {
            text.push_str(&format!("{i}\n"));
        }
        let e = sheet(&text).unwrap_err();
        assert_eq!(e.kind, ProblemKind::TooLarge);
        assert!(e.detail.contains("100000"), "{}", e.detail);
    }

    #[test]
    fn thousands_separators_are_read_only_where_unambiguous() {
        assert_eq!(ungroup_quoted("250,000.00", b',').unwrap(), "250000.00");
        assert_eq!(ungroup_quoted("250,000", b',').unwrap(), "250000");
        assert_eq!(ungroup_quoted("1,684.30", b';').unwrap(), "1684.30");
        assert!(
            ungroup_quoted("1,684", b';').is_err(),
            "a decimal comma in a semicolon file"
        );
        assert!(ungroup_quoted("1,5", b';').is_err());
        assert!(ungroup_quoted("6,5", b',').is_err());
        assert!(ungroup_quoted("25,0000", b',').is_err());
    }

    #[test]
    fn a_row_becomes_the_checks_query_pairs() {
        let s = sheet("id,principal,annual_rate_percent,prepaid_finance_charges,prepaid_finance_charges.points,mortgage\n").unwrap();
        let r = row_fields(
            &s.header,
            "\"Larkspur, 4\",\"250,000\",6.5,fee:100,\"1,000.00\",false",
        )
        .unwrap();
        assert_eq!(r.id, "Larkspur, 4");
        assert_eq!(
            r.pairs,
            [
                ("principal".to_string(), "250000".to_string()),
                ("annual_rate_percent".into(), "6.5".into()),
                ("mortgage".into(), "false".into()),
                (
                    "prepaid_finance_charges".into(),
                    "fee:100,points:1000.00".into()
                ),
            ]
        );
        assert!(r.errors.is_empty());
        let r = row_fields(&s.header, "7,,,,,").unwrap();
        assert_eq!(r.pairs, [], "empty cells are fields not given");
        assert!(row_fields(&s.header, "1,2,3,4,5,6,7")
            .unwrap_err()
            .contains("7 cells"));
        assert!(row_fields(&s.header, "1,2,3")
            .unwrap_err()
            .contains("3 cells"));
        let r = row_fields(&s.header, "\t x ,250000, 6.5 ,,,").unwrap();
        assert_eq!(r.id, "\t x ", "an id keeps its spaces (RFC 4180)");
        assert_eq!(
            r.pairs[1],
            ("annual_rate_percent".to_string(), "6.5".to_string())
        );
        let semi = sheet("id;principal\n").unwrap();
        let r = row_fields(&semi.header, "1;\"1,5\"").unwrap();
        assert_eq!(r.errors[0].pointer, "principal");
    }
}
