//! The derivation typeset as MathML, built from the engine's own data (the
//! [`Solution`] of each recurrence), so the page shows what was computed.
//!
//! Every number and name goes through [`escape`]; the markup is the only
//! string a template inserts unescaped besides the charts.

use rust_decimal::Decimal;

use super::charts::escape;
use crate::answer::derivation::short;
use crate::engine::poly::Poly;
use crate::engine::recurrence::{Input, Recurrence, Solution};
use crate::engine::zdomain::ClosedForm;

fn mi(s: &str) -> String {
    format!("<mi>{}</mi>", escape(s))
}

fn mo(s: &str) -> String {
    format!("<mo>{}</mo>", escape(s))
}

fn mn_text(s: &str) -> String {
    format!("<mn>{}</mn>", escape(s))
}

fn mn(d: Decimal) -> String {
    mn_text(&short(d))
}

fn sup(base: &str, exponent: &str) -> String {
    format!("<msup>{base}{exponent}</msup>")
}

fn row(parts: &[String]) -> String {
    format!("<mrow>{}</mrow>", parts.concat())
}

/// `name[index]`, e.g. x[k+1].
fn indexed(name: &str, index: &str) -> String {
    format!("<mrow>{}{}{}{}</mrow>", mi(name), mo("["), index, mo("]"))
}

fn k_plus(n: u32) -> String {
    if n == 0 {
        mi("k")
    } else {
        format!("{}{}{}", mi("k"), mo("+"), mn_text(&n.to_string()))
    }
}

/// A sum of signed terms: each (coefficient, body); a coefficient of 1 before a body is dropped.
fn signed_sum(terms: &[(Decimal, String)]) -> String {
    let mut out = String::new();
    for (c, body) in terms {
        if c.is_zero() {
            continue;
        }
        let negative = c.is_sign_negative();
        if out.is_empty() {
            if negative {
                out.push_str(&mo("−"));
            }
        } else {
            out.push_str(&mo(if negative { "−" } else { "+" }));
        }
        let magnitude = c.abs();
        if body.is_empty() {
            out.push_str(&mn(magnitude));
        } else if short(magnitude) == "1" {
            out.push_str(body);
        } else {
            out.push_str(&mn(magnitude));
            out.push_str(&mo("·"));
            out.push_str(body);
        }
    }
    if out.is_empty() {
        out.push_str(&mn_text("0"));
    }
    format!("<mrow>{out}</mrow>")
}

fn power_of(var: &str, n: usize) -> String {
    match n {
        0 => String::new(),
        1 => mi(var),
        n => sup(&mi(var), &mn_text(&n.to_string())),
    }
}

/// A polynomial in `var`, highest power first.
fn polynomial(coefficients: &[Decimal], var: &str) -> String {
    let terms: Vec<(Decimal, String)> = coefficients
        .iter()
        .enumerate()
        .rev()
        .map(|(p, c)| (*c, power_of(var, p)))
        .collect();
    signed_sum(&terms)
}

/// (z − p)^m.
fn factor(pole: Decimal, multiplicity: u32) -> String {
    let base = if pole.is_zero() {
        mi("z")
    } else {
        let sign = if pole.is_sign_negative() { "+" } else { "−" };
        row(&[mo("("), mi("z"), mo(sign), mn(pole.abs()), mo(")")])
    };
    if multiplicity == 1 {
        base
    } else {
        sup(&base, &mn_text(&multiplicity.to_string()))
    }
}

fn math(body: &str) -> String {
    format!(r#"<math display="block">{body}</math>"#)
}

fn x_over_z() -> String {
    format!(
        "<mfrac>{}{}</mfrac>",
        row(&[mi("X"), mo("("), mi("z"), mo(")")]),
        mi("z")
    )
}

/// x[k+1] = a·x[k] + inputs,  x[0] = x0.
pub fn recurrence(r: &Recurrence) -> String {
    let mut terms: Vec<(Decimal, String)> = vec![(r.a, indexed("x", &mi("k")))];
    for input in &r.inputs {
        terms.push(match *input {
            Input::Impulse { amount } => (amount, indexed("δ", &mi("k"))),
            Input::Step { amount } => (amount, String::new()),
            Input::Geometric { amount, ratio } => (amount, sup(&mn(ratio), &mi("k"))),
            Input::Ramp { amount } => (amount, mi("k")),
        });
    }
    math(&format!(
        "{}{}{}{}<mspace width=\"1.5em\"/>{}{}{}",
        indexed("x", &k_plus(1)),
        mo("="),
        signed_sum(&terms),
        mo(","),
        indexed("x", &mn_text("0")),
        mo("="),
        mn(r.x0)
    ))
}

/// X(z)/z = N(z) / Π (z − p)^m, before any cancellation.
pub fn transform(s: &Solution) -> String {
    let denominator: String = s
        .transform
        .poles
        .iter()
        .map(|p| factor(p.at, p.multiplicity))
        .collect();
    math(&format!(
        "{}{}<mfrac>{}<mrow>{}</mrow></mfrac>",
        x_over_z(),
        mo("="),
        polynomial(s.transform.numerator.coefficients(), "z"),
        denominator
    ))
}

/// X(z)/z as a sum of partial fractions c/(z − p)^j.
pub fn fractions(s: &Solution) -> String {
    let mut out = String::new();
    for f in &s.fractions {
        for (j, c) in f.coefficients.iter().enumerate() {
            if c.is_zero() {
                continue;
            }
            let negative = c.is_sign_negative();
            if out.is_empty() {
                if negative {
                    out.push_str(&mo("−"));
                }
            } else {
                out.push_str(&mo(if negative { "−" } else { "+" }));
            }
            out.push_str(&format!(
                "<mfrac>{}{}</mfrac>",
                mn(c.abs()),
                factor(f.pole, j as u32 + 1)
            ));
        }
    }
    if out.is_empty() {
        out = mn_text("0");
    }
    math(&format!("{}{}<mrow>{out}</mrow>", x_over_z(), mo("=")))
}

/// The right-hand side of a closed form x[k] = Σ (polynomial in k)·p^k + impulses.
fn closed_form_rhs(cf: &ClosedForm) -> String {
    let mut out = String::new();
    for mode in &cf.modes {
        let poly = Poly::new(mode.polynomial.clone());
        let power = if mode.pole == Decimal::ONE {
            String::new()
        } else {
            sup(&mn(mode.pole), &mi("k"))
        };
        let c = poly.coefficients();
        if c.len() <= 1 {
            let single = signed_sum(&[(poly.coefficient(0), power)]);
            if !out.is_empty() && !single.starts_with("<mrow><mo>−</mo>") {
                out.push_str(&mo("+"));
            }
            out.push_str(&single);
        } else {
            if !out.is_empty() {
                out.push_str(&mo("+"));
            }
            out.push_str(&row(&[mo("("), polynomial(c, "k"), mo(")")]));
            if !power.is_empty() {
                out.push_str(&mo("·"));
                out.push_str(&power);
            }
        }
    }
    for (at, c) in &cf.impulses {
        let index = if *at == 0 {
            mi("k")
        } else {
            format!("{}{}{}", mi("k"), mo("−"), mn_text(&at.to_string()))
        };
        let term = signed_sum(&[(*c, indexed("δ", &index))]);
        if !out.is_empty() && !term.starts_with("<mrow><mo>−</mo>") {
            out.push_str(&mo("+"));
        }
        out.push_str(&term);
    }
    if out.is_empty() {
        out = mn_text("0");
    }
    out
}

/// x[k] = the closed form.
pub fn closed_form(cf: &ClosedForm) -> String {
    math(&format!(
        "{}{}<mrow>{}</mrow>",
        indexed("x", &mi("k")),
        mo("="),
        closed_form_rhs(cf)
    ))
}

/// The poles in words: "z = 1.005, simple".
pub fn poles(s: &Solution) -> Vec<String> {
    s.fractions
        .iter()
        .map(|f| {
            let m = match f.multiplicity {
                1 => "simple".to_string(),
                2 => "double".to_string(),
                3 => "triple".to_string(),
                n => format!("of multiplicity {n}"),
            };
            format!("z = {}, {m}", short(f.pole))
        })
        .collect()
}

/// P = principal·h[n]/u[n] = exact, posted as `posted`.
pub fn payment(principal: Decimal, n: u32, exact: Decimal, posted: &str) -> String {
    let n = mn_text(&n.to_string());
    math(&format!(
        "{}{}<mfrac>{}{}</mfrac>{}{}{}<mtext>posted as {}</mtext>",
        mi("P"),
        mo("="),
        row(&[mn(principal), mo("·"), indexed("h", &n)]),
        indexed("u", &n),
        mo("="),
        mn_text(&short(exact.round_dp(8))),
        mo("→"),
        escape(posted)
    ))
}

/// |drift| ≤ largest ≤ bound, typeset.
pub fn reconciliation(largest: Decimal, at: u32, bound: Decimal) -> String {
    math(&format!(
        "{}{}{}{}{}",
        row(&[
            mo("|"),
            indexed("x", &mn_text(&at.to_string())),
            sub_text("ledger"),
            mo("−"),
            indexed("x", &mn_text(&at.to_string())),
            sub_text("closed form"),
            mo("|"),
        ]),
        mo("="),
        mn(largest.round_dp(6)),
        mo("≤"),
        mn(bound.round_dp(6)),
    ))
}

fn sub_text(s: &str) -> String {
    format!("<mtext class=\"sub\"> ({})</mtext>", escape(s))
}

/// One step of a derivation: the formula, what it means in plain words, and
/// the engine's own sentence with the figures.
pub struct Step {
    pub heading: &'static str,
    /// MathML (escaped when built).
    pub math: String,
    pub words: String,
    pub detail: String,
}

/// The steps from a recurrence to its closed form, for a reader who has not studied signals.
pub fn steps(s: &Solution, what: &str) -> Vec<Step> {
    let dto = crate::answer::derivation::DerivationDto::from_solution(s);
    let pole_words = poles(s);
    let a = short(s.recurrence.a);
    let repeated = s.fractions.iter().any(|f| f.multiplicity > 1);
    let mut v = vec![
        Step {
            heading: "The recurrence",
            math: recurrence(&s.recurrence),
            words: format!(
                "x[k] is the balance after k {what}s. Each period the balance is multiplied by a = {a} (one plus the periodic rate: the interest is added) and the {what} is taken off (or added). That one rule, repeated, is the whole schedule."
            ),
            detail: dto.recurrence.text.clone(),
        },
        Step {
            heading: "Its z-transform",
            math: transform(s),
            words: "The z-transform packs the whole sequence of balances into one function X(z), so the rule applied period after period becomes a single equation of ordinary algebra. Each kind of amount has a known transform from a table: a level amount c becomes c·z/(z − 1), an amount growing by g each period c·z/(z − g), a single amount just c.".into(),
            detail: dto.transform.text.clone(),
        },
        Step {
            heading: "Poles and residues",
            math: fractions(s),
            words: format!(
                "The poles are the values of z where the denominator vanishes: {}. Each pole is one way the balance can move: z = a is interest compounding, z = 1 a level amount.{} Partial fractions split X(z)/z into one simple piece per pole; the number on top of each piece (the residue) says how much of that movement the balance holds.",
                if pole_words.is_empty() { "none".to_string() } else { pole_words.join("; ") },
                if repeated {
                    " A repeated pole (two movements at the same rate, as in a 0 % loan where a = 1) gives a term that grows with k."
                } else {
                    ""
                }
            ),
            detail: dto
                .steps
                .iter()
                .find(|t| t.starts_with("Partial fractions"))
                .cloned()
                .unwrap_or_default(),
        },
        Step {
            heading: "The closed form",
            math: closed_form(&s.closed_form),
            words: format!(
                "Each piece maps back with the same table, A·z/(z − p) to A·p^k, giving a formula for the balance after any {what} without stepping through the ones before it."
            ),
            detail: dto.closed_form.text.clone(),
        },
    ];
    v.retain(|s| !s.math.is_empty());
    v
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_level_loan_typesets_its_recurrence_and_closed_form() {
        let r = Recurrence {
            a: "1.005".parse().unwrap(),
            x0: "100000".parse().unwrap(),
            inputs: vec![Input::Step {
                amount: "-599.55".parse().unwrap(),
            }],
        };
        let s = r.solve().unwrap();
        let rec = recurrence(&s.recurrence);
        assert!(rec.contains("<mn>1.005</mn>"));
        assert!(rec.contains("<mo>−</mo><mn>599.55</mn>"));
        let cf = closed_form(&s.closed_form);
        assert!(cf.contains("<mn>19910</mn>"));
        assert!(cf.contains("<mn>119910</mn>"));
        assert!(transform(&s).contains("<mfrac>"));
        assert!(fractions(&s).contains("<mfrac>"));
    }
}
