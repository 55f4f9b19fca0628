//! Criterion benchmarks of the engine's hot paths. Run: `cargo bench --bench engine`.
//! The figures measured on the project's 2-core machine are in the README.

use std::hint::black_box;

use criterion::{criterion_group, criterion_main, Criterion};
use residue::engine::apr::{solve_apr, UnitFlow, UnitPeriod};
use residue::engine::ledger::{post_level, reconcile};
use residue::engine::loan::{payment_for_term, rate_for_payment, solve_balance};
use residue::engine::money::{Currency, InterestRounding, PaymentRounding};
use residue::engine::plan::{first_at_or_below, post, Extra, PlanOptions};
use residue::engine::rate::{AnnualRate, Frequency};
use residue::engine::recurrence::{Input, Recurrence};
use residue::engine::savings::{
    plan as savings_plan, repost, Flow, Growth, GrowthEvery, Question, SavingsTerms, Timing,
};
use residue::engine::schedule::{schedule, schedule_for_comparison, LoanTerm, LoanTerms};
use rust_decimal::Decimal;

fn d(s: &str) -> Decimal {
    s.parse().unwrap()
}

fn benches(c: &mut Criterion) {
    let i = d("7.125") / d("1200");
    let principal = d("250000");
    let payment = Currency::USD.round(
        payment_for_term(principal, i, 360).unwrap(),
        PaymentRounding::Nearest.strategy(),
    );
    let solution = solve_balance(principal, i, payment).unwrap();
    let cf = solution.closed_form.clone();

    for k in [360u32, 1000, 6000] {
        c.bench_function(&format!("closed_form_balance_at_k_{k}"), |b| {
            b.iter(|| cf.eval(black_box(k)).unwrap())
        });
    }
    let long_payment = payment_for_term(principal, d("0.002"), 6000).unwrap();
    let long = Recurrence {
        a: d("1.002"),
        x0: principal,
        inputs: vec![Input::Step {
            amount: -long_payment,
        }],
    };
    let long_cf = long.solve().unwrap().closed_form;
    c.bench_function("closed_form_balance_at_k_6000_long_loan", |b| {
        b.iter(|| long_cf.eval(black_box(6000)).unwrap())
    });
    c.bench_function("stepping_balance_to_k_6000_long_loan", |b| {
        b.iter(|| long.step(black_box(6000)).unwrap()[6000])
    });
    c.bench_function("solve_recurrence_level_loan", |b| {
        b.iter(|| solve_balance(black_box(principal), i, payment).unwrap())
    });
    c.bench_function("payment_for_term_360", |b| {
        b.iter(|| payment_for_term(black_box(principal), i, 360).unwrap())
    });
    c.bench_function("rate_for_payment_360", |b| {
        b.iter(|| rate_for_payment(black_box(principal), payment, 360).unwrap())
    });
    c.bench_function("posted_ledger_360", |b| {
        b.iter(|| {
            post_level(
                black_box(principal),
                i,
                None,
                payment,
                360,
                Currency::USD,
                InterestRounding::HalfUp,
            )
            .unwrap()
        })
    });
    let ledger = post_level(
        principal,
        i,
        None,
        payment,
        360,
        Currency::USD,
        InterestRounding::HalfUp,
    )
    .unwrap();
    c.bench_function("reconcile_360", |b| {
        b.iter(|| reconcile(black_box(&ledger), &cf, Decimal::ONE + i, Currency::USD).unwrap())
    });
    let terms = LoanTerms {
        principal,
        currency: Currency::USD,
        rate: AnnualRate::from_percent(d("7.125")).unwrap(),
        payment_frequency: Frequency::Monthly,
        compounding: None,
        term: LoanTerm::Payments(360),
        payment_rounding: PaymentRounding::Nearest,
        interest_rounding: InterestRounding::HalfUp,
    };
    c.bench_function("loan_schedule_job_360", |b| {
        b.iter(|| schedule(black_box(&terms)).unwrap())
    });

    // Four 30-year plans with extra payments, as a comparison computes them.
    let plans: Vec<(LoanTerms, PlanOptions)> = [150, 250, 400, 600]
        .iter()
        .map(|extra| {
            let o = PlanOptions {
                extras: vec![
                    Extra::Recurring {
                        amount: Decimal::from(*extra),
                        from: 13,
                        to: None,
                        every: 1,
                    },
                    Extra::Lump {
                        amount: d("5000"),
                        at: 36,
                    },
                ],
                property_value: Some(d("320000")),
                ..PlanOptions::default()
            };
            (terms.clone(), o)
        })
        .collect();
    c.bench_function("compare_four_30_year_plans_with_extras", |b| {
        b.iter(|| {
            for (t, o) in &plans {
                black_box(schedule_for_comparison(t, o).unwrap());
            }
        })
    });
    c.bench_function("post_plan_with_extras_360", |b| {
        b.iter(|| post(black_box(&plans[0].0), &plans[0].1, true).unwrap())
    });
    // A 40-year monthly savings plan with deposits growing 3 % a year.
    let savings = SavingsTerms {
        opening_balance: d("5000"),
        currency: Currency::USD,
        rate: AnnualRate::from_percent(d("4.1")).unwrap(),
        frequency: Frequency::Monthly,
        compounding: None,
        timing: Timing::End,
        growth: Some(Growth {
            percent: d("3"),
            every: GrowthEvery::Year,
        }),
        deposit_step: Decimal::ZERO,
        question: Question::FinalBalance {
            flow: Flow::Deposit(d("350")),
            periods: 480,
        },
        start_date: None,
    };
    let solved = savings_plan(&savings).unwrap();
    let form = solved.form.clone();
    c.bench_function("savings_final_balance_closed_form_480", |b| {
        b.iter(|| form.balance_at(black_box(480)).unwrap())
    });
    c.bench_function("savings_posted_ledger_480", |b| {
        b.iter(|| repost(black_box(&solved)).unwrap())
    });
    c.bench_function("savings_plan_job_480_with_ledger", |b| {
        b.iter(|| savings_plan(black_box(&savings)).unwrap())
    });
    let to_goal = SavingsTerms {
        question: Question::PeriodsToGoal {
            deposit: d("350"),
            goal: d("400000"),
        },
        ..savings.clone()
    };
    // The same job without the search, over the number of periods the search finds:
    // the difference of the two is the search itself.
    let found = savings_plan(&to_goal).unwrap().ledger.rows.len() as u32;
    let same_length = SavingsTerms {
        question: Question::FinalBalance {
            flow: Flow::Deposit(d("350")),
            periods: found,
        },
        ..savings.clone()
    };
    c.bench_function("savings_same_plan_without_the_search", |b| {
        b.iter(|| savings_plan(black_box(&same_length)).unwrap())
    });
    c.bench_function("savings_periods_to_goal_growing_job", |b| {
        b.iter(|| savings_plan(black_box(&to_goal)).unwrap())
    });
    // APR (Regulation Z Appendix J): a 360-payment level loan as one run, and 100 irregular flows.
    let advance = [UnitFlow::single(d("245000"), 0, Decimal::ZERO)];
    let level = [UnitFlow::run(payment, 1, Decimal::ZERO, 360)];
    c.bench_function("apr_360_payment_level_loan", |b| {
        b.iter(|| solve_apr(black_box(&advance), &level, UnitPeriod::Month).unwrap())
    });
    let irregular: Vec<UnitFlow> = (1..=100u32)
        .map(|k| {
            UnitFlow::single(
                Decimal::from(2600 + (k * 37) % 500),
                k,
                Decimal::new(i64::from(k % 7), 1),
            )
        })
        .collect();
    c.bench_function("apr_100_irregular_flows", |b| {
        b.iter(|| solve_apr(black_box(&advance), &irregular, UnitPeriod::Month).unwrap())
    });
    c.bench_function("milestone_lookup_80_percent_closed_form", |b| {
        b.iter(|| first_at_or_below(black_box(&cf), d("200000"), 0, 359).unwrap())
    });
    choices(c, &terms);
    adjustable(c, &terms);
}

/// The choices between loans: a 13 × 6 payment grid (goal: at most 50 µs) and a
/// refinance with both break-evens (goal: at most 80 µs).
fn choices(c: &mut Criterion, terms: &LoanTerms) {
    use residue::engine::choices::grid::payment_grid;
    use residue::engine::choices::refinance::{
        current_position, refinance, CurrentLoan, RefinanceCosts,
    };
    let rates: Vec<AnnualRate> = (0..13)
        .map(|k| AnnualRate::from_percent(d("6") + Decimal::new(125 * k, 3)).unwrap())
        .collect();
    let terms_months = [120u32, 180, 240, 300, 360, 480];
    c.bench_function("payment_grid_13_rates_by_6_terms", |b| {
        b.iter(|| {
            payment_grid(
                black_box(&[d("300000")]),
                &rates,
                &terms_months,
                Frequency::Monthly,
                Currency::USD,
                PaymentRounding::Nearest,
            )
            .unwrap()
        })
    });
    let current = CurrentLoan::Original {
        principal: d("240000"),
        rate: AnnualRate::from_percent(d("7.5")).unwrap(),
        term_payments: 360,
        payments_made: 48,
    };
    let new_terms = LoanTerms {
        principal: d("231000"),
        rate: AnnualRate::from_percent(d("6.25")).unwrap(),
        ..terms.clone()
    };
    let costs = RefinanceCosts {
        closing_costs: d("3200"),
        points_percent: d("1"),
        financed_costs: d("2000"),
    };
    c.bench_function("refinance_with_both_break_evens", |b| {
        b.iter(|| {
            let position = current_position(black_box(&current), Currency::USD).unwrap();
            refinance(
                position,
                &new_terms,
                &PlanOptions::default(),
                costs.clone(),
                Some(96),
            )
            .unwrap()
        })
    });
}

/// An adjustable 360-payment loan: the three paths with the disclosure, the
/// projected payments, and the composite path posted for a check with its APR.
fn adjustable(c: &mut Criterion, terms: &LoanTerms) {
    use residue::engine::adjustable::{
        disclose_adjustable, full_payment, AdjustableRate, MortgageInsurance, RateRounding,
    };
    use residue::engine::disclosure::disclose;
    use residue::engine::schedule::scheduled_payments;
    let t = LoanTerms {
        principal: d("300000"),
        rate: AnnualRate::from_percent(d("6")).unwrap(),
        ..terms.clone()
    };
    let o = PlanOptions {
        adjustable: Some(AdjustableRate {
            index_percent: d("4.5"),
            margin_percent: d("2.75"),
            first_change_payment: 61,
            change_every: 12,
            first_change_cap_percent: Some(d("2")),
            periodic_cap_percent: Some(d("2")),
            lifetime_max_percent: d("11"),
            floor_percent: None,
            rounding: RateRounding::NearestEighth,
            payment_cap_percent: None,
        }),
        escrow_monthly: Some(d("410")),
        mortgage_insurance: Some(MortgageInsurance {
            monthly: d("120"),
            payments: Some(84),
        }),
        ..PlanOptions::default()
    };
    c.bench_function("adjustable_360_three_paths_projected_and_apr", |b| {
        b.iter(|| {
            let x = disclose_adjustable(black_box(&t), &o).unwrap();
            let f = full_payment(&t, &o, Some(&x)).unwrap();
            let s = scheduled_payments(&t, &o).unwrap();
            (x, f, disclose(&s, &[]).unwrap().apr)
        })
    });
}

criterion_group! {
    name = engine;
    config = Criterion::default().sample_size(30).measurement_time(std::time::Duration::from_secs(2)).warm_up_time(std::time::Duration::from_millis(500));
    targets = benches
}
criterion_main!(engine);
