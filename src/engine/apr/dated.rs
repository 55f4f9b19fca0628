//! The APR of dated advances and payments by Appendix J: the unit-period found
//! by (b)(4) (or given), each flow placed in unit-periods by (b)(5), equal flows
//! one unit-period apart joined into runs, and the equation solved.

use jiff::civil::Date;

use super::flows::{DatedFlow, UnitFlow};
use super::solver::{solve_apr, AprResult};
use super::unit_period::{find_unit_period, place_in_unit_periods, UnitPeriod, UnitPeriodRule};
use crate::engine::error::{EngineError, Result};

/// The APR of dated flows, with the unit-period found and each flow's (t, f).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DatedAprResult {
    /// The APR found.
    pub apr: AprResult,
    /// The unit-period the flows were placed in.
    pub unit_period: UnitPeriod,
    /// The rule of (b)(4) that chose the unit-period; `None` when the caller gave it.
    pub rule: Option<UnitPeriodRule>,
    /// The first advance's date: the start of the term.
    pub start: Date,
    /// Each advance, in the order given, placed in unit-periods (count 1).
    pub advances: Vec<UnitFlow>,
    /// Each payment, in the order given, placed in unit-periods (count 1).
    pub payments: Vec<UnitFlow>,
}

/// The APR of dated advances and payments by Appendix J: the unit-period by
/// [`find_unit_period`], each flow's (t, f) from the first advance by
/// [`unit_periods_between`](super::unit_period::unit_periods_between), then
/// [`solve_apr`].
///
/// # Errors
/// As [`find_unit_period`] and [`solve_apr`].
///
/// # Example
/// ```
/// // Regulation Z Appendix J (c)(1)(i): 5,000 advanced on 10 January 1978, 24
/// // monthly payments of 230 from 10 February 1978: an APR of 9.69 %.
/// use residue::engine::apr::{apr_from_dates, DatedFlow, PaymentSeries};
/// use residue::engine::rate::Frequency;
/// let advance = DatedFlow { amount: "5000".parse().unwrap(), date: "1978-01-10".parse().unwrap() };
/// let payments = PaymentSeries {
///     amount: "230".parse().unwrap(),
///     count: 24,
///     first_date: "1978-02-10".parse().unwrap(),
///     frequency: Frequency::Monthly,
/// }
/// .flows()
/// .unwrap();
/// let r = apr_from_dates(&[advance], &payments).unwrap();
/// assert_eq!(r.apr.apr_percent_rounded.to_string(), "9.69");
/// ```
pub fn apr_from_dates(advances: &[DatedFlow], payments: &[DatedFlow]) -> Result<DatedAprResult> {
    let advance_dates: Vec<Date> = advances.iter().map(|f| f.date).collect();
    let payment_dates: Vec<Date> = payments.iter().map(|f| f.date).collect();
    let (unit, rule) = find_unit_period(&advance_dates, &payment_dates)?;
    let mut result = apr_from_dates_with_unit(advances, payments, unit)?;
    result.rule = Some(rule);
    Ok(result)
}

/// As [`apr_from_dates`], with the unit-period given rather than found (`rule` is `None`).
///
/// # Errors
/// As [`solve_apr`], or a payment before the first advance.
pub fn apr_from_dates_with_unit(
    advances: &[DatedFlow],
    payments: &[DatedFlow],
    unit: UnitPeriod,
) -> Result<DatedAprResult> {
    unit.check()?;
    let start = advances
        .iter()
        .map(|f| f.date)
        .min()
        .ok_or_else(|| EngineError::out_of_range("advances", "at least one is needed"))?;
    let place = |flows: &[DatedFlow], field: &'static str| -> Result<Vec<UnitFlow>> {
        flows
            .iter()
            .map(|flow| {
                if flow.date < start {
                    return Err(EngineError::out_of_range(
                        field,
                        "a payment falls before the first advance (the start of the term)",
                    ));
                }
                let (t, f) = place_in_unit_periods(start, flow.date, unit, field)?;
                Ok(UnitFlow::single(flow.amount, t, f))
            })
            .collect()
    };
    let placed_advances = place(advances, "advances")?;
    let placed_payments = place(payments, "payments")?;
    let apr = solve_apr(
        &into_runs(&placed_advances),
        &into_runs(&placed_payments),
        unit,
    )?;
    Ok(DatedAprResult {
        apr,
        unit_period: unit,
        rule: None,
        start,
        advances: placed_advances,
        payments: placed_payments,
    })
}

/// Joins flows of equal amount and fraction one unit-period apart into runs, so
/// the solver sums them in closed form.
fn into_runs(flows: &[UnitFlow]) -> Vec<UnitFlow> {
    let mut sorted: Vec<UnitFlow> = flows.to_vec();
    sorted.sort_by_key(|a| (a.periods, a.fraction));
    let mut runs: Vec<UnitFlow> = Vec::with_capacity(sorted.len());
    for flow in sorted {
        if let Some(last) = runs.last_mut() {
            if last.amount == flow.amount
                && last.fraction == flow.fraction
                && u64::from(last.periods) + u64::from(last.count) == u64::from(flow.periods)
            {
                last.count += flow.count;
                continue;
            }
        }
        runs.push(flow);
    }
    runs
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::apr::testing::{advance, close, d, flow, series};
    use crate::engine::error::ErrorKind;
    use crate::engine::rate::Frequency;
    use jiff::civil::date;
    use rust_decimal::{Decimal, MathematicalOps};

    /// (G(i), G'(i)) summed flow by flow, every run expanded: the reference for the closed form.
    fn equation_by_loop(advances: &[UnitFlow], payments: &[UnitFlow], i: Decimal) -> Decimal {
        let mut g = Decimal::ZERO;
        for (flows, sign) in [(payments, Decimal::ONE), (advances, Decimal::NEGATIVE_ONE)] {
            for f in flows {
                for m in 0..f.count {
                    let t = f.periods + m;
                    g += sign * f.amount
                        / ((Decimal::ONE + f.fraction * i) * (Decimal::ONE + i).powi(i64::from(t)));
                }
            }
        }
        g
    }

    // Reference rates below: Python's decimal module at 50 digits, bisecting the
    // same equation of (b)(8) (the figure after "i =" in each comment).

    #[test]
    fn appendix_j_c_1_i_monthly_payments_from_dates() {
        // 12 CFR 1026 Appendix J (c)(1)(i): 9.69 %.
        let r = apr_from_dates(
            &[flow("5000", date(1978, 1, 10))],
            &series("230", 24, date(1978, 2, 10), Frequency::Monthly),
        )
        .unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Month);
        assert_eq!(r.rule, Some(UnitPeriodRule::MostFrequentCommonPeriod));
        assert_eq!((r.payments[0].periods, r.payments[0].fraction), (1, d("0")));
        assert_eq!(
            (r.payments[23].periods, r.payments[23].fraction),
            (24, d("0"))
        );
        close(
            r.apr.periodic_rate,
            "0.0080714233852339729075831461",
            "1e-20",
        );
        assert_eq!(r.apr.apr_percent_rounded, d("9.69"));
    }

    #[test]
    fn appendix_j_c_1_ii_odd_first_period_from_dates() {
        // 12 CFR 1026 Appendix J (c)(1)(ii): 11.82 %, first payment at t = 1, f = 19/30
        // (one month back from 4-1-78 is 3-1-78; 2-10-78 to 3-1-78 is 19 days).
        let r = apr_from_dates(
            &[flow("6000", date(1978, 2, 10))],
            &series("200", 36, date(1978, 4, 1), Frequency::Monthly),
        )
        .unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Month);
        let f = Decimal::from(19) / Decimal::from(30);
        assert_eq!((r.payments[0].periods, r.payments[0].fraction), (1, f));
        assert_eq!((r.payments[35].periods, r.payments[35].fraction), (36, f));
        close(
            r.apr.periodic_rate,
            "0.0098470902423550229128265613",
            "1e-20",
        );
        assert_eq!(r.apr.apr_percent_rounded, d("11.82"));
    }

    #[test]
    fn appendix_j_c_1_iii_semimonthly_from_dates() {
        // 12 CFR 1026 Appendix J (c)(1)(iii): 10.34 %; 2-23-78 to 3-1-78 is 6 days: t = 0, f = 6/15.
        let payments = series("219.17", 24, date(1978, 3, 1), Frequency::Semimonthly);
        assert_eq!(payments[1].date, date(1978, 3, 16));
        assert_eq!(payments[23].date, date(1979, 2, 16));
        let r = apr_from_dates(&[flow("5000", date(1978, 2, 23))], &payments).unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Semimonth);
        for (k, p) in r.payments.iter().enumerate() {
            assert_eq!((p.periods, p.fraction), (k as u32, d("0.4")), "payment {k}");
        }
        close(
            r.apr.periodic_rate,
            "0.0043074595463029554736780516",
            "1e-20",
        );
        assert_eq!(r.apr.apr_percent_rounded, d("10.34"));
    }

    #[test]
    fn appendix_j_c_2_i_irregular_first_payment() {
        // 12 CFR 1026 Appendix J (c)(2)(i): $5,000 advanced 1-10-78; $250 on 2-10-78,
        // then 23 monthly payments of $230: 10.08 %. i = 0.0084024083559892373993428240
        let r = solve_apr(
            &advance("5000"),
            &[
                UnitFlow::single(d("250"), 1, Decimal::ZERO),
                UnitFlow::run(d("230"), 2, Decimal::ZERO, 23),
            ],
            UnitPeriod::Month,
        )
        .unwrap();
        close(r.periodic_rate, "0.0084024083559892373993428240", "1e-20");
        assert_eq!(r.apr_percent_rounded, d("10.08"));

        let mut payments = vec![flow("250", date(1978, 2, 10))];
        payments.extend(series("230", 23, date(1978, 3, 10), Frequency::Monthly));
        let dated = apr_from_dates(&[flow("5000", date(1978, 1, 10))], &payments).unwrap();
        assert_eq!(dated.unit_period, UnitPeriod::Month);
        close(
            dated.apr.periodic_rate,
            "0.0084024083559892373993428240",
            "1e-20",
        );
        assert_eq!(dated.apr.apr_percent_rounded, d("10.08"));
    }

    #[test]
    fn appendix_j_c_3_i_irregular_final_payment() {
        // 12 CFR 1026 Appendix J (c)(3)(i): $5,000 advanced 1-10-78; 23 monthly payments
        // of $230 from 2-10-78 and a final $280: 10.50 %. i = 0.0087503907148883816406389480
        let r = solve_apr(
            &advance("5000"),
            &[
                UnitFlow::run(d("230"), 1, Decimal::ZERO, 23),
                UnitFlow::single(d("280"), 24, Decimal::ZERO),
            ],
            UnitPeriod::Month,
        )
        .unwrap();
        close(r.periodic_rate, "0.0087503907148883816406389480", "1e-20");
        assert_eq!(r.apr_percent_rounded, d("10.50"));

        let mut payments = series("230", 23, date(1978, 2, 10), Frequency::Monthly);
        payments.push(flow("280", date(1980, 1, 10)));
        let dated = apr_from_dates(&[flow("5000", date(1978, 1, 10))], &payments).unwrap();
        assert_eq!(dated.unit_period, UnitPeriod::Month);
        assert_eq!(dated.payments[23].periods, 24);
        close(
            dated.apr.periodic_rate,
            "0.0087503907148883816406389480",
            "1e-20",
        );
        assert_eq!(dated.apr.apr_percent_rounded, d("10.50"));
    }

    #[test]
    fn appendix_j_c_5_i_single_advance_single_payment() {
        // 12 CFR 1026 Appendix J (c)(5)(i): $1,000 advanced 1-3-78; one payment of $1,080
        // on 9-15-78: 255 days, a unit-period of 255 days, 365/255 per year: 11.45 %.
        // i = 0.08 exactly; APR = 8 × 365/255 = 11.450980392156862745098039216 %.
        let r = solve_apr(
            &advance("1000"),
            &[UnitFlow::single(d("1080"), 1, Decimal::ZERO)],
            UnitPeriod::Days(255),
        )
        .unwrap();
        close(r.periodic_rate, "0.08", "1e-24");
        close(r.apr_percent, "11.450980392156862745098039216", "1e-20");
        assert_eq!(r.apr_percent_rounded, d("11.45"));

        let dated = apr_from_dates(
            &[flow("1000", date(1978, 1, 3))],
            &[flow("1080", date(1978, 9, 15))],
        )
        .unwrap();
        assert_eq!(dated.unit_period, UnitPeriod::Days(255));
        assert_eq!(dated.rule, Some(UnitPeriodRule::SingleAdvanceSinglePayment));
        assert_eq!(
            (dated.payments[0].periods, dated.payments[0].fraction),
            (1, d("0"))
        );
        close(
            dated.apr.unit_periods_per_year,
            "1.4313725490196078431372549020",
            "1e-27",
        );
        assert_eq!(dated.apr.apr_percent_rounded, d("11.45"));
    }

    #[test]
    fn a_run_in_closed_form_agrees_with_the_flows_one_by_one() {
        let run = [UnitFlow::run(d("599.55"), 1, d("0.25"), 360)];
        let singles: Vec<UnitFlow> = (1..=360)
            .map(|t| UnitFlow::single(d("599.55"), t, d("0.25")))
            .collect();
        let a = solve_apr(&advance("100000"), &run, UnitPeriod::Month).unwrap();
        let b = solve_apr(&advance("100000"), &singles, UnitPeriod::Month).unwrap();
        close(a.periodic_rate - b.periodic_rate, "0", "1e-22");
        // And the root found leaves the equation, summed term by term, at nothing.
        let g = equation_by_loop(&advance("100000"), &run, a.periodic_rate);
        close(g, "0", "1e-18");
        // Dated flows are joined into runs the same way.
        assert_eq!(into_runs(&singles), run.to_vec());
    }

    #[test]
    fn a_very_high_rate_is_bracketed() {
        // 100 borrowed, 115 repaid 14 days later: a 14-day unit-period, i = 0.15,
        // APR = 15 × 365/14 = 391.0714…%.
        let r = apr_from_dates(
            &[flow("100", date(2026, 3, 2))],
            &[flow("115", date(2026, 3, 16))],
        )
        .unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Days(14));
        close(r.apr.periodic_rate, "0.15", "1e-24");
        assert_eq!(r.apr.apr_percent_rounded, d("391.07"));
        // A rate of 5,000 % a month still converges.
        let r = solve_apr(
            &advance("100"),
            &[UnitFlow::single(d("5100"), 1, Decimal::ZERO)],
            UnitPeriod::Month,
        )
        .unwrap();
        close(r.periodic_rate, "50", "1e-20");
    }

    #[test]
    fn single_payments_over_whole_months_or_beyond_a_year() {
        // 3 whole months: the unit-period is the term, 4 a year ((b)(5)(vi)).
        let r = apr_from_dates(
            &[flow("1000", date(2026, 1, 31))],
            &[flow("1030", date(2026, 4, 30))],
        )
        .unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Quarter);
        close(r.apr.apr_percent, "12", "1e-20");
        // Two years: the unit-period is capped at a year, t = 2.
        let r = apr_from_dates(
            &[flow("1000", date(2026, 1, 15))],
            &[flow("1210", date(2028, 1, 15))],
        )
        .unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Year);
        assert_eq!((r.payments[0].periods, r.payments[0].fraction), (2, d("0")));
        close(r.apr.apr_percent, "10", "1e-20");
    }

    #[test]
    fn dated_refusals() {
        // Dated: a payment before the advance; every flow on one day.
        let e = apr_from_dates(
            &[flow("100", date(2026, 3, 2))],
            &[flow("110", date(2026, 3, 1))],
        )
        .unwrap_err();
        assert_eq!((e.kind, e.field), (ErrorKind::OutOfRange, Some("payments")));
        let e = apr_from_dates(
            &[flow("100", date(2026, 3, 2))],
            &[flow("110", date(2026, 3, 2))],
        )
        .unwrap_err();
        assert_eq!(e.kind, ErrorKind::NoSolution);
    }

    #[test]
    fn the_unit_period_is_the_most_frequent_common_period() {
        // Weekly and biweekly series: the week multiples.
        let weekly = series("50", 10, date(2026, 1, 8), Frequency::Weekly);
        let r = apr_from_dates(&[flow("480", date(2026, 1, 1))], &weekly).unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Week);
        assert_eq!(r.apr.unit_periods_per_year, d("52"));
        let reference = solve_apr(
            &advance("480"),
            &[UnitFlow::run(d("50"), 1, Decimal::ZERO, 10)],
            UnitPeriod::Week,
        )
        .unwrap();
        assert_eq!(r.apr.periodic_rate, reference.periodic_rate);
        let biweekly = series("50", 10, date(2026, 1, 15), Frequency::Biweekly);
        let r = apr_from_dates(&[flow("480", date(2026, 1, 1))], &biweekly).unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Weeks(2));
        // Quarterly across month ends.
        let quarterly = series("260", 4, date(2026, 3, 31), Frequency::Quarterly);
        let r = apr_from_dates(&[flow("1000", date(2025, 12, 31))], &quarterly).unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Quarter);
        assert!(r.payments.iter().all(|p| p.fraction.is_zero()));
    }

    #[test]
    fn equally_frequent_common_periods_give_the_smaller() {
        // Unconfirmed reading of (b)(4) (REGULATIONS.md): two months, then two
        // two-week periods: the two weeks.
        let payments = [
            flow("100", date(2026, 2, 1)),
            flow("100", date(2026, 3, 1)),
            flow("100", date(2026, 3, 15)),
            flow("100", date(2026, 3, 29)),
        ];
        let r = apr_from_dates(&[flow("390", date(2026, 1, 1))], &payments).unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Weeks(2));
        assert_eq!(r.rule, Some(UnitPeriodRule::SmallerOfEquallyFrequent));
    }

    #[test]
    fn without_a_common_period_the_average_is_rounded_to_a_standard_interval() {
        // Unconfirmed reading of (b)(4): periods of 35 and 43 days average 39 days;
        // the nearest standard interval is 6 weeks (42 days; a month is 30.4).
        let payments = [
            flow("100", date(2026, 2, 5)),
            flow("100", date(2026, 3, 20)),
        ];
        let r = apr_from_dates(&[flow("190", date(2026, 1, 1))], &payments).unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Weeks(6));
        assert_eq!(r.rule, Some(UnitPeriodRule::AverageOfPeriods));
    }
}
