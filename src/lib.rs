//! interloper: orbit fitting and triage of incoming tracklets, with a hyperbolicity score.
//!
//! Layers, from the bottom: [`physics`] (time, frames, Earth, sites, two-body motion, observation model;
//! pure, no I/O), [`fitting`] (initial orbits, least squares, ranging, significance; no I/O), [`feed`]
//! (formats, sites, files into tracklets), and the binary's thin command line.

pub mod console;
pub mod feed;
pub mod fitting;
pub mod origin_text;
pub mod physics;
pub mod report;

#[cfg(test)]
pub(crate) mod testutil;
