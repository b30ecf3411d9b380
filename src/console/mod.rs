//! The triage console: state and actions (`state`, `actions`), key bindings (`keymap`), the panes
//! (`panes`, `view`) and the runtime that connects them to the feed, the fit workers and the journal.

pub mod actions;
pub mod alerting;
pub mod ephemtask;
pub mod ephemtext;
pub mod export;
pub mod journaltask;
pub mod keymap;
pub mod panes;
pub mod plantask;
pub mod runtime;
pub mod state;
pub mod view;
pub mod why;
