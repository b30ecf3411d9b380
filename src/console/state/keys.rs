//! What a key press and each action do to the console's state.

use super::{App, Effect, Mode, SortKey, fresh};
use crate::console::actions::Action;
use crate::console::keymap::{Context, Key};
use crate::feed::journal::Verdict;
use crate::feed::sanitize::clean;
use ratatui::crossterm::event::{Event, KeyEvent};
use tui_input::Input;
use tui_input::backend::crossterm::EventHandler;

impl App {
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
        if self.hidden {
            return match action {
                Some(Action::Quit) => vec![Effect::Quit],
                _ => Vec::new(),
            };
        }
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
        // The row the cursor was on when the key came has been seen (the top row, where the cursor
        // starts, once kept its mark after the observer moved off it), and so has the one it is on
        // after.
        self.visit_selected();
        let fx = match action {
            Some(a) => self.act(a),
            None => Vec::new(),
        };
        self.visit_selected();
        fx
    }

    /// In the list, the row under the cursor has been seen as it is now.
    fn visit_selected(&mut self) {
        if self.mode == Mode::List
            && let Some(i) = self
                .selected
                .as_ref()
                .and_then(|o| self.index.get(o))
                .copied()
        {
            self.candidates[i].fresh.visit();
        }
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
        if self.context() == Context::Overlay {
            return self.act_in_overlay(a);
        }
        match a {
            Action::MoveDown
            | Action::MoveUp
            | Action::PageDown
            | Action::PageUp
            | Action::First
            | Action::Last
            | Action::NextUndecided
            | Action::NextChanged => self.navigate(a),
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
            Action::Ephemeris
            | Action::Plan
            | Action::Origin
            | Action::RejectedFiles
            | Action::Alerts
            | Action::Help => return self.open(a),
            Action::Export => return self.export(),
            Action::Compare => self.compare(),
            // Keys of the ephemeris panel; nothing in the list.
            Action::NextSite | Action::Units => {}
            Action::QuietAlerts => {
                self.alerts.quiet = !self.alerts.quiet;
                self.message = Some(if self.alerts.quiet {
                    "alerts quiet: still listed (!), no bell, flash or command".into()
                } else {
                    "alerts loud again: bell, flash and command as configured".into()
                });
            }
            Action::Quit => return vec![Effect::Quit],
            Action::Accept | Action::Cancel => {}
        }
        Vec::new()
    }

    /// An action while an overlay is open: close, scroll, or the ephemeris panel's own keys.
    fn act_in_overlay(&mut self, a: Action) -> Vec<Effect> {
        match a {
            Action::Cancel | Action::Help | Action::Quit => self.mode = Mode::List,
            Action::MoveDown => {
                self.overlay_scroll = (self.overlay_scroll + 1).min(self.overlay_max.get())
            }
            Action::MoveUp => self.overlay_scroll = self.overlay_scroll.saturating_sub(1),
            Action::NextSite | Action::Units | Action::Export => return self.ephemeris_action(a),
            _ => {}
        }
        Vec::new()
    }

    /// Cursor moves in the list.
    fn navigate(&mut self, a: Action) {
        let rows = self.view.len();
        let row = self.selected_row().unwrap_or(0);
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
            _ => {}
        }
    }

    /// Open an overlay (and ask the runtime for what it shows).
    fn open(&mut self, a: Action) -> Vec<Effect> {
        match a {
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
            Action::Alerts => {
                self.mode = Mode::Alerts;
                self.overlay_scroll = 0;
            }
            Action::Help => {
                self.mode = Mode::Help;
                self.overlay_scroll = 0;
            }
            _ => {}
        }
        Vec::new()
    }
}
