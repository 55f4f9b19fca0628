//! The field tables: every request field of every operation, declared once.
//!
//! A [`Field`] row gives a field's name, its [`Kind`] (with its bounds, taken
//! from the engine's own constants), whether it is required, its documentation
//! line, an example, its compact query syntax where that differs from JSON, and
//! the words a page's form shows beside it. From the tables come:
//!
//! - the readers' lists of allowed names ([`Field::allowed`]) and of known fields;
//! - the OpenAPI request schemas and query parameters ([`schema`]);
//! - the page forms' labels, hints, placeholders and choices (`web::form`).
//!
//! A unit test reads a request holding every field of each table through its
//! reader and checks that the reader knows exactly the table's fields, and that
//! every choice the table lists is one the reader accepts.

use serde_json::{json, Map, Value};

/// One choice of a [`Kind::Choice`] field.
#[derive(Debug, Clone, Copy)]
pub struct Choice {
    /// The value as sent.
    pub value: &'static str,
    /// The words a form shows for it; empty for an alias a form does not offer.
    pub words: &'static str,
    /// For an alias, the value it is read as.
    pub alias_of: Option<&'static str>,
}

/// Shorthand for a [`Choice`] a form offers.
pub const fn choice(value: &'static str, words: &'static str) -> Choice {
    Choice {
        value,
        words,
        alias_of: None,
    }
}

/// The kind of value a field takes, with its bounds.
#[derive(Debug, Clone, Copy)]
pub enum Kind {
    /// An amount of money in the request's currency, read exactly.
    Money,
    /// A percentage ("6.375").
    Percent,
    /// Any exact decimal.
    Decimal,
    /// A whole number; at most `max` when the reader bounds it (else the
    /// engine states the range).
    Whole { min: u32, max: Option<u32> },
    /// An ISO 8601 calendar date.
    Date,
    /// An ISO 4217 currency code Residue knows.
    Currency,
    /// `true` or `false`, with the words a form shows for each and for "not given".
    Flag {
        yes: &'static str,
        no: &'static str,
        default: &'static str,
    },
    /// Free text of at most `max` characters.
    Text { max: usize },
    /// One of fixed names; `default` is the words a form shows for "not given"
    /// (empty: the form offers no such choice).
    Choice {
        choices: &'static [Choice],
        default: &'static str,
    },
    /// A list of objects in JSON; in a query, compact items (see [`Field::query`]).
    List {
        item: &'static Table,
        min: usize,
        max: usize,
    },
    /// A list of whole numbers from 0 to `max`.
    Numbers { max: u32, max_items: usize },
    /// An object with fields of its own.
    Object(&'static Table),
    /// A value of another shape, described by its own JSON Schema.
    Shape(fn() -> Value),
}

/// One request field.
#[derive(Debug, Clone, Copy)]
pub struct Field {
    pub name: &'static str,
    pub kind: Kind,
    pub required: bool,
    /// One line for the API's documentation.
    pub doc: &'static str,
    /// An example value, as a query string writes it.
    pub example: &'static str,
    /// The compact query syntax of a list, or what a query writes instead of
    /// the JSON value; empty when a query writes the value as JSON does.
    pub query: &'static str,
    /// The label a page's form shows (empty: the field is not on a form).
    pub label: &'static str,
    /// The hint under the field on a form.
    pub hint: &'static str,
    /// The placeholder of the form's input.
    pub placeholder: &'static str,
}

impl Field {
    /// A field with a name, a kind and a documentation line; the rest empty.
    pub const fn new(name: &'static str, kind: Kind, doc: &'static str) -> Self {
        Self {
            name,
            kind,
            required: false,
            doc,
            example: "",
            query: "",
            label: "",
            hint: "",
            placeholder: "",
        }
    }

    /// The same field, required.
    pub const fn required(mut self) -> Self {
        self.required = true;
        self
    }

    /// The same field with an example value.
    pub const fn example(mut self, example: &'static str) -> Self {
        self.example = example;
        self
    }

    /// The same field with its compact query syntax.
    pub const fn query(mut self, syntax: &'static str) -> Self {
        self.query = syntax;
        self
    }

    /// The same field with the words of a page's form.
    pub const fn form(
        mut self,
        label: &'static str,
        hint: &'static str,
        placeholder: &'static str,
    ) -> Self {
        self.label = label;
        self.hint = hint;
        self.placeholder = placeholder;
        self
    }

    /// The allowed values of a choice field, as its error message lists them
    /// (an alias with the value it is read as).
    pub fn allowed(&self) -> Vec<String> {
        match self.kind {
            Kind::Choice { choices, .. } => choices
                .iter()
                .map(|c| match c.alias_of {
                    Some(of) => format!("{} (read as {of})", c.value),
                    None => c.value.to_string(),
                })
                .collect(),
            _ => vec![],
        }
    }

    /// The choices a page's form offers: "not given" first when it has words.
    pub fn form_choices(&self) -> Vec<(&'static str, &'static str)> {
        match self.kind {
            Kind::Choice { choices, default } => {
                let blank = (!default.is_empty()).then_some(("", default));
                blank
                    .into_iter()
                    .chain(
                        choices
                            .iter()
                            .filter(|c| !c.words.is_empty())
                            .map(|c| (c.value, c.words)),
                    )
                    .collect()
            }
            Kind::Flag { yes, no, default } => vec![("", default), ("true", yes), ("false", no)],
            _ => vec![],
        }
    }
}

/// The fields of one request object, with its schema's name and description.
#[derive(Debug, Clone, Copy)]
pub struct Table {
    /// The name of its schema in the OpenAPI document.
    pub schema: &'static str,
    pub doc: &'static str,
    /// Groups of fields, in the order the guide lists them.
    pub groups: &'static [&'static [Field]],
    /// Names of the groups' fields this request does not take.
    pub except: &'static [&'static str],
    /// With `all_optional`, no field is required (a variant over a base).
    pub all_optional: bool,
}

impl Table {
    /// Every field of the request, in order.
    pub fn fields(&self) -> impl Iterator<Item = &'static Field> + '_ {
        self.groups
            .iter()
            .flat_map(|g| g.iter())
            .filter(|f| !self.except.contains(&f.name))
    }

    /// The field of this name.
    pub fn field(&self, name: &str) -> Option<&'static Field> {
        self.fields().find(|f| f.name == name)
    }

    /// The names of every field, in order.
    pub fn names(&self) -> Vec<&'static str> {
        self.fields().map(|f| f.name).collect()
    }

    /// True when the field of this name is required here.
    pub fn requires(&self, f: &Field) -> bool {
        f.required && !self.all_optional
    }
}

/// A decimal number read exactly: a JSON string of digits or a JSON number.
fn decimal_schema() -> Value {
    json!({"type": ["string", "number"], "pattern": "^-?[0-9]+(\\.[0-9]+)?([eE][-+]?[0-9]{1,3})?$",
           "description": "A decimal number read exactly: a JSON string of plain digits (\"1250.50\") or a JSON number."})
}

/// The JSON Schema of one field.
pub fn field_schema(f: &Field) -> Value {
    let mut s = match f.kind {
        Kind::Money | Kind::Percent | Kind::Decimal => {
            let mut s = decimal_schema();
            if !f.example.is_empty() {
                s["examples"] = json!([f.example]);
            }
            s
        }
        Kind::Whole { min, max } => {
            let mut s = json!({"type": "integer", "minimum": min});
            if let Some(max) = max {
                s["maximum"] = json!(max);
            }
            s
        }
        Kind::Date => json!({"type": "string", "format": "date"}),
        Kind::Currency => {
            let codes: Vec<&str> = crate::engine::money::Currency::codes().collect();
            json!({"type": "string", "enum": codes})
        }
        Kind::Flag { .. } => json!({"type": "boolean"}),
        Kind::Text { max } => json!({"type": "string", "maxLength": max}),
        Kind::Choice { choices, .. } => {
            let values: Vec<&str> = choices.iter().map(|c| c.value).collect();
            json!({"type": "string", "enum": values})
        }
        Kind::List { item, min, max } => {
            let mut s = json!({"type": "array", "maxItems": max,
                               "items": {"$ref": format!("#/components/schemas/{}", item.schema)}});
            if min > 0 {
                s["minItems"] = json!(min);
            }
            s
        }
        Kind::Numbers { max, max_items } => json!({"type": "array", "maxItems": max_items,
            "items": {"type": "integer", "minimum": 0, "maximum": max}}),
        Kind::Object(table) => json!({"$ref": format!("#/components/schemas/{}", table.schema)}),
        Kind::Shape(shape) => shape(),
    };
    let mut doc = f.doc.to_string();
    if !f.query.is_empty() {
        if !doc.is_empty() {
            doc.push(' ');
        }
        doc.push_str("In a query: ");
        doc.push_str(f.query);
        doc.push('.');
    }
    if !doc.is_empty() {
        if s.get("$ref").is_some() {
            s = json!({"allOf": [s], "description": doc});
        } else {
            s["description"] = json!(doc);
        }
    }
    s
}

/// The JSON Schema of a request object (unknown members refused).
pub fn schema(table: &Table) -> Value {
    let mut properties = Map::new();
    let mut required = Vec::new();
    for f in table.fields() {
        properties.insert(f.name.to_string(), field_schema(f));
        if table.requires(f) {
            required.push(f.name);
        }
    }
    let mut s = json!({
        "type": "object",
        "description": table.doc,
        "properties": properties,
        "additionalProperties": false,
    });
    if !required.is_empty() {
        s["required"] = json!(required);
    }
    s
}

/// A payment number or an ISO 8601 date.
pub fn number_or_date() -> Value {
    json!({"type": ["integer", "string"], "examples": [36, "2029-06-01"],
           "description": format!("A payment number (0 to {}), or an ISO 8601 date: the first payment due on or after it.", crate::engine::loan::MAX_PAYMENTS)})
}

/// Any JSON value.
pub fn any_value() -> Value {
    json!({})
}

/// A JSON object.
pub fn any_object() -> Value {
    json!({"type": "object"})
}

/// How often payments (or deposits) fall due, in the order error messages list them.
pub const PAYMENT_FREQUENCIES: &[Choice] = &[
    choice("annual", "Once a year"),
    choice("semiannual", "Twice a year"),
    choice("quarterly", "Quarterly"),
    choice("monthly", "Monthly"),
    choice("semimonthly", "Twice a month"),
    choice("biweekly", "Every two weeks"),
    choice("weekly", "Weekly"),
];

/// How often interest compounds.
pub const COMPOUNDINGS: &[Choice] = &[
    choice("annual", "Once a year"),
    choice("semiannual", "Twice a year"),
    choice("quarterly", "Quarterly"),
    choice("monthly", "Monthly"),
    choice("semimonthly", "Twice a month"),
    choice("biweekly", "Every two weeks"),
    choice("weekly", "Weekly"),
    choice("daily", "Daily"),
];

/// The request's currency (default USD).
pub const CURRENCY: Field = Field::new(
    "currency",
    Kind::Currency,
    "ISO 4217 code (default USD); amounts have at most its minor units.",
)
.example("USD")
.form(
    "Currency",
    "ISO 4217 code: USD, EUR, GBP, CAD, AUD, NZD, CHF, SEK, NOK, DKK, MXN, INR, ZAR, JPY, KRW, ISK, CLP, KWD, BHD, JOD, OMR, TND.",
    "USD",
);

/// The most extra payments, and the most rate changes, a request may hold (in
/// a JSON array or a query list alike).
pub const MAX_LIST_ITEMS: usize = 120;
