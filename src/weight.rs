//! The in-flight limit weighed by each request's expected work.
//!
//! Every computed request holds one permit of the in-flight limit
//! (`--max-in-flight`). A schedule's cost grows with its payments times its
//! segments: a 6,000-payment plan with 240 extra-payment and rate-change rules
//! costs some four thousand times a 360-payment loan and answers up to a megabyte.
//! Such a request takes more permits, one per [`WORK_PER_PERMIT`] units of
//! expected work, at most half the limit, so that no more than two maximal
//! schedules run at once however many arrive (the rest are answered 503 with
//! Retry-After at once, holding nothing).
//!
//! The request's middleware makes the limit reachable to the handler for the
//! request's duration ([`scoped`]); [`weigh`] takes the extra permits, which the
//! caller holds until its computation ends.

use std::future::Future;
use std::sync::Arc;

use tokio::sync::{OwnedSemaphorePermit, Semaphore};

/// Units of expected work (payments × (1 + rules that start segments)) a permit covers.
pub const WORK_PER_PERMIT: u64 = 100_000;

/// The limit of one server, as a request sees it.
#[derive(Debug, Clone)]
pub struct Limit {
    semaphore: Arc<Semaphore>,
    permits: u32,
}

impl Limit {
    pub fn new(semaphore: Arc<Semaphore>, permits: u32) -> Self {
        Self { semaphore, permits }
    }
}

tokio::task_local! {
    static LIMIT: Limit;
}

/// Runs `f` with `limit` reachable by [`weigh`].
pub async fn scoped<F: Future>(limit: Limit, f: F) -> F::Output {
    LIMIT.scope(limit, f).await
}

/// Permits for `work` units out of `total`: 1 to half of `total`.
pub fn permits_for(work: u64, total: u32) -> u32 {
    let wanted = work.div_ceil(WORK_PER_PERMIT).max(1);
    u32::try_from(wanted)
        .unwrap_or(u32::MAX)
        .min((total / 2).max(1))
}

/// Too much is being computed to take on this request's weight now.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Busy {
    /// The permits the request needs.
    pub weight: u32,
    /// The server's limit.
    pub total: u32,
}

/// Takes the permits beyond the one the request already holds for `work` units
/// of expected work, without waiting. `None` when nothing more is needed, or
/// outside a request (a batch line, a test calling a handler's reader).
///
/// # Errors
/// [`Busy`] when the permits are not free now.
pub fn weigh(work: u64) -> Result<Option<OwnedSemaphorePermit>, Busy> {
    LIMIT
        .try_with(|limit| {
            let weight = permits_for(work, limit.permits);
            if weight <= 1 {
                return Ok(None);
            }
            limit
                .semaphore
                .clone()
                .try_acquire_many_owned(weight - 1)
                .map(Some)
                .map_err(|_| Busy {
                    weight,
                    total: limit.permits,
                })
        })
        .unwrap_or(Ok(None))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_plain_loan_weighs_one_permit_and_a_maximal_plan_half_the_limit() {
        assert_eq!(permits_for(360, 16), 1);
        assert_eq!(permits_for(6_000, 16), 1);
        assert_eq!(permits_for(6_000 * 241, 16), 8);
        assert_eq!(permits_for(6_000 * 241, 1), 1);
        assert_eq!(permits_for(250_000, 16), 3);
    }

    #[tokio::test(flavor = "current_thread")]
    async fn heavy_requests_beyond_the_limit_are_busy_and_free_their_permits_when_done() {
        let semaphore = Arc::new(Semaphore::new(16));
        let limit = Limit::new(semaphore.clone(), 16);
        // Each request already holds its one permit (the middleware's).
        let first = semaphore.clone().try_acquire_owned().unwrap();
        let heavy = scoped(limit.clone(), async { weigh(6_000 * 241) }).await;
        let held = heavy.unwrap().expect("seven more permits");
        assert_eq!(semaphore.available_permits(), 8);
        let second = semaphore.clone().try_acquire_owned().unwrap();
        let again = scoped(limit.clone(), async { weigh(6_000 * 241) }).await;
        let held_too = again.unwrap().expect("seven more still fit");
        assert_eq!(semaphore.available_permits(), 0);
        // A third maximal plan finds nothing free: it is refused at once; a plain
        // loan needs nothing beyond its own permit.
        let refused = scoped(limit.clone(), async { weigh(6_000 * 241) }).await;
        assert_eq!(
            refused.unwrap_err(),
            Busy {
                weight: 8,
                total: 16
            }
        );
        assert!(scoped(limit.clone(), async { weigh(360) })
            .await
            .unwrap()
            .is_none());
        drop((held, held_too, first, second));
        assert_eq!(semaphore.available_permits(), 16);
        assert!(weigh(6_000 * 241).unwrap().is_none(), "outside a request");
    }
}
