//! Alerts in headless `watch`: the same rules as the console, reported as their own lines (JSON
//! `"kind": "alert"` with `--json`), logged, and handed to the user's command; no bell or flash
//! without a screen. Quiet (from the configuration) keeps the lines and drops the command.

use interloper::console::alerting::Alerts;
use interloper::feed::alertlog::AlertLog;
use interloper::feed::alerts::{AlertRules, alert_json, spawn_command};
use interloper::fitting::fit::FitResult;

pub struct HeadlessAlerts {
    alerts: Alerts,
    /// The alerts raised before, in the state directory when there is one.
    log: AlertLog,
    commands: Vec<std::thread::JoinHandle<()>>,
}

impl HeadlessAlerts {
    /// Under `rules`, remembering the alerts raised before in `state_dir` (if it is there): a
    /// restarted pipeline does not page again for what it paged for already.
    pub fn new(rules: AlertRules, state_dir: Option<&std::path::Path>) -> HeadlessAlerts {
        let log = AlertLog::open(state_dir);
        let mut alerts = Alerts::new(rules);
        alerts.earlier = log.fired().clone();
        HeadlessAlerts {
            alerts,
            log,
            commands: Vec::new(),
        }
    }

    /// The alert line a fit raises (JSON and text), with the user's command started for it.
    pub fn on_fit(&mut self, fit: &FitResult) -> Option<(serde_json::Value, String)> {
        let raised = self.alerts.on_fit(fit);
        for (object, kind) in self.alerts.cleared.drain(..) {
            self.log.clear(&object, kind);
        }
        let (alert, fx) = raised?;
        tracing::warn!("ALERT {}", alert.text);
        self.log.record(&alert);
        if let Some(cmd) = fx.command {
            self.commands
                .push(spawn_command(cmd, alert_json(fit, &alert)));
        }
        let at = chrono::DateTime::<chrono::Utc>::from(alert.at)
            .to_rfc3339_opts(chrono::SecondsFormat::Millis, true);
        let json = serde_json::json!({
            "kind": "alert",
            "alert": alert.kind.as_str(),
            "object": alert.object,
            "p_hyperbolic": alert.p,
            "n_nights": alert.nights,
            "text": alert.text,
            "at_utc": at,
        });
        Some((json, format!("{at} ALERT {}", alert.text)))
    }

    /// Wait for the commands still running (each is stopped after its time limit).
    pub fn finish(self) {
        for c in self.commands {
            let _ = c.join();
        }
    }
}
