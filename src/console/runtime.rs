//! The console's event loop. One channel carries every event (keys, watcher, fit results, journal
//! acknowledgements, ephemerides, ticks); the loop drains it, lets the state react, carries out the
//! effects on other threads, and draws at most once per frame, only when something changed. The loop
//! never waits on a fit, a file or the journal.

use super::keymap::Keymap;
use super::panes::Theme;
use super::state::{App, Effect, Overrides};
use super::view;
use crate::feed::journal::{Entry, Journal};
use crate::feed::sites::SiteTable;
use crate::feed::store::Store;
use crate::feed::tracklets::Limits;
use crate::feed::watcher::{self, WatchEvent, WatchOptions};
use crate::fitting::batch::{FitPool, PoolResult};
use crate::fitting::ephemeris::{EphemerisPoint, point};
use crate::fitting::fit::{FitOptions, FitResult};
use crate::fitting::obsid::ObsId;
use crate::physics::observe::ObserverModel;
use crate::physics::time::{UtcTime, tt_to_utc};
use ratatui::Terminal;
use ratatui::backend::Backend;
use ratatui::crossterm::event::KeyEvent;
use std::collections::HashMap;
use std::path::PathBuf;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{Receiver, RecvTimeoutError, Sender, channel};
use std::time::{Duration, Instant};

/// Everything that can happen to the console.
#[derive(Debug)]
pub enum AppEvent {
    Key(KeyEvent),
    Resize,
    /// The terminal was handed back (after a suspend): whatever is on it is not our last frame, so
    /// the whole screen is cleared and drawn again.
    Repaint,
    Watch(WatchEvent),
    Fit(Box<PoolResult>),
    /// A line this console wrote is on disk, or (object, reason) when it could not be saved.
    Journal(Result<Entry, (String, String)>),
    /// Lines read from the journal (this console's and other processes'), in file order, with
    /// warnings about lines that could not be read.
    JournalRead(Vec<Entry>, Vec<String>),
    Ephemeris(String, Vec<EphemerisPoint>),
    Plan(crate::fitting::plan::Plan),
    Tick,
}

/// Frame cap: at most this many draws per second (high-latency links get no redraw storms).
pub const MAX_FPS: u64 = 30;

pub struct Runtime {
    pub tx: Sender<AppEvent>,
    store: Store,
    pool: FitPool,
    journal: Sender<Entry>,
    sites: Arc<SiteTable>,
    limits: Limits,
    generation: HashMap<String, u64>,
    population: Arc<crate::fitting::population::PopulationModel>,
}

/// How often the journal is looked at for lines other processes wrote.
pub const JOURNAL_POLL: Duration = Duration::from_millis(500);

/// Start the feed, fit workers and journal for a watched directory, as the `$USER` observer; events
/// go to `tx`. Returns the journal's lines so far (for [`Runtime::replayed`]) and its warnings.
pub fn start(
    dir: PathBuf,
    sites: SiteTable,
    state_dir: PathBuf,
    watch: WatchOptions,
    threads: usize,
    stop: Arc<AtomicBool>,
    tx: Sender<AppEvent>,
) -> anyhow::Result<(Runtime, Vec<Entry>, Vec<String>)> {
    let me = crate::feed::journal::observer_name(None);
    start_as(dir, sites, state_dir, watch, threads, stop, tx, &me)
}

/// As [`start`], writing to the journal as `observer`.
#[allow(clippy::too_many_arguments)]
pub fn start_as(
    dir: PathBuf,
    sites: SiteTable,
    state_dir: PathBuf,
    watch: WatchOptions,
    threads: usize,
    stop: Arc<AtomicBool>,
    tx: Sender<AppEvent>,
    observer: &str,
) -> anyhow::Result<(Runtime, Vec<Entry>, Vec<String>)> {
    let (journal, replay) = Journal::open_as(&state_dir, observer)?;
    let jtx = spawn_journal(journal, tx.clone(), stop.clone());
    let events = watcher::spawn(dir, watch, stop.clone());
    let tx_w = tx.clone();
    std::thread::spawn(move || {
        for ev in events {
            if tx_w.send(AppEvent::Watch(ev)).is_err() {
                return;
            }
        }
    });
    let (rtx, rrx) = channel::<PoolResult>();
    let tx_f = tx.clone();
    std::thread::spawn(move || {
        for r in rrx {
            if tx_f.send(AppEvent::Fit(Box::new(r))).is_err() {
                return;
            }
        }
    });
    let tx_t = tx.clone();
    let stop_t = stop.clone();
    std::thread::spawn(move || {
        while !stop_t.load(Ordering::Relaxed) {
            std::thread::sleep(Duration::from_millis(500));
            if tx_t.send(AppEvent::Tick).is_err() {
                return;
            }
        }
    });
    Ok((
        Runtime {
            tx,
            store: Store::new(),
            pool: FitPool::new(threads, rtx),
            journal: jtx,
            sites: Arc::new(sites),
            limits: Limits::default(),
            generation: HashMap::new(),
            population: crate::fitting::fit::builtin_population(),
        },
        replay.entries,
        replay.warnings,
    ))
}

/// The journal's own thread: writes what the console sends, then reads back every line added since
/// it last looked (its own and other processes', in file order); with nothing to write it looks
/// every [`JOURNAL_POLL`], so another console's decision shows here within a second.
fn spawn_journal(
    mut journal: Journal,
    tx: Sender<AppEvent>,
    stop: Arc<AtomicBool>,
) -> Sender<Entry> {
    let (jtx, jrx) = channel::<Entry>();
    std::thread::spawn(move || {
        while !stop.load(Ordering::Relaxed) {
            let saved = match jrx.recv_timeout(JOURNAL_POLL) {
                Ok(e) => {
                    let object = e.object.clone();
                    Some(journal.append(e).map_err(|err| (object, err.to_string())))
                }
                Err(RecvTimeoutError::Timeout) => None,
                Err(RecvTimeoutError::Disconnected) => return,
            };
            let read = match journal.read_new() {
                Ok(r) if r.entries.is_empty() && r.warnings.is_empty() => None,
                Ok(r) => Some(AppEvent::JournalRead(r.entries, r.warnings)),
                Err(e) => Some(AppEvent::JournalRead(
                    Vec::new(),
                    vec![format!("cannot read the journal: {e}")],
                )),
            };
            // What was read goes first, so a saved line shows its effect as it stops saying "saving…".
            for ev in read.into_iter().chain(saved.map(AppEvent::Journal)) {
                if tx.send(ev).is_err() {
                    return;
                }
            }
        }
    });
    jtx
}

impl Runtime {
    /// Fit under this population model from now on.
    pub fn set_population(&mut self, model: Arc<crate::fitting::population::PopulationModel>) {
        self.population = model;
    }

    fn submit(&mut self, object: &str, ov: &Overrides) {
        let Some(mut t) = self.store.tracklet(object) else {
            return;
        };
        t.obs.retain(|o| !ov.excluded.contains(&ObsId::of(o)));
        let t = crate::fitting::input::Tracklet::new(t.object, t.source, t.obs);
        let g = self.generation.entry(object.to_string()).or_insert(0);
        *g += 1;
        let opts = FitOptions {
            method: ov.method,
            perturbations: ov.perturbations,
            population: self.population.clone(),
            origin: Some(crate::fitting::origin::OriginOptions::for_model(
                &self.population,
            )),
            ..FitOptions::default()
        };
        self.pool.submit(*g, t, opts);
    }

    fn known(&self, object: &str) -> usize {
        self.store.tracklet(object).map_or(0, |t| t.obs.len())
    }

    /// React to one event; returns false to stop.
    pub fn handle(&mut self, app: &mut App, ev: AppEvent) -> bool {
        match ev {
            AppEvent::Key(k) => {
                app.message = None;
                for e in app.on_key(k) {
                    if !self.effect(app, e) {
                        return false;
                    }
                }
            }
            AppEvent::Resize | AppEvent::Tick | AppEvent::Repaint => {
                let (w, r) = self.pool.load();
                if (w, r) != (app.status.waiting, app.status.fitting)
                    || matches!(ev, AppEvent::Resize | AppEvent::Repaint)
                {
                    app.status.waiting = w;
                    app.status.fitting = r;
                    app.dirty = true;
                }
            }
            AppEvent::Watch(WatchEvent::Ready {
                path,
                bytes,
                arrived,
            }) => {
                app.status.files_seen += 1;
                app.status.last_arrival = Some(
                    chrono::DateTime::<chrono::Utc>::from(arrived)
                        .format("%H:%M:%SZ")
                        .to_string(),
                );
                let ing = self.store.ingest(
                    &path.display().to_string(),
                    &bytes,
                    &self.sites,
                    &self.limits,
                );
                for e in ing.errors {
                    app.on_rejected(e);
                }
                for (obj, _) in ing.changed {
                    let ov = app.overrides(&obj);
                    self.submit(&obj, &ov);
                }
                app.dirty = true;
            }
            AppEvent::Watch(WatchEvent::Refused { path, reason, .. }) => {
                app.on_rejected(crate::feed::InputError {
                    file: crate::feed::sanitize::clean(&path.display().to_string()),
                    line: 0,
                    column: None,
                    reason,
                })
            }
            AppEvent::Watch(WatchEvent::Failed(m)) => app.message = Some(m),
            AppEvent::Fit(boxed) => {
                let (obj, version, fit) = *boxed;
                if self.generation.get(&obj).is_some_and(|g| *g > version) {
                    return true; // a newer fit of this object is on its way
                }
                if fit.status == "failed" {
                    app.status.failed += 1;
                }
                let known = self.known(&obj);
                app.on_fit(version, fit, known);
            }
            AppEvent::Journal(Ok(e)) => app.on_saved(&e),
            AppEvent::JournalRead(entries, warnings) => {
                if let Some(w) = warnings.first() {
                    app.message = Some(w.clone());
                }
                for e in &entries {
                    for eff in app.on_entry(e) {
                        self.effect(app, eff);
                    }
                }
            }
            AppEvent::Journal(Err((object, e))) => app.on_save_failed(&object, &e),
            AppEvent::Ephemeris(obj, pts) => {
                app.ephemeris = Some((obj, pts));
                app.dirty = true;
            }
            AppEvent::Plan(p) => {
                app.plan = Some(p);
                app.dirty = true;
            }
        }
        true
    }

    /// The journal's lines at start: what they say stands (decisions, exclusions, forced methods)
    /// is applied to each candidate as it appears.
    pub fn replayed(&mut self, app: &mut App, entries: Vec<Entry>) {
        for e in &entries {
            for eff in app.on_entry(e) {
                self.effect(app, eff);
            }
        }
    }

    fn effect(&mut self, app: &mut App, e: Effect) -> bool {
        match e {
            Effect::Quit => return false,
            Effect::Journal(d) => {
                if self.journal.send(d).is_err() {
                    app.message = Some("DECISION NOT SAVED: the journal writer stopped".into());
                }
            }
            Effect::Refit { object, overrides } => self.submit(&object, &overrides),
            Effect::Plan => {
                let fits = app.candidates.iter().map(|c| c.fit.clone()).collect();
                super::plantask::spawn(fits, self.sites.clone(), self.tx.clone());
            }
            Effect::Ephemeris(object) => {
                if let Some(c) = app.candidates.iter().find(|c| c.fit.object == object) {
                    spawn_ephemeris(c.fit.clone(), self.sites.clone(), self.tx.clone());
                }
            }
        }
        true
    }

    pub fn shutdown(self) {
        self.pool.shutdown();
    }
}

/// Hourly ephemeris for 24 hours after the last observation, from the site of that observation.
fn spawn_ephemeris(fit: FitResult, sites: Arc<SiteTable>, tx: Sender<AppEvent>) {
    std::thread::spawn(move || {
        let model = ObserverModel::new();
        let mut pts = Vec::new();
        if let Some(last) = fit.residuals.last()
            && let (Some(site), Ok(t0)) = (
                sites.get(&last.site),
                UtcTime::parse(&last.time_utc).and_then(|u| u.instant()),
            )
        {
            for k in 1..=24 {
                let d = f64::from(k) / 24.0;
                let inst = t0.plus_days(d);
                if let Some(p) = point(
                    &fit,
                    &inst,
                    tt_to_utc(inst.tt).to_string(),
                    &site.position,
                    &model,
                    None,
                    20.0,
                ) {
                    pts.push(p);
                }
            }
        }
        let _ = tx.send(AppEvent::Ephemeris(fit.object.clone(), pts));
    });
}

/// Run the loop on any backend until quit or `stop`. Draws only when the state changed, at most
/// MAX_FPS times a second. `on_frame` is called after each draw (tests and benchmarks listen there).
pub fn run_loop<B: Backend>(
    terminal: &mut Terminal<B>,
    app: &mut App,
    rt: &mut Runtime,
    rx: &Receiver<AppEvent>,
    stop: &AtomicBool,
    theme: Theme,
    mut on_frame: impl FnMut(&App),
) -> anyhow::Result<()> {
    let frame = Duration::from_millis(1000 / MAX_FPS);
    let mut last_draw = Instant::now() - frame;
    loop {
        if stop.load(Ordering::Relaxed) {
            return Ok(());
        }
        let wait = frame
            .saturating_sub(last_draw.elapsed())
            .max(Duration::from_millis(1));
        match rx.recv_timeout(if app.dirty {
            wait
        } else {
            Duration::from_millis(200)
        }) {
            Ok(ev) => {
                if matches!(ev, AppEvent::Repaint) {
                    terminal.clear().map_err(|e| anyhow::anyhow!("{e}"))?;
                }
                if !rt.handle(app, ev) {
                    return Ok(());
                }
                // Drain whatever else is waiting before drawing once.
                while let Ok(ev) = rx.try_recv() {
                    if !rt.handle(app, ev) {
                        return Ok(());
                    }
                }
            }
            Err(RecvTimeoutError::Timeout) => {}
            Err(RecvTimeoutError::Disconnected) => return Ok(()),
        }
        if app.dirty && last_draw.elapsed() >= frame {
            terminal
                .draw(|f| view::draw(f, app, theme))
                .map_err(|e| anyhow::anyhow!("{e}"))?;
            app.dirty = false;
            last_draw = Instant::now();
            on_frame(app);
        }
    }
}

/// The keymap to use: `--keymap FILE`, else the user's config file if there is one, over the built-in
/// map; a bad file falls back to the built-in map with a message saying why.
pub fn keymap_for(path: Option<&std::path::Path>) -> (Keymap, Option<String>) {
    let user = path.map(PathBuf::from).or_else(|| {
        let base = std::env::var_os("XDG_CONFIG_HOME")
            .filter(|v| !v.is_empty())
            .map(PathBuf::from)
            .or_else(|| std::env::var_os("HOME").map(|h| PathBuf::from(h).join(".config")))?;
        Some(base.join("interloper/keymap.toml")).filter(|p| p.exists())
    });
    let Some(p) = user else {
        return (Keymap::builtin(), None);
    };
    match std::fs::read_to_string(&p) {
        Ok(text) => {
            let (map, err) = super::keymap::load(Some((&p.display().to_string(), &text)));
            (map, err.map(|e| format!("{e} — using the default keys")))
        }
        Err(e) => (
            Keymap::builtin(),
            Some(format!("{}: {e} — using the default keys", p.display())),
        ),
    }
}
