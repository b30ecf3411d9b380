//! Fitting many tracklets at once on worker threads, each with its own observer model (the models
//! memoise Earth and orientation nodes and are deliberately not shared: no locks on the hot path).

use super::fit::{FitOptions, FitResult, fit_tracklet};
use super::input::Tracklet;
use crate::physics::observe::ObserverModel;
use std::sync::Mutex;
use std::sync::atomic::{AtomicUsize, Ordering};

/// Fit every tracklet on `threads` workers; results come back in input order.
pub fn fit_all(tracklets: Vec<Tracklet>, opts: &FitOptions, threads: usize) -> Vec<FitResult> {
    let threads = threads.max(1).min(tracklets.len().max(1));
    let next = AtomicUsize::new(0);
    let results: Mutex<Vec<Option<FitResult>>> = Mutex::new(vec![None; tracklets.len()]);
    std::thread::scope(|s| {
        for _ in 0..threads {
            s.spawn(|| {
                let model = ObserverModel::new();
                loop {
                    let i = next.fetch_add(1, Ordering::Relaxed);
                    let Some(t) = tracklets.get(i) else { break };
                    let r = fit_tracklet(t, &model, opts);
                    if let Ok(mut g) = results.lock() {
                        g[i] = Some(r);
                    }
                }
            });
        }
    });
    results
        .into_inner()
        .unwrap_or_default()
        .into_iter()
        .zip(&tracklets)
        .map(|(r, t)| r.unwrap_or_else(|| FitResult::failed(t, "worker thread stopped")))
        .collect()
}
