//! What changed since the observer last looked: when a candidate arrived and was last refitted, whether
//! it is new or updated since its row was last visited, and the history of its answers (P, e, nights)
//! refit by refit.

use crate::fitting::fit::FitResult;
use std::time::SystemTime;

/// Refits remembered per candidate (the oldest are dropped first; the first is always kept).
pub const HISTORY: usize = 24;

/// One refit as it came.
#[derive(Debug, Clone, PartialEq)]
pub struct Step {
    pub at: SystemTime,
    pub p: Option<f64>,
    pub e: Option<f64>,
    pub nights: usize,
    pub n_obs: usize,
}

/// Whether a row has news for the observer.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mark {
    /// Never visited since it arrived.
    New,
    /// Refitted since it was last visited.
    Updated,
    Seen,
}

impl Mark {
    /// One character before the object id: `+` new, `~` updated, blank when seen.
    pub fn symbol(self) -> &'static str {
        match self {
            Mark::New => "+",
            Mark::Updated => "~",
            Mark::Seen => " ",
        }
    }
}

#[derive(Debug, Clone)]
pub struct Fresh {
    pub first_seen: SystemTime,
    pub updated: SystemTime,
    /// Refits since arrival (1 for the first fit).
    pub fits: u64,
    /// `fits` when the row was last visited (0: never).
    pub seen_at_fit: u64,
    pub history: Vec<Step>,
}

fn step(fit: &FitResult, at: SystemTime) -> Step {
    Step {
        at,
        p: fit.p_hyperbolic,
        e: fit.e,
        nights: fit.n_nights,
        n_obs: fit.n_obs,
    }
}

impl Fresh {
    pub fn new(fit: &FitResult, now: SystemTime) -> Fresh {
        Fresh {
            first_seen: now,
            updated: now,
            fits: 1,
            seen_at_fit: 0,
            history: vec![step(fit, now)],
        }
    }

    /// A refit arrived.
    pub fn refit(&mut self, fit: &FitResult, now: SystemTime) {
        self.updated = now;
        self.fits += 1;
        let s = step(fit, now);
        // A refit that changes nothing the observer reads (the same answer again) adds no step.
        let same = |l: &Step| (l.p, l.e, l.nights, l.n_obs) == (s.p, s.e, s.nights, s.n_obs);
        if !self.history.last().is_some_and(same) {
            if self.history.len() >= HISTORY {
                self.history.remove(1);
            }
            self.history.push(s);
        }
    }

    pub fn visit(&mut self) {
        self.seen_at_fit = self.fits;
    }

    pub fn mark(&self) -> Mark {
        if self.seen_at_fit == 0 {
            Mark::New
        } else if self.fits > self.seen_at_fit {
            Mark::Updated
        } else {
            Mark::Seen
        }
    }

    /// "arrived 12 min ago · refitted 3 min ago (4 fits)".
    pub fn age_line(&self, now: SystemTime) -> String {
        let ago = |t: SystemTime| {
            let s = now.duration_since(t).map_or(0, |d| d.as_secs());
            match s {
                0..60 => "just now".to_string(),
                60..3600 => format!("{} min ago", s / 60),
                _ => format!("{} h {:02} min ago", s / 3600, (s % 3600) / 60),
            }
        };
        if self.fits <= 1 {
            format!("arrived {}", ago(self.first_seen))
        } else {
            format!(
                "arrived {} · refitted {} ({} fits)",
                ago(self.first_seen),
                ago(self.updated),
                self.fits
            )
        }
    }

    /// "history P 0.12 (1n) → 0.64 (2n) → 1.00 (3n)", the newest last, cut to `width` from the left.
    pub fn history_line(&self, width: usize) -> String {
        let steps: Vec<String> = self
            .history
            .iter()
            .map(|s| {
                let p = s.p.map_or("-".to_string(), |p| format!("{p:.2}"));
                format!("{p} ({}n,{})", s.nights, s.n_obs)
            })
            .collect();
        let full = format!("history P {}", steps.join(" → "));
        if full.chars().count() <= width || steps.len() < 3 {
            return full;
        }
        // The first step, a gap, and as many of the newest as fit.
        let head = format!("history P {} → …", steps[0]);
        let mut tail: Vec<&str> = Vec::new();
        for s in steps[1..].iter().rev() {
            let len = head.chars().count()
                + tail.iter().map(|t| t.chars().count() + 3).sum::<usize>()
                + s.chars().count()
                + 3;
            if len > width {
                break;
            }
            tail.push(s);
        }
        tail.reverse();
        if tail.is_empty() {
            head
        } else {
            format!("{head} → {}", tail.join(" → "))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::time::Duration;

    fn fit(p: f64, nights: usize, n_obs: usize) -> FitResult {
        let mut r = crate::testutil::record("qk5t8yn", p, nights);
        r.n_obs = n_obs;
        r
    }

    #[test]
    fn a_row_is_new_until_visited_and_updated_after_a_refit() {
        let t0 = SystemTime::UNIX_EPOCH + Duration::from_secs(1_800_000_000);
        let mut f = Fresh::new(&fit(0.1, 1, 4), t0);
        assert_eq!(f.mark(), Mark::New);
        f.visit();
        assert_eq!(f.mark(), Mark::Seen);
        f.refit(&fit(0.6, 2, 8), t0 + Duration::from_secs(600));
        assert_eq!(f.mark(), Mark::Updated);
        f.visit();
        assert_eq!(f.mark(), Mark::Seen);
        let now = t0 + Duration::from_secs(900);
        assert_eq!(
            f.age_line(now),
            "arrived 15 min ago · refitted 5 min ago (2 fits)"
        );
        assert_eq!(f.history_line(80), "history P 0.10 (1n,4) → 0.60 (2n,8)");
    }

    #[test]
    fn the_history_keeps_its_first_and_newest_steps_in_a_narrow_line() {
        let t0 = SystemTime::UNIX_EPOCH;
        let mut f = Fresh::new(&fit(0.01, 1, 3), t0);
        for k in 1..10 {
            f.refit(&fit(0.1 * k as f64, 1 + k / 3, 3 + k), t0);
        }
        let line = f.history_line(50);
        assert!(line.chars().count() <= 50, "{line}");
        assert!(line.starts_with("history P 0.01 (1n,3) → …"), "{line}");
        assert!(line.ends_with("0.90 (4n,12)"), "{line}");
    }
}
