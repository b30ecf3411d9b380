//! The console's side of alerts: remembers what each object's previous fit said so that a rule fires
//! once when it starts to hold, keeps the night's alerts for their overlay, and says what an alert
//! should do (bell, flash, command) unless the observer has asked for quiet.

use crate::feed::alerts::{Alert, AlertKind, AlertRules, Summary, check, holding};
use crate::fitting::fit::FitResult;
use std::collections::{HashMap, HashSet};
use std::time::{Duration, Instant, SystemTime};

/// How long the status line stays flashed after an alert.
pub const FLASH_FOR: Duration = Duration::from_secs(3);

/// What one alert asks of the terminal and the outside world.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AlertEffects {
    pub bell: bool,
    pub flash: bool,
    pub command: Option<String>,
}

/// The night's alerts and what is needed to raise the next ones.
#[derive(Debug)]
pub struct Alerts {
    pub rules: AlertRules,
    /// Listed but silent: no bell, flash or command.
    pub quiet: bool,
    /// Every alert of the night, oldest first.
    pub list: Vec<Alert>,
    /// What each object's previous fit said (only what the rules read).
    previous: HashMap<String, Summary>,
    /// Alerts raised before this run (the state directory's record): an object's first fit of the
    /// run does not raise them again.
    pub earlier: HashSet<(String, AlertKind)>,
    /// Rules raised before that no longer hold, for the state directory's record (drained by the
    /// runtime): after a restart they alert again when they hold again.
    pub cleared: Vec<(String, AlertKind)>,
    /// The status line is flashed until then.
    flash_until: Option<Instant>,
}

impl Alerts {
    pub fn new(rules: AlertRules) -> Alerts {
        Alerts {
            quiet: rules.quiet,
            rules,
            list: Vec::new(),
            previous: HashMap::new(),
            earlier: HashSet::new(),
            cleared: Vec::new(),
            flash_until: None,
        }
    }

    /// A new fit of an object: the alert it raises, with what to do about it.
    pub fn on_fit(&mut self, fit: &FitResult) -> Option<(Alert, AlertEffects)> {
        let prev = self.previous.get(&fit.object).copied();
        let alert = check(prev.as_ref(), fit, &self.rules);
        let first = prev.is_none();
        let now = Summary::of(fit);
        self.forget_cleared(&fit.object, prev.as_ref(), &now);
        self.previous.insert(fit.object.clone(), now);
        let alert = alert?;
        if first && self.earlier.contains(&(alert.object.clone(), alert.kind)) {
            return None;
        }
        self.list.push(alert.clone());
        let loud = !self.quiet;
        let effects = AlertEffects {
            bell: loud && self.rules.bell,
            flash: loud && self.rules.flash,
            command: self.rules.command.clone().filter(|_| loud),
        };
        if effects.flash {
            self.flash_until = Some(Instant::now() + FLASH_FOR);
        }
        Some((alert, effects))
    }

    /// A rule that held (in this run, or when last alerted before it) and holds no more is cleared:
    /// its next crossing alerts again, also after a restart.
    fn forget_cleared(&mut self, object: &str, prev: Option<&Summary>, now: &Summary) {
        let object = crate::feed::sanitize::clean(object);
        let held_now = holding(now, &self.rules);
        let held_before = match prev {
            Some(p) => holding(p, &self.rules),
            None => [AlertKind::Strong, AlertKind::NewUnbound]
                .into_iter()
                .filter(|k| self.earlier.contains(&(object.clone(), *k)))
                .collect(),
        };
        for k in held_before {
            if held_now.contains(&k) {
                continue;
            }
            let recorded = self.earlier.remove(&(object.clone(), k));
            if recorded || prev.is_some() {
                self.cleared.push((object.clone(), k));
            }
        }
    }

    /// Whether the screen must be drawn again for the flash (while it lasts, and once when it ends).
    pub fn tick(&mut self, now: Instant) -> bool {
        match self.flash_until {
            Some(t) if now >= t => {
                self.flash_until = None;
                true
            }
            Some(_) => true,
            None => false,
        }
    }

    /// Whether the status line should be drawn flashed now.
    pub fn flashing(&self, now: Instant) -> bool {
        self.flash_until.is_some_and(|t| now < t)
    }

    /// The lines of the alerts overlay, newest first.
    pub fn lines(&self) -> Vec<String> {
        if self.list.is_empty() {
            return vec![format!(
                "no alerts yet{} · rules: P ≥ {} ({}), new unbound from {} nights",
                if self.quiet { " (quiet)" } else { "" },
                self.rules.min_probability,
                if self.rules.data_decided {
                    "decided by the data"
                } else {
                    "prior allowed"
                },
                self.rules.min_nights
            )];
        }
        let mut v = vec![format!(
            "{} alert{}{} — each a reason to look, not a discovery",
            self.list.len(),
            if self.list.len() == 1 { "" } else { "s" },
            if self.quiet {
                " (quiet: no bell, flash or command)"
            } else {
                ""
            }
        )];
        for a in self.list.iter().rev() {
            v.push(format!("{}  {}", utc(a.at), a.text));
        }
        v
    }
}

fn utc(t: SystemTime) -> String {
    chrono::DateTime::<chrono::Utc>::from(t)
        .format("%H:%M:%SZ")
        .to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn fit(p: f64) -> FitResult {
        crate::testutil::record("qka2e7f", p, 3)
    }

    #[test]
    fn an_alert_raised_before_this_run_is_not_raised_again_by_the_first_fit() {
        let mut a = Alerts::new(AlertRules::default());
        a.earlier
            .insert(("qka2e7f".into(), crate::feed::alerts::AlertKind::Strong));
        assert!(a.on_fit(&fit(0.97)).is_none());
        // Within the run a rule that stops holding and holds again alerts as before.
        assert!(a.on_fit(&fit(0.2)).is_none());
        // Both rules held at P 0.97 on three nights, and neither does at 0.2: both go to the record.
        let cleared: Vec<_> = a.cleared.drain(..).collect();
        let strong = (
            "qka2e7f".to_string(),
            crate::feed::alerts::AlertKind::Strong,
        );
        assert!(cleared.contains(&strong), "{cleared:?}");
        assert!(a.on_fit(&fit(0.97)).is_some());
        // A restart whose first fit finds the rule no longer holding clears the record: the next
        // crossing, in this run or a later one, alerts.
        let mut b = Alerts::new(AlertRules::default());
        b.earlier
            .insert(("qka2e7f".into(), crate::feed::alerts::AlertKind::Strong));
        assert!(b.on_fit(&fit(0.3)).is_none());
        assert_eq!(b.cleared.len(), 1);
        assert!(b.earlier.is_empty());
        assert!(b.on_fit(&fit(0.97)).is_some());
    }

    #[test]
    fn a_crossing_alerts_once_with_bell_and_flash_and_quiet_silences_it() {
        let mut a = Alerts::new(AlertRules {
            command: Some("cat".into()),
            ..AlertRules::default()
        });
        assert!(a.on_fit(&fit(0.3)).is_none());
        let (alert, fx) = a.on_fit(&fit(0.97)).unwrap();
        assert_eq!(alert.object, "qka2e7f");
        assert!(fx.bell && fx.flash);
        assert_eq!(fx.command.as_deref(), Some("cat"));
        assert!(a.flashing(Instant::now()));
        assert!(
            a.on_fit(&fit(0.98)).is_none(),
            "no second alert while it holds"
        );
        a.quiet = true;
        a.on_fit(&fit(0.2));
        let (_, fx) = a.on_fit(&fit(0.99)).unwrap();
        assert_eq!(
            fx,
            AlertEffects {
                bell: false,
                flash: false,
                command: None
            }
        );
        assert_eq!(a.list.len(), 2, "quiet alerts are still listed");
        assert!(a.lines()[0].contains("2 alerts"));
    }
}
