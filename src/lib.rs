//! interloper: orbit fitting and triage of incoming tracklets, with a hyperbolicity score.
//!
//! Layers, from the bottom: [`physics`] (time, frames, Earth, sites, two-body motion, observation model;
//! pure, no I/O).

pub mod physics;
