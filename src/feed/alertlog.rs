//! Which alerts were raised before, kept in the state directory (`alerts.jsonl`, one line per alert:
//! object, kind, time), so that a console or a headless watcher started again does not page the
//! desk again for every candidate it refits. A rule that stops holding and starts again in a run
//! still alerts; only the first fit of a run is measured against this record. Lines that cannot be
//! read are skipped (the file is a courtesy, not a journal: nothing is decided by it).

use super::alerts::{Alert, AlertKind};
use std::collections::HashSet;
use std::io::Write;
use std::path::{Path, PathBuf};

/// The file's name in the state directory.
pub const ALERT_LOG: &str = "alerts.jsonl";

/// The alerts raised before, and where to add new ones (nowhere without a state directory).
#[derive(Debug, Default)]
pub struct AlertLog {
    path: Option<PathBuf>,
    fired: HashSet<(String, AlertKind)>,
}

impl AlertLog {
    /// The record in `state_dir` (empty when there is none or it cannot be read).
    pub fn open(state_dir: Option<&Path>) -> AlertLog {
        let Some(dir) = state_dir.filter(|d| d.is_dir()) else {
            return AlertLog::default();
        };
        let path = dir.join(ALERT_LOG);
        let text = std::fs::read_to_string(&path).unwrap_or_default();
        // In file order: an alert, then perhaps its rule's clearing (after which it may alert again).
        let mut fired = HashSet::new();
        for v in text
            .lines()
            .filter_map(|l| serde_json::from_str::<serde_json::Value>(l).ok())
        {
            let (Some(object), Some(kind)) = (
                v["object"].as_str(),
                v["kind"].as_str().and_then(AlertKind::parse),
            ) else {
                continue;
            };
            let key = (object.to_string(), kind);
            if v["cleared"].as_bool() == Some(true) {
                fired.remove(&key);
            } else {
                fired.insert(key);
            }
        }
        AlertLog {
            path: Some(path),
            fired,
        }
    }

    /// The (object, kind) pairs alerted before.
    pub fn fired(&self) -> &HashSet<(String, AlertKind)> {
        &self.fired
    }

    /// Keep a new alert (best effort: a full disk costs a repeated alert after a restart, no more).
    pub fn record(&mut self, alert: &Alert) {
        self.fired.insert((alert.object.clone(), alert.kind));
        self.append(serde_json::json!({
            "object": alert.object,
            "kind": alert.kind.as_str(),
            "at_utc": chrono::DateTime::<chrono::Utc>::from(alert.at)
                .to_rfc3339_opts(chrono::SecondsFormat::Secs, true),
        }));
    }

    /// Keep that a rule no longer holds for an object: its next crossing alerts again.
    pub fn clear(&mut self, object: &str, kind: AlertKind) {
        if self.fired.remove(&(object.to_string(), kind)) {
            self.append(serde_json::json!({
                "object": object,
                "kind": kind.as_str(),
                "cleared": true,
            }));
        }
    }

    fn append(&self, line: serde_json::Value) {
        let Some(path) = &self.path else {
            return;
        };
        let written = std::fs::OpenOptions::new()
            .create(true)
            .append(true)
            .open(path)
            .and_then(|mut f| writeln!(f, "{line}"));
        if let Err(e) = written {
            tracing::warn!("alerts: cannot keep the alert in {}: {e}", path.display());
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn alerts_kept_in_the_state_directory_read_back_and_bad_lines_are_skipped() {
        let dir = std::env::temp_dir().join(format!("il-alertlog-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let mut log = AlertLog::open(Some(&dir));
        assert!(log.fired().is_empty());
        let alert = Alert {
            object: "qka2e7f".into(),
            kind: AlertKind::Strong,
            p: 0.99,
            nights: 2,
            at: std::time::SystemTime::UNIX_EPOCH,
            text: String::new(),
        };
        log.record(&alert);
        std::fs::OpenOptions::new()
            .append(true)
            .open(dir.join(ALERT_LOG))
            .and_then(|mut f| writeln!(f, "{{not json"))
            .unwrap();
        let mut again = AlertLog::open(Some(&dir));
        assert!(
            again
                .fired()
                .contains(&("qka2e7f".into(), AlertKind::Strong))
        );
        assert_eq!(again.fired().len(), 1);
        // A rule that cleared alerts again after the next restart.
        again.clear("qka2e7f", AlertKind::Strong);
        assert!(AlertLog::open(Some(&dir)).fired().is_empty());
        assert!(AlertLog::open(None).fired().is_empty());
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
