//! The demo scenarios: invented plans shipped in `demo-scenarios/`, compiled in.

use crate::input::json::{self, Json};

/// The scenario files, in the order the home page lists them.
pub const FILES: [(&str, &str); 11] = [
    (
        "first-home-three-terms.json",
        include_str!("../../demo-scenarios/first-home-three-terms.json"),
    ),
    (
        "used-car-odd-first-period.json",
        include_str!("../../demo-scenarios/used-car-odd-first-period.json"),
    ),
    (
        "bakery-balloon.json",
        include_str!("../../demo-scenarios/bakery-balloon.json"),
    ),
    (
        "lakeside-adjustable-five-one.json",
        include_str!("../../demo-scenarios/lakeside-adjustable-five-one.json"),
    ),
    (
        "quote-to-check.json",
        include_str!("../../demo-scenarios/quote-to-check.json"),
    ),
    (
        "member-savings-growing.json",
        include_str!("../../demo-scenarios/member-savings-growing.json"),
    ),
    (
        "retiree-drawdown.json",
        include_str!("../../demo-scenarios/retiree-drawdown.json"),
    ),
    (
        "workshop-fixed-payment.json",
        include_str!("../../demo-scenarios/workshop-fixed-payment.json"),
    ),
    (
        "canadian-semiannual-compounding.json",
        include_str!("../../demo-scenarios/canadian-semiannual-compounding.json"),
    ),
    (
        "zero-percent-furniture.json",
        include_str!("../../demo-scenarios/zero-percent-furniture.json"),
    ),
    (
        "yen-renovation.json",
        include_str!("../../demo-scenarios/yen-renovation.json"),
    ),
];

/// One scenario: who, what, and the request it makes.
#[derive(Debug, Clone)]
pub struct Scenario {
    pub id: String,
    pub title: String,
    pub story: String,
    pub job: String,
    /// The request as JSON members.
    pub request: Vec<(String, Json)>,
}

impl Scenario {
    /// The request as a query string (for plain URLs).
    pub fn query(&self) -> String {
        let mut q = form_urlencoded::Serializer::new(String::new());
        for (k, v) in &self.request {
            let text = match v {
                Json::Number(n) | Json::String(n) => n.clone(),
                Json::Bool(b) => b.to_string(),
                // An object's members as prefix.NAME (the adjustable terms).
                Json::Object(members) => {
                    for (name, value) in members {
                        if let Json::Number(t) | Json::String(t) = value {
                            q.append_pair(&format!("{k}.{name}"), t);
                        }
                    }
                    continue;
                }
                _ => continue,
            };
            q.append_pair(k, &text);
        }
        q.finish()
    }
}

/// Parses every scenario file.
///
/// # Errors
/// The file name and what is wrong with it (tests make sure this never happens).
pub fn all() -> Result<Vec<Scenario>, String> {
    FILES
        .iter()
        .map(|(name, text)| parse(text).map_err(|e| format!("{name}: {e}")))
        .collect()
}

fn parse(text: &str) -> Result<Scenario, String> {
    let v = json::parse(text.as_bytes()).map_err(|e| e.to_string())?;
    let field = |k: &str| match v.get(k) {
        Some(Json::String(s)) => Ok(s.clone()),
        _ => Err(format!("needs a string \"{k}\"")),
    };
    let request = match v.get("request") {
        Some(Json::Object(m)) => m.clone(),
        _ => return Err("needs an object \"request\"".into()),
    };
    Ok(Scenario {
        id: field("id")?,
        title: field("title")?,
        story: field("story")?,
        job: field("job")?,
        request,
    })
}
