//! Prometheus metrics in the text exposition format, kept by hand: requests and
//! latencies per route, batch lines, problems by type.

use std::collections::BTreeMap;
use std::fmt::Write;
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Mutex;
use std::time::Duration;

/// Upper bounds of the latency buckets, in seconds.
const BUCKETS: [f64; 10] = [
    0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.5, 2.5,
];

#[derive(Debug, Default)]
struct Route {
    by_status: BTreeMap<u16, u64>,
    buckets: [u64; BUCKETS.len()],
    count: u64,
    sum_seconds: f64,
}

/// The service's counters.
#[derive(Debug, Default)]
pub struct Metrics {
    routes: Mutex<BTreeMap<String, Route>>,
    problems: Mutex<BTreeMap<&'static str, u64>>,
    batch_lines: AtomicU64,
    /// Rows of checked files, by verdict: ok, differs, error.
    pipeline_rows: [AtomicU64; 3],
    in_flight_refused: AtomicU64,
    cache_hits: AtomicU64,
}

impl Metrics {
    /// Records one answered request.
    pub fn record(&self, route: &str, status: u16, elapsed: Duration) {
        let seconds = elapsed.as_secs_f64();
        let mut routes = self.routes.lock().unwrap_or_else(|e| e.into_inner());
        let r = routes.entry(route.to_string()).or_default();
        *r.by_status.entry(status).or_default() += 1;
        for (i, bound) in BUCKETS.iter().enumerate() {
            if seconds <= *bound {
                r.buckets[i] += 1;
            }
        }
        r.count += 1;
        r.sum_seconds += seconds;
    }

    /// Records a problem answered, by its type.
    pub fn record_problem(&self, slug: &'static str) {
        *self
            .problems
            .lock()
            .unwrap_or_else(|e| e.into_inner())
            .entry(slug)
            .or_default() += 1;
        if slug == "overloaded" {
            self.in_flight_refused.fetch_add(1, Ordering::Relaxed);
        }
    }

    pub fn add_cache_hit(&self) {
        self.cache_hits.fetch_add(1, Ordering::Relaxed);
    }

    pub fn add_batch_lines(&self, n: u64) {
        self.batch_lines.fetch_add(n, Ordering::Relaxed);
    }

    /// Counts rows of a checked file by verdict (`ok`, `differs`, `error`).
    pub fn add_pipeline_rows(&self, counts: [u64; 3]) {
        for (slot, n) in self.pipeline_rows.iter().zip(counts) {
            slot.fetch_add(n, Ordering::Relaxed);
        }
    }

    /// The text exposition format (version 0.0.4).
    pub fn render(&self) -> String {
        let mut out = String::new();
        let routes = self.routes.lock().unwrap_or_else(|e| e.into_inner());
        out.push_str("# HELP residue_requests_total Requests answered, by route and status.\n# TYPE residue_requests_total counter\n");
        for (route, r) in routes.iter() {
            for (status, n) in &r.by_status {
                let _ = writeln!(
                    out,
                    "residue_requests_total{{route=\"{}\",status=\"{status}\"}} {n}",
                    label(route)
                );
            }
        }
        out.push_str("# HELP residue_request_duration_seconds Time to answer, by route.\n# TYPE residue_request_duration_seconds histogram\n");
        for (route, r) in routes.iter() {
            let route = label(route);
            for (i, bound) in BUCKETS.iter().enumerate() {
                let _ = writeln!(out, "residue_request_duration_seconds_bucket{{route=\"{route}\",le=\"{bound}\"}} {}", r.buckets[i]);
            }
            let _ = writeln!(
                out,
                "residue_request_duration_seconds_bucket{{route=\"{route}\",le=\"+Inf\"}} {}",
                r.count
            );
            let _ = writeln!(
                out,
                "residue_request_duration_seconds_sum{{route=\"{route}\"}} {}",
                r.sum_seconds
            );
            let _ = writeln!(
                out,
                "residue_request_duration_seconds_count{{route=\"{route}\"}} {}",
                r.count
            );
        }
        drop(routes);
        out.push_str("# HELP residue_problems_total Problems answered, by type.\n# TYPE residue_problems_total counter\n");
        for (slug, n) in self
            .problems
            .lock()
            .unwrap_or_else(|e| e.into_inner())
            .iter()
        {
            let _ = writeln!(out, "residue_problems_total{{type=\"{slug}\"}} {n}");
        }
        out.push_str("# HELP residue_batch_lines_total Batch lines answered.\n# TYPE residue_batch_lines_total counter\n");
        let _ = writeln!(
            out,
            "residue_batch_lines_total {}",
            self.batch_lines.load(Ordering::Relaxed)
        );
        out.push_str("# HELP residue_pipeline_rows_total Rows of checked files (POST /api/v1/loans/checks), by verdict.\n# TYPE residue_pipeline_rows_total counter\n");
        for (status, n) in ["ok", "differs", "error"].iter().zip(&self.pipeline_rows) {
            let _ = writeln!(
                out,
                "residue_pipeline_rows_total{{status=\"{status}\"}} {}",
                n.load(Ordering::Relaxed)
            );
        }
        out.push_str("# HELP residue_answer_cache_hits_total GET answers served from the answer store.\n# TYPE residue_answer_cache_hits_total counter\n");
        let _ = writeln!(
            out,
            "residue_answer_cache_hits_total {}",
            self.cache_hits.load(Ordering::Relaxed)
        );
        out
    }
}

/// A label value escaped for the exposition format.
fn label(s: &str) -> String {
    s.replace('\\', "\\\\")
        .replace('"', "\\\"")
        .replace('\n', "\\n")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counters_render_in_the_exposition_format() {
        let m = Metrics::default();
        m.record("/healthz", 200, Duration::from_micros(300));
        m.record("/healthz", 200, Duration::from_millis(20));
        m.record_problem("invalid-fields");
        m.add_batch_lines(3);
        m.add_pipeline_rows([5, 2, 1]);
        let text = m.render();
        assert!(text.contains("residue_requests_total{route=\"/healthz\",status=\"200\"} 2"));
        assert!(text.contains(
            "residue_request_duration_seconds_bucket{route=\"/healthz\",le=\"0.0005\"} 1"
        ));
        assert!(text
            .contains("residue_request_duration_seconds_bucket{route=\"/healthz\",le=\"+Inf\"} 2"));
        assert!(text.contains("residue_problems_total{type=\"invalid-fields\"} 1"));
        assert!(text.contains("residue_batch_lines_total 3"));
        assert!(text.contains("residue_pipeline_rows_total{status=\"differs\"} 2"));
    }
}
