//! Fitting many tracklets at once on worker threads, each with its own observer model (the models
//! memoise Earth and orientation nodes and are deliberately not shared: no locks on the hot path).

use super::fit::{FitOptions, FitResult, fit_tracklet};
use super::input::Tracklet;
use super::nextnight::next_night;
use crate::physics::observe::ObserverModel;
use std::sync::Mutex;
use std::sync::atomic::{AtomicUsize, Ordering};

/// Fit every tracklet on `threads` workers; results come back in input order.
pub fn fit_all(tracklets: Vec<Tracklet>, opts: &FitOptions, threads: usize) -> Vec<FitResult> {
    fit_all_observed(tracklets, opts, threads, &|_| {})
}

/// [`fit_all`], telling `done` after each finished fit how many are finished so far (from any worker,
/// so it must be cheap and thread-safe: a progress display).
pub fn fit_all_observed(
    tracklets: Vec<Tracklet>,
    opts: &FitOptions,
    threads: usize,
    done: &(dyn Fn(usize) + Sync),
) -> Vec<FitResult> {
    let finished = AtomicUsize::new(0);
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
                    let mut r = fit_tracklet(t, &model, opts);
                    r.next_night = next_night(&r, t, &model);
                    if !opts.keep_samples {
                        r.samples = Vec::new();
                    }
                    if let Ok(mut g) = results.lock() {
                        g[i] = Some(r);
                    }
                    done(finished.fetch_add(1, Ordering::Relaxed) + 1);
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

/// A pool of fit workers fed by object: submitting an object that is already waiting replaces its
/// pending tracklet, so only the newest pending fit of each object is ever run. Results come back on a
/// channel with the version they were made from. Submitting never waits for a fit. Each result carries
/// a [`Running`] token: the fit counts as running until whoever took it drops the token, after
/// handing the result on, so that an idle pool means no result is still on its way (and a result
/// dropped anywhere, in a channel at shutdown too, stops counting).
pub struct FitPool {
    shared: Shared,
    workers: Vec<std::thread::JoinHandle<()>>,
}

#[derive(Default)]
struct PoolState {
    pending: std::collections::HashMap<String, (u64, Tracklet, FitOptions)>,
    order: std::collections::VecDeque<String>,
    running: usize,
    stop: bool,
}

/// A finished fit: object, the version it was made from, the result, and the token that counts it
/// as running until dropped.
pub type PoolResult = (String, u64, FitResult, Running);

type Shared = std::sync::Arc<(Mutex<PoolState>, std::sync::Condvar)>;

/// A fit taken by a worker: counted as running until this is dropped.
pub struct Running(Shared);

impl Drop for Running {
    fn drop(&mut self) {
        if let Ok(mut st) = self.0.0.lock() {
            st.running = st.running.saturating_sub(1);
        }
    }
}

impl FitPool {
    pub fn new(threads: usize, results: std::sync::mpsc::Sender<PoolResult>) -> FitPool {
        let shared =
            std::sync::Arc::new((Mutex::new(PoolState::default()), std::sync::Condvar::new()));
        let workers = (0..threads.max(1))
            .map(|_| {
                let shared = shared.clone();
                let results = results.clone();
                std::thread::spawn(move || {
                    let model = ObserverModel::new();
                    loop {
                        let job = {
                            let (lock, cv) = &*shared;
                            let Ok(mut st) = lock.lock() else { return };
                            loop {
                                if st.stop {
                                    return;
                                }
                                if let Some(obj) = st.order.pop_front() {
                                    if let Some(job) = st.pending.remove(&obj) {
                                        // Counted under the same lock that took it off the queue.
                                        st.running += 1;
                                        break (obj, job, Running(shared.clone()));
                                    }
                                    continue;
                                }
                                st = match cv.wait(st) {
                                    Ok(s) => s,
                                    Err(_) => return,
                                };
                            }
                        };
                        let (obj, (version, tracklet, opts), running) = job;
                        let mut r = fit_tracklet(&tracklet, &model, &opts);
                        r.next_night = next_night(&r, &tracklet, &model);
                        // Still counted as running until its consumer drops the token, after
                        // handing the result on: an idle pool then means every result is out.
                        if results.send((obj, version, r, running)).is_err() {
                            return;
                        }
                    }
                })
            })
            .collect();
        FitPool { shared, workers }
    }

    /// Queue a fit of `tracklet` at `version`, replacing any pending one for the same object.
    pub fn submit(&self, version: u64, tracklet: Tracklet, opts: FitOptions) {
        let (lock, cv) = &*self.shared;
        if let Ok(mut st) = lock.lock() {
            let obj = tracklet.object.clone();
            if st
                .pending
                .insert(obj.clone(), (version, tracklet, opts))
                .is_none()
            {
                st.order.push_back(obj);
            }
            cv.notify_one();
        }
    }

    /// (waiting, running) fits.
    pub fn load(&self) -> (usize, usize) {
        self.shared
            .0
            .lock()
            .map_or((0, 0), |st| (st.pending.len(), st.running))
    }

    /// Tell the workers to stop after their current fit, without waiting for them (for a pool
    /// shared between threads); pending fits are dropped.
    pub fn stop(&self) {
        if let Ok(mut st) = self.shared.0.lock() {
            st.stop = true;
        }
        self.shared.1.notify_all();
    }

    /// Stop the workers after their current fit and wait for them; pending fits are dropped.
    pub fn shutdown(self) {
        self.stop();
        for w in self.workers {
            let _ = w.join();
        }
    }
}
