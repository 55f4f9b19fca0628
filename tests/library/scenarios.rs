//! Every demo scenario is listed, parses, covers the four jobs, and computes
//! through its job's reader and engine call with the query the home page links.

use residue::answer::check::check_answer;
use residue::answer::compare;
use residue::engine::savings::plan;
use residue::engine::schedule::{schedule_with, LoanSchedule};
use residue::input::fields::{Fields, Source};
use residue::input::http::query_pairs;
use residue::input::loan::schedule_request_from;
use residue::input::savings::savings_terms_from;
use residue::web::scenarios::{all, Scenario, FILES};

const JOBS: [&str; 4] = [
    "loan_schedule",
    "loan_compare",
    "loan_check",
    "savings_plan",
];

/// The scenario's request as the query pairs of its link on the home page.
fn pairs(s: &Scenario) -> Vec<(String, String)> {
    query_pairs(Some(&s.query())).unwrap_or_else(|e| panic!("{}: {e:?}", s.id))
}

fn field<'a>(s: &'a Scenario, name: &str) -> Option<&'a residue::input::json::Json> {
    s.request.iter().find(|(k, _)| k == name).map(|(_, v)| v)
}

fn has_caution(notes: &[String]) -> bool {
    notes
        .first()
        .is_some_and(|n| n.contains("not an offer") && n.starts_with("Estimates for discussion"))
}

fn repays(id: &str, s: &LoanSchedule) {
    let last = s
        .ledger
        .rows
        .last()
        .unwrap_or_else(|| panic!("{id}: no rows"));
    assert!(last.balance.is_zero(), "{id}: ends at {}", last.balance);
    assert!(has_caution(&s.notes), "{id}: {:?}", s.notes);
}

#[test]
fn every_file_in_demo_scenarios_is_compiled_in() {
    let mut on_disk: Vec<String> =
        std::fs::read_dir(concat!(env!("CARGO_MANIFEST_DIR"), "/demo-scenarios"))
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .filter(|n| n.ends_with(".json"))
            .collect();
    on_disk.sort();
    let mut listed: Vec<String> = FILES.iter().map(|(n, _)| n.to_string()).collect();
    listed.sort();
    assert_eq!(on_disk, listed);
}

#[test]
fn there_are_at_least_six_scenarios_covering_every_job_with_unique_ids() {
    let all = all().unwrap();
    assert!(all.len() >= 6, "{}", all.len());
    for job in JOBS {
        assert!(all.iter().any(|s| s.job == job), "no scenario for {job}");
    }
    let mut ids: Vec<&str> = all.iter().map(|s| s.id.as_str()).collect();
    ids.sort_unstable();
    ids.dedup();
    assert_eq!(ids.len(), all.len(), "scenario ids repeat");
    for (name, _) in FILES {
        let s = all.iter().find(|s| format!("{}.json", s.id) == name);
        assert!(s.is_some(), "{name}: the id is not the file name");
    }
    for s in &all {
        assert!(JOBS.contains(&s.job.as_str()), "{}: job {}", s.id, s.job);
        assert!(
            !s.title.trim().is_empty() && !s.story.trim().is_empty(),
            "{}",
            s.id
        );
    }
}

#[test]
fn the_scenarios_the_issue_asks_for_are_there() {
    let all = all().unwrap();
    let find = |id: &str| {
        all.iter()
            .find(|s| s.id == id)
            .unwrap_or_else(|| panic!("no scenario {id}"))
    };
    let home = find("first-home-three-terms");
    assert_eq!(home.job, "loan_compare");
    assert_eq!(
        pairs(home)
            .iter()
            .find(|(k, _)| k == "term_months")
            .map(|(_, v)| v.as_str()),
        Some("180,240,360")
    );
    let car = find("used-car-odd-first-period");
    assert!(field(car, "funding_date").is_some() && field(car, "first_payment_date").is_some());
    assert!(field(find("bakery-balloon"), "balloon_after_payments").is_some());
    let growing = find("member-savings-growing");
    assert_eq!(growing.job, "savings_plan");
    assert!(field(growing, "deposit_growth_percent").is_some());
    let drawdown = find("retiree-drawdown");
    assert_eq!(drawdown.job, "savings_plan");
    assert!(field(drawdown, "withdrawal").is_some());
    let quote = find("quote-to-check");
    assert_eq!(quote.job, "loan_check");
    for name in [
        "quoted_payment",
        "quoted_apr_percent",
        "prepaid_finance_charges",
    ] {
        assert!(field(quote, name).is_some(), "quote-to-check needs {name}");
    }
}

#[test]
fn every_scenario_computes_through_its_jobs_reader_and_engine() {
    for s in all().unwrap() {
        let q = pairs(&s);
        let id = s.id.as_str();
        match s.job.as_str() {
            "loan_schedule" => {
                let r = schedule_request_from(Fields::new(Source::Query(&q)))
                    .unwrap_or_else(|e| panic!("{id}: {e:?}"));
                let result =
                    schedule_with(&r.terms, &r.options).unwrap_or_else(|e| panic!("{id}: {e}"));
                repays(id, &result);
                if field(&s, "balloon_after_payments").is_some() {
                    assert!(result.plan.balloon.is_some(), "{id}: no balloon");
                }
                if field(&s, "funding_date").is_some() {
                    assert!(
                        result.plan.odd_days > 0,
                        "{id}: the first period is not odd"
                    );
                }
            }
            "loan_compare" => {
                let c = compare::from_query(&q).unwrap_or_else(|e| panic!("{id}: {e:?}"));
                assert!(c.plans.len() >= 2, "{id}: {} plans", c.plans.len());
                for (label, plan) in &c.plans {
                    repays(&format!("{id} ({label})"), plan);
                }
            }
            "loan_check" => {
                let a = check_answer(Fields::new(Source::Query(&q)))
                    .unwrap_or_else(|e| panic!("{id}: {e:?}"));
                assert!(a.payment_matches.is_some(), "{id}: no payment quoted");
                assert!(a.apr_within_tolerance.is_some(), "{id}: no APR quoted");
                assert!(
                    !a.prepaid_finance_charges.is_empty(),
                    "{id}: no prepaid finance charge"
                );
                assert!(has_caution(&a.notes), "{id}: {:?}", a.notes);
            }
            "savings_plan" => {
                let terms = savings_terms_from(Fields::new(Source::Query(&q)))
                    .unwrap_or_else(|e| panic!("{id}: {e:?}"));
                let p = plan(&terms).unwrap_or_else(|e| panic!("{id}: {e}"));
                assert!(!p.ledger.rows.is_empty(), "{id}: no periods");
                assert!(has_caution(&p.notes), "{id}: {:?}", p.notes);
                if field(&s, "withdrawal").is_some() {
                    assert!(
                        p.ledger.total_withdrawn > rust_decimal::Decimal::ZERO,
                        "{id}"
                    );
                } else {
                    assert!(p.ledger.final_balance > rust_decimal::Decimal::ZERO, "{id}");
                }
            }
            other => panic!("{id}: unknown job {other}"),
        }
    }
}
