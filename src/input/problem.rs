//! Problem details (RFC 9457): the one error type of the interface.
//!
//! Every failure of a request becomes an [`ApiError`]; its single
//! `IntoResponse` decides the status, the stable `type` URI and the public
//! message. Internal errors answer with a generic message only.

use axum::http::{header, HeaderValue, StatusCode};
use axum::response::{IntoResponse, Response};
use serde::Serialize;

use crate::engine::{EngineError, ErrorKind};

/// One bad field: a JSON Pointer into the body (or the query parameter's name) and why.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, utoipa::ToSchema)]
pub struct FieldError {
    pub pointer: String,
    pub message: String,
    /// What kind of error it is, for the pages (not part of the JSON answer).
    #[serde(skip)]
    #[schema(ignore)]
    pub code: FieldCode,
}

/// The kind of a field error, which the pages act on without reading its words.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum FieldCode {
    /// The value is missing, malformed or out of range.
    #[default]
    Invalid,
    /// The request holds a field its operation does not take.
    Unknown,
}

impl FieldError {
    /// An error on the field at `pointer`.
    pub fn new(pointer: String, message: String) -> Self {
        Self {
            pointer,
            message,
            code: FieldCode::Invalid,
        }
    }

    /// A field the operation does not take.
    pub fn unknown(pointer: impl Into<String>) -> Self {
        Self {
            pointer: pointer.into(),
            message: "is not a known field".into(),
            code: FieldCode::Unknown,
        }
    }
}

/// The kinds of problem, each with a stable type URI documented in the API guide.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ProblemKind {
    MalformedJson,
    MalformedQuery,
    InvalidFields,
    NoSolution,
    Overflow,
    UnsupportedMediaType,
    TooLarge,
    NotFound,
    MethodNotAllowed,
    NotAcceptable,
    Overloaded,
    Timeout,
    BodyTimeout,
    Internal,
}

impl ProblemKind {
    pub const ALL: [ProblemKind; 14] = [
        ProblemKind::MalformedJson,
        ProblemKind::MalformedQuery,
        ProblemKind::InvalidFields,
        ProblemKind::NoSolution,
        ProblemKind::Overflow,
        ProblemKind::UnsupportedMediaType,
        ProblemKind::TooLarge,
        ProblemKind::NotFound,
        ProblemKind::MethodNotAllowed,
        ProblemKind::NotAcceptable,
        ProblemKind::Overloaded,
        ProblemKind::Timeout,
        ProblemKind::BodyTimeout,
        ProblemKind::Internal,
    ];

    /// The short name that ends the type URI.
    pub fn slug(self) -> &'static str {
        match self {
            ProblemKind::MalformedJson => "malformed-json",
            ProblemKind::MalformedQuery => "malformed-query",
            ProblemKind::InvalidFields => "invalid-fields",
            ProblemKind::NoSolution => "no-solution",
            ProblemKind::Overflow => "overflow",
            ProblemKind::UnsupportedMediaType => "unsupported-media-type",
            ProblemKind::TooLarge => "too-large",
            ProblemKind::NotFound => "not-found",
            ProblemKind::MethodNotAllowed => "method-not-allowed",
            ProblemKind::NotAcceptable => "not-acceptable",
            ProblemKind::Overloaded => "overloaded",
            ProblemKind::Timeout => "timeout",
            ProblemKind::BodyTimeout => "body-timeout",
            ProblemKind::Internal => "internal",
        }
    }

    /// The type URI: a reference to the guide's section on this problem.
    pub fn type_uri(self) -> String {
        format!("/api#problem-{}", self.slug())
    }

    pub fn status(self) -> StatusCode {
        match self {
            ProblemKind::MalformedJson | ProblemKind::MalformedQuery => StatusCode::BAD_REQUEST,
            ProblemKind::InvalidFields | ProblemKind::NoSolution | ProblemKind::Overflow => {
                StatusCode::UNPROCESSABLE_ENTITY
            }
            ProblemKind::UnsupportedMediaType => StatusCode::UNSUPPORTED_MEDIA_TYPE,
            ProblemKind::TooLarge => StatusCode::PAYLOAD_TOO_LARGE,
            ProblemKind::NotFound => StatusCode::NOT_FOUND,
            ProblemKind::MethodNotAllowed => StatusCode::METHOD_NOT_ALLOWED,
            ProblemKind::NotAcceptable => StatusCode::NOT_ACCEPTABLE,
            ProblemKind::Overloaded | ProblemKind::Timeout => StatusCode::SERVICE_UNAVAILABLE,
            ProblemKind::BodyTimeout => StatusCode::REQUEST_TIMEOUT,
            ProblemKind::Internal => StatusCode::INTERNAL_SERVER_ERROR,
        }
    }

    pub fn title(self) -> &'static str {
        match self {
            ProblemKind::MalformedJson => "The body is not valid JSON",
            ProblemKind::MalformedQuery => "The query string cannot be read",
            ProblemKind::InvalidFields => "Some fields are missing or invalid",
            ProblemKind::NoSolution => "These terms have no solution",
            ProblemKind::Overflow => "A figure leaves the range of exact decimal arithmetic",
            ProblemKind::UnsupportedMediaType => "The body must be JSON",
            ProblemKind::TooLarge => "The body is too large",
            ProblemKind::NotFound => "Nothing is here",
            ProblemKind::MethodNotAllowed => "This method is not allowed here",
            ProblemKind::NotAcceptable => "No representation matches the Accept header",
            ProblemKind::Overloaded => "The service is busy",
            ProblemKind::Timeout => "The request took too long",
            ProblemKind::BodyTimeout => "The request's body did not arrive in time",
            ProblemKind::Internal => "Something went wrong inside the service",
        }
    }
}

/// A request's failure, ready to be answered as problem details.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ApiError {
    pub kind: ProblemKind,
    pub detail: String,
    pub errors: Vec<FieldError>,
}

/// The problem-details document.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct Problem {
    #[serde(rename = "type")]
    pub type_uri: String,
    pub title: &'static str,
    pub status: u16,
    pub detail: String,
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub errors: Vec<FieldError>,
}

impl ApiError {
    pub fn new(kind: ProblemKind, detail: impl Into<String>) -> Self {
        Self {
            kind,
            detail: detail.into(),
            errors: vec![],
        }
    }

    /// Field errors found while reading a request.
    pub fn fields(errors: Vec<FieldError>) -> Self {
        let detail = match errors.as_slice() {
            [one] => format!("{}: {}", one.pointer, one.message),
            many => format!("{} fields need attention", many.len()),
        };
        Self {
            kind: ProblemKind::InvalidFields,
            detail,
            errors,
        }
    }

    /// An engine error, pointed at its field. `prefix` is the JSON Pointer of the
    /// object the field belongs to ("" at the top, or a query string's "").
    pub fn from_engine(e: EngineError, prefix: &str) -> Self {
        let kind = match e.kind {
            ErrorKind::OutOfRange => ProblemKind::InvalidFields,
            ErrorKind::NoSolution => ProblemKind::NoSolution,
            ErrorKind::Overflow => ProblemKind::Overflow,
        };
        let errors = e
            .field
            .map(|f| {
                // A nested field (`adjustable.margin_percent`) is a path in a
                // JSON Pointer, and keeps its dot in a query's names.
                let f = if prefix.ends_with('/') {
                    f.replace('.', "/")
                } else {
                    f.to_string()
                };
                vec![FieldError::new(format!("{prefix}{f}"), e.message.clone())]
            })
            .unwrap_or_default();
        Self {
            kind,
            detail: e.to_string(),
            errors,
        }
    }

    /// An overflow that names no field is put on `fields` (under `prefix`):
    /// the figures whose size took the arithmetic out of range, so the answer
    /// names what to change. Any other problem is returned as it is.
    #[must_use]
    pub fn naming(mut self, prefix: &str, fields: &[&str]) -> Self {
        if self.kind == ProblemKind::Overflow && self.errors.is_empty() {
            self.errors = fields
                .iter()
                .map(|f| {
                    FieldError::new(
                        format!("{prefix}{f}"),
                        format!(
                            "takes the computation, with the other figures, out of the range of exact decimal arithmetic ({}); a figure of another size has an answer",
                            self.detail
                        ),
                    )
                })
                .collect();
        }
        self
    }

    /// Malformed JSON (400) described by `detail`; a member given twice is
    /// named by its pointer too.
    pub fn malformed_json(e: &super::json::SyntaxError, detail: String) -> Self {
        Self {
            kind: ProblemKind::MalformedJson,
            errors: e
                .pointer
                .iter()
                .map(|p| {
                    FieldError::new(
                        p.clone(),
                        "appears twice in its object: give each member once".into(),
                    )
                })
                .collect(),
            detail,
        }
    }

    pub fn problem(&self) -> Problem {
        Problem {
            type_uri: self.kind.type_uri(),
            title: self.kind.title(),
            status: self.kind.status().as_u16(),
            detail: self.detail.clone(),
            errors: self.errors.clone(),
        }
    }
}

/// A problem's detail, kept beside its JSON for an HTML error page.
#[derive(Debug, Clone)]
pub struct ProblemDetail(pub String);

impl From<crate::weight::Busy> for ApiError {
    fn from(b: crate::weight::Busy) -> Self {
        ApiError::new(
            ProblemKind::Overloaded,
            format!(
                "this plan's size takes {} of the {} computations the server runs at once, and too many are running; try again in a moment",
                b.weight, b.total
            ),
        )
    }
}

impl IntoResponse for ApiError {
    fn into_response(self) -> Response {
        let status = self.kind.status();
        let body = serde_json::to_vec(&self.problem()).unwrap_or_default();
        let mut response = (status, body).into_response();
        let headers = response.headers_mut();
        headers.insert(
            header::CONTENT_TYPE,
            HeaderValue::from_static("application/problem+json"),
        );
        if matches!(self.kind, ProblemKind::Overloaded | ProblemKind::Timeout) {
            headers.insert(header::RETRY_AFTER, HeaderValue::from_static("1"));
        }
        if self.kind == ProblemKind::TooLarge {
            // The rest of an oversized body is not read: the connection cannot carry
            // another request.
            headers.insert(header::CONNECTION, HeaderValue::from_static("close"));
        }
        // For the metrics middleware: which problem this was; for a page route,
        // what to say on its error page.
        response.extensions_mut().insert(self.kind);
        response
            .extensions_mut()
            .insert(ProblemDetail(self.detail.clone()));
        response
    }
}
