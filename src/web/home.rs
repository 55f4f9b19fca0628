//! `/`: the four jobs and the demo scenarios, each one click away.

use askama::Template;
use axum::response::Response;

use super::page::{render, Layout};
use super::scenarios;

/// One of the four jobs.
pub struct Job {
    pub title: &'static str,
    pub path: &'static str,
    pub words: &'static str,
}

/// The jobs, in the order the home page lists them.
pub const JOBS: [Job; 7] = [
    Job {
        title: "Schedule a loan",
        path: "/loan",
        words: "The payment for a term, or the term for a payment; the schedule to the cent, with extra payments, an interest-only start, a balloon or rate changes.",
    },
    Job {
        title: "Compare plans",
        path: "/compare",
        words: "Up to four plans side by side: 15, 20 or 30 years, another rate, another payment; what each costs and saves.",
    },
    Job {
        title: "Weigh a refinance",
        path: "/refinance",
        words: "Does refinancing pay, and when? Both payments, how many months the savings take to repay the costs (simply, and counting what is still owed on each loan), and what each way costs after 5, 7 and 10 years.",
    },
    Job {
        title: "Weigh rate and points",
        path: "/options",
        words: "Two to six rate-and-points options on one loan: each payment, the months until paying points pays for itself, and which option costs least, depending on how long the loan is kept.",
    },
    Job {
        title: "Print a payment grid",
        path: "/grid",
        words: "The payment at each rate and term on one sheet, with the payment per 1,000 borrowed; every payment opens its schedule.",
    },
    Job {
        title: "Check a quote",
        path: "/check",
        words: "Is a quoted payment right to the cent, and a disclosed APR within the allowed tolerance? With the rate the quoted payment implies, and how each figure was worked out.",
    },
    Job {
        title: "Plan savings",
        path: "/savings",
        words: "Deposits toward a goal, rising each year if need be; when the goal is reached, or the deposit that reaches it; and how long regular withdrawals will last.",
    },
];

/// The home page.
#[derive(Template)]
#[template(path = "home.html")]
pub struct HomePage {
    pub layout: Layout,
    pub jobs: &'static [Job],
    /// The demo scenarios, each with its page link and plain URLs.
    pub scenarios: Vec<ScenarioLink>,
}

/// A scenario as the home page lists it.
pub struct ScenarioLink {
    pub title: String,
    pub story: String,
    /// The job's words ("Loan schedule").
    pub job: &'static str,
    /// The page that shows it, with the scenario's query.
    pub page_url: String,
    pub json_url: String,
    pub csv_url: Option<String>,
}

/// The page and API paths of a scenario's job: (page, job words, JSON path, CSV path).
pub fn job_paths(
    job: &str,
) -> (
    &'static str,
    &'static str,
    &'static str,
    Option<&'static str>,
) {
    if job.contains("compare") {
        (
            "/compare",
            "Compare plans",
            "/api/v1/loans/compare",
            Some("/api/v1/loans/compare.csv"),
        )
    } else if job.contains("check") {
        ("/check", "Check a quote", "/api/v1/loans/check", None)
    } else if job.contains("saving") || job.contains("drawdown") {
        (
            "/savings",
            "Savings plan",
            "/api/v1/savings/plan",
            Some("/api/v1/savings/plan.csv"),
        )
    } else {
        (
            "/loan",
            "Loan schedule",
            "/api/v1/loans/schedule",
            Some("/api/v1/loans/schedule.csv"),
        )
    }
}

/// The scenarios with their links.
pub fn scenario_links() -> Vec<ScenarioLink> {
    scenarios::all()
        .unwrap_or_default()
        .into_iter()
        .map(|s| {
            let q = s.query();
            let (page, words, json, csv) = job_paths(&s.job);
            ScenarioLink {
                title: s.title,
                story: s.story,
                job: words,
                page_url: format!("{page}?{q}"),
                json_url: format!("{json}?{q}"),
                csv_url: csv.map(|c| format!("{c}?{q}")),
            }
        })
        .collect()
}

/// `GET /`
pub async fn page() -> Response {
    render(&HomePage {
        layout: Layout::new("Loan and savings schedules, exact to the cent", "/"),
        jobs: &JOBS,
        scenarios: scenario_links(),
    })
}
