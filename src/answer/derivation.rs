//! The derivation of a closed form, as data and as readable text.
//!
//! Built from the engine's [`Solution`]; the page and the JSON answer both use it.

use rust_decimal::Decimal;
use serde::Serialize;

use crate::engine::poly::Poly;
use crate::engine::recurrence::{Input, Solution};
use crate::engine::zdomain::ClosedForm;

/// A number in full precision, trailing zeros dropped.
pub fn full(d: Decimal) -> String {
    super::text::decimal_string(d.normalize())
}

/// A number for reading: at most 10 decimals, trailing zeros dropped.
pub fn short(d: Decimal) -> String {
    let r = d.round_dp(10).normalize();
    if r.is_zero() {
        "0".into()
    } else {
        super::text::decimal_string(r)
    }
}

#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct InputDto {
    pub kind: &'static str,
    pub amount: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ratio: Option<String>,
}

#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct RecurrenceDto {
    pub a: String,
    pub x0: String,
    pub inputs: Vec<InputDto>,
    pub text: String,
}

#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct PoleDto {
    pub at: String,
    pub multiplicity: u32,
}

#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct TransformDto {
    /// Coefficients of N(z), ascending, in X(z)/z = N(z) / Π (z − p)^m.
    pub numerator: Vec<String>,
    pub poles: Vec<PoleDto>,
    pub text: String,
}

#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct FractionDto {
    pub pole: String,
    pub multiplicity: u32,
    /// coefficients[j − 1] is the numerator of 1/(z − pole)^j in X(z)/z.
    pub coefficients: Vec<String>,
}

#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct ModeDto {
    pub pole: String,
    /// Coefficients of the polynomial in k, ascending.
    pub polynomial: Vec<String>,
}

#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct ImpulseDto {
    pub at: u32,
    pub amount: String,
}

#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct ClosedFormDto {
    pub modes: Vec<ModeDto>,
    pub impulses: Vec<ImpulseDto>,
    pub text: String,
}

/// The derivation of one closed form.
#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct DerivationDto {
    pub recurrence: RecurrenceDto,
    pub transform: TransformDto,
    pub cancelled_poles: Vec<String>,
    pub merged_poles: Vec<[String; 2]>,
    pub partial_fractions: Vec<FractionDto>,
    pub closed_form: ClosedFormDto,
    /// The derivation in sentences.
    pub steps: Vec<String>,
}

fn signed_term(first: bool, value: Decimal, body: &str) -> String {
    let magnitude = short(value.abs());
    let coefficient = if body.is_empty() {
        magnitude
    } else if magnitude == "1" {
        body.to_string()
    } else {
        format!("{magnitude}·{body}")
    };
    match (first, value.is_sign_negative() && !value.is_zero()) {
        (true, false) => coefficient,
        (true, true) => format!("−{coefficient}"),
        (false, false) => format!(" + {coefficient}"),
        (false, true) => format!(" − {coefficient}"),
    }
}

/// A polynomial as text in the variable `var` ("100000·z − 100599.55").
pub fn poly_text(coefficients: &[Decimal], var: &str) -> String {
    let mut out = String::new();
    for (power, c) in coefficients.iter().enumerate().rev() {
        if c.is_zero() {
            continue;
        }
        let body = match power {
            0 => String::new(),
            1 => var.to_string(),
            n => format!("{var}^{n}"),
        };
        out.push_str(&signed_term(out.is_empty(), *c, &body));
    }
    if out.is_empty() {
        "0".into()
    } else {
        out
    }
}

fn factor_text(pole: Decimal, multiplicity: u32) -> String {
    let base = if pole.is_zero() {
        "z".to_string()
    } else if pole.is_sign_negative() {
        format!("(z + {})", short(-pole))
    } else {
        format!("(z − {})", short(pole))
    };
    if multiplicity == 1 {
        base
    } else {
        format!("{base}^{multiplicity}")
    }
}

fn input_text(input: &Input) -> (&'static str, Decimal, Option<Decimal>, String) {
    match *input {
        Input::Impulse { amount } => ("impulse", amount, None, "δ[k]".into()),
        Input::Step { amount } => ("step", amount, None, String::new()),
        Input::Geometric { amount, ratio } => (
            "geometric",
            amount,
            Some(ratio),
            format!("{}^k", short(ratio)),
        ),
        Input::Ramp { amount } => ("ramp", amount, None, "k".into()),
    }
}

/// The closed form as text: "x[k] = −19910·1.005^k + 119910".
pub fn closed_form_text(cf: &ClosedForm) -> String {
    let mut out = String::new();
    for mode in &cf.modes {
        let poly = Poly::new(mode.polynomial.clone());
        let power = if mode.pole == Decimal::ONE {
            String::new()
        } else {
            format!("{}^k", short(mode.pole))
        };
        if poly.coefficients().len() == 1 {
            out.push_str(&signed_term(out.is_empty(), poly.coefficient(0), &power));
        } else {
            let body = if power.is_empty() {
                format!("({})", poly_text(poly.coefficients(), "k"))
            } else {
                format!("({})·{power}", poly_text(poly.coefficients(), "k"))
            };
            out.push_str(&if out.is_empty() {
                body
            } else {
                format!(" + {body}")
            });
        }
    }
    for (at, c) in &cf.impulses {
        let body = if *at == 0 {
            "δ[k]".to_string()
        } else {
            format!("δ[k − {at}]")
        };
        out.push_str(&signed_term(out.is_empty(), *c, &body));
    }
    if out.is_empty() {
        out.push('0');
    }
    format!("x[k] = {out}")
}

impl DerivationDto {
    pub fn from_solution(s: &Solution) -> Self {
        let r = &s.recurrence;
        let mut rec_text = format!("x[k+1] = {}·x[k]", short(r.a));
        let inputs: Vec<InputDto> = r
            .inputs
            .iter()
            .map(|input| {
                let (kind, amount, ratio, body) = input_text(input);
                rec_text.push_str(&signed_term(false, amount, &body));
                InputDto {
                    kind,
                    amount: full(amount),
                    ratio: ratio.map(full),
                }
            })
            .collect();
        rec_text.push_str(&format!(",  x[0] = {}", short(r.x0)));
        let denominator: String = s
            .transform
            .poles
            .iter()
            .map(|p| factor_text(p.at, p.multiplicity))
            .collect();
        let transform_text = format!(
            "X(z)/z = ({}) / {}",
            poly_text(s.transform.numerator.coefficients(), "z"),
            denominator
        );
        let mut fractions_text = String::new();
        for f in &s.fractions {
            for (j, c) in f.coefficients.iter().enumerate() {
                if c.is_zero() {
                    continue;
                }
                let body = format!("/{}", factor_text(f.pole, j as u32 + 1));
                let magnitude = short(c.abs());
                let negative = c.is_sign_negative();
                let lead = match (fractions_text.is_empty(), negative) {
                    (true, false) => String::new(),
                    (true, true) => "−".into(),
                    (false, false) => " + ".into(),
                    (false, true) => " − ".into(),
                };
                fractions_text.push_str(&format!("{lead}{magnitude}{body}"));
            }
        }
        if fractions_text.is_empty() {
            fractions_text.push('0');
        }
        let cf_text = closed_form_text(&s.closed_form);
        let pole_list: Vec<String> = s
            .fractions
            .iter()
            .map(|f| {
                let m = match f.multiplicity {
                    1 => "simple".to_string(),
                    2 => "double".to_string(),
                    3 => "triple".to_string(),
                    n => format!("multiplicity {n}"),
                };
                format!("z = {} ({m})", short(f.pole))
            })
            .collect();
        let mut steps = vec![
            format!("The recurrence: {rec_text}."),
            format!(
                "Its z-transform (Z{{x[k+1]}} = z·X(z) − z·x[0]; a step c has transform c·z/(z − 1), a geometric c·g^k has c·z/(z − g), a ramp c·k has c·z/(z − 1)², an impulse c has c) gives {transform_text}."
            ),
        ];
        if !s.cancelled.is_empty() {
            let list: Vec<String> = s.cancelled.iter().map(|p| short(*p)).collect();
            steps.push(format!(
                "The numerator vanishes at z = {}, so that factor cancels.",
                list.join(", ")
            ));
        }
        for (p, q) in &s.merged {
            steps.push(format!(
                "The poles {} and {} differ by less than 1e-14 and are taken as one repeated pole (two separate poles would divide by their difference).",
                full(*p),
                full(*q)
            ));
        }
        steps.push(format!(
            "Its poles: {}.",
            if pole_list.is_empty() {
                "none".into()
            } else {
                pole_list.join(", ")
            }
        ));
        steps.push(format!("Partial fractions: X(z)/z = {fractions_text}."));
        steps.push(format!(
            "Back to the time domain with the table A·z/(z − p) ↔ A·p^k, A·z/(z − p)² ↔ A·k·p^(k−1), A·z/(z − p)³ ↔ A·k(k−1)/2·p^(k−2): {cf_text}."
        ));
        DerivationDto {
            recurrence: RecurrenceDto {
                a: full(r.a),
                x0: full(r.x0),
                inputs,
                text: rec_text,
            },
            transform: TransformDto {
                numerator: s
                    .transform
                    .numerator
                    .coefficients()
                    .iter()
                    .map(|c| full(*c))
                    .collect(),
                poles: s
                    .transform
                    .poles
                    .iter()
                    .map(|p| PoleDto {
                        at: full(p.at),
                        multiplicity: p.multiplicity,
                    })
                    .collect(),
                text: transform_text,
            },
            cancelled_poles: s.cancelled.iter().map(|p| full(*p)).collect(),
            merged_poles: s.merged.iter().map(|(p, q)| [full(*p), full(*q)]).collect(),
            partial_fractions: s
                .fractions
                .iter()
                .map(|f| FractionDto {
                    pole: full(f.pole),
                    multiplicity: f.multiplicity,
                    coefficients: f.coefficients.iter().map(|c| full(*c)).collect(),
                })
                .collect(),
            closed_form: ClosedFormDto {
                modes: s
                    .closed_form
                    .modes
                    .iter()
                    .map(|m| ModeDto {
                        pole: full(m.pole),
                        polynomial: m.polynomial.iter().map(|c| full(*c)).collect(),
                    })
                    .collect(),
                impulses: s
                    .closed_form
                    .impulses
                    .iter()
                    .map(|(at, c)| ImpulseDto {
                        at: *at,
                        amount: full(*c),
                    })
                    .collect(),
                text: cf_text,
            },
            steps,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::recurrence::Recurrence;

    #[test]
    fn a_level_loan_reads_as_by_hand() {
        let r = Recurrence {
            a: "1.005".parse().unwrap(),
            x0: "100000".parse().unwrap(),
            inputs: vec![Input::Step {
                amount: "-599.55".parse().unwrap(),
            }],
        };
        let d = DerivationDto::from_solution(&r.solve().unwrap());
        assert_eq!(
            d.recurrence.text,
            "x[k+1] = 1.005·x[k] − 599.55,  x[0] = 100000"
        );
        assert_eq!(d.closed_form.text, "x[k] = −19910·1.005^k + 119910");
        assert_eq!(
            d.transform.text,
            "X(z)/z = (100000·z^2 − 100599.55·z) / z(z − 1.005)(z − 1)"
        );
    }
}
