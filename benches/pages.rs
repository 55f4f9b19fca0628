//! The 360-payment loan schedule page: reading the query, computing, and rendering
//! the HTML (the budget is 2 ms on the project's machine).
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

criterion_group!(benches, loan_page);
criterion_main!(benches);
