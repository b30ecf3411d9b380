//! Every bindable action, with the one-line description the help overlay shows. Internal effects
//! (refits, journal writes) are separate: see `state::Effect`.

use serde::Deserialize;

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Action {
    MoveDown,
    MoveUp,
    PageDown,
    PageUp,
    First,
    Last,
    NextUndecided,
    NextChanged,
    SortNext,
    SortReverse,
    Filter,
    ClearFilter,
    Pursue,
    SetAside,
    KeepWatching,
    Note,
    Undo,
    ObsNext,
    ObsPrev,
    ToggleObs,
    ForceRanging,
    ForcePerturbations,
    Ephemeris,
    Plan,
    Origin,
    RejectedFiles,
    Alerts,
    QuietAlerts,
    Export,
    Compare,
    NextSite,
    Units,
    Help,
    Quit,
    Accept,
    Cancel,
}

impl Action {
    pub const ALL: [Action; 36] = [
        Action::MoveDown,
        Action::MoveUp,
        Action::PageDown,
        Action::PageUp,
        Action::First,
        Action::Last,
        Action::NextUndecided,
        Action::NextChanged,
        Action::SortNext,
        Action::SortReverse,
        Action::Filter,
        Action::ClearFilter,
        Action::Pursue,
        Action::SetAside,
        Action::KeepWatching,
        Action::Note,
        Action::Undo,
        Action::ObsNext,
        Action::ObsPrev,
        Action::ToggleObs,
        Action::ForceRanging,
        Action::ForcePerturbations,
        Action::Ephemeris,
        Action::Plan,
        Action::Origin,
        Action::RejectedFiles,
        Action::Alerts,
        Action::QuietAlerts,
        Action::Export,
        Action::Compare,
        Action::NextSite,
        Action::Units,
        Action::Help,
        Action::Quit,
        Action::Accept,
        Action::Cancel,
    ];

    pub fn name(self) -> &'static str {
        match self {
            Action::MoveDown => "move-down",
            Action::MoveUp => "move-up",
            Action::PageDown => "page-down",
            Action::PageUp => "page-up",
            Action::First => "first",
            Action::Last => "last",
            Action::NextUndecided => "next-undecided",
            Action::NextChanged => "next-changed",
            Action::SortNext => "sort-next",
            Action::SortReverse => "sort-reverse",
            Action::Filter => "filter",
            Action::ClearFilter => "clear-filter",
            Action::Pursue => "pursue",
            Action::SetAside => "set-aside",
            Action::KeepWatching => "keep-watching",
            Action::Note => "note",
            Action::Undo => "undo",
            Action::ObsNext => "obs-next",
            Action::ObsPrev => "obs-prev",
            Action::ToggleObs => "toggle-obs",
            Action::ForceRanging => "force-ranging",
            Action::ForcePerturbations => "force-perturbations",
            Action::Ephemeris => "ephemeris",
            Action::Plan => "plan",
            Action::Origin => "origin",
            Action::RejectedFiles => "rejected-files",
            Action::Alerts => "alerts",
            Action::QuietAlerts => "quiet-alerts",
            Action::Export => "export",
            Action::Compare => "compare",
            Action::NextSite => "next-site",
            Action::Units => "units",
            Action::Help => "help",
            Action::Quit => "quit",
            Action::Accept => "accept",
            Action::Cancel => "cancel",
        }
    }

    pub fn describe(self) -> &'static str {
        match self {
            Action::MoveDown => "next candidate",
            Action::MoveUp => "previous candidate",
            Action::PageDown => "a page down",
            Action::PageUp => "a page up",
            Action::First => "top of the list",
            Action::Last => "bottom of the list",
            Action::NextUndecided => "jump to the next candidate without a decision",
            Action::NextChanged => {
                "jump to the next candidate new (+) or updated (~) since you looked"
            }
            Action::SortNext => "sort by the next column",
            Action::SortReverse => "reverse the sort order",
            Action::Filter => "type a filter (object id, status, method)",
            Action::ClearFilter => "show every candidate",
            Action::Pursue => "decide: pursue (hand on for follow-up)",
            Action::SetAside => "decide: set aside (ordinary, artefact or false linkage)",
            Action::KeepWatching => "decide: keep watching (wait for more data)",
            Action::Note => "attach a note to the candidate",
            Action::Undo => "withdraw the candidate's last decision",
            Action::ObsNext => "select the next observation",
            Action::ObsPrev => "select the previous observation",
            Action::ToggleObs => "exclude or restore the selected observation and refit",
            Action::ForceRanging => "refit this candidate by ranging (or back to automatic)",
            Action::ForcePerturbations => {
                "refit with planetary perturbations (or back to automatic)"
            }
            Action::Ephemeris => "follow-up ephemeris over the next dark window at the chosen site",
            Action::Plan => "follow-up plan for the next 24 hours at the sites of the feed",
            Action::Origin => {
                "where an unbound candidate comes from: original orbit, arrival, Galactic orbit"
            }
            Action::RejectedFiles => "list rejected files and lines",
            Action::Alerts => "the night's alerts, newest first",
            Action::QuietAlerts => "quiet alerts on or off (listed, but no bell, flash or command)",
            Action::Compare => "mark this candidate; on another, show the two side by side",
            Action::NextSite => "in the ephemeris: the next site of the feed",
            Action::Units => "in the ephemeris: RA/Dec in degrees or h m s / ° ′ ″",
            Action::Export => {
                "write the list as shown, with decisions, as CSV and JSON in the state directory"
            }
            Action::Help => "this help",
            Action::Quit => "quit (decisions are already saved)",
            Action::Accept => "accept the typed text",
            Action::Cancel => "close or cancel",
        }
    }

    pub fn from_name(name: &str) -> Option<Action> {
        Action::ALL.iter().copied().find(|a| a.name() == name)
    }
}
