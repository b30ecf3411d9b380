//! Opening the console on a real terminal: raw mode and the alternate screen (restored on exit, on panic
//! through ratatui's hook, and on SIGINT/SIGTERM), an input thread, and the event loop.

use interloper::console::panes::Theme;
use interloper::console::runtime::{self, AppEvent};
use interloper::console::state::App;
use interloper::feed::sites::SiteTable;
use interloper::feed::watcher::WatchOptions;
use ratatui::crossterm::event::{self, Event, KeyEventKind};
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::Duration;

pub struct ConsoleConfig {
    pub dir: PathBuf,
    pub sites: SiteTable,
    pub state: PathBuf,
    pub keymap: Option<PathBuf>,
    pub watch: WatchOptions,
    pub threads: usize,
    pub population: Arc<interloper::fitting::population::PopulationModel>,
}

pub fn open(cfg: ConsoleConfig, stop: Arc<AtomicBool>) -> anyhow::Result<i32> {
    let (keymap, warning) = runtime::keymap_for(cfg.keymap.as_deref());
    let (tx, rx) = std::sync::mpsc::channel();
    let (mut rt, decisions, warnings) = runtime::start(
        cfg.dir.clone(),
        cfg.sites,
        cfg.state.clone(),
        cfg.watch,
        cfg.threads,
        stop.clone(),
        tx.clone(),
    )?;
    rt.set_population(cfg.population.clone());
    log(
        &cfg.state,
        &format!("console opened on {}", cfg.dir.display()),
    );
    for w in &warnings {
        log(&cfg.state, w);
    }
    let mut app = App::new(keymap);
    app.message = warning.or_else(|| warnings.first().cloned()).or_else(|| {
        Some(format!(
            "watching {} · decisions in {}",
            interloper::feed::sanitize::clean(&cfg.dir.display().to_string()),
            cfg.state.display()
        ))
    });
    rt.replayed(&mut app, decisions);
    let stop_in = stop.clone();
    let state_in = cfg.state.clone();
    std::thread::spawn(move || {
        // The terminal going away (end of file, an error reading it) ends the console: looping on
        // it would spin a core all night with nobody watching.
        let gone = |why: String| {
            log(&state_in, &format!("terminal input ended ({why}): closing"));
            stop_in.store(true, Ordering::Relaxed);
        };
        while !stop_in.load(Ordering::Relaxed) {
            match event::poll(Duration::from_millis(100)) {
                Ok(true) => {}
                Ok(false) => continue,
                Err(e) => {
                    gone(e.to_string());
                    break;
                }
            }
            let ev = match event::read() {
                Ok(Event::Key(k)) if k.kind != KeyEventKind::Release => AppEvent::Key(k),
                Ok(Event::Resize(..)) => AppEvent::Resize,
                Ok(_) => continue,
                Err(e) => {
                    gone(e.to_string());
                    break;
                }
            };
            if tx.send(ev).is_err() {
                break;
            }
        }
    });
    let mut terminal = ratatui::init();
    let result = runtime::run_loop(
        &mut terminal,
        &mut app,
        &mut rt,
        &rx,
        &stop,
        Theme::from_env(),
        |_| {},
    );
    ratatui::restore();
    stop.store(true, Ordering::Relaxed);
    rt.shutdown();
    log(&cfg.state, "console closed");
    result.map(|_| 0)
}

/// The console never writes diagnostics to the screen it owns: they go to console.log in the state dir.
fn log(state: &Path, line: &str) {
    use std::io::Write;
    if let Ok(mut f) = std::fs::OpenOptions::new()
        .create(true)
        .append(true)
        .open(state.join("console.log"))
    {
        let _ = writeln!(
            f,
            "{} {}",
            chrono::Utc::now().to_rfc3339(),
            interloper::feed::sanitize::clean(line)
        );
    }
}
