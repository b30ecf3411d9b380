//! The console's event loop. One channel carries every event (keys, watcher, fit results, journal
//! acknowledgements, ephemerides, ticks); the loop drains it, lets the state react, carries out the
//! effects on other threads, and draws at most once per frame, only when something changed. The loop
//! never waits on a fit, a file or the journal.

use super::keymap::Keymap;
use super::panes::Theme;
use super::state::{App, Effect};
use super::view;
use crate::feed::engine::{Engine, EngineEvent};
use crate::feed::journal::{Entry, Journal};
use crate::feed::sites::SiteTable;
use crate::feed::watcher::{self, WatchOptions};
use crate::fitting::ephemeris::EphemerisPoint;
use crate::fitting::fit::{FitOptions, FitResult};
use ratatui::Terminal;
use ratatui::backend::Backend;
use ratatui::crossterm::event::KeyEvent;
use std::path::PathBuf;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{Receiver, RecvTimeoutError, Sender};
use std::time::{Duration, Instant};

/// Everything that can happen to the console.
#[derive(Debug)]
pub enum AppEvent {
    Key(KeyEvent),
    /// The terminal's new size (columns, rows).
    Resize(u16, u16),
    /// The terminal was handed back (after a suspend): whatever is on it is not our last frame, so
    /// the whole screen is cleared and drawn again.
    Repaint,
    /// Files taken in, fits done: what the ingest engine reports.
    Engine(EngineEvent),
    /// A line this console wrote is on disk, or (object, reason) when it could not be saved.
    Journal(Result<Entry, (String, String)>),
    /// Lines read from the journal (this console's and other processes'), in file order, with
    /// warnings about lines that could not be read.
    JournalRead(Vec<Entry>, Vec<String>),
    /// The ephemeris of an object: the line saying for which site and window, and the rows.
    Ephemeris(String, String, Vec<EphemerisPoint>),
    Plan(crate::fitting::plan::Plan),
    Tick,
}

/// Longest wait at shutdown for the journal to write what was keyed last.
pub const JOURNAL_FINISH: Duration = Duration::from_secs(10);

/// Frame cap: at most this many draws per second (high-latency links get no redraw storms).
pub const MAX_FPS: u64 = 30;

pub struct Runtime {
    pub tx: Sender<AppEvent>,
    engine: Engine,
    journal: Sender<Entry>,
    journal_thread: std::thread::JoinHandle<()>,
    sites: Arc<SiteTable>,
    /// Rings the terminal's bell (the terminal set-up supplies it; none on a test backend).
    bell: Option<Box<dyn Fn() + Send>>,
    /// Where exports are written.
    state_dir: PathBuf,
    /// The alerts raised before, in the state directory (a restart does not raise them again).
    alert_log: crate::feed::alertlog::AlertLog,
}

/// What a console runtime watches, where it keeps its state, and as whom and under which population it
/// fits.
pub struct Setup {
    pub dir: PathBuf,
    pub sites: SiteTable,
    pub state_dir: PathBuf,
    pub watch: WatchOptions,
    pub threads: usize,
    /// Who writes to the journal (already cleaned).
    pub observer: String,
    pub population: Arc<crate::fitting::population::PopulationModel>,
}

impl Setup {
    /// Watch `dir` with the built-in sites and population, as the `$USER` observer, on two threads.
    pub fn new(dir: PathBuf, state_dir: PathBuf) -> Setup {
        Setup {
            dir,
            sites: SiteTable::builtin(),
            state_dir,
            watch: WatchOptions::default(),
            threads: 2,
            observer: crate::feed::journal::observer_name(None),
            population: crate::fitting::fit::builtin_population(),
        }
    }
}

/// Start the feed, fit workers and journal of a console; events go to `tx`. Returns the journal's lines
/// so far (for [`Runtime::replayed`]) and its warnings.
pub fn start(
    setup: Setup,
    stop: Arc<AtomicBool>,
    tx: Sender<AppEvent>,
) -> anyhow::Result<(Runtime, Vec<Entry>, Vec<String>)> {
    let Setup {
        dir,
        sites,
        state_dir,
        watch,
        threads,
        observer,
        population,
    } = setup;
    let (journal, replay) = Journal::open_as(&state_dir, &observer)?;
    let export_dir = state_dir.clone();
    let (jtx, journal_thread) = super::journaltask::spawn(journal, tx.clone());
    let sites = Arc::new(sites);
    let events = watcher::spawn(dir, watch, stop.clone());
    let tx_e = tx.clone();
    let engine = Engine::start(
        events,
        sites.clone(),
        fit_options(population),
        threads,
        crate::feed::engine::overrides_in(&replay.standing()),
        move |ev| tx_e.send(AppEvent::Engine(ev)).is_ok(),
    );
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
            engine,
            journal: jtx,
            journal_thread,
            sites,
            bell: None,
            alert_log: crate::feed::alertlog::AlertLog::open(Some(&export_dir)),
            state_dir: export_dir,
        },
        replay.entries,
        replay.warnings,
    ))
}

impl Runtime {
    /// Fit under this population model from now on.
    pub fn set_population(&mut self, model: Arc<crate::fitting::population::PopulationModel>) {
        self.engine.set_options(fit_options(model));
    }

    /// How to ring the terminal's bell when an alert asks for it.
    pub fn set_bell(&mut self, bell: Box<dyn Fn() + Send>) {
        self.bell = Some(bell);
    }

    /// A new fit may raise an alert: shown, logged, and rung, flashed and handed to the user's command
    /// unless the observer asked for quiet.
    fn alert(&mut self, app: &mut App, fit: &FitResult) {
        let raised = app.alerts.on_fit(fit);
        for (object, kind) in app.alerts.cleared.drain(..) {
            self.alert_log.clear(&object, kind);
        }
        let Some((alert, fx)) = raised else {
            return;
        };
        tracing::warn!("ALERT {}", alert.text);
        self.alert_log.record(&alert);
        app.message = Some(format!("ALERT {} (! lists alerts)", alert.text));
        if fx.bell
            && let Some(b) = &self.bell
        {
            b();
        }
        if let Some(cmd) = fx.command {
            crate::feed::alerts::spawn_command(cmd, crate::feed::alerts::alert_json(fit, &alert));
        }
        app.dirty = true;
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
            AppEvent::Resize(..) | AppEvent::Tick | AppEvent::Repaint => {
                // Keys queued behind a shrink are judged by the new size, not the last drawing's.
                if let AppEvent::Resize(w, h) = ev {
                    app.hidden = !super::view::fits(ratatui::layout::Rect::new(0, 0, w, h));
                }
                if app.alerts.tick(Instant::now()) {
                    app.dirty = true;
                }
                let (w, r) = self.engine.load();
                if (w, r) != (app.status.waiting, app.status.fitting)
                    || matches!(ev, AppEvent::Resize(..) | AppEvent::Repaint)
                {
                    app.status.waiting = w;
                    app.status.fitting = r;
                    app.dirty = true;
                }
            }
            AppEvent::Engine(ev) => {
                if let EngineEvent::Fit { fit, .. } = &ev {
                    self.alert(app, fit);
                }
                on_engine(app, ev);
            }
            AppEvent::Journal(Ok(e)) => {
                for eff in app.on_saved(&e) {
                    if !self.effect(app, eff) {
                        return false;
                    }
                }
            }
            AppEvent::JournalRead(entries, warnings) => {
                if let Some(w) = warnings.first() {
                    app.message = Some(w.clone());
                }
                self.apply_lines(app, &entries);
            }
            AppEvent::Journal(Err((object, e))) => app.on_save_failed(&object, &e),
            AppEvent::Ephemeris(obj, window, pts) => {
                app.ephem.window = Some(window);
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
        self.apply_lines(app, &entries);
        app.alerts.earlier = self.alert_log.fired().clone();
    }

    /// Journal lines take effect: on the screen, and in how the engine fits each object they touch
    /// (also objects with no fit yet, so their first fit already leaves out what was excluded).
    fn apply_lines(&mut self, app: &mut App, entries: &[Entry]) {
        let mut touched = std::collections::BTreeSet::new();
        for e in entries {
            app.on_entry(e);
            if e.kind != crate::feed::journal::Kind::Decision {
                touched.insert(e.object.clone());
            }
        }
        for obj in touched {
            self.engine.set_overrides(&obj, app.overrides(&obj));
        }
    }

    fn effect(&mut self, app: &mut App, e: Effect) -> bool {
        match e {
            Effect::Quit => return false,
            Effect::Journal(d) => {
                if let Err(std::sync::mpsc::SendError(d)) = self.journal.send(d) {
                    app.on_save_failed(&d.object, super::journaltask::WRITER_STOPPED);
                }
            }
            Effect::Refit { object, overrides } => self.engine.set_overrides(&object, overrides),
            Effect::Plan => {
                let fits = app.candidates.iter().map(|c| c.fit.clone()).collect();
                super::plantask::spawn(fits, self.sites.clone(), self.tx.clone());
            }
            Effect::Request(object, lines) => {
                app.message = Some(write_request(&self.state_dir, &object, &lines));
                app.dirty = true;
            }
            Effect::Export(rows) => {
                app.message = Some(export(&self.state_dir, &rows));
                app.dirty = true;
            }
            Effect::Ephemeris(object) => {
                if let Some(c) = app.candidates.iter().find(|c| c.fit.object == object) {
                    super::ephemtask::spawn(
                        c.fit.clone(),
                        app.ephem.site.clone(),
                        self.sites.clone(),
                        self.tx.clone(),
                    );
                }
            }
        }
        true
    }

    /// Stop the fit workers, and wait until the journal has written every line sent to it (a
    /// decision keyed just before quitting is saved before the process ends) — but not for ever: a
    /// journal whose lock another process holds (a console stopped with Ctrl-Z in the middle of a
    /// write, a file system that no longer answers) is given up after [`JOURNAL_FINISH`], saying so.
    pub fn shutdown(self) {
        self.engine.shutdown();
        drop(self.journal);
        let deadline = Instant::now() + JOURNAL_FINISH;
        while !self.journal_thread.is_finished() && Instant::now() < deadline {
            std::thread::sleep(Duration::from_millis(20));
        }
        if !self.journal_thread.is_finished() {
            let why = format!(
                "the journal did not finish writing within {} s (is it locked by another process?): \
                 the last decisions may not be saved",
                JOURNAL_FINISH.as_secs()
            );
            tracing::error!("{why}");
            eprintln!("interloper: {why}");
        } else if self.journal_thread.join().is_err() {
            tracing::error!("the journal writer died; the lines it had not written are in the log");
        }
    }
}

/// Write a follow-up request (the ephemeris panel's lines) beside the journal.
fn write_request(dir: &std::path::Path, object: &str, lines: &[String]) -> String {
    let stamp = chrono::Utc::now().format("%Y%m%dT%H%M%SZ");
    let name: String = crate::feed::sanitize::clean(object)
        .chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
        .collect();
    let path = dir.join(format!("followup-{name}-{stamp}.txt"));
    let mut text = lines.join("\n");
    text.push_str(
        "\nA reason to follow up, not a discovery. Cautions defer to the site's own limits.\n",
    );
    match std::fs::write(&path, text) {
        Ok(()) => {
            tracing::info!("follow-up request written to {}", path.display());
            format!("follow-up request written to {}", path.display())
        }
        Err(e) => format!("REQUEST NOT WRITTEN in {}: {e}", dir.display()),
    }
}

/// Write the rows as CSV and JSON beside the journal; the message says where (or why not).
fn export(dir: &std::path::Path, rows: &[super::export::Row]) -> String {
    let stamp = chrono::Utc::now().format("%Y%m%dT%H%M%SZ");
    let csv = dir.join(format!("export-{stamp}.csv"));
    let json = dir.join(format!("export-{stamp}.json"));
    let written = std::fs::write(&csv, super::export::csv(rows))
        .and_then(|_| std::fs::write(&json, super::export::json(rows)));
    match written {
        Ok(()) => {
            tracing::info!("exported {} candidates to {}", rows.len(), csv.display());
            format!(
                "exported {} candidates to {} and .json",
                rows.len(),
                csv.display()
            )
        }
        Err(e) => format!("EXPORT FAILED in {}: {e}", dir.display()),
    }
}

/// The options every fit of the console is made with.
fn fit_options(population: Arc<crate::fitting::population::PopulationModel>) -> FitOptions {
    FitOptions {
        origin: Some(crate::fitting::origin::OriginOptions::for_model(
            &population,
        )),
        population,
        ..FitOptions::default()
    }
}

/// What the engine reports, on the screen.
fn on_engine(app: &mut App, ev: EngineEvent) {
    match ev {
        EngineEvent::Ingested {
            arrived, errors, ..
        } => {
            app.status.files_seen += 1;
            app.status.last_arrival = Some(
                chrono::DateTime::<chrono::Utc>::from(arrived)
                    .format("%H:%M:%SZ")
                    .to_string(),
            );
            for e in errors {
                app.on_rejected(e);
            }
            app.dirty = true;
        }
        EngineEvent::Refused { path, reason, .. } => app.on_rejected(crate::feed::InputError {
            file: crate::feed::sanitize::clean(&path),
            line: 0,
            column: None,
            reason,
        }),
        EngineEvent::Failed(m) => app.message = Some(m),
        EngineEvent::Fit {
            version,
            fit,
            n_known,
            ..
        } => {
            if fit.status == "failed" {
                app.status.failed += 1;
            }
            app.on_fit(version, *fit, n_known);
        }
    }
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

/// The keymap to use: the given file (the command line's `--keymap`, else the configuration's, which
/// the binary resolves with the platform's directories) over the built-in map; a bad file falls back
/// to the built-in map with a message saying why.
pub fn keymap_for(path: Option<&std::path::Path>) -> (Keymap, Option<String>) {
    let Some(p) = path else {
        return (Keymap::builtin(), None);
    };
    match std::fs::read_to_string(p) {
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
