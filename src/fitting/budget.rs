//! A time budget for one tracklet's fit. Hostile input can make an honest fit very long (one position a
//! year from the other eleven sent a three-night arc through range profiles with planets over the whole
//! year: over seven minutes, holding a watcher's worker while other files waited). The slower stages
//! look at the budget and give up once it is spent; the record then says so and shows no probability.
//! The budget is generous: ordinary fits take milliseconds, the slowest candidates tens of them.

use std::cell::Cell;
use std::time::{Duration, Instant};

/// Wall time one tracklet's fit may take before its slower stages give up.
pub const FIT_BUDGET: Duration = Duration::from_secs(10);

thread_local! {
    static DEADLINE: Cell<Option<Instant>> = const { Cell::new(None) };
}

/// The budget of the fit running on this thread; the previous one is restored when it is dropped. A
/// fit started inside another keeps the outer deadline where that comes first.
pub struct Budget {
    previous: Option<Instant>,
}

impl Budget {
    pub fn start(limit: Duration) -> Budget {
        let previous = DEADLINE.with(Cell::get);
        let mine = Instant::now().checked_add(limit);
        let deadline = match (previous, mine) {
            (Some(p), Some(m)) => Some(p.min(m)),
            (p, m) => m.or(p),
        };
        DEADLINE.with(|d| d.set(deadline));
        Budget { previous }
    }
}

impl Drop for Budget {
    fn drop(&mut self) {
        DEADLINE.with(|d| d.set(self.previous));
    }
}

/// Whether the running fit's budget is spent (never, outside a fit).
pub fn spent() -> bool {
    DEADLINE
        .with(Cell::get)
        .is_some_and(|d| Instant::now() >= d)
}

/// What the record says when the budget ran out.
pub fn reason() -> String {
    format!(
        "fit stopped after its time budget ({} s): no probability (a position far in time from the others, or a false linkage?)",
        FIT_BUDGET.as_secs()
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_budget_is_spent_after_its_time_and_restored_when_dropped() {
        assert!(!spent(), "no budget outside a fit");
        {
            let _outer = Budget::start(Duration::from_secs(3600));
            assert!(!spent());
            {
                let _inner = Budget::start(Duration::ZERO);
                assert!(spent());
            }
            assert!(!spent(), "the outer budget is back");
            // An inner budget longer than the outer keeps the outer deadline.
            let _long = Budget::start(Duration::from_secs(7200));
            assert!(!spent());
        }
        assert!(!spent());
    }
}
