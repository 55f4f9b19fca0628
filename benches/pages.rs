//! The 360-payment loan schedule page: reading the query, computing, and rendering
//! the HTML (the issue's budget is 2 ms on the project's machine).
//!
//!     cargo bench --bench pages

use askama::Template;
use criterion::{criterion_group, criterion_main, Criterion};

const LOAN: &str = "principal=250000&annual_rate_percent=7.125&term_months=360";

fn loan_page(c: &mut Criterion) {
    c.bench_function("loan page, 360 payments: compute and render", |b| {
        b.iter(|| {
            let page = residue::web::loan::build(Some(std::hint::black_box(LOAN)));
            page.render().expect("the page renders")
        })
    });
    let page = residue::web::loan::build(Some(LOAN));
    c.bench_function("loan page, 360 payments: render only", |b| {
        b.iter(|| page.render().expect("the page renders"))
    });
    c.bench_function("compare page, three plans: compute and render", |b| {
        b.iter(|| {
            let page = residue::web::compare::build(Some(std::hint::black_box(
                "principal=278000&annual_rate_percent=6.375&term_months=180,240,360",
            )));
            page.render().expect("the page renders")
        })
    });
}

/// One batch line of a level-payment loan check (payment and APR), read, computed
/// and written, as the batch answers it (the load script's lines look like it),
/// and the 360-payment JSON schedule answer as the API writes it.
fn api_answers(c: &mut Criterion) {
    let line = br#"{"id":7,"job":"loan_check","request":{"principal":"246113","annual_rate_percent":"6.7","term_months":360}}"#;
    c.bench_function("batch line: a 360-payment loan check", |b| {
        b.iter(|| residue::api::batch::answer_line(std::hint::black_box(line), 7))
    });
    let pairs: Vec<(String, String)> = form_urlencoded::parse(LOAN.as_bytes())
        .into_owned()
        .collect();
    c.bench_function("360-payment JSON schedule: read, compute, write", |b| {
        b.iter(|| {
            let fields = residue::input::fields::Fields::new(
                residue::input::fields::Source::Query(std::hint::black_box(&pairs)),
            );
            let r = residue::input::loan::schedule_request_from(fields).expect("valid");
            let s = residue::engine::schedule::schedule_with(&r.terms, &r.options).expect("solved");
            residue::api::loans::LoanScheduleDto::answer_json(&s)
        })
    });
}

criterion_group!(benches, loan_page, api_answers);
criterion_main!(benches);
