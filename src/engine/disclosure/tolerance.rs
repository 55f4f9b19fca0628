//! The tolerances of Regulation Z a quoted figure is accurate within: the APR's
//! 1/8 or 1/4 point by whether the transaction is regular (§1026.22(a)(2)–(3)),
//! and the finance charge's dollars by the kind of credit (§1026.18(d)).

use rust_decimal::Decimal;

use crate::engine::money::Currency;
use crate::engine::plan::PaymentRun;

/// 1/8 of one percentage point (§1026.22(a)(2)).
pub const REGULAR_APR_TOLERANCE: Decimal = Decimal::from_parts(125, 0, 0, false, 3);
/// 1/4 of one percentage point (§1026.22(a)(3)).
pub const IRREGULAR_APR_TOLERANCE: Decimal = Decimal::from_parts(25, 0, 0, false, 2);

/// Whether a transaction is regular for the APR tolerance, and why.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AprTolerance {
    /// True for a regular transaction (§1026.22(a)(2)).
    pub regular: bool,
    /// 0.125 (regular) or 0.25 (irregular) percentage point.
    pub points: Decimal,
    /// The classification in words, with its citation.
    pub reason: String,
}

/// Classifies a transaction by §1026.22(a)(3): irregular when it has multiple
/// advances, irregular payment periods, or irregular payment amounts; an
/// irregular first or final payment (and an irregular first period, which the
/// caller folds into `regular_periods`) does not make it irregular.
///
/// `payments` are the payment amounts in order, as runs of equal amounts.
pub fn apr_tolerance(
    advances: usize,
    regular_periods: bool,
    payments: &[PaymentRun],
    currency: Currency,
) -> AprTolerance {
    let irregular = |reason: String| AprTolerance {
        regular: false,
        points: IRREGULAR_APR_TOLERANCE,
        reason,
    };
    if advances > 1 {
        return irregular(format!(
            "Irregular transaction (§1026.22(a)(3)): it has {advances} advances."
        ));
    }
    if !regular_periods {
        return irregular(
            "Irregular transaction (§1026.22(a)(3)): its payment periods are irregular.".into(),
        );
    }
    // The payments between the first and the final one, as runs.
    let total: u32 = payments.iter().map(|r| r.count).sum();
    let mut middle: Vec<PaymentRun> = Vec::new();
    if total > 2 {
        let last = payments.len() - 1;
        for (index, run) in payments.iter().enumerate() {
            let count = run.count - u32::from(index == 0) - u32::from(index == last);
            if count > 0 {
                middle.push(PaymentRun {
                    amount: run.amount,
                    count,
                });
            }
        }
    }
    if let [first, other, ..] = middle.as_slice() {
        return irregular(format!(
            "Irregular transaction (§1026.22(a)(3)): its payment amounts are irregular ({} and {}).",
            currency.format(first.amount),
            currency.format(other.amount)
        ));
    }
    let mut reason = String::from(
        "Regular transaction (§1026.22(a)(2)): a single advance, regular payment periods and equal payment amounts",
    );
    let level = middle.first().map(|r| r.amount);
    let mut exceptions = Vec::new();
    if let (Some(level), Some(first)) = (level, payments.first()) {
        if first.amount != level {
            exceptions.push(format!(
                "the first payment of {}",
                currency.format(first.amount)
            ));
        }
    }
    if let (Some(level), Some(last)) = (level, payments.last()) {
        if last.amount != level {
            exceptions.push(format!(
                "the final payment of {}",
                currency.format(last.amount)
            ));
        }
    }
    if exceptions.is_empty() {
        reason.push('.');
    } else {
        reason.push_str(&format!(
            "; {} differs, and an irregular first or final payment does not make a transaction irregular (§1026.22(a)(3)).",
            exceptions.join(" and ")
        ));
    }
    AprTolerance {
        regular: true,
        points: REGULAR_APR_TOLERANCE,
        reason,
    }
}

/// A quoted APR against the computed one.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AprCheck {
    /// The quoted APR, in percent.
    pub quoted_percent: Decimal,
    /// Quoted − computed, in percentage points (the computed APR unrounded).
    pub difference_points: Decimal,
    /// |difference| ≤ tolerance.
    pub within_tolerance: bool,
}

/// Compares a quoted APR with the computed one: accurate when within the
/// tolerance above or below (§1026.22(a)(2)–(3)); the boundary itself is within.
pub fn check_apr(
    quoted_percent: Decimal,
    computed_percent: Decimal,
    tolerance: Decimal,
) -> AprCheck {
    let difference_points = quoted_percent - computed_percent;
    AprCheck {
        quoted_percent,
        difference_points,
        within_tolerance: difference_points.abs() <= tolerance,
    }
}

/// Which rule of §1026.18(d) sets the finance-charge tolerance.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FinanceChargeRule {
    /// (d)(1): a mortgage loan: understated by no more than $100, or overstated.
    Mortgage,
    /// (d)(2): other credit with an amount financed of $1,000 or less: within $5.
    OtherSmall,
    /// (d)(2): other credit with an amount financed over $1,000: within $10.
    OtherLarge,
}

impl FinanceChargeRule {
    /// The rule for a loan.
    pub fn of(mortgage: bool, amount_financed: Decimal) -> Self {
        if mortgage {
            FinanceChargeRule::Mortgage
        } else if amount_financed <= Decimal::ONE_THOUSAND {
            FinanceChargeRule::OtherSmall
        } else {
            FinanceChargeRule::OtherLarge
        }
    }

    /// The tolerance in dollars.
    pub fn tolerance(self) -> Decimal {
        match self {
            FinanceChargeRule::Mortgage => Decimal::ONE_HUNDRED,
            FinanceChargeRule::OtherSmall => Decimal::from(5),
            FinanceChargeRule::OtherLarge => Decimal::TEN,
        }
    }

    /// The rule in words, with its citation.
    pub fn text(self) -> &'static str {
        match self {
            FinanceChargeRule::Mortgage => {
                "§1026.18(d)(1), a mortgage loan: accurate if understated by no more than $100, or overstated"
            }
            FinanceChargeRule::OtherSmall => {
                "§1026.18(d)(2), other credit with an amount financed of $1,000 or less: accurate within $5 above or below"
            }
            FinanceChargeRule::OtherLarge => {
                "§1026.18(d)(2), other credit with an amount financed over $1,000: accurate within $10 above or below"
            }
        }
    }
}

/// A quoted finance charge against the computed one.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FinanceChargeCheck {
    /// The quoted finance charge.
    pub quoted: Decimal,
    /// Quoted − computed: negative when the quote understates the finance charge.
    pub difference: Decimal,
    /// The rule of §1026.18(d) that applies.
    pub rule: FinanceChargeRule,
    /// Its tolerance, in dollars.
    pub tolerance: Decimal,
    /// Whether the quote is accurate under that rule.
    pub within_tolerance: bool,
}

/// Compares a quoted finance charge with the computed one (§1026.18(d)).
pub fn check_finance_charge(
    quoted: Decimal,
    computed: Decimal,
    amount_financed: Decimal,
    mortgage: bool,
) -> FinanceChargeCheck {
    let rule = FinanceChargeRule::of(mortgage, amount_financed);
    let tolerance = rule.tolerance();
    let difference = quoted - computed;
    let within_tolerance = match rule {
        FinanceChargeRule::Mortgage => difference >= -tolerance,
        FinanceChargeRule::OtherSmall | FinanceChargeRule::OtherLarge => {
            difference.abs() <= tolerance
        }
    };
    FinanceChargeCheck {
        quoted,
        difference,
        rule,
        tolerance,
        within_tolerance,
    }
}

#[cfg(test)]
pub(super) mod tests {
    use super::*;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    /// Consecutive equal amounts as runs (a test's shorthand).
    pub(in crate::engine::disclosure) fn runs(amounts: &[Decimal]) -> Vec<PaymentRun> {
        let mut runs: Vec<PaymentRun> = Vec::new();
        for amount in amounts {
            match runs.last_mut() {
                Some(run) if run.amount == *amount => run.count += 1,
                _ => runs.push(PaymentRun {
                    amount: *amount,
                    count: 1,
                }),
            }
        }
        runs
    }

    #[test]
    fn transactions_are_classified_by_1026_22_a_3() {
        let usd = Currency::USD;
        let level = runs(&[d("230"); 5]);
        assert!(apr_tolerance(1, true, &level, usd).regular);
        let odd_ends = runs(&[d("250"), d("230"), d("230"), d("280")]);
        let t = apr_tolerance(1, true, &odd_ends, usd);
        assert!(t.regular && t.reason.contains("first payment of 250.00"));
        assert!(t.reason.contains("final payment of 280.00"));
        let odd_middle = runs(&[d("230"), d("240"), d("230"), d("230")]);
        let t = apr_tolerance(1, true, &odd_middle, usd);
        assert!(!t.regular);
        assert_eq!(t.points, d("0.25"));
        assert!(!apr_tolerance(2, true, &level, usd).regular);
        assert!(!apr_tolerance(1, false, &level, usd).regular);
    }

    #[test]
    fn the_apr_tolerance_includes_its_boundary() {
        let eighth = REGULAR_APR_TOLERANCE;
        assert!(check_apr(d("6.125"), d("6"), eighth).within_tolerance);
        assert!(check_apr(d("5.875"), d("6"), eighth).within_tolerance);
        assert!(!check_apr(d("6.126"), d("6"), eighth).within_tolerance);
        assert!(!check_apr(d("6.1250000001"), d("6"), eighth).within_tolerance);
        assert!(check_apr(d("6.25"), d("6"), IRREGULAR_APR_TOLERANCE).within_tolerance);
    }

    #[test]
    fn finance_charge_tolerances_follow_1026_18_d() {
        // (d)(1): a mortgage may understate by $100 at most; overstating is accurate.
        let m = |q: &str| check_finance_charge(d(q), d("5000"), d("90000"), true);
        assert!(m("4900").within_tolerance);
        assert!(!m("4899.99").within_tolerance);
        assert!(m("6000").within_tolerance);
        // (d)(2): $5 up to an amount financed of $1,000, else $10, above or below.
        let small = check_finance_charge(d("105"), d("100"), d("1000"), false);
        assert_eq!(
            (small.rule, small.within_tolerance),
            (FinanceChargeRule::OtherSmall, true)
        );
        assert!(!check_finance_charge(d("105.01"), d("100"), d("1000"), false).within_tolerance);
        let large = check_finance_charge(d("90"), d("100"), d("1000.01"), false);
        assert_eq!(
            (large.rule, large.within_tolerance),
            (FinanceChargeRule::OtherLarge, true)
        );
        assert!(!check_finance_charge(d("110.01"), d("100"), d("1000.01"), false).within_tolerance);
    }
}
