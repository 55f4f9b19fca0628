//! The payment grid: `GET /api/v1/loans/grid` and `/api/v1/loans/grid.csv`.

use rust_decimal::Decimal;
use serde_json::Value;

use super::{
    array, assert_cautioned, cell_text, csv_records, level_payment, per_thousand, GRID, GRID_CSV,
    GRID_QUERY,
};
use crate::helpers::{
    assert_field_problem, assert_refusals, dec, dec_of, shared_app, Ask, Refusal,
};

const GRID_TERMS: [u32; 5] = [120, 180, 240, 300, 360];
const GRID_HEADER: &str = "principal,annual_rate_percent,term_months,payment,per_thousand";

fn cells(g: &Value) -> &Vec<Value> {
    array(g, "cells")
}

#[test]
fn a_grid_of_one_principal_thirteen_rates_and_five_terms_has_sixty_five_cells_in_order() {
    // Arrange
    let app = shared_app();

    // Act
    let g = app.get_ok(&format!("{GRID}?{GRID_QUERY}"));

    // Assert
    assert_cautioned(&g);
    assert_eq!(g["currency"], "USD");
    assert_eq!(g["payment_frequency"], "monthly");
    let cells = cells(&g);
    assert_eq!(
        cells.len(),
        13 * 5,
        "6.000 to 7.500 by 0.125 is 13 rates, both ends included"
    );
    let mut walk = cells.iter();
    for k in 0..13u32 {
        let rate = dec("6") + dec("0.125") * Decimal::from(k);
        for term in GRID_TERMS {
            let cell = walk.next().expect("a cell for each rate and term");
            assert_eq!(cell["principal"], "300000.00", "{cell}");
            assert_eq!(cell["annual_rate_percent"], format!("{rate:.3}"), "{cell}");
            assert_eq!(cell["term_months"], term, "{cell}");
            assert_eq!(
                dec_of(&cell["payment"]),
                level_payment(dec("300000"), rate, term),
                "{cell}"
            );
            assert_eq!(
                dec_of(&cell["per_thousand"]),
                per_thousand(rate, term),
                "{cell}"
            );
        }
    }
    // 300,000 · 0.005 / (1 − 1.005^−360) = 1798.65 (common practice, no source); its
    // factor .0059955… rounds up to .00600.
    assert_eq!(cells[4]["payment"], "1798.65");
    assert_eq!(cells[4]["per_thousand"], "6.00");
    // At 7.5 % over 360 months: 2097.6435… (common practice, no source).
    assert_eq!(cells[64]["payment"], "2097.64");
}

#[test]
fn the_payment_per_thousand_is_the_factor_rounded_up_as_7_cfr_1942_19_prints_it() {
    // Arrange
    let app = shared_app();
    // 7 CFR 1942.19(e)(2): a $100,000 loan at 5 % over 38 years (456 months); the
    // factor per $1 is .05929 with annual payments, .02952 with semiannual and
    // .00491 with monthly ones.
    let published = [
        ("annual", "59.29"),
        ("semiannual", "29.52"),
        ("monthly", "4.91"),
    ];

    for (frequency, printed) in published {
        // Act
        let g = app.get_ok(&format!(
            "{GRID}?principal=100000&rates=5&terms=456&payment_frequency={frequency}"
        ));

        // Assert
        assert_cautioned(&g);
        assert_eq!(g["payment_frequency"], frequency);
        let cell = &cells(&g)[0];
        assert_eq!(cell["per_thousand"], printed, "{frequency}: {cell}");
        assert_eq!(cell["annual_rate_percent"], "5.000", "{cell}");
        assert_eq!(cell["term_months"], 456, "{cell}");
        // Multiplied out for 100 thousands, the factor rounded up gives no less than
        // the payment and less than 100 × 0.01 more (the payment itself is rounded
        // to the cent).
        let payment = dec_of(&cell["payment"]);
        let multiplied = dec_of(&cell["per_thousand"]) * dec("100");
        assert!(
            (payment - dec("0.005")..payment + dec("1.005")).contains(&multiplied),
            "{frequency}: {multiplied} against {payment}"
        );
    }
}

#[test]
fn a_grid_lists_principals_then_rates_then_terms_in_the_order_given() {
    // Arrange
    let app = shared_app();

    // Act
    let g = app.get_ok(&format!(
        "{GRID}?principal=300000,250000&rates=6.5,6&terms=360,180"
    ));

    // Assert
    assert_cautioned(&g);
    let order: Vec<(String, String, u64)> = cells(&g)
        .iter()
        .map(|c| {
            (
                cell_text(&c["principal"]),
                cell_text(&c["annual_rate_percent"]),
                c["term_months"].as_u64().expect("a whole term"),
            )
        })
        .collect();
    let mut want: Vec<(String, String, u64)> = Vec::new();
    for principal in ["300000.00", "250000.00"] {
        for rate in ["6.500", "6.000"] {
            for term in [360, 180] {
                want.push((principal.to_string(), rate.to_string(), term));
            }
        }
    }
    assert_eq!(order, want);
}

#[test]
fn a_grid_as_csv_by_suffix_or_by_accept_has_the_caution_header_and_one_row_a_cell() {
    // Arrange
    let app = shared_app();
    let g = app.get_ok(&format!("{GRID}?{GRID_QUERY}"));

    // Act
    let by_suffix = app.get(&format!("{GRID_CSV}?{GRID_QUERY}"));
    let by_accept = app.get_with(&format!("{GRID}?{GRID_QUERY}"), &[("Accept", "text/csv")]);

    // Assert
    for r in [&by_suffix, &by_accept] {
        let records = csv_records(r, GRID_HEADER);
        assert_eq!(records.len(), 1 + 65, "a header and one row a cell");
        for (record, cell) in records[1..].iter().zip(cells(&g)) {
            let want = [
                "principal",
                "annual_rate_percent",
                "term_months",
                "payment",
                "per_thousand",
            ]
            .map(|k| cell_text(&cell[k]))
            .join(",");
            assert_eq!(*record, want);
        }
    }
    assert_eq!(by_suffix.text(), by_accept.text());
}

#[test]
fn a_grid_of_exactly_two_thousand_cells_is_answered_and_one_of_2001_is_refused() {
    // Arrange
    let app = shared_app();
    let years = |n: u32| {
        (1..=n)
            .map(|y| (12 * y).to_string())
            .collect::<Vec<_>>()
            .join(",")
    };

    // Act: 1 × 100 × 20 = 2,000 cells (6.00 to 6.99 by 0.01 is 100 rates), then
    // 1 × 87 × 23 = 2,001 (6.00 to 6.86 by 0.01 is 87 rates).
    let most = app.get_ok(&format!(
        "{GRID}?principal=250000&rates=6.00..6.99/0.01&terms={}",
        years(20)
    ));
    let one_more = app.get(&format!(
        "{GRID}?principal=250000&rates=6.00..6.86/0.01&terms={}",
        years(23)
    ));

    // Assert
    assert_cautioned(&most);
    assert_eq!(cells(&most).len(), 2000);
    let p = assert_field_problem(&one_more, 422, "invalid-fields", "rates");
    assert!(
        p["errors"][0]["message"]
            .as_str()
            .is_some_and(|m| m.contains("2001 cells")),
        "{p}"
    );
}

#[test]
fn bad_grid_requests_are_refused_naming_the_field() {
    // Arrange
    let app = shared_app();
    let twenty = (0..20)
        .map(|k| (100_000 + 10_000 * k).to_string())
        .collect::<Vec<_>>()
        .join(",");
    let grid = |query: &str| Ask::Get(format!("{GRID}?{query}"));
    let cases = [
        Refusal::invalid(grid("principal=300000&rates=6..7/0&terms=360"), "rates").saying("step"),
        Refusal::invalid(grid("principal=300000&rates=6..7/-0.5&terms=360"), "rates")
            .saying("step"),
        // 20 amounts × 151 rates (6.00 to 7.50 by 0.01) × 1 term.
        Refusal::invalid(
            grid(&format!("principal={twenty}&rates=6..7.5/0.01&terms=360")),
            "rates",
        )
        .saying("3020 cells"),
        Refusal::invalid(grid("rates=6..7/0.5&terms=360"), "principal").saying("is required"),
        Refusal::invalid(grid("principal=-5&rates=6&terms=360"), "principal"),
        Refusal::invalid(grid("principal=300000&terms=360"), "rates").saying("is required"),
        Refusal::invalid(grid("principal=300000&rates=7..6/0.5&terms=360"), "rates")
            .saying("below its start"),
        Refusal::invalid(grid("principal=300000&rates=6..7&terms=360"), "rates")
            .saying("needs a step"),
        Refusal::invalid(grid("principal=300000&rates=6..7/0.5"), "terms").saying("is required"),
        Refusal::invalid(
            grid("principal=300000&rates=6..7/0.5&terms=360,abc"),
            "terms",
        )
        .saying("abc"),
        Refusal::invalid(grid("principal=300000&rates=6..7/0.5&terms=0"), "terms"),
        Refusal::invalid(
            grid("principal=300000&rates=6&terms=360&payment_frequency=daily"),
            "payment_frequency",
        ),
        Refusal::invalid(
            grid("principal=300000&rates=6&terms=360&colour=red"),
            "colour",
        ),
        Refusal::invalid(
            Ask::Get(format!(
                "{GRID_CSV}?principal=300000&rates=6..7/0&terms=360"
            )),
            "rates",
        ),
    ];

    // Act and assert
    assert_refusals(&app, &cases);
}
