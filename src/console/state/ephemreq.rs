//! What the console's ephemeris is asked for: the site (the candidate's last one until the observer
//! picks another from the sites of the feed, or the configuration's), the night's dark window there, and
//! degrees or sexagesimal. Keys in the ephemeris panel change it; the runtime computes it off the UI
//! thread and reports the window it found.

use super::{App, Effect, Mode};
use crate::console::actions::Action;

#[derive(Debug, Clone, Default, PartialEq)]
pub struct EphemRequest {
    /// The site asked for (None: the site of the candidate's last observation).
    pub site: Option<String>,
    /// RA and Dec as h m s and ° ′ ″ instead of degrees.
    pub sexagesimal: bool,
    /// What the runtime found: the site used and its dark window, as a line for the panel.
    pub window: Option<String>,
}

impl App {
    /// Site codes of the feed (those the candidates were observed from) and the requested one.
    pub fn feed_sites(&self) -> Vec<String> {
        let mut v: Vec<String> = self
            .candidates
            .iter()
            .flat_map(|c| c.fit.residuals.iter().map(|r| r.site.clone()))
            .chain(self.ephem.site.clone())
            .collect();
        v.sort();
        v.dedup();
        v
    }

    /// Keys of the ephemeris panel: the next site, degrees/sexagesimal, writing the request out.
    pub(super) fn ephemeris_action(&mut self, a: Action) -> Vec<Effect> {
        if self.mode != Mode::Ephemeris {
            return Vec::new();
        }
        let Some(object) = self.selected.clone() else {
            return Vec::new();
        };
        match a {
            Action::NextSite => {
                let sites = self.feed_sites();
                let now = self.ephem.site.clone().or_else(|| {
                    self.selected_candidate()
                        .and_then(|c| c.fit.residuals.last().map(|r| r.site.clone()))
                });
                let k = now
                    .and_then(|s| sites.iter().position(|x| *x == s))
                    .map_or(0, |k| (k + 1) % sites.len().max(1));
                self.ephem.site = sites.get(k).cloned();
                self.ephemeris = None;
                self.ephem.window = None;
                vec![Effect::Ephemeris(object)]
            }
            Action::Units => {
                self.ephem.sexagesimal = !self.ephem.sexagesimal;
                Vec::new()
            }
            Action::Export => match &self.ephemeris {
                Some((obj, pts)) if *obj == object => {
                    vec![Effect::Request(
                        object,
                        crate::console::ephemtext::lines(self, obj, pts),
                    )]
                }
                _ => {
                    self.message = Some("the ephemeris is still being computed".into());
                    Vec::new()
                }
            },
            _ => Vec::new(),
        }
    }
}
