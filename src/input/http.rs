//! What a request says beyond its fields: the query string's pairs and the
//! weights the Accept header gives each media type (RFC 9110 §12.5.1).

use axum::http::{header, HeaderMap};

use super::problem::{ApiError, ProblemKind};

/// Query parameters in order.
///
/// # Errors
/// A query string that is not valid percent-encoded UTF-8.
pub fn query_pairs(q: Option<&str>) -> Result<Vec<(String, String)>, ApiError> {
    let q = q.unwrap_or("");
    if q.len() > 16 * 1024 {
        return Err(ApiError::new(
            ProblemKind::MalformedQuery,
            "the query string is longer than 16 KiB",
        ));
    }
    let pairs: Vec<(String, String)> = form_urlencoded::parse(q.as_bytes()).into_owned().collect();
    if let Some((k, _)) = pairs
        .iter()
        .find(|(k, v)| k.contains('\u{fffd}') || v.contains('\u{fffd}'))
    {
        return Err(ApiError::new(
            ProblemKind::MalformedQuery,
            format!(
                "the parameter \"{}\" is not valid UTF-8 once percent-decoded",
                k.chars().take(40).collect::<String>()
            ),
        ));
    }
    Ok(pairs)
}

/// The media ranges of an Accept header with their weights (q; 1 when absent,
/// 0 when unreadable).
fn accept_ranges(accept: &str) -> impl Iterator<Item = (&str, f32)> {
    accept.split(',').filter_map(|item| {
        let mut parts = item.split(';');
        let range = parts.next()?.trim();
        if range.is_empty() {
            return None;
        }
        let q = parts
            .find_map(|p| p.trim().strip_prefix("q="))
            .map_or(1.0, |v| v.trim().parse::<f32>().unwrap_or(0.0));
        Some((range, q))
    })
}

/// The weight the Accept header gives `media`: the q of the most specific range
/// that takes it (`text/csv` over `text/*` over `*/*`, RFC 9110 §12.5.1), with
/// that range's position; `None` when no range takes it.
fn weight(accept: &str, media: &str) -> Option<(f32, usize)> {
    let mut best: Option<(u8, f32, usize)> = None;
    for (i, (range, q)) in accept_ranges(accept).enumerate() {
        let specificity = if range.eq_ignore_ascii_case(media) {
            3
        } else if range == "*/*" {
            1
        } else if range.strip_suffix("/*").is_some_and(|kind| {
            media
                .split('/')
                .next()
                .is_some_and(|m| m.eq_ignore_ascii_case(kind))
        }) {
            2
        } else {
            continue;
        };
        if best.is_none_or(|(s, _, _)| specificity > s) {
            best = Some((specificity, q, i));
        }
    }
    best.map(|(_, q, i)| (q, i))
}

/// The weight (q) the Accept header `accept` gives `media`: 0 when no range takes it.
pub fn weight_of(accept: &str, media: &str) -> f32 {
    weight(accept, media).map_or(0.0, |(q, _)| q)
}

/// True when the client asks for CSV over JSON: CSV weighs more, or as much
/// and is named first (`*/*` alone, or no Accept, is JSON).
pub fn wants_csv(headers: &HeaderMap) -> bool {
    let Some(accept) = headers.get(header::ACCEPT).and_then(|v| v.to_str().ok()) else {
        return false;
    };
    match (
        weight(accept, "text/csv"),
        weight(accept, "application/json"),
    ) {
        (Some((qc, ic)), Some((qj, ij))) => qc > 0.0 && (qc > qj || (qc == qj && ic < ij)),
        (Some((qc, _)), None) => qc > 0.0,
        _ => false,
    }
}

/// True when the Accept header (absent or empty: anything) gives one of
/// `offered` a weight above 0.
pub fn acceptable(headers: &HeaderMap, offered: &[&str]) -> bool {
    let Some(accept) = headers.get(header::ACCEPT) else {
        return true;
    };
    let accept = String::from_utf8_lossy(accept.as_bytes());
    accept.trim().is_empty()
        || offered
            .iter()
            .any(|m| weight(&accept, m).is_some_and(|(q, _)| q > 0.0))
}
