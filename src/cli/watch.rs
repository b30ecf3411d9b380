//! `interloper watch`: take in every file that arrives in a directory, fit each changed object on
//! worker threads, and report results as they come (JSON lines with `--json`).

use super::inputs::{PopulationArgs, SiteArgs};
use interloper::feed::InputError;
use interloper::feed::store::Store;
use interloper::feed::tracklets::Limits;
use interloper::feed::watcher::{self, WatchEvent, WatchOptions};
use interloper::fitting::batch::FitPool;
use interloper::fitting::fit::FitOptions;
use interloper::fitting::origin::OriginOptions;
use std::collections::HashMap;
use std::io::Write;
use std::path::PathBuf;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant, SystemTime};

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
    #[arg(long)]
    pub threads: Option<usize>,
    /// Key map file for the console (overrides the default keys one by one).
    #[arg(long, value_name = "FILE")]
    pub keymap: Option<PathBuf>,
    /// The directory to watch (it is only read).
    #[arg(value_name = "DIR")]
    pub dir: PathBuf,
}

fn utc(t: SystemTime) -> String {
    chrono::DateTime::<chrono::Utc>::from(t).to_rfc3339_opts(chrono::SecondsFormat::Millis, true)
}

struct Out {
    json: bool,
    w: std::io::BufWriter<std::io::Stdout>,
    /// The reader went away (a closed pipe): the run ends quietly.
    closed: bool,
}

impl Out {
    fn emit(&mut self, value: serde_json::Value, text: String) {
        let line = if self.json { value.to_string() } else { text };
        // A closed pipe ends the run like a signal would: nothing to report to any more.
        if let Err(e) = writeln!(self.w, "{line}").and_then(|_| self.w.flush())
            && e.kind() == std::io::ErrorKind::BrokenPipe
        {
            self.closed = true;
        }
    }

    fn input_error(&mut self, e: &InputError, kind: &str, arrived: SystemTime) {
        let v = serde_json::json!({
            "kind": kind, "source": e.file, "line": e.line, "column": e.column,
            "error": e.reason, "arrived_utc": utc(arrived),
        });
        self.emit(v, format!("{kind}: {e}"));
    }
}

impl WatchArgs {
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
            eprintln!(
                "error: the console needs a terminal (standard input and output); for scripts and \
                 pipelines use `interloper watch --headless {}`",
                args.dir.display()
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
    let threads = args
        .threads
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()));
    if !args.headless {
        let state = args
            .state
            .clone()
            .unwrap_or_else(interloper::feed::journal::default_state_dir);
        std::fs::create_dir_all(&state)?;
        return super::console::open(
            super::console::ConsoleConfig {
                dir: args.dir.clone(),
                sites,
                state,
                keymap: args.keymap.clone(),
                watch: opts,
                threads,
                population: args.population.load()?,
                theme: args.color.theme(),
                observer: interloper::feed::journal::observer_name(args.observer.as_deref()),
            },
            stop,
        );
    }
    let events = watcher::spawn(args.dir.clone(), opts, stop.clone());
    let (rtx, results) = std::sync::mpsc::channel();
    let pool = FitPool::new(threads, rtx);
    let population = args.population.load()?;
    let fit_opts = FitOptions {
        origin: Some(OriginOptions::for_model(&population)),
        population,
        ..FitOptions::default()
    };
    let limits = Limits::default();
    let mut store = Store::new();
    let mut arrived: HashMap<String, SystemTime> = HashMap::new();
    let mut out = Out {
        json: args.json,
        closed: false,
        w: std::io::BufWriter::new(std::io::stdout()),
    };
    let mut last_activity = Instant::now();
    let (mut files, mut fits, mut rejected) = (0usize, 0usize, 0usize);
    while !stop.load(Ordering::Relaxed) && !out.closed {
        let mut busy = false;
        match events.recv_timeout(Duration::from_millis(20)) {
            Ok(WatchEvent::Ready {
                path,
                bytes,
                arrived: at,
            }) => {
                busy = true;
                files += 1;
                let name = path.display().to_string();
                let ing = store.ingest(&name, &bytes, &sites, &limits);
                for e in &ing.errors {
                    out.input_error(
                        e,
                        if ing.rejected {
                            "rejected"
                        } else {
                            "input-error"
                        },
                        at,
                    );
                }
                rejected += usize::from(ing.rejected);
                for (obj, version) in ing.changed {
                    if let Some(t) = store.tracklet(&obj) {
                        arrived.insert(obj, at);
                        pool.submit(version, t, fit_opts.clone());
                    }
                }
            }
            Ok(WatchEvent::Refused {
                path,
                reason,
                arrived: at,
            }) => {
                busy = true;
                rejected += 1;
                let e = InputError {
                    file: interloper::feed::sanitize::clean(&path.display().to_string()),
                    line: 0,
                    column: None,
                    reason,
                };
                out.input_error(&e, "rejected", at);
            }
            Ok(WatchEvent::Failed(msg)) => eprintln!("watch: {msg}"),
            Err(std::sync::mpsc::RecvTimeoutError::Timeout) => {}
            Err(std::sync::mpsc::RecvTimeoutError::Disconnected) => break,
        }
        while let Ok((obj, version, r)) = results.try_recv() {
            busy = true;
            // A newer version of this object is queued or running: its result will follow.
            if store.version(&obj).is_some_and(|v| v > version) {
                continue;
            }
            fits += 1;
            let at = arrived.get(&obj).copied().unwrap_or_else(SystemTime::now);
            let mut v = serde_json::to_value(&r)?;
            if let Some(m) = v.as_object_mut() {
                m.insert("kind".into(), "fit".into());
                m.insert("arrived_utc".into(), utc(at).into());
            }
            let text = format!(
                "{} {:<14} odds {:>6} P(unb) {:>6} e {:>9} {} ({} obs, {} nights) {}",
                utc(at),
                interloper::feed::sanitize::clean(&r.object),
                interloper::report::odds_text(&r),
                r.p_hyperbolic.map_or("-".into(), |p| format!("{p:.3}")),
                r.e.map_or("-".into(), |e| format!("{e:.4}")),
                r.status,
                r.n_obs,
                r.n_nights,
                r.error.clone().unwrap_or_default()
            );
            out.emit(v, text);
        }
        if busy {
            last_activity = Instant::now();
        } else if let Some(idle) = args.stop_after_idle {
            let (waiting, running) = pool.load();
            if waiting == 0 && running == 0 && last_activity.elapsed().as_secs_f64() >= idle {
                break;
            }
        }
    }
    stop.store(true, Ordering::Relaxed);
    pool.shutdown();
    eprintln!(
        "watch: stopped; {files} file versions read, {} objects, {} observations, {fits} fits reported, {rejected} rejected",
        store.n_objects(),
        store.n_observations()
    );
    Ok(0)
}
