//! What the observer changes — decisions, notes, exclusions and restorations, forced methods — goes
//! to the journal as a line and takes effect when the journal reads its lines back, in file order,
//! whoever wrote them. So the screen is always the fold of the journal: the same live, after a
//! restart, and in every console sharing the state directory.

use super::{App, Candidate, Effect, Overrides};
use crate::feed::journal::{Entry, Kind, ObjectState, Verdict};
use crate::feed::sanitize::clean;
use crate::fitting::fit::{MethodChoice, PerturbChoice};
use crate::fitting::obsid::ObsId;

/// One observation of the selected candidate, in time order: fitted or left out by the observer.
#[derive(Debug, Clone, PartialEq)]
pub struct ObsRow {
    pub id: ObsId,
    /// UTC time and site.
    pub label: String,
    /// Its row in the fit's residuals (none when it was left out of the fit).
    pub residual: Option<usize>,
    pub excluded: bool,
}

fn overrides_of(s: Option<&ObjectState>) -> Overrides {
    s.map_or_else(Overrides::default, Overrides::from)
}

impl App {
    /// The standing decision and fitting choices the journal holds for `object`.
    pub(super) fn stands_for(&self, object: &str) -> (Option<Entry>, Overrides) {
        let s = self.standing.get(object);
        (s.and_then(ObjectState::standing).cloned(), overrides_of(s))
    }

    /// How `object` is to be fitted, as the journal says.
    pub fn overrides(&self, object: &str) -> Overrides {
        overrides_of(self.standing.get(object))
    }

    /// A journal line read back (this console's, another's, or replayed at start): it takes effect.
    /// Returns a refit when it changed how a shown candidate is fitted.
    pub fn on_entry(&mut self, e: &Entry) -> Vec<Effect> {
        self.standing.apply(e);
        self.dirty = true;
        let Some(&i) = self.index.get(&e.object) else {
            return Vec::new();
        };
        let (decision, overrides) = self.stands_for(&e.object);
        let c: &mut Candidate = &mut self.candidates[i];
        c.decision = decision;
        if e.observer() != self.me {
            self.message = Some(format!(
                "{} by {}: {}",
                clean(&e.object),
                clean(e.observer()),
                clean(&e.describe())
            ));
        }
        if c.overrides == overrides {
            return Vec::new();
        }
        c.overrides = overrides.clone();
        vec![Effect::Refit {
            object: c.fit.object.clone(),
            overrides,
        }]
    }

    /// The journal confirmed this console's line: the row stops saying "saving…", and an export that
    /// waited for it is written now.
    #[must_use]
    pub fn on_saved(&mut self, e: &Entry) -> Vec<Effect> {
        if let Some(&i) = self.index.get(&e.object) {
            let c = &mut self.candidates[i];
            c.saving = c.saving.saturating_sub(1);
        }
        self.message = Some(format!("{}: {} saved", clean(&e.object), e.describe()));
        self.dirty = true;
        if self.export_waiting.is_some() && !self.candidates.iter().any(|c| c.saving > 0) {
            let order = self.export_waiting.take().unwrap_or_default();
            return vec![Effect::Export(crate::console::export::rows_in(
                self, &order,
            ))];
        }
        Vec::new()
    }

    /// X: the list as shown, with its decisions. A line still being saved is not yet in the list's
    /// state (that is the fold of the journal), so the export waits for it rather than leave out what
    /// the observer has just decided. It is written in the order shown when the key was pressed.
    pub(super) fn export(&mut self) -> Vec<Effect> {
        let n: u32 = self.candidates.iter().map(|c| c.saving).sum();
        if n == 0 {
            return vec![Effect::Export(crate::console::export::rows(self))];
        }
        self.export_waiting = Some(self.view.clone());
        self.message = Some(format!(
            "export waits for {n} line{} still being saved…",
            if n == 1 { "" } else { "s" }
        ));
        Vec::new()
    }

    /// Send one line about the selected candidate to the journal.
    fn write(&mut self, mut e: Entry, doing: String) -> Vec<Effect> {
        let Some(&i) = self.selected.as_ref().and_then(|o| self.index.get(o)) else {
            return Vec::new();
        };
        let c = &mut self.candidates[i];
        e.object = c.fit.object.clone();
        e.time_utc = (self.clock)();
        c.saving += 1;
        self.message = Some(format!("{}: {doing} (saving…)", clean(&c.fit.object)));
        vec![Effect::Journal(e)]
    }

    pub(super) fn decide(&mut self, verdict: Verdict, note: Option<String>) -> Vec<Effect> {
        let Some(c) = self.selected_candidate() else {
            return Vec::new();
        };
        let mut keys: Vec<String> = c.fit.residuals.iter().map(|r| r.id.to_string()).collect();
        let e = Entry {
            note,
            n_obs: c.fit.n_obs,
            obs_digest: crate::feed::journal::digest(&mut keys),
            ..Entry::decision("", verdict, String::new())
        };
        self.write(e, verdict.label().to_string())
    }

    /// The selected candidate's observations in time order, fitted and excluded alike: an exclusion
    /// leaves every row where it was, so the cursor stays on the observation it was on.
    pub fn observation_rows(&self) -> Vec<ObsRow> {
        let Some(c) = self.selected_candidate() else {
            return Vec::new();
        };
        let mut rows: Vec<ObsRow> = c
            .fit
            .residuals
            .iter()
            .enumerate()
            .map(|(k, r)| ObsRow {
                id: r.id.clone(),
                label: format!("{}@{}", r.time_utc, r.site),
                residual: Some(k),
                excluded: c.overrides.excluded.contains(&r.id),
            })
            .collect();
        for id in &c.overrides.excluded {
            if !rows.iter().any(|r| &r.id == id) {
                rows.push(ObsRow {
                    id: id.clone(),
                    label: id.label(),
                    residual: None,
                    excluded: true,
                });
            }
        }
        rows.sort_by(|a, b| a.id.cmp(&b.id));
        rows
    }

    pub(super) fn toggle_obs(&mut self) -> Vec<Effect> {
        let Some(row) = self.observation_rows().into_iter().nth(self.obs_cursor) else {
            return Vec::new();
        };
        let (kind, doing) = if row.excluded {
            (Kind::Restore, format!("restore {}", row.label))
        } else {
            (Kind::Exclude, format!("exclude {}", row.label))
        };
        let e = Entry {
            obs: Some(row.id),
            ..Entry::new(kind, "", String::new())
        };
        self.write(e, doing)
    }

    pub(super) fn force(&mut self, a: super::Action) -> Vec<Effect> {
        let Some(c) = self.selected_candidate() else {
            return Vec::new();
        };
        let e = if a == super::Action::ForceRanging {
            let method = match c.overrides.method {
                MethodChoice::Auto => MethodChoice::Ranging,
                MethodChoice::Ranging => MethodChoice::Auto,
            };
            Entry {
                method: Some(method),
                ..Entry::new(Kind::Method, "", String::new())
            }
        } else {
            let perturbations = match c.overrides.perturbations {
                PerturbChoice::On => PerturbChoice::Auto,
                _ => PerturbChoice::On,
            };
            Entry {
                perturbations: Some(perturbations),
                ..Entry::new(Kind::Perturbations, "", String::new())
            }
        };
        let doing = e.describe();
        self.write(e, doing)
    }
}
