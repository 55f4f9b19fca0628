//! The bracketed search: the one way the engine closes in on a root, whether a
//! rate (in decimal, or in binary floating point for a first estimate) or a
//! whole number of periods.
//!
//! A bracket [low, high] has the root above `low` and at or below `high`. It is
//! found by widening: the high end moves out (doubling, say) while the root lies
//! beyond it ([`widen`]). It is then narrowed ([`narrow`]): each trial point
//! lands on one side of the root and becomes that end of the bracket, and the
//! next trial is the point the trial proposes (a Newton step) when it lies
//! strictly inside the bracket, else the middle. So a search always converges,
//! as fast as its proposals allow and never slower than halving. For whole
//! numbers, [`first_whole`] is that halving alone.
//!
//! Each caller keeps its own middle ([`Midpoint`]), tolerance and step limit,
//! so the points tried, and the results, are those of the loops this replaced.

use rust_decimal::Decimal;

/// Where a trial point lies relative to the root.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Side {
    /// Below the root: the bracket's low end moves up to the point.
    Below,
    /// Above the root (or, for whole numbers, at the first one that holds): the
    /// high end moves down to the point.
    Above,
    /// Exactly the root: the search ends there.
    Root,
}

/// What a trial found at a point.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Trial<T> {
    /// The side of the root the point lies on.
    pub side: Side,
    /// The next point the trial proposes (a Newton step), taken when it lies
    /// strictly inside the bracket.
    pub next: Option<T>,
}

/// A value a bracket can be halved in.
pub trait Midpoint: Copy + PartialOrd {
    /// The middle of [low, high].
    fn midpoint(low: Self, high: Self) -> Self;
}

impl Midpoint for u32 {
    /// low + (high − low)/2, rounded down.
    fn midpoint(low: u32, high: u32) -> u32 {
        low + (high - low) / 2
    }
}

impl Midpoint for Decimal {
    /// low + (high − low)/2.
    fn midpoint(low: Decimal, high: Decimal) -> Decimal {
        low + (high - low) / Decimal::TWO
    }
}

impl Midpoint for f64 {
    /// (low + high)/2.
    fn midpoint(low: f64, high: f64) -> f64 {
        (low + high) / 2.0
    }
}

/// The outcome of [`widen`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Widened<T> {
    /// The root lies above `low` and at or below `high`.
    Bracket {
        /// The last point below the root (the starting low end if none was tried).
        low: T,
        /// The first point found at or above the root.
        high: T,
        /// Points tried.
        trials: u32,
    },
    /// A point tried was the root.
    Root {
        /// The root.
        at: T,
        /// Points tried.
        trials: u32,
    },
    /// The high end could not move out further, or moved out more often than allowed.
    Unbounded,
}

/// Moves the high end out until the root lies at or below it.
///
/// `side` places each high end tried; while it is below the root, the low end
/// takes its place and `wider` gives the next high end (`None`: no further).
/// Gives up once the high end would move more than `most` times.
///
/// # Errors
/// What `side` or `wider` return.
pub fn widen<T: Copy, E>(
    mut low: T,
    mut high: T,
    most: u32,
    mut side: impl FnMut(T) -> Result<Side, E>,
    mut wider: impl FnMut(T) -> Result<Option<T>, E>,
) -> Result<Widened<T>, E> {
    let mut moves = 0;
    let mut trials = 0;
    loop {
        trials += 1;
        match side(high)? {
            Side::Root => return Ok(Widened::Root { at: high, trials }),
            Side::Above => return Ok(Widened::Bracket { low, high, trials }),
            Side::Below => {}
        }
        let Some(next) = wider(high)? else {
            return Ok(Widened::Unbounded);
        };
        low = high;
        high = next;
        moves += 1;
        if moves > most {
            return Ok(Widened::Unbounded);
        }
    }
}

/// The outcome of [`narrow`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Narrowed<T> {
    /// The root: the trial that was the root, else the point chosen after the
    /// last trial (when `settled`, or when the trials ran out).
    pub at: T,
    /// The bracket's low end at the end.
    pub low: T,
    /// The bracket's high end at the end.
    pub high: T,
    /// Trials made.
    pub trials: u32,
}

/// Narrows the bracket [`low`, `high`] from the trial point `start`.
///
/// Each `trial` places its point (which becomes that end of the bracket) and
/// may propose the next; a proposal outside the open bracket is replaced by its
/// middle. The search ends at a root, when `settled(low, high, point, next)`
/// holds after a trial, or after `most` trials.
///
/// # Errors
/// What `trial` returns.
pub fn narrow<T: Midpoint, E>(
    mut low: T,
    mut high: T,
    start: T,
    most: u32,
    mut trial: impl FnMut(T) -> Result<Trial<T>, E>,
    settled: impl Fn(T, T, T, T) -> bool,
) -> Result<Narrowed<T>, E> {
    let mut x = start;
    for trials in 1..=most {
        let t = trial(x)?;
        match t.side {
            Side::Root => {
                return Ok(Narrowed {
                    at: x,
                    low,
                    high,
                    trials,
                })
            }
            Side::Below => low = x,
            Side::Above => high = x,
        }
        let next = match t.next {
            Some(n) if n > low && n < high => n,
            _ => T::midpoint(low, high),
        };
        if settled(low, high, x, next) {
            return Ok(Narrowed {
                at: next,
                low,
                high,
                trials,
            });
        }
        x = next;
    }
    Ok(Narrowed {
        at: x,
        low,
        high,
        trials: most,
    })
}

/// The first whole number above `below` at which `holds`, for a test that
/// fails at `below`, holds at `above` (neither is tried) and, once it holds,
/// holds from there on; by halving (h − l)/2 rounded down. Returns it and the
/// number of tests made.
///
/// # Errors
/// What `holds` returns.
pub fn first_whole<E>(
    below: u32,
    above: u32,
    mut holds: impl FnMut(u32) -> Result<bool, E>,
) -> Result<(u32, u32), E> {
    if above - below <= 1 {
        return Ok((above, 0));
    }
    let found = narrow(
        below,
        above,
        u32::midpoint(below, above),
        u32::BITS * 2,
        |n| {
            Ok(Trial {
                side: if holds(n)? { Side::Above } else { Side::Below },
                next: None,
            })
        },
        |low, high, _, _| high - low <= 1,
    )?;
    Ok((found.high, found.trials))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The halving loop [`first_whole`] replaced, with its number of tests.
    fn halving(below: u32, above: u32, holds: impl Fn(u32) -> bool) -> (u32, u32) {
        let (mut lo, mut hi, mut tests) = (below, above, 0);
        while hi - lo > 1 {
            let mid = lo + (hi - lo) / 2;
            tests += 1;
            if holds(mid) {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        (hi, tests)
    }

    #[test]
    fn first_whole_takes_the_points_of_the_halving_loop() {
        for (below, above) in [(0, 1), (0, 2), (0, 16), (3, 1000), (0, 6000), (16, 32)] {
            for first in below + 1..=above {
                let holds = |n: u32| n >= first;
                let found = first_whole::<()>(below, above, |n| Ok(holds(n))).unwrap();
                assert_eq!(
                    found,
                    halving(below, above, holds),
                    "{below}..{above}, {first}"
                );
                assert_eq!(found.0, first);
            }
        }
    }

    /// √2 as the root of x² − 2 in [0, 2], from 1, with the proposals of `propose`.
    fn root_of_two(
        propose: impl Fn(f64) -> f64,
        settled: impl Fn(f64, f64, f64, f64) -> bool,
    ) -> Narrowed<f64> {
        let side = |x: f64| {
            if x * x < 2.0 {
                Side::Below
            } else {
                Side::Above
            }
        };
        let trial = |x: f64| {
            Ok::<_, ()>(Trial {
                side: side(x),
                next: Some(propose(x)),
            })
        };
        narrow(0.0, 2.0, 1.0, 200, trial, settled).unwrap()
    }

    #[test]
    fn a_proposal_outside_the_bracket_is_replaced_by_the_middle() {
        // A proposal always outside: halving alone.
        let found = root_of_two(|_| 5.0, |low, high, _, _| high - low < 1e-12);
        assert!((found.at - 2f64.sqrt()).abs() < 1e-12);
        assert!(found.trials > 30 && found.trials < 50);
        // With Newton's step proposed, a handful of trials.
        let newton = root_of_two(
            |x| x - (x * x - 2.0) / (2.0 * x),
            |_, _, x, next| (next - x).abs() < 1e-15,
        );
        assert!((newton.at - 2f64.sqrt()).abs() < 1e-15);
        assert!(newton.trials < 8, "{}", newton.trials);
    }

    #[test]
    fn widening_stops_at_the_root_a_bracket_or_its_limit() {
        let above =
            |root: f64| move |x: f64| Ok::<_, ()>(if x < root { Side::Below } else { Side::Above });
        let double = |x: f64| Ok::<_, ()>(Some(x * 2.0));
        assert_eq!(
            widen(0.0, 1.0, 40, above(5.0), double),
            Ok(Widened::Bracket {
                low: 4.0,
                high: 8.0,
                trials: 4
            })
        );
        assert_eq!(
            widen(0.0, 1.0, 2, above(5.0), double),
            Ok(Widened::Unbounded)
        );
        let root = |x: f64| Ok::<_, ()>(if x == 4.0 { Side::Root } else { Side::Below });
        assert_eq!(
            widen(0.0, 1.0, 40, root, double),
            Ok(Widened::Root { at: 4.0, trials: 3 })
        );
        let capped = |x: u32| Ok::<_, ()>((x < 100).then_some(x * 2));
        assert_eq!(
            widen(0, 16, u32::MAX, |_| Ok(Side::Below), capped),
            Ok(Widened::Unbounded)
        );
    }
}
