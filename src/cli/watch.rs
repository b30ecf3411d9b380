//! `interloper watch`: take in every file that arrives in a directory, fit each changed object on
//! worker threads (through the same engine as the console, with the observers' exclusions and forced
//! methods from the journal when there is one), and report results as they come (JSON lines with
//! `--json`).

use super::inputs::{PopulationArgs, SiteArgs};
use super::watch_report::{Counts, Out, report_with_alert};
use interloper::feed::engine::{self, Engine, EngineEvent, Overrides};
use interloper::feed::journal::{Journal, Kind, Standing};
use interloper::feed::watcher::{self, WatchOptions};
use interloper::fitting::fit::FitOptions;
use interloper::fitting::origin::OriginOptions;
use std::path::PathBuf;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

#[derive(Debug, clap::Args)]
pub struct WatchArgs {
    #[command(flatten)]
    pub sites: SiteArgs,
    #[command(flatten)]
    pub population: PopulationArgs,
    #[command(flatten)]
    pub color: super::inputs::ColorArgs,
    /// Where the decision journal lives (default: the platform's state directory).
    #[arg(long, value_name = "DIR")]
    pub state: Option<PathBuf>,
    /// Who you are in the journal, on a state directory shared with other observers (default: $USER).
    #[arg(long, value_name = "NAME")]
    pub observer: Option<String>,
    /// No console: report to standard output.
    #[arg(long)]
    pub headless: bool,
    /// One JSON object per line: fit results (the `fit --json` fields plus `arrived_utc`) and rejections.
    #[arg(long)]
    pub json: bool,
    /// Scan the directory periodically instead of using file-system events (network file systems).
    #[arg(long)]
    pub poll: bool,
    /// A file unchanged this long (ms) is taken as complete.
    #[arg(long, default_value_t = 500, value_name = "MS")]
    pub settle_ms: u64,
    /// Stop once nothing has arrived and nothing is being fitted for this many seconds.
    #[arg(long, value_name = "SECONDS")]
    pub stop_after_idle: Option<f64>,
    /// Worker threads for fitting (default: the machine's cores).
    #[arg(long, value_parser = super::fit::threads_flag)]
    pub threads: Option<usize>,
    /// Key map file for the console (overrides the default keys one by one).
    #[arg(long, value_name = "FILE")]
    pub keymap: Option<PathBuf>,
    /// The directory to watch (it is only read).
    #[arg(value_name = "DIR")]
    pub dir: PathBuf,
    /// Run for `demo` (its replay folder is removed when it ends: a hint names `demo`, not it).
    #[arg(skip)]
    pub for_demo: bool,
}

impl WatchArgs {
    /// The state directory: `--state`, else the configuration's (the platform's by default).
    fn state_dir(&self) -> PathBuf {
        self.state
            .clone()
            .unwrap_or_else(|| super::config::get().state_dir.value.clone())
    }

    /// The watcher the demo runs on its replay folder, with the demo's own options.
    pub fn for_demo(
        dir: PathBuf,
        state: PathBuf,
        demo: &super::demo::DemoArgs,
        idle: f64,
    ) -> WatchArgs {
        WatchArgs {
            sites: SiteArgs {
                sites: None,
                site_codes: None,
            },
            population: demo.population.clone(),
            color: demo.color.clone(),
            state: Some(state),
            headless: demo.headless,
            json: demo.json,
            poll: false,
            settle_ms: 500,
            stop_after_idle: demo.headless.then_some(idle),
            threads: None,
            keymap: demo.keymap.clone(),
            observer: demo.observer.clone(),
            dir,
            for_demo: true,
        }
    }
}

pub fn run(args: &WatchArgs) -> anyhow::Result<i32> {
    run_with(args, Arc::new(AtomicBool::new(false)))
}

pub fn run_with(args: &WatchArgs, stop: Arc<AtomicBool>) -> anyhow::Result<i32> {
    if !args.dir.is_dir() {
        crate::usage!(
            "{} is not a directory (watch needs the folder the files arrive in)",
            args.dir.display()
        );
    }
    if !args.headless {
        use std::io::IsTerminal;
        if !(std::io::stdin().is_terminal() && std::io::stdout().is_terminal()) {
            let instead = if args.for_demo {
                "interloper demo --headless".to_string()
            } else {
                format!("interloper watch --headless {}", args.dir.display())
            };
            eprintln!(
                "error: the console needs a terminal (standard input and output); for scripts and \
                 pipelines use `{instead}`"
            );
            return Ok(2);
        }
    }
    let sites = args.sites.load()?;
    // A hang-up (the SSH link dropped) ends the run like an interrupt: the console restores the
    // terminal, logs, and exits.
    for sig in [
        signal_hook::consts::SIGINT,
        signal_hook::consts::SIGTERM,
        signal_hook::consts::SIGHUP,
    ] {
        signal_hook::flag::register(sig, stop.clone())?;
    }
    let opts = WatchOptions {
        settle: Duration::from_millis(args.settle_ms),
        poll: args.poll,
        ..WatchOptions::default()
    };
    let threads = args.threads.unwrap_or(super::config::get().threads.value);
    if args.headless {
        run_headless(args, sites, opts, threads, stop)
    } else {
        open_console(args, sites, opts, threads, stop)
    }
}

/// The full-screen console on the watched directory.
fn open_console(
    args: &WatchArgs,
    sites: interloper::feed::sites::SiteTable,
    opts: WatchOptions,
    threads: usize,
    stop: Arc<AtomicBool>,
) -> anyhow::Result<i32> {
    let state = args.state_dir();
    std::fs::create_dir_all(&state).map_err(|e| {
        super::Usage(format!(
            "cannot use {} as the state directory: {e}",
            state.display()
        ))
    })?;
    super::console::open(
        super::console::ConsoleConfig {
            dir: args.dir.clone(),
            sites,
            state,
            keymap: args
                .keymap
                .clone()
                .or_else(|| super::config::get().keymap.value.clone()),
            watch: opts,
            threads,
            population: args.population.load()?,
            theme: args.color.theme(),
            observer: super::config::get().observer_for(args.observer.as_deref()),
        },
        stop,
    )
}

/// Headless: every event as a line on standard output until a signal, a closed pipe or the idle
/// limit.
fn run_headless(
    args: &WatchArgs,
    sites: interloper::feed::sites::SiteTable,
    opts: WatchOptions,
    threads: usize,
    stop: Arc<AtomicBool>,
) -> anyhow::Result<i32> {
    let events = watcher::spawn(args.dir.clone(), opts, stop.clone());
    let population = args.population.load()?;
    let fit_opts = FitOptions {
        origin: Some(OriginOptions::for_model(&population)),
        population,
        ..FitOptions::default()
    };
    // The observers' exclusions and forced methods, if a journal is there: fits here use them too,
    // so the numbers are the consoles' numbers.
    let state = args.state_dir();
    // Diagnostics to stderr, and to the state directory's log when the directory is there (headless
    // runs never create it).
    if let Some(w) = super::logging::init(
        Some(state.as_path()).filter(|p| p.is_dir()),
        super::logging::Sink::FileAndStderr,
    ) {
        eprintln!("watch: {w}");
    }
    // A state directory the user named (with --state or in the configuration) that is not there is
    // said once: no journal is followed and no log written (headless runs never create it).
    let named = args.state.is_some()
        || super::config::get().state_dir.from != super::config::Source::Default;
    if named && !state.is_dir() {
        tracing::warn!(
            "watch: state directory {} is not a directory: no observers' journal is followed and no log is written there",
            interloper::feed::sanitize::clean(&state.display().to_string())
        );
    }
    let journal = Journal::follow(&state).unwrap_or_else(|e| {
        tracing::warn!("watch: cannot read the journal in {}: {e}", state.display());
        None
    });
    let standing = journal
        .as_ref()
        .map(|(_, r)| r.standing())
        .unwrap_or_default();
    let (etx, results) = std::sync::mpsc::channel();
    let engine = Engine::start(
        events,
        Arc::new(sites),
        fit_opts,
        threads,
        engine::overrides_in(&standing),
        move |ev| etx.send(ev).is_ok(),
    );
    let mut run = Run {
        n: Counts::default(),
        out: Out {
            json: args.json,
            closed: false,
            w: std::io::BufWriter::new(std::io::stdout()),
        },
        alerts: super::watch_alerts::HeadlessAlerts::new(
            super::config::get().alerts.value.clone(),
            Some(state.as_path()),
        ),
        results,
    };
    let feed = Feed {
        journal: journal.map(|(j, _)| j),
        standing,
        engine: &engine,
        stop_after_idle: args.stop_after_idle,
    };
    let held = run.follow(&stop, feed)?;
    stop.store(true, Ordering::Relaxed);
    engine.shutdown();
    run.close(held)
}

/// The journal a headless run follows and the engine it feeds.
struct Feed<'a> {
    journal: Option<Journal>,
    standing: Standing,
    engine: &'a Engine,
    stop_after_idle: Option<f64>,
}

/// What a headless run still holds when it stops.
struct Run {
    n: Counts,
    out: Out,
    alerts: super::watch_alerts::HeadlessAlerts,
    results: std::sync::mpsc::Receiver<EngineEvent>,
}

impl Run {
    /// Report every event until a signal, a closed pipe or the idle limit; the event taken while
    /// deciding the feed had gone idle comes back, to be reported first.
    fn follow(&mut self, stop: &AtomicBool, mut feed: Feed) -> anyhow::Result<Option<EngineEvent>> {
        let mut last_activity = Instant::now();
        let mut last_look = Instant::now();
        // An event taken while deciding whether the feed has gone idle, to be reported first.
        let mut held: Option<EngineEvent> = None;
        while !stop.load(Ordering::Relaxed) && !self.out.closed {
            let next = match held.take() {
                Some(ev) => Ok(ev),
                None => self.results.recv_timeout(Duration::from_millis(100)),
            };
            match next {
                Ok(ev) => {
                    last_activity = Instant::now();
                    report_with_alert(&mut self.n, &mut self.out, &mut self.alerts, ev)?;
                }
                Err(std::sync::mpsc::RecvTimeoutError::Timeout) => self.out.look_for_reader(),
                Err(std::sync::mpsc::RecvTimeoutError::Disconnected) => break,
            }
            if let Some(j) = feed.journal.as_mut()
                && last_look.elapsed() >= interloper::feed::journal::POLL
            {
                last_look = Instant::now();
                // A refit asked for by the journal is activity: the idle clock starts again, so the run
                // does not stop before the engine has taken it.
                if follow(j, &mut feed.standing, feed.engine) {
                    last_activity = Instant::now();
                }
            }
            if let Some(idle) = feed.stop_after_idle {
                let (waiting, running) = feed.engine.load();
                if waiting == 0 && running == 0 && last_activity.elapsed().as_secs_f64() >= idle {
                    // The pool counts a fit as running until the engine has handed its result on, so
                    // with the pool idle every result is already in this channel: report it first.
                    match self.results.try_recv() {
                        Ok(ev) => held = Some(ev),
                        Err(_) => break,
                    }
                }
            }
        }
        Ok(held)
    }

    /// Report what was already on its way, then the objects left unfitted and the closing log line.
    fn close(self, held: Option<EngineEvent>) -> anyhow::Result<i32> {
        let Run {
            mut n,
            mut out,
            mut alerts,
            results,
        } = self;
        // What was already on its way (a file taken in, a fit finished) is reported before the closing
        // record, so that every object taken in is either fitted or named: until the engine has been
        // quiet for a tenth of a second, two seconds at most.
        let until = Instant::now() + Duration::from_secs(2);
        let late = held.into_iter().chain(std::iter::from_fn(|| {
            let left = until.checked_duration_since(Instant::now())?;
            results
                .recv_timeout(left.min(Duration::from_millis(100)))
                .ok()
        }));
        for ev in late {
            report_with_alert(&mut n, &mut out, &mut alerts, ev)?;
        }
        alerts.finish();
        n.report_unfitted(&mut out);
        tracing::info!(
            "watch: stopped; {} file versions read, {} objects, {} observations, {} fits reported, {} rejected",
            n.files,
            n.objects,
            n.observations,
            n.fits,
            n.rejected
        );
        Ok(0)
    }
}

/// Lines the observers added: objects whose exclusions or forced methods changed are refitted.
fn follow(j: &mut Journal, standing: &mut Standing, engine: &Engine) -> bool {
    let Ok(read) = j.read_new() else {
        return false;
    };
    let mut touched = std::collections::BTreeSet::new();
    for e in &read.entries {
        standing.apply(e);
        if e.kind != Kind::Decision {
            touched.insert(e.object.clone());
        }
    }
    let refits = !touched.is_empty();
    for obj in touched {
        let ov = standing.get(&obj).map(Overrides::from).unwrap_or_default();
        engine.set_overrides(&obj, ov);
    }
    refits
}
