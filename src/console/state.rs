//! Console state and what every action does to it. No I/O here: actions return effects (refit, journal,
//! ephemeris) that the runtime carries out off the UI thread, and results come back as events.

use super::actions::Action;
use super::keymap::{Context, Key, Keymap};
use crate::feed::InputError;
use crate::feed::journal::{Entry, Standing, Verdict};
use crate::feed::sanitize::clean;
use crate::fitting::ephemeris::EphemerisPoint;
use crate::fitting::fit::FitResult;
use ratatui::crossterm::event::{Event, KeyEvent};
use std::collections::HashMap;
use tui_input::Input;
use tui_input::backend::crossterm::EventHandler;

mod changes;
pub mod ephemreq;
pub mod fresh;
pub use changes::ObsRow;

pub use crate::feed::engine::Overrides;

#[derive(Debug, Clone)]
pub struct Candidate {
    pub fit: FitResult,
    pub version: u64,
    /// The decision that stands (the journal's, whoever made it).
    pub decision: Option<Entry>,
    /// Waiting for the journal to confirm a change.
    pub saving: bool,
    pub overrides: Overrides,
    /// Observations currently known for the object (a decision on fewer is flagged).
    pub n_known: usize,
    /// When it arrived and changed, whether the observer has seen it since, its answers refit by refit.
    pub fresh: fresh::Fresh,
}

/// Columns the list can be sorted by.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SortKey {
    Rank,
    Odds,
    Probability,
    Eccentricity,
    Perihelion,
    Inclination,
    Arc,
    Nights,
    Observations,
    Rms,
    Method,
    Status,
    Object,
    Decision,
}

impl SortKey {
    pub const ALL: [SortKey; 14] = [
        SortKey::Rank,
        SortKey::Odds,
        SortKey::Probability,
        SortKey::Eccentricity,
        SortKey::Perihelion,
        SortKey::Inclination,
        SortKey::Arc,
        SortKey::Nights,
        SortKey::Observations,
        SortKey::Rms,
        SortKey::Method,
        SortKey::Status,
        SortKey::Object,
        SortKey::Decision,
    ];
    pub fn label(self) -> &'static str {
        match self {
            SortKey::Rank => "rank",
            SortKey::Odds => "odds",
            SortKey::Probability => "P(unb)",
            SortKey::Eccentricity => "e",
            SortKey::Perihelion => "q",
            SortKey::Inclination => "i",
            SortKey::Arc => "arc",
            SortKey::Nights => "nights",
            SortKey::Observations => "obs",
            SortKey::Rms => "rms",
            SortKey::Method => "method",
            SortKey::Status => "status",
            SortKey::Object => "object",
            SortKey::Decision => "decision",
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mode {
    List,
    Filter,
    Note,
    Help,
    Rejected,
    Ephemeris,
    Plan,
    Origin,
    Alerts,
    Compare,
}

/// Feed counters for the status line.
#[derive(Debug, Clone, Default)]
pub struct FeedStatus {
    pub files_seen: usize,
    pub waiting: usize,
    pub fitting: usize,
    pub failed: usize,
    pub last_arrival: Option<String>,
}

/// What the runtime must do after an action.
#[derive(Debug, Clone, PartialEq)]
pub enum Effect {
    Refit {
        object: String,
        overrides: Overrides,
    },
    /// Write a line to the journal; what it changes takes effect when the journal reads it back.
    Journal(Entry),
    Ephemeris(String),
    /// Tonight's plan over every candidate.
    Plan,
    /// Write the list as shown (CSV and JSON).
    Export(Vec<crate::console::export::Row>),
    /// Write a follow-up request (the ephemeris panel's lines) for an object.
    Request(String, Vec<String>),
    Quit,
}

pub struct App {
    pub candidates: Vec<Candidate>,
    index: HashMap<String, usize>,
    /// Indices into `candidates`, sorted and filtered.
    pub view: Vec<usize>,
    pub selected: Option<String>,
    pub sort: SortKey,
    pub reverse: bool,
    pub filter: String,
    pub mode: Mode,
    pub input: Input,
    pub keymap: Keymap,
    pub status: FeedStatus,
    pub rejected: Vec<InputError>,
    pub message: Option<String>,
    pub obs_cursor: usize,
    pub overlay_scroll: usize,
    /// The last line an overlay can scroll to, as its last drawing found (scrolling stops there).
    pub overlay_max: std::cell::Cell<usize>,
    pub ephemeris: Option<(String, Vec<EphemerisPoint>)>,
    pub plan: Option<crate::fitting::plan::Plan>,
    pub page: usize,
    pub dirty: bool,
    pub clock: fn() -> String,
    /// What the journal says stands for every object (candidates or not yet).
    pub standing: Standing,
    /// The observer at this console (other observers' decisions are shown with their names).
    pub me: String,
    /// The night's alerts and the rules that raise them.
    pub alerts: crate::console::alerting::Alerts,
    /// The wall clock for arrival ages (fixed in tests).
    pub now: fn() -> std::time::SystemTime,
    /// The candidate marked for comparison with the selected one.
    pub compare_with: Option<String>,
    /// Whether the observer has pressed a key yet (until then the cursor keeps to the top row).
    pub cursor_moved: bool,
    /// What the ephemeris panel asks for (site, units) and the window it got.
    pub ephem: ephemreq::EphemRequest,
}

fn now_utc() -> String {
    chrono::Utc::now().to_rfc3339_opts(chrono::SecondsFormat::Secs, true)
}

impl App {
    pub fn new(keymap: Keymap) -> App {
        App {
            candidates: Vec::new(),
            index: HashMap::new(),
            view: Vec::new(),
            selected: None,
            sort: SortKey::Rank,
            reverse: false,
            filter: String::new(),
            mode: Mode::List,
            input: Input::default(),
            keymap,
            status: FeedStatus::default(),
            rejected: Vec::new(),
            message: None,
            obs_cursor: 0,
            overlay_scroll: 0,
            overlay_max: std::cell::Cell::new(usize::MAX),
            ephemeris: None,
            plan: None,
            page: 10,
            dirty: true,
            clock: now_utc,
            standing: Standing::default(),
            me: crate::feed::journal::observer_name(None),
            alerts: crate::console::alerting::Alerts::new(Default::default()),
            now: std::time::SystemTime::now,
            compare_with: None,
            cursor_moved: false,
            ephem: ephemreq::EphemRequest::default(),
        }
    }

    pub fn selected_candidate(&self) -> Option<&Candidate> {
        self.selected
            .as_ref()
            .and_then(|o| self.index.get(o))
            .map(|&i| &self.candidates[i])
    }

    /// A fit arrived: insert or replace (older versions are ignored), keep the cursor on its candidate.
    pub fn on_fit(&mut self, version: u64, fit: FitResult, n_known: usize) {
        match self.index.get(&fit.object).copied() {
            Some(i) => {
                let c = &mut self.candidates[i];
                if version < c.version {
                    return;
                }
                c.fresh.refit(&fit, (self.now)());
                c.fit = fit;
                c.version = version;
                c.n_known = n_known;
            }
            None => {
                self.index.insert(fit.object.clone(), self.candidates.len());
                let (decision, overrides) = self.stands_for(&fit.object);
                self.candidates.push(Candidate {
                    fresh: fresh::Fresh::new(&fit, (self.now)()),
                    fit,
                    version,
                    decision,
                    saving: false,
                    overrides,
                    n_known,
                });
            }
        }
        self.refresh_view();
    }

    /// A decision the journal could not save: the row stops saying "saving…" and keeps what it had.
    pub fn on_save_failed(&mut self, object: &str, reason: &str) {
        if let Some(&i) = self.index.get(object) {
            self.candidates[i].saving = false;
        }
        self.message = Some(format!(
            "DECISION NOT SAVED for {}: {}",
            clean(object),
            clean(reason)
        ));
        self.dirty = true;
    }

    pub fn on_rejected(&mut self, e: InputError) {
        self.rejected.push(e);
        self.dirty = true;
    }

    fn sort_value(&self, c: &Candidate) -> (f64, String) {
        let f = &c.fit;
        let v = match self.sort {
            SortKey::Rank => {
                // Tiers first; within a tier the posterior odds (any finite log-odds fits in ±1e5).
                let (tier, z) = f.rank_key();
                -(f64::from(tier) * 1e6 + z.clamp(-1e5, 1e5))
            }
            SortKey::Odds => -f.log10_odds.unwrap_or(f64::NEG_INFINITY),
            SortKey::Probability => -f.p_hyperbolic.unwrap_or(-1.0),
            SortKey::Eccentricity => -f.e.unwrap_or(-1.0),
            SortKey::Perihelion => f.q_au.unwrap_or(f64::INFINITY),
            SortKey::Inclination => f.i_deg.unwrap_or(f64::INFINITY),
            SortKey::Arc => -f.arc_days,
            SortKey::Nights => -(f.n_nights as f64),
            SortKey::Observations => -(f.n_used as f64),
            SortKey::Rms => f.rms_arcsec.unwrap_or(f64::INFINITY),
            SortKey::Object | SortKey::Decision | SortKey::Method | SortKey::Status => 0.0,
        };
        let s = match self.sort {
            SortKey::Decision => c
                .decision
                .as_ref()
                .map_or("~".into(), |d| d.verdict_label().to_string()),
            SortKey::Method => format!("{} {}", f.method, f.object),
            SortKey::Status => format!("{} {}", f.status, f.object),
            _ => f.object.clone(),
        };
        (v, s)
    }

    fn matches(&self, c: &Candidate) -> bool {
        if self.filter.is_empty() {
            return true;
        }
        let needle = self.filter.to_lowercase();
        let f = &c.fit;
        let decision = c
            .decision
            .as_ref()
            .map_or("undecided", |d| d.verdict_label());
        [
            f.object.as_str(),
            f.status.as_str(),
            f.method.as_str(),
            decision,
        ]
        .iter()
        .any(|h| h.to_lowercase().contains(&needle))
    }

    /// Re-sort and re-filter; the selected candidate stays selected if it is still shown.
    pub fn refresh_view(&mut self) {
        let mut view: Vec<usize> = (0..self.candidates.len())
            .filter(|&i| self.matches(&self.candidates[i]))
            .collect();
        view.sort_by(|&a, &b| {
            let (va, sa) = self.sort_value(&self.candidates[a]);
            let (vb, sb) = self.sort_value(&self.candidates[b]);
            va.total_cmp(&vb).then(sa.cmp(&sb))
        });
        if self.reverse {
            view.reverse();
        }
        self.view = view;
        let still = self.selected.as_ref().is_some_and(|s| {
            self.view
                .iter()
                .any(|&i| &self.candidates[i].fit.object == s)
        });
        // Until the observer has moved the cursor it stays on the top row as the list re-ranks; after
        // that it follows the candidate it is on.
        if !still || !self.cursor_moved {
            self.selected = self
                .view
                .first()
                .map(|&i| self.candidates[i].fit.object.clone());
            self.obs_cursor = 0;
        }
        self.dirty = true;
    }

    pub fn selected_row(&self) -> Option<usize> {
        let s = self.selected.as_ref()?;
        self.view
            .iter()
            .position(|&i| &self.candidates[i].fit.object == s)
    }

    fn select_row(&mut self, row: usize) {
        if let Some(&i) = self.view.get(row) {
            let obj = self.candidates[i].fit.object.clone();
            if self.selected.as_ref() != Some(&obj) {
                self.obs_cursor = 0;
            }
            self.selected = Some(obj);
        }
    }

    fn context(&self) -> Context {
        match self.mode {
            Mode::List => Context::List,
            Mode::Filter | Mode::Note => Context::Input,
            Mode::Help
            | Mode::Rejected
            | Mode::Ephemeris
            | Mode::Plan
            | Mode::Origin
            | Mode::Alerts
            | Mode::Compare => Context::Overlay,
        }
    }

    /// One key press.
    pub fn on_key(&mut self, ev: KeyEvent) -> Vec<Effect> {
        self.dirty = true;
        self.cursor_moved = true;
        // Ctrl-C quits from every mode, prompts and overlays included, whatever the key map says.
        if ev.code == crossterm::event::KeyCode::Char('c')
            && ev
                .modifiers
                .contains(crossterm::event::KeyModifiers::CONTROL)
        {
            return vec![Effect::Quit];
        }
        let ctx = self.context();
        let action = Key::from_event(&ev).and_then(|k| self.keymap.action(ctx, &k));
        if ctx == Context::Input {
            return match action {
                Some(Action::Accept) => self.accept_input(),
                Some(Action::Cancel) => {
                    // Cancelling the filter prompt drops the filter it was typing.
                    if self.mode == Mode::Filter {
                        self.filter.clear();
                        self.refresh_view();
                    }
                    self.mode = Mode::List;
                    self.input.reset();
                    Vec::new()
                }
                _ => {
                    self.input.handle_event(&Event::Key(ev));
                    if self.mode == Mode::Filter {
                        self.filter = self.input.value().to_string();
                        self.refresh_view();
                    }
                    Vec::new()
                }
            };
        }
        let fx = match action {
            Some(a) => self.act(a),
            None => Vec::new(),
        };
        // The row under the cursor has been seen as it is now.
        if self.mode == Mode::List
            && let Some(i) = self
                .selected
                .as_ref()
                .and_then(|o| self.index.get(o))
                .copied()
        {
            self.candidates[i].fresh.visit();
        }
        fx
    }

    /// First press marks the selected candidate; a press on another opens the two side by side.
    fn compare(&mut self) {
        let Some(sel) = self.selected.clone() else {
            return;
        };
        match &self.compare_with {
            Some(m) if *m != sel && self.index.contains_key(m) => {
                self.mode = Mode::Compare;
                self.overlay_scroll = 0;
                self.message = None;
            }
            _ => {
                self.message = Some(format!(
                    "{} marked for comparison: select another and press the compare key again",
                    clean(&sel)
                ));
                self.compare_with = Some(sel);
            }
        }
    }

    fn accept_input(&mut self) -> Vec<Effect> {
        let text = crate::feed::sanitize::clean(self.input.value().trim());
        let mode = self.mode;
        self.mode = Mode::List;
        match mode {
            Mode::Filter => {
                self.filter = text;
                self.refresh_view();
                Vec::new()
            }
            Mode::Note => {
                self.input.reset();
                let verdict = self
                    .selected_candidate()
                    .and_then(|c| c.decision.as_ref().and_then(|d| d.verdict));
                if text.is_empty() {
                    Vec::new()
                } else {
                    let effects = self.decide(verdict.unwrap_or(Verdict::KeepWatching), Some(text));
                    // A note needs a decision to ride on: say which one it got.
                    if verdict.is_none() {
                        self.message = Some(
                            "note saved; no decision yet, so it is recorded as keep watching"
                                .into(),
                        );
                    }
                    effects
                }
            }
            _ => Vec::new(),
        }
    }

    /// Carry out one action.
    pub fn act(&mut self, a: Action) -> Vec<Effect> {
        let rows = self.view.len();
        let row = self.selected_row().unwrap_or(0);
        if self.context() == Context::Overlay {
            match a {
                Action::Cancel | Action::Help | Action::Quit => self.mode = Mode::List,
                Action::MoveDown => {
                    self.overlay_scroll = (self.overlay_scroll + 1).min(self.overlay_max.get())
                }
                Action::MoveUp => self.overlay_scroll = self.overlay_scroll.saturating_sub(1),
                Action::NextSite | Action::Units | Action::Export => {
                    return self.ephemeris_action(a);
                }
                _ => {}
            }
            return Vec::new();
        }
        match a {
            Action::MoveDown => self.select_row((row + 1).min(rows.saturating_sub(1))),
            Action::MoveUp => self.select_row(row.saturating_sub(1)),
            Action::PageDown => self.select_row((row + self.page).min(rows.saturating_sub(1))),
            Action::PageUp => self.select_row(row.saturating_sub(self.page)),
            Action::First => self.select_row(0),
            Action::Last => self.select_row(rows.saturating_sub(1)),
            Action::NextUndecided => {
                let next = (1..=rows).map(|k| (row + k) % rows.max(1)).find(|&r| {
                    self.view
                        .get(r)
                        .is_some_and(|&i| self.candidates[i].decision.is_none())
                });
                match next {
                    Some(r) => self.select_row(r),
                    None => self.message = Some("every shown candidate has a decision".into()),
                }
            }
            Action::NextChanged => {
                let next = (1..=rows).map(|k| (row + k) % rows.max(1)).find(|&r| {
                    self.view
                        .get(r)
                        .is_some_and(|&i| self.candidates[i].fresh.mark() != fresh::Mark::Seen)
                });
                match next {
                    Some(r) => self.select_row(r),
                    None => self.message = Some("nothing new or updated since you looked".into()),
                }
            }
            Action::SortNext => {
                let k = SortKey::ALL
                    .iter()
                    .position(|s| *s == self.sort)
                    .unwrap_or(0);
                self.sort = SortKey::ALL[(k + 1) % SortKey::ALL.len()];
                self.refresh_view();
            }
            Action::SortReverse => {
                self.reverse = !self.reverse;
                self.refresh_view();
            }
            Action::Filter => {
                self.mode = Mode::Filter;
                self.input = Input::new(self.filter.clone());
            }
            Action::ClearFilter => {
                self.filter.clear();
                self.refresh_view();
            }
            Action::Pursue => return self.decide(Verdict::Pursue, None),
            Action::SetAside => return self.decide(Verdict::SetAside, None),
            Action::KeepWatching => return self.decide(Verdict::KeepWatching, None),
            Action::Undo => {
                if self
                    .selected_candidate()
                    .is_some_and(|c| c.decision.is_some())
                {
                    return self.decide(Verdict::Undo, None);
                }
                self.message = Some("no decision to withdraw".into());
            }
            Action::Note => {
                if self.selected.is_some() {
                    self.mode = Mode::Note;
                    self.input = Input::default();
                }
            }
            Action::ObsNext => {
                let n = self.observation_rows().len();
                self.obs_cursor = (self.obs_cursor + 1).min(n.saturating_sub(1));
            }
            Action::ObsPrev => self.obs_cursor = self.obs_cursor.saturating_sub(1),
            Action::ToggleObs => return self.toggle_obs(),
            Action::ForceRanging | Action::ForcePerturbations => return self.force(a),
            Action::Ephemeris => {
                if let Some(o) = self.selected.clone() {
                    self.mode = Mode::Ephemeris;
                    self.overlay_scroll = 0;
                    if self.ephemeris.as_ref().is_none_or(|(obj, _)| *obj != o) {
                        self.ephemeris = None;
                    }
                    return vec![Effect::Ephemeris(o)];
                }
            }
            Action::Plan => {
                self.mode = Mode::Plan;
                self.overlay_scroll = 0;
                self.plan = None;
                return vec![Effect::Plan];
            }
            Action::Origin => match self.selected_candidate() {
                Some(c) if c.fit.origin.is_some() => {
                    self.mode = Mode::Origin;
                    self.overlay_scroll = 0;
                }
                Some(_) => {
                    self.message =
                        Some("no origin sheet: P(unbound) is below 0.01 or not known yet".into())
                }
                None => {}
            },
            Action::RejectedFiles => {
                self.mode = Mode::Rejected;
                self.overlay_scroll = 0;
            }
            Action::Export => return vec![Effect::Export(crate::console::export::rows(self))],
            Action::Compare => self.compare(),
            // Keys of the ephemeris panel; nothing in the list.
            Action::NextSite | Action::Units => {}
            Action::Alerts => {
                self.mode = Mode::Alerts;
                self.overlay_scroll = 0;
            }
            Action::QuietAlerts => {
                self.alerts.quiet = !self.alerts.quiet;
                self.message = Some(if self.alerts.quiet {
                    "alerts quiet: still listed (!), no bell, flash or command".into()
                } else {
                    "alerts loud again: bell, flash and command as configured".into()
                });
            }
            Action::Help => {
                self.mode = Mode::Help;
                self.overlay_scroll = 0;
            }
            Action::Quit => return vec![Effect::Quit],
            Action::Accept | Action::Cancel => {}
        }
        Vec::new()
    }

    /// The key labels bound to an action in the list context ("p", "x"…), for hints.
    pub fn keys(&self, a: Action) -> String {
        self.keymap
            .keys_for(Context::List, a)
            .iter()
            .map(Key::label)
            .collect::<Vec<_>>()
            .join("/")
    }
}
