//! Opening the console on a real terminal: raw mode and the alternate screen (restored on exit, on panic
//! through ratatui's hook, and on SIGINT/SIGTERM; given back on Ctrl-Z and taken again on `fg`), an input
//! thread, and the event loop.

use interloper::console::panes::Theme;
use interloper::console::runtime::{self, AppEvent};
use interloper::console::state::App;
use interloper::feed::sanitize::clean;
use interloper::feed::sites::SiteTable;
use interloper::feed::watcher::WatchOptions;
use ratatui::crossterm::event::{self, Event, KeyEventKind};
use std::path::PathBuf;
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
    pub theme: Theme,
    /// Who writes to the journal from this console (already cleaned).
    pub observer: String,
}

pub fn open(cfg: ConsoleConfig, stop: Arc<AtomicBool>) -> anyhow::Result<i32> {
    let (keymap, warning) = runtime::keymap_for(cfg.keymap.as_deref());
    let (tx, rx) = std::sync::mpsc::channel();
    let setup = runtime::Setup {
        dir: cfg.dir.clone(),
        sites: cfg.sites,
        state_dir: cfg.state.clone(),
        watch: cfg.watch,
        threads: cfg.threads,
        observer: cfg.observer.clone(),
        population: cfg.population.clone(),
    };
    let (mut rt, decisions, warnings) = runtime::start(setup, stop.clone(), tx.clone())?;
    let log_warning = super::logging::init(Some(&cfg.state), super::logging::Sink::FileOnly);
    tracing::info!(dir = %clean(&cfg.dir.display().to_string()), "console opened");
    for w in warnings.iter().chain(&warning) {
        tracing::warn!("{}", clean(w));
    }
    let mut app = App::new(keymap);
    app.keymap_warning.clone_from(&warning);
    app.me = cfg.observer.clone();
    app.alerts =
        interloper::console::alerting::Alerts::new(super::config::get().alerts.value.clone());
    app.ephem.site = super::config::get().site.value.clone();
    // The bell is one byte to the terminal between frames; it moves no cursor.
    rt.set_bell(Box::new(|| {
        use std::io::Write;
        let mut out = std::io::stdout();
        let _ = out.write_all(b"\x07").and_then(|_| out.flush());
    }));
    app.message = warning
        .or(log_warning)
        .or_else(|| warnings.first().cloned())
        .or_else(|| {
            Some(format!(
                "watching {} · decisions in {}",
                interloper::feed::sanitize::clean(&cfg.dir.display().to_string()),
                cfg.state.display()
            ))
        });
    rt.replayed(&mut app, decisions);
    let stop_in = stop.clone();
    let resumed = Arc::new(AtomicBool::new(false));
    signal_hook::flag::register(signal_hook::consts::SIGCONT, resumed.clone())?;
    std::thread::spawn(move || {
        // The terminal going away (end of file, an error reading it) ends the console: looping on
        // it would spin a core all night with nobody watching.
        let gone = |why: String| {
            tracing::warn!("terminal input ended ({}): closing", clean(&why));
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
            if resumed.swap(false, Ordering::Relaxed) {
                // Continued after a stop from outside (kill -TSTP, a job-control stop): the shell
                // may have put the terminal back to cooked mode.
                reclaim_terminal();
                let _ = tx.send(AppEvent::Repaint);
            }
            let ev = match event::read() {
                Ok(Event::Key(k)) if is_suspend(&k) => {
                    suspend();
                    AppEvent::Repaint
                }
                Ok(Event::Key(k)) if k.kind != KeyEventKind::Release => AppEvent::Key(k),
                Ok(Event::Resize(w, h)) => AppEvent::Resize(w, h),
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
    watch_for_hangup(stop.clone());
    let mut terminal = ratatui::init();
    let result = runtime::run_loop(
        &mut terminal,
        &mut app,
        &mut rt,
        &rx,
        &stop,
        cfg.theme,
        |_| {},
    );
    ratatui::restore();
    stop.store(true, Ordering::Relaxed);
    rt.shutdown();
    tracing::info!("console closed");
    result.map(|_| 0)
}

/// A terminal hung up under us (its window closed, the SSH link dropped while SIGHUP is ignored)
/// reads as an endless end of file, on which the event poll spins without ever returning: the
/// input thread cannot notice. This thread looks twice a second whether standard input is still a
/// terminal (a hung-up one no longer is) and ends the console if not.
fn watch_for_hangup(stop: Arc<AtomicBool>) {
    std::thread::spawn(move || {
        while !stop.load(Ordering::Relaxed) {
            if !std::io::IsTerminal::is_terminal(&std::io::stdin()) {
                tracing::warn!("the terminal hung up: closing");
                stop.store(true, Ordering::Relaxed);
                return;
            }
            std::thread::sleep(Duration::from_millis(500));
        }
    });
}

/// Ctrl-Z: in raw mode the terminal sends it as a key instead of stopping us.
fn is_suspend(k: &event::KeyEvent) -> bool {
    k.kind == KeyEventKind::Press
        && k.code == event::KeyCode::Char('z')
        && k.modifiers.contains(event::KeyModifiers::CONTROL)
}

/// Give the terminal back to the shell (cooked mode, main screen, cursor shown) and stop as Ctrl-Z
/// would; on `fg`, take it back.
fn suspend() {
    ratatui::restore();
    let _ = signal_hook::low_level::raise(signal_hook::consts::SIGTSTP);
    reclaim_terminal();
}

/// Raw mode, the alternate screen and a hidden cursor again.
fn reclaim_terminal() {
    use ratatui::crossterm::{cursor, execute, terminal};
    let _ = terminal::enable_raw_mode();
    let _ = execute!(
        std::io::stdout(),
        terminal::EnterAlternateScreen,
        cursor::Hide
    );
}
