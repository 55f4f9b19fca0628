//! A strict JSON reader (RFC 8259) for request bodies.
//!
//! Why not a general deserializer: money must arrive exactly, so numbers are
//! kept as their text; a duplicated key must be refused rather than silently
//! overwritten; nesting is bounded so a hostile body cannot exhaust the stack;
//! and every error says where it is (line and column).

use std::fmt;

/// The most levels of nesting a body may have.
pub const MAX_DEPTH: usize = 32;

/// A parsed JSON value; numbers keep their exact text.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Json {
    Null,
    Bool(bool),
    Number(String),
    String(String),
    Array(Vec<Json>),
    /// Keys in the order given; duplicates are refused while parsing.
    Object(Vec<(String, Json)>),
}

impl Json {
    /// A short name of the value's type, for error messages.
    pub fn kind(&self) -> &'static str {
        match self {
            Json::Null => "null",
            Json::Bool(_) => "a boolean",
            Json::Number(_) => "a number",
            Json::String(_) => "a string",
            Json::Array(_) => "an array",
            Json::Object(_) => "an object",
        }
    }

    /// The member `key` of an object.
    pub fn get(&self, key: &str) -> Option<&Json> {
        match self {
            Json::Object(members) => members.iter().find(|(k, _)| k == key).map(|(_, v)| v),
            _ => None,
        }
    }
}

/// Where and why a body is not JSON.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SyntaxError {
    pub line: usize,
    pub column: usize,
    pub message: String,
    /// The JSON Pointer of a member given twice (the document is otherwise
    /// well formed there); `None` for any other error.
    pub pointer: Option<String>,
}

impl fmt::Display for SyntaxError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{} at line {}, column {}",
            self.message, self.line, self.column
        )
    }
}

/// Parses a whole document.
///
/// # Errors
/// Anything that is not one valid JSON value (surrounded by white space only),
/// a duplicate key, invalid UTF-8, or nesting deeper than [`MAX_DEPTH`].
pub fn parse(bytes: &[u8]) -> Result<Json, SyntaxError> {
    let text = std::str::from_utf8(bytes).map_err(|e| {
        let (line, column) = position(&bytes[..e.valid_up_to()]);
        SyntaxError {
            line,
            column,
            message: "the body is not valid UTF-8".into(),
            pointer: None,
        }
    })?;
    let mut p = Parser {
        s: text.as_bytes(),
        i: 0,
    };
    p.ws();
    let v = p.value(0)?;
    p.ws();
    if p.i != p.s.len() {
        return Err(p.error("unexpected text after the JSON value"));
    }
    Ok(v)
}

fn position(consumed: &[u8]) -> (usize, usize) {
    let line = consumed.iter().filter(|&&b| b == b'\n').count() + 1;
    let column = consumed.iter().rev().take_while(|&&b| b != b'\n').count() + 1;
    (line, column)
}

struct Parser<'a> {
    s: &'a [u8],
    i: usize,
}

impl Parser<'_> {
    fn error(&self, message: &str) -> SyntaxError {
        let (line, column) = position(&self.s[..self.i.min(self.s.len())]);
        SyntaxError {
            line,
            column,
            message: message.into(),
            pointer: None,
        }
    }

    fn ws(&mut self) {
        while let Some(b' ' | b'\t' | b'\n' | b'\r') = self.s.get(self.i) {
            self.i += 1;
        }
    }

    fn literal(&mut self, word: &str, v: Json) -> Result<Json, SyntaxError> {
        if self.s[self.i..].starts_with(word.as_bytes()) {
            self.i += word.len();
            Ok(v)
        } else {
            Err(self.error("unexpected character"))
        }
    }

    fn value(&mut self, depth: usize) -> Result<Json, SyntaxError> {
        if depth > MAX_DEPTH {
            return Err(self.error("the JSON is nested too deeply"));
        }
        match self.s.get(self.i) {
            None => Err(self.error("unexpected end of the body")),
            Some(b'{') => self.object(depth),
            Some(b'[') => self.array(depth),
            Some(b'"') => Ok(Json::String(self.string()?)),
            Some(b't') => self.literal("true", Json::Bool(true)),
            Some(b'f') => self.literal("false", Json::Bool(false)),
            Some(b'n') => self.literal("null", Json::Null),
            Some(b'-' | b'0'..=b'9') => self.number(),
            Some(_) => Err(self.error("unexpected character")),
        }
    }

    fn object(&mut self, depth: usize) -> Result<Json, SyntaxError> {
        self.i += 1;
        let mut members: Vec<(String, Json)> = Vec::new();
        self.ws();
        if self.s.get(self.i) == Some(&b'}') {
            self.i += 1;
            return Ok(Json::Object(members));
        }
        loop {
            self.ws();
            if self.s.get(self.i) != Some(&b'"') {
                return Err(self.error("expected a quoted member name"));
            }
            let at = self.i;
            let key = self.string()?;
            if members.iter().any(|(k, _)| *k == key) {
                self.i = at;
                let mut e = self.error(&format!("the member \"{}\" appears twice", truncate(&key)));
                e.pointer = Some(format!("/{}", escape_pointer(&key)));
                return Err(e);
            }
            self.ws();
            if self.s.get(self.i) != Some(&b':') {
                return Err(self.error("expected ':' after a member name"));
            }
            self.i += 1;
            self.ws();
            // A duplicate deeper down: its pointer gains this member's name.
            let v = self.value(depth + 1).map_err(|mut e| {
                if let Some(p) = &mut e.pointer {
                    *p = format!("/{}{p}", escape_pointer(&key));
                }
                e
            })?;
            members.push((key, v));
            self.ws();
            match self.s.get(self.i) {
                Some(b',') => self.i += 1,
                Some(b'}') => {
                    self.i += 1;
                    return Ok(Json::Object(members));
                }
                _ => return Err(self.error("expected ',' or '}'")),
            }
        }
    }

    fn array(&mut self, depth: usize) -> Result<Json, SyntaxError> {
        self.i += 1;
        let mut items = Vec::new();
        self.ws();
        if self.s.get(self.i) == Some(&b']') {
            self.i += 1;
            return Ok(Json::Array(items));
        }
        loop {
            self.ws();
            let index = items.len();
            items.push(self.value(depth + 1).map_err(|mut e| {
                if let Some(p) = &mut e.pointer {
                    *p = format!("/{index}{p}");
                }
                e
            })?);
            self.ws();
            match self.s.get(self.i) {
                Some(b',') => self.i += 1,
                Some(b']') => {
                    self.i += 1;
                    return Ok(Json::Array(items));
                }
                _ => return Err(self.error("expected ',' or ']'")),
            }
        }
    }

    fn number(&mut self) -> Result<Json, SyntaxError> {
        let start = self.i;
        if self.s.get(self.i) == Some(&b'-') {
            self.i += 1;
        }
        match self.s.get(self.i) {
            Some(b'0') => self.i += 1,
            Some(b'1'..=b'9') => self.digits(),
            _ => return Err(self.error("a number needs digits")),
        }
        if self.s.get(self.i) == Some(&b'.') {
            self.i += 1;
            if !matches!(self.s.get(self.i), Some(b'0'..=b'9')) {
                return Err(self.error("a decimal point needs digits after it"));
            }
            self.digits();
        }
        if let Some(b'e' | b'E') = self.s.get(self.i) {
            self.i += 1;
            if let Some(b'+' | b'-') = self.s.get(self.i) {
                self.i += 1;
            }
            if !matches!(self.s.get(self.i), Some(b'0'..=b'9')) {
                return Err(self.error("an exponent needs digits"));
            }
            self.digits();
        }
        let text = std::str::from_utf8(&self.s[start..self.i]).expect("ASCII digits");
        Ok(Json::Number(text.to_string()))
    }

    fn digits(&mut self) {
        while let Some(b'0'..=b'9') = self.s.get(self.i) {
            self.i += 1;
        }
    }

    fn hex4(&mut self) -> Result<u32, SyntaxError> {
        let mut v = 0u32;
        for _ in 0..4 {
            let d = match self.s.get(self.i) {
                Some(c @ b'0'..=b'9') => c - b'0',
                Some(c @ b'a'..=b'f') => c - b'a' + 10,
                Some(c @ b'A'..=b'F') => c - b'A' + 10,
                _ => return Err(self.error("a \\u escape needs four hex digits")),
            };
            v = v * 16 + u32::from(d);
            self.i += 1;
        }
        Ok(v)
    }

    fn string(&mut self) -> Result<String, SyntaxError> {
        self.i += 1; // opening quote
        let mut out = String::new();
        loop {
            let start = self.i;
            while let Some(&b) = self.s.get(self.i) {
                if b == b'"' || b == b'\\' || b < 0x20 {
                    break;
                }
                self.i += 1;
            }
            out.push_str(std::str::from_utf8(&self.s[start..self.i]).expect("the body is UTF-8"));
            match self.s.get(self.i) {
                None => return Err(self.error("a string is not closed")),
                Some(b'"') => {
                    self.i += 1;
                    return Ok(out);
                }
                Some(b'\\') => {
                    self.i += 1;
                    let c = match self.s.get(self.i) {
                        Some(b'"') => '"',
                        Some(b'\\') => '\\',
                        Some(b'/') => '/',
                        Some(b'b') => '\u{8}',
                        Some(b'f') => '\u{c}',
                        Some(b'n') => '\n',
                        Some(b'r') => '\r',
                        Some(b't') => '\t',
                        Some(b'u') => {
                            self.i += 1;
                            let hi = self.hex4()?;
                            self.i -= 1;
                            let code = if (0xD800..0xDC00).contains(&hi) {
                                if self.s.get(self.i + 1) != Some(&b'\\')
                                    || self.s.get(self.i + 2) != Some(&b'u')
                                {
                                    return Err(self.error("a lone surrogate in a \\u escape"));
                                }
                                self.i += 3;
                                let lo = self.hex4()?;
                                self.i -= 1;
                                if !(0xDC00..0xE000).contains(&lo) {
                                    return Err(self.error("a lone surrogate in a \\u escape"));
                                }
                                0x10000 + ((hi - 0xD800) << 10) + (lo - 0xDC00)
                            } else {
                                hi
                            };
                            char::from_u32(code)
                                .ok_or_else(|| self.error("a lone surrogate in a \\u escape"))?
                        }
                        _ => return Err(self.error("an unknown escape in a string")),
                    };
                    out.push(c);
                    self.i += 1;
                }
                Some(_) => {
                    return Err(self.error("a control character inside a string must be escaped"))
                }
            }
        }
    }
}

fn truncate(s: &str) -> String {
    s.chars().take(40).collect()
}

/// Escapes a member name for a JSON Pointer (RFC 6901: ~ as ~0, / as ~1).
pub fn escape_pointer(name: &str) -> String {
    name.replace('~', "~0").replace('/', "~1")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_member_given_twice_is_named_by_its_pointer() {
        let e = parse(br#"{"a":1,"a":2}"#).unwrap_err();
        assert_eq!(e.pointer.as_deref(), Some("/a"));
        let e = parse(br#"{"x":[{"b":1},{"c/d":1,"c/d":2}]}"#).unwrap_err();
        assert_eq!(e.pointer.as_deref(), Some("/x/1/c~1d"));
        // Any other error names no member.
        assert_eq!(parse(br#"{"a":1,}"#).unwrap_err().pointer, None);
    }

    #[test]
    fn numbers_keep_their_exact_text() {
        let v = parse(br#"{"principal": 0.1, "rate": 6.375e0}"#).unwrap();
        assert_eq!(v.get("principal"), Some(&Json::Number("0.1".into())));
        assert_eq!(v.get("rate"), Some(&Json::Number("6.375e0".into())));
    }

    #[test]
    fn duplicate_keys_are_refused_with_a_position() {
        let e = parse(b"{\"a\": 1,\n \"a\": 2}").unwrap_err();
        assert_eq!((e.line, e.column), (2, 2));
        assert!(e.message.contains("twice"));
    }

    #[test]
    fn deep_nesting_is_refused() {
        let body = "[".repeat(100) + &"]".repeat(100);
        assert!(parse(body.as_bytes())
            .unwrap_err()
            .message
            .contains("deeply"));
    }

    #[test]
    fn malformed_documents_are_refused() {
        for bad in [
            "",
            "{",
            "{\"a\" 1}",
            "[1,]",
            "01",
            "1.",
            "-",
            "\"\t\"",
            "{} {}",
            "NaN",
            "\"\\ud800\"",
            "\"\\x\"",
        ] {
            assert!(parse(bad.as_bytes()).is_err(), "{bad:?}");
        }
    }

    #[test]
    fn escapes_and_unicode_decode() {
        let v = parse(br#"["a\"b\u00e9\ud83d\ude00"]"#).unwrap();
        assert_eq!(v, Json::Array(vec![Json::String("a\"bé😀".into())]));
    }
}
