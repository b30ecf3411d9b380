//! What one journal line says, and the one fold of lines into what stands for each object. The live
//! console and a replay after a restart run the same fold over the same lines in file order, so they
//! cannot disagree: a decision is pushed, `undo` pops back to the decision before it, an exclusion
//! or a restoration sets that observation's state, a forced method or perturbation choice replaces
//! the last one.

use crate::fitting::fit::{MethodChoice, PerturbChoice};
use crate::fitting::obsid::ObsId;
use serde::{Deserialize, Serialize};
use std::collections::{BTreeMap, BTreeSet};

/// What the observer decided about a candidate (our own words).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Verdict {
    /// Worth telescope time: hand on for follow-up.
    Pursue,
    /// Not interesting: ordinary object, artefact or false linkage.
    SetAside,
    /// Undecided: look again when more observations arrive.
    KeepWatching,
    /// Withdraws the object's last standing decision (the one before it stands again).
    Undo,
}

impl Verdict {
    pub fn label(self) -> &'static str {
        match self {
            Verdict::Pursue => "pursue",
            Verdict::SetAside => "set aside",
            Verdict::KeepWatching => "keep watching",
            Verdict::Undo => "undo",
        }
    }
}

/// What kind of change a line records. Lines written before kinds existed are decisions.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Kind {
    /// A verdict (with or without a note), or `undo`.
    #[default]
    Decision,
    /// An observation left out of the fit (`obs`).
    Exclude,
    /// An excluded observation taken back into the fit (`obs`).
    Restore,
    /// The fitting method forced or given back to automatic (`method`).
    Method,
    /// Planetary perturbations forced or given back to automatic (`perturbations`).
    Perturbations,
}

/// Who made a line when it does not say (lines written before observers were recorded).
pub const UNKNOWN_OBSERVER: &str = "unknown";

/// One journal line.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Entry {
    /// Position in the journal: increasing in file order, unique across every process writing it.
    pub seq: u64,
    pub time_utc: String,
    #[serde(default)]
    pub kind: Kind,
    pub object: String,
    /// Who made the change (sanitised); absent on old lines.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub observer: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub verdict: Option<Verdict>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
    /// The observations a decision was made on: how many, and a digest of their identities.
    #[serde(default, skip_serializing_if = "is_zero")]
    pub n_obs: usize,
    #[serde(default, skip_serializing_if = "String::is_empty")]
    pub obs_digest: String,
    /// The observation an exclusion or restoration is about.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub obs: Option<ObsId>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub method: Option<MethodChoice>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub perturbations: Option<PerturbChoice>,
}

fn is_zero(n: &usize) -> bool {
    *n == 0
}

/// Lines that are decisions were, before other kinds existed, simply "decisions".
pub type Decision = Entry;

impl Entry {
    /// A line of `kind` about `object`, with nothing else said yet.
    pub fn new(kind: Kind, object: &str, time_utc: String) -> Entry {
        Entry {
            seq: 0,
            time_utc,
            kind,
            object: object.to_string(),
            observer: None,
            verdict: None,
            note: None,
            n_obs: 0,
            obs_digest: String::new(),
            obs: None,
            method: None,
            perturbations: None,
        }
    }

    /// A decision line.
    pub fn decision(object: &str, verdict: Verdict, time_utc: String) -> Entry {
        Entry {
            verdict: Some(verdict),
            ..Entry::new(Kind::Decision, object, time_utc)
        }
    }

    /// Who made it, or "unknown" for lines that do not say.
    pub fn observer(&self) -> &str {
        self.observer.as_deref().unwrap_or(UNKNOWN_OBSERVER)
    }

    /// The verdict's words ("" for lines that are not decisions).
    pub fn verdict_label(&self) -> &'static str {
        self.verdict.map_or("", Verdict::label)
    }

    /// What the line does, in a few words (for the status line).
    pub fn describe(&self) -> String {
        match self.kind {
            Kind::Decision => self.verdict_label().to_string(),
            Kind::Exclude | Kind::Restore => format!(
                "{} {}",
                if self.kind == Kind::Exclude {
                    "excluded"
                } else {
                    "restored"
                },
                self.obs.as_ref().map_or_else(String::new, ObsId::label)
            ),
            Kind::Method => format!("method {:?}", self.method.unwrap_or_default()),
            Kind::Perturbations => {
                format!("perturbations {:?}", self.perturbations.unwrap_or_default())
            }
        }
    }
}

/// What stands for one object after its lines so far.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ObjectState {
    /// Decisions in force, oldest first: the last one stands; `undo` removes it.
    pub decisions: Vec<Entry>,
    pub excluded: BTreeSet<ObsId>,
    pub method: MethodChoice,
    pub perturbations: PerturbChoice,
}

impl ObjectState {
    /// Apply one line about this object (lines that say too little to act on change nothing).
    pub fn apply(&mut self, e: &Entry) {
        match (e.kind, &e.obs) {
            (Kind::Decision, _) => match e.verdict {
                Some(Verdict::Undo) => {
                    self.decisions.pop();
                }
                Some(_) => self.decisions.push(e.clone()),
                None => {}
            },
            (Kind::Exclude, Some(id)) => {
                self.excluded.insert(id.clone());
            }
            (Kind::Restore, Some(id)) => {
                self.excluded.remove(id);
            }
            (Kind::Exclude | Kind::Restore, None) => {}
            (Kind::Method, _) => self.method = e.method.unwrap_or_default(),
            (Kind::Perturbations, _) => self.perturbations = e.perturbations.unwrap_or_default(),
        }
    }

    /// The decision that stands.
    pub fn standing(&self) -> Option<&Entry> {
        self.decisions.last()
    }
}

/// What stands for every object: the fold of the journal's lines in file order.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Standing {
    pub objects: BTreeMap<String, ObjectState>,
}

impl Standing {
    pub fn apply(&mut self, e: &Entry) {
        self.objects.entry(e.object.clone()).or_default().apply(e);
    }

    pub fn get(&self, object: &str) -> Option<&ObjectState> {
        self.objects.get(object)
    }

    pub fn from_entries<'a>(entries: impl IntoIterator<Item = &'a Entry>) -> Standing {
        let mut s = Standing::default();
        for e in entries {
            s.apply(e);
        }
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_line_written_before_kinds_and_observers_reads_as_an_unknown_observers_decision() {
        let old = r#"{"seq":3,"time_utc":"2027-02-26T03:00:00Z","object":"A","verdict":"set-aside","note":null,"n_obs":12,"obs_digest":"00"}"#;
        let e: Entry = serde_json::from_str(old).unwrap();
        assert_eq!(e.kind, Kind::Decision);
        assert_eq!(e.verdict, Some(Verdict::SetAside));
        assert_eq!(e.observer(), UNKNOWN_OBSERVER);
        assert_eq!((e.n_obs, e.seq), (12, 3));
    }

    #[test]
    fn undo_brings_back_the_decision_before_and_leaves_exclusions_alone() {
        let t = || "2027-02-26T03:00:00Z".to_string();
        let id: ObsId = "246109812345678/1/2/F51".parse().unwrap();
        let mut s = ObjectState::default();
        s.apply(&Entry::decision("A", Verdict::KeepWatching, t()));
        s.apply(&Entry {
            obs: Some(id.clone()),
            ..Entry::new(Kind::Exclude, "A", t())
        });
        s.apply(&Entry::decision("A", Verdict::Pursue, t()));
        s.apply(&Entry::decision("A", Verdict::Undo, t()));
        assert_eq!(s.standing().unwrap().verdict, Some(Verdict::KeepWatching));
        assert!(s.excluded.contains(&id));
        s.apply(&Entry::decision("A", Verdict::Undo, t()));
        s.apply(&Entry::decision("A", Verdict::Undo, t()));
        assert!(s.standing().is_none());
    }
}
