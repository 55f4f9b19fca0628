//! Every demo scenario is listed, parses, and computes.

use residue::api::fields::{Fields, Source};
use residue::api::loans::loan_terms_from;
use residue::engine::schedule::schedule;
use residue::web::scenarios::{all, FILES};

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
fn every_loan_scenario_computes_a_schedule_that_repays() {
    for s in all().unwrap() {
        assert_eq!(s.job, "loan_schedule", "{}", s.id);
        let terms = loan_terms_from(Fields::new(Source::Json {
            members: &s.request,
            pointer: "",
        }))
        .unwrap_or_else(|e| panic!("{}: {e:?}", s.id));
        let result = schedule(&terms).unwrap_or_else(|e| panic!("{}: {e}", s.id));
        assert!(
            result.ledger.rows.last().unwrap().balance.is_zero(),
            "{}",
            s.id
        );
        assert!(result.notes[0].contains("not an offer"), "{}", s.id);
    }
}
