//! `/api`: the API guide. Every operation with a curl example, the money and rate
//! conventions, how to import a CSV address into a spreadsheet, and one section
//! per problem type, whose anchors are the problem type URIs (`/api#problem-<slug>`).

use askama::Template;
use axum::extract::State;
use axum::response::Response;

use super::page::{render, Layout};
use crate::input::problem::ProblemKind;
use crate::state::AppState;

/// One operation of the API.
pub struct Operation {
    pub id: &'static str,
    pub title: &'static str,
    pub method_path: &'static str,
    pub words: &'static str,
    /// curl command lines, with `{base}` replaced by the server's address.
    pub examples: Vec<String>,
    /// The page that shows the same result, if any.
    pub page: &'static str,
}

/// One problem type.
pub struct ProblemSection {
    /// The anchor: `problem-<slug>`.
    pub anchor: String,
    pub type_uri: String,
    pub title: &'static str,
    pub status: u16,
    pub words: &'static str,
}

/// The API guide page.
#[derive(Template)]
#[template(path = "api_guide.html")]
pub struct ApiGuidePage {
    pub layout: Layout,
    /// The address curl examples use (from the request's Host).
    pub base: String,
    pub operations: Vec<Operation>,
    pub problems: Vec<ProblemSection>,
}

/// What each problem means and what to do about it.
pub fn problem_words(kind: ProblemKind) -> &'static str {
    match kind {
        ProblemKind::MalformedJson => "The body could not be read as JSON (a missing brace, a stray comma, text that is not UTF-8). Nothing was computed. Check the body with a JSON validator and send it again.",
        ProblemKind::MalformedQuery => "The query string could not be read: it is longer than 16 KiB, or a parameter is not valid UTF-8 once percent-decoded.",
        ProblemKind::InvalidFields => "One or more fields are missing, unknown, or out of range. `errors` lists each one: `pointer` is a JSON Pointer into the body (`/principal`, `/variants/1/term_months`) or the query parameter's name, and `message` says what is wrong. Every bad field is reported at once.",
        ProblemKind::NoSolution => "The terms are valid but have no answer: a payment that never repays the loan (it does not cover the first period's interest), a goal that the deposits never reach, a rate that no root finder can bracket. The pointer names the field to change.",
        ProblemKind::Overflow => "A figure leaves the range of 28-digit decimal arithmetic (very long terms at very high rates). Residue refuses rather than round silently.",
        ProblemKind::UnsupportedMediaType => "A POST body must be sent as `application/json` (or a `+json` type).",
        ProblemKind::TooLarge => "The body is larger than the server accepts (1 MiB by default, `--max-body-bytes`).",
        ProblemKind::NotFound => "No page or operation has this address. The operations are listed on this page.",
        ProblemKind::MethodNotAllowed => "The address exists but not with this method: the operations take GET (query parameters) or POST (a JSON body) as listed here.",
        ProblemKind::NotAcceptable => "No representation matches the Accept header (406). Ask for `application/json` or, where a table is offered as CSV, `text/csv` (or leave Accept out).",
        ProblemKind::Overloaded => "More requests are being computed than the server allows at once (`--max-in-flight`). Retry after the `Retry-After` seconds.",
        ProblemKind::Timeout => "The request took longer than the server's limit (`--request-timeout-secs`). Retry after the `Retry-After` seconds, or ask for less.",
        ProblemKind::BodyTimeout => "The request's body did not arrive whole within the server's limit (`--request-timeout-secs`): the client paused or sent it too slowly (408). Nothing was computed. Send the body whole, at once, and try again. A batch has already begun its answer by then: its stream ends with a line holding this problem instead, after the answers to the lines that arrived.",
        ProblemKind::Internal => "Something went wrong inside the service. The answer says no more than that; the server's log has the request id (`x-request-id`).",
    }
}

fn operations(base: &str) -> Vec<Operation> {
    let ex = |lines: &[&str]| -> Vec<String> {
        lines.iter().map(|l| l.replace("{base}", base)).collect()
    };
    vec![
        Operation {
            id: "schedule",
            title: "A loan's schedule",
            method_path: "GET or POST /api/v1/loans/schedule (CSV: /api/v1/loans/schedule.csv)",
            words: "The payment for a term (term_months or term_payments), or the number of payments for a payment; the posted schedule, the derivation, the reconciliation and notes. Plans that change over time take funding_date, first_payment_date, day_count, odd_days_interest, extra_payments, interest_only_payments, balloon_after_payments, rate_changes, rate_change_keeps and property_value. An adjustable-rate loan takes adjustable (index_percent, margin_percent, first_change_payment, change_every, first_change_cap_percent, periodic_cap_percent, lifetime_max_percent, floor_percent, rounding, payment_cap_percent; in a query as KEY:VALUE pairs or adjustable.NAME) with annual_rate_percent as the initial rate, and rate_path (composite, highest, lowest, index_values with index_values); its answer adds adjustable_summary, rate_table, program_example, underwriting, rate_paths and projected_payments. Any loan takes escrow_monthly, mortgage_insurance_monthly and mortgage_insurance_payments for the full monthly payment.",
            examples: ex(&[
                "curl '{base}/api/v1/loans/schedule?principal=250000&annual_rate_percent=7.125&term_months=360'",
                "curl '{base}/api/v1/loans/schedule?principal=300000&annual_rate_percent=6&term_months=360&adjustable=index:4.5,margin:2.75,first_change:61,every:12,first_cap:2,cap:2,max:11,rounding:nearest_eighth&escrow_monthly=410'",
                "curl -H 'content-type: application/json' -d '{\"principal\":\"250000\",\"annual_rate_percent\":\"7.125\",\"term_months\":360,\"extra_payments\":[{\"amount\":\"150\",\"from\":13}]}' {base}/api/v1/loans/schedule",
                "curl '{base}/api/v1/loans/schedule.csv?principal=14750&annual_rate_percent=8.9&term_months=60'",
            ]),
            page: "/loan",
        },
        Operation {
            id: "compare",
            title: "Comparing plans",
            method_path: "GET or POST /api/v1/loans/compare (CSV: /api/v1/loans/compare.csv)",
            words: "Up to four plans: a base and variants that change some of its fields. In a query, one field may list values separated by commas, each making one plan; the first is the base. Each row gives payment, number_of_payments, total_interest, total_paid, payoff_date, interest_saved and payments_saved against the base. Every plan is in the base's currency (a variant in another is refused); payments_saved is null (an empty CSV cell) for a plan paid at another frequency than the base, whose payments are not alike.",
            examples: ex(&[
                "curl '{base}/api/v1/loans/compare?principal=278000&annual_rate_percent=6.375&term_months=180,240,360'",
                "curl -H 'content-type: application/json' -d '{\"base\":{\"principal\":\"278000\",\"annual_rate_percent\":\"6.375\",\"term_months\":360},\"variants\":[{\"label\":\"20 years\",\"term_months\":240}]}' {base}/api/v1/loans/compare",
            ]),
            page: "/compare",
        },
        Operation {
            id: "refinance",
            title: "Does refinancing pay",
            method_path: "GET or POST /api/v1/refinance (CSV: /api/v1/refinance.csv)",
            words: "The current loan (paid monthly) as current: {balance, annual_rate_percent, remaining_payments} or {principal, annual_rate_percent, term_months, payments_made} (then the balance is the posted ledger's after that payment, with the closed form's beside it); the new loan as new: the schedule's fields, its principal by default the balance + financed_costs + cash_out; and closing_costs, points_percent (negative: a lender credit), financed_costs, cash_out and horizon_months at the top. In a query the current loan's fields are current.NAME and the new loan's are the schedule's own names. The answer: current_payment, new_payment, monthly_change, break_even_months (costs ÷ monthly saving, rounded up; null when the new payment is not lower), break_even_months_with_balances (the first month by which the new loan has cost no more, each way's cost being the cash paid at closing, the payments made and the balance still owed), costs_more_again_from_month, each way's cost at 60, 84 and 120 months, the chosen horizon and to the end, \"In 5 years\" (§1026.37(l)(1)) for both, and the derivation.",
            examples: ex(&[
                "curl '{base}/api/v1/refinance?current.balance=187500&current.annual_rate_percent=7.25&current.remaining_payments=312&annual_rate_percent=6.125&term_months=360&closing_costs=3200&points_percent=1'",
                "curl -H 'content-type: application/json' -d '{\"current\":{\"principal\":\"240000\",\"annual_rate_percent\":\"7.5\",\"term_months\":360,\"payments_made\":48},\"new\":{\"annual_rate_percent\":\"6.25\",\"term_months\":300},\"closing_costs\":\"3200\",\"financed_costs\":\"3200\"}' {base}/api/v1/refinance",
            ]),
            page: "/refinance",
        },
        Operation {
            id: "options",
            title: "Rate and points",
            method_path: "GET or POST /api/v1/loans/options (CSV: /api/v1/loans/options.csv)",
            words: "One loan (the schedule's fields without a rate) and options, two to six of {label, annual_rate_percent, points_percent, other_costs}; in a query each option's fields repeat in order as option_label, option_rate_percent, option_points_percent and option_other_costs. For each option: payment, upfront_cost, monthly_difference against the first, break_even_months and break_even_months_with_balances (the months for the option that costs more upfront to recover the difference), and its cost at 60, 84 and 120 months, horizon_months and the end. Then cheapest (the least cost at each horizon) and cheapest_changes (the months at which the cheapest option changes). The CSV has one row an option and horizon.",
            examples: ex(&[
                "curl '{base}/api/v1/loans/options?principal=200000&term_months=360&option_label=Par&option_rate_percent=6.75&option_label=Two%20points&option_rate_percent=6.25&option_points_percent=2'",
            ]),
            page: "/options",
        },
        Operation {
            id: "grid",
            title: "A payment grid",
            method_path: "GET /api/v1/loans/grid (CSV: /api/v1/loans/grid.csv)",
            words: "principal (one amount or several, comma-separated), rates (a list 6.25,6.5 or a range with a step 6.000..7.500/0.125, both ends included) and terms in months (comma-separated); payment_frequency and currency as for a schedule. Each cell gives the payment (rounded to the cent as a schedule rounds it) and per_thousand, the payment per 1,000 borrowed: the factor per 1 rounded up to five places, times 1,000, as the factor tables of 7 CFR 1942.19 print it. At most 2,000 cells.",
            examples: ex(&[
                "curl '{base}/api/v1/loans/grid.csv?principal=300000&rates=6.000..7.500/0.125&terms=180,240,360'",
            ]),
            page: "/grid",
        },
        Operation {
            id: "check",
            title: "Checking a quote",
            method_path: "GET or POST /api/v1/loans/check",
            words: "A quoted payment, APR and finance charge against the posted loan: the implied rate, the APR tolerance of 12 CFR 1026.22(a)(2)–(3) and the finance-charge tolerance of §1026.18(d), with the disclosure figures. Prepaid finance charges go in as prepaid_finance_charges=name:amount,… in a query.",
            examples: ex(&[
                "curl '{base}/api/v1/loans/check?principal=250000&annual_rate_percent=7.125&term_months=360&quoted_payment=1684.30&quoted_apr_percent=7.25&prepaid_finance_charges=origination:2500'",
            ]),
            page: "/check",
        },
        Operation {
            id: "apr",
            title: "The APR of any stream of flows",
            method_path: "GET or POST /api/v1/apr",
            words: "The annual percentage rate of advances and payments, dated or in unit-periods, by the actuarial method of Regulation Z Appendix J (method=us_actuarial, the default) or as the EU APRC (method=eu_aprc).",
            examples: ex(&[
                "curl '{base}/api/v1/apr?advance=5000@1978-01-10&payment=230x24@1978-02-10/monthly'",
                "curl '{base}/api/v1/apr?unit_period=month&advance=6000@0&payment=200x36@1+19/30'",
            ]),
            page: "",
        },
        Operation {
            id: "apy",
            title: "The annual percentage yield",
            method_path: "GET or POST /api/v1/apy",
            words: "The APY of Regulation DD Appendix A, in one of three forms: principal, interest and days; a nominal rate and its compounding; or the interest earned on an average daily balance over a statement period.",
            examples: ex(&[
                "curl '{base}/api/v1/apy?annual_rate_percent=5&compounding=daily'",
                "curl '{base}/api/v1/apy?principal=1000&interest=30.37&days=182'",
            ]),
            page: "",
        },
        Operation {
            id: "savings",
            title: "A savings plan",
            method_path: "GET or POST /api/v1/savings/plan (CSV: /api/v1/savings/plan.csv)",
            words: "Deposits (or withdrawals) with an opening balance, deposits that may grow by a percentage or a fixed step each year; what is solved follows from what is given: the final balance, the deposit that reaches a goal, when the goal is reached, or how long a drawdown lasts.",
            examples: ex(&[
                "curl '{base}/api/v1/savings/plan?deposit=300&annual_rate_percent=4&term_months=120'",
                "curl '{base}/api/v1/savings/plan.csv?opening_balance=1000&deposit=250&deposit_growth_percent=3&annual_rate_percent=4.5&goal=50000'",
            ]),
            page: "/savings",
        },
        Operation {
            id: "recurrence",
            title: "Any first-order recurrence",
            method_path: "POST /api/v1/recurrence",
            words: "The method laid bare: x[k+1] = a·x[k] + f[k] with inputs that are sums of impulses, steps, geometric sequences and ramps, solved in closed form and evaluated at the k you ask for, with the transform, poles and partial fractions.",
            examples: ex(&[
                "curl -H 'content-type: application/json' -d '{\"a\":\"1.005\",\"x0\":\"100000\",\"inputs\":[{\"kind\":\"step\",\"amount\":\"-599.55\"}],\"evaluate_at\":[0,12,360]}' {base}/api/v1/recurrence",
            ]),
            page: "/about",
        },
        Operation {
            id: "checks",
            title: "A pipeline of quotes from a CSV file",
            method_path: "POST /api/v1/loans/checks (Content-Type: text/csv)",
            words: "A file of quotes, one a row, checked at once: RFC 4180 CSV in UTF-8 (a byte-order mark is skipped), comma or semicolon separated (the header row decides), with a header row. The columns are id (required; echoed in each verdict) and the check's own fields with their query-string names and values (prepaid_finance_charges as origination:1250.00,points:2500), or one column a charge named prepaid_finance_charges.NAME. An empty cell is a field not given. An unknown or repeated column, or no id, refuses the whole file with 422 before any row, the detail listing the known columns. Numbers are read as in the JSON API; in a quoted cell, commas between groups of three digits are thousands separators in a comma-separated file, and in a semicolon-separated one only before a decimal point (1,684.30). The verdicts stream back in the rows' order, as CSV (the default) or NDJSON (Accept: application/x-ndjson): id, line (where the row starts; the header is line 1), status (ok, differs or error), the computed and quoted payment and their difference, the APR and its difference and tolerance, the finance charge and its tolerance, a short reason, and check_url, the row's single check. A bad row fails alone, with each field's error. A text cell a spreadsheet would take for a formula starts with '. The residue-rows header gives the number of rows, for a progress bar. Up to 100,000 rows and 32 MiB (413 past either); 120 s of computing, after which a last row says how many rows were answered; a client that goes away stops the work. Nothing is stored. The page /pipeline does the same with a file or pasted rows.",
            examples: ex(&[
                "printf 'id,principal,annual_rate_percent,term_months,quoted_payment,quoted_apr_percent\\nWren-12,246113,6.7,360,1588.11,6.7\\n' > quotes.csv",
                "curl -H 'content-type: text/csv' --data-binary @quotes.csv {base}/api/v1/loans/checks",
            ]),
            page: "/pipeline",
        },
        Operation {
            id: "batch",
            title: "Many jobs in one request",
            method_path: "POST /api/v1/batch (Content-Type: application/x-ndjson)",
            words: "One job a line, as NDJSON: {\"id\": any JSON value (required; echoed exactly as sent), \"job\": loan_schedule, loan_check, apr, apy or savings_plan, \"request\": the operation's JSON body, \"detail\": summary (the default: a schedule or savings plan without its rows and derivation, only the summary and notes; a check without its table of disclosure rounding) or full (the whole answer, as the operation gives it)}. The answer streams back as NDJSON in the same order, one line a job: {\"id\", \"ok\": true, \"result\"} or {\"id\", \"ok\": false, \"problem\"}, the problem's pointers relative to the line's request. A bad line fails alone, a line longer than 64 KiB too (answered as too large, its bytes dropped as they arrive). Up to 100,000 lines (a 100,001st line ends the batch: the answer has begun with 200, so that limit is told in its last line, a problem with a null id); two batches are computed at once, a third is answered 503 with Retry-After. A batch gives at most 512 MiB of answers and computes for at most 300 s: each line past either gets a problem line naming the limit (too-large or timeout), so send the rest as another batch. A body that breaks off (a malformed chunk, a closed connection) ends the answer with a problem line saying after which line. Memory stays bounded whatever the lines ask: answers are handed on in chunks of about 64 KiB, and a line is computed only when the client has read what came before.",
            examples: ex(&[
                "printf '%s\\n' '{\"id\":1,\"job\":\"loan_check\",\"request\":{\"principal\":\"246113\",\"annual_rate_percent\":\"6.7\",\"term_months\":360}}' '{\"id\":2,\"job\":\"apy\",\"request\":{\"annual_rate_percent\":\"5\",\"compounding\":\"daily\"}}' > jobs.ndjson",
                "curl -H 'content-type: application/x-ndjson' --data-binary @jobs.ndjson {base}/api/v1/batch",
            ]),
            page: "",
        },
        Operation {
            id: "operations",
            title: "Health, readiness and metrics",
            method_path: "GET /healthz, GET /readyz and GET /metrics",
            words: "/healthz answers {\"status\": \"ok\"} while the process runs, until it exits. /readyz answers {\"status\": \"ready\"} while the service takes new work, and 503 from the moment a shutdown signal arrives (the requests in flight still finish; with --shutdown-delay-secs the service goes on answering that long first), so a load balancer moves traffic away. /metrics gives the Prometheus text format: requests and latencies per route, problems by type, batch lines and answers served from the answer store. None of them counts against the in-flight limit.",
            examples: ex(&["curl {base}/healthz", "curl {base}/readyz", "curl {base}/metrics"]),
            page: "",
        },
    ]
}

/// Builds the guide, its examples addressed to `base` (the configured public
/// address: never a request's Host header, which any client can set).
pub fn build(base: &str) -> ApiGuidePage {
    let base = base.trim_end_matches('/').to_string();
    ApiGuidePage {
        layout: Layout::new("The API guide", "/api"),
        operations: operations(&base),
        base,
        problems: ProblemKind::ALL
            .iter()
            .map(|k| ProblemSection {
                anchor: format!("problem-{}", k.slug()),
                type_uri: k.type_uri(),
                title: k.title(),
                status: k.status().as_u16(),
                words: problem_words(*k),
            })
            .collect(),
    }
}

/// `GET /api`
pub async fn page(State(state): State<AppState>) -> Response {
    render(&build(&state.config.public_url()))
}
