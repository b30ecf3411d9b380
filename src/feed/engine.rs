//! The one ingest engine under the console and headless `watch`: on a thread of its own it takes the
//! watcher's files into the merged store (parsing never runs on a caller's thread), keeps the
//! observer's per-object choices (exclusions, forced method and perturbations), queues a fit of every
//! changed object with them, drops results a newer submission has overtaken, and reports what
//! happened through a callback.

use super::InputError;
use super::journal::{ObjectState, Standing};
use super::sites::SiteTable;
use super::store::Store;
use super::tracklets::Limits;
use super::watcher::WatchEvent;
use crate::fitting::batch::{FitPool, PoolResult};
use crate::fitting::fit::{FitOptions, FitResult, MethodChoice, PerturbChoice};
use crate::fitting::input::Tracklet;
use crate::fitting::obsid::ObsId;
use std::collections::{BTreeSet, HashMap};
use std::sync::Arc;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::mpsc::{Receiver, Sender, channel};
use std::time::SystemTime;

/// Per-object choices that change how it is fitted (what the journal says stands).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Overrides {
    pub method: MethodChoice,
    pub perturbations: PerturbChoice,
    /// Observations left out of the fit.
    pub excluded: BTreeSet<ObsId>,
}

impl From<&ObjectState> for Overrides {
    fn from(s: &ObjectState) -> Overrides {
        Overrides {
            method: s.method,
            perturbations: s.perturbations,
            excluded: s.excluded.clone(),
        }
    }
}

/// Each object's fitting choices where the journal's lines say anything other than the defaults.
pub fn overrides_in(standing: &Standing) -> HashMap<String, Overrides> {
    standing
        .objects
        .iter()
        .map(|(k, s)| (k.clone(), Overrides::from(s)))
        .filter(|(_, o)| *o != Overrides::default())
        .collect()
}

/// What the engine reports.
#[derive(Debug)]
pub enum EngineEvent {
    /// A file (or a new version of one) was taken in; its line errors, and whether it was refused
    /// as a whole.
    Ingested {
        path: String,
        arrived: SystemTime,
        errors: Vec<InputError>,
        rejected: bool,
        /// Objects and observations in the store now.
        objects: usize,
        observations: usize,
        /// The objects this file changed whose fits were queued (each is answered by a `Fit`
        /// unless the run stops first).
        queued: Vec<String>,
    },
    /// A file refused without reading it, or the watcher's own trouble (`path` empty).
    Refused {
        path: String,
        reason: String,
        arrived: SystemTime,
    },
    Failed(String),
    /// The newest fit of an object: the submission it came from, when its newest observations
    /// arrived, and how many observations the store holds for it.
    Fit {
        version: u64,
        fit: Box<FitResult>,
        arrived: SystemTime,
        n_known: usize,
    },
}

enum Input {
    Watch(WatchEvent),
    Fit(Box<PoolResult>),
    Overrides(String, Overrides),
    Options(Box<FitOptions>),
}

/// The handle: set choices, read the fit queue's load, shut down.
pub struct Engine {
    input: Sender<Input>,
    pool: Arc<FitPool>,
    /// Objects held until the files present at start are all read (they count as waiting).
    held: Arc<AtomicUsize>,
}

struct State {
    store: Store,
    sites: Arc<SiteTable>,
    limits: Limits,
    opts: FitOptions,
    pool: Arc<FitPool>,
    overrides: HashMap<String, Overrides>,
    generation: HashMap<String, u64>,
    arrived: HashMap<String, SystemTime>,
    /// Until the watcher has handed on every file present at start, the objects they changed wait
    /// here: an object whose positions are split over several such files is fitted once, whole (its
    /// first file alone once gave a fit of four positions before the rest).
    held: Option<BTreeSet<String>>,
    held_count: Arc<AtomicUsize>,
}

/// Forward everything from `rx` into the engine's input until either side is gone.
fn forward<T: Send + 'static>(rx: Receiver<T>, tx: Sender<Input>, wrap: fn(T) -> Input) {
    std::thread::spawn(move || {
        for v in rx {
            if tx.send(wrap(v)).is_err() {
                return;
            }
        }
    });
}

impl Engine {
    /// Start on the watcher's events with `threads` fit workers and the fitting choices known so far
    /// (from the journal); `out` gets every event and returns false once nobody listens any more.
    pub fn start(
        events: Receiver<WatchEvent>,
        sites: Arc<SiteTable>,
        opts: FitOptions,
        threads: usize,
        overrides: HashMap<String, Overrides>,
        out: impl Fn(EngineEvent) -> bool + Send + 'static,
    ) -> Engine {
        let (tx, rx) = channel::<Input>();
        let (rtx, results) = channel::<PoolResult>();
        let pool = Arc::new(FitPool::new(threads, rtx));
        forward(events, tx.clone(), Input::Watch);
        forward(results, tx.clone(), |r| Input::Fit(Box::new(r)));
        let mut st = State {
            store: Store::new(),
            sites,
            limits: Limits::default(),
            opts,
            pool: pool.clone(),
            overrides,
            generation: HashMap::new(),
            arrived: HashMap::new(),
            held: Some(BTreeSet::new()),
            held_count: Arc::new(AtomicUsize::new(0)),
        };
        let held = st.held_count.clone();
        std::thread::spawn(move || {
            for input in rx {
                if !st.handle(input, &out) {
                    return;
                }
            }
        });
        Engine {
            input: tx,
            pool,
            held,
        }
    }

    /// How `object` is to be fitted from now on; it is refitted if it is known and this changed it.
    pub fn set_overrides(&self, object: &str, ov: Overrides) {
        let _ = self.input.send(Input::Overrides(object.to_string(), ov));
    }

    /// Fit with these options from now on (objects already fitted keep their fits until they change).
    pub fn set_options(&self, opts: FitOptions) {
        let _ = self.input.send(Input::Options(Box::new(opts)));
    }

    /// (waiting, running) fits.
    pub fn load(&self) -> (usize, usize) {
        let (waiting, running) = self.pool.load();
        (waiting + self.held.load(Ordering::Relaxed), running)
    }

    /// Stop the fit workers after their current fits (pending fits are dropped) and the engine once
    /// its callback is next called or its watcher ends.
    pub fn shutdown(self) {
        self.pool.stop();
    }
}

impl State {
    fn handle(&mut self, input: Input, out: &impl Fn(EngineEvent) -> bool) -> bool {
        match input {
            Input::Watch(WatchEvent::Ready {
                path,
                bytes,
                arrived,
            }) => {
                let name = super::sanitize::path_name(&path);
                let ing = self.store.ingest(&name, &bytes, &self.sites, &self.limits);
                let mut queued = Vec::new();
                for (obj, _) in &ing.changed {
                    self.arrived.insert(obj.clone(), arrived);
                    queued.extend(self.submit_or_hold(obj));
                }
                out(EngineEvent::Ingested {
                    path: name,
                    arrived,
                    errors: ing.errors,
                    rejected: ing.rejected,
                    objects: self.store.n_objects(),
                    observations: self.store.n_observations(),
                    queued,
                })
            }
            Input::Watch(WatchEvent::Refused {
                path,
                reason,
                arrived,
            }) => out(EngineEvent::Refused {
                path: super::sanitize::path_name(&path),
                reason,
                arrived,
            }),
            Input::Watch(WatchEvent::Failed(m)) => {
                // A watcher in trouble may never say it has read everything: fit what is held.
                self.release();
                out(EngineEvent::Failed(m))
            }
            Input::Watch(WatchEvent::StartScanned) => {
                self.release();
                true
            }
            Input::Fit(boxed) => {
                let (obj, version, fit, running) = *boxed;
                // A newer submission of this object is queued or running: its result will follow.
                let listening = if self.generation.get(&obj).is_some_and(|g| *g > version) {
                    true
                } else {
                    let n_known = self.store.tracklet(&obj).map_or(0, |t| t.obs.len());
                    let arrived = self.arrived.get(&obj).copied().unwrap_or(SystemTime::now());
                    out(EngineEvent::Fit {
                        version,
                        fit: Box::new(fit),
                        arrived,
                        n_known,
                    })
                };
                // Only now, with the result handed on, does the pool stop counting it as running.
                drop(running);
                listening
            }
            Input::Overrides(obj, ov) => {
                if self.overrides.get(&obj).cloned().unwrap_or_default() != ov {
                    self.overrides.insert(obj.clone(), ov);
                    let _ = self.submit_or_hold(&obj);
                }
                true
            }
            Input::Options(opts) => {
                self.opts = *opts;
                true
            }
        }
    }

    /// `submit`, or while the files present at start are still being handed on, hold the object until
    /// they all are (its id is returned all the same: its fit will come).
    fn submit_or_hold(&mut self, object: &str) -> Option<String> {
        match self.held.as_mut() {
            Some(held) if self.store.tracklet(object).is_some() => {
                held.insert(object.to_string());
                self.held_count.store(held.len(), Ordering::Relaxed);
                Some(object.to_string())
            }
            Some(_) => None,
            None => self.submit(object),
        }
    }

    /// Fit every held object (once the files present at start are read, or the watcher failed).
    fn release(&mut self) {
        for obj in self.held.take().unwrap_or_default() {
            let _ = self.submit(&obj);
        }
        self.held_count.store(0, Ordering::Relaxed);
    }

    /// Queue a fit of the object's observations as they stand; the id its fit will carry, if one was
    /// queued (an object with no observations left has nothing to fit).
    fn submit(&mut self, object: &str) -> Option<String> {
        let t = self.store.tracklet(object)?;
        let ov = self.overrides.get(object).cloned().unwrap_or_default();
        let t = if ov.excluded.is_empty() {
            t
        } else {
            let obs = t
                .obs
                .into_iter()
                .filter(|o| !ov.excluded.contains(&ObsId::of(o)));
            Tracklet::new(t.object, t.source, obs.collect())
        };
        let g = self.generation.entry(object.to_string()).or_insert(0);
        *g += 1;
        let opts = FitOptions {
            method: ov.method,
            perturbations: ov.perturbations,
            ..self.opts.clone()
        };
        let id = t.object.clone();
        self.pool.submit(*g, t, opts);
        Some(id)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::path::PathBuf;
    use std::sync::Mutex;
    use std::time::{Duration, Instant};

    fn ready(name: &str, text: &str) -> WatchEvent {
        WatchEvent::Ready {
            path: PathBuf::from(name),
            bytes: text.as_bytes().to_vec(),
            arrived: SystemTime::now(),
        }
    }

    /// An object held at start whose file is rewritten without it before every start file is read is
    /// still answered once they are: a failed fit saying it has no positions left, so that nothing
    /// listed as queued waits for ever; the object that replaced it is fitted too.
    #[test]
    fn an_object_withdrawn_while_held_at_start_is_answered_with_a_failed_fit() {
        let path = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
            .join("sample_feeds/demo_night/001_qk0f3ra_n1.psv");
        let text = std::fs::read_to_string(path).unwrap_or_default();
        assert!(text.contains("qk0f3ra"), "the demo feed file is missing");
        let (tx, rx) = channel();
        let fits = Arc::new(Mutex::new(Vec::<(String, String, usize)>::new()));
        let f2 = fits.clone();
        let engine = Engine::start(
            rx,
            Arc::new(SiteTable::builtin()),
            FitOptions::default(),
            1,
            HashMap::new(),
            move |ev| match ev {
                EngineEvent::Fit { fit, .. } => f2
                    .lock()
                    .map(|mut v| v.push((fit.object.clone(), fit.status.to_string(), fit.n_obs)))
                    .is_ok(),
                _ => true,
            },
        );
        tx.send(ready("a.psv", &text)).unwrap();
        tx.send(ready("a.psv", &text.replace("qk0f3ra", "zz9other")))
            .unwrap();
        tx.send(WatchEvent::StartScanned).unwrap();
        let start = Instant::now();
        while fits.lock().unwrap().len() < 2 && start.elapsed() < Duration::from_secs(60) {
            std::thread::sleep(Duration::from_millis(20));
        }
        let mut fits = fits.lock().unwrap().clone();
        fits.sort();
        assert_eq!(fits.len(), 2, "{fits:?}");
        assert_eq!(
            (fits[0].0.as_str(), fits[0].1.as_str(), fits[0].2),
            ("qk0f3ra", "failed", 0)
        );
        assert_eq!(fits[1].0, "zz9other");
        assert_ne!(fits[1].1, "failed");
        assert_eq!(engine.load(), (0, 0));
        engine.shutdown();
    }
}
