//! When a fit should call the observer back: rules from the configuration (`[alerts]`), checked on
//! every new fit against the object's previous one so that an alert fires when a rule starts to hold,
//! not on every refit while it holds; and the optional user command that receives the alert with the
//! candidate's record as JSON on stdin (for paging or chat). An alert is a reason to look, not a
//! discovery.

use crate::fitting::fit::FitResult;
use serde::Deserialize;
use std::io::Write;
use std::time::{Duration, SystemTime};

/// The rules, as written in the configuration's `[alerts]` table (every key optional).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct AlertRules {
    /// Alert when P(unbound) reaches this on a usable fit…
    pub min_probability: f64,
    /// …and only when the data decide it (not the population model alone).
    pub data_decided: bool,
    /// Also alert on a new unbound candidate (P ≥ 0.5) once it has this many nights.
    pub min_nights: usize,
    /// Ring the terminal bell.
    pub bell: bool,
    /// Flash the status line.
    pub flash: bool,
    /// Run this command (through `sh -c`) with the candidate's JSON on stdin.
    pub command: Option<String>,
    /// Start in quiet mode: alerts are listed but make no sound, flash or command.
    pub quiet: bool,
}

impl Default for AlertRules {
    fn default() -> AlertRules {
        AlertRules {
            min_probability: 0.9,
            data_decided: true,
            min_nights: 2,
            bell: true,
            flash: true,
            command: None,
            quiet: false,
        }
    }
}

impl AlertRules {
    /// The ranges every rule value must be in: where one is not, its key and the reason.
    pub fn check(&self) -> Result<(), (&'static str, String)> {
        if !(self.min_probability > 0.0 && self.min_probability < 1.0) {
            return Err((
                "min_probability",
                format!(
                    "min_probability {} must be above 0 and below 1",
                    self.min_probability
                ),
            ));
        }
        if !(1..=100).contains(&self.min_nights) {
            return Err((
                "min_nights",
                format!("min_nights {} is not between 1 and 100", self.min_nights),
            ));
        }
        if self.command.as_deref().is_some_and(|c| c.trim().is_empty()) {
            return Err(("command", "command is empty".into()));
        }
        Ok(())
    }
}

/// Which rule fired.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum AlertKind {
    /// P(unbound) crossed the configured line on a usable, data-decided fit.
    Strong,
    /// A candidate became likely unbound with enough nights to trust the arc.
    NewUnbound,
}

impl AlertKind {
    pub fn as_str(self) -> &'static str {
        match self {
            AlertKind::Strong => "strong",
            AlertKind::NewUnbound => "new-unbound",
        }
    }

    /// The kind a word names (as `as_str` writes it).
    pub fn parse(word: &str) -> Option<AlertKind> {
        [AlertKind::Strong, AlertKind::NewUnbound]
            .into_iter()
            .find(|k| k.as_str() == word)
    }
}

/// One alert: what, about whom, when, and a line for the screen and the log.
#[derive(Debug, Clone, PartialEq)]
pub struct Alert {
    pub object: String,
    pub kind: AlertKind,
    pub p: f64,
    pub nights: usize,
    pub at: SystemTime,
    pub text: String,
}

/// What the rules read of a fit (kept per object between fits; the record itself is not).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Summary {
    pub usable: bool,
    pub p: Option<f64>,
    pub prior_dominated: bool,
    pub n_nights: usize,
}

impl Summary {
    pub fn of(r: &FitResult) -> Summary {
        Summary {
            usable: r.status.usable(),
            p: r.p_hyperbolic,
            prior_dominated: r.prior_dominated,
            n_nights: r.n_nights,
        }
    }
}

/// The kinds whose rule holds on this summary.
pub fn holding(r: &Summary, rules: &AlertRules) -> Vec<AlertKind> {
    [
        (AlertKind::Strong, strong(r, rules)),
        (AlertKind::NewUnbound, likely_unbound(r, rules)),
    ]
    .into_iter()
    .filter_map(|(k, h)| h.then_some(k))
    .collect()
}

fn strong(r: &Summary, rules: &AlertRules) -> bool {
    r.usable
        && r.p.is_some_and(|p| p >= rules.min_probability)
        && !(rules.data_decided && r.prior_dominated)
}

fn likely_unbound(r: &Summary, rules: &AlertRules) -> bool {
    r.usable && r.p.is_some_and(|p| p >= 0.5) && r.n_nights >= rules.min_nights
}

/// The alert a new fit raises, given the object's previous fit (None for its first): a rule that holds
/// now and did not before.
pub fn check(prev: Option<&Summary>, new: &FitResult, rules: &AlertRules) -> Option<Alert> {
    let p = new.p_hyperbolic?;
    let now = Summary::of(new);
    let kind = if strong(&now, rules) && !prev.is_some_and(|o| strong(o, rules)) {
        AlertKind::Strong
    } else if likely_unbound(&now, rules) && !prev.is_some_and(|o| likely_unbound(o, rules)) {
        AlertKind::NewUnbound
    } else {
        return None;
    };
    let object = crate::feed::sanitize::clean(&new.object);
    let what = match kind {
        AlertKind::Strong => "P(unbound) crossed the alert line",
        AlertKind::NewUnbound => "new likely-unbound candidate",
    };
    Some(Alert {
        text: format!(
            "{object}: {what}: P {p:.3}, {} night{} — a reason to follow up, not a discovery",
            new.n_nights,
            if new.n_nights == 1 { "" } else { "s" }
        ),
        object,
        kind,
        p,
        nights: new.n_nights,
        at: SystemTime::now(),
    })
}

/// What the user command reads on stdin: the candidate's whole fit record (the `fit --json` fields) with
/// an `alert` object beside them (`kind`, `text`, `at_utc`).
pub fn alert_json(fit: &FitResult, alert: &Alert) -> String {
    let mut v = serde_json::to_value(fit).unwrap_or_else(|_| serde_json::json!({}));
    if let Some(m) = v.as_object_mut() {
        m.insert(
            "alert".into(),
            serde_json::json!({
                "kind": alert.kind.as_str(),
                "text": alert.text,
                "at_utc": chrono::DateTime::<chrono::Utc>::from(alert.at)
                    .to_rfc3339_opts(chrono::SecondsFormat::Secs, true),
            }),
        );
    }
    v.to_string()
}

/// Run the user command for an alert on a thread of its own (the caller never waits on it); how it
/// ended goes to the log.
pub fn spawn_command(command: String, stdin_text: String) -> std::thread::JoinHandle<()> {
    std::thread::spawn(
        move || match run_command(&command, &stdin_text, COMMAND_TIMEOUT) {
            Ok(m) => tracing::info!("{m}"),
            Err(m) => tracing::warn!("{m}"),
        },
    )
}

/// Longest a user command may run before it is stopped.
pub const COMMAND_TIMEOUT: Duration = Duration::from_secs(20);

/// Run `command` through `sh -c` with `stdin_text` on its stdin; wait at most `timeout`, then kill it.
/// Returns how it ended, as a line for the log. Blocks: call it from a thread of its own.
pub fn run_command(command: &str, stdin_text: &str, timeout: Duration) -> Result<String, String> {
    let mut child = std::process::Command::new("sh")
        .args(["-c", command])
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .map_err(|e| format!("alert command could not start: {e}"))?;
    if let Some(mut input) = child.stdin.take() {
        // A command that does not read its input is not an error.
        let _ = input.write_all(stdin_text.as_bytes());
    }
    let started = std::time::Instant::now();
    loop {
        match child.try_wait() {
            Ok(Some(status)) if status.success() => return Ok("alert command done".into()),
            Ok(Some(status)) => return Err(format!("alert command failed: {status}")),
            Ok(None) if started.elapsed() > timeout => {
                let _ = child.kill();
                let _ = child.wait();
                return Err(format!(
                    "alert command stopped after {} s",
                    timeout.as_secs()
                ));
            }
            Ok(None) => std::thread::sleep(Duration::from_millis(50)),
            Err(e) => return Err(format!("alert command: {e}")),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn fit(p: f64, nights: usize, prior_dominated: bool) -> FitResult {
        let mut r = crate::testutil::record("qk5t8yn", p, nights);
        r.prior_dominated = prior_dominated;
        r
    }

    #[test]
    fn an_alert_fires_when_a_rule_starts_to_hold_and_not_again_while_it_holds() {
        let rules = AlertRules::default();
        let low = fit(0.2, 2, false);
        let high = fit(0.97, 3, false);
        let a = check(Some(&Summary::of(&low)), &high, &rules).unwrap();
        assert_eq!(a.kind, AlertKind::Strong);
        assert!(a.text.contains("not a discovery"), "{}", a.text);
        assert_eq!(
            check(Some(&Summary::of(&high)), &fit(0.99, 3, false), &rules),
            None
        );
        // Falling below and crossing again fires again.
        assert!(check(Some(&Summary::of(&low)), &fit(0.95, 3, false), &rules).is_some());
    }

    #[test]
    fn a_probability_set_by_the_prior_alone_does_not_alert_unless_asked() {
        let mut rules = AlertRules::default();
        let prior = fit(0.95, 1, true);
        assert_eq!(check(None, &prior, &rules), None);
        rules.data_decided = false;
        assert_eq!(check(None, &prior, &rules).unwrap().kind, AlertKind::Strong);
    }

    #[test]
    fn a_new_unbound_candidate_needs_its_nights() {
        let rules = AlertRules::default();
        assert_eq!(check(None, &fit(0.7, 1, false), &rules), None);
        let a = check(
            Some(&Summary::of(&fit(0.7, 1, false))),
            &fit(0.7, 2, false),
            &rules,
        )
        .unwrap();
        assert_eq!(a.kind, AlertKind::NewUnbound);
    }

    #[test]
    fn poor_fits_never_alert() {
        let mut r = fit(0.99, 3, false);
        r.status = crate::fitting::kinds::FitStatus::PoorFit;
        assert_eq!(check(None, &r, &AlertRules::default()), None);
    }

    #[test]
    fn rules_out_of_range_are_refused() {
        let bad = AlertRules {
            min_probability: 1.5,
            ..AlertRules::default()
        };
        assert_eq!(bad.check().unwrap_err().0, "min_probability");
        let bad = AlertRules {
            command: Some("  ".into()),
            ..AlertRules::default()
        };
        assert!(bad.check().is_err());
        assert!(AlertRules::default().check().is_ok());
    }

    #[test]
    fn the_command_gets_the_record_on_stdin_and_a_hung_one_is_stopped() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("got.json");
        let cmd = format!("cat > '{}'", out.display());
        run_command(&cmd, "{\"object\":\"qk5t8yn\"}", COMMAND_TIMEOUT).unwrap();
        assert_eq!(
            std::fs::read_to_string(&out).unwrap(),
            "{\"object\":\"qk5t8yn\"}"
        );
        let e = run_command("sleep 5", "", Duration::from_millis(200)).unwrap_err();
        assert!(e.contains("stopped after"), "{e}");
        assert!(run_command("exit 3", "", COMMAND_TIMEOUT).is_err());
    }
}
