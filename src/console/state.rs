//! Console state and what every action does to it. No I/O here: actions return effects (refit, journal,
//! ephemeris) that the runtime carries out off the UI thread, and results come back as events.

use super::actions::Action;
use super::keymap::{Context, Key, Keymap};
use crate::feed::InputError;
use crate::feed::journal::{Entry, Standing};
use crate::feed::sanitize::clean;
use crate::fitting::ephemeris::EphemerisPoint;
use crate::fitting::fit::FitResult;
use std::collections::HashMap;
use tui_input::Input;

mod changes;
pub mod ephemreq;
pub mod fresh;
mod keys;
pub use changes::ObsRow;

pub use crate::feed::engine::Overrides;

#[derive(Debug, Clone)]
pub struct Candidate {
    pub fit: FitResult,
    pub version: u64,
    /// The decision that stands (the journal's, whoever made it).
    pub decision: Option<Entry>,
    /// Lines about this candidate sent to the journal and not yet confirmed (a count: two decisions in
    /// quick succession are two lines, and the row says "saving…" until both are on disk).
    pub saving: u32,
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
    /// Why the key map in use is not the one asked for (shown atop the help, which alerts never
    /// replace as they replace the status line).
    pub keymap_warning: Option<String>,
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
    /// The screen is too small to show the list (as its last drawing found, `view::draw`): keys other than quit do
    /// nothing, since a decision made blind could land on a row nobody saw.
    pub hidden: bool,
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
    /// The export key was pressed while a line was still being saved: the list's order then (indices
    /// into `candidates`), written with its decisions once the journal confirms every line.
    pub export_waiting: Option<Vec<usize>>,
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
            hidden: false,
            keymap_warning: None,
            clock: now_utc,
            standing: Standing::default(),
            me: crate::feed::journal::observer_name(None),
            alerts: crate::console::alerting::Alerts::new(Default::default()),
            now: std::time::SystemTime::now,
            compare_with: None,
            export_waiting: None,
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
                    saving: 0,
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
            let c = &mut self.candidates[i];
            c.saving = c.saving.saturating_sub(1);
        }
        let cancelled = if self.export_waiting.take().is_some() {
            " — the export waiting for it was not written: press the export key again"
        } else {
            ""
        };
        self.message = Some(format!(
            "DECISION NOT SAVED for {}: {}{cancelled}",
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
                // Tiers first; within a tier the posterior odds, squeezed monotonically into ±710 so
                // that the tier always wins (a clamp once tied every log-odds past 10⁵, and the
                // strongest candidates fell into id order).
                let (tier, z) = f.rank_key();
                let squeezed = z.signum() * z.abs().ln_1p();
                -(f64::from(tier) * 1e6 + squeezed.clamp(-1e3, 1e3))
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
            // Usable fits (ok and undetermined) before poor ones before failures, as the ranking.
            SortKey::Status => format!("{} {} {}", 2 - f.rank_key().0, f.status, f.object),
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
            f.status.label(),
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
