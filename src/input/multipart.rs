//! The parts of a `multipart/form-data` body (RFC 7578): what a page's form
//! sends when it carries a file and JavaScript does not run. Only what the
//! forms here send is read: each part's name from its `Content-Disposition`,
//! and its bytes.

use axum::body::Bytes;

use super::problem::{ApiError, FieldError, ProblemKind};

/// One part of a form: its field name and its bytes' place in the body.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Part {
    pub name: String,
    pub start: usize,
    pub end: usize,
}

/// The boundary of a `multipart/form-data` content type, if it is one.
pub fn boundary(content_type: &str) -> Option<String> {
    let mut pieces = content_type.split(';');
    let essence = pieces.next()?.trim();
    if !essence.eq_ignore_ascii_case("multipart/form-data") {
        return None;
    }
    pieces.find_map(|p| {
        let (k, v) = p.split_once('=')?;
        (k.trim().eq_ignore_ascii_case("boundary"))
            .then(|| v.trim().trim_matches('"').to_string())
            .filter(|b| !b.is_empty() && b.len() <= 70)
    })
}

fn find(haystack: &[u8], needle: &[u8], from: usize) -> Option<usize> {
    if needle.is_empty() || from > haystack.len() {
        return None;
    }
    haystack[from..]
        .windows(needle.len())
        .position(|w| w == needle)
        .map(|p| p + from)
}

/// The parts of `body`, delimited by `boundary`.
///
/// # Errors
/// A message for a person when the body is not a well-formed form.
pub fn parts(body: &[u8], boundary: &str) -> Result<Vec<Part>, String> {
    let bad = || "the form's body is not well-formed multipart/form-data".to_string();
    let delimiter = format!("--{boundary}");
    let mut at = find(body, delimiter.as_bytes(), 0).ok_or_else(bad)? + delimiter.len();
    let next = format!("\r\n--{boundary}");
    let mut out = Vec::new();
    loop {
        if body[at..].starts_with(b"--") {
            return Ok(out);
        }
        at = find(body, b"\r\n", at).ok_or_else(bad)? + 2;
        let head_end = find(body, b"\r\n\r\n", at).ok_or_else(bad)?;
        let head = String::from_utf8_lossy(&body[at..head_end]);
        let start = head_end + 4;
        let end = find(body, next.as_bytes(), start).ok_or_else(bad)?;
        let name = head
            .split("\r\n")
            .find(|l| {
                l.get(..20)
                    .is_some_and(|h| h.eq_ignore_ascii_case("content-disposition:"))
            })
            .and_then(|l| {
                l.split(';').find_map(|p| {
                    let (k, v) = p.split_once('=')?;
                    (k.trim() == "name").then(|| v.trim().trim_matches('"').to_string())
                })
            })
            .ok_or_else(bad)?;
        out.push(Part { name, start, end });
        at = end + next.len();
    }
}

/// The file a request carries: a `text/csv` body, or the `file` part (else the
/// `rows` part) of a page's form.
///
/// # Errors
/// 415 for another media type; 422 for a form without a file or rows.
pub fn file_of(content_type: &str, body: Bytes) -> Result<Bytes, ApiError> {
    let essence = content_type
        .split(';')
        .next()
        .unwrap_or("")
        .trim()
        .to_ascii_lowercase();
    if essence == "text/csv" {
        return Ok(body);
    }
    let Some(boundary) = boundary(content_type) else {
        return Err(ApiError::new(
            ProblemKind::UnsupportedMediaType,
            "send the file as text/csv (or as a form's multipart/form-data with a file part)",
        ));
    };
    let parts =
        parts(&body, &boundary).map_err(|m| ApiError::new(ProblemKind::MalformedQuery, m))?;
    let part = |name: &str| {
        parts.iter().find(|p| {
            p.name == name
                && body[p.start..p.end]
                    .iter()
                    .any(|b| !b.is_ascii_whitespace())
        })
    };
    match part("file").or_else(|| part("rows")) {
        Some(p) => Ok(body.slice(p.start..p.end)),
        None => Err(ApiError::fields(vec![FieldError::new(
            "file".into(),
            "choose a CSV file, or paste its rows".into(),
        )])),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The shape of RFC 7578 section 4's example (from memory): parts between
    /// `--boundary` lines, each with a Content-Disposition naming its field.
    #[test]
    fn a_forms_parts_are_found_by_name() {
        let ct = "multipart/form-data; boundary=\"----x1\"";
        let b = boundary(ct).unwrap();
        assert_eq!(b, "----x1");
        let body = b"------x1\r\nContent-Disposition: form-data; name=\"file\"; filename=\"p.csv\"\r\nContent-Type: text/csv\r\n\r\nid,principal\r\n1,2\r\n------x1\r\ncontent-disposition: form-data; name=\"rows\"\r\n\r\n\r\n------x1--\r\n";
        let p = parts(body, &b).unwrap();
        assert_eq!(p.len(), 2);
        assert_eq!(p[0].name, "file");
        assert_eq!(&body[p[0].start..p[0].end], b"id,principal\r\n1,2");
        assert_eq!(p[1].name, "rows");
        assert_eq!(p[1].start, p[1].end);
        assert!(parts(b"garbage", "x").is_err());
        assert!(boundary("text/csv").is_none());
    }
}
